"""``rectified``: mains transformer, rectifier and reservoir capacitor (an unregulated rail).

``circuit`` holds the transformer and the rectifier solved cycle by cycle at each mains
corner, ``kind`` the fields and the states, ``figures`` the winding and reservoir figures,
``rules`` the findings.

Safety: this supply starts at the mains. Its figures are a paper budget, not a safety
assessment; mains wiring, fusing, earthing and insulation follow local electrical codes and
licensed practice.
"""

from chainbudget.supplies.rectified.figures import RectifiedFigures
from chainbudget.supplies.rectified.kind import Rectified
from chainbudget.supplies.rectified.rules import MAINS_CAUTION

__all__ = ["MAINS_CAUTION", "Rectified", "RectifiedFigures"]
