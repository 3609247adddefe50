"""``follower``: an emitter-follower buffer, biased by an emitter resistor or a current sink."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from chainbudget import fields as f
from chainbudget.finding import Finding
from chainbudget.kindfigures import KindFigures
from chainbudget.network import GROUND, Netlist, node_ref
from chainbudget.parts import Transistor
from chainbudget.stages.base import (
    RAIL_FIELDS,
    Built,
    DcWindow,
    Environment,
    Limit,
    NodeFacts,
    OwnParts,
    Stage,
    StageContext,
    StageKind,
)
from chainbudget.stages.follower.bias import CUT_OFF, follower_bias, transistor_part
from chainbudget.stages.follower.figures import FollowerFigures, follower_figures, follower_rules
from chainbudget.stages.hybrid_pi import (
    as_number,
    stamp_transistor,
    transistor_problems,
)

# The follower's own `bias` names its bias circuit, so its rail fields leave out the bias
# point voltage; `base_bias` takes that role.
_RAILS = tuple(field for field in RAIL_FIELDS if field.key != "bias")


class Follower(StageKind):
    """Emitter follower: hybrid-pi transistor at its DC bias, collector at a rail.

    Notes
    -----
    Node by node: ``in`` (through ``input_cap`` with ``bias_resistor`` from its far side to
    the base bias point, AC ground) through ``base_resistor`` to the base; the emitter to
    the bias rail through ``emitter_resistor`` (or an ideal current sink, open to AC); the
    emitter is ``out``, or feeds ``out`` through ``output_cap``. With the hybrid-pi model
    the network gives (Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 2.2.3 and
    2.3.2, from memory) Z_in = r_bb' + (beta + 1)(r_e + R_E || Z_L) at the base,
    Z_out = r_e + (Z_s + r_bb')/(beta + 1) looking into the emitter (in parallel with R_E)
    and the gain (R_E || Z_L)/(r_e + R_E || Z_L), with the real source and load.

    Limits, on linear probes of the same network: towards the collector rail the emitter
    may swing V+ - V_CE(sat) - V_E; towards the bias rail the transistor cuts off when the
    AC part of its emitter current reaches the bias current I_E, which with a resistor
    gives I_E (R_E || Z_L) and with a current sink I_bias |Z_L| (Horowitz & Hill sec.
    2.2.3-2.2.5); a current sink also stops at its compliance, V_E - V- - V_comp.
    """

    kind = "follower"
    summary = "emitter-follower buffer, resistor or current-sink bias"
    drive_remedy = "raise its bias current (a smaller emitter resistor or a current sink)"
    output_name = "its emitter"
    fields = (
        f.Field(
            "transistor",
            f.NAME,
            "transistor part (a generic class or a [transistor.NAME])",
            "small_npn",
            tolerance="beta",
        ),
        f.Field(
            "bias",
            f.choice("resistor", "current"),
            'emitter bias: "resistor" (emitter_resistor) or "current" (a current sink)',
            "resistor",
        ),
        f.Field("emitter_resistor", f.RESISTANCE, "resistor bias: emitter to the bias rail", None),
        f.Field("current", f.POSITIVE_CURRENT, "current bias: the sink's current", None),
        f.Field(
            "compliance",
            f.VOLTAGE_OR_ZERO,
            "current bias: least voltage the sink needs across it",
            0.0,
        ),
        f.Field(
            "base_resistor",
            f.RESISTANCE_OR_ZERO,
            "series resistor in the base lead (base stopper)",
            0.0,
        ),
        f.Field("input_cap", f.CAPACITANCE, "series input coupling capacitor", None),
        f.Field(
            "bias_resistor",
            f.RESISTANCE,
            "with input_cap: from the base side of the cap to the base bias point",
            None,
        ),
        f.Field("output_cap", f.CAPACITANCE, "series output coupling capacitor", None),
        f.Field(
            "base_bias",
            f.VOLTAGE,
            "quiescent voltage the base is driven from (default: behind input_cap "
            "mid-rail single supply, 0 V split; DC-coupled, the DC of the stage before)",
            None,
        ),
        *_RAILS,
    )

    def bias_point(self, stage: Stage) -> float | None:
        return stage.optional("base_bias")

    def output_capacitor(self, stage: Stage) -> float | None:
        return stage.optional("output_cap")

    def figures(self, context: StageContext) -> tuple[KindFigures, ...]:
        return (follower_figures(context),)

    def rules(self, figures: tuple[KindFigures, ...], facts: NodeFacts) -> list[Finding]:
        (own,) = figures
        assert isinstance(own, FollowerFigures)
        return follower_rules(own, facts)

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
        bias = follower_bias(stage, env)
        base = node_in
        input_cap = stage.optional("input_cap")
        if input_cap is not None:
            base = f"{name}.coupled"
            net.capacitor(node_in, base, input_cap)
        bias_resistor = stage.optional("bias_resistor")
        if bias_resistor is not None:
            # to the base bias point, a voltage (`base_bias`) no supply names: ideal
            own.to_bias("bias_resistor", base, bias_resistor)
        base_resistor = stage.number("base_resistor")
        if np.any(np.asarray(base_resistor) > 0.0):
            own.resistor("base_resistor", base, f"{name}.base", base_resistor)
            base = f"{name}.base"
        output_cap = stage.optional("output_cap")
        emitter = node_out if output_cap is None else f"{name}.emitter"
        current = stamp_transistor(
            net, base, emitter, bias.small_signal, label=f"{name}.q", stage=name, temperature_k=t
        )
        if stage.values["bias"] == "resistor":
            r_e = stage.number("emitter_resistor")
            own.resistor("emitter_resistor", emitter, GROUND, r_e)
            # The emitter resistor returns to the bias rail (NPN: the negative one, whose
            # ripple a resistor sees inverted; PNP: the positive): its Norton current.
            npn = bias.polarity > 0
            net.ripple_current(
                emitter,
                1.0 / r_e,
                rail="negative" if npn else "positive",
                polarity=-1.0 if npn else 1.0,
                label=f"{name}.emitter_resistor.ripple",
                stage=name,
                path="emitter resistor",
            )
        if output_cap is not None:
            net.capacitor(emitter, node_out, output_cap)
        part = transistor_part(stage, env)
        rail = "positive" if bias.polarity > 0 else "negative"
        # element-wise: the bias may vary over a leading trial axis (chainbudget/spread)
        cut = as_number(np.where(bias.cut_off, 0.0, bias.i_e))
        typical_ma = float(np.median(bias.i_e)) * 1e3
        if stage.values["bias"] == "resistor":
            cut_what = (
                f"bias current {typical_ma:.3g} mA: cuts off when R_E and the load "
                "take it all, I_E (R_E || Z_L)"
            )
        else:
            cut_what = (
                f"sink current {typical_ma:.3g} mA: cuts off when the load takes "
                "it all, I_bias |Z_L|"
            )
        limits = [
            Limit(
                "saturation",
                "emitter",
                as_number(np.where(bias.cut_off, 0.0, bias.collector_room_v)),
                f"emitter within V_CE(sat) {part.vce_sat:g} V of the {rail} rail",
            ),
            Limit(CUT_OFF, "emitter_current", cut, cut_what, bounds_current=True),
        ]
        if stage.values["bias"] == "current":
            limits.append(
                Limit(
                    "compliance",
                    "emitter",
                    as_number(np.maximum(bias.bias_room_v, 0.0)),
                    "current sink's compliance",
                )
            )
        return Built(
            probes={
                "out": node_ref(node_out),
                "emitter": node_ref(emitter),
                "emitter_current": current,
            },
            limits=limits,
            output_probe="out",
        )

    def missing(self, values: Mapping[str, Any]) -> list[str]:
        wanted = ["emitter_resistor" if values.get("bias") == "resistor" else "current"]
        if values.get("input_cap") is not None:
            wanted.append("bias_resistor")
        return [key for key in wanted if values.get(key) is None]

    def output_defined(self, stage: Stage) -> bool:
        return stage.values.get("output_cap") is None

    def dc_output(self, stage: Stage, env: Environment, dc_in: float | None) -> float | None:
        """The emitter's DC, V: the base at ``base_bias`` behind ``input_cap``, else at the
        input's DC; V_E = V_B - V_BE - I_B R_dc for an NPN, mirrored for a PNP
        (`follower_bias` at that base drive). Behind ``output_cap`` the output node is the
        next stage's to define."""
        if env.rails is None:
            return None
        base = env.rails.bias if stage.values.get("input_cap") is not None else dc_in
        return None if base is None else follower_bias(stage, env, base).emitter_v

    def dc_rest(self, stage: Stage, env: Environment) -> float | None:
        """A DC-coupled base with a ``bias_resistor`` rests at ``base_bias``."""
        v = stage.values
        if env.rails is None or v.get("input_cap") is not None or v.get("bias_resistor") is None:
            return None
        return env.rails.bias

    def dc_window(self, stage: Stage, env: Environment) -> DcWindow | None:
        """Meant to sit where `follower_bias` puts it (the base at ``base_bias``); it works
        while the emitter stays V_CE(sat) from the collector rail and, on the bias side,
        above the rail (resistor bias: else no current flows) or the sink's compliance."""
        rails = env.rails
        if rails is None:
            return None
        part = transistor_part(stage, env)
        compliance = stage.number("compliance") if stage.values["bias"] == "current" else 0.0
        if part.polarity == "npn":
            low, high = rails.negative + compliance, rails.positive - part.vce_sat
        else:
            low, high = rails.negative + part.vce_sat, rails.positive - compliance
        return DcWindow(
            follower_bias(stage, env, rails.bias).emitter_v,
            low,
            high,
            "couple its base through input_cap with bias_resistor to base_bias, or set "
            "base_bias to the DC of the stage before",
        )

    def supply_current(self, stage: Stage, env: Environment) -> float:
        """The bias current, which flows from rail to rail through the transistor."""
        return follower_bias(stage, env).i_e

    def part_problems(
        self, values: Mapping[str, Any], transistors: Mapping[str, Transistor]
    ) -> list[tuple[str, str]]:
        """An unknown transistor."""
        return transistor_problems(values, (("transistor", None),), transistors)
