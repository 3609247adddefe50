"""Stage kinds: one module each; this registry maps the kind names of the contract to them.

Adding a kind: write its module with a `StageKind` subclass and add it to `KINDS`. Each
kind's module is imported when a chain first names the kind (`chainbudget.lazykinds`).
"""

from __future__ import annotations

from chainbudget.lazykinds import LazyKinds
from chainbudget.stages.base import StageKind

KINDS: LazyKinds[StageKind] = LazyKinds(
    {
        "opamp_gain": ("chainbudget.stages.opamp_gain", "OpAmpGain"),
        "tone_bass": ("chainbudget.stages.tone_bass", "ToneBass"),
        "tone_treble": ("chainbudget.stages.tone_treble", "ToneTreble"),
        "tone_two_band": ("chainbudget.stages.tone_two_band", "ToneTwoBand"),
        "volume": ("chainbudget.stages.volume", "Volume"),
        "follower": ("chainbudget.stages.follower", "Follower"),
        "push_pull": ("chainbudget.stages.push_pull", "PushPull"),
        "block": ("chainbudget.stages.block", "Block"),
    }
)
