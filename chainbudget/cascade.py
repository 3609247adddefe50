"""The chain as cascaded two-ports, with exact loading in both directions.

Each stage is solved once on its own as a chain-parameter (ABCD) two-port over the frequency
axis and the axes of its own controls; the cascade then needs only 2x2 algebra, broadcast
over every control axis of the chain at once, to give each node's voltage, the impedance
that loads each stage and the source impedance each stage sees.

Notes
-----
For a two-port with chain parameters A, B, C, D terminated in Y_L: V2/V1 = 1/(A + B Y_L),
Y_in = (C + D Y_L)/(A + B Y_L); driven from Z_S: Z_out = (D Z_S + B)/(C Z_S + A)
(Pozar, Microwave Engineering, 4th ed., sec. 4.4). Loading is therefore exact both ways:
every stage sees the true input admittance of everything after it and the true output
impedance of everything before it.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget.network import Complex, Netlist, TwoPort, two_port
from chainbudget.stages import KINDS
from chainbudget.stages.base import Built, Environment, Stage


@dataclass(frozen=True)
class StageSolution:
    """One stage solved on its own: its two-port and what its build declared."""

    stage: Stage
    two_port: TwoPort
    built: Built


@dataclass(frozen=True)
class Cascade:
    """Node quantities of the whole chain per volt of source open-circuit voltage.

    Every array has shape ``batch + (F,)``; index k runs over the stages.
    """

    stages: tuple[StageSolution, ...]
    v_in: tuple[Complex, ...]
    v_out: tuple[Complex, ...]
    load_admittance: tuple[Complex, ...]
    source_impedance: tuple[Complex, ...]
    output_impedance: tuple[Complex, ...]
    input_admittance: Complex

    def probe(self, k: int, name: str) -> Complex:
        """A probe of stage k (declared by its build), per volt of source voltage."""
        g1, g2 = self.stages[k].two_port.probes[name]
        return g1 * self.v_in[k] + g2 * self.v_out[k]


def solve_stage(
    stage: Stage,
    env: Environment,
    frequency: NDArray[np.float64],
    positions: Mapping[str, ArrayLike],
) -> StageSolution:
    """Build a stage's network alone and reduce it to a two-port with its probes."""
    net = Netlist(frequency)
    built = KINDS[stage.kind].build(net, stage, env, "in", "out", positions)
    return StageSolution(stage, two_port(net, "in", "out", built.probes), built)


def cascade(
    solutions: Sequence[StageSolution], source_impedance: ArrayLike, load_impedance: ArrayLike
) -> Cascade:
    """Join solved stages between a source impedance and a load impedance (ohm)."""
    n = len(solutions)
    loads: list[Complex] = [np.asarray(0j)] * n
    y: Complex = np.asarray(1.0 / np.asarray(load_impedance, dtype=complex), dtype=complex)
    for k in range(n - 1, -1, -1):
        loads[k] = y
        y = solutions[k].two_port.input_admittance(y)
    input_admittance = y
    z_source = np.asarray(source_impedance, dtype=complex)
    sources: list[Complex] = []
    outputs: list[Complex] = []
    for sol in solutions:
        sources.append(z_source)
        z_source = sol.two_port.output_impedance(z_source)
        outputs.append(z_source)
    v = 1.0 / (1.0 + sources[0] * input_admittance)
    v_in: list[Complex] = []
    v_out: list[Complex] = []
    for sol, y_load in zip(solutions, loads, strict=True):
        v_in.append(v)
        v = v * sol.two_port.voltage_ratio(y_load)
        v_out.append(v)
    # Every figure on the same full shape, so results can be indexed alike.
    shape = np.broadcast_shapes(
        *(np.shape(a) for a in (*v_in, *v_out, *loads, *sources)), *(np.shape(a) for a in outputs)
    )

    def full(arrays: list[Complex]) -> tuple[Complex, ...]:
        return tuple(np.broadcast_to(a, shape) for a in arrays)

    return Cascade(
        tuple(solutions),
        full(v_in),
        full(v_out),
        full(loads),
        full(sources),
        full(outputs),
        np.broadcast_to(input_admittance, shape),
    )


def whole_chain_network(
    stages: Sequence[Stage],
    envs: Sequence[Environment],
    frequency: NDArray[np.float64],
    positions: Sequence[Mapping[str, ArrayLike]],
    source_impedance: float,
    load_impedance: float,
) -> tuple[Netlist, list[str]]:
    """One network of the whole chain, source voltage to load, built by the same stages.

    Returns the netlist (a 1 V source named ``source`` drives node ``src``) and the names of
    the stage output nodes. Used to check the cascade, and for the noise of the whole chain.
    """
    net = Netlist(frequency)
    net.voltage_source("src", "0", label="source")
    node = "n0"
    net.resistor("src", node, max(source_impedance, 1e-9), label="source.impedance")
    outs: list[str] = []
    for k, (stage, env, pos) in enumerate(zip(stages, envs, positions, strict=True), 1):
        out = f"n{k}"
        KINDS[stage.kind].build(net, stage, env, node, out, pos)
        outs.append(out)
        node = out
    net.resistor(node, "0", load_impedance, label="load")
    return net, outs
