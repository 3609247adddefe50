"""``push_pull``: a complementary class-AB output stage driving the load."""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from numpy.typing import ArrayLike

from chainbudget import fields as f
from chainbudget import units
from chainbudget.network import Netlist, node_ref
from chainbudget.parts import Transistor
from chainbudget.stages.base import (
    RAIL_FIELDS,
    Built,
    Environment,
    Limit,
    OwnParts,
    Stage,
    StageKind,
)
from chainbudget.stages.hybrid_pi import (
    SmallSignal,
    small_signal,
    stamp_transistor,
    transistor_problems,
)
from chainbudget.units import UnitParseError

#: Probe of the conducting half's output current (half-sine pulses from each rail).
OUTPUT_CURRENT = "output_current"
#: Name of the output swing limit.
SWING = "swing"

# Silicon power transistors are commonly rated for 150 degC junctions (common practice, no
# source); a designer with a part in hand gives its own figure.
DEFAULT_MAX_JUNCTION_DEGC = 150.0


def _read_angle(value: object) -> float:
    expected = 'an angle from -90 to 90 deg with its unit, such as "30 deg"'
    if not isinstance(value, str) or not re.search(r"[A-Za-z]", value):
        raise UnitParseError(value, expected)
    angle = units.parse_quantity(value, units.DIMENSIONLESS)
    if not abs(angle) <= math.pi / 2.0:
        raise UnitParseError(value, expected)
    return angle


ANGLE = f.FieldKind("deg", _read_angle, lambda radians: f"{math.degrees(radians)!r} deg")


@dataclass(frozen=True)
class Half:
    """One half of the pair: its devices and its room to swing, V.

    Attributes
    ----------
    side : str
        ``"upper"`` (NPN, to the positive rail) or ``"lower"`` (PNP, to the negative).
    output, driver : Transistor, Transistor or None
        The output device and its Darlington driver, if any.
    rail_v : float
        The rail's distance from the output's bias point, V (V_cc of this half).
    drop_v : float
        What the drive loses to the rail at full swing, V: the larger of V_CE(sat) of the
        driven transistor plus every V_BE down to the emitter resistor, and the output
        device's own V_CE(sat).
    """

    side: str
    output: Transistor
    driver: Transistor | None
    rail_v: float
    drop_v: float

    @property
    def swing_v(self) -> float:
        """Peak the emitters may reach from the bias point, V (never below 0)."""
        return max(self.rail_v - self.drop_v, 0.0)

    @property
    def beta_total(self) -> float:
        """Current gain from the drive to the output, (beta + 1)(beta_d + 1) - 1."""
        gain = self.output.beta + 1.0
        if self.driver is not None:
            gain *= self.driver.beta + 1.0
        return gain - 1.0


def halves(stage: Stage, env: Environment) -> tuple[Half, Half]:
    """The upper and lower halves of a push-pull stage at its rails.

    Notes
    -----
    Peak swing of each half V_rail - V_CE(sat) - V_BE(drivers), less I_pk R_E at the load
    (Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 2.4.1, from memory); the limit
    sits on the emitter node, before R_E, so the I_pk R_E share comes out of the network
    with the real load. The base drive is taken to reach within one V_CE(sat) of the rail
    (that of the driven transistor: the driver in a Darlington). V_rail is measured from the
    output's bias point: +/-V on split rails, V_s/2 on a single supply with an output
    capacitor (Boylestad & Nashelsky, class B section, from memory).
    """
    rails = env.rails
    assert rails is not None, "a push-pull stage always has rails (the loader sees to it)"
    found = []
    for side, room in (("upper", rails.up), ("lower", rails.down)):
        output = env.transistors[str(stage.values[side])]
        driver_name = stage.values.get(f"driver_{side}")
        driver = None if driver_name is None else env.transistors[str(driver_name)]
        driven = output if driver is None else driver
        vbe = output.vbe + (0.0 if driver is None else driver.vbe)
        drop = max(driven.vce_sat + vbe, output.vce_sat)
        found.append(Half(side, output, driver, room, drop))
    return found[0], found[1]


def modelled_half(stage: Stage, env: Environment) -> Half:
    """The half whose small-signal model stands for the stage: the one of lower current gain
    (the harder one to drive), the upper one on a tie."""
    upper, lower = halves(stage, env)
    return lower if lower.beta_total < upper.beta_total else upper


@dataclass(frozen=True)
class PushPullModel:
    """Hybrid-pi parameters of the modelled half: in conduction (output device at
    ``conduction_a``, driver at its base current) and at idle (I_q, for the shot noise)."""

    half: Half
    conduction_a: float
    output: SmallSignal
    driver: SmallSignal | None
    idle_output: SmallSignal
    idle_driver: SmallSignal | None


def conduction_current(stage: Stage, env: Environment) -> float:
    """Emitter current of the conducting half at which its small-signal model is taken, A.

    Notes
    -----
    The peak current at the stage's own clip level into the chain's load,
    I_pk = V_swing/(R_E + R_L) (from the swing equation of `halves`), and never below the
    quiescent current; I_q alone when the load is not known.
    """
    i_q = stage.number("quiescent")
    if env.load_impedance is None:
        return i_q
    swing = min(half.swing_v for half in halves(stage, env))
    return max(i_q, swing / (stage.number("emitter_resistors") + env.load_impedance))


def push_pull_model(stage: Stage, env: Environment) -> PushPullModel:
    """Hybrid-pi parameters of the modelled half, in conduction and at idle."""
    half = modelled_half(stage, env)
    t = env.temperature_k
    conduction = conduction_current(stage, env)
    output = small_signal(half.output, conduction, t)
    idle_output = small_signal(half.output, stage.number("quiescent"), t)
    driver = idle_driver = None
    if half.driver is not None:
        driver = small_signal(half.driver, output.i_b, t)
        idle_driver = small_signal(half.driver, idle_output.i_b, t)
    return PushPullModel(half, conduction, output, driver, idle_output, idle_driver)


class PushPull(StageKind):
    """Complementary class-AB output stage, optionally with Darlington drivers.

    Notes
    -----
    Small signal: one half in conduction, the hybrid-pi output device at its conduction
    current (`conduction_current`) behind its emitter resistor R_E (and the output
    capacitor, if any) into ``out``; a Darlington driver is a second hybrid-pi transistor
    whose emitter drives the output device's base, biased at its base current. The bias
    spreader between the drive and the two bases is a DC voltage, a short to the signal.
    The network then gives
    (Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 2.4.1-2.4.2, from memory)
    Z_in = r_bb' + (beta + 1)(r_e + R_E + Z_L) per half in conduction, times a further
    (beta_d + 1) for a Darlington, which is the textbook (beta + 1)(R_E + Z_L) as r_e and
    r_bb' go to zero; Z_out = R_E + r_e + (Z_s + r_bb')/(beta + 1); the peak base current
    the stage before must deliver is the stage's input current, I_pk/beta at the load.

    r_e = V_T/I is taken at the peak current of the stage's own clip level into the load
    (a few hundredths of an ohm), where the swing and drive figures are decided: the gain
    and output impedance of a half in full conduction. Near idle (the crossover region,
    signal currents under about 2 I_q) both halves conduct at I_q and the small-signal
    output impedance is (R_E + r_e(I_q))/2 instead; the shot noise, a figure of the idle
    stage, is taken at I_q. The half modelled is the one of lower current gain, which the
    stage before finds harder to drive.
    """

    kind = "push_pull"
    summary = "complementary class-AB output stage driving the load"
    fields = (
        f.Field("upper", f.NAME, "upper (NPN) output transistor", "power_npn"),
        f.Field("lower", f.NAME, "lower (PNP) output transistor", "power_pnp"),
        f.Field("driver_upper", f.NAME, "Darlington driver of the upper device (NPN)", None),
        f.Field("driver_lower", f.NAME, "Darlington driver of the lower device (PNP)", None),
        f.Field("emitter_resistors", f.RESISTANCE_OR_ZERO, "each output emitter resistor"),
        f.Field("quiescent", f.POSITIVE_CURRENT, "idle current through the pair"),
        f.Field(
            "output_cap", f.CAPACITANCE, "series capacitor to the load (single-supply builds)", None
        ),
        f.Field("theta_jc", f.THERMAL_RESISTANCE, "junction to case, each output device", None),
        f.Field(
            "theta_cs",
            f.THERMAL_RESISTANCE,
            "case to heatsink (insulating pad, grease), each device",
            0.0,
        ),
        f.Field("heatsink", f.THERMAL_RESISTANCE, "heatsink to ambient (theta_sa)", None),
        f.Field("heatsink_shared", f.FLAG, "both output devices on the one heatsink", False),
        f.Field(
            "theta_ja",
            f.THERMAL_RESISTANCE,
            "junction to ambient of a device in free air (no heatsink)",
            None,
        ),
        f.Field(
            "max_junction",
            f.TEMPERATURE,
            "highest junction temperature allowed",
            DEFAULT_MAX_JUNCTION_DEGC,
        ),
        f.Field(
            "load_phase",
            ANGLE,
            "phase angle of the load's impedance, for the dissipation estimate",
            0.0,
        ),
        *RAIL_FIELDS,
    )

    def build(
        self,
        net: Netlist,
        stage: Stage,
        env: Environment,
        node_in: str,
        node_out: str,
        positions: Mapping[str, ArrayLike],
    ) -> Built:
        name, t = stage.name, env.temperature_k
        own = OwnParts(net, name, t)
        model = push_pull_model(stage, env)
        base = node_in
        if model.driver is not None:
            base = f"{name}.driver_emitter"
            stamp_transistor(
                net,
                node_in,
                base,
                model.driver,
                label=f"{name}.driver",
                stage=name,
                temperature_k=t,
                noise_bias=model.idle_driver,
            )
        r_emitter = stage.number("emitter_resistors")
        output_cap = stage.optional("output_cap")
        after_resistor = node_out if output_cap is None else f"{name}.after_re"
        emitter = after_resistor if r_emitter <= 0.0 else f"{name}.emitter"
        current = stamp_transistor(
            net,
            base,
            emitter,
            model.output,
            label=f"{name}.output",
            stage=name,
            temperature_k=t,
            noise_bias=model.idle_output,
        )
        if r_emitter > 0.0:
            own.resistor("emitter_resistor", emitter, after_resistor, r_emitter)
        if output_cap is not None:
            net.capacitor(after_resistor, node_out, output_cap)
        upper, lower = halves(stage, env)
        tight = min((upper, lower), key=lambda half: half.swing_v)
        return Built(
            probes={
                "out": node_ref(node_out),
                "emitter": node_ref(emitter),
                OUTPUT_CURRENT: current,
            },
            limits=[
                Limit(
                    SWING,
                    "emitter",
                    tight.swing_v,
                    f"{tight.side} half: {tight.rail_v:.3g} V rail less "
                    f"{tight.drop_v:.3g} V of V_CE(sat) + V_BE, less I_pk R_E",
                )
            ],
            output_probe="out",
        )

    def output_defined(self, stage: Stage) -> bool:
        return stage.values.get("output_cap") is None

    def dc_output(self, stage: Stage, env: Environment, dc_in: float | None) -> float | None:
        """The output's DC, V: behind ``output_cap`` the bias point (the load returns the
        node beyond the capacitor to 0 V); DC-coupled, the emitters follow the drive, the
        bias spreader cancelling the V_BE drops, so the output sits at the input's DC
        (global feedback, which would correct it, is not modelled)."""
        if env.rails is None:
            return None
        if stage.values.get("output_cap") is not None or dc_in is None:
            return env.rails.bias
        return dc_in

    def supply_current(self, stage: Stage, env: Environment) -> float:
        """The quiescent current, which flows from rail to rail through both devices."""
        return stage.number("quiescent")

    def part_problems(
        self, values: Mapping[str, Any], transistors: Mapping[str, Transistor]
    ) -> list[tuple[str, str]]:
        """Unknown devices, and devices of the wrong polarity for their half."""
        wanted = (
            ("upper", "npn"),
            ("lower", "pnp"),
            ("driver_upper", "npn"),
            ("driver_lower", "pnp"),
        )
        return transistor_problems(values, wanted, transistors)
