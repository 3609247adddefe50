"""Magnitude (and phase) from the source to a node, as set and at each swept pot's ends."""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np
from matplotlib.figure import Figure

from chainbudget.budget.response import (
    Response,
    chain_response,
    response_frequencies,
    response_settings,
)
from chainbudget.notation import eng
from chainbudget.report.pictures.style import (
    curve_style,
    hertz_ticks,
    legend_outside,
    new_figure,
)

if TYPE_CHECKING:
    from chainbudget.report.pictures import PictureInputs, PictureOptions


def response_of(inputs: PictureInputs, node_index: int) -> Response:
    """The transfer the picture draws: every setting of `response_settings`, over the band
    and an octave beyond, on the rails the budget was worked out on."""
    chain = inputs.chain
    return chain_response(
        chain,
        inputs.analysis.envs,
        node_index,
        response_settings(chain),
        response_frequencies(chain),
    )


def draw(inputs: PictureInputs, options: PictureOptions) -> tuple[Figure, str]:
    """One curve per setting (gid ``response:<label>``, so a test can read it back); the band
    edges as dotted verticals."""
    from chainbudget.report.pictures import node_index

    response = response_of(inputs, node_index(inputs, options))
    chain = inputs.chain
    figure = new_figure(10.5, 6.5 if options.phase else 5.0)
    if options.phase:
        magnitude_axes, phase_axes = figure.subplots(2, 1, sharex=True, height_ratios=(2, 1))
    else:
        magnitude_axes, phase_axes = figure.add_subplot(), None
    f = response.frequency_hz
    magnitude, phase = response.magnitude_db, response.phase_deg
    count = len(response.settings)
    for index, setting in enumerate(response.settings):
        style = curve_style(index, count, f.size)
        magnitude_axes.semilogx(
            f, magnitude[index], label=setting.label, gid=f"response:{setting.label}", **style
        )
        if phase_axes is not None:
            phase_axes.semilogx(f, phase[index], gid=f"phase:{setting.label}", **style)
    low, high = chain.settings.band
    for axes in (magnitude_axes, phase_axes):
        if axes is None:
            continue
        hertz_ticks(axes)
        for edge in (low, high):
            axes.axvline(edge, color="#606060", linestyle=":", linewidth=1.0)
    magnitude_axes.plot([], [], color="#606060", linestyle=":", label="band edges")
    magnitude_axes.set_ylabel(f"gain to '{response.node}', dB")
    magnitude_axes.set_title(
        f"{inputs.budget.title}: response from the source (open-circuit voltage) to "
        f"'{response.node}'"
    )
    legend_outside(magnitude_axes, fontsize="small", title="settings")
    finite = magnitude[np.isfinite(magnitude)]
    if finite.size:
        top = float(finite.max())
        magnitude_axes.set_ylim(max(float(finite.min()), top - 80.0) - 3.0, top + 3.0)
    (phase_axes or magnitude_axes).set_xlabel("frequency, Hz")
    if phase_axes is not None:
        phase_axes.set_ylabel("phase, degrees")
    return figure, _summary(response, chain.settings.reference, low, high)


def _summary(response: Response, reference: float, low: float, high: float) -> str:
    f, magnitude = response.frequency_hz, response.magnitude_db

    def at(frequency: float) -> np.ndarray:
        return np.array([np.interp(np.log(frequency), np.log(f), row) for row in magnitude])

    as_set = at(reference)[0]
    edges = []
    for frequency in (low, high):
        values = at(frequency)
        values = values[np.isfinite(values)]
        edges.append(f"{values.min():+.1f} to {values.max():+.1f} dB at {eng(frequency, 'Hz')}")
    return (
        f"'{response.node}' from the source, {eng(f[0], 'Hz')} to {eng(f[-1], 'Hz')}, "
        f"{len(response.settings)} settings; as set {as_set:+.1f} dB at "
        f"{eng(reference, 'Hz')}; over the settings " + ", ".join(edges)
    )
