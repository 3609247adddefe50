"""A rectified supply's figures over a leading trial axis: the reservoir drawn within its
tolerance, the rectifier solved cycle by cycle for every trial at once (chainbudget/spread).

Notes
-----
The same circuits and corners as `chainbudget.supplies.rectified.circuit.solve_rails`
takes for them, in one batch of `chainbudget.rectifier.solve`, one circuit per rail,
reservoir value and phase (the signal's frequency and whether the pulses are taken are the
supply's, shared by its rails):

- low line and the heaviest load at each relative phase of signal and mains: the trough
  (the worst phase, the lowest trough, per trial), the peak-to-peak ripple and the
  winding's, diodes' and reservoir's currents (each the largest over the phases, per
  trial: `largest_over_phases`, as `solve_rails` takes them);
- high line and the heaviest load at the same phases: the currents (the largest over
  the phases) and the mean, read at the low line's worst phase;
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
is). The load is what the caller gives: the nominal operating point's (floats, the same
in every trial), or a load per trial (below).

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
interpolated at each phase the same way and the largest over the phases taken per trial:
within 2e-8 of a direct solve on the practice and shed amplifiers, the ripple current
within 1e-6, the diode's peak and the conduction angle within 2e-4 under the heavy pulses
of a guitar amplifier (a peak on a dense grid, refined; a charge the pulses interrupt).
Solving each trial's two circuits at its worst phase directly instead is exact to the
solver but, on the kitchen radio, costs as much as all the chain's networks of the trial
together; a tolerance's figure does not need the fifth digit. Whether a rail collapses is no
smooth function: on the grid a trial collapses where its interpolated trough at some
phase falls to zero (the solver's own test, beside its failing to find a periodic state,
which does not happen above zero); near a collapse the interpolation is poor anyway.

A load per trial: a `SupplyLoad` whose fields are (T,) arrays (``signal_hz`` one value),
as the spread gives it while it settles the power tree per trial
(`chainbudget.spread.settle`), with ``about`` each rail's load as the nominal check has
it. Where each field is one value in every trial (and, given ``about``, that load's) the
load is taken as floats, and the figures are bit for bit those of the float load.
Otherwise each figure F (every column above, at every phase, before the worst phase is
taken) is expanded to second order in the load about x_0, ``about``'s load (without it,
each field's median over the trials; Taylor's expansion):

    F(C, x) = F(C, x_0) + sum_i (a_i d_i + b_i d_i^2) + sum c_ij d_i d_j,  d = x - x_0,

a_i and b_i the parabola through F at x_0 and at x_0 -/+ h_i/2 (Lagrange's three-point
interpolation; the lower end kept at zero for a field at zero, the secant then), h_i/2
`STEP_SHARE` of the field (a field near zero takes `LEAST_SHARE` of the rail's largest),
and c_ij the mixed difference (F(+,+) - F(+,0) - F(0,+) + F(0,0)) / (h_i h_j / 4) of the
two fields one group of rows reads together (the heaviest load's steady part and pulse
peak draw on the same charge between the reservoir's top-ups; so do the nominal's). The
fields are what the rows read: the heaviest load's steady part and pulse peak at both
lines and every phase (``heaviest_dc_a``, ``heaviest_pulse_a``), the nominal's
(``nominal_dc_a``, ``nominal_pulse_a``), the nominal mean as a steady current for the
spectrum (``nominal_a``) and the idle current at high line (``idle_a``); the steady parts
max(mean - peak/pi, 0) are worked out per trial first, so the expansion is in what the
solver reads and never across that clamp. The rows that read a field are solved twice
more (and once with both of a group's fields up), in the same batch of `rectifier.solve`
as the rest, on the reservoir's grid where it is drawn (whatever the number of trials)
or at its one value, and kept (`_solved`): the solves are the same for every batch and
every step of the settling, so they are done once per tree, and a trial's figures do
not depend on the trials beside it (the corners and the Monte Carlo agree). Exact at
x_0; elsewhere off by the third-order terms. Measured (tests/test_spread_rectifier_loads.py),
every field of the nominal load drawn on its own within 5 % per trial (harsher than a
settled tree, whose fields move together): the voltages (trough, mean, the means at high
line) within 7e-6 relative of each trial solved alone, the harmonics within 3.3e-6 of
the fundamental, the ripple, the winding's and diodes' currents and the conduction angle
within 1e-4; the reservoir's rms ripple current within 5e-3, as the solver's rms
quadrature under pulsed loads is not smooth in the load (the pulses' corners move inside
a charging interval, as with C above). On the mains amplifier of
tests/test_spread_output_figures.py the settled tree's clip powers meet the check of
each trial within 7e-7. A field that is zero in some trials and not in others, behind a
winding whose resistance is not known (whose source steps at zero load,
`Transformer.source_peak`), is taken through the loaded source.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping
from dataclasses import dataclass
from functools import lru_cache, partial
from typing import Any

import numpy as np
from numpy.polynomial import chebyshev as cheb
from numpy.typing import NDArray

from chainbudget import rectifier
from chainbudget.spread import aside
from chainbudget.spread.flags import flag_key
from chainbudget.supplies.base import (
    NO_LOAD,
    HighLine,
    RippleSpread,
    Supply,
    SupplyLoad,
    SupplySpread,
)
from chainbudget.supplies.rectified.circuit import (
    Currents,
    Transformer,
    largest_over_phases,
    transformer,
)
from chainbudget.supplies.rectified.figures import winding_figures, worst_currents
from chainbudget.supplies.rectified.rules import over_rating, ripple_too_large
from chainbudget.thresholds import RMS_PER_DC_AMP

SPREAD_FIELDS = ("reservoir",)
# Reservoir values solved per chunk of trials (the rest interpolated).
GRID_POINTS = 17
#: A load that differs from the one it is expanded about by no more than this share of
#: its size is that load (round-off between the check's float path and the trials' arrays).
ROUND_OFF = 1e-12
#: Half the step of a load field's parabola, as a share of the field (module notes).
STEP_SHARE = 0.05
#: A field near zero takes its step from this share of the rail's largest field.
LEAST_SHARE = 0.01
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
    about: Mapping[str, SupplyLoad] | None = None,
) -> dict[str, SupplySpread]:
    """Each rail's figures per trial (module notes), by rail name: the trough and ripple at
    low line and heaviest load (what the rails below and the stages take), the mean at
    nominal line and load, the ripple's spectrum (what the hum takes), the winding's,
    diodes' and reservoir's currents and the rules' flags; ``loads`` is each rail's load
    (one rail, or a split supply's two): floats, one load for every trial, or fields of
    shape (T,), a load per trial (``signal_hz`` a float either way).

    A batch of more than GRID_POINTS trials takes the trough, ripple, mean and spectrum
    from GRID_POINTS reservoir values across the part's bounds (Chebyshev nodes), solved
    once (cached) and interpolated by their polynomial (the figures are smooth in C; the
    trough within 1 uV of the direct solve, tests/test_spread.py, the harmonics within
    1e-6 of the fundamental, tests/test_spread_hum.py, tests/test_spread_split.py, the mean
    tests/test_spread_rectifier_figures.py), the currents too (within 2e-8 to 2e-4:
    module notes); a
    smaller batch (a corner, a sensitivity) is solved directly, and a reservoir not drawn
    takes the nominal value's solve, cached. Every rail takes the one drawn reservoir
    (module notes). A load that differs per trial (from ``about``, each rail's load as
    the nominal check has it, where given; else between the trials) takes every figure to
    second order in each field of the load about ``about`` (else the trials' medians:
    `_loaded_spread`); a load whose every field is one value in every trial and, with
    ``about``, that value (floats, or arrays of equal entries) gives, bit for bit, what
    that load as floats gives.
    """
    tr = transformer(supply)
    if about is not None and any(_differs(loads[rail], about[rail]) for rail in loads):
        return _loaded_spread(supply, tr, drawn, loads, bounds, about)
    steady = {rail: _steady(load) for rail, load in loads.items()}
    if any(load is None for load in steady.values()):
        return _loaded_spread(supply, tr, drawn, loads, bounds, None)
    fixed = {rail: load for rail, load in steady.items() if load is not None}
    signal = _signal(tuple(fixed.values()))
    jobs = tuple(_Job(_Drive.of(load), ALL_GROUPS, r) for r, load in enumerate(fixed.values()))
    if "reservoir" not in drawn:
        solved = _solved(supply, jobs, (tr.reservoir_f,), signal)
        return _spreads(supply, tr, fixed, solved, _largest_currents(solved))
    reservoir = np.atleast_1d(np.asarray(drawn["reservoir"], dtype=float))
    grid = _grid((bounds or {}).get("reservoir"), reservoir.size)
    if grid is not None:
        nodes, mid, half = grid
        on_grid = _solved(supply, jobs, tuple(float(c) for c in mid + half * nodes), signal)
        # every figure of every rail a column, each at each phase (each smooth in C; the
        # worst phase is taken per trial after, as a kink of the worst trough would slow
        # the interpolation down), the harmonics as their real and imaginary parts; one
        # fit and one evaluation for them all
        columns = [s.columns() for s in on_grid]
        columns += [_current_columns(s) for s in on_grid]
        coefficients = cheb.chebfit(nodes, np.column_stack(columns), GRID_POINTS - 1)
        values = _chebyshev_series((reservoir - mid) / half, coefficients)
        phases, count = on_grid[0].trough_v.shape[1], on_grid[0].harmonics_vpk.shape[1]
        edges = np.cumsum([0] + [c.shape[1] for c in columns])
        pieces = [values[:, a:b] for a, b in zip(edges[:-1], edges[1:], strict=True)]
        rails = len(on_grid)
        trials = tuple(Solved.from_columns(v, phases, count) for v in pieces[:rails])
        currents = [_currents_from_columns(v, phases) for v in pieces[rails:]]
        return _spreads(supply, tr, fixed, trials, currents)
    solved = _solve(supply, jobs, reservoir, signal)
    return _spreads(supply, tr, fixed, solved, _largest_currents(solved))


def _chebyshev_series(x: Array, coefficients: NDArray[np.floating[Any]]) -> Array:
    """sum_k c_k T_k(x) for every trial (rows, from ``x`` (T,) in [-1, 1]) and every column
    of ``coefficients`` (K, M): (T, M). T_k from the three-term recurrence T_0 = 1,
    T_1 = x, T_k = 2x T_(k-1) - T_(k-2) (Abramowitz & Stegun, Handbook of Mathematical
    Functions, 22.7.4; |T_k| <= 1 on the interval, so the recurrence is stable); the sum
    over k one row at a time in order, so that a trial's values are the same bits in any
    batch (a BLAS matrix product blocks its sums by the batch's size)."""
    x = np.asarray(x, dtype=float).reshape(-1)
    basis = np.empty((x.size, coefficients.shape[0]))
    basis[:, 0] = 1.0
    if coefficients.shape[0] > 1:
        basis[:, 1] = x
    for k in range(2, coefficients.shape[0]):
        basis[:, k] = 2.0 * x * basis[:, k - 1] - basis[:, k - 2]
    return np.einsum("tk,km->tm", basis, coefficients)


def _grid(
    span: tuple[float, float] | None, trials: int
) -> tuple[NDArray[np.float64], float, float] | None:
    """The Chebyshev nodes on [-1, 1] and the reservoir's middle and half-width, for a batch
    of more trials than GRID_POINTS over a bound of some width (None: solve directly)."""
    if trials <= GRID_POINTS or span is None or span[0] == span[1]:
        return None
    mid, half = (span[0] + span[1]) / 2.0, abs(span[1] - span[0]) / 2.0
    return np.cos(np.pi * (np.arange(GRID_POINTS) + 0.5) / GRID_POINTS), mid, half


def _differs(load: SupplyLoad, about: SupplyLoad) -> bool:
    """Whether some trial's load differs from ``about`` beyond round-off (`ROUND_OFF` of
    the larger of its fields)."""
    size = max(abs(float(getattr(about, key))) for key in LOAD_KEYS)
    gaps = (np.abs(np.asarray(getattr(load, key)) - getattr(about, key)) for key in LOAD_KEYS)
    return any(bool(np.any(gap > ROUND_OFF * size)) for gap in gaps)


def _steady(load: SupplyLoad) -> SupplyLoad | None:
    """The load as floats where each of its fields is one value in every trial (the load
    itself where they are floats already), None where one differs between trials."""
    values = {key: np.asarray(getattr(load, key), dtype=float) for key in LOAD_KEYS}
    if all(v.ndim == 0 for v in values.values()):
        return load
    if any(v.size > 1 and np.any(v != v.reshape(-1)[0]) for v in values.values()):
        return None
    one = {key: float(v.reshape(-1)[0]) for key, v in values.items()}
    return SupplyLoad(signal_hz=load.signal_hz, **one)


def _loaded_spread(
    supply: Supply,
    tr: Transformer,
    drawn: Mapping[str, NDArray[np.float64]],
    loads: Mapping[str, SupplyLoad],
    bounds: Mapping[str, tuple[float, float]] | None,
    about: Mapping[str, SupplyLoad] | None,
) -> dict[str, SupplySpread]:
    """Each rail's figures per trial under a load that differs between trials (module
    notes, "A load per trial"): every figure F to second order in each field x_i the rows
    read, about the load ``about`` gives for the rail (the nominal check's; without it,
    each field's median over the trials), F(C, x) = F(C, x_0) + sum_i (a_i d_i + b_i d_i^2)
    + sum c_ij d_i d_j with d_i = x_i - x_0,i (Taylor's expansion to second order), a_i and
    b_i the parabola through F at x_0 and at x_0 -/+ h_i/2 (`_parabola`), h_i/2 =
    `STEP_SHARE` of the field, c_ij the mixed difference of the two fields a group of rows
    reads together (the heaviest load's steady part and pulses; the nominal's),
    (F(+,+) - F(+,0) - F(0,+) + F(0,0)) / (h_i h_j / 4): the rows that read x_i solved
    twice more (and once with both of a group's fields up), in the same batch as the rest, on
    the reservoir's grid where it is drawn (else at its nominal C), and kept for the next
    batch (`_solved`). The same solves for every batch, so a trial's figures do not depend
    on the others beside it."""
    trials = max(
        [np.size(getattr(ld, key)) for ld in loads.values() for key in LOAD_KEYS]
        + ([np.size(drawn["reservoir"])] if "reservoir" in drawn else [])
    )
    signal = _signal(tuple(loads.values()))
    reservoir = np.broadcast_to(
        np.asarray(drawn.get("reservoir", tr.reservoir_f), dtype=float).reshape(-1), (trials,)
    )
    middle, terms, ends, crosses = [], [], [], []
    for r, (rail, load) in enumerate(loads.items()):
        drive = _Drive.of(load)
        per_trial = {k: np.broadcast_to(drive.field(k), (trials,)) for k in DRIVE_FIELDS}
        if about is not None:
            centre = _Drive.of(about[rail])
        else:
            median = {k: float(np.median(v)) for k, v in per_trial.items()}
            loaded = {k: bool(np.any(getattr(drive, k))) for k in LOADED_FIELDS}
            centre = _Drive(**median, **loaded)
        size = max(abs(float(getattr(centre, k))) for k in DRIVE_FIELDS)
        middle.append(_Job(centre, ALL_GROUPS, r))
        for group, keys in GROUPS.items():
            uppers = {}
            for key in keys:
                x0 = float(getattr(centre, key))
                half = STEP_SHARE * max(abs(x0), LEAST_SHARE * size)
                below, above = max(x0 - half, 0.0), x0 + half
                ends += [
                    _Job(dataclasses.replace(centre, **{key: below}), (group,), r),
                    _Job(dataclasses.replace(centre, **{key: above}), (group,), r),
                ]
                # (rail, the two ends' jobs, their offsets from x_0, d_i per trial)
                terms.append((r, len(ends) - 2, below - x0, above - x0, per_trial[key] - x0))
                uppers[key] = (len(ends) - 1, above, above - x0, per_trial[key] - x0)
            if len(uppers) == 2:  # the cross term of a group's two fields
                (i, x_i, h_i, d_i), (j, x_j, h_j, d_j) = uppers.values()
                up = dataclasses.replace(centre, **dict(zip(uppers, (x_i, x_j), strict=True)))
                ends.append(_Job(up, (group,), r))
                crosses.append((r, len(ends) - 1, i, j, h_i * h_j, d_i * d_j))
    jobs = tuple(middle + ends)
    rails = len(middle)
    grid = _grid((bounds or {}).get("reservoir"), GRID_POINTS + 1)
    if "reservoir" in drawn and grid is not None:  # on the grid, interpolated to each C
        _, mid, half_width = grid
        on_grid, coefficients = _fitted(supply, jobs, (mid, half_width), signal)
        values = _chebyshev_series((reservoir - mid) / half_width, coefficients)
    else:  # one C in every trial (the nominal, or a drawn one with no width)
        at_one = _solved(supply, jobs, (float(reservoir[0]),), signal)
        stacked = np.column_stack([_all_columns(s) for s in at_one])
        values = np.broadcast_to(stacked, (trials, stacked.shape[1]))
        on_grid = at_one
    width = values.shape[1] // len(jobs)
    block = [values[:, j * width : (j + 1) * width] for j in range(len(jobs))]
    combined = [np.array(block[r]) for r in range(rails)]
    for r, lo, d_lo, d_hi, offset in terms:
        a, b = _parabola(block[r], block[rails + lo], block[rails + lo + 1], d_lo, d_hi)
        d = offset[:, None]
        combined[r] += a * d + b * d * d
    for r, both, i, j, area, product in crosses:
        mixed = (block[rails + both] - block[rails + i] - block[rails + j] + block[r]) / area
        combined[r] += mixed * product[:, None]
    phases, count = on_grid[0].trough_v.shape[1], on_grid[0].harmonics_vpk.shape[1]
    own = on_grid[0].columns().shape[1]
    solved = tuple(Solved.from_columns(v[:, :own], phases, count) for v in combined)
    currents = [_currents_from_columns(v[:, own:], phases) for v in combined]
    return _spreads(supply, tr, loads, solved, currents)


def _parabola(
    at_0: Array, at_lo: Array, at_hi: Array, d_lo: float, d_hi: float
) -> tuple[Array, Array]:
    """The coefficients a, b of F(x_0 + d) = F(x_0) + a d + b d^2 through the three points
    at d = 0, d_lo < 0 and d_hi > 0 (Lagrange's interpolation; a is the central difference
    where d_lo = -d_hi). Where the lower end was kept at zero (d_lo = 0: a field at zero),
    the secant to the upper end alone, b = 0."""
    if d_lo == 0.0:
        return (at_hi - at_0) / d_hi, np.zeros_like(at_0)
    slope_hi = (at_hi - at_0) / d_hi
    slope_lo = (at_lo - at_0) / d_lo
    b = (slope_hi - slope_lo) / (d_hi - d_lo)
    return slope_hi - b * d_hi, b


def _all_columns(solved: Solved) -> Array:
    """`Solved.columns` then `_current_columns`: a job's block of the fit."""
    return np.column_stack((solved.columns(), _current_columns(solved)))


def _pick(values: object, at: NDArray[np.intp]) -> Array:
    """Each row's value at its own column ``at``, (n,) from (n, P)."""
    return np.take_along_axis(np.asarray(values), at[:, None], axis=1)[:, 0]


def _largest_currents(solved: tuple[Solved, ...]) -> list[tuple[Currents, Currents]]:
    """Each rail's currents at low and at high line, each the largest over the phases (as
    `solve_rails` takes them: `largest_over_phases`), from a direct solve."""
    found = []
    for s in solved:
        assert s.low is not None and s.high is not None  # a direct solve's
        low, high = (
            largest_over_phases(*(getattr(c, key) for key in CURRENT_KEYS)) for c in (s.low, s.high)
        )
        found.append((low, high))
    return found


def _own_figures(
    tr: Transformer, worst: Mapping[str, Currents], rail: str, loads: Mapping[str, SupplyLoad]
) -> dict[str, Any]:
    """`winding_figures` where the heaviest load may differ per trial: its currents as
    there, and the figures it divides by the dc load (the heaviest; a centre-tapped
    winding's the mean of its two rails') per trial, as it works them out (rms over dc,
    the rule of thumb's rms where no winding resistance is known, the rating's fraction;
    rms over dc None unless every trial has a dc load, as the check's is None without)."""
    heaviest = {name: np.asarray(ld.heaviest_a, dtype=float) for name, ld in loads.items()}
    if all(h.ndim == 0 for h in heaviest.values()):
        return winding_figures(tr, worst, rail, loads, loads[rail])
    dc = sum(heaviest.values()) / len(loads) if tr.split else heaviest[rail]
    own = winding_figures(tr, worst, rail, dict.fromkeys(loads, NO_LOAD), NO_LOAD)
    rms = own["winding_rms_a"]
    judged = rms if tr.winding_known else RMS_PER_DC_AMP * dc
    own.update(
        dc_load_a=dc,
        rms_per_dc=rms / dc if np.all(dc > 0.0) else None,
        rating_current_a=judged,
        transformer_load_fraction=None if tr.rated_a is None else judged / tr.rated_a,
    )
    return own


def _spreads(
    supply: Supply,
    tr: Transformer,
    loads: Mapping[str, SupplyLoad],
    solved: tuple[Solved, ...],
    currents: list[tuple[Currents, Currents]],
) -> dict[str, SupplySpread]:
    """Every rail's spread from its figures per trial (`Solved`, a row a trial) and its
    currents at low and high line (each the largest over the phases): the trough at its
    worst phase, the ripple the largest over them, the currents as
    `chainbudget.supplies.rectified.figures` works them out and the rules' flags."""
    worst = {
        rail: worst_currents(low, high) for rail, (low, high) in zip(loads, currents, strict=True)
    }
    found = {}
    rating = supply.optional("reservoir_ripple_rating")
    for rail, s in zip(loads, solved, strict=True):
        at = np.argmin(s.trough_v, axis=1)
        trough = np.maximum(_pick(s.trough_v, at), 0.0)
        vpp = np.max(s.ripple_vpp, axis=1)  # the largest over the phases, as the check's
        collapsed = np.any(s.collapsed, axis=1)
        own = _own_figures(tr, worst, rail, loads)
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


#: The load's fields (`SupplyLoad`, A).
LOAD_KEYS = ("idle_a", "nominal_a", "heaviest_a", "nominal_pulse_a", "heaviest_pulse_a")
#: What each group of a rail's rows reads of its load (`_Drive`): the heaviest load's at
#: low and high line at each phase, the nominal load's, the nominal mean as a steady
#: current (the spectrum), the idle current at high line.
GROUPS: dict[str, tuple[str, ...]] = {
    "heavy": ("heavy_dc", "heavy_pulse"),
    "nominal": ("nominal_dc", "nominal_pulse"),
    "spectrum": ("nominal_mean",),
    "idle": ("idle",),
}
ALL_GROUPS = tuple(GROUPS)
DRIVE_FIELDS = tuple(key for keys in GROUPS.values() for key in keys)
LOADED_FIELDS = ("heavy_loaded", "nominal_loaded", "idle_loaded")


@dataclass(frozen=True)
class _Drive:
    """What a rail's rows read of its load (A; `_solve`): the heaviest load's steady part
    and its pulses' peak (low and high line at each phase), the nominal load's (nominal
    line), the nominal mean as a steady current (the spectrum), the idle current (high
    line), and whether the heaviest, nominal and idle loads are loads at all (the source
    behind a winding not known, `Transformer.source_peak`). Floats, or arrays of one
    value a row of reservoir values (a direct solve of trials under their own loads)."""

    heavy_dc: Any
    heavy_pulse: Any
    nominal_dc: Any
    nominal_pulse: Any
    nominal_mean: Any
    idle: Any
    heavy_loaded: Any
    nominal_loaded: Any
    idle_loaded: Any

    @classmethod
    def of(cls, load: SupplyLoad) -> _Drive:
        """A load's, as `solve_rails` reads it: a load of floats through its own properties
        (the check's numbers bit for bit), one of arrays element-wise."""
        if all(np.ndim(getattr(load, key)) == 0 for key in LOAD_KEYS):
            return cls(
                load.heaviest_dc_a,
                load.heaviest_pulse_a,
                load.nominal_dc_a,
                load.nominal_pulse_a,
                load.nominal_a,
                load.idle_a,
                load.heaviest_a > 0.0,
                load.nominal_a > 0.0,
                load.idle_a > 0.0,
            )
        a = {key: np.asarray(getattr(load, key), dtype=float) for key in LOAD_KEYS}
        return cls(
            np.maximum(a["heaviest_a"] - a["heaviest_pulse_a"] / math.pi, 0.0),
            a["heaviest_pulse_a"],
            np.maximum(a["nominal_a"] - a["nominal_pulse_a"] / math.pi, 0.0),
            a["nominal_pulse_a"],
            a["nominal_a"],
            a["idle_a"],
            a["heaviest_a"] > 0.0,
            a["nominal_a"] > 0.0,
            a["idle_a"] > 0.0,
        )

    def field(self, key: str) -> Array:
        return np.asarray(getattr(self, key), dtype=float)


@dataclass(frozen=True)
class _Job:
    """Rows of one batch: a rail's load (``drive``) solved for the groups of rows
    ``groups`` (`GROUPS`); the figures of groups not solved are those of job ``rail`` (its
    rail's own, which solves them all and comes first)."""

    drive: _Drive
    groups: tuple[str, ...]
    rail: int


@lru_cache(maxsize=32)
def _fitted(
    supply: Supply, jobs: tuple[_Job, ...], span: tuple[float, float], signal: float | None
) -> tuple[tuple[Solved, ...], Array]:
    """`_solved` on the reservoir's Chebyshev grid about ``span`` (its middle and
    half-width, `_grid`) and every job's columns (`_all_columns`, side by side) fitted by
    their interpolating polynomial: kept for the next batch and the next settling step."""
    nodes = np.cos(np.pi * (np.arange(GRID_POINTS) + 0.5) / GRID_POINTS)  # as `_grid`
    mid, half_width = span
    on_grid = _solved(supply, jobs, tuple(float(c) for c in mid + half_width * nodes), signal)
    blocks = np.column_stack([_all_columns(s) for s in on_grid])
    return on_grid, np.asarray(cheb.chebfit(nodes, blocks, GRID_POINTS - 1), dtype=float)


@lru_cache(maxsize=32)
def _solved(
    supply: Supply, jobs: tuple[_Job, ...], grid: tuple[float, ...], signal: float | None
) -> tuple[Solved, ...]:
    """`_solve` on a grid of reservoir values, kept for the next chunk of trials."""
    return _solve(supply, jobs, np.array(grid), signal)


def _signal(loads: tuple[SupplyLoad, ...]) -> float | None:
    """The signal the pulses are taken at, None where none are, as `solve_rails` takes it:
    the first rail's signal that has one, where any rail draws pulses (in any trial)."""
    signal = next((ld.signal_hz for ld in loads if ld.signal_hz is not None), None)
    pulsed = any(np.any(np.asarray(ld.heaviest_pulse_a) > 0.0) for ld in loads)
    return signal if signal is not None and pulsed else None


def _solve(
    supply: Supply, jobs: tuple[_Job, ...], reservoir: NDArray[np.float64], signal: float | None
) -> tuple[Solved, ...]:
    """Each job's figures for each reservoir value (module notes), every job in one batch:
    `solve_rails`'s rows at low and high line under the heaviest load at each of the
    signal's relative phases (``signal`` None: no pulses, one phase), at nominal line and
    load, at nominal line with the nominal load's mean as a steady current (the
    spectrum), and at high line under the idle load; a job whose ``groups`` leave some
    out takes those figures from its rail's job."""
    tr = transformer(supply)
    phases = rectifier.PHASES if signal is not None else 1
    cycles = 1
    if signal is not None:
        cycles = max(rectifier.commensurate(signal, tr.ripple_hz)[1], 1)
    offsets = np.array([2.0 * math.pi * j / (phases * cycles) for j in range(phases)])
    n = reservoir.size
    low, nominal, high = tr.lines
    peak, capacitance, dc, pulse, phase = [], [], [], [], []
    starts: list[dict[str, int]] = []
    rows = 0

    def add(line: float, loaded: object, steady: object, crest: object, at: Array) -> None:
        nonlocal rows
        each = at.size // n  # rows per reservoir value
        row = np.broadcast_to(np.asarray(loaded), (n,))
        peak.append(
            np.repeat(np.where(row, tr.source_peak(line, True), tr.source_peak(line, False)), each)
        )
        capacitance.append(np.repeat(reservoir, each))
        dc.append(np.repeat(np.broadcast_to(np.asarray(steady, dtype=float), (n,)), each))
        pulse.append(np.repeat(np.broadcast_to(np.asarray(crest, dtype=float), (n,)), each))
        phase.append(at)
        rows += at.size

    # per job: n x phases rows at low line, as many at high line, then n rows at nominal
    # line and load, n for the spectrum, then n at high line and idle (those it solves)
    for job in jobs:
        d, start = job.drive, {}
        if "heavy" in job.groups:
            start["heavy"] = rows
            for line in (low, high):
                add(line, d.heavy_loaded, d.heavy_dc, d.heavy_pulse, np.tile(offsets, n))
        if "nominal" in job.groups:
            start["nominal"] = rows
            add(nominal, d.nominal_loaded, d.nominal_dc, d.nominal_pulse, np.zeros(n))
        if "spectrum" in job.groups:
            start["spectrum"] = rows
            add(nominal, d.nominal_loaded, d.nominal_mean, 0.0, np.zeros(n))
        if "idle" in job.groups:
            start["idle"] = rows
            add(high, d.idle_loaded, d.idle, 0.0, np.zeros(n))
        starts.append(start)
    solved = _rows_solved(
        tr,
        signal,
        np.concatenate(peak),
        np.concatenate(capacitance),
        np.concatenate(dc),
        np.concatenate(pulse),
        np.concatenate(phase),
    )

    def phased(values: object, start: int) -> Array:
        return np.asarray(values)[start : start + n * phases].reshape(n, phases)

    def single(values: object, start: int) -> Array:
        return np.asarray(values)[start : start + n]

    def currents(start: int) -> Currents:
        return Currents(*(phased(getattr(solved, key), start) for key in CURRENT_KEYS))

    parts: list[dict[str, Any]] = []
    for start in starts:
        part: dict[str, Any] = {}
        if "heavy" in start:
            base, at_high = start["heavy"], start["heavy"] + n * phases
            part.update(
                trough_v=phased(solved.trough_v, base),
                ripple_vpp=phased(solved.ripple_vpp, base),
                collapsed=phased(solved.collapsed, base).astype(bool),
                high_heavy_v=phased(solved.mean_v, at_high),
                low=currents(base),
                high=currents(at_high),
            )
        if "nominal" in start:
            part["mean_v"] = single(solved.mean_v, start["nominal"])
        if "spectrum" in start:
            part["harmonics_vpk"] = single(solved.harmonics_vpk, start["spectrum"])
        if "idle" in start:
            part["high_idle_v"] = single(solved.mean_v, start["idle"])
        parts.append(part)
    return tuple(Solved(**(parts[job.rail] | part)) for job, part in zip(jobs, parts, strict=True))


#: Rows from which `_rows_solved` gives half of them to a forked child.
SPLIT_ROWS = 512


def _rows_solved(
    tr: Transformer,
    signal: float | None,
    peak: Array,
    capacitance: Array,
    dc: Array,
    pulse: Array,
    phase: Array,
) -> rectifier.SteadyState:
    """`rectifier.solve` of rows that are circuits of their own (each row's source peak,
    reservoir, steady and pulsed load and phase): where there are `SPLIT_ROWS` or more and
    the platform forks, the second half in a forked child beside the first
    (`chainbudget.spread.aside.Aside`). The grid's solves (`_fitted`: 17 reservoir values,
    each at low and high line under every phase of the pulses) are the spread's one long
    piece of work before its trials can start, about 3 s of the practice amplifier's run
    for a tone at the band's low edge, on one core. Each row is a circuit of its own, so
    the figures are one solve's to its root finding's tolerance (the conduction's ends
    to 1e-10 rad, `rectifier._ROOT_XTOL`: tests/test_rectifier_rows_split.py); on the
    practice and shed amplifiers the spread JSON moved by at most 4e-15 relative in a
    figure, 1.6e-13 in a sensitivity share (a ratio of differences)."""

    def solved(rows: slice) -> rectifier.SteadyState:
        return rectifier.solve(
            peak[rows],
            tr.drop_v,
            tr.winding_ohm,
            capacitance[rows],
            tr.line_hz,
            dc[rows],
            pulse[rows],
            signal,
            phase[rows],
            half_wave=tr.half_wave,
        )

    count = peak.size
    if count < SPLIT_ROWS or not aside.can_fork():
        return solved(slice(0, count))
    later = aside.Aside(partial(solved, slice(count // 2, count)))
    first = solved(slice(0, count // 2))
    second = later.result()
    rows: dict[str, Any] = {  # each row's figures in order; the frequencies are shared
        f.name: np.concatenate([getattr(first, f.name), getattr(second, f.name)])
        for f in dataclasses.fields(first)
        if isinstance(getattr(first, f.name), np.ndarray)
    }
    return dataclasses.replace(first, **rows)


def _current_columns(solved: Solved) -> Array:
    """A direct solve's currents at low and high line at each phase, (n, 2 x 4 x P): what
    the grid interpolates besides `Solved.columns`."""
    assert solved.low is not None and solved.high is not None  # a direct solve's
    return np.column_stack(
        [getattr(c, key) for c in (solved.low, solved.high) for key in CURRENT_KEYS]
    )


def _currents_from_columns(values: Array, phases: int) -> tuple[Currents, Currents]:
    """`_current_columns` read back (interpolated, (T, 8P)): each current the largest
    over the phases (`largest_over_phases`), at low line and at high line."""
    each = [values[:, j * phases : (j + 1) * phases] for j in range(8)]
    return largest_over_phases(*each[:4]), largest_over_phases(*each[4:])
