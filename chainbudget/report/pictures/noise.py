"""The output noise density over the band, and the largest sources of it."""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np
from matplotlib.figure import Figure

from chainbudget.budget.noise import NoiseSpectra, noise_spectra
from chainbudget.notation import eng
from chainbudget.report.pictures.style import (
    curve_style,
    hertz_ticks,
    legend_outside,
    new_figure,
    plain_log_ticks,
)

if TYPE_CHECKING:
    from chainbudget.report.pictures import PictureInputs, PictureOptions

# Sources drawn one by one; the rest are drawn together.
LARGEST = 5


def output_spectra(inputs: PictureInputs) -> NoiseSpectra:
    """Every generator's noise at every node, controls as set (as the budget's noise)."""
    a = inputs.analysis
    return noise_spectra(a.chain, a.envs, a.frequency, a.nominal, a.temperature_k, a.band_slice)


def draw(inputs: PictureInputs, options: PictureOptions) -> tuple[Figure, str]:
    """The total output density (gid ``noise:total``), the `LARGEST` sources ranked by
    their band noise at the output (gid ``noise:<label>``) and the rest together."""
    budget = inputs.budget
    spectra = output_spectra(inputs)
    figure = new_figure(10.5, 5.0)
    axes = figure.add_subplot()
    f = spectra.band_frequency
    out = spectra.contribution[:, -1, spectra.band]  # V^2/Hz per generator at the output
    output = budget.nodes[-1].stage
    if out.shape[0] == 0:
        return figure, f"no noise generator reaches '{output}'"
    power = spectra.integrate(spectra.contribution[:, -1, :], lambda x: np.ones_like(x))
    ranked = [int(s) for s in np.argsort(-power, kind="stable")]
    shown, rest = ranked[:LARGEST], ranked[LARGEST:]
    total = out.sum(axis=0)
    nv = 1e9
    axes.loglog(
        f, np.sqrt(total) * nv, color="black", linewidth=2.2, label="total", gid="noise:total"
    )
    share = power / power.sum()
    for index, s in enumerate(shown):
        origin = spectra.origins[s]
        label = f"{origin.stage} {origin.part} ({origin.kind}) {100 * share[s]:.1f} %"
        axes.loglog(
            f,
            np.sqrt(out[s]) * nv,
            label=label,
            gid=f"noise:{origin.label}",
            linewidth=1.1,
            **curve_style(index + 1, len(shown) + 1, f.size),
        )
    if rest:
        axes.loglog(
            f,
            np.sqrt(out[rest].sum(axis=0)) * nv,
            color="#808080",
            linestyle=(0, (1, 2)),
            linewidth=1.0,
            label=f"{len(rest)} others together {100 * share[rest].sum():.1f} %",
            gid="noise:others",
        )
    axes.set_xlabel("frequency, Hz")
    axes.set_ylabel(f"noise density at '{output}', nV/rtHz")
    axes.set_title(f"{budget.title}: output noise density, controls as set")
    hertz_ticks(axes)
    plain_log_ticks(axes)
    legend_outside(axes, fontsize="small", title="sources (share of band power)")
    top = spectra.origins[ranked[0]]
    low, high = float(np.sqrt(total.min())), float(np.sqrt(total.max()))
    told = f"'{output}' density {eng(low, 'V/rtHz')} to {eng(high, 'V/rtHz')}"
    noise = budget.nodes[-1].noise
    if noise is not None:
        told += f", {eng(noise.noise_vrms, 'V')} rms over the band"
    return figure, (
        f"{told}; largest source {top.stage} {top.part} ({top.kind}) {100 * share[ranked[0]]:.1f} %"
    )
