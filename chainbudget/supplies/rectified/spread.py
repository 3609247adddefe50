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

import numpy as np
from numpy.typing import NDArray

from chainbudget import rectifier
from chainbudget.supplies.base import Supply, SupplyBudget, SupplySpread
from chainbudget.supplies.rectified.circuit import transformer

SPREAD_FIELDS = ("reservoir",)
# Reservoir values solved per chunk of trials (the rest interpolated).
GRID_POINTS = 17


def rectified_spread(
    supply: Supply, drawn: Mapping[str, NDArray[np.float64]], nominal: SupplyBudget
) -> SupplySpread:
    """Trough and ripple at low line and heaviest load per trial."""
    tr = transformer(supply)
    reservoir = np.atleast_1d(np.asarray(drawn.get("reservoir", tr.reservoir_f), dtype=float))
    load = nominal.load
    signal = load.signal_hz
    pulsed = signal is not None and load.heaviest_pulse_a > 0.0
    phases = rectifier.PHASES if pulsed else 1
    cycles = 1
    if pulsed and signal is not None:
        cycles = max(rectifier.commensurate(signal, tr.ripple_hz)[1], 1)
    offsets = np.array([2.0 * math.pi * j / (phases * cycles) for j in range(phases)])
    low_line = tr.lines[0]
    # The trough is smooth and monotonic in C: past GRID_POINTS trials it is solved on a
    # grid across the trials' range and interpolated (cubic spline; error checked in
    # tests/test_spread.py), so a chunk of trials costs GRID_POINTS rectifier solves.
    if reservoir.size > GRID_POINTS and np.ptp(reservoir) > 0.0:
        grid = np.linspace(reservoir.min(), reservoir.max(), GRID_POINTS)
    else:
        grid = reservoir
    solved = rectifier.solve(
        tr.source_peak(low_line, load.heaviest_a > 0.0),
        tr.drop_v,
        tr.winding_ohm,
        np.repeat(grid, phases),
        tr.line_hz,
        load.heaviest_dc_a,
        load.heaviest_pulse_a,
        signal if pulsed else None,
        np.tile(offsets, grid.size),
        half_wave=tr.half_wave,
    )
    troughs = np.asarray(solved.trough_v).reshape(grid.size, phases)
    worst = np.argmin(troughs, axis=1)
    rows = np.arange(grid.size)
    trough = troughs[rows, worst]
    ripple = np.asarray(solved.ripple_vpp).reshape(grid.size, phases)[rows, worst]
    if grid is not reservoir:
        from scipy.interpolate import CubicSpline

        trough = CubicSpline(grid, trough)(reservoir)
        ripple = CubicSpline(grid, ripple)(reservoir)
    trough = np.maximum(trough, 0.0)
    return SupplySpread({"trough_v": trough, "ripple_vpp": ripple}, (), trough)
