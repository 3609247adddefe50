"""Histograms of the figures that matter: those a finding's limit is drawn against, then
the most spread of the rest (matplotlib, the report pictures' fixed style)."""

from __future__ import annotations

import math
from pathlib import Path

from matplotlib.ticker import EngFormatter, MaxNLocator

from chainbudget.report.pictures import style
from chainbudget.spread.run import SpreadResult
from chainbudget.spread.view import is_harmonic, is_share, moving

# Panels in one picture at most.
MAX_PANELS = 6


def key_figures(result: SpreadResult) -> list[str]:
    """Figures with a rule's limit first, then the moving ones by relative spread (not the
    harmonics of THD: a harmonic the drawn betas raise from the check's floor, -200 dB,
    spans decades of ratio and would take every panel; THD itself stands for them)."""
    limited = list(dict.fromkeys(c.threshold.path for c in result.crossings))
    rest = sorted(
        (p for p in moving(result) if p not in limited and not is_harmonic(p)),
        key=lambda p: -_relative_spread(result, p),
    )
    return (limited + rest)[:MAX_PANELS]


def _relative_spread(result: SpreadResult, path: str) -> float:
    """A figure's spread over its nominal value; a level in dB as the ratio it spans (its
    nominal in dB is no scale: 0 dB would rank first); a share of the output noise power
    by its span itself (a fraction of the whole already: a small share would lead by its
    relative spread), and a generator's noise at the output by what it moves the output's
    noise by (its relative spread times its share: d V_out / V_out = share d v / v)."""
    span = result.stats[path]["max"] - result.stats[path]["min"]
    if is_share(path):
        return span
    if path.startswith("noise_sources.") and path.endswith(".noise_vrms"):
        share = result.nominal.get(path.removesuffix("noise_vrms") + "share", 0.0)
        return span / max(abs(result.nominal[path]), 1e-30) * share
    if path.endswith(("_db", "_dbu")):
        return float(10.0 ** (span / 20.0) - 1.0)
    return span / max(abs(result.nominal[path]), 1e-30)


def draw_histograms(result: SpreadResult, target: Path, fmt: str) -> list[str]:
    """Write one picture of histograms (one panel a figure) with each figure's corners and
    any limit marked; returns the figures drawn."""
    paths = key_figures(result)
    with style.drawing():
        figure = style.new_figure(9.0, 2.6 * max(1, (len(paths) + 1) // 2))
        columns = 2 if len(paths) > 1 else 1
        rows = max(1, (len(paths) + columns - 1) // columns)
        for i, path in enumerate(paths):
            axes = figure.add_subplot(rows, columns, i + 1)
            values = result.samples[path]
            axes.hist(values, bins=50, color=style.COLOURS[0], gid=f"hist:{path}")
            lo, hi = result.corners[path]
            for x in (v for v in (lo, hi) if math.isfinite(v)):  # not a level of zero in dB
                axes.axvline(x, color=style.COLOURS[1], linestyle="--", gid=f"corner:{path}")
            for c in result.crossings:
                if c.threshold.path == path:
                    axes.axvline(
                        c.threshold.limit,
                        color=style.COLOURS[2],
                        linestyle=":",
                        gid=f"limit:{path}",
                    )
            axes.set_title(path, fontsize="small")
            axes.set_ylabel("trials")
            # a current of 75 uA reads as 75u, a frequency of 12,500 Hz as 12.5k; a few
            # ticks, so that a panel's labels do not run into each other
            axes.xaxis.set_major_locator(MaxNLocator(5))
            axes.xaxis.set_major_formatter(EngFormatter(sep=""))
        if not paths:
            figure.text(0.5, 0.5, "no figure moves over the tolerances", ha="center")
        style.save(figure, target, fmt, "spread")
    return paths


def picture_format(path: Path) -> str:
    suffix = path.suffix.lower().lstrip(".")
    return suffix if suffix in ("png", "svg", "pdf") else "png"
