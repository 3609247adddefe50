"""The ``push_pull`` kind: fields, network, limits and DC of a complementary class-AB pair."""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from typing import Any

from numpy.typing import ArrayLike

from chainbudget import fields as f
from chainbudget import units
from chainbudget.finding import Finding
from chainbudget.kindfigures import KindFigures
from chainbudget.network import Netlist, node_ref
from chainbudget.parts import Transistor
from chainbudget.stages.base import (
    RAIL_FIELDS,
    Built,
    Environment,
    Limit,
    NodeFacts,
    OwnParts,
    Stage,
    StageContext,
    StageKind,
)
from chainbudget.stages.hybrid_pi import stamp_transistor, transistor_problems
from chainbudget.stages.push_pull.drive import HandOver, OutputBias, hand_over, output_bias
from chainbudget.stages.push_pull.halves import halves, push_pull_model
from chainbudget.stages.push_pull.heat import Dissipation, push_pull_dissipation
from chainbudget.stages.push_pull.rules import bias_rules, drive_rules, heat_rules
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
            pulse_probes=[OUTPUT_CURRENT],
        )

    def output_capacitor(self, stage: Stage) -> float | None:
        return stage.optional("output_cap")

    def figures(self, context: StageContext) -> tuple[KindFigures, ...]:
        """The drive it needs, where its output rests, and (driving the load) its heat."""
        found: list[KindFigures] = []
        drive = hand_over(context)
        if drive is not None:
            found.append(drive)
        found.append(output_bias(context, self.output_capacitor(context.stage)))
        if context.is_last:
            found.append(push_pull_dissipation(context))
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
