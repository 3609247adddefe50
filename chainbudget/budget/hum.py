"""The hum budget: the mains ripple of every rail carried through every stage to every node.

Each stage's build declares how ripple enters it (`chainbudget.network.RippleSource`): an
op-amp's rail pins through its supply rejection, a bias point named after a supply, a
resistor returned to a rail. Here those sources are placed in the whole chain's network
(`chainbudget.cascade.whole_chain_network`, the signal source at rest behind its impedance)
on a frequency axis made of the ripple's harmonics, and one batched solve gives every
source's transfer to every node; each transfer times its rail's complex ripple is that
source's phasor at the node.

Notes
-----
Superposition in a linear network: each source's phasor at node j is H_jr(f) v_r(f), with
H_jr from one solve per frequency with a right-hand side per source (Ho, Ruehli & Brennan,
IEEE Trans. CAS-22 (1975) 504). Because the sources sit in the whole chain's network, hum
that enters a later stage reaches earlier nodes too, backwards through the input resistors
and pots that join them.

The contract's "One root, one waveform": every rail that descends from one root supply
(a ``rectified`` or ``dc`` supply with no ``from``) carries the same waveform, passed by its
filters, dividers and regulators with their complex (or real) factors, so the phasors of
one root add as a complex sum at each harmonic; different roots, and different harmonics,
are incoherent and add as powers:
V_j^2 = sum_h sum_roots |sum_(r in root) H_jr(f_h) v_r(f_h)|^2 / 2 (peak phasors to rms).
A-weighting multiplies each harmonic by |A(f_h)| (IEC 61672-1, `chainbudget.weighting`).
Hum at 1 m: L = sensitivity + 20 log10(V / sqrt(1 W Z_load)), as the hiss's.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray

from chainbudget import outputmath as om
from chainbudget.budget.analysis import Analysis, positions_as_set
from chainbudget.budget.rails import rail_owners
from chainbudget.cascade import whole_chain_network
from chainbudget.chainfile import Chain
from chainbudget.loudspeaker import load_impedance
from chainbudget.network import Complex, RippleSource
from chainbudget.stages import KINDS as STAGE_KINDS
from chainbudget.stages.base import Environment, Stage
from chainbudget.supplies.base import GROUND_SUPPLY, SupplyBudget
from chainbudget.weighting import a_weighting


@dataclass(frozen=True)
class HumPath:
    """One way ripple enters the chain, and the hum it alone gives at the output.

    ``stage`` and ``path`` say where (``"V+ pin (PSRR)"``, ``"bias at + input"``...);
    ``supply`` is the rail it comes from and ``root`` that rail's root supply; ``vrms`` and
    ``a_vrms`` the output hum of this path alone, unweighted and A-weighted, V.
    """

    stage: str
    stage_index: int
    path: str
    role: str
    supply: str
    root: str
    vrms: float
    a_vrms: float


@dataclass(frozen=True)
class HumHarmonic:
    """The output hum at one harmonic of the ripple (all roots together), V rms."""

    hz: float
    vrms: float
    a_vrms: float


@dataclass(frozen=True)
class RailHum:
    """The output hum from one root supply (every rail it feeds), V rms."""

    supply: str
    vrms: float
    a_vrms: float


@dataclass(frozen=True)
class HumRemedy:
    """A change that lowers the hum, with the hum the model expects after it.

    ``what`` is the kind of change: a supply's own field changed (``"capacitance"``,
    ``"reservoir"``), a ``"filter"`` or a regulator (``"regulate"``) put in front of the
    stage; ``text`` says it in words with its values;
    ``values`` holds them (SI) for scripts and tests; ``edits`` the file's values that
    change, as (table path, value as written) pairs for `Chain.with_values`; a filter
    remedy also adds the supplies its ``text`` names, which must be written in first.
    """

    what: str
    stage: str | None
    supply: str
    text: str
    expected_vrms: float
    expected_a_vrms: float
    values: Mapping[str, float] = field(default_factory=dict)
    edits: tuple[tuple[str, str], ...] = ()


@dataclass(frozen=True)
class HumBudget:
    """Every hum figure of a chain (SI units, dB where named; None where undefined).

    ``node_vrms`` is the hum at each stage's output node; ``paths`` every source, largest
    A-weighted first; ``ideal_bias`` the single-supply stages whose bias point is taken as
    ideal (no supply named: no ripple); ``remedies`` what would lower the hum of the
    dominant path, with the hum expected after each.
    """

    node_vrms: tuple[float, ...]
    output_vrms: float
    output_a_vrms: float
    spl_db: float | None
    spl_a_db: float | None
    hum_to_noise_db: float | None
    input_vrms: float | None
    input_a_vrms: float | None
    by_rail: tuple[RailHum, ...]
    paths: tuple[HumPath, ...]
    harmonics: tuple[HumHarmonic, ...]
    ideal_bias: tuple[str, ...]
    remedies: tuple[HumRemedy, ...] = ()

    @property
    def dominant(self) -> HumPath | None:
        """The path giving the most A-weighted hum alone (None: no hum)."""
        return self.paths[0] if self.paths and self.paths[0].a_vrms > 0.0 else None


@dataclass(frozen=True)
class HumField:
    """The solved phasors behind a `HumBudget`, kept for what-if sums (remedies).

    ``frequency`` (H,) the harmonics, Hz; ``at_nodes`` (R, J, H) each kept source's peak
    phasor at each node, V; ``roots`` (R,) the root of each source; ``sources`` the kept
    sources with their resolved rails; ``gain`` (H,) the chain's gain from the source
    voltage to the output at each harmonic.
    """

    frequency: NDArray[np.float64]
    at_nodes: Complex
    roots: tuple[str, ...]
    sources: tuple[tuple[RippleSource, str, int], ...]
    gain: Complex


def rail_of(stage: Stage, role: str) -> str | None:
    """The rail a stage's ripple source of ``role`` comes from (None: ground, or a bias
    point no supply names)."""
    if role == "bias":
        name = STAGE_KINDS[stage.kind].bias_supply(stage)
    else:
        name = stage.values.get(role)
    return None if name is None or name == GROUND_SUPPLY else str(name)


def root_of(chain: Chain, rail: str) -> str:
    """The root supply a rail descends from (a ``rectified`` or ``dc`` supply with no
    ``from``), by its supply name."""
    owners = rail_owners(chain)
    supply = owners[rail]
    while supply.parent is not None:
        supply = owners[supply.parent]
    return supply.name


def power_sum(phasors: Complex, roots: Sequence[str], weights: NDArray[np.float64]) -> float:
    """Mean-square hum, V^2, of peak phasors with shape (R, ..., H): complex sums within
    each root, powers across roots and harmonics (``weights`` on the harmonic axis)."""
    total = 0.0
    for root in dict.fromkeys(roots):
        mine = [r for r, name in enumerate(roots) if name == root]
        coherent = phasors[mine].sum(axis=0) * weights
        total += float(np.sum(np.abs(coherent) ** 2)) / 2.0
    return total


def _harmonic_axis(rails: Mapping[str, SupplyBudget]) -> NDArray[np.float64]:
    found = sorted({hz for s in rails.values() for hz, _ in s.ripple_harmonics})
    return np.asarray(found, dtype=float)


def solve_hum(
    analysis: Analysis, supplies: Sequence[SupplyBudget]
) -> tuple[HumField | None, tuple[str, ...]]:
    """Every ripple source's phasor at every node, and the stages taken with an ideal bias.

    Returns None for the field when no rail any source names carries mains ripple.
    """
    return hum_field(analysis.chain, analysis.envs, supplies)


def hum_field(
    chain: Chain,
    envs: Sequence[Environment],
    supplies: Sequence[SupplyBudget],
    ripple: Mapping[str, tuple[NDArray[np.float64], Complex]] | None = None,
) -> tuple[HumField | None, tuple[str, ...]]:
    """`solve_hum` for a chain and its stages' environments: parts given as arrays over
    leading batch axes (the spread's trials, (T, 1)) put those axes in the field's
    ``at_nodes`` (R, J, T, H) and ``gain`` (T, H).

    ``ripple`` gives some rails' ripple in place of their supplies' (the spread's trials):
    by rail, the harmonics' frequencies (K,) (each one of the supplies' own) and their
    complex peak amplitudes (T, K); the transfers are the same, the phasors at the nodes
    are the transfers times each trial's ripple."""
    stages = chain.stages
    by_rail = {s.name: s for s in supplies}
    # The axis: every harmonic of every rail with mains ripple.
    rippling = {name: s for name, s in by_rail.items() if s.ripple_harmonics}
    frequency = _harmonic_axis(rippling)
    if frequency.size == 0:
        return None, ()
    load = load_impedance(chain.load, frequency)
    net, outs = whole_chain_network(
        stages,
        envs,
        frequency,
        positions_as_set(stages),
        float(np.real(chain.source.impedance)),
        load,
        source_capacitance=chain.source.capacitance,
        source_inductance=chain.source.inductance,
    )
    index = {stage.name: k for k, stage in enumerate(stages)}
    kept: list[tuple[int, RippleSource, str]] = []
    ideal: dict[str, None] = {}
    for r, source in enumerate(net.ripple):
        stage = stages[index[source.stage]]
        rail = rail_of(stage, source.rail)
        if rail is not None:
            kept.append((r, source, rail))
        elif source.rail == "bias" and rail_of(stage, "negative") is None:
            ideal[stage.name] = None  # single supply, its bias point named after no supply
    transfers, from_source = net.ripple_transfers(outs)  # batch + (H, J, R), (H, J)
    spectra = {rail: dict(by_rail[rail].ripple_harmonics) for _, _, rail in kept}
    given = ripple or {}
    # each kept source's rail ripple on the harmonic axis, (..., H, R_kept)
    on_axis = [
        source.polarity
        * (
            _on_harmonic_axis(frequency, *given[rail])
            if rail in given
            else np.array([spectra[rail].get(float(hz), 0j) for hz in frequency], dtype=complex)
        )
        for _, source, rail in kept
    ]
    rails_ripple = (
        np.stack(np.broadcast_arrays(*on_axis), axis=-1)
        if on_axis
        else np.zeros((frequency.size, 0), dtype=complex)
    )
    columns = [r for r, _, _ in kept]
    at_nodes = np.moveaxis(
        transfers[..., columns] * rails_ripple[..., :, None, :], (-1, -2, -3), (0, 1, -1)
    )
    roots = tuple(root_of(chain, rail) for _, _, rail in kept)
    sources = tuple((source, rail, index[source.stage]) for _, source, rail in kept)
    hum = HumField(frequency, at_nodes, roots, sources, from_source[..., -1])
    return hum, tuple(ideal)


def _on_harmonic_axis(
    frequency: NDArray[np.float64], hz: NDArray[np.float64], amplitude: Complex
) -> Complex:
    """A rail's harmonics (``hz`` (K,), ``amplitude`` (..., K)) placed on the field's
    harmonic axis (H,), zero where the rail has none."""
    placed = np.zeros(np.shape(amplitude)[:-1] + (frequency.size,), dtype=complex)
    index = np.searchsorted(frequency, hz)
    assert np.all(index < frequency.size) and np.allclose(frequency[index], hz, rtol=1e-12), (
        "a rail's harmonic off the field's axis"
    )
    placed[..., index] = amplitude
    return placed


def _db20(ratio: float) -> float | None:
    return 20.0 * math.log10(ratio) if ratio > 0.0 and math.isfinite(ratio) else None


def output_hum(hum: HumField, scale: Complex | None = None) -> tuple[float, float]:
    """Output hum (unweighted, A-weighted), V rms, with each source's phasor times
    ``scale`` (R, H) where given: the sum a remedy's expected hum comes from."""
    at_out = hum.at_nodes[:, -1, :]
    if scale is not None:
        at_out = at_out * scale
    flat = np.ones_like(hum.frequency)
    weights = a_weighting(hum.frequency)
    return (
        math.sqrt(power_sum(at_out, hum.roots, flat)),
        math.sqrt(power_sum(at_out, hum.roots, weights)),
    )


def hum_budget(
    analysis: Analysis, supplies: Sequence[SupplyBudget], noise_a_vrms: float | None
) -> tuple[HumBudget, HumField | None]:
    """The hum budget of a solved chain (controls as set, nominal line and load), without
    remedies (`chainbudget.budget.hum_remedies`), and the solved phasors behind it.

    ``noise_a_vrms`` is the A-weighted noise at the output (for hum to noise).
    """
    chain = analysis.chain
    n = len(chain.stages)
    hum, ideal = solve_hum(analysis, supplies)
    if hum is None or not hum.sources:
        return HumBudget(
            node_vrms=(0.0,) * n,
            output_vrms=0.0,
            output_a_vrms=0.0,
            spl_db=None,
            spl_a_db=None,
            hum_to_noise_db=None,
            input_vrms=None if hum is None else 0.0,
            input_a_vrms=None if hum is None else 0.0,
            by_rail=(),
            paths=(),
            harmonics=(),
            ideal_bias=ideal,
        ), None
    frequency = hum.frequency
    flat = np.ones_like(frequency)
    weights = a_weighting(frequency)
    node_vrms = tuple(
        math.sqrt(power_sum(hum.at_nodes[:, j, :], hum.roots, flat)) for j in range(n)
    )
    output_vrms, output_a_vrms = output_hum(hum)
    at_out = hum.at_nodes[:, -1, :]
    by_rail = []
    for root in dict.fromkeys(hum.roots):
        mine = [r for r, name in enumerate(hum.roots) if name == root]
        roots = [root] * len(mine)
        by_rail.append(
            RailHum(
                root,
                math.sqrt(power_sum(at_out[mine], roots, flat)),
                math.sqrt(power_sum(at_out[mine], roots, weights)),
            )
        )
    paths = sorted(
        (
            HumPath(
                source.stage,
                k,
                source.path,
                source.rail,
                rail,
                hum.roots[i],
                float(np.sqrt(np.sum(np.abs(at_out[i]) ** 2) / 2.0)),
                float(np.sqrt(np.sum(np.abs(at_out[i] * weights) ** 2) / 2.0)),
            )
            for i, (source, rail, k) in enumerate(hum.sources)
        ),
        key=lambda p: -p.a_vrms,
    )
    harmonics = tuple(
        HumHarmonic(
            float(hz),
            math.sqrt(power_sum(at_out[:, h : h + 1], hum.roots, flat[h : h + 1])),
            math.sqrt(power_sum(at_out[:, h : h + 1], hum.roots, weights[h : h + 1])),
        )
        for h, hz in enumerate(frequency)
    )
    gain = np.abs(hum.gain)
    input_vrms = input_a_vrms = None
    if np.all(gain > 0.0):
        input_vrms = math.sqrt(power_sum(at_out / gain, hum.roots, flat))
        input_a_vrms = math.sqrt(power_sum(at_out / gain, hum.roots, weights))
    sensitivity = chain.load.sensitivity

    def spl(vrms: float) -> float | None:
        if sensitivity is None or vrms <= 0.0:
            return None
        return float(om.hiss_spl(sensitivity, vrms, chain.load.impedance))

    return HumBudget(
        node_vrms=node_vrms,
        output_vrms=output_vrms,
        output_a_vrms=output_a_vrms,
        spl_db=spl(output_vrms),
        spl_a_db=spl(output_a_vrms),
        hum_to_noise_db=None
        if noise_a_vrms is None or noise_a_vrms <= 0.0
        else _db20(output_a_vrms / noise_a_vrms),
        input_vrms=input_vrms,
        input_a_vrms=input_a_vrms,
        by_rail=tuple(by_rail),
        paths=tuple(paths),
        harmonics=harmonics,
        ideal_bias=ideal,
    ), hum
