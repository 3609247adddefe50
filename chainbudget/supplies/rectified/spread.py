"""A rectified supply's figures over a leading trial axis: the reservoir drawn within its
tolerance, the rectifier solved cycle by cycle for every trial at once (chainbudget/spread).

Notes
-----
The same circuits and corners as `chainbudget.supplies.rectified.circuit.solve_rails`
takes for them, in one batch of `chainbudget.rectifier.solve`, one circuit per rail,
reservoir value and phase (the signal's frequency and whether the pulses are taken are the
supply's, shared by its rails):

- low line and the heaviest load at each relative phase of signal and mains: the trough
  and peak-to-peak ripple (the worst phase, the lowest trough, per trial) and the
  winding's, diodes' and reservoir's currents there;
- high line and the heaviest load at the same phases: the currents and the mean, read at
  the low line's worst phase (as `solve_rails` reads them);
- high line and the idle load as a steady current: the mean (with the one above, what a
  regulator below dissipates from, `HighLine`);
- nominal line and load (its pulses at phase 0): the mean, ``mean_v`` and ``vout_v``,
  which the supplies below take as their parent's mean per trial;
- nominal line with the nominal load's mean as a steady current: the ripple's spectrum
  (the seed of the hum budget).

From those the rail's own figures follow as the check works them out, through the same
code (`chainbudget.supplies.rectified.figures.worst_currents`, `winding_figures`: the
larger of low and high line, a centre-tapped winding's rms of its two rails' currents,
the rms the rating is judged by and its fraction of the rating), and the rules that read
them are drawn per trial as flags (`chainbudget.spread.flags`; the conditions of
`chainbudget.supplies.rectified.rules`): ``supply-collapse``, ``transformer-rating``,
``reservoir-ripple-current`` and ``large-ripple``. The trough is also ``output_min_v``,
as the check JSON carries it. The crest (high line, no load: the open circuit less the
diode drop) and the switch-on inrush ((V_pk - V_d)/R_s) do not depend on the reservoir:
they keep the nominal check's values (the crest is passed on to the supplies below as it
is). The load is the nominal operating point's (the tree as settled for the nominal
parts): the spread does not settle the tree again for each trial.

A centre-tapped (``split``) supply is two such rails, ``name`` and ``name.neg``, each its
own reservoir under its own load. The file gives one ``reservoir`` for both (each rail's
capacitor), so one value is drawn per trial and both rails take it: the two capacitors
move together (a check of the trial, which can hold one value only, gives the same
rails).

Each figure at each phase is a smooth function of the reservoir C, so a chunk of trials
takes them from
`GRID_POINTS` values of C across the part's bounds (Chebyshev nodes) by
their interpolating polynomial, which converges geometrically with the number of nodes for a
function analytic about the interval (Trefethen, Approximation Theory and Approximation
Practice, ch. 8); the complex harmonics are interpolated as their real and imaginary parts.
Under pulsed loads the trough and ripple are interpolated at each relative phase of signal
and mains, each smooth in C, and the worst phase taken per trial after: the worst of them
has a kink where the worst phase changes, which a polynomial follows poorly (there the
ripple jumps from one phase's to another's). The currents at low and high line are
interpolated at each phase the same way and read at the trial's worst phase: within 2e-8
of a direct solve, but for the reservoir's ripple current, within 2e-5 (measured on the
practice and shed amplifiers: the solver's rms quadratures under pulsed loads, the
pulses' corners inside a charging interval, move unevenly with C). Solving each trial's
two circuits at its worst phase directly instead is exact to the solver but, on the
kitchen radio, costs as much as all the chain's networks of the trial together; a
tolerance's figure does not need the fifth digit. Whether a rail collapses is no
smooth function: on the grid a trial collapses where its interpolated trough at some
phase falls to zero (the solver's own test, beside its failing to find a periodic state,
which does not happen above zero); near a collapse the interpolation is poor anyway.
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
from chainbudget.spread.flags import flag_key
from chainbudget.supplies.base import HighLine, RippleSpread, Supply, SupplyLoad, SupplySpread
from chainbudget.supplies.rectified.circuit import Currents, Transformer, transformer
from chainbudget.supplies.rectified.figures import winding_figures, worst_currents
from chainbudget.supplies.rectified.rules import over_rating, ripple_too_large

SPREAD_FIELDS = ("reservoir",)
# Reservoir values solved per chunk of trials (the rest interpolated).
GRID_POINTS = 17
#: The currents of a corner, in `Currents`' order.
CURRENT_KEYS = ("winding_rms_a", "diode_peak_a", "reservoir_ripple_a", "conduction_deg")
#: The rail's own figures the reservoir moves (`winding_figures`' keys less the dc load,
#: which is the nominal check's load).
OWN_KEYS = (
    "winding_rms_a",
    "rms_per_dc",
    "rating_current_a",
    "transformer_load_fraction",
    "diode_peak_a",
    "reservoir_ripple_a",
    "conduction_deg",
)

Array = NDArray[np.float64]


@dataclass(frozen=True)
class Solved:
    """A rail's figures for each reservoir value (or trial), one row each: at low line
    and the heaviest load at each relative phase of signal and mains the trough and ripple,
    V, (n, P); the mean at nominal line and load, V, (n,); the ripple's harmonics at
    nominal line and load, complex V peak, (n, K); whether each low-line circuit collapsed,
    (n, P); the mean at high line under the heaviest load at each phase, V, (n, P), and
    under the idle load, V, (n,); and where solved directly, the currents at low and at
    high line under the heaviest load at each phase, (n, P) each (None: interpolated
    figures, whose currents are interpolated apart, `_current_columns`)."""

    trough_v: Array
    ripple_vpp: Array
    mean_v: Array
    harmonics_vpk: NDArray[np.complex128]
    collapsed: NDArray[np.bool_]
    high_heavy_v: Array
    high_idle_v: Array
    low: Currents | None = None
    high: Currents | None = None

    def columns(self) -> Array:
        """Every smooth real figure a column, (n, W): what the grid interpolates."""
        return np.column_stack(
            (
                self.trough_v,
                self.ripple_vpp,
                self.mean_v[:, None],
                self.harmonics_vpk.real,
                self.harmonics_vpk.imag,
                self.high_heavy_v,
                self.high_idle_v[:, None],
            )
        )

    @classmethod
    def from_columns(cls, values: Array, phases: int, count: int) -> Solved:
        """`columns` read back (interpolated values, (T, W)); a circuit collapses where
        its trough falls to zero (module notes)."""
        trough = values[:, :phases]
        at = 2 * phases
        high = at + 1 + 2 * count
        return cls(
            trough_v=trough,
            ripple_vpp=values[:, phases:at],
            mean_v=values[:, at],
            harmonics_vpk=values[:, at + 1 : at + 1 + count]
            + 1j * values[:, at + 1 + count : high],
            collapsed=trough <= 0.0,
            high_heavy_v=values[:, high : high + phases],
            high_idle_v=values[:, high + phases],
        )


def rectified_spread(
    supply: Supply,
    drawn: Mapping[str, NDArray[np.float64]],
    loads: Mapping[str, SupplyLoad],
    bounds: Mapping[str, tuple[float, float]] | None = None,
) -> dict[str, SupplySpread]:
    """Each rail's figures per trial (module notes), by rail name: the trough and ripple at
    low line and heaviest load (what the rails below and the stages take), the mean at
    nominal line and load, the ripple's spectrum (what the hum takes), the winding's,
    diodes' and reservoir's currents and the rules' flags; ``loads`` is each rail's
    nominal load (one rail, or a split supply's two).

    A batch of more than GRID_POINTS trials takes the trough, ripple, mean and spectrum
    from GRID_POINTS reservoir values across the part's bounds (Chebyshev nodes), solved
    once (cached) and interpolated by their polynomial (the figures are smooth in C; the
    trough within 1 uV of the direct solve, tests/test_spread.py, the harmonics within
    1e-6 of the fundamental, tests/test_spread_hum.py, tests/test_spread_split.py, the mean
    tests/test_spread_rectifier_figures.py), the currents too (within 2e-8, the
    reservoir's ripple current within 2e-5: module notes); a
    smaller batch (a corner, a sensitivity) is solved directly, and a reservoir not drawn
    takes the nominal value's solve, cached. Every rail takes the one drawn reservoir
    (module notes).
    """
    tr = transformer(supply)
    rail_loads = tuple(loads.values())
    if "reservoir" not in drawn:
        solved = _solved(supply, rail_loads, (tr.reservoir_f,))
        return _spreads(supply, tr, loads, solved, _at_worst(solved))
    reservoir = np.atleast_1d(np.asarray(drawn["reservoir"], dtype=float))
    span = (bounds or {}).get("reservoir")
    if reservoir.size > GRID_POINTS and span is not None and span[0] != span[1]:
        mid, half = (span[0] + span[1]) / 2.0, abs(span[1] - span[0]) / 2.0
        nodes = np.cos(np.pi * (np.arange(GRID_POINTS) + 0.5) / GRID_POINTS)
        grid = tuple(float(c) for c in mid + half * nodes)
        on_grid = _solved(supply, rail_loads, grid)
        # every figure of every rail a column, each at each phase (each smooth in C; the
        # worst phase is taken per trial after, as a kink of the worst trough would slow
        # the interpolation down), the harmonics as their real and imaginary parts; one
        # fit and one evaluation for them all
        columns = [s.columns() for s in on_grid]
        columns += [_current_columns(s) for s in on_grid]
        coefficients = cheb.chebfit(nodes, np.column_stack(columns), GRID_POINTS - 1)
        values = np.asarray(cheb.chebval((reservoir - mid) / half, coefficients), float).T
        phases, count = on_grid[0].trough_v.shape[1], on_grid[0].harmonics_vpk.shape[1]
        edges = np.cumsum([0] + [c.shape[1] for c in columns])
        pieces = [values[:, a:b] for a, b in zip(edges[:-1], edges[1:], strict=True)]
        rails = len(on_grid)
        trials = tuple(Solved.from_columns(v, phases, count) for v in pieces[:rails])
        currents = [
            _currents_from_columns(v, np.argmin(s.trough_v, axis=1), phases)
            for v, s in zip(pieces[rails:], trials, strict=True)
        ]
        return _spreads(supply, tr, loads, trials, currents)
    solved = _solve(supply, rail_loads, reservoir)
    return _spreads(supply, tr, loads, solved, _at_worst(solved))


def _pick(values: object, at: NDArray[np.intp]) -> Array:
    """Each row's value at its own column ``at``, (n,) from (n, P)."""
    return np.take_along_axis(np.asarray(values), at[:, None], axis=1)[:, 0]


def _at_worst(solved: tuple[Solved, ...]) -> list[tuple[Currents, Currents]]:
    """Each rail's currents at low and at high line at its worst phase (the lowest trough,
    as `solve_rails` takes it), from a direct solve."""
    found = []
    for s in solved:
        assert s.low is not None and s.high is not None  # a direct solve's
        at = np.argmin(s.trough_v, axis=1)
        low, high = (
            Currents(*(_pick(getattr(c, key), at) for key in CURRENT_KEYS)) for c in (s.low, s.high)
        )
        found.append((low, high))
    return found


def _spreads(
    supply: Supply,
    tr: Transformer,
    loads: Mapping[str, SupplyLoad],
    solved: tuple[Solved, ...],
    currents: list[tuple[Currents, Currents]],
) -> dict[str, SupplySpread]:
    """Every rail's spread from its figures per trial (`Solved`, a row a trial) and its
    currents at low and high line at its worst phase: the trough and ripple at that phase,
    the currents as `chainbudget.supplies.rectified.figures` works them out and the rules'
    flags."""
    worst = {
        rail: worst_currents(low, high) for rail, (low, high) in zip(loads, currents, strict=True)
    }
    found = {}
    rating = supply.optional("reservoir_ripple_rating")
    for rail, s in zip(loads, solved, strict=True):
        at = np.argmin(s.trough_v, axis=1)
        trough = np.maximum(_pick(s.trough_v, at), 0.0)
        vpp = _pick(s.ripple_vpp, at)
        collapsed = np.any(s.collapsed, axis=1)
        own = winding_figures(tr, worst, rail, loads, loads[rail])
        mean = np.maximum(s.mean_v, 0.0)
        figures = {
            "trough_v": trough,
            "output_min_v": trough,
            "ripple_vpp": vpp,
            "mean_v": mean,
            "vout_v": mean,
        }
        figures.update({key: own[key] for key in OWN_KEYS if own[key] is not None})
        flags = {
            flag_key("error", "supply-collapse", rail): collapsed,
            flag_key("warning", "large-ripple", rail): ripple_too_large(trough, vpp, collapsed),
        }
        if tr.rated_a is not None and rail == supply.name:  # the transformer's own rail
            flags[flag_key("warning", "transformer-rating", rail)] = over_rating(
                own["rating_current_a"], tr.rated_a, collapsed
            )
        if rating is not None:
            flags[flag_key("warning", "reservoir-ripple-current", rail)] = over_rating(
                own["reservoir_ripple_a"], rating, collapsed
            )
        # at high line: the crest (no current: the reservoir does not move it), and the
        # means under the heaviest load at the low line's worst phase and under the idle
        high = HighLine(
            np.asarray(tr.crest_v, dtype=float),
            np.maximum(_pick(s.high_heavy_v, at), 0.0),
            np.maximum(s.high_idle_v, 0.0),
        )
        harmonics = np.asarray(s.harmonics_vpk, complex)
        ripple = RippleSpread(tr.ripple_hz, vpp, harmonics, mean, high)
        found[rail] = SupplySpread(figures, (), trough, ripple, flags)
    return found


@lru_cache(maxsize=32)
def _solved(
    supply: Supply, loads: tuple[SupplyLoad, ...], grid: tuple[float, ...]
) -> tuple[Solved, ...]:
    """`_solve` on a grid of reservoir values, kept for the next chunk of trials."""
    return _solve(supply, loads, np.array(grid))


@dataclass(frozen=True)
class _Pulses:
    """The signal the pulses are taken at (None: no pulses) and the relative phases of
    signal and mains, rad, as `solve_rails` takes them: the first rail's signal that has
    one, the phases where any rail draws pulses."""

    signal_hz: float | None
    offsets: NDArray[np.float64]


def _pulses(tr: Transformer, loads: tuple[SupplyLoad, ...]) -> _Pulses:
    signal = next((ld.signal_hz for ld in loads if ld.signal_hz is not None), None)
    pulsed = signal is not None and any(ld.heaviest_pulse_a > 0.0 for ld in loads)
    phases = rectifier.PHASES if pulsed else 1
    cycles = 1
    if pulsed and signal is not None:
        cycles = max(rectifier.commensurate(signal, tr.ripple_hz)[1], 1)
    offsets = np.array([2.0 * math.pi * j / (phases * cycles) for j in range(phases)])
    return _Pulses(signal if pulsed else None, offsets)


def _solve(
    supply: Supply, loads: tuple[SupplyLoad, ...], reservoir: NDArray[np.float64]
) -> tuple[Solved, ...]:
    """Each rail's figures for each reservoir value (module notes), every rail in one
    batch: `solve_rails`'s rows at low and high line under the heaviest load at each of
    the signal's phases (`_pulses`), at nominal line and load, at high line under the idle
    load, and at nominal line with the nominal load's mean as a steady current (the
    spectrum)."""
    tr = transformer(supply)
    pulses = _pulses(tr, loads)
    phases = pulses.offsets.size
    n = reservoir.size
    low, nominal, high = tr.lines
    # per rail: n x phases rows at low line, as many at high line, then n rows at nominal
    # line and load, n for the spectrum, then n at high line and idle
    peak, capacitance, dc, pulse, phase = [], [], [], [], []
    for load in loads:
        heavy = load.heaviest_a > 0.0
        for line in (low, high):
            peak.append(np.full(n * phases, tr.source_peak(line, heavy)))
            capacitance.append(np.repeat(reservoir, phases))
            dc.append(np.full(n * phases, load.heaviest_dc_a))
            pulse.append(np.full(n * phases, load.heaviest_pulse_a))
            phase.append(np.tile(pulses.offsets, n))
        loaded = tr.source_peak(nominal, load.nominal_a > 0.0)
        idle = tr.source_peak(high, load.idle_a > 0.0)
        peak += [np.full(n, loaded), np.full(n, loaded), np.full(n, idle)]
        capacitance += [reservoir, reservoir, reservoir]
        dc += [np.full(n, load.nominal_dc_a), np.full(n, load.nominal_a), np.full(n, load.idle_a)]
        pulse += [np.full(n, load.nominal_pulse_a), np.zeros(n), np.zeros(n)]
        phase += [np.zeros(n), np.zeros(n), np.zeros(n)]
    solved = rectifier.solve(
        np.concatenate(peak),
        tr.drop_v,
        tr.winding_ohm,
        np.concatenate(capacitance),
        tr.line_hz,
        np.concatenate(dc),
        np.concatenate(pulse),
        pulses.signal_hz,
        np.concatenate(phase),
        half_wave=tr.half_wave,
    )
    width = 2 * n * phases + 3 * n

    def phased(values: object, start: int) -> Array:
        return np.asarray(values)[start : start + n * phases].reshape(n, phases)

    def currents(start: int) -> Currents:
        return Currents(*(phased(getattr(solved, key), start) for key in CURRENT_KEYS))

    found = []
    for r in range(len(loads)):
        base = r * width
        at_high, at_mean = base + n * phases, base + 2 * n * phases
        found.append(
            Solved(
                trough_v=phased(solved.trough_v, base),
                ripple_vpp=phased(solved.ripple_vpp, base),
                mean_v=np.asarray(solved.mean_v)[at_mean : at_mean + n],
                harmonics_vpk=np.asarray(solved.harmonics_vpk)[at_mean + n : at_mean + 2 * n],
                collapsed=phased(solved.collapsed, base).astype(bool),
                high_heavy_v=phased(solved.mean_v, at_high),
                high_idle_v=np.asarray(solved.mean_v)[at_mean + 2 * n : at_mean + 3 * n],
                low=currents(base),
                high=currents(at_high),
            )
        )
    return tuple(found)


def _current_columns(solved: Solved) -> Array:
    """A direct solve's currents at low and high line at each phase, (n, 2 x 4 x P): what
    the grid interpolates besides `Solved.columns`."""
    assert solved.low is not None and solved.high is not None  # a direct solve's
    return np.column_stack(
        [getattr(c, key) for c in (solved.low, solved.high) for key in CURRENT_KEYS]
    )


def _currents_from_columns(
    values: Array, worst: NDArray[np.intp], phases: int
) -> tuple[Currents, Currents]:
    """`_current_columns` read back (interpolated, (T, 8P)) at each trial's worst phase."""
    picked = [_pick(values[:, j * phases : (j + 1) * phases], worst) for j in range(8)]
    return Currents(*picked[:4]), Currents(*picked[4:])
