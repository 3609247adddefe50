"""``tone_treble``: feedback-type treble shelving stage around an inverting op-amp."""

from __future__ import annotations

from collections.abc import Mapping

from numpy.typing import ArrayLike

from chainbudget.network import Netlist
from chainbudget.stages.base import OwnParts, Stage
from chainbudget.stages.tone_networks import (
    TONE_COMMON,
    FeedbackTone,
    stamp_treble,
    treble_fields,
)


class ToneTreble(FeedbackTone):
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
    attenuates = True
    shapes_response = True
    fields = (*treble_fields("", with_outer=True), *TONE_COMMON)
    pots = ("",)

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
        name, outer = stage.name, stage.number("outer")
        own = OwnParts(net, name, temperature_k)
        for a, b, leg in ((node_in, summing, "outer_in"), (summing, node_out, "outer_out")):
            own.resistor(leg, a, b, outer)
        stamp_treble(net, stage, "", node_in, summing, node_out, positions, temperature_k)

    def dc_gain(self, stage: Stage) -> float:
        """outer/outer = 1: the pot hangs between two capacitors; a ``bias_resistor`` from
        the summing node to the bias point carries no DC, both ends sitting there."""
        return 1.0
