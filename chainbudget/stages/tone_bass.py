"""``tone_bass``: feedback-type bass shelving stage around an inverting op-amp."""

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
)


class ToneBass(FeedbackTone):
    """Bass shelving stage.

    Notes
    -----
    Full boost (rotation 1): low-frequency gain -(R + P)/R; full cut its inverse; at high
    frequency the caps short the pot and the gain is -1. With the split layout at full boost
    the stage is H = -(R + P/(1 + sPC))/R (Baxandall, Wireless World, Oct. 1952).
    """

    kind = "tone_bass"
    summary = "feedback bass shelving stage (inverting op-amp, pot and caps in the legs)"
    attenuates = True
    shapes_response = True
    fields = (*bass_fields(""), *TONE_COMMON)
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
        stamp_bass(net, stage, "", node_in, summing, node_out, positions, temperature_k)

    def dc_gain(self, stage: Stage) -> float:
        """(R + x P)/(R + (1 - x) P): the bass network with its caps open (`bass_dc_gain`)."""
        return bass_dc_gain(stage, "")
