"""The budget as a picture: headroom of every node across the band (matplotlib, PNG/SVG/PDF).

matplotlib is imported here, lazily, so the ``check`` path never pays for it.
"""

from __future__ import annotations

from pathlib import Path

from chainbudget.budget import Budget
from chainbudget.budget.levels import HeadroomCurves
from chainbudget.findings.base import THIN_HEADROOM_DB


def plot_headroom(budget: Budget, target: Path) -> None:
    """Draw each limited node's headroom of max_level against frequency and save it.

    Solid lines: the controls as set; dashed: the least over every swept control at each
    frequency. The 0 dB line is clipping; the dotted line the usual 6 dB margin.
    """
    import matplotlib

    matplotlib.use("Agg")  # files only: no display needed
    from matplotlib import pyplot as plt

    curves: HeadroomCurves = budget.curves
    figure, axes = plt.subplots(figsize=(9.0, 5.0), layout="constrained")
    for index, curve in enumerate(curves.nodes):
        colour = f"C{index % 10}"
        axes.semilogx(curves.frequency_hz, curve.as_set_db, color=colour, label=curve.stage)
        axes.semilogx(
            curves.frequency_hz, curve.worst_db, color=colour, linestyle="--", linewidth=0.9
        )
    axes.axhline(0.0, color="black", linewidth=1.0)
    axes.axhline(THIN_HEADROOM_DB, color="grey", linestyle=":", linewidth=1.0)
    axes.set_xlabel("frequency, Hz")
    axes.set_ylabel("headroom of max_level, dB")
    axes.set_title(f"{budget.title}: headroom (solid: controls as set; dashed: worst setting)")
    axes.grid(True, which="both", linewidth=0.3)
    if curves.nodes:
        axes.legend(loc="best", fontsize="small")
    figure.savefig(target)
    plt.close(figure)
