"""The noise budget: the hiss at every node, which part sets it, and how it reads at the end.

Every noise generator of the chain (resistor and pot-half thermal noise, op-amp e_n and i_n,
a block's input-referred density, the source impedance's own thermal noise) is carried to
every node as a power spectral density on the analysis frequency axis; the budget then
integrates those spectra over the band, unweighted and weighted, and ranks the generators.

Notes
-----
The generators are mutually uncorrelated, so their PSDs add at any node:
S_j(f) = sum_s S_s(f) |H_sj(f)|^2 with H_sj the transfer from generator s to node j.

Per stage k (controls as set), the stage's own network is built alone with the cascade's
view of the rest of the chain attached: the Thevenin impedance Z_S,k of everything before it
(noiseless: the generators upstream are counted in their own stages) from ``in`` to ground
and the admittance Y_L,k of everything after it from ``out`` to ground. One adjoint solve
per frequency (`Netlist.adjoint_transfer`) gives the transfer of each of the stage's
generators to its output node, a second one to its input node. By superposition that is
exact: stage k meets the rest of the chain only at those two nodes, and the rest is a linear
network without (these) sources, so its terminal behaviour is Z_S,k and Y_L,k.

Forward, node k's voltage sets every later node: V_j = V_k prod_{m=k+1..j} 1/(A_m + B_m Y_L,m)
(chain parameters of stage m terminated by Y_L,m; Pozar, Microwave Engineering, 4th ed.,
sec. 4.4). Backward, a voltage V2 at the output of stage m whose input is terminated in
Z_S,m gives V1 = V2 Z_S,m (A_m D_m - B_m C_m) / (B_m + Z_S,m D_m) at its input (from
V1 = A V2 + B I2, I1 = C V2 + D I2 with V1 = -Z_S I1), which carries a generator's voltage at
its stage's input further upstream (an op-amp's i_n flowing into a volume pot's wiper).

The source's thermal noise 4 k T Re(Z_S) (Johnson, Phys. Rev. 32, 97 (1928); Nyquist,
Phys. Rev. 32, 110 (1928)) is in series with the source voltage, so it reaches node j as the
signal does: |v_out,j| per volt. It is the reference of the noise figure
NF = 10 log10(S_out / S_out,source) (Friis, Proc. IRE 32 (1944) 419; spot noise figure at one
frequency).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget import outputmath as om
from chainbudget.budget.analysis import Analysis, positions_as_set, solve_chain
from chainbudget.budget.levels import SQRT2, clip_source_peak
from chainbudget.cascade import Cascade, inner_node, stamp_section
from chainbudget.chainfile import Chain
from chainbudget.loops import Section
from chainbudget.network import GROUND, Complex, Netlist
from chainbudget.spectrum import integrate_psd, thermal_voltage_psd
from chainbudget.stages import KINDS
from chainbudget.stages.base import Environment, Stage
from chainbudget.units import DBU_REFERENCE_VRMS
from chainbudget.weighting import a_weighting, itu468_weighting

# A source impedance below this (an ideal driver) is raised to it: 1/Z_S stamps a finite
# admittance and the stage's input is still, to every practical digit, held at ground.
SOURCE_IMPEDANCE_FLOOR_OHM = 1e-9
# Contributors listed at the output (the issue asks for the ten largest).
TOP_CONTRIBUTORS = 10
# Contributors listed per frequency in the spectral detail.
DETAIL_CONTRIBUTORS = 5
# Frequencies of the spectral detail besides the reference (nearest band grid points), Hz.
DETAIL_FREQUENCIES_HZ = (100.0, 10_000.0)
# A stage with more voltage gain than this at the reference is a gain stage (a factor of 2;
# a flat tone stage, a follower or a volume pot stays well below it). Our choice.
MAIN_GAIN_MIN_DB = 6.0
# The stage name and part given to the source impedance's own noise.
SOURCE_STAGE = "source"


@dataclass(frozen=True)
class NoiseOrigin:
    """Where a noise generator sits: its netlist label, stage, part and kind.

    ``stage_index`` is the stage's 0-based position in the chain, -1 for the source (whose
    ``stage`` is ``"source"``); ``kind`` is ``"thermal"``, ``"e_n"``, ``"i_n"`` or
    ``"input-referred"`` (a block); ``part`` is the label without the stage prefix
    (``"feedback"``, ``"opamp.i_n+"``).
    """

    label: str
    stage: str
    stage_index: int
    part: str
    kind: str


@dataclass(frozen=True)
class NoiseSpectra:
    """Every generator's noise PSD at every node (controls as set).

    Attributes
    ----------
    frequency : ndarray, shape (F,)
        The analysis axis, Hz: index 0 the reference, then the band grid (``band``).
    band : slice
        The band grid within ``frequency``.
    origins : tuple of NoiseOrigin
        One per generator, the first axis of ``contribution``.
    contribution : ndarray, shape (S, K, F)
        PSD at the output node of stage k due to generator s, V^2/Hz.
    signal : ndarray, shape (K, F)
        |v_out| of each node per volt of source open-circuit voltage.
    """

    frequency: NDArray[np.float64]
    band: slice
    origins: tuple[NoiseOrigin, ...]
    contribution: NDArray[np.float64]
    signal: NDArray[np.float64]

    @property
    def node_psd(self) -> NDArray[np.float64]:
        """Total noise PSD at each node, V^2/Hz, shape (K, F)."""
        return np.asarray(self.contribution.sum(axis=0), dtype=np.float64)

    @property
    def band_frequency(self) -> NDArray[np.float64]:
        return self.frequency[self.band]

    def integrate(
        self, psd: NDArray[np.float64], weighting: Callable[[ArrayLike], NDArray[np.float64]]
    ) -> NDArray[np.float64]:
        """Mean-square value over the band of PSDs on the last axis, weighted, V^2.

        ``weighting`` gives the amplitude factor |W(f)|; the PSD is multiplied by its square.
        """
        f = self.band_frequency
        return integrate_psd(f, psd[..., self.band] * weighting(f) ** 2)


def unweighted(f: ArrayLike) -> NDArray[np.float64]:
    """The flat weighting, 1 at every frequency."""
    return np.ones_like(np.asarray(f, dtype=np.float64))


def _floored(z: Complex) -> Complex:
    return np.where(np.abs(z) < SOURCE_IMPEDANCE_FLOOR_OHM, SOURCE_IMPEDANCE_FLOOR_OHM, z)


def stage_noise_transfers(
    stage: Stage,
    stage_index: int,
    env: Environment,
    frequency: NDArray[np.float64],
    positions: dict[str, float],
    source_impedance: Complex,
    load_admittance: Complex,
) -> tuple[list[NoiseOrigin], NDArray[np.float64], Complex, Complex]:
    """Transfers of a stage's own noise generators to its output and input nodes.

    The stage is built alone, driven from the noiseless ``source_impedance`` (ohm) and
    loaded by the noiseless ``load_admittance`` (S), both on the frequency axis.

    Returns
    -------
    origins : list of NoiseOrigin
    psd : ndarray, shape (S, F)
        Each generator's PSD, V^2/Hz or A^2/Hz.
    to_out, to_in : ndarray, shape (S, F)
        Complex transfer to the stage's output and input node voltages (V/V or V/A).

    Notes
    -----
    Both transfers come from `Netlist.adjoint_transfer`: one adjoint solve per frequency and
    node serves every generator (Director & Rohrer, IEEE Trans. Circuit Theory CT-16 (1969)
    318).
    """
    net = Netlist(frequency)
    KINDS[stage.kind].build(net, stage, env, "in", "out", positions)
    net.admittance("in", GROUND, 1.0 / _floored(np.asarray(source_impedance, complex)))
    net.admittance("out", GROUND, load_admittance)
    shape = frequency.shape
    if not net.noise:
        empty = np.zeros((0, *shape))
        return [], empty, empty.astype(complex), empty.astype(complex)
    _, to_out = net.adjoint_transfer("out")
    _, to_in = net.adjoint_transfer("in")
    prefix = f"{stage.name}."
    origins = [
        NoiseOrigin(
            src.label,
            src.stage or stage.name,
            stage_index,
            src.label.removeprefix(prefix),
            src.kind,
        )
        for src in net.noise
    ]
    psd = np.stack([np.broadcast_to(src.psd, shape) for src in net.noise])
    return (
        origins,
        psd,
        np.stack([np.broadcast_to(h, shape) for h in to_out]),
        np.stack([np.broadcast_to(h, shape) for h in to_in]),
    )


def section_noise_transfers(
    chain: Chain,
    envs: Sequence[Environment],
    frequency: NDArray[np.float64],
    section: Section,
    source_impedance: Complex,
    load_admittance: Complex,
) -> tuple[list[NoiseOrigin], NDArray[np.float64], Complex, Complex]:
    """Transfers of a loop section's noise generators to each of its stages' output nodes
    and to its input node, like `stage_noise_transfers` for one stage.

    Returns
    -------
    origins, psd
        As `stage_noise_transfers`; each origin carries the index of the stage it sits in.
    to_nodes : ndarray, shape (S, K, F)
        Transfer to the output node of each of the section's K stages.
    to_in : ndarray, shape (S, F)
        Transfer to the section's input node.

    Notes
    -----
    The section is one network (`chainbudget.cascade.stamp_section`, the feedback closed
    round it), terminated as the cascade finds it; one adjoint solve per node.
    """
    stages = chain.stages
    net = Netlist(frequency)
    stamp_section(net, stages, envs, positions_as_set(stages), section, "in", "out")
    net.admittance("in", GROUND, 1.0 / _floored(np.asarray(source_impedance, complex)))
    net.admittance("out", GROUND, load_admittance)
    shape = frequency.shape
    count = len(section.indices)
    if not net.noise:
        empty = np.zeros((0, *shape))
        return [], empty, np.zeros((0, count, *shape), complex), empty.astype(complex)
    nodes = [inner_node(k) for k in section.indices[:-1]] + ["out"]
    to_nodes = [net.adjoint_transfer(node)[1] for node in nodes]
    _, to_in = net.adjoint_transfer("in")
    index = {stages[k].name: k for k in section.indices}
    origins = []
    for src in net.noise:
        k = index.get(src.stage, section.first)
        origins.append(
            NoiseOrigin(
                src.label,
                stages[k].name,
                k,
                src.label.removeprefix(f"{stages[k].name}."),
                src.kind,
            )
        )
    psd = np.stack([np.broadcast_to(src.psd, shape) for src in net.noise])
    return (
        origins,
        psd,
        np.stack(
            [np.stack([np.broadcast_to(h, shape) for h in per_node]) for per_node in to_nodes],
            axis=1,
        ),
        np.stack([np.broadcast_to(h, shape) for h in to_in]),
    )


def noise_spectra(
    chain: Chain,
    envs: Sequence[Environment],
    frequency: NDArray[np.float64],
    nominal: Cascade,
    temperature_k: float,
    band: slice,
) -> NoiseSpectra:
    """Every generator's PSD at every node of a chain solved with its controls as set.

    Parameters
    ----------
    chain : Chain
        The chain (its stages, in the order of ``nominal``).
    envs : sequence of Environment
        Each stage's environment (temperature, parts, rails).
    frequency : ndarray, shape (F,)
        The axis ``nominal`` was solved on, Hz.
    nominal : Cascade
        The cascade with every control as set (arrays of shape (F,)).
    temperature_k : float
        Noise temperature of the source impedance, K.
    band : slice
        The band grid within ``frequency``.

    Notes
    -----
    See the module notes: per-stage adjoint transfers, carried forward by the loaded
    voltage ratios of the stages after and backward by the terminated reverse ratios of
    the stages before. A loop section is one unit: its generators reach every node inside
    from one solve of its network, and a voltage at its input (or output) reaches a node k
    inside as g1 + g2 V2/V1 per volt at the input (g1 V1/V2 + g2 per volt at the output,
    V1/V2 the terminated reverse ratio), g1, g2 the node's probe of the section's two-port.
    """
    stages = chain.stages
    n = len(stages)
    shape = frequency.shape
    units = nominal.sections or tuple(Section(k, k) for k in range(n))
    # Per unit and per stage inside it: node voltage per volt at the unit's input (driven
    # from before) and per volt at its output (driven from after, input terminated in Z_S).
    per_input: list[Complex] = [np.zeros(shape, complex)] * n
    per_output: list[Complex] = [np.ones(shape, complex)] * n
    backward: list[Complex] = []  # V_in / V_out of each unit, its input terminated in Z_S
    for unit in units:
        tp = nominal.stages[unit.first].two_port
        ratio = np.broadcast_to(tp.voltage_ratio(nominal.load_admittance[unit.last]), shape)
        z = _floored(nominal.source_impedance[unit.first])
        back = np.broadcast_to(z * (tp.a * tp.d - tp.b * tp.c) / (tp.b + z * tp.d), shape)
        backward.append(back)
        per_input[unit.last] = ratio
        if unit.is_loop:
            section_port = nominal.section_port(unit)
            for k in unit.indices[:-1]:
                g1, g2 = section_port.probes[f"node{k}"]
                per_input[k] = np.broadcast_to(g1 + g2 * ratio, shape)
                per_output[k] = np.broadcast_to(g1 * back + g2, shape)
    signal = np.stack([np.abs(np.broadcast_to(v, shape)) for v in nominal.v_out])

    origins: list[NoiseOrigin] = []
    blocks: list[NDArray[np.float64]] = []
    r_source = float(np.real(chain.source.impedance))
    if r_source > 0.0:
        origins.append(NoiseOrigin("source.impedance", SOURCE_STAGE, -1, "impedance", "thermal"))
        psd = thermal_voltage_psd(r_source, temperature_k)
        blocks.append((psd * signal**2)[None])
    positions = positions_as_set(stages)
    for u, unit in enumerate(units):
        k = unit.first
        if unit.is_loop:
            found, psd, to_nodes, to_in = section_noise_transfers(
                chain,
                envs,
                frequency,
                unit,
                nominal.source_impedance[k],
                nominal.load_admittance[unit.last],
            )
        else:
            found, psd, to_out, to_in = stage_noise_transfers(
                stages[k],
                k,
                envs[k],
                frequency,
                positions[k],
                nominal.source_impedance[k],
                nominal.load_admittance[k],
            )
            to_nodes = to_out[:, None]
        if not found:
            continue
        voltage = np.zeros((len(found), n, *shape), dtype=complex)
        voltage[:, unit.first : unit.last + 1] = to_nodes
        for later in units[u + 1 :]:
            v_before = voltage[:, later.first - 1]
            for j in later.indices:
                voltage[:, j] = v_before * per_input[j]
        if k > 0:
            v_after = to_in
            for w in range(u - 1, -1, -1):
                earlier = units[w]
                for j in earlier.indices:
                    voltage[:, j] = v_after * per_output[j]
                v_after = v_after * backward[w]
        origins += found
        blocks.append(psd[:, None, :] * np.abs(voltage) ** 2)
    contribution = (
        np.concatenate(blocks, axis=0) if blocks else np.zeros((0, n, *shape), dtype=float)
    )
    return NoiseSpectra(frequency, band, tuple(origins), contribution, signal)


# --- figures ---------------------------------------------------------------------------------


@dataclass(frozen=True)
class NodeNoise:
    """Noise figures at one stage's output node (controls as set, over the band).

    ``snr_db`` is the nominal level at the reference over the unweighted noise;
    ``density_v_rthz`` the noise density at the reference frequency; ``set_by`` the
    stage (or ``"source"``) giving the largest share of the unweighted noise power here,
    ``set_by_index`` its position (-1: the source).
    """

    stage: str
    noise_vrms: float
    noise_a_vrms: float
    noise_468_vrms: float
    density_v_rthz: float
    snr_db: float | None
    snr_a_db: float | None
    set_by: str
    set_by_index: int


@dataclass(frozen=True)
class Contributor:
    """One generator's part of the output noise: rms over the band and shares of the power."""

    label: str
    stage: str
    stage_index: int
    part: str
    kind: str
    noise_vrms: float
    share: float
    share_a: float


@dataclass(frozen=True)
class StageShare:
    """A stage's (or the source's, index -1) share of the output noise power, unweighted and
    A-weighted."""

    stage: str
    stage_index: int
    share: float
    share_a: float


@dataclass(frozen=True)
class SpotContributor:
    """A generator's density at the output at one frequency and its share of the PSD there."""

    label: str
    stage: str
    part: str
    kind: str
    density_v_rthz: float
    share: float


@dataclass(frozen=True)
class SpotNoise:
    """The output noise density at one frequency and its largest contributors."""

    frequency_hz: float
    density_v_rthz: float
    input_density_v_rthz: float | None
    contributors: tuple[SpotContributor, ...]


@dataclass(frozen=True)
class PlacementCost:
    """What putting an attenuating stage ahead of the main gain costs in output SNR.

    ``lift_db`` is the SNR at the output with the stage moved to just after ``main_stage``
    minus the SNR as built (positive: the placement lifts the noise floor by that much
    relative to the signal).
    """

    stage: str
    kind: str
    main_stage: str
    main_gain_db: float
    snr_db: float
    moved_snr_db: float
    lift_db: float


@dataclass(frozen=True)
class NoiseBudget:
    """Every noise figure of a chain (SI units, dB where named; None where undefined)."""

    nodes: tuple[NodeNoise, ...]
    source_resistance_ohm: float
    input_noise_vrms: float | None
    input_noise_a_vrms: float | None
    ein_dbu: float | None
    ein_a_dbu: float | None
    noise_figure_db: float | None
    noise_figure_hz: float
    output_clip_vrms: float | None
    dynamic_range_db: float | None
    dynamic_range_a_db: float | None
    hiss_spl_db: float | None
    hiss_spl_a_db: float | None
    contributors: tuple[Contributor, ...]
    stage_shares: tuple[StageShare, ...]
    spectrum: tuple[SpotNoise, ...]
    placement: tuple[PlacementCost, ...]

    @property
    def output(self) -> NodeNoise:
        return self.nodes[-1]

    @property
    def top_contributors(self) -> tuple[Contributor, ...]:
        return self.contributors[:TOP_CONTRIBUTORS]


def _db20(ratio: float) -> float | None:
    return 20.0 * math.log10(ratio) if ratio > 0.0 and math.isfinite(ratio) else None


def _finite(value: float) -> float | None:
    return value if math.isfinite(value) else None


def _shares(power: NDArray[np.float64], total: float) -> NDArray[np.float64]:
    return power / total if total > 0.0 else np.zeros_like(power)


def output_clip_vrms(analysis: Analysis) -> float | None:
    """Sine-equivalent rms output at which the first stage reaches its limit (reference).

    The tightest source peak over every limited stage (`clip_source_peak`) times the chain
    gain to the output, over sqrt(2); None when no stage declares a limit.
    """
    nominal = analysis.nominal
    peaks = []
    for k in range(len(nominal.stages)):
        clip = clip_source_peak(nominal, k)
        if clip is not None:
            peaks.append(float(np.broadcast_to(clip[0], nominal.v_out[k].shape)[0]))
    if not peaks:
        return None
    return min(peaks) * float(abs(nominal.v_out[-1][0])) / SQRT2


def _node_figures(spectra: NoiseSpectra, chain: Chain) -> list[NodeNoise]:
    psd = spectra.node_psd
    flat = spectra.integrate(psd, unweighted)
    a = spectra.integrate(psd, a_weighting)
    itu = spectra.integrate(psd, itu468_weighting)
    per_source = spectra.integrate(spectra.contribution, unweighted)  # (S, K)
    names = {-1: SOURCE_STAGE, **{k: st.name for k, st in enumerate(chain.stages)}}
    owner = np.array([o.stage_index for o in spectra.origins], dtype=int)
    nodes = []
    for k, stage in enumerate(chain.stages):
        level = chain.source.level * float(spectra.signal[k, 0])
        by_stage = {i: float(per_source[owner == i, k].sum()) for i in names}
        set_by = max(by_stage, key=lambda i: by_stage[i])
        nodes.append(
            NodeNoise(
                stage=stage.name,
                noise_vrms=float(np.sqrt(flat[k])),
                noise_a_vrms=float(np.sqrt(a[k])),
                noise_468_vrms=float(np.sqrt(itu[k])),
                density_v_rthz=float(np.sqrt(psd[k, 0])),
                snr_db=_db20(level / math.sqrt(flat[k])) if flat[k] > 0 else None,
                snr_a_db=_db20(level / math.sqrt(a[k])) if a[k] > 0 else None,
                set_by=names[set_by],
                set_by_index=set_by,
            )
        )
    return nodes


def _contributors(spectra: NoiseSpectra) -> tuple[list[Contributor], list[StageShare]]:
    out = spectra.contribution[:, -1, :]
    flat = spectra.integrate(out, unweighted)
    a = spectra.integrate(out, a_weighting)
    share, share_a = _shares(flat, float(flat.sum())), _shares(a, float(a.sum()))
    ranked = sorted(range(len(spectra.origins)), key=lambda s: -flat[s])
    contributors = [
        Contributor(
            o.label,
            o.stage,
            o.stage_index,
            o.part,
            o.kind,
            float(np.sqrt(flat[s])),
            float(share[s]),
            float(share_a[s]),
        )
        for s in ranked
        for o in (spectra.origins[s],)
    ]
    owners = {o.stage_index: o.stage for o in spectra.origins}
    owner = np.array([o.stage_index for o in spectra.origins], dtype=int)
    stage_shares = [
        StageShare(
            name, index, float(share[owner == index].sum()), float(share_a[owner == index].sum())
        )
        for index, name in sorted(owners.items())
    ]
    return contributors, stage_shares


def _spot(spectra: NoiseSpectra, index: int) -> SpotNoise:
    out = spectra.contribution[:, -1, index]
    total = float(out.sum())
    gain = float(spectra.signal[-1, index])
    ranked = np.argsort(-out)[:DETAIL_CONTRIBUTORS]
    return SpotNoise(
        frequency_hz=float(spectra.frequency[index]),
        density_v_rthz=math.sqrt(total),
        input_density_v_rthz=math.sqrt(total) / gain if gain > 0.0 else None,
        contributors=tuple(
            SpotContributor(
                o.label,
                o.stage,
                o.part,
                o.kind,
                float(np.sqrt(out[s])),
                float(out[s] / total) if total > 0.0 else 0.0,
            )
            for s in ranked
            for o in (spectra.origins[s],)
        ),
    )


def detail_indices(frequency: NDArray[np.float64], band: slice) -> list[int]:
    """Indices of the spectral detail: the reference, and the band grid points nearest to
    `DETAIL_FREQUENCIES_HZ` that lie inside the band, in ascending frequency."""
    grid = frequency[band]
    start = band.start or 0
    chosen = {0}
    for wanted in DETAIL_FREQUENCIES_HZ:
        if grid[0] <= wanted <= grid[-1]:
            chosen.add(start + int(np.argmin(np.abs(np.log(grid / wanted)))))
    unique = {float(frequency[i]): i for i in sorted(chosen)}
    return [unique[f] for f in sorted(unique)]


def output_snr_db(spectra: NoiseSpectra, level_vrms: float) -> float | None:
    """Nominal level at the output over its unweighted band noise, dB."""
    noise = float(spectra.integrate(spectra.node_psd[-1], unweighted))
    return _db20(level_vrms * float(spectra.signal[-1, 0]) / math.sqrt(noise)) if noise else None


def placement_costs(analysis: Analysis, spectra: NoiseSpectra) -> list[PlacementCost]:
    """Output SNR lost by each volume or tone stage that sits ahead of the main gain.

    The main gain is the stage after it with the most voltage gain at the reference, if
    that exceeds `MAIN_GAIN_MIN_DB` and it is not the last stage (a pot cannot move onto the
    loudspeaker line). The chain is solved again with the stage moved to just after the main
    gain, controls as set, and both output SNRs compared (nominal level, unweighted).
    """
    chain = analysis.chain
    stages = chain.stages
    nominal = analysis.nominal
    # A loop section counts as one stage here: its gain is the closed loop's, and a pot is
    # never moved into it.
    units = nominal.sections or tuple(Section(k, k) for k in range(len(stages)))
    gains = {
        unit: float(20.0 * np.log10(abs(nominal.v_out[unit.last][0] / nominal.v_in[unit.first][0])))
        for unit in units
    }
    snr = output_snr_db(spectra, chain.source.level)
    found: list[PlacementCost] = []
    for v, stage in enumerate(stages):
        if not KINDS[stage.kind].attenuates or snr is None or nominal.section(v).is_loop:
            continue
        after = [unit for unit in units if unit.first > v and unit.last < len(stages) - 1]
        if not after:
            continue
        unit = max(after, key=lambda u: gains[u])
        if gains[unit] <= MAIN_GAIN_MIN_DB:
            continue
        main = unit.last
        order = [*range(v), *range(v + 1, main + 1), v, *range(main + 1, len(stages))]
        moved = replace(chain, stages=tuple(stages[k] for k in order))
        envs = tuple(analysis.envs[k] for k in order)
        cas = solve_chain(moved, envs, analysis.frequency, positions_as_set(moved.stages))
        moved_spectra = noise_spectra(
            moved, envs, analysis.frequency, cas, analysis.temperature_k, analysis.band_slice
        )
        moved_snr = output_snr_db(moved_spectra, chain.source.level)
        if moved_snr is None:
            continue
        found.append(
            PlacementCost(
                stage.name,
                stage.kind,
                stages[unit.first].name,
                gains[unit],
                snr,
                moved_snr,
                moved_snr - snr,
            )
        )
    return found


def noise_budget(analysis: Analysis) -> NoiseBudget:
    """The noise budget of a solved chain (controls as set).

    Notes
    -----
    Band figures integrate the PSD over the band grid with `spectrum.integrate_psd`
    (composite Simpson in ln f), unweighted, A-weighted (IEC 61672-1 Annex E, 0 dB at
    1 kHz) and ITU-R BS.468 weighted (rms-reading, not the standard's quasi-peak meter).
    Input-referred noise divides the output PSD by |v_out|^2 of the whole chain at each
    frequency before integrating; the equivalent input noise in dBu is that rms re
    sqrt(0.6) V. Dynamic range: the output's sine-equivalent clip level over its noise.
    Hiss at the loudspeaker: L = sensitivity + 20 log10(V_noise / sqrt(1 W * Z_load)), the
    SPL at 1 m of a power V^2/Z_load given the SPL for 1 W (inverse-square free field at
    1 m, the definition of sensitivity).
    """
    chain = analysis.chain
    spectra = noise_spectra(
        chain,
        analysis.envs,
        analysis.frequency,
        analysis.nominal,
        analysis.temperature_k,
        analysis.band_slice,
    )
    nodes = _node_figures(spectra, chain)
    output = nodes[-1]
    out_psd = spectra.node_psd[-1]
    gain_sq = spectra.signal[-1] ** 2
    with np.errstate(divide="ignore", invalid="ignore"):
        referred = out_psd / gain_sq
    input_sq = float(spectra.integrate(referred, unweighted))
    input_a_sq = float(spectra.integrate(referred, a_weighting))
    input_noise = _finite(math.sqrt(input_sq)) if np.all(gain_sq[spectra.band] > 0) else None
    input_noise_a = _finite(math.sqrt(input_a_sq)) if input_noise is not None else None

    noise_figure = None
    if spectra.origins and spectra.origins[0].stage_index == -1:
        source_psd = float(spectra.contribution[0, -1, 0])
        if source_psd > 0.0:
            noise_figure = 10.0 * math.log10(float(out_psd[0]) / source_psd)

    clip = output_clip_vrms(analysis)
    sensitivity = chain.load.sensitivity

    def spl(noise_vrms: float) -> float | None:
        if sensitivity is None or noise_vrms <= 0.0:
            return None
        return float(om.hiss_spl(sensitivity, noise_vrms, chain.load.impedance))

    def ratio_db(signal: float | None, noise: float) -> float | None:
        return None if signal is None or noise <= 0.0 else _db20(signal / noise)

    contributors, stage_shares = _contributors(spectra)
    return NoiseBudget(
        nodes=tuple(nodes),
        source_resistance_ohm=float(np.real(chain.source.impedance)),
        input_noise_vrms=input_noise,
        input_noise_a_vrms=input_noise_a,
        ein_dbu=None if input_noise is None else _db20(input_noise / DBU_REFERENCE_VRMS),
        ein_a_dbu=None if input_noise_a is None else _db20(input_noise_a / DBU_REFERENCE_VRMS),
        noise_figure_db=noise_figure,
        noise_figure_hz=float(analysis.frequency[0]),
        output_clip_vrms=clip,
        dynamic_range_db=ratio_db(clip, output.noise_vrms),
        dynamic_range_a_db=ratio_db(clip, output.noise_a_vrms),
        hiss_spl_db=spl(output.noise_vrms),
        hiss_spl_a_db=spl(output.noise_a_vrms),
        contributors=tuple(contributors),
        stage_shares=tuple(stage_shares),
        spectrum=tuple(_spot(spectra, i) for i in detail_indices(spectra.frequency, spectra.band)),
        placement=tuple(placement_costs(analysis, spectra)),
    )
