"""``regulator``: a linear series regulator, fixed or set by a two-resistor divider.

``kind`` holds the model, ``figures`` its checks under the solved tree, ``rules`` its
findings.
"""

from chainbudget.supplies.regulator.figures import (
    BleederSuggestion,
    DividerSuggestion,
    DropoutSuggestion,
    RegulatorFigures,
)
from chainbudget.supplies.regulator.kind import (
    DEFAULT_DROPOUT_V,
    DEFAULT_MAX_JUNCTION_DEGC,
    SERIES,
    Regulator,
)

__all__ = [
    "DEFAULT_DROPOUT_V",
    "DEFAULT_MAX_JUNCTION_DEGC",
    "SERIES",
    "BleederSuggestion",
    "DividerSuggestion",
    "DropoutSuggestion",
    "Regulator",
    "RegulatorFigures",
]
