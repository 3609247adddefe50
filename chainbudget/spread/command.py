"""The ``spread`` command's body: load, run the Monte Carlo with a progress bar on a
terminal, print the tables or the JSON, draw the histograms asked for."""

from __future__ import annotations

import json
import sys
import time
from pathlib import Path
from typing import TYPE_CHECKING

from chainbudget.chainfile import ChainError, load_chain
from chainbudget.report.terminal import shown
from chainbudget.spread.run import run_spread
from chainbudget.spread.view import spread_json, spread_tables

if TYPE_CHECKING:
    from rich.progress import Progress

FORMATS = ("table", "json")
# A progress bar appears when the run is expected to take longer than this, s.
PROGRESS_AFTER_S = 1.0


class _Bar:
    """A progress bar on stderr, started once the first batches show the trials will take
    more than PROGRESS_AFTER_S (never on a pipe or file); once the trials are in, a
    pulsing line while the corner search that runs beside them finishes (it can be the
    longer part of a run of a few hundred trials)."""

    def __init__(self) -> None:
        self.started = time.perf_counter()
        self.progress: Progress | None = None
        self.task = 0

    def _start(self) -> Progress:
        from rich.console import Console
        from rich.progress import Progress

        self.progress = Progress(console=Console(stderr=True), transient=True)
        self.progress.start()
        return self.progress

    def __call__(self, done: int, total: int) -> None:
        if not sys.stderr.isatty():
            return
        if done >= total:  # the trials are in: the corner search is what is left
            if self.progress is None:
                progress = self._start()
            else:
                progress = self.progress
                progress.update(self.task, completed=total)  # type: ignore[arg-type]
            progress.add_task("corner search", total=None)
            return
        if self.progress is None:
            elapsed = time.perf_counter() - self.started
            if elapsed * total / max(done, 1) < PROGRESS_AFTER_S:
                return
            self.task = self._start().add_task("trials", total=total)
        self.progress.update(self.task, completed=done)  # type: ignore[union-attr, arg-type]

    def stop(self) -> None:
        if self.progress is not None:
            self.progress.stop()


def spread_command(
    file: Path, trials: int, seed: int, output_format: str, plot: Path | None, force: bool
) -> str | None:
    """Run the spread; returns the text to print (None when rich printed the tables on a
    terminal).

    Raises ChainError (one line, exit 2) for bad input."""
    if output_format not in FORMATS:
        raise SpreadUsage(f'--format: got "{output_format}", expected table or json')
    if plot is not None and plot.exists() and not force:
        raise SpreadUsage(f"{plot}: already exists; pass --force to overwrite it")
    chain = load_chain(file)
    bar = _Bar()
    try:
        result = run_spread(chain, trials, seed, bar)
    finally:
        bar.stop()
    if plot is not None:
        from chainbudget.spread.plot import draw_histograms, picture_format

        try:
            draw_histograms(result, plot, picture_format(plot))
        except OSError as exc:
            raise SpreadUsage(f"{plot}: cannot write ({exc.strerror})") from None
    title = chain.settings.title
    if output_format == "json":
        return json.dumps(spread_json(result, title, chain.file), indent=2, allow_nan=False)
    text = shown(
        spread_tables(
            result,
            title,
            # the source's share of the noise first, then each stage's figures together
            ["noise.stage_shares.source."]
            + [
                f"{group}.{stage.name}."
                for stage in chain.stages
                for group in ("nodes", "noise.stage_shares", "noise.placement")
            ]
            + [f"supplies.{supply.name}." for supply in chain.supplies],
        )
    )
    return text.removesuffix("\n") if text else None  # the command adds the last break


class SpreadUsage(ValueError, ChainError):
    """A usage error of the spread command (one line, exit status 2)."""
