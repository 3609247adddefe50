"""Pieces of the spread's work run beside the rest, in forked copies of the process.

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

The trials' batches are run the same way (`forked_map`): each of a few forked workers
takes every k-th batch and sends each batch's figures back as it is done, so that the
batches' Python runs on every core rather than one thread at a time. The figures are the
same bits as the batches run in threads (each batch is independent of the others and is
computed by the same code on the same data); a batch a worker does not give back (it
failed, or the worker died) is worked out in the parent, which raises any error there.
"""

from __future__ import annotations

import multiprocessing
import sys
import warnings
from collections.abc import Callable, Iterator, Sequence
from multiprocessing.connection import Connection, wait
from multiprocessing.process import BaseProcess
from typing import Generic, TypeVar

T = TypeVar("T")
I = TypeVar("I")  # noqa: E741 - an item of work


def can_fork() -> bool:
    """Whether work can be run aside here: Linux, which forks safely, in a process that is
    not itself a forked child (whose children multiprocessing does not allow)."""
    return (
        sys.platform.startswith("linux")
        and "fork" in multiprocessing.get_all_start_methods()
        and not multiprocessing.current_process().daemon
    )


def is_aside() -> bool:
    """Whether this process is a forked child running beside other work (`Aside`, or a
    worker of `forked_map`): the cores are the other processes' too."""
    return multiprocessing.current_process().daemon


def _start_child(send: Callable[[Connection], None]) -> tuple[Connection, BaseProcess]:
    """A forked child that runs ``send(writer)``, and the parent's end of its pipe. The
    child sends what it has to say through ``writer``; anything it raises, or a pipe the
    parent has closed (an interrupted run), ends it quietly: the parent, finding no
    answer, does the work itself."""
    context = multiprocessing.get_context("fork")
    reader, writer = context.Pipe(duplex=False)

    def child() -> None:
        reader.close()
        try:
            send(writer)
        except BaseException:  # noqa: BLE001, S110 - the parent does the work again
            pass
        finally:
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
    return reader, process


class Aside(Generic[T]):
    """``work()`` started in a forked child at once; `result` waits for it (or does the work
    in this process where the child could not give it: module notes)."""

    def __init__(self, work: Callable[[], T], fork: bool | None = None) -> None:
        self._work = work
        self._reader: Connection | None = None
        self._process: BaseProcess | None = None
        if not (can_fork() if fork is None else fork):
            return

        def send(writer: Connection) -> None:
            try:
                found: tuple[bool, object] = (True, work())
            except BaseException:  # noqa: BLE001 - the parent does the work again and raises
                found = (False, None)
            writer.send(found)

        self._reader, self._process = _start_child(send)

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


def forked_map(work: Callable[[I], T], items: Sequence[I], workers: int) -> Iterator[T]:
    """``work(item)`` of each item, in order, computed by ``workers`` forked children (the
    one numbered w takes items w, w + workers, ...), each result yielded as soon as it
    and those before it are in. An item whose worker fails on it or dies first is worked
    out here instead (module notes)."""
    channels: dict[Connection, tuple[BaseProcess, list[int]]] = {}
    for w in range(min(workers, len(items))):
        mine = list(range(w, len(items), workers))

        def send(writer: Connection, mine: list[int] = mine) -> None:
            for i in mine:
                try:
                    found: tuple[int, bool, object] = (i, True, work(items[i]))
                except BaseException:  # noqa: BLE001 - the parent does it again and raises
                    writer.send((i, False, None))
                    return
                writer.send(found)

        reader, process = _start_child(send)
        channels[reader] = (process, mine)
    done: dict[int, T] = {}
    failed: set[int] = set()
    try:
        for i in range(len(items)):
            while i not in done and i not in failed and channels:
                for ready in wait(list(channels)):
                    reader = next(r for r in channels if r is ready)
                    process, mine = channels[reader]
                    try:
                        index, ok, value = reader.recv()
                    except (EOFError, OSError):  # the worker ended: what it had not sent
                        failed.update(j for j in mine if j not in done)
                        reader.close()
                        process.join()
                        del channels[reader]
                        continue
                    if ok:
                        done[index] = value
                    else:
                        failed.add(index)
            yield done.pop(i) if i in done else work(items[i])
    finally:
        for reader, (process, _) in channels.items():
            reader.close()
            if process.is_alive():
                process.terminate()
            process.join()
