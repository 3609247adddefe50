"""Stage kinds: one module each; this registry maps the kind names of the contract to them.

Adding a kind: write its module with a `StageKind` subclass and add it to `KINDS`.
"""

from __future__ import annotations

from chainbudget.stages.base import StageKind
from chainbudget.stages.block import Block
from chainbudget.stages.follower import Follower
from chainbudget.stages.opamp_gain import OpAmpGain
from chainbudget.stages.push_pull import PushPull
from chainbudget.stages.tone_bass import ToneBass
from chainbudget.stages.tone_treble import ToneTreble
from chainbudget.stages.tone_two_band import ToneTwoBand
from chainbudget.stages.volume import Volume

KINDS: dict[str, StageKind] = {
    kind.kind: kind
    for kind in (
        OpAmpGain(),
        ToneBass(),
        ToneTreble(),
        ToneTwoBand(),
        Volume(),
        Follower(),
        PushPull(),
        Block(),
    )
}
