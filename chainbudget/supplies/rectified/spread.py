"""A rectified supply's low-line trough and its mains ripple over a leading trial axis:
the reservoir drawn within its tolerance, the rectifier solved cycle by cycle for every
trial at once (chainbudget/spread).

Notes
-----
The same circuits and corners as `chainbudget.supplies.rectified.circuit.solve_rails`
takes for them: the trough and its peak-to-peak ripple at low line and the heaviest load
(the worst of the relative phases of signal and mains), and the ripple's spectrum (the
seed of the hum budget) at nominal line with the nominal load's mean as a steady current,
solved by `chainbudget.rectifier.solve` for a batch of circuits, one per reservoir value
and phase, in one batch as `solve_rails` solves them. The load is the nominal operating
point's (the tree as settled for the nominal parts): the spread does not settle the tree
again for each trial.

Each figure is a smooth function of the reservoir C, so a chunk of trials takes them from
`GRID_POINTS` values of C across the part's bounds (Chebyshev nodes) by their
interpolating polynomial, which converges geometrically with the number of nodes for a
function analytic about the interval (Trefethen, Approximation Theory and Approximation
Practice, ch. 8); the complex harmonics are interpolated as their real and imaginary parts.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from numpy.polynomial import chebyshev as cheb
from numpy.typing import NDArray

from chainbudget import rectifier
from chainbudget.supplies.base import (
    RippleSpread,
    Supply,
    SupplyBudget,
    SupplyLoad,
    SupplySpread,
)
from chainbudget.supplies.rectified.circuit import transformer

SPREAD_FIELDS = ("reservoir",)
# Reservoir values solved per chunk of trials (the rest interpolated).
GRID_POINTS = 17


@dataclass(frozen=True)
class Solved:
    """A rail's figures for each reservoir value: the low-line trough and ripple at the
    heaviest load, V, (n,), and the ripple's harmonics at nominal line and load, complex
    V peak, (n, K)."""

    trough_v: NDArray[np.float64]
    ripple_vpp: NDArray[np.float64]
    harmonics_vpk: NDArray[np.complex128]


def rectified_spread(
    supply: Supply,
    drawn: Mapping[str, NDArray[np.float64]],
    nominal: SupplyBudget,
    bounds: Mapping[str, tuple[float, float]] | None = None,
) -> SupplySpread:
    """Trough and ripple at low line and heaviest load per trial, and the ripple's spectrum
    (what the rails below and the hum take).

    A batch of more than GRID_POINTS trials takes them from GRID_POINTS reservoir values
    across the part's bounds (Chebyshev nodes), solved once (cached) and interpolated by
    their polynomial (the figures are smooth in C; the trough within 1 uV of the direct
    solve, tests/test_spread.py, the harmonics within 1e-6 of the fundamental,
    tests/test_spread_hum.py); a smaller batch (a corner, a sensitivity) is solved
    directly, and a reservoir not drawn takes the nominal value's solve, cached.
    """
    tr = transformer(supply)
    load = nominal.load
    if "reservoir" not in drawn:
        solved = _solved(supply, load, (tr.reservoir_f,))
        return _spread(solved.trough_v, solved.ripple_vpp, solved.harmonics_vpk, tr.ripple_hz)
    reservoir = np.atleast_1d(np.asarray(drawn["reservoir"], dtype=float))
    span = (bounds or {}).get("reservoir")
    if reservoir.size > GRID_POINTS and span is not None and span[0] != span[1]:
        mid, half = (span[0] + span[1]) / 2.0, abs(span[1] - span[0]) / 2.0
        nodes = np.cos(np.pi * (np.arange(GRID_POINTS) + 0.5) / GRID_POINTS)
        grid = tuple(float(c) for c in mid + half * nodes)
        on_grid = _solved(supply, load, grid)
        harmonics = on_grid.harmonics_vpk
        # every figure a column: trough, ripple, then the harmonics' real and imaginary parts
        columns = np.column_stack(
            (on_grid.trough_v, on_grid.ripple_vpp, harmonics.real, harmonics.imag)
        )
        coefficients = cheb.chebfit(nodes, columns, GRID_POINTS - 1)
        values = np.asarray(cheb.chebval((reservoir - mid) / half, coefficients), float)  # (M, T)
        count = harmonics.shape[1]
        trough, ripple = values[0], values[1]
        spectrum = (values[2 : 2 + count] + 1j * values[2 + count :]).T
    else:
        direct = _solve(supply, load, reservoir)
        trough, ripple, spectrum = direct.trough_v, direct.ripple_vpp, direct.harmonics_vpk
    return _spread(trough, ripple, spectrum, tr.ripple_hz)


def _spread(
    trough: NDArray[np.float64],
    ripple: NDArray[np.float64],
    harmonics: NDArray[np.complex128],
    ripple_hz: float,
) -> SupplySpread:
    low: NDArray[np.float64] = np.maximum(trough, 0.0)
    return SupplySpread(
        {"trough_v": low, "ripple_vpp": ripple},
        (),
        low,
        RippleSpread(ripple_hz, ripple, np.asarray(harmonics, dtype=complex)),
    )


@lru_cache(maxsize=32)
def _solved(supply: Supply, load: SupplyLoad, grid: tuple[float, ...]) -> Solved:
    """`_solve` on a grid of reservoir values, kept for the next chunk of trials."""
    return _solve(supply, load, np.array(grid))


def _solve(supply: Supply, load: SupplyLoad, reservoir: NDArray[np.float64]) -> Solved:
    """The rail's figures for each reservoir value: the trough and ripple at low line and
    heaviest load, the worst of the signal's phases (as `solve_rails` takes them), and the
    ripple's spectrum at nominal line with the nominal load's mean as a steady current
    (`solve_rails`'s row for the hum), all in one batch."""
    tr = transformer(supply)
    signal = load.signal_hz
    pulsed = signal is not None and load.heaviest_pulse_a > 0.0
    phases = rectifier.PHASES if pulsed else 1
    cycles = 1
    if pulsed and signal is not None:
        cycles = max(rectifier.commensurate(signal, tr.ripple_hz)[1], 1)
    offsets = np.array([2.0 * math.pi * j / (phases * cycles) for j in range(phases)])
    n = reservoir.size
    low, nominal = tr.lines[0], tr.lines[1]
    # n x phases rows for the trough, then n rows for the spectrum
    peak = np.concatenate(
        (
            np.full(n * phases, tr.source_peak(low, load.heaviest_a > 0.0)),
            np.full(n, tr.source_peak(nominal, load.nominal_a > 0.0)),
        )
    )
    solved = rectifier.solve(
        peak,
        tr.drop_v,
        tr.winding_ohm,
        np.concatenate((np.repeat(reservoir, phases), reservoir)),
        tr.line_hz,
        np.concatenate((np.full(n * phases, load.heaviest_dc_a), np.full(n, load.nominal_a))),
        np.concatenate((np.full(n * phases, load.heaviest_pulse_a), np.zeros(n))),
        signal if pulsed else None,
        np.concatenate((np.tile(offsets, n), np.zeros(n))),
        half_wave=tr.half_wave,
    )
    troughs = np.asarray(solved.trough_v)[: n * phases].reshape(n, phases)
    worst = np.argmin(troughs, axis=1)
    rows = np.arange(n)
    ripple = np.asarray(solved.ripple_vpp)[: n * phases].reshape(n, phases)[rows, worst]
    harmonics = np.asarray(solved.harmonics_vpk)[n * phases :]
    return Solved(troughs[rows, worst], ripple, harmonics)
