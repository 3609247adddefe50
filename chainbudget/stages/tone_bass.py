"""``tone_bass``: feedback-type bass shelving stage around an inverting op-amp."""

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
from chainbudget.stages.tone_networks import TONE_COMMON, bass_fields, pot_control, stamp_bass


class ToneBass(StageKind):
    """Bass shelving stage.

    Notes
    -----
    Full boost (rotation 1): low-frequency gain -(R + P)/R; full cut its inverse; at high
    frequency the caps short the pot and the gain is -1. With the split layout at full boost
    the stage is H = -(R + P/(1 + sPC))/R (Baxandall, Wireless World, Oct. 1952).
    """

    kind = "tone_bass"
    summary = "feedback bass shelving stage (inverting op-amp, pot and caps in the legs)"
    uses_opamp = True
    fields = (*bass_fields(""), *TONE_COMMON, SWEEP_FIELD, OPAMP_FIELD, *RAIL_FIELDS)

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
        summing = f"{stage.name}.sum"
        stamp_bass(net, stage, "", node_in, summing, node_out, positions, env.temperature_k)
        stamp_opamp(net, stage, env, GROUND, summing, node_out, built)
        return built

    def supply_current(self, stage: Stage, env: Environment) -> float:
        return opamp_supply_current(stage, env)
