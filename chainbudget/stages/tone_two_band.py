"""``tone_two_band``: bass and treble in one feedback stage around one op-amp."""

from __future__ import annotations

from collections.abc import Mapping

from numpy.typing import ArrayLike

from chainbudget.network import Netlist
from chainbudget.stages.base import Stage
from chainbudget.stages.tone_networks import (
    TONE_COMMON,
    FeedbackTone,
    bass_dc_gain,
    bass_fields,
    stamp_bass,
    stamp_treble,
    treble_fields,
)


class ToneTwoBand(FeedbackTone):
    """Two-band feedback tone stage.

    Notes
    -----
    The bass network (whose outer resistors carry the flat path) and the treble network
    share one summing node and one inverting op-amp, the classic two-control form of
    Baxandall's negative-feedback tone control (Wireless World, Oct. 1952).
    """

    kind = "tone_two_band"
    summary = "bass and treble feedback tone controls around one op-amp"
    attenuates = True
    shapes_response = True
    fields = (*bass_fields("bass_"), *treble_fields("treble_", with_outer=False), *TONE_COMMON)
    pots = ("bass_", "treble_")

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
        stamp_bass(net, stage, "bass_", node_in, summing, node_out, positions, temperature_k)
        stamp_treble(net, stage, "treble_", node_in, summing, node_out, positions, temperature_k)

    def dc_gain(self, stage: Stage) -> float:
        """The bass network's (`bass_dc_gain`): the treble pot hangs between two capacitors
        and carries no DC."""
        return bass_dc_gain(stage, "bass_")
