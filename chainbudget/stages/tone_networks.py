"""The bass and treble networks of the feedback tone stages, shared by three kinds.

Notes
-----
The negative-feedback tone control: P. J. Baxandall, "Negative-feedback tone control",
Wireless World, October 1952. The pot and capacitors sit in the input and feedback legs of
an inverting op-amp; the stage's gain is -Z_feedback/Z_input of the networks as seen from the
summing node, so a linear pot at mid rotation gives a flat -1 and rotations x and 1 - x give
reciprocal responses.
"""

from __future__ import annotations

from abc import abstractmethod
from collections.abc import Mapping
from typing import ClassVar

import numpy as np
from numpy.typing import ArrayLike

from chainbudget import fields as f
from chainbudget.finding import Finding
from chainbudget.kindfigures import KindFigures
from chainbudget.network import GROUND, Netlist
from chainbudget.stages.base import (
    END_RESISTANCE_FIELD,
    OPAMP_FIELD,
    RAIL_FIELDS,
    SWEEP_FIELD,
    Built,
    Control,
    DcWindow,
    Environment,
    NodeFacts,
    OwnParts,
    Stage,
    StageContext,
    StageKind,
    inverting_dc_output,
    opamp_dc_window,
    opamp_part,
    stamp_opamp,
    taper_fraction,
)
from chainbudget.stages.opamp_loop import OwnLoop, loop_figures, loop_rules


def bass_fields(prefix: str) -> tuple[f.Field, ...]:
    """Fields of a bass network, keys prefixed with ``prefix`` (``""`` or ``"bass_"``)."""
    return (
        f.Field(f"{prefix}outer", f.RESISTANCE, "each of the two equal fixed resistors"),
        f.Field(f"{prefix}pot", f.RESISTANCE, "bass pot track resistance", tolerance="pots"),
        f.Field(
            f"{prefix}position", f.POSITION, "rotation: 0 full cut, 0.5 flat, 1 full boost", 0.5
        ),
        f.Field(f"{prefix}taper", f.TAPER, "pot taper", "linear"),
        f.Field(f"{prefix}cap", f.CAPACITANCE, "capacitor across each pot half (or the pot)"),
        f.Field(
            f"{prefix}cap_layout",
            f.choice("split", "across"),
            '"split": one cap across each pot half; "across": one cap across the pot',
            "split",
        ),
    )


def treble_fields(prefix: str, with_outer: bool) -> tuple[f.Field, ...]:
    """Fields of a treble network; the stand-alone stage also has its own flat path."""
    outer = (
        (f.Field(f"{prefix}outer", f.RESISTANCE, "each of the two flat-path resistors"),)
        if with_outer
        else ()
    )
    return (
        *outer,
        f.Field(f"{prefix}pot", f.RESISTANCE, "treble pot track resistance", tolerance="pots"),
        f.Field(
            f"{prefix}position", f.POSITION, "rotation: 0 full cut, 0.5 flat, 1 full boost", 0.5
        ),
        f.Field(f"{prefix}taper", f.TAPER, "pot taper", "linear"),
        f.Field(f"{prefix}cap", f.CAPACITANCE, "capacitor at each end of the treble pot"),
        f.Field(f"{prefix}wiper", f.RESISTANCE_OR_ZERO, "resistor from wiper to summing node", 0.0),
        f.Field(
            f"{prefix}bias_resistor",
            f.RESISTANCE,
            "summing node to bias (only where caps isolate the op-amp input)",
            None,
        ),
    )


def pot_control(stage: Stage, prefix: str) -> Control:
    return Control(
        key=f"{prefix}position",
        label=f"{stage.name}.{prefix}position",
        position=stage.number(f"{prefix}position"),
        taper=stage.values[f"{prefix}taper"],
        sweep=bool(stage.values["sweep"]),
    )


def stamp_bass(
    net: Netlist,
    stage: Stage,
    prefix: str,
    node_in: str,
    summing: str,
    node_out: str,
    positions: Mapping[str, ArrayLike],
    temperature_k: float,
) -> None:
    """``outer`` in->A, pot A(upper)-B(lower) with wiper at the summing node, caps across
    the halves (or the pot), ``outer`` B->out."""
    name, v = stage.name, stage.values
    own = OwnParts(net, name, temperature_k)
    a, b = f"{name}.{prefix}A", f"{name}.{prefix}B"
    outer, pot, cap = (stage.number(prefix + k) for k in ("outer", "pot", "cap"))
    fraction = taper_fraction(positions[f"{prefix}position"], v[f"{prefix}taper"])
    own.resistor(f"{prefix}outer_in", node_in, a, outer)
    net.pot(
        a,
        b,
        summing,
        pot,
        fraction,
        label=f"{name}.{prefix}pot",
        stage=name,
        temperature_k=temperature_k,
        end_resistance=stage.number("end_resistance"),
    )
    if v[f"{prefix}cap_layout"] == "split":
        net.capacitor(a, summing, cap)
        net.capacitor(summing, b, cap)
    else:
        net.capacitor(a, b, cap)
    own.resistor(f"{prefix}outer_out", b, node_out, outer)


def bass_dc_gain(stage: Stage, prefix: str) -> float:
    """DC gain magnitude of a bass network with its caps open, at the pot's setting.

    Notes
    -----
    With the caps open the input leg is ``outer`` plus the pot's upper half (A to the
    wiper at the summing node, (1 - x) P) and the feedback leg the lower half (x P) plus
    ``outer``, x the wiper-to-lower fraction after the taper (contract node list), each
    half with the pot's end resistance e: G_dc = (R + x P + e)/(R + (1 - x) P + e), the
    -Z_f/Z_i of the inverting stage (Horowitz & Hill, The Art of Electronics, 3rd ed., sec.
    4.2.1); (R + P)/R at full boost and its inverse at full cut, as the bass response's
    low-frequency limit (Baxandall, Wireless World, Oct. 1952).
    """
    outer, pot = stage.number(f"{prefix}outer"), stage.number(f"{prefix}pot")
    x = float(taper_fraction(stage.number(f"{prefix}position"), stage.values[f"{prefix}taper"]))
    end = stage.number("end_resistance")
    return (outer + x * pot + end) / (outer + (1.0 - x) * pot + end)


def stamp_treble(
    net: Netlist,
    stage: Stage,
    prefix: str,
    node_in: str,
    summing: str,
    node_out: str,
    positions: Mapping[str, ArrayLike],
    temperature_k: float,
) -> None:
    """``cap`` in->upper end, ``cap`` lower end->out, wiper to the summing node through
    ``wiper``; optional ``bias_resistor`` from the summing node to AC ground."""
    name, v = stage.name, stage.values
    own = OwnParts(net, name, temperature_k)
    upper, lower, wiper = (f"{name}.{prefix}{n}" for n in ("T_upper", "T_lower", "T_wiper"))
    pot, cap = stage.number(f"{prefix}pot"), stage.number(f"{prefix}cap")
    fraction = taper_fraction(positions[f"{prefix}position"], v[f"{prefix}taper"])
    net.capacitor(node_in, upper, cap)
    net.capacitor(lower, node_out, cap)
    net.pot(
        upper,
        lower,
        wiper,
        pot,
        fraction,
        label=f"{name}.{prefix}pot",
        stage=name,
        temperature_k=temperature_k,
        end_resistance=stage.number("end_resistance"),
    )
    # The wiper resistor always carries the pot's tiny end value so the node stays defined.
    own.resistor(f"{prefix}wiper", wiper, summing, stage.number(f"{prefix}wiper") + 1e-6 * pot)
    bias_resistor = stage.optional(f"{prefix}bias_resistor")
    if bias_resistor is not None:
        own.to_bias(f"{prefix}bias_resistor", summing, bias_resistor)


TONE_COMMON = (END_RESISTANCE_FIELD, SWEEP_FIELD, OPAMP_FIELD, *RAIL_FIELDS)


class FeedbackTone(StageKind):
    """A feedback tone stage: networks around an inverting op-amp's summing node.

    A kind lists the key prefixes of its pots in ``pots`` and stamps its networks in
    ``stamp_networks``; the op-amp, its + input at the bias point, is common.
    """

    network_uses_rails = False
    uses_opamp = True
    pots: ClassVar[tuple[str, ...]]

    @abstractmethod
    def dc_gain(self, stage: Stage) -> float:
        """DC gain magnitude of the stage's networks with every capacitor open."""

    def dc_output(self, stage: Stage, env: Environment, dc_in: float | None) -> float | None:
        """V_b + G_dc (V_b - V_in): an inverting stage with its + input at the bias point
        (`inverting_dc_output`); no input capacitor, so its input's DC always counts."""
        return inverting_dc_output(env, self.dc_gain(stage), dc_in)

    def dc_error(self, stage: Stage, env: Environment, error_in: float | None) -> float | None:
        """The input's error times the DC gain G, plus the op-amp's offset voltage times the
        noise gain 1 + G (its bias currents' share is left out here)."""
        carried = super().dc_error(stage, env, error_in)
        if carried is None:
            return None
        return carried + opamp_part(stage, env).offset_voltage * (1.0 + self.dc_gain(stage))

    def dc_rest(self, stage: Stage, env: Environment) -> float | None:
        """The input rests at the summing node's potential, the bias point."""
        return None if env.rails is None else env.rails.bias

    def dc_window(self, stage: Stage, env: Environment) -> DcWindow:
        # the text names one value where the rails vary over trials (chainbudget/spread)
        bias = (
            "its bias point" if env.rails is None else f"{float(np.median(env.rails.bias)):.3g} V"
        )
        return opamp_dc_window(
            stage,
            env,
            f"drive it from a node at {bias} (e.g. a stage with input_cap and ground_cap ahead "
            "of it): its input is DC-coupled",
        )

    def controls(self, stage: Stage) -> list[Control]:
        return [pot_control(stage, prefix) for prefix in self.pots]

    def figures(self, context: StageContext) -> tuple[KindFigures, ...]:
        """Its op-amp's loop (`chainbudget.stages.opamp_loop`)."""
        return (loop_figures(context),)

    def rules(self, figures: tuple[KindFigures, ...], facts: NodeFacts) -> list[Finding]:
        return [fi for own in figures if isinstance(own, OwnLoop) for fi in loop_rules(own)]

    @abstractmethod
    def stamp_networks(
        self,
        net: Netlist,
        stage: Stage,
        node_in: str,
        summing: str,
        node_out: str,
        positions: Mapping[str, ArrayLike],
        temperature_k: float,
    ) -> None:
        """Stamp the tone networks between the input, the summing node and the output."""

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
        summing = f"{stage.name}.sum"
        self.stamp_networks(net, stage, node_in, summing, node_out, positions, env.temperature_k)
        stamp_opamp(net, stage, env, GROUND, summing, node_out, built)
        return built
