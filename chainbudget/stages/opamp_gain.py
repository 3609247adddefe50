"""``opamp_gain``: a non-inverting or inverting op-amp gain stage."""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import replace

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget import fields as f
from chainbudget.eseries import values_between
from chainbudget.finding import Finding
from chainbudget.kindfigures import KindFigures
from chainbudget.network import GROUND, Complex, Netlist, node_ref
from chainbudget.notation import eng
from chainbudget.stages.base import (
    OPAMP_FIELD,
    RAIL_FIELDS,
    Built,
    DcWindow,
    Environment,
    Isolation,
    NodeFacts,
    OwnParts,
    Stage,
    StageContext,
    StageKind,
    inverting_dc_output,
    opamp_dc_window,
    opamp_part,
    stamp_opamp,
)
from chainbudget.stages.opamp_loop import GlobalLoop, OwnLoop, loop_figures, loop_rules


class OpAmpGain(StageKind):
    """Op-amp gain stage.

    Notes
    -----
    Non-inverting: ``in`` (through ``input_cap``, with ``bias_resistor`` from the + input to
    the bias point) to the + input, ``ground_leg`` (in series with ``ground_cap`` if given)
    from the inverting input to AC ground, ``feedback`` (parallel ``feedback_cap``) from the
    output to the inverting input; ideal gain 1 + Z_f/Z_g. Inverting: ``input`` from ``in``
    (through ``input_cap``) to the inverting input, ``feedback`` from the output to it, the +
    input at the bias point; ideal gain -Z_f/Z_i (Horowitz & Hill, The Art of Electronics,
    3rd ed., sec. 4.2.1).

    With ``feedback_from`` the feedback network (``feedback`` and ``feedback_cap``) runs from
    that later stage's output instead of the op-amp's own; the op-amp's output feeds only
    the next stage, and the stages between sit inside the loop (`chainbudget.loops`).
    """

    kind = "opamp_gain"
    network_uses_rails = False
    summary = "op-amp gain stage, non-inverting or inverting"
    uses_opamp = True
    fields = (
        f.Field("topology", f.choice("non-inverting", "inverting"), "circuit form"),
        f.Field("feedback", f.RESISTANCE, "resistor from output to the inverting input"),
        f.Field("ground_leg", f.RESISTANCE, "non-inverting: inverting input to AC ground", None),
        f.Field("input", f.RESISTANCE, "inverting: input resistor to the inverting input", None),
        f.Field("feedback_cap", f.CAPACITANCE, "capacitor across the feedback resistor", None),
        f.Field(
            "ground_cap",
            f.CAPACITANCE,
            "non-inverting: capacitor in series with ground_leg (single-supply DC gain of one)",
            None,
        ),
        f.Field("input_cap", f.CAPACITANCE, "series input coupling capacitor", None),
        f.Field("bias_resistor", f.RESISTANCE, "non-inverting: + input to the bias point", None),
        f.Field(
            "isolating_resistor",
            f.RESISTANCE,
            "resistor from the op-amp's output to the stage's (the feedback senses the pin)",
            None,
        ),
        f.Field(
            "feedback_from",
            f.NAME,
            "a later stage whose output the feedback senses (the stages between sit in the loop)",
            None,
        ),
        OPAMP_FIELD,
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
        built = Built()
        name, t = stage.name, env.temperature_k
        own = OwnParts(net, name, t)
        cap_in, feedback_cap = stage.optional("input_cap"), stage.optional("feedback_cap")
        summing = f"{name}.sum"
        if stage.values["topology"] == "non-inverting":
            plus = node_in
            if cap_in is not None:
                plus = f"{name}.plus"
                net.capacitor(node_in, plus, cap_in)
            bias_resistor = stage.optional("bias_resistor")
            if bias_resistor is not None:
                own.to_bias("bias_resistor", plus, bias_resistor)
            leg_top, ground_cap = GROUND, stage.optional("ground_cap")
            if ground_cap is not None:
                leg_top = f"{name}.leg"
                net.capacitor(leg_top, GROUND, ground_cap)
            own.resistor("ground_leg", summing, leg_top, stage.number("ground_leg"))
        else:
            plus, source = GROUND, node_in
            if cap_in is not None:
                source = f"{name}.in_cap"
                net.capacitor(node_in, source, cap_in)
            own.resistor("input", source, summing, stage.number("input"))
        pin = self.sense_node(stage, node_out)
        sensed = pin if env.feedback_node is None else env.feedback_node
        own.resistor("feedback", sensed, summing, stage.number("feedback"))
        if feedback_cap is not None:
            net.capacitor(sensed, summing, feedback_cap)
        stamp_opamp(net, stage, env, plus, summing, pin, built)
        isolating = stage.optional("isolating_resistor")
        if isolating is not None:
            own.resistor("isolating_resistor", pin, node_out, isolating)
            built.probes["out"] = node_ref(node_out)
            built.probes["pin"] = node_ref(pin)
            for i, limit in enumerate(built.limits):
                if limit.probe == "out":
                    built.limits[i] = replace(limit, probe="pin")
        return built

    def sense_node(self, stage: Stage, node_out: str) -> str:
        """The op-amp's own output pin: behind an isolating resistor when it has one."""
        if stage.values.get("isolating_resistor") is None:
            return node_out
        return f"{stage.name}.pin"

    def isolation_options(self, stage: Stage, load_ohm: float) -> tuple[Isolation, ...]:
        """An isolating resistor from the op-amp's pin to the load (E12, 10 ohm to 1 kohm),
        when it has none."""
        if stage.values.get("isolating_resistor") is not None:
            return ()
        return tuple(
            Isolation({"isolating_resistor": eng(float(r), "ohm")}, _in_series(float(r)))
            for r in values_between("E12", 10.0, 1000.0)
        )

    def figures(self, context: StageContext) -> tuple[KindFigures, ...]:
        """Its loop: its own feedback's, or the loop it heads round later stages."""
        return (loop_figures(context),)

    def rules(self, figures: tuple[KindFigures, ...], facts: NodeFacts) -> list[Finding]:
        return [
            fi for own in figures if isinstance(own, OwnLoop | GlobalLoop) for fi in loop_rules(own)
        ]

    def feedback_from(self, stage: Stage) -> str | None:
        value = stage.values.get("feedback_from")
        return None if value is None else str(value)

    def missing(self, values: Mapping[str, object]) -> list[str]:
        key = "ground_leg" if values.get("topology") == "non-inverting" else "input"
        return [key] if values.get(key) is None else []

    def floating_inputs(self, stage: Stage, input_defined: bool) -> list[str]:
        if stage.values["topology"] != "non-inverting" or stage.values["bias_resistor"]:
            return []
        if stage.values["input_cap"] is not None or not input_defined:
            return ["+ input"]
        return []

    def dc_output(self, stage: Stage, env: Environment, dc_in: float | None) -> float | None:
        """DC at the output, V, with the input node at ``dc_in``.

        Notes
        -----
        Capacitors open. Non-inverting: the + input sits at the bias point behind
        ``input_cap`` (through ``bias_resistor``; None without one: it floats), else at
        ``dc_in`` (the stage before taken as a stiff DC source). The ground leg returns to
        0 V, so V_out = V+ (1 + R_f/R_g) (the DC gain of the non-inverting stage, Horowitz
        & Hill, The Art of Electronics, 3rd ed., sec. 4.2.1), or V_out = V+ with
        ``ground_cap`` in the leg (DC gain of one). Inverting: V_out = V_b behind
        ``input_cap``, else V_b + (R_f/R_i)(V_b - V_in) (`inverting_dc_output`).
        """
        rails = env.rails
        if rails is None:
            return None
        coupled = stage.values.get("input_cap") is not None
        if stage.values["topology"] == "non-inverting":
            if coupled:
                plus = rails.bias if stage.values.get("bias_resistor") is not None else None
            else:
                plus = dc_in
            if plus is None:
                return None
            if stage.values.get("ground_cap") is not None:
                return plus
            return plus * (1.0 + stage.number("feedback") / stage.number("ground_leg"))
        if coupled:
            return rails.bias
        return inverting_dc_output(env, stage.number("feedback") / stage.number("input"), dc_in)

    def dc_error(self, stage: Stage, env: Environment, error_in: float | None) -> float | None:
        """Worst-case DC error at the output (at the sensed stage's, inside a loop), V.

        Notes
        -----
        The input's error through the stage's DC gain, plus the op-amp's own: offset
        voltage times the DC noise gain, and each input's bias current through the DC
        resistance it meets, signs taken at their worst:
        |V_os| G_n + I_b (R_f + G_n R_+) (Franco, Design with Operational Amplifiers, 4th
        ed., sec. 5.1-5.2, input offset error, from memory). Non-inverting: G_n = 1 + R_f/R_g,
        or 1 with ``ground_cap`` (a capacitor in the ground leg gives unity DC gain); R_+ the
        ``bias_resistor`` behind ``input_cap`` (0 for a DC-coupled input, the stage before
        taken as stiff). Inverting: G_n = 1 + R_f/R_i, or 1 behind ``input_cap``; R_+ = 0.
        """
        carried = super().dc_error(stage, env, error_in)
        if carried is None:
            return None
        part = opamp_part(stage, env)
        feedback = stage.number("feedback")
        coupled = stage.values.get("input_cap") is not None
        if stage.values["topology"] == "non-inverting":
            gain = 1.0
            if stage.values.get("ground_cap") is None:
                gain += feedback / stage.number("ground_leg")
            plus = stage.optional("bias_resistor") if coupled else 0.0
            if plus is None:
                return None  # a floating input: its own finding says so
        else:
            gain = 1.0 if coupled else 1.0 + feedback / stage.number("input")
            plus = 0.0
        own = part.offset_voltage * gain + part.bias_current * (feedback + gain * plus)
        return carried + own

    def dc_rest(self, stage: Stage, env: Environment) -> float | None:
        """A DC-coupled input rests at the bias point through ``bias_resistor`` (non-inverting)
        or through ``input`` to the summing node, held at the bias point (inverting)."""
        rails = env.rails
        if rails is None or stage.values.get("input_cap") is not None:
            return None
        if (
            stage.values["topology"] == "non-inverting"
            and stage.values.get("bias_resistor") is None
        ):
            return None
        return rails.bias

    def dc_window(self, stage: Stage, env: Environment) -> DcWindow:
        v = stage.values
        fixes = []
        if v.get("input_cap") is None:
            fixes.append(
                "add input_cap with bias_resistor to the bias point (the + input then sits there)"
                if v["topology"] == "non-inverting"
                else "add input_cap (the DC gain from the input is then zero)"
            )
        if v["topology"] == "non-inverting" and v.get("ground_cap") is None:
            fixes.append("add ground_cap in series with ground_leg (a DC gain of one)")
        remedy = " and ".join(fixes) or "bring the DC at its input to the bias point"
        return opamp_dc_window(stage, env, remedy)


def _in_series(resistance: float) -> Callable[[NDArray[np.float64], Complex], Complex]:
    """The impedance a loop sees through a series resistor to the load."""

    def impedance(frequency: NDArray[np.float64], z_load: Complex) -> Complex:
        return np.asarray(resistance + z_load, dtype=complex)

    return impedance
