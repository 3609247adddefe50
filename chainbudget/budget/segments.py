"""The chain split at its unilateral sections, and the algebra of one segment over batches
of settings (the worst-case search's arithmetic, `chainbudget.budget.search`).

The units of this algebra are the chain's *sections* (`chainbudget.loops`): a stage on its
own, or a loop section (a ``feedback_from`` span) solved as one network, whose stages'
controls are searched together and whose stages' probes are linear in the section's port
voltages, as any stage's are in its own.

Notes
-----
Chain (ABCD) parameters, ``[V1, I1] = T [V2, I2]`` (Pozar, Microwave Engineering, 4th ed.,
sec. 4.4): the source's open-circuit voltage E and the load voltage V_L are related by

    E = (1, Z_S) T_0 T_1 ... T_{n-1} (1, Y_L)^T V_L,

and node k's voltage is V_k = [T_{k+1} ... T_{n-1} (1, Y_L)^T]_0 V_L (T_k a section's chain
parameters; a stage's below stands for its section's). A stage with no reverse
transmission (y12 = 0: an op-amp's non-inverting input, a block's ideal input) has
det T = A D - B C = y12/y21 = 0, so T = (1, C/A)^T (A, B) is an outer product and the chain
product splits there into scalars. With such stages as *cuts*, E/V_L = gamma_0 gamma_1 ...
gamma_m, one factor per *segment* (the stages between two cuts, or a cut and the source or
the load), each depending only on the controls of its own segment:

    gamma = l T_i ... T_j r,   l = (1, Z_S) or (A, B) of the cut before,
                               r = (1, Y_L) or (1, C/A) of the cut after.

A probe of stage k, g1 V_in + g2 V_out per volt of E, is the product of 1/gamma of every
segment before k's own and a factor of k's own segment alone (of the segment after k when
k is itself a cut, with l = (A_k, B_k) and T_i ... T_k empty):

    h = (g1 [T_k w]_0 + g2 w_0) / (l T_i ... T_k w),   w = T_{k+1} ... T_j r,

and since l T_i ... T_k w = gamma for every k of the segment, the stage's own-segment input
and output voltages are [T_k w]_0 / gamma and w_0 / gamma.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from chainbudget.cascade import Injection, SectionSolution, StageSolution
from chainbudget.network import Complex, TwoPort
from chainbudget.stages.base import Built

# A stage is a cut when |AD - BC| <= UNILATERAL_RTOL (|AD| + |BC|) at every frequency: its
# input admittance then moves with its load, and its output impedance with its source, by
# about that fraction, far below the 1e-9 at which any figure is compared.
UNILATERAL_RTOL = 1e-11
# Settings x frequencies per evaluated block: 4 MB per complex array of a block at most.
BLOCK_ELEMENTS = 1 << 18

Index = NDArray[np.intp]
Floats = NDArray[np.float64]


def probe_key(k: int, name: str) -> str:
    """A probe of stage k among its section's probes (`SectionGrid.port`)."""
    return f"{k}:{name}"


@dataclass(frozen=True)
class SectionGrid:
    """One section solved over the combinations of its own swept rotations (axis 0 of each
    array, C order over its stages' swept controls in chain order); a section with no swept
    control has one combination, its setting.

    ``solution`` is the whole solved section (what the cascade joins); ``port`` its chain
    parameters with every stage's probes keyed by `probe_key` (what the search reads)."""

    solution: SectionSolution
    port: TwoPort
    combos: Index  # (m, swept controls of this section): rotation index of each
    rotation_distance: tuple[Floats, ...]  # per swept control: |rotation - setting|
    set_combo: int
    distance: Floats  # (m,): summed |rotation - setting| of each combination

    @property
    def size(self) -> int:
        return int(self.combos.shape[0])


@dataclass(frozen=True)
class SearchInput:
    """What the search needs from the analysis: each section's grid, each stage's section
    and build (its limits and op-amps over the whole band) and the chain's ends."""

    grids: tuple[SectionGrid, ...]
    unit_of: tuple[int, ...]  # each stage's section (index into grids)
    builts: tuple[Built, ...]  # each stage's build
    source_impedance: Complex  # (F,), ohm
    load_admittance: Complex  # (F,), S
    max_peak: float  # source open-circuit peak at max_level, V
    band: slice  # the band within the frequency axis (index 0 is the reference)


def take(x: Complex, index: Index) -> Complex:
    """``x`` (combinations, F) at combination ``index`` per frequency (``index`` of shape
    batch + (F,) or batch + (1,))."""
    index = np.asarray(index)
    lead = index.shape[:-1]
    if (
        index.shape[-1] == 1
        and index.size == x.shape[0]
        and np.array_equal(index.reshape(-1), np.arange(x.shape[0]))
    ):
        return x.reshape(*lead, x.shape[-1])  # every combination in order: x itself
    flat = np.broadcast_to(index, (*lead, x.shape[-1])).reshape(-1, x.shape[-1])
    return np.take_along_axis(x, flat, axis=0).reshape(*lead, x.shape[-1])


def map_section(
    solutions: Sequence[SectionSolution], fn: Callable[[list[Complex]], Complex]
) -> SectionSolution:
    """One section's solution from several of the same section (pieces on different
    frequencies, say), every array the result of ``fn`` on the pieces' arrays alike."""
    first = solutions[0]
    done: dict[int, TwoPort] = {}

    def port(ports: list[TwoPort]) -> TwoPort:
        if id(ports[0]) not in done:  # a lone stage's two-port is its section's
            probes = {
                name: (
                    fn([p.probes[name][0] for p in ports]),
                    fn([p.probes[name][1] for p in ports]),
                )
                for name in ports[0].probes
            }
            done[id(ports[0])] = TwoPort(
                fn([p.a for p in ports]),
                fn([p.b for p in ports]),
                fn([p.c for p in ports]),
                fn([p.d for p in ports]),
                probes,
            )
        return done[id(ports[0])]

    section_port = port([sol.two_port for sol in solutions])
    stages = tuple(
        StageSolution(stage.stage, port([sol.stages[i].two_port for sol in solutions]), stage.built)
        for i, stage in enumerate(first.stages)
    )
    admittances = None
    if first.admittances is not None:
        y = [sol.admittances for sol in solutions if sol.admittances is not None]
        y11, y12, y21, y22 = (fn([four[i] for four in y]) for i in range(4))
        admittances = (y11, y12, y21, y22)
    injections = {
        k: Injection(
            fn([sol.injections[k].node_v for sol in solutions]),
            fn([sol.injections[k].port_in_a for sol in solutions]),
            fn([sol.injections[k].port_out_a for sol in solutions]),
        )
        for k in first.injections
    }
    return SectionSolution(first.section, section_port, stages, admittances, injections)


def section_at(solution: SectionSolution, index: Index) -> SectionSolution:
    """A section's solution (arrays of shape (combinations, F)) at combination ``index``."""
    return map_section([solution], lambda x: take(x[0], index))


def search_port(solution: SectionSolution) -> TwoPort:
    """The section's chain parameters with every stage's probes keyed by `probe_key`."""
    probes = {
        probe_key(solution.section.first + i, name): pair
        for i, stage in enumerate(solution.stages)
        for name, pair in stage.two_port.probes.items()
    }
    tp = solution.two_port
    return TwoPort(tp.a, tp.b, tp.c, tp.d, probes)


def port_map(tp: TwoPort, fn: Callable[[Complex], Complex]) -> TwoPort:
    """``fn`` applied to every array of a two-port."""
    probes = {name: (fn(g1), fn(g2)) for name, (g1, g2) in tp.probes.items()}
    return TwoPort(fn(tp.a), fn(tp.b), fn(tp.c), fn(tp.d), probes)


def columns(tp: TwoPort, cols: Index | slice) -> TwoPort:
    """A section's two-port on some frequency columns only."""
    return port_map(tp, lambda x: x[:, cols])


def points(tp: TwoPort, combos: Index, cols: Index) -> TwoPort:
    """A section's two-port at one (combination, column) per point: arrays (1, points)."""
    return port_map(tp, lambda x: x[combos, cols][None, :])


@dataclass(frozen=True)
class Segment:
    """Stages between two cuts, or a cut and the source or the load."""

    left: int  # the cut before (a section), -1 for the source
    right: int  # the cut after, n for the load

    @property
    def units(self) -> range:
        """The sections of the segment."""
        return range(self.left + 1, self.right)


def is_cut(grid: SectionGrid) -> bool:
    """A section with no swept control and no reverse transmission (det T ~ 0)."""
    if grid.size != 1:
        return False
    tp = grid.port
    ad, bc = tp.a * tp.d, tp.b * tp.c
    scale = np.abs(ad) + np.abs(bc)
    return bool(np.all(scale > 0.0) and np.all(np.abs(ad - bc) <= UNILATERAL_RTOL * scale))


def segments_of(grids: Sequence[SectionGrid]) -> tuple[list[Segment], list[int]]:
    """The segments of the chain and its cuts, in chain order."""
    cuts = [j for j, g in enumerate(grids) if is_cut(g)]
    bounds = [-1, *cuts, len(grids)]
    return [Segment(a, b) for a, b in zip(bounds[:-1], bounds[1:], strict=True)], cuts


class Part:
    """A section's chain parameters at some combinations (arrays batch + (columns,)), its
    probes gathered when first asked for."""

    def __init__(self, port: TwoPort, index: Index | None) -> None:
        self.port, self.index = port, index
        tp = port
        if index is None:
            self.a, self.b, self.c, self.d = tp.a, tp.b, tp.c, tp.d
        else:
            self.a, self.b = take(tp.a, index), take(tp.b, index)
            self.c, self.d = take(tp.c, index), take(tp.d, index)
        self.varies = self.a.size > self.a.shape[-1]
        self._probes: dict[str, tuple[Complex, Complex]] = {}

    def probe(self, name: str) -> tuple[Complex, Complex]:
        if name not in self._probes:
            g1, g2 = self.port.probes[name]
            if self.index is not None:
                g1, g2 = take(g1, self.index), take(g2, self.index)
            self._probes[name] = (g1, g2)
        return self._probes[name]


class View:
    """A segment on some frequency columns, evaluated at batches of settings."""

    def __init__(
        self, inp: SearchInput, seg: Segment, cols: Index, settings: Index | None = None
    ) -> None:
        """``settings`` (rows, stages), with one column per row, fixes every stage of the
        segment at each row's own combination: a view of single points."""
        self.inp, self.seg, self.cols = inp, seg, cols
        self.fixed = settings is not None
        grids = inp.grids
        n_freq = grids[0].port.a.shape[-1]
        # Every column: the arrays themselves, not copies.
        pick: Index | slice = (
            slice(None) if np.array_equal(cols, np.arange(n_freq)) else np.asarray(cols)
        )
        self.swept = [j for j in seg.units if grids[j].size > 1]
        self._as_set: dict[int, Part] = {}
        self.sizes = [grids[j].size for j in self.swept]
        if settings is None:
            self.solutions = {j: columns(grids[j].port, pick) for j in seg.units}
        else:
            self.solutions = {j: points(grids[j].port, settings[:, j], cols) for j in seg.units}
        one = np.ones(cols.size, dtype=complex)
        if seg.left < 0:
            self.left = (one, np.asarray(inp.source_impedance, dtype=complex)[cols])
        else:
            self.cut = columns(grids[seg.left].port, pick)
            self.left = (self.cut.a[0], self.cut.b[0])
        if seg.right >= len(grids):
            self.right = (one, np.asarray(inp.load_admittance, dtype=complex)[cols])
        else:
            cut = columns(grids[seg.right].port, pick)
            self.right = (one, cut.c[0] / cut.a[0])

    @property
    def combinations(self) -> int:
        return math.prod(self.sizes)

    def part(self, j: int, index: Index | None = None) -> Part:
        """Section j at combination ``index`` (any shape that broadcasts, ending in the
        columns or 1), or as set (gathered once per view)."""
        if index is not None:
            return Part(self.solutions[j], index)
        if j not in self._as_set:
            if self.inp.grids[j].size > 1 and not self.fixed:
                index = np.full((1, 1), self.inp.grids[j].set_combo, dtype=np.intp)
            self._as_set[j] = Part(self.solutions[j], index)
        return self._as_set[j]

    def held(self, setting: Index, but: Sequence[int] = ()) -> dict[int, Index | Part]:
        """Each swept section (but the positions ``but``) at ``setting`` (swept sections,
        columns)."""
        return {
            j: self.part(j, setting[q][None, :]) for q, j in enumerate(self.swept) if q not in but
        }

    def evaluate(self, index: Mapping[int, Index | Part]) -> Evaluated:
        """The segment with each swept section j at combination ``index[j]`` (or given as a
        `Part`); the others as set."""
        parts = []
        for j in self.seg.units:
            given = index.get(j)
            parts.append(given if isinstance(given, Part) else self.part(j, given))
        return Evaluated(self, parts)


class Evaluated:
    """A segment's chain algebra at a batch of settings (arrays batch + (columns,)).

    Every stage's ``l T_i ... T_q w_q`` is the same gamma, so a stage's own-segment input
    and output voltage factors are [T_q w_q]_0 / gamma and [w_q]_0 / gamma, all from one
    pass from the segment's far end. The stages before the first one that varies over the
    batch are folded into row vectors on the columns alone, so the batch costs only the
    stages from there on.
    """

    def __init__(self, view: View, parts: list[Part]) -> None:
        self.view, self.parts = view, parts
        n = len(parts)
        first_varying = next((q for q, part in enumerate(parts) if part.varies), n)
        w0, w1 = view.right
        self._after: dict[int, Complex] = {}  # [T_{q+1} ... T_j r]_0 after stage q
        for q in range(n - 1, first_varying - 1, -1):
            self._after[q] = w0
            part = parts[q]
            w0, w1 = part.a * w0 + part.b * w1, part.c * w0 + part.d * w1
        self._middle = (w0, w1)  # T_{first_varying} ... T_j r
        # Rows on the columns alone: e0 T_{q+1} ... T_{first_varying - 1} for each q before,
        # and l T_i ... T_{first_varying - 1} for gamma.
        one, zero = np.ones_like(view.left[0]), np.zeros_like(view.left[0])
        m00, m01, m10, m11 = one, zero, zero, one  # T_{q+1} ... T_{first_varying - 1}
        self._rows: dict[int, tuple[Complex, Complex]] = {first_varying - 1: (one, zero)}
        for q in range(first_varying - 1, -1, -1):
            part = parts[q]
            m00, m01, m10, m11 = (
                part.a * m00 + part.b * m10,
                part.a * m01 + part.b * m11,
                part.c * m00 + part.d * m10,
                part.c * m01 + part.d * m11,
            )
            self._rows[q - 1] = (m00, m01)
        l0, l1 = view.left
        for part in parts[:first_varying]:
            l0, l1 = l0 * part.a + l1 * part.c, l0 * part.b + l1 * part.d
        self.gamma = l0 * w0 + l1 * w1
        self._inverse: Complex | None = None
        self._sizes: dict[tuple[int, str], NDArray[np.float64]] = {}

    def after(self, q: int) -> Complex:
        """[T_{q+1} ... T_j r]_0 (q = -1: the whole segment's)."""
        if q not in self._after:
            r0, r1 = self._rows[q]
            self._after[q] = r0 * self._middle[0] + r1 * self._middle[1]
        return self._after[q]

    def voltages(self, j: int) -> tuple[Complex, Complex]:
        """Section j's own-segment factors of its input and output voltage (the Notes)."""
        if self._inverse is None:
            self._inverse = 1.0 / self.gamma
        seg = self.view.seg
        if j == seg.left:  # a cut: its input is set by the segments before
            return np.ones_like(self.gamma), self.after(-1) * self._inverse
        q = j - seg.left - 1
        return self.after(q - 1) * self._inverse, self.after(q) * self._inverse

    def local(self, k: int, probe: str) -> Complex:
        """The own-segment factor h of probe ``probe`` of stage k (see the Notes): linear
        in its section's port voltages."""
        seg = self.view.seg
        j = self.view.inp.unit_of[k]
        key = probe_key(k, probe)
        if j == seg.left:
            g1, g2 = self.view.cut.probes[key]
        else:
            g1, g2 = self.parts[j - seg.left - 1].probe(key)
        v_in, v_out = self.voltages(j)
        return g1 * v_in + g2 * v_out

    def size(self, k: int, probe: str) -> NDArray[np.float64]:
        """|local(k, probe)|, worked out once per probe."""
        if (k, probe) not in self._sizes:
            self._sizes[(k, probe)] = np.abs(self.local(k, probe))
        return self._sizes[(k, probe)]


class Objective:
    """A figure of a segment's settings to make least at each frequency; ``k`` is the stage
    it belongs to (-1: the segment as a whole)."""

    k = -1

    def score(self, ev: Evaluated) -> Floats:
        raise NotImplementedError

    def tie_break(self, ev: Evaluated) -> Floats | None:
        """A second figure to make least where the first is flat (None: no such figure)."""
        return None


@dataclass(frozen=True)
class ComboBlock:
    """Some combinations of a run of stages, in C order: an index array per stage shaped to
    broadcast (the leading stages flattened onto one axis, each later stage on its own),
    and the combinations' numbers."""

    index: list[Index]
    numbers: Index
    shape: tuple[int, ...]  # the batch shape the index arrays broadcast to

    def rows(self, score: Floats) -> Floats:
        """A score of shape batch + (columns,) as (combinations, columns), in C order."""
        return np.broadcast_to(score, (*self.shape, score.shape[-1])).reshape(-1, score.shape[-1])


def blocks(sizes: Sequence[int], n_cols: int) -> list[ComboBlock]:
    """Every combination of stages of ``sizes`` combinations each, in blocks of at most
    BLOCK_ELEMENTS settings x columns (or one combination of the leading stages)."""
    p = len(sizes)
    tails = [math.prod(sizes[s:]) for s in range(p + 1)]
    split = next((s for s in range(p + 1) if tails[s] * n_cols <= BLOCK_ELEMENTS), p)
    head = math.prod(sizes[:split])
    step = max(1, BLOCK_ELEMENTS // (tails[split] * n_cols))
    inner = len(sizes) - split
    found = []
    for start in range(0, head, step):
        flat = np.arange(start, min(head, start + step), dtype=np.intp)
        index: list[Index] = []
        for digit in np.unravel_index(flat, sizes[:split]) if split else ():
            index.append(np.asarray(digit, dtype=np.intp).reshape(-1, *([1] * (inner + 1))))
        for q in range(split, p):
            shape = [1] * (inner + 2)
            shape[1 + q - split] = sizes[q]
            index.append(np.arange(sizes[q], dtype=np.intp).reshape(shape))
        numbers = (flat[:, None] * tails[split] + np.arange(tails[split])[None, :]).reshape(-1)
        found.append(ComboBlock(index, numbers, (flat.size, *sizes[split:])))
    return found


def digits(numbers: Index, sizes: Sequence[int]) -> Index:
    """Combination numbers (columns,) as each stage's combination (stages, columns)."""
    if not sizes:
        return np.zeros((0, numbers.size), dtype=np.intp)
    return np.array(np.unravel_index(numbers, sizes), dtype=np.intp).reshape(len(sizes), -1)


def windows(sizes: Sequence[int], budget: int) -> list[list[int]]:
    """Runs of consecutive swept stages (positions) whose combinations stay within
    ``budget``."""
    runs: list[list[int]] = []
    for q, size in enumerate(sizes):
        if runs and math.prod(sizes[i] for i in runs[-1]) * size <= budget:
            runs[-1].append(q)
        else:
            runs.append([q])
    return runs


def run_scores(
    view: View, objective: Objective, setting: Index, run: Sequence[int]
) -> list[tuple[ComboBlock, Floats]]:
    """The objective over every combination of the stages ``run`` (positions among the
    swept), the others held at ``setting``, block by block."""
    sizes = [view.sizes[q] for q in run]
    found = []
    for block in blocks(sizes, view.cols.size):
        index = view.held(setting, but=run)
        index.update({view.swept[q]: i for q, i in zip(run, block.index, strict=True)})
        found.append((block, block.rows(objective.score(view.evaluate(index)))))
    return found
