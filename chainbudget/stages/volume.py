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
    OwnParts,
    Stage,
    StageKind,
    taper_fraction,
)


class Volume(StageKind):
    """Volume pot: upper end at the input (through ``input_cap`` and ``series``), lower end
    at AC ground, wiper the output (``shunt`` from wiper to ground).

    Notes
    -----
    Unloaded, the output is the divider ratio x P / (series + P) with x the taper fraction;
    loaded by R_L it becomes (xP || R_L) / ((1-x)P + series + (xP || R_L)) (the loaded
    potential divider, Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 1.2.3).
    """

    kind = "volume"
    network_uses_rails = False
    summary = "passive volume pot, optional series and shunt resistors"
    attenuates = True
    sets_volume = True
    uses_rails = False
    fields = (
        f.Field("pot", f.RESISTANCE, "track resistance", tolerance="pots"),
        f.Field("position", f.POSITION, "rotation: 0 silent, 1 full volume", 0.5),
        f.Field("taper", f.TAPER, "pot taper", "log"),
        f.Field(
            "input_cap",
            f.CAPACITANCE,
            "series coupling capacitor ahead of the pot (keeps DC off its track)",
            None,
        ),
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
        own = OwnParts(net, name, t)
        upper = node_in
        input_cap = stage.optional("input_cap")
        if input_cap is not None:
            upper = f"{name}.coupled"
            net.capacitor(node_in, upper, input_cap)
        series = stage.optional("series")
        if series is not None:
            own.resistor("series", upper, f"{name}.upper", series)
            upper = f"{name}.upper"
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
            own.resistor("shunt", node_out, GROUND, shunt)
        return Built(probes={"out": node_ref(node_out)}, output_probe="out")

    def _dc_divider(self, stage: Stage) -> tuple[float, float]:
        """(pot top, wiper) DC per volt of DC at the input, with no input capacitor.

        Notes
        -----
        The unloaded divider with the lower end at 0 V: lower leg x P + e (in parallel with
        ``shunt``), upper leg (1 - x) P + e, ``series`` ahead, x the taper fraction at the
        setting and e the end resistance (Horowitz & Hill, The Art of Electronics, 3rd ed.,
        sec. 1.2.3). What follows is taken to draw no DC (an op-amp input, a capacitor).
        """
        pot, end = stage.number("pot"), stage.number("end_resistance")
        x = float(taper_fraction(stage.number("position"), stage.values["taper"]))
        lower, upper = x * pot + end, (1.0 - x) * pot + end
        shunt = stage.optional("shunt")
        if shunt is not None:
            lower = lower * shunt / (lower + shunt)
        series = stage.optional("series")  # a drawn value is an array: no truth test
        total = (0.0 if series is None else series) + upper + lower
        return (upper + lower) / total, lower / total

    def dc_output(self, stage: Stage, env: Environment, dc_in: float | None) -> float | None:
        """The wiper's DC: 0 V behind ``input_cap`` (the track returns it to 0 V), else the
        DC at the input times the unloaded divider ratio (`_dc_divider`)."""
        if stage.values.get("input_cap") is not None:
            return 0.0
        return None if dc_in is None else dc_in * self._dc_divider(stage)[1]

    def pot_dc(self, stage: Stage, dc_in: float | None) -> float | None:
        """DC at the pot's upper end: 0 V behind ``input_cap``."""
        if stage.values.get("input_cap") is not None:
            return 0.0
        return None if dc_in is None else dc_in * self._dc_divider(stage)[0]

    def dc_rest(self, stage: Stage, env: Environment) -> float | None:
        """A DC-coupled input rests at 0 V through the track."""
        return None if stage.values.get("input_cap") is not None else 0.0
