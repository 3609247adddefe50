"""``push_pull``: a complementary class-AB output stage driving the load.

``halves`` holds the pair's devices and swing, ``model`` the kind (fields, network, limits,
DC), ``drive`` what it asks of its driver, ``heat`` its dissipation and junction
temperature, ``rules`` its findings.
"""

from chainbudget.stages.push_pull.drive import HandOver, OutputBias
from chainbudget.stages.push_pull.halves import (
    Half,
    PushPullModel,
    conduction_current,
    halves,
    modelled_half,
    push_pull_model,
)
from chainbudget.stages.push_pull.heat import Dissipation
from chainbudget.stages.push_pull.model import (
    ANGLE,
    DEFAULT_MAX_JUNCTION_DEGC,
    OUTPUT_CURRENT,
    SWING,
    PushPull,
)

__all__ = [
    "ANGLE",
    "DEFAULT_MAX_JUNCTION_DEGC",
    "OUTPUT_CURRENT",
    "SWING",
    "Dissipation",
    "Half",
    "HandOver",
    "OutputBias",
    "PushPull",
    "PushPullModel",
    "conduction_current",
    "halves",
    "modelled_half",
    "push_pull_model",
]
