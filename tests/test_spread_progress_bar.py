"""The spread command's progress line on a terminal: the trials' bar once they will take
more than a second, then a pulsing line while the corner search beside them finishes;
nothing on a pipe."""

from __future__ import annotations

import io

import pytest

from chainbudget.spread import command


class _Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_bar_shows_the_trials_then_the_corner_search(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(command.sys, "stderr", _Terminal())
    bar = command._Bar()
    bar.started -= 10.0  # ten seconds into the run: the trials will take longer than 1 s
    bar(100, 1000)
    assert bar.progress is not None
    assert [t.description for t in bar.progress.tasks] == ["trials"]
    bar(1000, 1000)
    assert [t.description for t in bar.progress.tasks] == ["trials", "corner search"]
    assert bar.progress.tasks[0].completed == 1000
    assert bar.progress.tasks[1].total is None  # no end known: it pulses
    bar.stop()


def test_quick_trials_show_only_the_corner_search(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(command.sys, "stderr", _Terminal())
    bar = command._Bar()
    bar(100, 1000)  # at once: the trials take well under a second
    assert bar.progress is None
    bar(1000, 1000)
    assert bar.progress is not None
    assert [t.description for t in bar.progress.tasks] == ["corner search"]
    bar.stop()


def test_no_bar_on_a_pipe(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(command.sys, "stderr", io.StringIO())
    bar = command._Bar()
    bar.started -= 10.0
    bar(100, 1000)
    bar(1000, 1000)
    assert bar.progress is None
