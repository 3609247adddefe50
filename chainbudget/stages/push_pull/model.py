"""The ``push_pull`` kind: fields, network, limits and DC of a complementary class-AB pair."""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Mapping
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget import fields as f
from chainbudget import units
from chainbudget.eseries import nearest, values_between
from chainbudget.finding import Finding
from chainbudget.kindfigures import KindFigures
from chainbudget.loudspeaker import INDUCTANCE
from chainbudget.network import GROUND, Complex, Netlist, Ref, node_ref
from chainbudget.notation import eng
from chainbudget.parts import Transistor
from chainbudget.stages.base import (
    RAIL_FIELDS,
    Built,
    Environment,
    Isolation,
    Limit,
    NodeFacts,
    OwnParts,
    Stage,
    StageContext,
    StageKind,
)
from chainbudget.stages.hybrid_pi import as_number, stamp_transistor, transistor_problems
from chainbudget.stages.push_pull.crossover import Crossover, crossover_figures
from chainbudget.stages.push_pull.drive import (
    HandOver,
    OutputBias,
    TurnOn,
    hand_over,
    output_bias,
    turn_on,
)
from chainbudget.stages.push_pull.halves import Half, halves, idle_models, push_pull_model
from chainbudget.stages.push_pull.heat import Dissipation, push_pull_dissipation
from chainbudget.stages.push_pull.rules import (
    bias_rules,
    crossover_rules,
    drive_rules,
    heat_rules,
    thermal_loop_rules,
    turn_on_rules,
)
from chainbudget.stages.push_pull.thermal_loop import ThermalBias, thermal_bias
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


def _read_tracking(value: object) -> float:
    number = units.parse_fraction(value)
    if not 0.0 <= number <= 1.0:
        raise UnitParseError(value, "a fraction from 0 (no tracking) to 1 (full tracking)")
    return number


TRACKING = f.FieldKind("0..1", _read_tracking, float)


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
    power_stage = True
    fields = (
        f.Field("upper", f.NAME, "upper (NPN) output transistor", "power_npn", tolerance="beta"),
        f.Field("lower", f.NAME, "lower (PNP) output transistor", "power_pnp", tolerance="beta"),
        f.Field(
            "driver_upper",
            f.NAME,
            "Darlington driver of the upper device (NPN)",
            None,
            tolerance="beta",
        ),
        f.Field(
            "driver_lower",
            f.NAME,
            "Darlington driver of the lower device (PNP)",
            None,
            tolerance="beta",
        ),
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
        f.Field(
            "spreader_tracking",
            TRACKING,
            "fraction of the output devices' V_BE temperature coefficient the bias spreader "
            "follows",
            0.5,
        ),
        f.Field("zobel_resistor", f.RESISTANCE, "Zobel network at the output: its resistor", None),
        f.Field("zobel_cap", f.CAPACITANCE, "Zobel network at the output: its capacitor", None),
        f.Field("output_inductor", INDUCTANCE, "isolating inductor in series with the load", None),
        f.Field("inductor_damping", f.RESISTANCE, "resistor across the output inductor", None),
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
        name = stage.name
        own = OwnParts(net, name, env.temperature_k)
        junction = self.sense_node(stage, node_out)
        if env.idle:
            emitter, current = _stamp_idle_pair(net, stage, env, node_in, junction, own)
        else:
            emitter, current = _stamp_conducting_half(net, stage, env, node_in, junction, own)
        _stamp_output_network(net, stage, junction, node_out, own)
        upper, lower = halves(stage, env)
        swing = np.minimum(upper.swing_v, lower.swing_v)  # element-wise over any trial axis
        if np.ndim(swing) == 0:
            tight = upper if upper.swing_v <= lower.swing_v else lower
            why = (
                f"{tight.side} half: {tight.rail_v:.3g} V rail less "
                f"{tight.drop_v:.3g} V of V_CE(sat) + V_BE, less I_pk R_E"
            )
        else:
            why = "the tighter half's rail less V_CE(sat) + V_BE, less I_pk R_E"
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
                    as_number(swing),
                    why,
                )
            ],
            output_probe="out",
            pulse_probes=[OUTPUT_CURRENT],
        )

    def sense_node(self, stage: Stage, node_out: str) -> str:
        """The pair's output, where the emitter resistors join: before the output capacitor,
        the Zobel network and the output inductor, so that a loop round the stage holds the
        pair's DC and its isolation stays outside the loop."""
        v = stage.values
        networked = v.get("output_cap") is not None or v.get("output_inductor") is not None
        return f"{stage.name}.pair" if networked else node_out

    def isolation_options(self, stage: Stage, load_ohm: float) -> tuple[Isolation, ...]:
        """An output inductor (E6, 1 to 22 uH) with a damping resistor across it and a Zobel
        network at the pair, when the stage has neither: the resistors the E12 value nearest
        the nominal load, the Zobel capacitor the E6 value nearest L/R^2 (the Zobel that
        makes the network a constant resistance, Zobel, Bell Syst. Tech. J. 2 (1923) 1,
        from memory)."""
        v = stage.values
        if v.get("output_inductor") is not None or v.get("zobel_resistor") is not None:
            return ()
        r = nearest(load_ohm, "E12")
        found = []
        for inductance in values_between("E6", 1e-6, 22e-6):
            c = nearest(float(inductance) / (r * r), "E6")
            found.append(
                Isolation(
                    {
                        "output_inductor": eng(float(inductance), "H"),
                        "inductor_damping": eng(r, "ohm"),
                        "zobel_resistor": eng(r, "ohm"),
                        "zobel_cap": eng(c, "F"),
                    },
                    _isolated(float(inductance), r, r, c),
                )
            )
        return tuple(found)

    def output_capacitor(self, stage: Stage) -> float | None:
        return stage.optional("output_cap")

    def figures(self, context: StageContext) -> tuple[KindFigures, ...]:
        """The drive it needs, where its output rests, and (driving the load) its heat."""
        found: list[KindFigures] = []
        drive = hand_over(context)
        if drive is not None:
            found.append(drive)
        found.append(output_bias(context, self.output_capacitor(context.stage)))
        found.append(crossover_figures(context))
        if context.is_last:
            heat = push_pull_dissipation(context)
            found += [heat, thermal_bias(context, heat)]
            switch_on = turn_on(context, self.output_capacitor(context.stage))
            if switch_on is not None:
                found.append(switch_on)
        return tuple(found)

    def rules(self, figures: tuple[KindFigures, ...], facts: NodeFacts) -> list[Finding]:
        found: list[Finding] = []
        for own in figures:
            if isinstance(own, HandOver):
                found += drive_rules(own)
            elif isinstance(own, OutputBias):
                found += bias_rules(facts.stage, own)
            elif isinstance(own, Dissipation):
                found += heat_rules(own)
            elif isinstance(own, Crossover):
                found += crossover_rules(own)
            elif isinstance(own, ThermalBias):
                found += thermal_loop_rules(own)
            elif isinstance(own, TurnOn):
                found += turn_on_rules(own)
        return found

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

    def dc_error(self, stage: Stage, env: Environment, error_in: float | None) -> float | None:
        """The drive's error, plus half the difference of the two halves' V_BE chains: with
        the spreader centred on the drive the pair settles where the halves balance, halfway
        between (by symmetry; V_BE as the parts give it). Behind ``output_cap``: 0."""
        carried = super().dc_error(stage, env, error_in)
        if carried is None or stage.values.get("output_cap") is not None:
            return carried
        upper, lower = halves(stage, env)

        def chain_v(half: Half) -> float:
            return half.output.vbe + (0.0 if half.driver is None else half.driver.vbe)

        return carried + abs(chain_v(upper) - chain_v(lower)) / 2.0

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


def _stamp_conducting_half(
    net: Netlist, stage: Stage, env: Environment, node_in: str, junction: str, own: OwnParts
) -> tuple[str, Ref]:
    """The modelled half in conduction from the drive to the pair's output; returns its
    emitter node (the swing limit's probe) and its emitter-current branch."""
    name, t = stage.name, env.temperature_k
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
    # any(): R_E may be an array over a leading trial axis (chainbudget/spread), all drawn
    # around a nominal above zero
    has_emitter_resistor = bool(np.any(np.asarray(r_emitter) > 0.0))
    emitter = junction if not has_emitter_resistor else f"{name}.emitter"
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
    if has_emitter_resistor:
        own.resistor("emitter_resistor", emitter, junction, r_emitter)
    return emitter, current


def _stamp_idle_pair(
    net: Netlist, stage: Stage, env: Environment, node_in: str, junction: str, own: OwnParts
) -> tuple[str, Ref]:
    """Both halves at the quiescent current, in parallel from the drive to the pair's output
    (the bias spreader a short to the signal); returns the upper emitter and its current."""
    name, t = stage.name, env.temperature_k
    r_emitter = stage.number("emitter_resistors")
    # any(): R_E may be an array over a leading trial axis (chainbudget/spread), as in
    # `_stamp_conducting_half`
    has_emitter_resistor = bool(np.any(np.asarray(r_emitter) > 0.0))
    found: list[tuple[str, Ref]] = []
    for half, model in zip(halves(stage, env), idle_models(stage, env), strict=True):
        label = f"{name}.{half.side}"
        base = node_in
        if model.driver is not None:
            base = f"{label}.driver_emitter"
            stamp_transistor(
                net,
                node_in,
                base,
                model.driver,
                label=f"{label}.driver",
                stage=name,
                temperature_k=t,
            )
        emitter = junction if not has_emitter_resistor else f"{label}.emitter"
        current = stamp_transistor(
            net, base, emitter, model.output, label=f"{label}.output", stage=name, temperature_k=t
        )
        if has_emitter_resistor:
            own.resistor(f"{half.side}.emitter_resistor", emitter, junction, r_emitter)
        found.append((emitter, current))
    return found[0]


def _stamp_output_network(
    net: Netlist, stage: Stage, junction: str, node_out: str, own: OwnParts
) -> None:
    """From the pair's output to the stage's: the Zobel network to ground, then the output
    capacitor, then the output inductor with its damping resistor across it."""
    name = stage.name
    zobel_r, zobel_c = stage.optional("zobel_resistor"), stage.optional("zobel_cap")
    if zobel_r is not None and zobel_c is not None:
        middle = f"{name}.zobel"
        own.resistor("zobel_resistor", junction, middle, zobel_r)
        net.capacitor(middle, GROUND, zobel_c)
    node = junction
    output_cap = stage.optional("output_cap")
    inductor = stage.optional("output_inductor")
    if output_cap is not None:
        after = node_out if inductor is None else f"{name}.after_cap"
        net.capacitor(node, after, output_cap)
        node = after
    if inductor is not None:
        net.inductor(node, node_out, inductor)
        damping = stage.optional("inductor_damping")
        if damping is not None:
            own.resistor("inductor_damping", node, node_out, damping)


def _isolated(
    inductance: float, damping: float, zobel_r: float, zobel_c: float
) -> Callable[[NDArray[np.float64], Complex], Complex]:
    """The impedance at the pair through an inductor (damped) to the load, with a Zobel
    network across the pair."""

    def impedance(frequency: NDArray[np.float64], z_load: Complex) -> Complex:
        s = 2j * np.pi * frequency
        coil = s * inductance * damping / (s * inductance + damping)
        zobel = zobel_r + 1.0 / (s * zobel_c)
        series = coil + z_load
        return np.asarray(series * zobel / (series + zobel), dtype=complex)

    return impedance
