"""``follower``: an emitter-follower buffer, biased by an emitter resistor or a current sink.

``bias`` holds its DC operating point, ``model`` the kind (fields, network, limits, DC),
``figures`` its own figures and rules.
"""

from chainbudget.stages.follower.bias import CUT_OFF, FollowerBias, follower_bias, transistor_part
from chainbudget.stages.follower.figures import FollowerFigures
from chainbudget.stages.follower.model import Follower

__all__ = [
    "CUT_OFF",
    "Follower",
    "FollowerBias",
    "FollowerFigures",
    "follower_bias",
    "transistor_part",
]
