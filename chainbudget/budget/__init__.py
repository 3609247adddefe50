"""The budget of a chain: plain numbers computed from a validated chain, no formatting.

`compute` solves the chain once and gathers every figure the views read into one `Budget`:
one `NodeBudget` per stage (levels, noise, DC, drive, rail currents and the stage kind's own
figures), one `SupplyBudget` per supply (state, loads and the supply kind's own figures), the
chain-wide figures, and last the findings the rules (`chainbudget.findings`) draw from those
figures. The rules read the budget through its fields alone (they import its types for
annotations only), so the one call here is the only arrow between the two. A number shown
in the table, the JSON and a plot comes from one field here.
"""

from __future__ import annotations

from dataclasses import dataclass, field, fields, replace
from html import escape
from typing import Any, NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget.budget.analysis import SWEEP_POINTS, Analysis, environments
from chainbudget.budget.currents import StageCurrents, stage_currents
from chainbudget.budget.dcbias import DcPoint, dc_points
from chainbudget.budget.hum import HumBudget
from chainbudget.budget.hum_remedies import hum_with_remedies
from chainbudget.budget.levels import (
    HeadroomCurves,
    NodeLevels,
    VolumeClip,
    WorstCase,
    db,
    headroom_curves,
    node_levels,
    volume_clip_rotation,
)
from chainbudget.budget.noise import NodeNoise, NoiseBudget, noise_budget
from chainbudget.budget.power import OpAmpDrive, OutputFigures, opamp_drives, output_figures
from chainbudget.budget.stage_view import stage_views
from chainbudget.budget.staging import (
    Boost,
    FloatingInput,
    StageHeadroom,
    SupplyRange,
    floating_inputs,
    post_volume_headroom,
    supply_ranges,
    tone_boosts,
    volume_reach,
)
from chainbudget.budget.supplies import loaded_analysis, supply_budgets
from chainbudget.cascade import solving_once
from chainbudget.chainfile import Chain, ChainFileError
from chainbudget.finding import Finding
from chainbudget.findings import findings as draw_findings
from chainbudget.kindfigures import KindFigures
from chainbudget.network import SingularNetwork
from chainbudget.source_network import source_impedance
from chainbudget.stages import KINDS as STAGE_KINDS
from chainbudget.supplies.base import SupplyBudget


@dataclass(frozen=True)
class NodeBudget:
    """Every figure of one stage's output node (SI units; dB where the name says so).

    ``levels``, ``noise`` and ``dc`` hold the generic figures; ``own`` the stage kind's own
    figures (each a `chainbudget.kindfigures.KindFigures`); ``opamps`` the drive of each op-amp
    the stage uses; ``currents`` what it draws from its rails. The properties give the
    figures the contract's node JSON names.
    """

    index: int
    levels: NodeLevels
    noise: NodeNoise | None
    dc: DcPoint | None
    currents: StageCurrents | None
    opamps: tuple[OpAmpDrive, ...]
    own: tuple[KindFigures, ...]
    #: Behind the master volume: how far it can turn before max_level clips this node.
    volume_reach: float | None = None

    @property
    def stage(self) -> str:
        return self.levels.stage

    @property
    def kind(self) -> str:
        return self.levels.kind

    @property
    def gain_db(self) -> float:
        return self.levels.gain_db

    @property
    def total_gain_db(self) -> float:
        return self.levels.total_gain_db

    @property
    def level_vrms(self) -> float:
        return self.levels.level_vrms

    @property
    def clip_vpk(self) -> float | None:
        return self.levels.clip_vpk

    @property
    def headroom_db(self) -> float | None:
        return self.levels.headroom_db

    @property
    def worst(self) -> WorstCase | None:
        return self.levels.worst

    @property
    def worst_headroom_db(self) -> float | None:
        return None if self.levels.worst is None else self.levels.worst.headroom_db

    @property
    def zout_ohm(self) -> float:
        return self.levels.zout_ohm

    @property
    def zload_ohm(self) -> float:
        return self.levels.zload_ohm

    @property
    def noise_vrms(self) -> float | None:
        return None if self.noise is None else self.noise.noise_vrms

    @property
    def noise_a_vrms(self) -> float | None:
        return None if self.noise is None else self.noise.noise_a_vrms

    @property
    def snr_db(self) -> float | None:
        return None if self.noise is None else self.noise.snr_db

    def __getattr__(self, key: str) -> Any:
        """Every other figure of the node by name: its levels', its noise's, its DC point's,
        then its kind's own (``node.limited_by``, ``node.cut_off_vpk``)."""
        if key.startswith("_") or key in NODE_PARTS:  # not yet set (copying, unpickling)
            raise AttributeError(key)
        for part in (self.levels, self.noise, self.dc, *self.own):
            if part is not None and hasattr(part, key):
                return getattr(part, key)
        raise AttributeError(f"node {self.stage!r} has no figure {key!r}")

    def figures(self, cls: type[KindFigures]) -> KindFigures | None:
        """The kind's own figures of one class (e.g. a follower's), or None."""
        return next((own for own in self.own if isinstance(own, cls)), None)

    def __repr__(self) -> str:
        def db(value: float | None) -> str:
            return "-" if value is None else f"{value:+.1f} dB"

        return (
            f"<NodeBudget {self.stage!r} ({self.kind}): gain {db(self.gain_db)}, "
            f"headroom {db(self.headroom_db)}, worst {db(self.worst_headroom_db)}>"
        )


NODE_PARTS = frozenset(f.name for f in fields(NodeBudget))


@dataclass(frozen=True)
class Budget:
    """Every figure of one chain (SI units; dB where the name says so), and its findings.

    Look a node or a supply up by name with `node` and `supply`; ``findings`` come by
    severity, then in chain order (stages, then supplies).
    """

    title: str
    file: str
    reference_hz: float
    band_hz: tuple[float, float]
    ambient_degc: float
    source_level_vrms: float
    source_max_level_vrms: float
    load_ohm: float
    #: The source impedance and the chain's input impedance (magnitudes at the reference,
    #: ohm), and the level the source loses to that divider, dB (negative).
    source_impedance_ohm: float
    input_impedance_ohm: float
    source_loss_db: float
    nodes: tuple[NodeBudget, ...]
    supplies: tuple[SupplyBudget, ...]
    first_clip: str | None
    output_stage: str | None
    volume_clip: VolumeClip | None
    post_volume: tuple[StageHeadroom, ...]
    boosts: tuple[Boost, ...]
    supply_ranges: tuple[SupplyRange, ...]
    floating: tuple[FloatingInput, ...]
    volume_stage: str | None
    sweep_points: int
    full_sweep_points: int
    curves: HeadroomCurves
    noise: NoiseBudget | None = None
    output: OutputFigures | None = None
    #: The mains ripple at every node and at the loudspeaker (`chainbudget.budget.hum`).
    hum: HumBudget | None = None
    #: A reactive source (`chainbudget.source_network`): its series capacitance (F) and
    #: inductance (H), None when it has none; ``source_impedance_ohm`` is then |Z_S| at the
    #: reference. The source's level lost to the chain's input at the worst frequency of the
    #: band (dB, negative) and that frequency (Hz): a piezo's high-pass corner
    #: 1/(2 pi R_in C), a pickup's low-pass corner R_in/(2 pi L).
    source_capacitance_f: float | None = None
    source_inductance_h: float | None = None
    source_loss_worst_db: float = 0.0
    source_loss_worst_hz: float = 0.0
    findings: tuple[Finding, ...] = field(default=(), repr=False)

    def node(self, name: str) -> NodeBudget:
        """The node of the stage called ``name``."""
        for node in self.nodes:
            if node.stage == name:
                return node
        known = ", ".join(n.stage for n in self.nodes)
        raise KeyError(f"no stage named {name!r}; the stages are: {known}")

    def supply(self, name: str) -> SupplyBudget:
        """The supply called ``name``."""
        for supply in self.supplies:
            if supply.name == name:
                return supply
        known = ", ".join(s.name for s in self.supplies) or "none"
        raise KeyError(f"no supply named {name!r}; the supplies are: {known}")

    def __repr__(self) -> str:
        counts: dict[str, int] = {}
        for fi in self.findings:
            counts[fi.severity] = counts.get(fi.severity, 0) + 1
        told = ", ".join(f"{n} {severity}" for severity, n in counts.items()) or "no findings"
        first = "" if self.first_clip is None else f", first to clip {self.first_clip!r}"
        return (
            f"<Budget {self.title!r}: {len(self.nodes)} stages, {len(self.supplies)} supplies"
            f"{first}; {told}>"
        )

    def _repr_html_(self) -> str:
        rows = "".join(
            f"<tr><td>{escape(n.stage)}</td><td>{escape(n.kind)}</td>"
            f"<td>{_cell(n.gain_db)}</td><td>{_cell(n.headroom_db)}</td>"
            f"<td>{_cell(n.worst_headroom_db)}</td></tr>"
            for n in self.nodes
        )
        found = "".join(
            f"<li><b>{escape(fi.severity)}</b> {escape(fi.code)}: {escape(fi.message)}</li>"
            for fi in self.findings
        )
        return (
            f"<p><b>{escape(self.title)}</b></p><table><tr><th>stage</th><th>kind</th>"
            f"<th>gain dB</th><th>headroom dB</th><th>worst dB</th></tr>{rows}</table>"
            f"<ul>{found}</ul>"
        )


def _cell(value: float | None) -> str:
    return "-" if value is None else f"{value:+.1f}"


def compute(chain: Chain) -> Budget:
    """Work out the whole budget of a chain, its findings included.

    Stages are analysed on their rails at low line (low battery) under the loaded power
    tree (`chainbudget.budget.supplies.loaded_analysis`): the swing limits a build must meet.
    """
    try:
        with solving_once():
            budget = budget_from(loaded_analysis(chain, corner="low"))
    except SingularNetwork as exc:  # the whole chain's network (noise): no one stage to name
        raise ChainFileError(chain.file, "stage", f"the chain's {exc}") from None
    return replace(budget, findings=tuple(draw_findings(budget)))


def _node_budgets(analysis: Analysis) -> tuple[tuple[NodeBudget, ...], NoiseBudget | None]:
    chain = analysis.chain
    levels = node_levels(analysis)
    noise = noise_budget(analysis)
    dc = dc_points(analysis)
    currents = stage_currents(analysis)
    drives = opamp_drives(analysis)
    reach = {r.stage: r.rotation for r in volume_reach(analysis)}
    # Heat is worked out at high line, where each stage's rails are widest.
    views = stage_views(analysis, environments(chain, "high", analysis.voltages))
    return tuple(
        NodeBudget(
            index=k,
            levels=levels[k],
            noise=None if noise is None else noise.nodes[k],
            dc=dc[k] if k < len(dc) else None,
            currents=currents[k],
            opamps=tuple(d for d in drives if d.stage == stage.name),
            own=STAGE_KINDS[stage.kind].figures(views[k]),
            volume_reach=reach.get(stage.name),
        )
        for k, stage in enumerate(chain.stages)
    ), noise


class SourceLoading(NamedTuple):
    """What the chain's input does to the source (`source_loading`): arrays of the inputs'
    leading shape (a float for one chain, (T,) for a batch of trials)."""

    #: |Z_in| = |1/Y_in| at the reference, ohm.
    input_impedance_ohm: NDArray[np.float64]
    #: 20 log10 |V_in/V_s| at the reference, dB.
    loss_db: NDArray[np.float64]
    #: The same at the band's point where the least of the source's voltage reaches the input.
    worst_loss_db: NDArray[np.float64]
    #: That point's frequency, Hz.
    worst_loss_hz: NDArray[np.float64]


def source_loading(
    input_admittance: ArrayLike,
    v_in: ArrayLike,
    frequency: ArrayLike,
    band_start: int = 1,
) -> SourceLoading:
    """The input impedance the source sees and the level it loses to it, at the reference
    frequency and at the worst point of the band.

    Parameters
    ----------
    input_admittance : array_like
        Y_in of the chain's input over the frequency axis, S (complex), shape ``(..., F)``.
    v_in : array_like
        V_in/V_s, the source's open-circuit voltage reaching the input, over the same axis
        (complex), shape ``(..., F)`` (it broadcasts with ``input_admittance``).
    frequency : array_like
        The frequency axis, Hz, shape ``(F,)``: index 0 the reference, the band from
        ``band_start`` to the end (`chainbudget.budget.analysis.Analysis.band_slice`).
    band_start : int
        First index of the band on the axis.

    Returns
    -------
    SourceLoading
        Each figure with the leading shape ``...`` (0-d for one chain, (T,) for trials).

    Notes
    -----
    Z_in = 1/Y_in (the input's nodal admittance, `chainbudget.network`); the source's
    impedance Z_s and Z_in form a voltage divider, V_in/V_s = Z_in/(Z_s + Z_in) (Horowitz &
    Hill, The Art of Electronics, 3rd ed., sec. 1.2.3, the voltage divider; from memory),
    whose magnitude in dB, 20 log10 |V_in/V_s|, is the loss. The worst point is the band's
    least |V_in/V_s| (the first such point where several tie).
    """
    y_in = np.asarray(input_admittance)
    ratio = np.asarray(v_in)
    axis = np.asarray(frequency, dtype=float)
    worst = band_start + np.argmin(np.abs(ratio[..., band_start:]), axis=-1)
    at_worst = np.take_along_axis(ratio, np.expand_dims(worst, -1), axis=-1)[..., 0]
    # The builtin abs, not np.abs: for one chain 1/Y_in is a numpy scalar, whose own abs
    # the check's figure has always been (it can differ from the ufunc in the last bit);
    # on a trial axis it is the ufunc either way.
    return SourceLoading(
        input_impedance_ohm=np.asarray(abs(1.0 / y_in[..., 0]), dtype=float),
        loss_db=db(ratio[..., 0]),
        worst_loss_db=db(at_worst),
        worst_loss_hz=axis[worst],
    )


def budget_from(analysis: Analysis) -> Budget:
    """The budget of an already solved chain (findings not yet drawn)."""
    chain = analysis.chain
    nodes, noise = _node_budgets(analysis)
    limited = [k for k, n in enumerate(nodes) if n.headroom_db is not None]
    first_clip = min(limited, key=lambda k: nodes[k].headroom_db or 0.0) if limited else None
    output_index = limited[-1] if limited else None
    supplies = supply_budgets(analysis)
    hum = hum_with_remedies(
        analysis,
        supplies,
        None if noise is None else noise.output.noise_a_vrms,
        [0.0 if n.currents is None else n.currents.nominal_a for n in nodes],
    )
    loading = source_loading(
        analysis.nominal.input_admittance,
        analysis.nominal.v_in[0],
        analysis.frequency,
        analysis.band_slice.start or 0,
    )
    return Budget(
        title=chain.settings.title,
        file=chain.file,
        reference_hz=chain.settings.reference,
        band_hz=chain.settings.band,
        ambient_degc=chain.settings.ambient,
        source_level_vrms=chain.source.level,
        source_max_level_vrms=chain.source.max_level,
        load_ohm=chain.load.impedance,
        source_impedance_ohm=float(abs(source_impedance(chain.source, analysis.frequency[:1])[0])),
        input_impedance_ohm=float(loading.input_impedance_ohm),
        source_loss_db=float(loading.loss_db),
        nodes=nodes,
        supplies=supplies,
        first_clip=None if first_clip is None else nodes[first_clip].stage,
        output_stage=None if output_index is None else nodes[output_index].stage,
        volume_clip=None if output_index is None else volume_clip_rotation(analysis, output_index),
        post_volume=tuple(post_volume_headroom(analysis)),
        boosts=tuple(tone_boosts(analysis, [n.levels for n in nodes])),
        supply_ranges=tuple(supply_ranges(analysis)),
        floating=tuple(floating_inputs(analysis)),
        volume_stage=None
        if analysis.volume_index is None
        else chain.stages[analysis.volume_index].name,
        sweep_points=analysis.sweep_points,
        full_sweep_points=SWEEP_POINTS,
        curves=headroom_curves(analysis),
        noise=noise,
        output=output_figures(analysis),
        hum=hum,
        source_capacitance_f=chain.source.capacitance,
        source_inductance_h=chain.source.inductance,
        source_loss_worst_db=float(loading.worst_loss_db),
        source_loss_worst_hz=float(loading.worst_loss_hz),
    )


__all__ = [
    "Budget",
    "NodeBudget",
    "SourceLoading",
    "SupplyBudget",
    "budget_from",
    "compute",
    "source_loading",
]
