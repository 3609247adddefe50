"""``block``: a measured or datasheet black box."""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from chainbudget import fields as f
from chainbudget.finding import Finding
from chainbudget.kindfigures import KindFigures
from chainbudget.network import GROUND, SOURCE_FLOOR_OHM, Netlist, node_ref
from chainbudget.notation import sig
from chainbudget.stages.base import (
    RAIL_FIELDS,
    Built,
    Environment,
    Limit,
    NodeFacts,
    Stage,
    StageKind,
)
from chainbudget.thresholds import HOT_PART_W


class Block(StageKind):
    """Black box: input impedance to ground; open-circuit gain G behind Z_out.

    Notes
    -----
    The Thevenin model of an amplifier (Sedra & Smith, Microelectronic Circuits, 7th ed.,
    sec. 1.5): v_out,oc = G v_in, in series with Z_out; Z_in loads the stage before. Its
    ``noise`` is an input-referred voltage density that stands for all its noise; its
    impedances are noiseless. ``max_output`` is the peak voltage at its output terminals.
    ``psrr``, where given, refers each rail's ripple to its input as v_ripple 10^(-psrr/20)
    (flat: a measured rejection, applied as a real positive factor); without it the block
    takes no hum from its rails.
    """

    kind = "block"
    network_uses_rails = False
    summary = "measured or datasheet black box (gain, impedances, noise, limit)"
    uses_rails = False
    fields = (
        f.Field(
            "gain", f.NONZERO_GAIN, "unloaded voltage gain, dB or ratio (negative ratio inverts)"
        ),
        f.Field("input_impedance", f.RESISTANCE, "input impedance (resistive)"),
        f.Field("output_impedance", f.RESISTANCE_OR_ZERO, "output impedance (resistive)"),
        f.Field("noise", f.NOISE_VOLTAGE, "input-referred noise density", 0.0),
        f.Field("max_output", f.PEAK_VOLTAGE, "peak output voltage at its terminals", None),
        f.Field(
            "supply_current",
            f.CURRENT,
            "current it draws (from the positive rail; from both on split rails)",
            0.0,
        ),
        f.Field(
            "psrr",
            f.DECIBELS,
            "supply rejection, input-referred, each rail pin (none: not modelled)",
            None,
        ),
        *RAIL_FIELDS,
    )

    def rules(self, figures: tuple[KindFigures, ...], facts: NodeFacts) -> list[Finding]:
        """A block that drives the load (a power module) runs hot: the hot-parts caution."""
        power = facts.output_power_w
        if power is None or power < HOT_PART_W:
            return []
        if not math.isfinite(power):
            text = (
                f'Hot parts: "{facts.stage}" drives the load with no output limit given, so its '
                "heat cannot be estimated; power modules run hot enough to burn. Follow its "
                "maker's mounting and ventilation advice and check its temperature on the bench."
            )
        else:
            text = (
                f'Hot parts: "{facts.stage}" delivers up to {sig(power, "W")} into the load and '
                "turns "
                "a good part of that into heat; its heatsink can burn on touch. Follow its "
                "maker's mounting and ventilation advice and check its temperature on the bench."
            )
        return [Finding("caution", "hot-power-block", facts.stage, text, {"power_w": power})]

    def needs_rail(self, values: Mapping[str, Any]) -> bool:
        """A block's model ignores its rails, but the current it draws must land on one."""
        return bool(values.get("supply_current"))

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
        net.resistor(
            node_in, GROUND, stage.number("input_impedance"), label=f"{name}.input_impedance"
        )
        # A zero output impedance is stamped as a tiny one (see SOURCE_FLOOR_OHM).
        # element-wise: the value may vary over a leading trial axis (chainbudget/spread)
        z_out = np.maximum(stage.number("output_impedance"), SOURCE_FLOOR_OHM)
        source = f"{name}.source"
        branch = net.vcvs(node_in, GROUND, source, stage.number("gain"), label=f"{name}.gain")
        net.resistor(source, node_out, z_out, label=f"{name}.output_impedance")
        noise = stage.number("noise")
        if noise > 0.0:
            net.voltage_noise_at(
                branch,
                stage.number("gain"),
                noise**2,
                f"{name}.noise",
                name,
                "block",
                "input-referred",
            )
        psrr = stage.optional("psrr")
        if psrr is not None:
            # Input-referred, one source per rail pin, flat (a measured rejection).
            reject = 10.0 ** (-psrr / 20.0)
            for pin, rail in (("+", "positive"), ("-", "negative")):
                net.ripple_voltage_at(
                    branch,
                    stage.number("gain") * reject,
                    rail=rail,
                    label=f"{name}.psrr{pin}",
                    stage=name,
                    path=f"V{pin} pin (PSRR)",
                )
        built = Built(probes={"out": node_ref(node_out)}, output_probe="out")
        max_output = stage.optional("max_output")
        if max_output is not None:
            built.limits.append(
                Limit("max_output", "out", max_output, f"rated output {max_output:g} V peak")
            )
        return built

    def supply_current(self, stage: Stage, env: Environment) -> float:
        return stage.number("supply_current")

    def dc_rest(self, stage: Stage, env: Environment) -> float | None:
        """A DC-coupled input rests at 0 V through the input impedance to ground. (Its output
        DC is unknown: `dc_output` keeps the default None.)"""
        return 0.0
