"""Headroom of every limited node across the band, as set and at the worst setting."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from matplotlib.figure import Figure
from matplotlib.lines import Line2D

from chainbudget.findings.base import THIN_HEADROOM_DB
from chainbudget.notation import eng
from chainbudget.report.pictures.style import curve_style, hertz_ticks, new_figure

if TYPE_CHECKING:
    from chainbudget.report.pictures import PictureInputs, PictureOptions


def draw(inputs: PictureInputs, options: PictureOptions) -> tuple[Figure, str]:
    """Each node's headroom of max_level against frequency: solid with the controls as set,
    dashed at the least over every swept control at each frequency. A node keeps its marker
    and colour in both; the 0 dB line is clipping at max_level, the dotted line the usual
    6 dB margin (`chainbudget.findings.base.THIN_HEADROOM_DB`)."""
    budget = inputs.budget
    curves = budget.curves
    figure = new_figure(10.5, 5.0)
    axes = figure.add_subplot()
    count, points = len(curves.nodes), len(curves.frequency_hz)
    for index, curve in enumerate(curves.nodes):
        style = curve_style(index, count, points)
        style.pop("linestyle")
        axes.semilogx(
            curves.frequency_hz, curve.as_set_db, linestyle="-", label=curve.stage, **style
        )
        axes.semilogx(
            curves.frequency_hz,
            curve.worst_db,
            linestyle="--",
            linewidth=0.9,
            label=f"{curve.stage} (worst setting)",
            **style,
        )
    axes.axhline(0.0, color="black", linewidth=1.4)
    axes.axhline(THIN_HEADROOM_DB, color="#606060", linestyle=":", linewidth=1.2)
    axes.set_xlabel("frequency, Hz")
    axes.set_ylabel("headroom of max_level, dB")
    axes.set_title(f"{budget.title}: headroom of every node across the band")
    nodes = [
        Line2D([], [], linestyle="-", **_marker_only(curve_style(i, count, points)))
        for i in range(count)
    ]
    hertz_ticks(axes)
    first = axes.legend(
        nodes,
        [c.stage for c in curves.nodes],
        title="node",
        loc="upper left",
        bbox_to_anchor=(1.01, 1.0),
        borderaxespad=0.0,
        fontsize="small",
    )
    axes.add_artist(first)
    meanings = [
        Line2D([], [], color="#404040", linestyle="-"),
        Line2D([], [], color="#404040", linestyle="--", linewidth=0.9),
        Line2D([], [], color="black", linewidth=1.4),
        Line2D([], [], color="#606060", linestyle=":", linewidth=1.2),
    ]
    axes.legend(
        meanings,
        [
            "controls as set",
            "worst over the swept controls",
            "0 dB: clips at max_level",
            f"{THIN_HEADROOM_DB:g} dB: the usual safety margin",
        ],
        title="lines",
        loc="lower left",
        bbox_to_anchor=(1.01, 0.0),
        borderaxespad=0.0,
        fontsize="small",
    )
    if not curves.nodes:
        return figure, "no node declares a swing limit; nothing to draw"
    worst = min(((min(c.worst_db), c.stage, c) for c in curves.nodes), key=lambda item: item[0])
    at = curves.frequency_hz[list(worst[2].worst_db).index(worst[0])]
    low, high = curves.frequency_hz[0], curves.frequency_hz[-1]
    return figure, (
        f"{count} limited nodes over {eng(low, 'Hz')} to {eng(high, 'Hz')}; least headroom "
        f"{worst[0]:+.1f} dB at '{worst[1]}' near {eng(at, 'Hz')} (worst setting)"
    )


def _marker_only(style: dict[str, Any]) -> dict[str, Any]:
    return {k: v for k, v in style.items() if k in ("color", "marker", "markerfacecolor")}
