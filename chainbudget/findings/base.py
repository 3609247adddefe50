"""The finding type and the margins the rule sets share (kept here for the rule modules;
both live below, in `chainbudget.finding` and `chainbudget.thresholds`)."""

from __future__ import annotations

from chainbudget.finding import SEVERITIES, Finding
from chainbudget.thresholds import JUNCTION_MARGIN_K, THIN_HEADROOM_DB

__all__ = ["JUNCTION_MARGIN_K", "SEVERITIES", "THIN_HEADROOM_DB", "Finding"]
