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

A loop section (`chainbudget.loops`: an op-amp whose feedback senses a later stage's output)
is built as one network and reduced to one two-port between its input and the sensed
output; the cascade joins it like any stage. Each stage inside keeps its own probes, linear
in the section's two port voltages, and its node voltages, loads and impedances come from
the same solution (`SectionSolution`).
"""

from __future__ import annotations

from collections.abc import Callable, Hashable, Iterator, Mapping, Sequence
from contextlib import contextmanager
from contextvars import ContextVar
from dataclasses import dataclass, field, replace
from typing import Any, cast

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget.loops import Section, section_of, sections
from chainbudget.network import (
    GROUND,
    Complex,
    Netlist,
    Ref,
    TwoPort,
    branch_ref,
    node_ref,
    two_port,
)
from chainbudget.stages import KINDS
from chainbudget.stages.base import Built, Environment, LoadSideTerms, Stage


@dataclass(frozen=True)
class StageSolution:
    """One stage solved: the two-port of its section (the stage alone, or the loop section
    it sits in) and what its build declared. Its probes are linear in that section's port
    voltages: ``g1 V_in(section) + g2 V_out(section)``."""

    stage: Stage
    two_port: TwoPort
    built: Built


@dataclass(frozen=True)
class Injection:
    """A unit current into an inner node of a loop section with both ports held at 0 V: the
    node's voltage and the currents into the section at its input and output ports."""

    node_v: Complex
    port_in_a: Complex
    port_out_a: Complex


@dataclass(frozen=True)
class SectionSolution:
    """A section solved: its two-port, each stage's solution, and (for a loop) the
    short-circuit admittances and inner-node injections that give the impedances inside.

    The two-port's probes ``node{k}`` and ``link{k}`` are the voltage at stage k's output and
    the current it delivers to the stage after it, for every stage but the last.
    """

    section: Section
    two_port: TwoPort
    stages: tuple[StageSolution, ...]
    admittances: tuple[Complex, Complex, Complex, Complex] | None = None
    injections: Mapping[int, Injection] = field(default_factory=dict)


@dataclass(frozen=True)
class Cascade:
    """Node quantities of the whole chain per volt of source open-circuit voltage.

    Every array has shape ``batch + (F,)``; index k runs over the stages. Inside a loop
    section, ``load_admittance[k]`` is the current stage k delivers to the stage after it
    over its output voltage, ``output_impedance[k]`` the impedance at its output with the
    whole loop in place (a driving-point impedance), and ``source_impedance[k]`` that of the
    node before it; the section's last node has the closed-loop output impedance.
    """

    stages: tuple[StageSolution, ...]
    v_in: tuple[Complex, ...]
    v_out: tuple[Complex, ...]
    load_admittance: tuple[Complex, ...]
    source_impedance: tuple[Complex, ...]
    output_impedance: tuple[Complex, ...]
    input_admittance: Complex
    sections: tuple[Section, ...] = ()
    #: Each section's own two-port, in the order of ``sections`` (a loop's carries the
    #: ``node{k}`` and ``link{k}`` probes of the stages inside it).
    section_ports: tuple[TwoPort, ...] = ()
    #: Each stage's clip once worked out (`chainbudget.budget.levels.clip_source_peak`):
    #: levels, staging, currents, power and the supplies all read it. Not an init field,
    #: so a cascade made with `dataclasses.replace` starts with none.
    clips: dict[int, object] = field(default_factory=dict, init=False, compare=False, repr=False)

    def section_port(self, section: Section) -> TwoPort:
        """The two-port of one of ``sections``."""
        return self.section_ports[self.sections.index(section)]

    def section(self, k: int) -> Section:
        """The section stage k belongs to (itself alone when it is in no loop)."""
        return section_of(self.sections, k) if self.sections else Section(k, k)

    def probe(self, k: int, name: str) -> Complex:
        """A probe of stage k (declared by its build), per volt of source voltage."""
        sol = self.stages[k]
        side = sol.built.load_side.get(name)
        g1, g2 = sol.two_port.probes[name if side is None else side.inner]
        section = self.section(k)
        value = g1 * self.v_in[section.first] + g2 * self.v_out[section.last]
        if side is not None and side.at_output:
            # a current read on the load side (`LoadSide`): what the stage delivers to the
            # stage after it (or the chain's load) adds to its own elements' share
            value = value + self.load_admittance[k] * self.v_out[k]
        return value


@dataclass
class _Solved:
    """What `solving_once` keeps: each stage's solution by everything its solve depends
    on, and each two-port by what its network depends on (the rails left out for a kind
    whose network does not change with them, `StageKind.network_uses_rails`)."""

    solutions: dict[Hashable, StageSolution] = field(default_factory=dict)
    ports: dict[Hashable, TwoPort] = field(default_factory=dict)


_SOLVED: ContextVar[_Solved | None] = ContextVar("solved", default=None)


@contextmanager
def solving_once() -> Iterator[None]:
    """Within the block, a stage solved again with equal parts, environment, frequencies
    and control positions is the first solve's solution, and a stage whose network does
    not depend on its rails reuses its two-port at other rails (only its build, which
    sets its swing limits, is done again). A check solves the same stage in several
    passes: the power tree's settling, the analysis, the supplies' sag, the noise
    what-ifs. A solve with any array parameter (a spread's trials) or array-valued
    environment is not kept."""
    token = _SOLVED.set(_Solved())
    try:
        yield
    finally:
        _SOLVED.reset(token)


def _as_key(value: object) -> Hashable:
    """An array as its exact contents (shape, type and bytes); anything else as itself."""
    if isinstance(value, np.ndarray):
        return (value.shape, value.dtype.str, value.tobytes())
    return value


def _solve_key(
    stage: Stage,
    env: Environment,
    frequency: NDArray[np.float64],
    positions: Mapping[str, ArrayLike],
) -> Hashable | None:
    """What a stage's solve depends on, or None when some of it cannot be compared."""
    key = (
        stage,
        env,
        _as_key(np.asarray(frequency)),
        tuple(sorted((name, _as_key(value)) for name, value in positions.items())),
    )
    try:
        hash(key)
    except TypeError:  # an array among the stage's values or the environment's rails
        return None
    return key


def solve_stage(
    stage: Stage,
    env: Environment,
    frequency: NDArray[np.float64],
    positions: Mapping[str, ArrayLike],
    points: NDArray[np.intp] | None = None,
) -> StageSolution:
    """Build a stage's network alone and reduce it to a two-port with its probes (once per
    `solving_once` block for the same inputs); ``points`` as `Netlist` takes them (solved
    at those frequency indices only; such a solve is not kept)."""
    kind = KINDS[stage.kind]
    solved = None if points is not None else _SOLVED.get()
    key = network = None
    if solved is not None:
        key = _solve_key(stage, env, frequency, positions)
        if key in solved.solutions:
            return solved.solutions[key]
        network = key
        if key is not None and not kind.network_uses_rails:
            network = _solve_key(stage, replace(env, rails=None), frequency, positions)
    net = Netlist(frequency, points)
    built = kind.build(net, stage, env, "in", "out", positions)
    port = None if solved is None else solved.ports.get(network)
    load_side = LoadSideTerms.of(net, built)
    if port is None:
        port = two_port(net, "in", "out", {**built.probes, **load_side.refs})
        port.probes.update(load_side.probes(port.probes))
    solution = StageSolution(stage, port, built)
    if solved is not None and key is not None:
        solved.solutions[key] = solution
        solved.ports[network] = port
    return solution


def inner_node(k: int) -> str:
    """The name of stage k's output node inside a section's network."""
    return f"section.node{k}"


def link_label(k: int) -> str:
    """The 0 V source that carries stage k's output current into the stage after it."""
    return f"section.link{k}"


def stamp_section(
    net: Netlist,
    stages: Sequence[Stage],
    envs: Sequence[Environment],
    positions: Sequence[Mapping[str, ArrayLike]],
    section: Section,
    node_in: str,
    node_out: str,
    *,
    idle: bool = False,
) -> list[Built]:
    """Stamp the stages of ``section`` between ``node_in`` and ``node_out``.

    The first stage's feedback senses ``node_out`` (``env.feedback_node``; or the node the
    last stage names, `StageKind.sense_node`) when the section is a loop; stage k's output
    is `inner_node` (k), joined to the next stage's input through a 0 V source
    (`link_label`) that measures the current it delivers. ``idle`` builds every stage at
    its idle point (`Environment.idle`).
    """
    builts = []
    node = node_in
    last = stages[section.last]
    sensed = KINDS[last.kind].sense_node(last, node_out)
    for k in section.indices:
        env = envs[k]
        if section.is_loop and k == section.first:
            env = replace(env, feedback_node=sensed)
        if idle:
            env = replace(env, idle=True)
        out = node_out if k == section.last else inner_node(k)
        builts.append(KINDS[stages[k].kind].build(net, stages[k], env, node, out, positions[k]))
        if k < section.last:
            node = f"{out}.next"
            net.voltage_source(out, node, label=link_label(k))
    return builts


def solve_section(
    stages: Sequence[Stage],
    envs: Sequence[Environment],
    frequency: NDArray[np.float64],
    positions: Sequence[Mapping[str, ArrayLike]],
    section: Section,
    *,
    idle: bool = False,
    points: NDArray[np.intp] | None = None,
) -> SectionSolution:
    """Build a section as one network and reduce it to a two-port (``points``: solved at
    those frequency indices only, as `Netlist` takes them).

    Notes
    -----
    Three kinds of right-hand side in one batched solve: the input port driven at 1 V (the
    output port held at 0 V), the output port driven, and a unit current into each inner
    node with both ports held at 0 V. The first two give the short-circuit admittances
    (hence the chain parameters, as `chainbudget.network.two_port`) and every probe as
    g1 V1 + g2 V2; the injections give, with the terminations the cascade finds, the
    impedance at each inner node by superposition.
    """
    if not section.is_loop:
        k = section.first
        env = replace(envs[k], idle=True) if idle else envs[k]
        sol = solve_stage(stages[k], env, frequency, positions[k], points)
        return SectionSolution(section, sol.two_port, (sol,))
    net = Netlist(frequency, points)
    builts = stamp_section(net, stages, envs, positions, section, "in", "out", idle=idle)
    inner = list(section.indices)[:-1]
    k1 = net.index(net.voltage_source("in", GROUND, label="port.in"))
    k2 = net.index(net.voltage_source("out", GROUND, label="port.out"))
    rhs = np.zeros((net.size, 2 + len(inner)))
    rhs[k1, 0] = 1.0
    rhs[k2, 1] = 1.0
    for column, k in enumerate(inner, start=2):
        rhs[net.index(node_ref(inner_node(k))), column] = 1.0
    x = net.solve(rhs)
    y11, y12 = -x[..., k1, 0], -x[..., k1, 1]
    y21, y22 = -x[..., k2, 0], -x[..., k2, 1]
    det = y11 * y22 - y12 * y21

    def probes(refs: Mapping[str, Ref]) -> dict[str, tuple[Complex, Complex]]:
        return {
            name: (x[..., net.index(ref), 0], x[..., net.index(ref), 1])
            for name, ref in refs.items()
        }

    def port(found: dict[str, tuple[Complex, Complex]]) -> TwoPort:
        return TwoPort(a=-y22 / y21, b=-1.0 / y21, c=-det / y21, d=-y11 / y21, probes=found)

    own: dict[str, Ref] = {}
    for k in inner:
        own[f"node{k}"] = node_ref(inner_node(k))
        own[f"link{k}"] = branch_ref(link_label(k))
    solutions = []
    for k, built in zip(section.indices, builts, strict=True):
        load_side = LoadSideTerms.of(net, built)
        found = probes({**built.probes, **load_side.refs})
        found.update(load_side.probes(found))
        solutions.append(StageSolution(stages[k], port(found), built))
    injections = {
        k: Injection(
            x[..., net.index(node_ref(inner_node(k))), column],
            -x[..., k1, column],
            -x[..., k2, column],
        )
        for column, k in enumerate(inner, start=2)
    }
    return SectionSolution(
        section, port(probes(own)), tuple(solutions), (y11, y12, y21, y22), injections
    )


def on_points(value: Any, at: NDArray[np.intp], size: int) -> Any:
    """An array on a frequency axis of ``size`` points (its last) at the indices ``at``;
    anything else (a constant, a per-trial (T, 1) value) as it is."""
    if np.ndim(value) and np.shape(value)[-1] == size:
        found = np.asarray(value)
        if size > 1 and found.strides[-1] == 0:  # one value over the axis (`two_port`)
            return np.broadcast_to(found[..., :1], (*found.shape[:-1], len(at)))
        return found[..., at]
    return value


def at_points(solution: SectionSolution, at: NDArray[np.intp], size: int) -> SectionSolution:
    """``solution`` (solved on a frequency axis of ``size`` points) at the indices ``at``
    only: every array on that axis (`on_points`: the two-ports, their probes, the
    admittances and injections of a loop, a limit that varies with frequency) taken
    there, the rest (per-trial values, constants) kept. A cascade joined from such
    sections lives on those points alone."""

    def on(value: Any) -> Any:
        return on_points(value, at, size)

    def port(tp: TwoPort) -> TwoPort:
        probes = {name: (on(g1), on(g2)) for name, (g1, g2) in tp.probes.items()}
        return TwoPort(on(tp.a), on(tp.b), on(tp.c), on(tp.d), probes)

    def stage(sol: StageSolution) -> StageSolution:
        limits = [replace(limit, peak=on(limit.peak)) for limit in sol.built.limits]
        return StageSolution(sol.stage, port(sol.two_port), replace(sol.built, limits=limits))

    admittances = solution.admittances
    return SectionSolution(
        solution.section,
        port(solution.two_port),
        tuple(stage(sol) for sol in solution.stages),
        None if admittances is None else cast(Any, tuple(on(y) for y in admittances)),
        {
            k: Injection(on(inj.node_v), on(inj.port_in_a), on(inj.port_out_a))
            for k, inj in solution.injections.items()
        },
    )


def _as_section(solution: StageSolution | SectionSolution, k: int) -> SectionSolution:
    if isinstance(solution, SectionSolution):
        return solution
    return SectionSolution(Section(k, k), solution.two_port, (solution,))


class Joins:
    """The terminations worked out while joining cascades that share sections (the
    controls' settings of one batch): a section's input admittance under a load, its output
    impedance from a source and its voltage ratio under a load, each kept by the identity
    of the section's two-port and of the termination (itself a kept result, or the chain's
    end), so a tail or a head two cascades share is worked out once."""

    def __init__(self) -> None:
        # the key objects are held with the result, so their identities stay theirs
        self._found: dict[tuple[str, int, int], tuple[tuple[object, ...], Complex]] = {}

    def _kept(
        self, key: tuple[str, int, int], holders: tuple[object, ...], work: Callable[[], Complex]
    ) -> Complex:
        found = self._found.get(key)
        if found is None:
            found = (holders, work())
            self._found[key] = found
        return found[1]

    def of(self, what: str, port: TwoPort, termination: Complex) -> Complex:
        """``port``'s ``what`` (a `TwoPort` method's name) under ``termination``."""
        key = (what, id(port), id(termination))
        return self._kept(key, (port, termination), lambda: _uncached(what, port, termination))

    def end(self, what: str, impedance: ArrayLike) -> Complex:
        """The chain's source impedance (``what`` "source") or its load's admittance
        ("load") as an array, the same array for the same end."""
        convert = _admittance if what == "load" else _complex
        return self._kept((what, id(impedance), 0), (impedance,), lambda: convert(impedance))


def _admittance(impedance: ArrayLike) -> Complex:
    return np.asarray(1.0 / np.asarray(impedance, dtype=complex), dtype=complex)


def _complex(impedance: ArrayLike) -> Complex:
    return np.asarray(impedance, dtype=complex)


def _uncached(what: str, port: TwoPort, termination: Complex) -> Complex:
    return cast(Complex, getattr(port, what)(termination))


def cascade(
    solutions: Sequence[StageSolution | SectionSolution],
    source_impedance: ArrayLike,
    load_impedance: ArrayLike,
    joins: Joins | None = None,
) -> Cascade:
    """Join solved stages (or sections) between a source impedance and a load impedance
    (ohm; either may be an array on the frequency axis); ``joins`` keeps terminations for
    other cascades of the same sections and ends (the same objects)."""
    units: list[SectionSolution] = []
    for solution in solutions:
        units.append(_as_section(solution, units[-1].section.last + 1 if units else 0))
    term = _uncached if joins is None else joins.of
    n_units = len(units)
    unit_loads: list[Complex] = [np.asarray(0j)] * n_units
    y = _admittance(load_impedance) if joins is None else joins.end("load", load_impedance)
    for u in range(n_units - 1, -1, -1):
        unit_loads[u] = y
        y = term("input_admittance", units[u].two_port, y)
    input_admittance = y
    z_source = (
        _complex(source_impedance) if joins is None else joins.end("source", source_impedance)
    )
    unit_sources: list[Complex] = []
    unit_outputs: list[Complex] = []
    for unit in units:
        unit_sources.append(z_source)
        z_source = term("output_impedance", unit.two_port, z_source)
        unit_outputs.append(z_source)
    v = 1.0 / (1.0 + unit_sources[0] * input_admittance)
    v_in: list[Complex] = []
    v_out: list[Complex] = []
    loads: list[Complex] = []
    sources: list[Complex] = []
    outputs: list[Complex] = []
    for unit, y_load, z_s, z_out in zip(units, unit_loads, unit_sources, unit_outputs, strict=True):
        ratio = term("voltage_ratio", unit.two_port, y_load)
        if not unit.section.is_loop:
            v_in.append(v)
            v = v * ratio
            v_out.append(v)
            loads.append(y_load)
            sources.append(z_s)
            outputs.append(z_out)
            continue
        inside = _inside(unit, v, ratio, z_s, y_load, z_out)
        v_in += inside[0]
        v_out += inside[1]
        loads += inside[2]
        sources += inside[3]
        outputs += inside[4]
        v = v * ratio
    # Every figure on the same full shape, so results can be indexed alike.
    shape = np.broadcast_shapes(
        *(np.shape(a) for a in (*v_in, *v_out, *loads, *sources)), *(np.shape(a) for a in outputs)
    )

    def full(arrays: list[Complex]) -> tuple[Complex, ...]:
        return tuple(np.broadcast_to(a, shape) for a in arrays)

    return Cascade(
        tuple(sol for unit in units for sol in unit.stages),
        full(v_in),
        full(v_out),
        full(loads),
        full(sources),
        full(outputs),
        np.broadcast_to(input_admittance, shape),
        tuple(unit.section for unit in units),
        tuple(unit.two_port for unit in units),
    )


def _inside(
    unit: SectionSolution, v1: Complex, ratio: Complex, z_s: Complex, y_l: Complex, z_out: Complex
) -> tuple[list[Complex], list[Complex], list[Complex], list[Complex], list[Complex]]:
    """v_in, v_out, load admittance, source and output impedance of each stage of a loop
    section driven with ``v1`` at its input (``ratio`` = V2/V1 under its load ``y_l``, ``z_s``
    its source impedance, ``z_out`` its closed-loop output impedance).

    Notes
    -----
    A node's voltage per volt at the section's input is g1 + g2 (V2/V1), which stays finite
    when v1 is zero (a volume at its stop). The impedance at an inner node n with the
    section terminated: a unit current into n gives port currents I1 = y11 V1 + y12 V2 + i1,
    I2 = y21 V1 + y22 V2 + i2 (i1, i2 those with both ports held at 0 V); with I1 = -V1/Z_S
    and I2 = -Y_L V2 that is (1 + Z_S y11) V1 + Z_S y12 V2 = -Z_S i1,
    y21 V1 + (y22 + Y_L) V2 = -i2, and V_n = v_n + g1 V1 + g2 V2 (superposition).
    """
    assert unit.admittances is not None
    y11, y12, y21, y22 = unit.admittances
    a11, a12 = 1.0 + z_s * y11, z_s * y12
    a21, a22 = y21, y22 + y_l
    det = a11 * a22 - a12 * a21
    tp = unit.two_port
    section = unit.section
    v_in: list[Complex] = []
    v_out: list[Complex] = []
    loads: list[Complex] = []
    sources: list[Complex] = []
    outputs: list[Complex] = []
    before = v1
    z_before = z_s
    for k in section.indices:
        v_in.append(before)
        sources.append(z_before)
        if k == section.last:
            v_out.append(v1 * ratio)
            loads.append(y_l)
            outputs.append(z_out)
            break
        g1, g2 = tp.probes[f"node{k}"]
        h1, h2 = tp.probes[f"link{k}"]
        per_input = g1 + g2 * ratio
        node = v1 * per_input
        v_out.append(node)
        loads.append((h1 + h2 * ratio) / per_input)
        inj = unit.injections[k]
        r1 = -z_s * inj.port_in_a
        r2 = -inj.port_out_a
        port1 = (r1 * a22 - a12 * r2) / det
        port2 = (a11 * r2 - a21 * r1) / det
        z_node = inj.node_v + g1 * port1 + g2 * port2
        outputs.append(z_node)
        before, z_before = node, z_node
    return v_in, v_out, loads, sources, outputs


def solve_cascade(
    stages: Sequence[Stage],
    envs: Sequence[Environment],
    frequency: NDArray[np.float64],
    positions: Sequence[Mapping[str, ArrayLike]],
    source_impedance: ArrayLike,
    load_impedance: ArrayLike,
    *,
    idle: bool = False,
) -> Cascade:
    """Solve every section of a chain (a loop as one network) and cascade them."""
    solved = [
        solve_section(stages, envs, frequency, positions, section, idle=idle)
        for section in sections(stages)
    ]
    return cascade(solved, source_impedance, load_impedance)


def whole_chain_network(
    stages: Sequence[Stage],
    envs: Sequence[Environment],
    frequency: NDArray[np.float64],
    positions: Sequence[Mapping[str, ArrayLike]],
    source_impedance: float,
    load_impedance: ArrayLike,
    *,
    source_capacitance: float | None = None,
    source_inductance: float | None = None,
) -> tuple[Netlist, list[str]]:
    """One network of the whole chain, source voltage to load, built by the same stages.

    ``load_impedance`` is in ohm, a number or an array on the frequency axis (a
    loudspeaker's impedance, `chainbudget.loudspeaker.load_impedance`). A reactive source's
    ``source_capacitance`` (F) and ``source_inductance`` (H) are stamped as parts in series
    with the resistor ``source.impedance``, which runs from ``src``.

    Returns the netlist (a 1 V source named ``source`` drives node ``src``) and the names of
    the stage output nodes. Used to check the cascade, and for the noise of the whole chain.
    A loop's first stage senses the output node of the stage its feedback names.
    """
    net = Netlist(frequency)
    net.voltage_source("src", "0", label="source")
    reactive = [
        (value, stamp)
        for value, stamp in ((source_capacitance, net.capacitor), (source_inductance, net.inductor))
        if value is not None
    ]
    nodes = ["src", *(f"src.{i}" for i in range(len(reactive))), "n0"]
    net.resistor(nodes[0], nodes[1], max(source_impedance, 1e-9), label="source.impedance")
    for (value, stamp), a, b in zip(reactive, nodes[1:-1], nodes[2:], strict=True):
        stamp(a, b, value)
    node = "n0"
    outs: list[str] = []
    found = sections(stages)
    for k, (stage, env, pos) in enumerate(zip(stages, envs, positions, strict=True), 1):
        out = f"n{k}"
        section = section_of(found, k - 1)
        if section.is_loop and section.first == k - 1:
            last = stages[section.last]
            sensed = KINDS[last.kind].sense_node(last, f"n{section.last + 1}")
            env = replace(env, feedback_node=sensed)
        KINDS[stage.kind].build(net, stage, env, node, out, pos)
        outs.append(out)
        node = out
    net.admittance(node, GROUND, 1.0 / np.asarray(load_impedance, dtype=complex))
    return net, outs
