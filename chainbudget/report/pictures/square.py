"""A square wave after the chain at a few frequencies, as set and at each tone pot's ends:
the picture a designer compares with the scope on the bench."""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np
from matplotlib.figure import Figure

from chainbudget.budget.levels import SQRT2
from chainbudget.budget.response import (
    chain_response,
    response_settings,
    square_harmonics,
    square_wave,
)
from chainbudget.notation import eng
from chainbudget.report.pictures.style import curve_style, legend_outside, new_figure

if TYPE_CHECKING:
    from chainbudget.report.pictures import PictureInputs, PictureOptions

# Periods drawn of each square wave.
PERIODS = 2
# Where the top of the square is read for the summary's tilt, fractions of the period after
# the rising edge (clear of the edge itself).
EARLY, LATE = 0.05, 0.45


def draw(inputs: PictureInputs, options: PictureOptions) -> tuple[Figure, str]:
    """One panel per frequency; one curve per setting (gid ``square:<hz>:<label>``); a thin
    grey line for the ideal: the input square times the gain at the reference, as set. The
    square's peak is the nominal sine's (sqrt 2 x the source level); the model is linear,
    so clipping is not shown."""
    from chainbudget.report.pictures import node_index

    chain = inputs.chain
    k = node_index(inputs, options)
    settings = response_settings(chain, volume=False)
    harmonics = [square_harmonics(f0) for f0 in options.square_hz]
    reference = chain.settings.reference
    frequency = np.concatenate(
        [[reference], *(f0 * n for f0, n in zip(options.square_hz, harmonics, strict=True))]
    )
    response = chain_response(chain, inputs.analysis.envs, k, settings, frequency)
    amplitude = SQRT2 * chain.source.level
    h_reference = response.transfer[0, 0]
    ideal = amplitude * abs(h_reference) * (1.0 if h_reference.real >= 0.0 else -1.0)
    figure = new_figure(10.5, 2.6 * len(options.square_hz) + 0.6)
    panels = figure.subplots(len(options.square_hz), 1, squeeze=False)[:, 0]
    start = 1
    tilt = peaks = ""
    for f0, n, axes in zip(options.square_hz, harmonics, panels, strict=True):
        transfer = response.transfer[:, start : start + n.size]
        start += n.size
        t, y = square_wave(transfer, n, amplitude)
        # Start a quarter period before a rising edge, so no edge sits on the frame.
        shift = t.size // 4
        period_ms = 1e3 / f0
        time_ms = (np.arange(PERIODS * t.size) - shift) / t.size * period_ms
        waves = np.roll(np.concatenate([y] * PERIODS, axis=-1), shift, axis=-1)
        square = np.where((time_ms / period_ms) % 1.0 < 0.5, ideal, -ideal)
        axes.plot(time_ms, square, color="#a0a0a0", linewidth=0.8, label="ideal (gain at ref.)")
        for index, setting in enumerate(settings):
            axes.plot(
                time_ms,
                waves[index],
                label=setting.label,
                gid=f"square:{f0:g}:{setting.label}",
                **curve_style(index, len(settings), time_ms.size),
            )
        axes.set_title(f"{eng(f0, 'Hz')} square, {n[-1]} harmonics summed", fontsize="medium")
        axes.set_ylabel(f"'{response.node}', V")
        axes.set_xlim(time_ms[0], time_ms[-1])
        if not tilt:
            tilt = f"tilt {_tilt(t, y[0], ideal):.1f} % per half period at {eng(f0, 'Hz')}"
        peaks += f"{', ' if peaks else ''}{_peak(y[0], ideal):+.1f} % at {eng(f0, 'Hz')}"
    panels[-1].set_xlabel("time, ms")
    legend_outside(panels[0], fontsize="small", title="settings")
    figure.suptitle(
        f"{inputs.budget.title}: a {eng(amplitude, 'V')} peak square wave from the source, at "
        f"'{response.node}' (linear: clipping not shown)"
    )
    return figure, f"'{response.node}', as set: {tilt}; peak over the ideal {peaks}"


def _tilt(t: np.ndarray, y: np.ndarray, ideal: float) -> float:
    """How far the top falls across the half period (read clear of the edges), percent."""
    top = y * np.sign(ideal)
    early, late = (float(np.interp(x, t, top)) for x in (EARLY, LATE))
    return 100.0 * (1.0 - late / early) if early else float("nan")


def _peak(y: np.ndarray, ideal: float) -> float:
    """The waveform's peak over the ideal square's, percent."""
    return 100.0 * (float(np.max(y * np.sign(ideal))) / abs(ideal) - 1.0) if ideal else 0.0
