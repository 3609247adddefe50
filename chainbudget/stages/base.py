"""What every stage kind provides, and the pieces several kinds share.

A stage kind is one module (or a small package) under ``chainbudget/stages/`` holding a
`StageKind` subclass: its fields (read by the loader and listed by ``chainbudget blocks``),
the controls it exposes, ``build``, which stamps its network into a `Netlist` between two
nodes and declares its swing limits as `Limit` objects on linear probes of that network, and
its own figures and rules: ``figures`` works them out from a `StageContext` (the solved
chain as seen from the stage), ``rules`` turns them into findings.
"""

from __future__ import annotations

import re
from abc import ABC, abstractmethod
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any, ClassVar, Protocol

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget import fields as f
from chainbudget.finding import Finding
from chainbudget.kindfigures import KindFigures
from chainbudget.network import GMIN, GROUND, Complex, Netlist, Ref, branch_ref, node_ref
from chainbudget.parts import OpAmp, Transistor
from chainbudget.spectrum import flicker_psd
from chainbudget.units import UnitParseError


@dataclass(frozen=True)
class Stage(f.TableEntry):
    """One validated ``[[stage]]`` table."""

    table = "stage"


@dataclass(frozen=True)
class Rails:
    """The supply voltages a stage runs from, V (negative rail below ground when split)."""

    positive: float
    negative: float
    bias: float

    @property
    def total(self) -> float:
        return self.positive - self.negative

    @property
    def up(self) -> float:
        """Room from the bias point to the positive rail."""
        return self.positive - self.bias

    @property
    def down(self) -> float:
        """Room from the bias point to the negative rail."""
        return self.bias - self.negative


@dataclass(frozen=True)
class Environment:
    """What a stage needs from the rest of the chain to build its network."""

    temperature_k: float
    opamps: Mapping[str, OpAmp]
    transistors: Mapping[str, Transistor]
    rails: Rails | None
    # The chain's load, ohm: what an output stage works its conduction current out from.
    load_impedance: float | None = None
    #: Inside a loop section, the node whose voltage the stage's feedback senses (the
    #: output of a later stage, `StageKind.feedback_from`); None: its own output.
    feedback_node: str | None = None
    #: Small-signal model at idle instead of at the conduction point: an output pair with
    #: both halves conducting at their quiescent current (kinds without one ignore it).
    idle: bool = False
    #: DC at the stage's input node as the chain's DC walk finds it (`budget.dcbias`), V;
    #: None: unknown or not yet walked. A DC-coupled follower's base sits there.
    dc_input_v: float | None = None


@dataclass(frozen=True)
class OwnParts:
    """Stamps a stage's own resistors: labelled ``stage.part`` and carrying their thermal
    noise at the stage's temperature."""

    net: Netlist
    stage: str
    temperature_k: float

    def resistor(self, part: str, a: str, b: str, resistance: ArrayLike) -> None:
        self.net.resistor(
            a,
            b,
            resistance,
            label=f"{self.stage}.{part}",
            stage=self.stage,
            temperature_k=self.temperature_k,
        )

    def to_bias(self, part: str, node: str, resistance: ArrayLike) -> None:
        """A resistor from ``node`` to the stage's bias point: AC ground for the signal,
        and the bias point's ripple entering ``node`` through it as the current
        v_ripple / R (its Norton form; `Netlist.ripple_current`)."""
        self.resistor(part, node, GROUND, resistance)
        self.net.ripple_current(
            node,
            1.0 / np.asarray(resistance, dtype=float),
            rail="bias",
            label=f"{self.stage}.{part}.ripple",
            stage=self.stage,
            path=part.replace("_", " "),
        )


@dataclass(frozen=True)
class Control:
    """A pot a designer turns: its field, its setting and whether the search sweeps it."""

    key: str
    label: str
    position: float
    taper: str | float
    sweep: bool


@dataclass(frozen=True)
class Limit:
    """A swing limit: the peak of a linear probe may not exceed ``peak``.

    ``peak`` is a float or an array on the frequency axis (the slew-rate limit).
    """

    name: str
    probe: str
    peak: float | NDArray[np.float64]
    what: str
    #: The limit bounds a current (an op-amp's output current, a follower's bias current):
    #: a stage that clips on it ran out of drive, not out of voltage.
    bounds_current: bool = False


@dataclass(frozen=True)
class DcWindow:
    """Where an active stage's output is meant to sit at DC and the range it works in, V.

    ``bias_v`` is the DC the stage is designed around (its swing figures assume it);
    ``low_v``..``high_v`` is the range the output can reach; ``remedy`` says what brings
    the DC back to ``bias_v`` when it sits elsewhere.
    """

    bias_v: float
    low_v: float
    high_v: float
    remedy: str


@dataclass(frozen=True)
class Isolation:
    """A network a stage could put between the node its loop senses and the load, to keep
    a capacitive load out of the loop: the fields (TOML text) that give it, and the
    impedance the loop then sees, ``impedance(frequency_hz, z_load)`` (ohm, ``z_load`` the
    load on that axis)."""

    fields: Mapping[str, str]
    impedance: Callable[[NDArray[np.float64], Complex], Complex]


@dataclass
class Built:
    """What ``build`` stamped: probes (name -> MNA unknown), limits and op-amps used."""

    probes: dict[str, Ref] = field(default_factory=dict)
    limits: list[Limit] = field(default_factory=list)
    opamps: list[tuple[str, OpAmp]] = field(default_factory=list)
    output_probe: str = ""
    #: Probes of the currents the stage sources in half-sine pulses from each rail (an
    #: op-amp's output, a class-B output pair), for the mean rail currents.
    pulse_probes: list[str] = field(default_factory=list)
    #: Current probes worked out on the load side of a node (`LoadSide`): an op-amp's
    #: output current, by probe name.
    load_side: dict[str, LoadSide] = field(default_factory=dict)


@dataclass(frozen=True)
class LoadSide:
    """A current probe read by Kirchhoff's current law at ``node``: the current that
    leaves it through every element connected there but the one from ``behind`` (the
    source that delivers it), plus, when ``node`` is the stage's output node, the current
    the stage delivers to what follows (``at_output``, set once the build is complete).

    Its two-port probe ``inner`` holds the currents into the stage's own elements; the
    cascade adds the delivered current (`chainbudget.cascade.Cascade.probe`).
    """

    node: str
    behind: str
    inner: str
    at_output: bool = True


@dataclass(frozen=True)
class LoadSideTerms:
    """The node-voltage probes and admittances of a built stage's `LoadSide` currents.

    ``terms`` maps each current's inner probe to its node's probe name, the node's total
    admittance and ((neighbour probe name, admittance), ...); ``refs`` the node-voltage
    probes they need, to be solved with the stage's own.
    """

    terms: dict[str, tuple[str, Complex, tuple[tuple[str, Complex], ...]]]
    refs: dict[str, Ref]

    @classmethod
    def of(cls, net: Netlist, built: Built) -> LoadSideTerms:
        """Collect them once ``built``'s stage is completely stamped into ``net``; marks
        each `LoadSide` whose node is not the stage's output node (an isolating resistor
        between: it is one of the node's elements, and nothing more is delivered there)."""
        terms: dict[str, tuple[str, Complex, tuple[tuple[str, Complex], ...]]] = {}
        refs: dict[str, Ref] = {}
        output = built.probes.get(built.output_probe)
        for name, side in list(built.load_side.items()):
            if output is not None and output != node_ref(side.node):
                built.load_side[name] = LoadSide(side.node, side.behind, side.inner, False)
            total: Complex = np.asarray(GMIN, dtype=complex)  # the node's leak to ground
            others = []
            for other, y in net.admittances_at(side.node):
                if other == side.behind:
                    continue
                total = total + y
                if other != GROUND:
                    refs[f"v({other})"] = node_ref(other)
                    others.append((f"v({other})", y))
            refs[f"v({side.node})"] = node_ref(side.node)
            terms[side.inner] = (f"v({side.node})", total, tuple(others))
        return cls(terms, refs)

    def probes(
        self, solved: Mapping[str, tuple[Complex, Complex]]
    ) -> dict[str, tuple[Complex, Complex]]:
        """Each inner probe from the solved node-voltage probes: sum over the elements
        y_e (V_node - V_e) = Y_total V_node - sum_e y_e V_e, for g1 and g2 alike."""
        found: dict[str, tuple[Complex, Complex]] = {}
        for inner, (node, total, others) in self.terms.items():
            pair = []
            for side in (0, 1):
                value = total * solved[node][side]
                for probe, y in others:
                    value = value - y * solved[probe][side]
                pair.append(value)
            found[inner] = (pair[0], pair[1])
        return found


class StageContext(Protocol):
    """The solved chain as a stage kind sees it when working out its own figures.

    Figures are at the reference frequency with the controls as set, per volt of source
    open-circuit peak (``gain``, ``probe``, ``input_current``) or as the source peak at
    which a limit binds (``source_clip``, ``limit_source_peak``). ``index`` is the stage's
    place in the chain; the methods take any index, so a kind can look at its neighbours.
    """

    @property
    def stage(self) -> Stage: ...
    @property
    def index(self) -> int: ...
    @property
    def env(self) -> Environment:
        """The stage's environment at the analysed (low-line, loaded) rails."""
        ...

    @property
    def hot_env(self) -> Environment:
        """The stage's environment at high line (for heat)."""
        ...

    @property
    def ambient_degc(self) -> float: ...
    @property
    def load_ohm(self) -> float: ...
    @property
    def is_last(self) -> bool:
        """Whether the stage drives the load."""
        ...

    @property
    def output_nominal_vpk(self) -> float:
        """The nominal output peak at the load, V."""
        ...

    def gain(self, index: int) -> float:
        """|V_node / V_source| at stage ``index``'s output."""
        ...

    def probe(self, index: int, name: str) -> float:
        """|probe| of stage ``index`` per volt of source."""
        ...

    def input_current(self, index: int) -> float:
        """|current into stage ``index``'s input| per volt of source, A/V."""
        ...

    def source_clip(self, index: int) -> tuple[float, Limit] | None:
        """Source peak at which stage ``index`` reaches its tightest limit, and the limit."""
        ...

    def limit_source_peak(self, index: int, name: str) -> float | None:
        """Source peak at which limit ``name`` of stage ``index`` binds (None: no such)."""
        ...

    def limits(self, index: int) -> list[Limit]:
        """The limits stage ``index`` declared."""
        ...

    def neighbour(self, index: int) -> tuple[Stage, StageKind]:
        """Stage ``index`` and its kind."""
        ...

    @property
    def reference_hz(self) -> float:
        """The chain's reference frequency, Hz."""
        ...

    @property
    def band_hz(self) -> tuple[float, float]:
        """The chain's band, Hz."""
        ...

    @property
    def last_index(self) -> int:
        """The index of the stage that drives the load."""
        ...

    def input_gain(self, index: int) -> float:
        """|V at stage ``index``'s input / V_source|."""
        ...

    def output_impedance(self, index: int) -> complex:
        """The impedance at stage ``index``'s output in the chain, ohm (a loop section's
        last stage: the closed-loop figure, with the load removed)."""
        ...

    def source_impedance(self, index: int) -> complex:
        """The impedance that drives stage ``index``'s input, ohm."""
        ...

    def loop_section(self, index: int) -> tuple[int, int]:
        """(first, last) stage of the section holding stage ``index``: a loop when
        last > first, else the stage alone."""
        ...

    def stability_axis(self) -> NDArray[np.float64]:
        """The frequency axis loop margins are read on, Hz (from the reference frequency)."""
        ...

    def return_ratio(
        self, index: int, frequency_hz: NDArray[np.float64], load_z: ArrayLike | None = None
    ) -> Complex | None:
        """Bode's return ratio of stage ``index``'s op-amp in its loop (its own feedback, or
        the loop section it heads), terminated as in the chain, on ``frequency_hz``; with
        ``load_z`` (shape ``(..., F)``) that impedance in place of everything after the
        section. None for a stage without an op-amp."""
        ...

    def load_impedance(self, frequency_hz: ArrayLike) -> Complex:
        """The chain's load (a driver's Thiele-Small impedance, cable capacitance) on any
        axis, ohm."""
        ...

    def at_idle(self) -> StageContext:
        """The same view of the chain with every stage at its idle point (an output pair's
        both halves conducting at their quiescent current), at the reference frequency."""
        ...


@dataclass(frozen=True)
class NodeFacts:
    """What a stage kind's rules may read of the rest of the budget: its node's headroom at
    max level (dB, None where unlimited), the output power when the stage drives the load
    (W, None otherwise), the ambient (degC) and the band's low edge (Hz)."""

    stage: str
    headroom_db: float | None
    output_power_w: float | None
    ambient_degc: float
    band_low_hz: float


class StageKind(ABC):
    """A stage kind: its fields, its controls and its network."""

    kind: ClassVar[str]
    summary: ClassVar[str]
    fields: ClassVar[tuple[f.Field, ...]]
    uses_rails: ClassVar[bool] = True
    #: Whether the stage's small-signal network changes with its rails' voltages (a
    #: transistor's operating point does; an op-amp's feedback network does not: there the
    #: rails set only the swing limits). A network that does not is solved once for all the
    #: rails a check tries (`chainbudget.cascade.solving_once`); tests/test_cascade.py holds
    #: each kind's claim against solves at other rails.
    network_uses_rails: ClassVar[bool] = True
    uses_opamp: ClassVar[bool] = False
    #: A passive network that loses level (a volume or tone stage): placing it ahead of the
    #: main gain lifts the noise floor.
    attenuates: ClassVar[bool] = False
    #: The pot the listener turns for level (the last such stage is the master volume).
    sets_volume: ClassVar[bool] = False
    #: Its pots shape the response (tone controls): full boost is checked against headroom.
    shapes_response: ClassVar[bool] = False
    #: A power output stage: the chain's maximum output is reported as a finding.
    power_stage: ClassVar[bool] = False
    #: What makes this stage able to drive a power stage's base current, when it cannot.
    drive_remedy: ClassVar[str] = "put an emitter follower between them"
    #: Where the drive note names the stage's output ("its output", "its emitter").
    output_name: ClassVar[str] = "its output"

    def controls(self, stage: Stage) -> list[Control]:
        """The pots of this stage (none by default)."""
        return []

    @abstractmethod
    def build(
        self,
        net: Netlist,
        stage: Stage,
        env: Environment,
        node_in: str,
        node_out: str,
        positions: Mapping[str, ArrayLike],
    ) -> Built:
        """Stamp the stage between ``node_in`` and ``node_out``; ``positions`` are taper-free
        rotations keyed by control key, broadcastable to ``batch + (F,)``."""

    def missing(self, values: Mapping[str, Any]) -> list[str]:
        """Keys that the other values make required (e.g. ``input`` for an inverting stage)."""
        return []

    def sense_node(self, stage: Stage, node_out: str) -> str:
        """The node a loop's feedback senses when it ends at this stage: its output by
        default. A stage with an output network of its own (an isolating inductor or
        resistor, an output capacitor) is sensed before it; a stage that says so keeps the
        sensed node DC-coupled to its drive."""
        return node_out

    def feedback_from(self, stage: Stage) -> str | None:
        """The later stage whose output the stage's feedback senses (None: its own). The
        stages from this one to that one are solved as one loop section, and ``build`` then
        gets the sensed node as ``env.feedback_node``."""
        return None

    # --- its own figures and rules --------------------------------------------------------

    def figures(self, context: StageContext) -> tuple[KindFigures, ...]:
        """The kind's own figures in the solved chain (none by default)."""
        return ()

    def rules(self, figures: tuple[KindFigures, ...], facts: NodeFacts) -> list[Finding]:
        """The kind's findings (and cautions) about one stage (none by default)."""
        return []

    def isolation_options(self, stage: Stage, load_ohm: float) -> tuple[Isolation, ...]:
        """Networks this stage could add at its output to keep a capacitive load out of a
        loop that senses it, smallest first (none by default, or when it has one)."""
        return ()

    def output_capacitor(self, stage: Stage) -> float | None:
        """The series capacitor between the stage and what it drives, F (None: none)."""
        return None

    def floating_inputs(self, stage: Stage, input_defined: bool) -> list[str]:
        """Op-amp inputs of this stage with no DC path to a defined potential."""
        return []

    def output_defined(self, stage: Stage) -> bool:
        """Whether the stage's output node has a DC path to a defined potential."""
        return True

    def supply_current(self, stage: Stage, env: Environment) -> float:
        """Quiescent current flowing rail to rail, A (an op-amp stage: its section's)."""
        return opamp_part(stage, env).supply_current if self.uses_opamp else 0.0

    # --- DC operating point (chainbudget.budget.dcbias walks these along the chain) ------

    def dc_output(self, stage: Stage, env: Environment, dc_in: float | None) -> float | None:
        """DC potential the stage drives its output to, V, with its input node at ``dc_in``
        (None: unknown). The default, None, means unknown: the check stops until a stage
        defines its input again."""
        return None

    def dc_rest(self, stage: Stage, env: Environment) -> float | None:
        """DC potential the stage's input node rests at when nothing drives it at DC (the
        stage before ends in a series capacitor), V; None: it floats or is unknown."""
        return None

    def dc_window(self, stage: Stage, env: Environment) -> DcWindow | None:
        """The DC an active output is meant to sit at and the range it can reach; None for a
        stage with no active output of its own to check."""
        return None

    def dc_error(self, stage: Stage, env: Environment, error_in: float | None) -> float | None:
        """Worst-case DC error at the output, V (a magnitude), with ``error_in`` the worst-case
        DC error at its input (None: unknown).

        The default carries the input's error through the stage's DC gain (the slope of
        `dc_output`, an affine map for every kind here) and adds nothing of its own; behind
        an output capacitor it is 0. Kinds with an op-amp add its offset voltage and bias
        currents."""
        if not self.output_defined(stage):
            return 0.0
        if error_in is None:
            return None
        low, high = self.dc_output(stage, env, 0.0), self.dc_output(stage, env, 1.0)
        if low is None or high is None:
            return None
        return abs(high - low) * error_in

    def pot_dc(self, stage: Stage, dc_in: float | None) -> float | None:
        """DC at the upper end of a pot whose lower end returns to 0 V, V; None: no such pot
        or unknown."""
        return None

    def bias_point(self, stage: Stage) -> float | None:
        """The signal bias point the stage sets, V (None: mid-rail single supply, 0 V split,
        or the supply `bias_supply` names).

        A kind whose ``bias`` field means something else (a follower's bias circuit) names
        its bias point in another field.
        """
        value = stage.values.get("bias")
        return None if value is None or isinstance(value, str) else float(value)

    def bias_supply(self, stage: Stage) -> str | None:
        """The supply (a divider, say) whose output is the stage's bias point, if its
        ``bias`` names one instead of a voltage."""
        value = stage.values.get("bias")
        return value if isinstance(value, str) and BIAS_FIELD in self.fields else None

    def needs_rail(self, values: Mapping[str, Any]) -> bool:
        """Whether the stage must name its positive rail (or take the only supply)."""
        return self.uses_rails

    def part_problems(
        self, values: Mapping[str, Any], transistors: Mapping[str, Transistor]
    ) -> list[tuple[str, str]]:
        """(key, message) for each transistor reference the loader must reject."""
        return []


# --- pieces shared by several kinds --------------------------------------------------------

# A supply's name as a stage's bias: a word, not a number with a unit.
_SUPPLY_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_.-]*")


def _read_bias(value: object) -> float | str:
    try:
        return f.VOLTAGE.read(value)
    except UnitParseError:
        if isinstance(value, str) and _SUPPLY_NAME.fullmatch(value.strip()):
            return value.strip()
        raise UnitParseError(
            value, 'a voltage such as "6 V", or the name of a supply (a divider) to bias from'
        ) from None


def _write_bias(value: float | str) -> str:
    return value if isinstance(value, str) else str(f.VOLTAGE.write(value))


BIAS = f.FieldKind("V or supply", _read_bias, _write_bias)
BIAS_FIELD = f.Field(
    "bias",
    BIAS,
    "signal bias point: a voltage or a supply such as a divider (default: mid-rail single "
    "supply, 0 V split)",
    None,
)
RAIL_FIELDS: tuple[f.Field, ...] = (
    f.Field("positive", f.NAME, "supply feeding the positive rail (default: the only one)", None),
    f.Field("negative", f.NAME, 'supply of the negative rail, or "ground"', "ground"),
    BIAS_FIELD,
)
OPAMP_FIELD = f.Field(
    "opamp", f.NAME, "op-amp part (a generic class or an [opamp.NAME])", "jfet_input"
)
SWEEP_FIELD = f.Field("sweep", f.FLAG, "sweep the pot(s) in the worst-case search", True)
END_RESISTANCE_FIELD = f.Field(
    "end_resistance", f.RESISTANCE_OR_ZERO, "a real pot's resistance at each end stop", 0.0
)


def taper_fraction(rotation: ArrayLike, taper: str | float) -> NDArray[np.float64]:
    """Wiper-to-lower resistance fraction of a pot at ``rotation`` (0..1).

    Notes
    -----
    ``linear``: x. ``log``: (10^(2x) - 1)/99, the idealised audio taper of the chain-format
    contract (9.1 % at mid rotation, the nominal "10 % at mid" of the trade; real audio pots
    are two-slope approximations of it). A number m in (0, 1) is the fraction at mid
    rotation for the exponential law (b^x - 1)/(b - 1) with b = (1/m - 1)^2, which passes
    through m at x = 0.5 and equals the ``log`` law for m = 1/11.
    """
    x = np.asarray(rotation, dtype=float)
    if taper == "linear":
        return x
    if taper == "log":
        return (10.0 ** (2.0 * x) - 1.0) / 99.0
    mid = float(taper)
    base = (1.0 / mid - 1.0) ** 2
    if abs(base - 1.0) < 1e-12:
        return x
    return (base**x - 1.0) / (base - 1.0)


def opamp_part(stage: Stage, env: Environment) -> OpAmp:
    return env.opamps[str(stage.values["opamp"])]


def opamp_dc_window(stage: Stage, env: Environment, remedy: str) -> DcWindow:
    """An op-amp output's DC window: the bias point, and the rails less ``swing_margin``.

    Notes
    -----
    The output reaches no closer than ``swing_margin`` to either rail (the same margin as
    the rails limit of `stamp_opamp`), so its DC must lie in V- + margin .. V+ - margin.
    """
    rails = env.rails
    assert rails is not None, "op-amp stages always have rails (the loader sees to it)"
    margin = opamp_part(stage, env).swing_margin
    return DcWindow(rails.bias, rails.negative + margin, rails.positive - margin, remedy)


def inverting_dc_output(env: Environment, dc_gain: float, dc_in: float | None) -> float | None:
    """DC output of an inverting op-amp stage whose + input sits at the bias point, V.

    Notes
    -----
    With the capacitors open the stage is an inverting amplifier about V_b: the summing
    node is held at V_b, so V_out = V_b + G_dc (V_b - V_in), G_dc = R_feedback/R_input of
    the resistive DC paths (Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 4.2.1,
    with the reference moved from 0 V to V_b). Split rails: V_b = 0 and a 0 V input give 0.
    """
    rails = env.rails
    if dc_in is None or rails is None:
        return None
    return rails.bias + dc_gain * (rails.bias - dc_in)


def rejection_factor(psrr_db: float, corner_hz: float | None, frequency: ArrayLike) -> Complex:
    """The share of a rail's ripple that reaches the input: 1/PSRR(f), a real positive
    magnitude on the frequency axis.

    Notes
    -----
    PSRR(f) = 10^(psrr/20) / |1 + j f/f_c|: the rejection at low frequency, falling at
    20 dB/decade above its corner f_c (the contract's "Extensions: Hum"; the definition of
    power-supply rejection as the supply change over the input-referred change it causes,
    Franco, Design with Operational Amplifiers, 4th ed., sec. 5.5, from memory). With no
    corner it is flat. A data-sheet magnitude, so no phase is given to it.
    """
    f = np.asarray(frequency, dtype=float)
    rise = np.ones_like(f) if corner_hz is None else np.abs(1.0 + 1j * f / corner_hz)
    return np.asarray(10.0 ** (-psrr_db / 20.0) * rise, dtype=complex)


def stamp_opamp_ripple(
    net: Netlist,
    stage: str,
    label: str,
    part: OpAmp,
    branch: Ref,
    gain: Complex,
    *,
    plus_at_bias: bool,
) -> None:
    """The supply paths of an op-amp: one input-referred source per rail pin, the rail's
    ripple times 1/PSRR(f) at the + input (`rejection_factor`), and, when its + input sits
    at the bias point, the bias point's ripple there as it is.

    Both enter the op-amp's equation as its e_n does: a voltage at the + input times the
    open-loop gain. A pin on ground, or a bias point no supply names, carries no ripple
    (the hum budget drops those sources). The rail pins take the rail's ripple as its
    supply reports it, both pins in phase (the contract: all from one rail in phase).
    """
    reject = rejection_factor(part.psrr, part.psrr_corner, net.frequency)
    for pin, rail in (("+", "positive"), ("-", "negative")):
        net.ripple_voltage_at(
            branch,
            gain * reject,
            rail=rail,
            label=f"{label}.psrr{pin}",
            stage=stage,
            path=f"V{pin} pin (PSRR)",
        )
    if plus_at_bias:
        net.ripple_voltage_at(
            branch, gain, rail="bias", label=f"{label}.bias", stage=stage, path="bias at + input"
        )


def stamp_opamp(
    net: Netlist,
    stage: Stage,
    env: Environment,
    plus: str,
    minus: str,
    out: str,
    built: Built,
) -> None:
    """Stamp the stage's op-amp with its noise and declare its three swing limits.

    Notes
    -----
    Limits on the output (the tightest sets the clip level):
    rails: the output swings to within ``swing_margin`` of either rail around the bias
    point (peak = min(V+ - Vb, Vb - V-) - margin); current: the peak output current
    (into the load and the feedback network) may not exceed ``output_current``; slew: a
    sine of peak Vp at f needs 2 pi f Vp <= SR, so Vp <= SR / (2 pi f) (full-power bandwidth,
    Franco, Design with Operational Amplifiers, 4th ed., sec. 6.4).
    Noise: e_n(f)^2 = e_n^2 (1 + f_c/f) at the non-inverting input, i_n at each input.

    Output current (the ``current`` limit, the drive figures, the rail pulses): by
    Kirchhoff's current law at the output node, what the op-amp delivers through R_o is
    the sum of the currents leaving that node through every other element, y_e (V_out -
    V_e), plus what the stage delivers to the stage after it (Chua, Desoer & Kuh, Linear
    and Nonlinear Circuits, 1987, ch. 1 (KCL) and ch. 10 (node and modified node
    analysis), from memory). Read that way (`LoadSide`) rather than as the branch current
    of the source: with the ports of the stage's two-port held at V1 and V2 the source's
    current is g1 V1 + g2 V2 with g2 ~ loop gain / R_o (1e12 S for a 200 dB op-amp at the
    1 mohm floor of R_o), so where V2 is the stage's own output the sum is the difference
    of two terms ~1e13 times the answer and is round-off; the node voltages are O(1)
    functions of V1 and V2 and the delivered current is the cascade's Y_L V2, so the
    load-side sum loses nothing. The two agree exactly in exact arithmetic.
    """
    part = opamp_part(stage, env)
    label = f"{stage.name}.opamp"
    branch = net.opamp(
        plus,
        minus,
        out,
        open_loop_gain=part.open_loop_gain,
        gbw=part.gbw,
        output_resistance=part.output_resistance,
        label=label,
        second_pole=part.second_pole,
    )
    gain = net.open_loop_gain(part.open_loop_gain, part.gbw, part.second_pole)
    corner = 0.0 if part.noise_corner is None else part.noise_corner
    en2 = flicker_psd(part.noise_voltage, corner, net.frequency)
    net.voltage_noise_at(branch, gain, en2, f"{label}.e_n", stage.name, "opamp", "e_n")
    for pin, node in (("+", plus), ("-", minus)):
        if node != GROUND:
            net.current_noise(
                node, GROUND, part.noise_current**2, f"{label}.i_n{pin}", stage.name, "opamp", "i_n"
            )
    stamp_opamp_ripple(net, stage.name, label, part, branch, gain, plus_at_bias=plus == GROUND)
    built.opamps.append((label, part))
    built.probes["out"] = node_ref(out)
    # The source's branch current is minus the output current: kept as a probe for the
    # worst-case search's segments, which read probes as two-port pairs; every figure
    # reads the current on the load side (`LoadSide`: see the Notes).
    built.probes[f"{label}.current"] = branch_ref(label)
    built.load_side[f"{label}.current"] = LoadSide(out, f"{label}.internal", f"{label}.inner")
    built.pulse_probes.append(f"{label}.current")
    built.output_probe = "out"
    rails = env.rails
    assert rails is not None, "op-amp stages always have rails (the loader sees to it)"
    # rails may vary over a leading trial axis (chainbudget/spread): element-wise
    room = np.maximum(np.minimum(rails.up, rails.down) - part.swing_margin, 0.0)
    built.limits += [
        Limit(
            "rails",
            "out",
            float(room) if np.ndim(room) == 0 else room,
            f"output swing within {part.swing_margin:g} V of the rails",
        ),
        Limit(
            "current",
            f"{label}.current",
            part.output_current,
            f"op-amp output current {part.output_current * 1e3:g} mA peak",
            bounds_current=True,
        ),
        Limit(
            "slew",
            "out",
            part.slew_rate / (2.0 * np.pi * net.frequency),
            f"slew rate {part.slew_rate / 1e6:g} V/us",
        ),
    ]
