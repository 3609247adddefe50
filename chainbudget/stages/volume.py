"""``volume``: a passive volume pot with optional series and shunt resistors."""

from __future__ import annotations

from collections.abc import Mapping

from numpy.typing import ArrayLike

from chainbudget import fields as f
from chainbudget.network import GROUND, Netlist, node_ref
from chainbudget.stages.base import (
    END_RESISTANCE_FIELD,
    SWEEP_FIELD,
    Built,
    Control,
    Environment,
    Stage,
    StageKind,
    taper_fraction,
)


class Volume(StageKind):
    """Volume pot: upper end at the input (through ``series``), lower end at AC ground,
    wiper the output (``shunt`` from wiper to ground).

    Notes
    -----
    Unloaded, the output is the divider ratio x P / (series + P) with x the taper fraction;
    loaded by R_L it becomes (xP || R_L) / ((1-x)P + series + (xP || R_L)) (the loaded
    potential divider, Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 1.2.3).
    """

    kind = "volume"
    summary = "passive volume pot, optional series and shunt resistors"
    uses_rails = False
    fields = (
        f.Field("pot", f.RESISTANCE, "track resistance"),
        f.Field("position", f.POSITION, "rotation: 0 silent, 1 full volume", 0.5),
        f.Field("taper", f.TAPER, "pot taper", "log"),
        f.Field("series", f.RESISTANCE, "resistor from the input to the pot's upper end", None),
        f.Field("shunt", f.RESISTANCE, "resistor from the wiper to ground", None),
        END_RESISTANCE_FIELD,
        SWEEP_FIELD,
    )

    def controls(self, stage: Stage) -> list[Control]:
        return [
            Control(
                "position",
                f"{stage.name}.position",
                stage.number("position"),
                stage.values["taper"],
                bool(stage.values["sweep"]),
            )
        ]

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
        upper = node_in
        series = stage.optional("series")
        if series is not None:
            upper = f"{name}.upper"
            net.resistor(
                node_in, upper, series, label=f"{name}.series", stage=name, temperature_k=t
            )
        fraction = taper_fraction(positions["position"], stage.values["taper"])
        net.pot(
            upper,
            GROUND,
            node_out,
            stage.number("pot"),
            fraction,
            label=f"{name}.pot",
            stage=name,
            temperature_k=t,
            end_resistance=stage.number("end_resistance"),
        )
        shunt = stage.optional("shunt")
        if shunt is not None:
            net.resistor(
                node_out, GROUND, shunt, label=f"{name}.shunt", stage=name, temperature_k=t
            )
        return Built(probes={"out": node_ref(node_out)}, output_probe="out")
