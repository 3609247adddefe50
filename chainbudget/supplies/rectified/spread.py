"""A rectified supply's low-line trough and its mains ripple over a leading trial axis:
the reservoir drawn within its tolerance, the rectifier solved cycle by cycle for every
trial at once (chainbudget/spread).

Notes
-----
The same circuits and corners as `chainbudget.supplies.rectified.circuit.solve_rails`
takes for them: each rail's trough and its peak-to-peak ripple at low line and the
heaviest load (the worst of the relative phases of signal and mains), and the ripple's
spectrum (the seed of the hum budget) at nominal line with the nominal load's mean as a
steady current, solved by `chainbudget.rectifier.solve` for a batch of circuits, one per
rail, reservoir value and phase, in one batch as `solve_rails` solves them (the signal's
frequency and whether the pulses are taken are the supply's, shared by its rails). The
load is the nominal operating point's (the tree as settled for the nominal parts): the
spread does not settle the tree again for each trial.

A centre-tapped (``split``) supply is two such rails, ``name`` and ``name.neg``, each its
own reservoir under its own load. The file gives one ``reservoir`` for both (each rail's
capacitor), so one value is drawn per trial and both rails take it: the two capacitors
move together (a check of the trial, which can hold one value only, gives the same
rails).

Each figure is a smooth function of the reservoir C, so a chunk of trials takes them from
`GRID_POINTS` values of C across the part's bounds (Chebyshev nodes) by their
interpolating polynomial, which converges geometrically with the number of nodes for a
function analytic about the interval (Trefethen, Approximation Theory and Approximation
Practice, ch. 8); the complex harmonics are interpolated as their real and imaginary parts.
Under pulsed loads the trough and ripple are interpolated at each relative phase of signal
and mains, each smooth in C, and the worst phase taken per trial after: the worst of them
has a kink where the worst phase changes, which a polynomial follows poorly (there the
ripple jumps from one phase's to another's).
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
from chainbudget.supplies.base import RippleSpread, Supply, SupplyLoad, SupplySpread
from chainbudget.supplies.rectified.circuit import transformer

SPREAD_FIELDS = ("reservoir",)
# Reservoir values solved per chunk of trials (the rest interpolated).
GRID_POINTS = 17


@dataclass(frozen=True)
class Solved:
    """A rail's figures for each reservoir value: the low-line trough and ripple at the
    heaviest load at each relative phase of signal and mains, V, (n, P), and the ripple's
    harmonics at nominal line and load, complex V peak, (n, K)."""

    trough_v: NDArray[np.float64]
    ripple_vpp: NDArray[np.float64]
    harmonics_vpk: NDArray[np.complex128]


def rectified_spread(
    supply: Supply,
    drawn: Mapping[str, NDArray[np.float64]],
    loads: Mapping[str, SupplyLoad],
    bounds: Mapping[str, tuple[float, float]] | None = None,
) -> dict[str, SupplySpread]:
    """Each rail's trough and ripple at low line and heaviest load per trial, and its
    ripple's spectrum (what the rails below and the hum take), by rail name; ``loads``
    is each rail's nominal load (one rail, or a split supply's two).

    A batch of more than GRID_POINTS trials takes them from GRID_POINTS reservoir values
    across the part's bounds (Chebyshev nodes), solved once (cached) and interpolated by
    their polynomial (the figures are smooth in C; the trough within 1 uV of the direct
    solve, tests/test_spread.py, the harmonics within 1e-6 of the fundamental,
    tests/test_spread_hum.py, tests/test_spread_split.py); a smaller batch (a corner, a
    sensitivity) is solved directly, and a reservoir not drawn takes the nominal value's
    solve, cached. Every rail takes the one drawn reservoir (module notes).
    """
    tr = transformer(supply)
    rails = tuple(loads)
    rail_loads = tuple(loads.values())
    if "reservoir" not in drawn:
        solved = _solved(supply, rail_loads, (tr.reservoir_f,))
        return {
            rail: _spread(s.trough_v, s.ripple_vpp, s.harmonics_vpk, tr.ripple_hz)
            for rail, s in zip(rails, solved, strict=True)
        }
    reservoir = np.atleast_1d(np.asarray(drawn["reservoir"], dtype=float))
    span = (bounds or {}).get("reservoir")
    if reservoir.size > GRID_POINTS and span is not None and span[0] != span[1]:
        mid, half = (span[0] + span[1]) / 2.0, abs(span[1] - span[0]) / 2.0
        nodes = np.cos(np.pi * (np.arange(GRID_POINTS) + 0.5) / GRID_POINTS)
        grid = tuple(float(c) for c in mid + half * nodes)
        on_grid = _solved(supply, rail_loads, grid)
        # every figure of every rail a column: per rail its trough and ripple at each
        # phase (each smooth in C; the worst phase is taken per trial after, as a kink of
        # the worst trough would slow the interpolation down), then the harmonics' real
        # and imaginary parts; one fit and one evaluation for them all
        columns = np.column_stack(
            [
                np.column_stack(
                    (s.trough_v, s.ripple_vpp, s.harmonics_vpk.real, s.harmonics_vpk.imag)
                )
                for s in on_grid
            ]
        )
        coefficients = cheb.chebfit(nodes, columns, GRID_POINTS - 1)
        values = np.asarray(cheb.chebval((reservoir - mid) / half, coefficients), float)  # (M, T)
        phases, count = on_grid[0].trough_v.shape[1], on_grid[0].harmonics_vpk.shape[1]
        width = 2 * phases + 2 * count
        found = {}
        for r, rail in enumerate(rails):
            mine = values[r * width : (r + 1) * width]
            at = 2 * phases
            spectrum = (mine[at : at + count] + 1j * mine[at + count :]).T
            found[rail] = _spread(
                mine[:phases].T, mine[phases : 2 * phases].T, spectrum, tr.ripple_hz
            )
        return found
    direct = _solve(supply, rail_loads, reservoir)
    return {
        rail: _spread(s.trough_v, s.ripple_vpp, s.harmonics_vpk, tr.ripple_hz)
        for rail, s in zip(rails, direct, strict=True)
    }


def _spread(
    trough: NDArray[np.float64],
    ripple: NDArray[np.float64],
    harmonics: NDArray[np.complex128],
    ripple_hz: float,
) -> SupplySpread:
    """A rail's spread from its trough and ripple at each phase, (T, P), and its
    harmonics, (T, K): the trough and ripple at the worst phase of each trial (the lowest
    trough, as `solve_rails` takes it)."""
    worst = np.argmin(trough, axis=1)[:, None]
    low: NDArray[np.float64] = np.maximum(np.take_along_axis(trough, worst, axis=1)[:, 0], 0.0)
    vpp = np.take_along_axis(ripple, worst, axis=1)[:, 0]
    return SupplySpread(
        {"trough_v": low, "ripple_vpp": vpp},
        (),
        low,
        RippleSpread(ripple_hz, vpp, np.asarray(harmonics, dtype=complex)),
    )


@lru_cache(maxsize=32)
def _solved(
    supply: Supply, loads: tuple[SupplyLoad, ...], grid: tuple[float, ...]
) -> tuple[Solved, ...]:
    """`_solve` on a grid of reservoir values, kept for the next chunk of trials."""
    return _solve(supply, loads, np.array(grid))


def _solve(
    supply: Supply, loads: tuple[SupplyLoad, ...], reservoir: NDArray[np.float64]
) -> tuple[Solved, ...]:
    """Each rail's figures for each reservoir value: the trough and ripple at low line and
    heaviest load at each of the signal's phases (`_spread` takes the worst, as
    `solve_rails` does), and the ripple's spectrum at nominal line with the nominal
    load's mean as a steady current (`solve_rails`'s row for the hum), every rail in one
    batch. As in `solve_rails`, the signal is the first rail's that has one and the
    phases are taken where any rail draws pulses."""
    tr = transformer(supply)
    signal = next((ld.signal_hz for ld in loads if ld.signal_hz is not None), None)
    pulsed = signal is not None and any(ld.heaviest_pulse_a > 0.0 for ld in loads)
    phases = rectifier.PHASES if pulsed else 1
    cycles = 1
    if pulsed and signal is not None:
        cycles = max(rectifier.commensurate(signal, tr.ripple_hz)[1], 1)
    offsets = np.array([2.0 * math.pi * j / (phases * cycles) for j in range(phases)])
    n = reservoir.size
    low, nominal = tr.lines[0], tr.lines[1]
    # per rail: n x phases rows for the trough, then n rows for the spectrum
    peak, capacitance, dc, pulse, phase = [], [], [], [], []
    for load in loads:
        peak += [
            np.full(n * phases, tr.source_peak(low, load.heaviest_a > 0.0)),
            np.full(n, tr.source_peak(nominal, load.nominal_a > 0.0)),
        ]
        capacitance += [np.repeat(reservoir, phases), reservoir]
        dc += [np.full(n * phases, load.heaviest_dc_a), np.full(n, load.nominal_a)]
        pulse += [np.full(n * phases, load.heaviest_pulse_a), np.zeros(n)]
        phase += [np.tile(offsets, n), np.zeros(n)]
    solved = rectifier.solve(
        np.concatenate(peak),
        tr.drop_v,
        tr.winding_ohm,
        np.concatenate(capacitance),
        tr.line_hz,
        np.concatenate(dc),
        np.concatenate(pulse),
        signal if pulsed else None,
        np.concatenate(phase),
        half_wave=tr.half_wave,
    )
    width = n * phases + n
    found = []
    for r in range(len(loads)):
        base = r * width
        troughs = np.asarray(solved.trough_v)[base : base + n * phases].reshape(n, phases)
        ripple = np.asarray(solved.ripple_vpp)[base : base + n * phases].reshape(n, phases)
        harmonics = np.asarray(solved.harmonics_vpk)[base + n * phases : base + width]
        found.append(Solved(troughs, ripple, harmonics))
    return tuple(found)
