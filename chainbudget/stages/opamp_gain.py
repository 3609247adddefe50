"""``opamp_gain``: a non-inverting or inverting op-amp gain stage."""

from __future__ import annotations

from collections.abc import Mapping

from numpy.typing import ArrayLike

from chainbudget import fields as f
from chainbudget.network import GROUND, Netlist
from chainbudget.stages.base import (
    OPAMP_FIELD,
    RAIL_FIELDS,
    Built,
    Environment,
    Stage,
    StageKind,
    stamp_opamp,
)


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
    """

    kind = "opamp_gain"
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
        cap_in, feedback_cap = stage.optional("input_cap"), stage.optional("feedback_cap")
        summing = f"{name}.sum"
        if stage.values["topology"] == "non-inverting":
            plus = node_in
            if cap_in is not None:
                plus = f"{name}.plus"
                net.capacitor(node_in, plus, cap_in)
            bias_resistor = stage.optional("bias_resistor")
            if bias_resistor is not None:
                net.resistor(
                    plus,
                    GROUND,
                    bias_resistor,
                    label=f"{name}.bias_resistor",
                    stage=name,
                    temperature_k=t,
                )
            leg_top, ground_cap = GROUND, stage.optional("ground_cap")
            if ground_cap is not None:
                leg_top = f"{name}.leg"
                net.capacitor(leg_top, GROUND, ground_cap)
            net.resistor(
                summing,
                leg_top,
                stage.number("ground_leg"),
                label=f"{name}.ground_leg",
                stage=name,
                temperature_k=t,
            )
        else:
            plus, source = GROUND, node_in
            if cap_in is not None:
                source = f"{name}.in_cap"
                net.capacitor(node_in, source, cap_in)
            net.resistor(
                source,
                summing,
                stage.number("input"),
                label=f"{name}.input",
                stage=name,
                temperature_k=t,
            )
        net.resistor(
            node_out,
            summing,
            stage.number("feedback"),
            label=f"{name}.feedback",
            stage=name,
            temperature_k=t,
        )
        if feedback_cap is not None:
            net.capacitor(node_out, summing, feedback_cap)
        stamp_opamp(net, stage, env, plus, summing, node_out, built)
        return built

    def missing(self, values: Mapping[str, object]) -> list[str]:
        key = "ground_leg" if values.get("topology") == "non-inverting" else "input"
        return [key] if values.get(key) is None else []

    def floating_inputs(self, stage: Stage, input_defined: bool) -> list[str]:
        if stage.values["topology"] != "non-inverting" or stage.values["bias_resistor"]:
            return []
        if stage.values["input_cap"] is not None or not input_defined:
            return ["+ input"]
        return []
