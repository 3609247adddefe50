"""A finding: data about one thing worth telling the designer, rendered by the views."""

from __future__ import annotations

from dataclasses import dataclass, field

SEVERITIES = ("error", "warning", "note")

# Margins shared by several rule sets. Headroom at max level under 6 dB is thin (contract:
# "headroom under 6 dB at max level"; also the trade's usual allowance for programme peaks,
# common practice, no source). A junction within 25 K of its maximum runs close (common
# practice, no source).
THIN_HEADROOM_DB = 6.0
JUNCTION_MARGIN_K = 25.0


@dataclass(frozen=True)
class Finding:
    """One finding: severity, a stable code, the stage (or supply) it concerns, a message
    and figures.

    The message states the figure, the limit and what to change.
    """

    severity: str
    code: str
    stage: str | None
    message: str
    figures: dict[str, float] = field(default_factory=dict)
    supply: str | None = None

    def __post_init__(self) -> None:
        if self.severity not in SEVERITIES:
            raise ValueError(f"unknown severity {self.severity!r}")
