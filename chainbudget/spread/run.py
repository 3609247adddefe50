"""The Monte Carlo of a chain over its parts' tolerances, its corner worst case and the
sensitivity of every figure to every part.

Notes
-----
Trials: each drawn part independently and uniformly within its bounds (beta uniformly in
log), from ``numpy.random.default_rng(seed)`` (PCG64), drawn chunk by chunk in trial
order so the same seed gives the same trials whatever the chunk size. Each chunk is one
batched solve (`chainbudget.spread.evaluate`).

Sensitivity: each part alone at its two bounds, the others at nominal. With the figure
linear in the part over its range, a uniform draw contributes variance D_i^2 / 12 (D_i
the figure's change from the low to the high bound; the variance of a uniform
distribution, any probability text); a part's share is D_i^2 / sum_j D_j^2 (first-order
variance decomposition, the "delta method"). Beta's log-uniform draw is uniform in log
beta, where the same argument holds.

Corner worst case: the signs of D_i give, for each figure, the corner that raises it
most and the one that lowers it most, under the linear model (2 corners instead of 2^n).
Each corner is then confirmed: every single part is flipped to its other bound, and the
flip that carries the figure furthest is kept, until none does (a coordinate search over
the vertices; exact for a figure monotonic in each part). Where several single flips each
carry it further, all of them at once are tried too and kept if that goes further still:
an interaction that turns several parts' slopes round at the far vertex is undone in one
round, not one part a round (`MAX_CONFIRM_ROUNDS` would otherwise stop it short). A
noise figure flips only the parts that move it one at a time (`_moving`): the rest leave
it where it is at every vertex (on the busking amp that spares about 8 % of the first
round's rows). A figure that is not monotonic (the output stage's THD against its
emitter resistors: least near Oliver's optimum I_q R_E = V_T) may reach further inside
the bounds; where the trials go beyond the corners found, their extremes stand for the
worst case instead. A corner row is asked only for its own figure: the rows are solved
step by step (`Evaluator.steps_of`), each with the solves that step needs (a supply's
figure needs none of the chain's networks, a node's gain no held control setting), so
confirming a few thousand rows costs a fraction of as many trials. The corner and
one-at-a-time rows differ from one another in a part or two: each network is assembled
and solved once per distinct set of its element values among them
(`chainbudget.network.shared_rows`; the same bits as every row solved).
"""

from __future__ import annotations

import math
import sys
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from functools import partial

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget import Budget, compute
from chainbudget.budget.supplies import settle
from chainbudget.chainfile import Chain, ChainError
from chainbudget.spread.aside import Aside
from chainbudget.spread.evaluate import WORKERS, Evaluator, Threshold, failing
from chainbudget.spread.parts import HeldPart, Part, chain_parts

# Trials drawn (and reported to the progress bar) at a time; the evaluator solves them in
# smaller batches over the frequency axis (`chainbudget.spread.evaluate.CHUNK_POINTS`).
CHUNK_TRIALS = 8192
# Every figure's trials are kept for the percentiles (8 bytes a figure a trial): past this
# count the run is refused rather than left to exhaust memory.
MAX_TRIALS = 1_000_000
PERCENTILES = (("p1", 1.0), ("p50", 50.0), ("p99", 99.0))
# A figure whose parts move it by less than this fraction of itself is not ranked.
STILL_RTOL = 1e-9
# Corner confirmation rounds at most (each flips every part once).
MAX_CONFIRM_ROUNDS = 8
# Severities in rising order (a code drawn at several is shown at its worst).
SEVERITY_RANK = {"note": 0, "warning": 1, "error": 2}


class SpreadError(ValueError, ChainError):
    """A spread that cannot be run as asked (one line, exit status 2)."""


@dataclass(frozen=True)
class Sensitivity:
    figure: str
    part: str
    share: float


@dataclass(frozen=True)
class Crossing:
    """A figure whose spread crosses a rule's threshold: the trials that cross, the part
    that moves it most toward the threshold and the tolerance of that part that would keep
    the corner inside (None: no tolerance of that part alone does)."""

    threshold: Threshold
    nominal: float
    corner: float
    share_failing: float
    part: str
    tolerance: str
    tolerance_needed: str | None


@dataclass(frozen=True)
class SpreadResult:
    trials: int
    seed: int
    parts: tuple[Part, ...]
    held: tuple[HeldPart, ...]
    nominal: dict[str, float]
    samples: dict[str, NDArray[np.float64]]
    stats: dict[str, dict[str, float]]
    corners: dict[str, tuple[float, float]]
    sensitivity: list[Sensitivity]
    yield_all: float
    yield_by_code: dict[str, float]
    severities: dict[str, str]
    crossings: list[Crossing]
    nominal_codes: tuple[str, ...]
    seconds: float
    #: The nominal check's safety cautions (mains, loudness, heat), shown with the spread.
    cautions: tuple[str, ...] = ()
    extra: dict[str, object] = field(default_factory=dict)
    #: Each figure the check leaves undefined (null) in some trials, and the share of the
    #: trials in which it is: its statistics and samples are over the others.
    undefined: dict[str, float] = field(default_factory=dict)

    def codes_not_spread(self) -> list[str]:
        """Codes of the nominal check's findings the spread does not evaluate per trial."""
        return [c for c in self.nominal_codes if c not in self.yield_by_code]


def _stats(values: NDArray[np.float64]) -> dict[str, float]:
    found = {name: float(np.percentile(values, q)) for name, q in PERCENTILES}
    found["min"], found["max"] = float(values.min()), float(values.max())
    return found


def _one_at_a_time(n: int) -> NDArray[np.float64]:
    """2n rows of positions: part i at its low bound (row 2i), then its high (2i + 1)."""
    rows = np.full((2 * n, n), 0.5)
    rows[0::2][np.arange(n), np.arange(n)] = 0.0
    rows[1::2][np.arange(n), np.arange(n)] = 1.0
    return rows


def _distinct(
    evaluate: Evaluator, rows: NDArray[np.float64], steps: frozenset[str] | None = None
) -> dict[str, NDArray[np.float64]]:
    """``evaluate(rows, steps=steps)``, each distinct row solved once (many figures share
    a corner)."""
    unique, inverse = np.unique(rows, axis=0, return_inverse=True)
    values = evaluate(unique, steps=steps, shared=True)
    return {path: v[inverse.reshape(-1)] for path, v in values.items()}


def _own_values(
    evaluate: Evaluator, rows: NDArray[np.float64], owners: list[str]
) -> NDArray[np.float64]:
    """Figure ``owners[i]`` at ``rows[i]``: the rows of each step of the evaluation
    (`Evaluator.steps_of`) solved together, with that step's solves only."""
    found = np.empty(len(rows))
    steps = evaluate.steps_of
    groups: dict[str, list[int]] = {}
    for i, path in enumerate(owners):
        groups.setdefault(steps[path], []).append(i)
    for step, members in groups.items():
        index = np.array(members)
        values = _distinct(evaluate, rows[index], frozenset((step,)))
        for j, i in enumerate(members):
            found[i] = values[owners[i]][j]
    return found


def _moving(one_at_a_time: NDArray[np.float64], nominal: float, step: str) -> NDArray[np.bool_]:
    """The parts whose flips a figure's corner search tries: for a noise figure, those
    that move it at all one at a time (at either bound, beyond the rounding the search
    tells a better vertex by): a generator's noise reaches a node through the stages
    before it and the one after, and a part elsewhere leaves it exactly where it is at
    every vertex. Every part for any other figure: one held at a floor at the nominal
    parts (an even harmonic of a symmetric pair at -200 dB) hides a part's effect one at
    a time that shows at a vertex where another part has lifted it."""
    if step != "noise":
        return np.ones(one_at_a_time.size // 2, dtype=bool)
    low, high = one_at_a_time[0::2], one_at_a_time[1::2]
    moved = np.maximum(np.abs(low - nominal), np.abs(high - nominal))
    return np.asarray(moved > 1e-12 * (1.0 + abs(nominal)))


def _further(got: NDArray[np.float64], best: float, side: int) -> NDArray[np.bool_]:
    """Which values carry a figure further than ``best``: lower on side 0, higher on
    side 1, by more than the rounding of the solves (rtol 1e-12). A figure undefined at
    a vertex (NaN) carries it nowhere; one at an infinite limit (a level of zero in dB)
    goes no further than that limit."""
    beyond = got < best if side == 0 else got > best
    # the rounding scale of a finite value is its own; an infinite one is beyond any
    # finite best by more than that best's
    scale = np.where(np.isfinite(got), np.abs(got), abs(best))
    with np.errstate(invalid="ignore"):  # inf - inf: no further
        return np.asarray(beyond & (np.abs(got - best) > 1e-12 * (1.0 + scale)))


def _corners(
    evaluate: Evaluator,
    paths: list[str],
    deltas: dict[str, NDArray[np.float64]],
    moving: dict[str, NDArray[np.bool_]],
    n: int,
) -> dict[str, tuple[float, float]]:
    """Each figure's corner worst case (low, high) from its sensitivities' signs, confirmed
    by single flips of the parts that move it (``moving``: a part that leaves the figure
    where it is at both its bounds, one at a time, is not flipped; see the module notes)."""
    if n == 0:
        return {}
    # corner[path][0] lowers the figure, [1] raises it
    vertices = {p: [(deltas[p] < 0).astype(float), (deltas[p] >= 0).astype(float)] for p in paths}
    order = [(p, side) for p in paths for side in (0, 1)]
    start = np.array([vertices[p][side] for p, side in order])
    values = _own_values(evaluate, start, [p for p, _ in order])
    best = {key: float(values[i]) for i, key in enumerate(order)}
    active = [(p, side) for p, side in order if np.any(moving[p])]
    for _ in range(MAX_CONFIRM_ROUNDS):
        if not active:
            break
        rows, owners, flipped_parts = [], [], []
        for p, side in active:
            parts = np.flatnonzero(moving[p])
            flips = np.repeat(vertices[p][side][None, :], parts.size, axis=0)
            flips[np.arange(parts.size), parts] = 1.0 - flips[np.arange(parts.size), parts]
            rows.append(flips)
            owners += [p] * parts.size
            flipped_parts.append(parts)
        flipped = _own_values(evaluate, np.concatenate(rows), owners)
        still = []
        joints: list[tuple[str, int, NDArray[np.float64]]] = []
        at = 0
        for (p, side), parts in zip(active, flipped_parts, strict=True):
            got = flipped[at : at + parts.size]
            at += parts.size
            gains = _further(got, best[(p, side)], side)
            if not np.any(gains):
                continue
            j = int(np.argmin(got) if side == 0 else np.argmax(got))
            start = vertices[p][side]
            vertices[p][side] = start.copy()
            vertices[p][side][parts[j]] = 1.0 - start[parts[j]]
            best[(p, side)] = float(got[j])
            still.append((p, side))
            if np.count_nonzero(gains) > 1:  # every flip that helps alone, tried at once
                joint = start.copy()
                joint[parts[gains]] = 1.0 - start[parts[gains]]
                joints.append((p, side, joint))
        if joints:
            tried = _own_values(
                evaluate, np.array([j for *_, j in joints]), [p for p, *_ in joints]
            )
            for (p, side, joint), value in zip(joints, tried, strict=True):
                if _further(np.array([value]), best[(p, side)], side)[0]:
                    vertices[p][side] = joint
                    best[(p, side)] = float(value)
        active = still
    return {p: (best[(p, 0)], best[(p, 1)]) for p in paths}


def _shares(paths: list[str], steps_of: dict[str, str], count: int) -> list[list[str]]:
    """The figures in up to ``count`` shares for corner searches of their own, each step's
    figures in one share (they share most of their rows: `_distinct`), the steps given
    largest first to the share with the fewest figures so far."""
    by_step: dict[str, list[str]] = {}
    for path in paths:
        by_step.setdefault(steps_of[path], []).append(path)
    shares: list[list[str]] = [[] for _ in range(max(1, min(count, len(by_step))))]
    for step in sorted(by_step, key=lambda s: -len(by_step[s])):
        min(shares, key=len).extend(by_step[step])
    return shares


def _crossing(
    t: Threshold,
    nominal: float,
    corner: float,
    share_failing: float,
    delta: NDArray[np.float64],
    parts: tuple[Part, ...],
) -> Crossing:
    """The part that pulls the figure furthest past the threshold (below it, or above an
    upper limit), and the tolerance of it that keeps the corner at the threshold (linear
    in the part's tolerance)."""
    pull = np.abs(delta)
    i = int(np.argmax(pull))
    part = parts[i]
    excess = corner - t.limit if t.above else t.limit - corner
    inside = nominal <= t.limit if t.above else nominal >= t.limit
    needed = None
    # Linear in each part, the corner lies sum_j |D_j| / 2 from nominal: part i's half.
    half = pull[i] / 2.0
    if inside and half > 0.0 and excess < half:
        scale = 1.0 - excess / half
        if part.is_beta:
            low, high = (part.low / part.nominal) ** scale, (part.high / part.nominal) ** scale
            needed = f"{low:.3g}x..{high:.3g}x"
        else:
            needed = f"{(part.high / part.nominal - 1.0) * scale * 100.0:.2g} %"
    return Crossing(t, nominal, corner, share_failing, part.label, part.tolerance_text, needed)


def run_spread(
    chain: Chain,
    trials: int,
    seed: int,
    progress: Callable[[int, int], None] | None = None,
) -> SpreadResult:
    """Monte Carlo, corners, sensitivities and yields of ``chain`` (see the module notes).

    ``progress(done, total)`` is called as each batch of trials is solved.
    """
    if not 1 <= trials <= MAX_TRIALS:
        raise SpreadError(f"--trials: got {trials}, expected 1 to {MAX_TRIALS}")
    if not 0 <= seed < 2**63:
        raise SpreadError(f"--seed: got {seed}, expected 0 to 2**63 - 1")
    started = time.perf_counter()
    nominal: Budget = compute(chain)
    voltages = settle(chain, "low").voltages
    drawn, held = chain_parts(chain)
    parts = tuple(drawn)
    n = len(parts)
    evaluate = Evaluator(chain, parts, nominal, voltages)
    centre = evaluate(np.full((1, n), 0.5))
    paths = sorted(centre)
    side = evaluate(_one_at_a_time(n), shared=True) if n else {p: np.zeros(0) for p in paths}
    deltas = {p: side[p][1::2] - side[p][0::2] for p in paths}
    moving = {p: _moving(side[p], float(centre[p][0]), evaluate.steps_of[p]) for p in paths}
    # the corner search beside the trials (`chainbudget.spread.aside`), in shares of whole
    # steps (`_shares`), one fewer than the trials' workers: on two cores, with the trials
    # in forked workers, two shares took the same time as one (busking amp and practice
    # amplifier, 10,000 trials; docs/performance.md), and one holds less memory
    corner_searches = [
        Aside(partial(_corners, evaluate, share, deltas, moving, n))
        for share in _shares(paths, evaluate.steps_of, max(1, WORKERS - 1))
    ]
    rng = np.random.default_rng(seed)
    chunks: dict[str, list[NDArray[np.float64]]] = {}
    done = 0
    solved = 0

    def advance(count: int) -> None:
        nonlocal solved
        solved += count
        if progress is not None:
            progress(solved, trials)

    while done < trials:
        size = min(CHUNK_TRIALS, trials - done)
        figures = evaluate(rng.random((size, n)), flags=True, on_batch=advance)
        for p, values in figures.items():
            chunks.setdefault(p, []).append(values)
        done += size
    drawn_rules = {p: np.concatenate(chunks[p]) for p in chunks}  # figures and rule flags
    # a figure the check leaves undefined in some trials (a loop whose gain never reaches
    # unity has no phase margin: null in that trial's check JSON) is summed up over the
    # trials that define it, and the share that do not is reported; one that no trial
    # defines has no statistics
    defined = {p: np.isfinite(drawn_rules[p]) for p in paths}
    undefined = {p: float(np.mean(~d)) for p, d in defined.items() if not d.all()}
    spread = [p for p in paths if defined[p].any()]
    samples = {p: drawn_rules[p][defined[p]] for p in spread}
    sensitivity = []
    for p in spread:
        total = float(np.sum(deltas[p] ** 2))
        # a figure the parts move only by round-off (a fixed limit carried through a solve)
        # has no sensitivity to rank; nor one undefined at a part's bound
        still = math.sqrt(total) <= STILL_RTOL * abs(float(centre[p][0]))
        if still or total <= 0.0 or not math.isfinite(total):
            continue
        for i in np.argsort(-(deltas[p] ** 2)):
            share = float(deltas[p][i] ** 2 / total)
            if share >= 0.01:
                sensitivity.append(Sensitivity(p, parts[int(i)].label, share))
    found = {p: ends for search in corner_searches for p, ends in search.result().items()}
    corners = {p: found[p] for p in spread if p in found}  # in the figures' order
    for p in spread:  # no parts move it: its corners are its nominal value
        corners.setdefault(p, (float(centre[p][0]), float(centre[p][0])))
        # a figure not monotonic in its parts (a DC's magnitude passing through zero, THD
        # against R_E about Oliver's optimum) can reach its extreme inside the bounds: a
        # trial beyond the vertices found widens them (and stands for a vertex at which
        # the figure is undefined)
        low, high = corners[p]
        least, most = float(samples[p].min()), float(samples[p].max())
        corners[p] = (
            least if math.isnan(low) else min(low, least),
            most if math.isnan(high) else max(high, most),
        )
    thresholds = evaluate.thresholds(drawn_rules)
    masks = failing(thresholds, drawn_rules)
    # a code drawn at more than one severity (dc-into-load; a phase margin under 45 deg
    # warns, under 20 deg is an error) is shown at its worst; the yield counts the trials
    # that draw it as an error
    severities: dict[str, str] = {}
    for t in thresholds:
        seen = severities.get(t.code, t.severity)
        severities[t.code] = max(seen, t.severity, key=SEVERITY_RANK.__getitem__)
    errors = np.zeros(trials, bool)
    for mask in failing([t for t in thresholds if t.severity == "error"], drawn_rules).values():
        errors |= mask
    crossings = []
    for t in thresholds:
        if t.path not in corners:  # a rule flag (`chainbudget.spread.flags`): no corner
            continue
        corner = corners[t.path][1 if t.above else 0]
        if t.beyond(np.asarray(corner)):
            share = float(np.mean(t.beyond(drawn_rules[t.path])))  # of every trial
            moved = deltas[t.path]
            toward = np.where(np.isfinite(moved) & (moved != 0.0), moved, 0.0)
            crossings.append(
                _crossing(t, float(centre[t.path][0]), corner, share, toward, parts)
                if n
                else Crossing(t, float(centre[t.path][0]), corner, share, "-", "-", None)
            )
    return SpreadResult(
        trials=trials,
        seed=seed,
        parts=parts,
        held=tuple(held),
        nominal={p: float(centre[p][0]) for p in paths},
        samples=samples,
        undefined=undefined,
        stats={p: _stats(samples[p]) for p in spread},
        corners=corners,
        sensitivity=sensitivity,
        yield_all=float(1.0 - errors.mean()),
        yield_by_code={code: float(1.0 - mask.mean()) for code, mask in sorted(masks.items())},
        severities=severities,
        crossings=crossings,
        nominal_codes=tuple(dict.fromkeys(fi.code for fi in nominal.findings)),
        seconds=time.perf_counter() - started,
        cautions=tuple(fi.message for fi in nominal.findings if fi.severity == "caution"),
    )


def stderr_is_terminal() -> bool:
    return sys.stderr.isatty()
