"""A rectified supply's low-line trough over a leading trial axis: the reservoir drawn
within its tolerance, the rectifier solved cycle by cycle for every trial at once
(chainbudget/spread).

Notes
-----
The same circuit and corner as `chainbudget.supplies.rectified.circuit.solve_rails` takes
for the trough (low line, heaviest load, the worst of the relative phases of signal and
mains), solved by `chainbudget.rectifier.solve` for a batch of circuits, one per trial and
phase. The load is the nominal operating point's (the tree as settled for the nominal
parts): the spread does not settle the tree again for each trial.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from functools import lru_cache

import numpy as np
from numpy.polynomial import chebyshev as cheb
from numpy.typing import NDArray

from chainbudget import rectifier
from chainbudget.supplies.base import Supply, SupplyBudget, SupplyLoad, SupplySpread
from chainbudget.supplies.rectified.circuit import transformer

SPREAD_FIELDS = ("reservoir",)
# Reservoir values solved per chunk of trials (the rest interpolated).
GRID_POINTS = 17


def rectified_spread(
    supply: Supply,
    drawn: Mapping[str, NDArray[np.float64]],
    nominal: SupplyBudget,
    bounds: Mapping[str, tuple[float, float]] | None = None,
) -> SupplySpread:
    """Trough and ripple at low line and heaviest load per trial.

    A batch of more than GRID_POINTS trials takes the trough from GRID_POINTS reservoir
    values across the part's bounds (Chebyshev nodes), solved once (cached) and
    interpolated by their polynomial (the trough is smooth in C; within 1 uV of the direct
    solve, tests/test_spread.py); a smaller batch (a corner, a sensitivity) is solved
    directly.
    """
    tr = transformer(supply)
    reservoir = np.atleast_1d(np.asarray(drawn.get("reservoir", tr.reservoir_f), dtype=float))
    load = nominal.load
    span = (bounds or {}).get("reservoir")
    if reservoir.size > GRID_POINTS and span is not None and span[0] != span[1]:
        mid, half = (span[0] + span[1]) / 2.0, abs(span[1] - span[0]) / 2.0
        # Chebyshev nodes across the bounds: the interpolating polynomial of a smooth
        # function converges geometrically with their number (Trefethen, Approximation
        # Theory and Approximation Practice, ch. 8)
        nodes = np.cos(np.pi * (np.arange(GRID_POINTS) + 0.5) / GRID_POINTS)
        grid = tuple(float(c) for c in mid + half * nodes)
        trough_grid, ripple_grid = _solved(supply, load, grid)
        where = (reservoir - mid) / half
        degree = GRID_POINTS - 1
        trough = np.asarray(cheb.chebval(where, cheb.chebfit(nodes, trough_grid, degree)), float)
        ripple = np.asarray(cheb.chebval(where, cheb.chebfit(nodes, ripple_grid, degree)), float)
    else:
        trough, ripple = _solve(supply, load, reservoir)
    low: NDArray[np.float64] = np.maximum(trough, 0.0)
    return SupplySpread({"trough_v": low, "ripple_vpp": ripple}, (), low)


@lru_cache(maxsize=32)
def _solved(
    supply: Supply, load: SupplyLoad, grid: tuple[float, ...]
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """`_solve` on a grid of reservoir values, kept for the next chunk of trials."""
    return _solve(supply, load, np.array(grid))


def _solve(
    supply: Supply, load: SupplyLoad, reservoir: NDArray[np.float64]
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Trough and ripple at low line and heaviest load for each reservoir value, the worst
    of the signal's phases (as `solve_rails` takes them)."""
    tr = transformer(supply)
    signal = load.signal_hz
    pulsed = signal is not None and load.heaviest_pulse_a > 0.0
    phases = rectifier.PHASES if pulsed else 1
    cycles = 1
    if pulsed and signal is not None:
        cycles = max(rectifier.commensurate(signal, tr.ripple_hz)[1], 1)
    offsets = np.array([2.0 * math.pi * j / (phases * cycles) for j in range(phases)])
    solved = rectifier.solve(
        tr.source_peak(tr.lines[0], load.heaviest_a > 0.0),
        tr.drop_v,
        tr.winding_ohm,
        np.repeat(reservoir, phases),
        tr.line_hz,
        load.heaviest_dc_a,
        load.heaviest_pulse_a,
        signal if pulsed else None,
        np.tile(offsets, reservoir.size),
        half_wave=tr.half_wave,
    )
    troughs = np.asarray(solved.trough_v).reshape(reservoir.size, phases)
    worst = np.argmin(troughs, axis=1)
    rows = np.arange(reservoir.size)
    ripple = np.asarray(solved.ripple_vpp).reshape(reservoir.size, phases)[rows, worst]
    return troughs[rows, worst], ripple
