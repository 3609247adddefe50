"""Every noise generator of a chain carried to every node as a power spectral density.

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

The source's thermal noise 4 k T Re(Z_S(f)) (Johnson, Phys. Rev. 32, 97 (1928); Nyquist,
Phys. Rev. 32, 110 (1928)) is in series with the source voltage, so it reaches node j as the
signal does: |v_out,j| per volt. A reactive source (`chainbudget.source_network`: a piezo's
series capacitance, a pickup's inductance) counts only its real part; its reactance still
shapes, through Z_S,k, how every later generator (a bias resistor, an op-amp's i_n) meets
the input. It is the reference of the noise figure
NF = 10 log10(S_out / S_out,source) (Friis, Proc. IRE 32 (1944) 419; spot noise figure at one
frequency).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget.budget.analysis import positions_as_set
from chainbudget.cascade import Cascade, inner_node, stamp_section
from chainbudget.chainfile import Chain
from chainbudget.loops import Section
from chainbudget.network import GROUND, Complex, Netlist, TwoPort
from chainbudget.source_network import source_resistance
from chainbudget.spectrum import psd_weights, thermal_voltage_psd
from chainbudget.stages import KINDS
from chainbudget.stages.base import Environment, Stage

# A source impedance below this (an ideal driver) is raised to it: 1/Z_S stamps a finite
# admittance and the stage's input is still, to every practical digit, held at ground.
SOURCE_IMPEDANCE_FLOOR_OHM = 1e-9
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
class UnitNoise:
    """How one unit's (a stage's, or a loop section's) generators met its ports, as solved:
    what moving the unit elsewhere in the chain needs (`UnitNoise.out_under`).

    Attributes
    ----------
    section : Section
        The unit.
    psd : ndarray, shape (S_u, ..., F)
        Each generator's PSD, V^2/Hz or A^2/Hz.
    to_out, to_in : ndarray, shape (S_u, ..., F), complex
        Each generator's transfer to the unit's output and input node voltages under the
        terminations it was solved with.
    source_impedance, load_admittance : ndarray, complex
        Those terminations: Z_S at the input (floored as stamped) and Y_L at the output.
    """

    section: Section
    psd: NDArray[np.float64]
    to_out: Complex
    to_in: Complex
    source_impedance: Complex
    load_admittance: Complex

    def out_under(
        self, port: TwoPort, source_impedance: Complex, load_admittance: Complex
    ) -> Complex:
        """Each generator's transfer to the unit's output node under other terminations,
        (S_u, ..., F), from the transfers as solved: no new solve.

        Notes
        -----
        A linear two-port with sources inside obeys V1 = A V2 + B I2 + e, I1 = C V2 +
        D I2 + i (chain parameters, I2 leaving port 2; the sources referred to the input
        as a series voltage e and a shunt current i: Rothe & Dahlke, Proc. IRE 44 (1956)
        811, from memory). As solved, I1 = -V1/Z_S0 and I2 = Y_L0 V2 give e and i from
        (V1_0, V2_0); under (Z_S, Y_L) the same relations give
        V2 = [V2_0 (A + B Y_L0 + Z_S (C + D Y_L0)) - V1_0 (1 - Z_S/Z_S0)]
        / (A + B Y_L + Z_S (C + D Y_L)),
        exact by superposition (the rest of the chain meets the unit only at its ports).
        """
        z = _floored(np.asarray(source_impedance, complex))
        y = np.asarray(load_admittance, complex)
        z0, y0 = self.source_impedance, self.load_admittance
        a, b, c, d = port.a, port.b, port.c, port.d
        as_solved = a + b * y0 + z * (c + d * y0)
        return (self.to_out * as_solved - self.to_in * (1.0 - z / z0)) / (
            a + b * y + z * (c + d * y)
        )


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
    units : tuple of UnitNoise
        Each unit's generators at its ports as solved (what moving a stage needs), in the
        order of ``origins``.
    source_psd : ndarray, shape (F,), or None
        The source impedance's thermal noise (generator 0 when given), V^2/Hz.

    Parts given as arrays over leading batch axes (the spread's trials) put those axes
    before F: ``contribution`` (S, K, T, F), ``signal`` (K, T, F).
    """

    frequency: NDArray[np.float64]
    band: slice
    origins: tuple[NoiseOrigin, ...]
    contribution: NDArray[np.float64]
    signal: NDArray[np.float64]
    units: tuple[UnitNoise, ...] = ()
    source_psd: NDArray[np.float64] | None = None

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
        # `chainbudget.spectrum.integrate_psd`'s rule, the weighting folded into its weights
        return np.asarray(psd[..., self.band] @ (psd_weights(f) * weighting(f) ** 2))


def unweighted(f: ArrayLike) -> NDArray[np.float64]:
    """The flat weighting, 1 at every frequency."""
    return np.ones_like(np.asarray(f, dtype=np.float64))


def _floored(z: Complex) -> Complex:
    return np.where(np.abs(z) < SOURCE_IMPEDANCE_FLOOR_OHM, SOURCE_IMPEDANCE_FLOOR_OHM, z)


def _batch_shape(frequency: NDArray[np.float64], arrays: Sequence[ArrayLike]) -> tuple[int, ...]:
    """The shape every spectrum takes: the frequency axis (F,) behind any batch axes the
    parts bring (the spread's trials: a part of shape (T, 1) makes every figure (T, F))."""
    return np.broadcast_shapes(frequency.shape, *(np.shape(a) for a in arrays))


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
    if not net.noise:
        empty = np.zeros((0, *frequency.shape))
        return [], empty, empty.astype(complex), empty.astype(complex)
    (_, to_out), (_, to_in) = net.adjoint_transfers(["out", "in"])
    shape = _batch_shape(frequency, [*to_out, *to_in, *(src.psd for src in net.noise)])
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
    count = len(section.indices)
    if not net.noise:
        empty = np.zeros((0, *frequency.shape))
        return [], empty, np.zeros((0, count, *frequency.shape), complex), empty.astype(complex)
    nodes = [inner_node(k) for k in section.indices[:-1]] + ["out"]
    *per_node, (_, to_in) = net.adjoint_transfers([*nodes, "in"])
    to_nodes = [transfers for _, transfers in per_node]
    every = [h for per_node in to_nodes for h in per_node]
    shape = _batch_shape(frequency, [*every, *to_in, *(src.psd for src in net.noise)])
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
    shape = _batch_shape(
        frequency, [*nominal.v_out, *nominal.source_impedance, *nominal.load_admittance]
    )
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
    solved: list[UnitNoise] = []
    source_psd = None
    # Nyquist: 4kT Re Z_S(f); a series capacitance or inductance is lossless and adds none.
    r_source = source_resistance(chain.source, frequency)
    if np.any(r_source > 0.0):
        origins.append(NoiseOrigin("source.impedance", SOURCE_STAGE, -1, "impedance", "thermal"))
        source_psd = thermal_voltage_psd(r_source, temperature_k)
        blocks.append((source_psd * signal**2)[None])
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
        solved.append(
            UnitNoise(
                unit,
                psd,
                to_nodes[:, -1],
                to_in,
                _floored(np.asarray(nominal.source_impedance[k], complex)),
                np.asarray(nominal.load_admittance[unit.last], complex),
            )
        )
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
    return NoiseSpectra(
        frequency, band, tuple(origins), contribution, signal, tuple(solved), source_psd
    )
