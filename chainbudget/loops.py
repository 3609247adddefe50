"""Loop sections: the stages an op-amp's global feedback wraps, solved as one network.

A stage whose kind senses a later stage's output for its feedback (`StageKind.feedback_from`,
the ``feedback_from`` field of an ``opamp_gain`` stage) heads a *loop section*: itself and
every stage up to the one it senses. The chain is then a sequence of sections, each a single
stage or one loop; the cascade joins sections as two-ports, exactly as it joins stages.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from chainbudget.fields import suggest
from chainbudget.stages import KINDS
from chainbudget.stages.base import Stage


@dataclass(frozen=True)
class Section:
    """Stages ``first`` to ``last`` (indices, both included) solved as one network; a loop
    when ``last > first`` (the first stage's feedback senses the last one's output)."""

    first: int
    last: int

    @property
    def is_loop(self) -> bool:
        return self.last > self.first

    @property
    def indices(self) -> range:
        return range(self.first, self.last + 1)

    def __contains__(self, index: object) -> bool:
        return isinstance(index, int) and self.first <= index <= self.last


def sections(stages: Sequence[Stage]) -> tuple[Section, ...]:
    """The chain as consecutive sections: a loop where a stage senses a later one, else each
    stage on its own. The loader has checked that loops name later stages and never overlap
    (`loop_problems`)."""
    names = {stage.name: k for k, stage in enumerate(stages)}
    found: list[Section] = []
    k = 0
    while k < len(stages):
        sensed = KINDS[stages[k].kind].feedback_from(stages[k])
        last = names[sensed] if sensed is not None else k
        found.append(Section(k, last))
        k = last + 1
    return tuple(found)


def section_of(found: Sequence[Section], index: int) -> Section:
    """The section that holds stage ``index``."""
    return next(section for section in found if index in section)


def loop_problems(stages: Sequence[Stage]) -> list[tuple[int, str, str]]:
    """(stage index, key, message) for each ``feedback_from`` the loader must refuse: a name
    that is no stage, the stage itself or an earlier one, or a loop that overlaps another."""
    names = {stage.name: k for k, stage in enumerate(stages)}
    found: list[tuple[int, str, str]] = []
    covered_until = -1
    covered_by = ""
    for k, stage in enumerate(stages):
        sensed = KINDS[stage.kind].feedback_from(stage)
        if sensed is None:
            continue
        if sensed not in names:
            found.append(
                (k, "feedback_from", f'no stage named "{sensed}"' + suggest(sensed, names))
            )
        elif names[sensed] <= k:
            found.append(
                (
                    k,
                    "feedback_from",
                    f'got "{sensed}", expected a later stage (the feedback senses the output '
                    "of a stage after this one)",
                )
            )
        elif k <= covered_until:
            found.append(
                (
                    k,
                    "feedback_from",
                    f'this stage is inside the loop of "{covered_by}"; loops may follow each '
                    "other but not overlap",
                )
            )
        else:
            covered_until, covered_by = names[sensed], stage.name
    return found
