"""A finding: data about one thing worth telling the designer, rendered by the views.

A leaf module: the kinds (``stages/``, ``supplies/``) and the generic rule sets
(``findings/``) all make findings, so the class lives below both.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

#: Severities, most pressing first: the order findings are reported in. ``caution`` is a
#: safety caution (mains, hot parts, loud sound): it never fails a check, not even under
#: ``--strict``, but it is shown before the notes.
SEVERITIES = ("error", "warning", "caution", "note")


@dataclass(frozen=True)
class Finding:
    """One finding: severity, a stable code, the stage (or supply) it concerns, a message
    and figures.

    The message states the figure, the limit and what to change. A figure that is not
    known is None, never a stand-in zero.
    """

    severity: str
    code: str
    stage: str | None
    message: str
    figures: Mapping[str, float | None] = field(default_factory=dict)
    supply: str | None = None

    def __post_init__(self) -> None:
        if self.severity not in SEVERITIES:
            raise ValueError(f"unknown severity {self.severity!r}")
