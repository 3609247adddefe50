"""``tone_treble``: feedback-type treble shelving stage around an inverting op-amp."""

from __future__ import annotations

from collections.abc import Mapping

from numpy.typing import ArrayLike

from chainbudget.network import GROUND, Netlist
from chainbudget.stages.base import (
    OPAMP_FIELD,
    RAIL_FIELDS,
    SWEEP_FIELD,
    Built,
    Control,
    Environment,
    Stage,
    StageKind,
    opamp_supply_current,
    stamp_opamp,
)
from chainbudget.stages.tone_networks import (
    TONE_COMMON,
    pot_control,
    stamp_treble,
    treble_fields,
)


class ToneTreble(StageKind):
    """Treble shelving stage.

    Notes
    -----
    ``outer`` from in to the summing node and from there to out give the flat gain of -1;
    the treble pot, fed through a capacitor from each side, adds a path that takes over above
    1/(2 pi R C); rotation 1 (wiper at the input side) is full boost (Baxandall, Wireless
    World, Oct. 1952).
    """

    kind = "tone_treble"
    summary = "feedback treble shelving stage (inverting op-amp, pot fed through caps)"
    uses_opamp = True
    fields = (
        *treble_fields("", with_outer=True),
        *TONE_COMMON,
        SWEEP_FIELD,
        OPAMP_FIELD,
        *RAIL_FIELDS,
    )

    def controls(self, stage: Stage) -> list[Control]:
        return [pot_control(stage, "")]

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
        summing = f"{name}.sum"
        outer = stage.number("outer")
        net.resistor(node_in, summing, outer, label=f"{name}.outer_in", stage=name, temperature_k=t)
        net.resistor(
            summing, node_out, outer, label=f"{name}.outer_out", stage=name, temperature_k=t
        )
        stamp_treble(net, stage, "", node_in, summing, node_out, positions, t)
        stamp_opamp(net, stage, env, GROUND, summing, node_out, built)
        return built

    def supply_current(self, stage: Stage, env: Environment) -> float:
        return opamp_supply_current(stage, env)
