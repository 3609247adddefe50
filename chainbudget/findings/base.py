"""A finding: data about one thing worth telling the designer, rendered by the views."""

from __future__ import annotations

from dataclasses import dataclass, field

SEVERITIES = ("error", "warning", "note")


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
