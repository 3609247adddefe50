"""``tone_two_band``: bass and treble in one feedback stage around one op-amp."""

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
    bass_fields,
    pot_control,
    stamp_bass,
    stamp_treble,
    treble_fields,
)


class ToneTwoBand(StageKind):
    """Two-band feedback tone stage.

    Notes
    -----
    The bass network (whose outer resistors carry the flat path) and the treble network
    share one summing node and one inverting op-amp, the classic two-control form of
    Baxandall's negative-feedback tone control (Wireless World, Oct. 1952).
    """

    kind = "tone_two_band"
    summary = "bass and treble feedback tone controls around one op-amp"
    uses_opamp = True
    fields = (
        *bass_fields("bass_"),
        *treble_fields("treble_", with_outer=False),
        *TONE_COMMON,
        SWEEP_FIELD,
        OPAMP_FIELD,
        *RAIL_FIELDS,
    )

    def controls(self, stage: Stage) -> list[Control]:
        return [pot_control(stage, "bass_"), pot_control(stage, "treble_")]

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
        summing, t = f"{stage.name}.sum", env.temperature_k
        stamp_bass(net, stage, "bass_", node_in, summing, node_out, positions, t)
        stamp_treble(net, stage, "treble_", node_in, summing, node_out, positions, t)
        stamp_opamp(net, stage, env, GROUND, summing, node_out, built)
        return built

    def supply_current(self, stage: Stage, env: Environment) -> float:
        return opamp_supply_current(stage, env)
