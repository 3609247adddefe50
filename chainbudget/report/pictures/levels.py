"""The level diagram: at every node the nominal and max level, the clip level and the noise
floor, so headroom and dynamic range show as gaps."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
from matplotlib.figure import Figure

from chainbudget.budget import Budget
from chainbudget.budget.levels import SQRT2
from chainbudget.notation import eng
from chainbudget.report.pictures.style import curve_style, legend_outside, new_figure
from chainbudget.units import vrms_to_dbu

if TYPE_CHECKING:
    from chainbudget.report.pictures import PictureInputs, PictureOptions


def _dbu(vrms: float | None) -> float:
    return vrms_to_dbu(vrms) if vrms is not None and vrms > 0.0 else math.nan


@dataclass(frozen=True)
class LevelDiagram:
    """The diagram's figures, dBu (NaN where a node has none): index 0 is the source, then
    one per node. ``clip_dbu`` is the rms of a sine whose peak reaches the clip level."""

    places: tuple[str, ...]
    nominal_dbu: tuple[float, ...]
    max_dbu: tuple[float, ...]
    clip_dbu: tuple[float, ...]
    noise_a_dbu: tuple[float, ...]
    hum_dbu: tuple[float, ...] | None


def level_diagram(budget: Budget) -> LevelDiagram:
    """Every figure of the diagram from the budget's node figures (the JSON's)."""
    nodes = budget.nodes
    hums = [getattr(n, "hum_vrms", None) for n in nodes]
    return LevelDiagram(
        places=("source", *(n.stage for n in nodes)),
        nominal_dbu=(
            _dbu(budget.source_level_vrms),
            *(_dbu(n.level_vrms) for n in nodes),
        ),
        max_dbu=(
            _dbu(budget.source_max_level_vrms),
            *(_dbu(n.levels.max_level_vrms) for n in nodes),
        ),
        clip_dbu=(
            math.nan,
            *(_dbu(None if n.clip_vpk is None else n.clip_vpk / SQRT2) for n in nodes),
        ),
        noise_a_dbu=(math.nan, *(_dbu(n.noise_a_vrms) for n in nodes)),
        hum_dbu=None if all(h is None for h in hums) else (math.nan, *(_dbu(h) for h in hums)),
    )


def draw(inputs: PictureInputs, options: PictureOptions) -> tuple[Figure, str]:
    """One line per figure across the nodes (gid ``levels:<figure>``); at each limited node a
    bracket from max level to clip level labelled with the headroom."""
    budget = inputs.budget
    diagram = level_diagram(budget)
    x = np.arange(len(diagram.places))
    figure = new_figure(10.5, 5.5)
    axes = figure.add_subplot()
    axes.grid(True, which="major", axis="both")
    lines = [
        ("clip", "clip level (sine rms at the clip peak)", diagram.clip_dbu),
        ("max", "max level (source max_level carried through)", diagram.max_dbu),
        ("nominal", "nominal level", diagram.nominal_dbu),
        ("noise_a", "noise floor, A-weighted, over the band", diagram.noise_a_dbu),
    ]
    if diagram.hum_dbu is not None:
        lines.append(("hum", "hum", diagram.hum_dbu))
    for index, (gid, label, values) in enumerate(lines):
        style = curve_style(index, len(lines), 1)
        style["markevery"] = None
        axes.plot(x, values, label=label, gid=f"levels:{gid}", markersize=7, **style)
    for i in range(1, len(diagram.places)):
        clip, top = diagram.clip_dbu[i], diagram.max_dbu[i]
        if math.isnan(clip) or math.isnan(top):
            continue
        axes.annotate(
            "",
            xy=(x[i] + 0.12, clip),
            xytext=(x[i] + 0.12, top),
            arrowprops={"arrowstyle": "<->", "color": "#404040", "linewidth": 0.9},
        )
        axes.text(
            x[i] + 0.17, (clip + top) / 2.0, f"{clip - top:+.1f} dB", fontsize="small", va="center"
        )
    last = len(diagram.places) - 1
    noise = budget.noise
    if noise is not None and noise.output_clip_vrms is not None and noise.dynamic_range_a_db:
        top, floor = _dbu(noise.output_clip_vrms), diagram.noise_a_dbu[last]
        axes.annotate(
            "",
            xy=(x[last] - 0.12, top),
            xytext=(x[last] - 0.12, floor),
            arrowprops={"arrowstyle": "<->", "color": "#404040", "linewidth": 0.9},
        )
        axes.text(
            x[last] - 0.17,
            (top + floor) / 2.0,
            f"dynamic range (A)\n{noise.dynamic_range_a_db:.1f} dB",
            fontsize="small",
            va="center",
            ha="right",
            gid="levels:dynamic_range",
        )
    axes.set_xticks(x, diagram.places)
    axes.set_xlim(-0.4, x[-1] + 0.8)
    axes.set_ylabel("level, dBu")
    axes.set_title(f"{budget.title}: levels at every node, at {eng(budget.reference_hz, 'Hz')}")
    axes.plot(
        [],
        [],
        linestyle="none",
        marker=r"$\updownarrow$",
        markersize=10,
        color="#404040",
        label="headroom of max_level; at the output, the\ndynamic range: output at the first "
        "clip\nover the A-weighted noise floor",
    )
    legend_outside(axes, fontsize="small")
    return figure, _summary(budget, diagram)


def _summary(budget: Budget, diagram: LevelDiagram) -> str:
    gaps = [
        (diagram.clip_dbu[i] - diagram.max_dbu[i], diagram.places[i])
        for i in range(1, len(diagram.places))
        if not math.isnan(diagram.clip_dbu[i])
    ]
    told = [f"{len(budget.nodes)} nodes"]
    if gaps:
        least, where = min(gaps)
        told.append(f"least headroom {least:+.1f} dB at '{where}'")
    output_noise = diagram.noise_a_dbu[-1]
    clip = [c for c in diagram.clip_dbu[1:] if not math.isnan(c)]
    if clip and not math.isnan(output_noise) and budget.noise is not None:
        dynamic = budget.noise.dynamic_range_a_db
        if dynamic is not None:
            told.append(f"output dynamic range (A) {dynamic:.1f} dB")
    told.append(f"output nominal {diagram.nominal_dbu[-1]:+.1f} dBu")
    return "; ".join(told)
