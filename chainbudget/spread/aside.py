"""A piece of the spread's work run beside the rest, in a forked copy of the process.

Notes
-----
The spread's two long parts do not depend on each other: the Monte Carlo of the trials and
the corner search (`chainbudget.spread.run`), which needs only the nominal figures and the
one-at-a-time sensitivities. The trials already run on the machine's cores in threads
(numpy releases the GIL in its array work), but the evaluation between the array
operations is Python, which one thread at a time runs: the trials keep about one and a
half cores busy, and the corner search, in small batches, about one. Run in a thread beside
the trials, the search would wait on the same lock; run in a forked process it has an
interpreter of its own (`os.fork`: the child starts with a copy of the parent's memory,
the evaluator and its caches included, so nothing is rebuilt or sent to it; only its result
comes back, pickled through a pipe).

The child's result is the same to the bit as the work run in the parent: the same code on
the same data in the same order. Where the platform does not fork (Windows, or macOS,
where forking a process that has loaded system frameworks is unsafe), or the child fails
for any reason (an exception in the work, the child killed), the work is done in the
parent when its result is asked for, so that an error is raised there as it would be
without the child.
"""

from __future__ import annotations

import multiprocessing
import sys
import warnings
from collections.abc import Callable
from multiprocessing.connection import Connection
from multiprocessing.process import BaseProcess
from typing import Generic, TypeVar

T = TypeVar("T")


def can_fork() -> bool:
    """Whether work can be run aside here: Linux, which forks safely."""
    return sys.platform.startswith("linux") and "fork" in multiprocessing.get_all_start_methods()


class Aside(Generic[T]):
    """``work()`` started in a forked child at once; `result` waits for it (or does the work
    in this process where the child could not give it: module notes)."""

    def __init__(self, work: Callable[[], T], fork: bool | None = None) -> None:
        self._work = work
        self._reader: Connection | None = None
        self._process: BaseProcess | None = None
        if not (can_fork() if fork is None else fork):
            return
        context = multiprocessing.get_context("fork")
        reader, writer = context.Pipe(duplex=False)

        def child() -> None:
            reader.close()
            try:
                found: tuple[bool, object] = (True, work())
            except BaseException:  # noqa: BLE001 - the parent does the work again and raises
                found = (False, None)
            writer.send(found)
            writer.close()

        # what the parent has buffered is written once, by the parent (the child inherits
        # the buffers and flushes them as it exits)
        sys.stdout.flush()
        sys.stderr.flush()
        with warnings.catch_warnings():
            # Python 3.12 and later warn on forking a process that has threads (numpy's
            # BLAS pool): the child only computes, and takes no lock those threads hold
            warnings.simplefilter("ignore", DeprecationWarning)
            process = context.Process(target=child, daemon=True)
            process.start()
        writer.close()
        self._reader, self._process = reader, process

    def result(self) -> T:
        """The work's result: the child's, or the work done here."""
        if self._reader is None or self._process is None:
            return self._work()
        try:
            ok, value = self._reader.recv()
        except (EOFError, OSError):  # the child died before it answered
            ok, value = False, None
        finally:
            self._reader.close()
            self._process.join()
            self._reader = self._process = None
        return value if ok else self._work()
