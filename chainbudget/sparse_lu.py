"""Many matrices of one sparsity pattern solved together: LU factors in a pivot order fixed
by the pattern, each step of the elimination one array operation over the whole batch.

A stage's MNA matrix is mostly zeros (an op-amp stage of 12 unknowns has 36 of its 144
entries), and the same pattern is solved at every frequency point, control setting and
trial: 10,000 to 100,000 matrices in one call. ``numpy.linalg.solve`` hands each matrix
to LAPACK's dense partial-pivoting LU alone; here the symbolic work (which entries take
part, the pivot order, where fill appears) is done once per pattern, and the numeric work
is a short list of products and differences of whole batch vectors, one per nonzero
entry the elimination touches.

Notes
-----
Gaussian elimination with a static pivot order, the symbolic/numeric split of direct
sparse solvers (Davis, Direct Methods for Sparse Linear Systems, SIAM 2006, ch. 6-7; from
memory):

1. **Rows matched to columns.** Every pivot must be structurally nonzero. A node's row
   keeps its own diagonal; the equation of a voltage-defined branch (a source or a
   controlled source; its diagonal is zero) takes the column of a node it drives, through
   its exact +-1 incidence entry, and that node's KCL row takes the branch current's
   column through its own +-1 entry: the row exchange MNA needs for voltage sources (Ho,
   Ruehli & Brennan, IEEE Trans. CAS-22 (1975) 504; from memory). The matching is Kuhn's
   augmenting paths (Kuhn, "The Hungarian method for the assignment problem", Naval
   Research Logistics Quarterly 2 (1955) 83), each row trying its columns in that order of
   preference, so the pivots depend on the pattern alone and every matrix of it is
   factored with the same arithmetic, whatever batch it sits in.
2. **Order.** Markowitz's rule on the matched pattern: next the pivot whose row and column
   counts give the fewest products, (r - 1)(c - 1) (Markowitz, "The elimination form of the
   inverse and its application to linear programming", Management Science 3 (1957) 255).
3. **Numeric.** The factor and the forward and back substitution, in that order, on the
   entries that are nonzero or fill.
4. **Checked.** Static pivots carry no guarantee of stability, so each matrix's normwise
   backward error, ||b - A x|| / (||A|| ||x|| + ||b||) in the infinity norm (Rigal &
   Gaches, J. ACM 14 (1967) 543; Higham, Accuracy and Stability of Numerical Algorithms,
   2nd ed., Theorem 7.1; from memory), is computed from the original entries; a matrix
   above `BACKWARD_ERROR` (or with a zero pivot) is solved again by
   ``numpy.linalg.solve``, whose partial pivoting makes that error a small multiple of
   the unit round-off. Either way the answer is backward stable to that level; a singular
   matrix still raises ``numpy.linalg.LinAlgError``.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from functools import lru_cache
from typing import Any

import numpy as np
from numpy.typing import NDArray

Complex = NDArray[np.complexfloating[Any, Any]]

#: The normwise backward error above which a matrix is solved again with partial pivoting:
#: about 18 units of round-off, LAPACK's level (its own on the examples' matrices: about
#: 2e-16). Of the spread's matrices (100 trials) none of the kitchen radio's is above it,
#: 0.6 % of the busking amp's and 3 % of the practice amp's.
BACKWARD_ERROR = 4e-15


@dataclass(frozen=True)
class Pattern:
    """What the pivot order is chosen from: the structurally nonzero entries, the entries
    that are exactly +-1 in every matrix (a branch's incidence), and how many of the first
    unknowns are node voltages (whose rows keep their diagonal)."""

    nonzero: NDArray[np.bool_]
    unit: NDArray[np.bool_]
    nodes: int

    def transposed(self) -> Pattern:
        return Pattern(self.nonzero.T.copy(), self.unit.T.copy(), self.nodes)


@dataclass(frozen=True)
class _Step:
    """One pivot of the elimination: its slot, the slots below it with an entry in its
    column, and the columns right of it with an entry in its row."""

    pivot: int
    below: tuple[int, ...]
    right: tuple[int, ...]


@dataclass(frozen=True)
class _Plan:
    """One pattern's elimination, worked out once (`plan_for`)."""

    #: slot s holds the equation of row ``rows[s]``, its pivot in column s
    rows: tuple[int, ...]
    steps: tuple[_Step, ...]
    #: the (slot, column) entries the factors hold: the nonzeros and the fill
    entries: tuple[tuple[int, int], ...]
    #: the original matrix's nonzero entries, for the residual
    original: tuple[tuple[int, int], ...]
    #: the (slot, column) entries the elimination writes (a multiplier, an updated entry,
    #: a fill); the others are read as the matrix holds them
    written: frozenset[tuple[int, int]]


class _StructurallySingular(Exception):
    """No matching of rows to columns exists: every matrix of the pattern is singular."""


def _matched_rows(pattern: Pattern) -> list[int]:
    """The row that pivots in each column (Kuhn's augmenting paths, preferences first)."""
    n = pattern.nonzero.shape[0]

    def preference(r: int, c: int) -> int:
        if r == c and r < pattern.nodes:
            return 0
        return 1 if pattern.unit[r, c] else 2

    candidates = [
        sorted(np.flatnonzero(pattern.nonzero[r]).tolist(), key=lambda c: (preference(r, c), c))
        for r in range(n)
    ]
    owner = [-1] * n

    def augment(r: int, seen: set[int]) -> bool:
        for c in candidates[r]:
            if c in seen:
                continue
            seen.add(c)
            if owner[c] < 0 or augment(owner[c], seen):
                owner[c] = r
                return True
        return False

    for r in range(n):
        if not augment(r, set()):
            raise _StructurallySingular
    return owner


@lru_cache(maxsize=512)
def _plan_of(nonzero: bytes, unit: bytes, n: int, nodes: int) -> _Plan:
    pattern = Pattern(
        np.frombuffer(nonzero, dtype=np.bool_).reshape(n, n),
        np.frombuffer(unit, dtype=np.bool_).reshape(n, n),
        nodes,
    )
    rows = _matched_rows(pattern)
    filled = pattern.nonzero[rows].copy()  # slot s: row rows[s]; its pivot at column s
    remaining = list(range(n))
    steps = []
    while remaining:
        k = min(
            remaining,
            key=lambda s: (
                (int(filled[s, remaining].sum()) - 1) * (int(filled[remaining, s].sum()) - 1),
                s,
            ),
        )
        remaining.remove(k)
        below = tuple(i for i in remaining if filled[i, k])
        right = tuple(j for j in remaining if filled[k, j])
        for i in below:
            filled[i, list(right)] = True
        steps.append(_Step(k, below, right))
    entries = tuple((int(s), int(c)) for s, c in zip(*np.nonzero(filled), strict=True))
    original = tuple((int(r), int(c)) for r, c in zip(*np.nonzero(pattern.nonzero), strict=True))
    written = frozenset(
        (i, j) for step in steps for i in step.below for j in (step.pivot, *step.right)
    )
    return _Plan(tuple(rows), tuple(steps), entries, original, written)


def plan_for(pattern: Pattern) -> _Plan | None:
    """The cached elimination plan of ``pattern``; None where it is structurally singular."""
    n = pattern.nonzero.shape[0]
    try:
        return _plan_of(
            np.ascontiguousarray(pattern.nonzero, dtype=np.bool_).tobytes(),
            np.ascontiguousarray(pattern.unit & pattern.nonzero, dtype=np.bool_).tobytes(),
            n,
            pattern.nodes,
        )
    except _StructurallySingular:
        return None


#: The nonzero entries of a batch of matrices: entry (i, j) of every matrix of the batch,
#: one array of the batch's shape (a constant one may be a broadcast view).
Entries = Mapping[tuple[int, int], Complex]


def by_entry(dense: Complex, pattern: Pattern) -> dict[tuple[int, int], Complex]:
    """The nonzero entries of matrices held entry-major, ``(N, N) + batch``."""
    rows, cols = np.nonzero(pattern.nonzero)
    return {(int(r), int(c)): dense[r, c] for r, c in zip(rows, cols, strict=True)}


def dense(entries: Entries, n: int, batch: tuple[int, ...]) -> Complex:
    """The matrices entry-major, ``(N, N) + batch``, zeros where no entry is given."""
    found = np.zeros((n, n, *batch), dtype=complex)
    for (r, c), value in entries.items():
        found[r, c] = value
    return found


def solve(entries: Entries, pattern: Pattern, batch: tuple[int, ...], rhs: Complex) -> Complex:
    """Solve A x = b for every matrix of a batch.

    ``entries`` holds the matrices' nonzero entries (`Entries`: only those of
    ``pattern.nonzero``), each of shape ``batch``; ``rhs`` has shape ``(N, K)`` or
    ``batch + (N, K)``. Returns x with shape ``batch + (N, K)``.
    """
    n = pattern.nonzero.shape[0]
    size = int(np.prod(batch, dtype=np.int64))
    k_count = rhs.shape[-1]
    plan = plan_for(pattern) if size > 0 else None
    if plan is None:
        return np.linalg.solve(np.moveaxis(dense(entries, n, batch), (0, 1), (-2, -1)), rhs)
    a = {key: np.reshape(value, size) for key, value in entries.items()}
    b = _entry_major_rhs(rhs, batch, size)
    # one right-hand side for the whole batch: its size is one number
    b_size = _largest(np.asarray(rhs, complex)[..., None]) if rhs.ndim == 2 else _largest(b)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        x = _factored_solve(plan, a, b)
        bad = _backward_error(plan, a, b, x, b_size) > BACKWARD_ERROR
    found = np.moveaxis(x, -1, 0)  # (size, N, K), each matrix's solution
    if bad.any():  # partial pivoting where the static pivots did not hold
        redo = np.flatnonzero(bad)
        picked = {key: value[redo] for key, value in a.items()}
        matrices = np.moveaxis(dense(picked, n, (redo.size,)), (0, 1), (-2, -1))
        found = found.copy()
        found[redo] = np.linalg.solve(matrices, np.moveaxis(b[:, :, redo], -1, 0))
    return found.reshape(*batch, n, k_count)


def _entry_major_rhs(rhs: Complex, batch: tuple[int, ...], size: int) -> Complex:
    """The right-hand sides as ``(N, K, size)``."""
    if rhs.ndim == 2:
        return np.repeat(np.asarray(rhs, complex)[:, :, None], size, axis=2)
    flat = np.broadcast_to(rhs, (*batch, *rhs.shape[-2:])).reshape(size, *rhs.shape[-2:])
    return np.ascontiguousarray(np.moveaxis(flat, 0, -1), dtype=complex)


def _factored_solve(plan: _Plan, a: Entries, b: Complex) -> Complex:
    """x as ``(N, K, size)``: the factor and both substitutions, one batch vector per
    operation (``a`` each entry as ``(size,)``, ``b`` as ``(N, K, size)``)."""
    n, _, size = b.shape
    rows = plan.rows
    # an entry the elimination writes is a copy of the matrix's (a fill starts at zero);
    # one it only reads is the matrix's own array
    lu = {
        (s, c): (a[rows[s], c].copy() if (s, c) in plan.written else a[rows[s], c])
        if (rows[s], c) in a
        else np.zeros(size, dtype=complex)
        for s, c in plan.entries
    }
    y = b[list(rows)]  # a copy (N, K, size), in slot order
    product = np.empty(size, dtype=complex)
    products = np.empty(b.shape[1:], dtype=complex)  # (K, size)
    for step in plan.steps:
        k = step.pivot
        pivot_row = [lu[k, j] for j in step.right]
        for i in step.below:
            factor = lu[i, k]
            factor /= lu[k, k]
            for j, u in zip(step.right, pivot_row, strict=True):
                entry = lu[i, j]
                np.multiply(factor, u, out=product)
                entry -= product
            np.multiply(factor, y[k], out=products)
            y[i] -= products
    x = np.empty_like(y)
    for step in reversed(plan.steps):
        k = step.pivot
        value = y[k]
        for j in step.right:
            np.multiply(lu[k, j], x[j], out=products)
            value -= products
        np.divide(value, lu[k, k], out=x[k])
    return x[:n]


def _backward_error(
    plan: _Plan, a: Entries, b: Complex, x: Complex, b_size: NDArray[np.float64]
) -> NDArray[np.float64]:
    """Each matrix's normwise backward error in the infinity norm, bounded from above: the
    size of a complex number taken as max(|re|, |im|) (at least 1/sqrt(2) of its modulus)
    and ||A|| as its largest entry (at least 1/(entries per row) of the row sums). A bound
    for the check, not a figure; a breakdown, NaN or infinite, counts as failing. ``b_size``
    is `_largest` of ``b``."""
    residual = b.copy()
    product = np.empty(x.shape[1:], dtype=complex)
    for r, c in plan.original:
        np.multiply(a[r, c], x[c], out=product)
        residual[r] -= product
    scale = _largest_entry(plan, a, b.shape[-1]) * _largest(x) + b_size
    size_r = _largest(residual)
    # a zero residual is no error even over a zero scale (b = 0, x = 0); NaN is a breakdown
    error = np.where(size_r == 0, 0.0, size_r / scale)
    return np.where(np.isfinite(error), error, np.inf)


def _largest_entry(plan: _Plan, a: Entries, size: int) -> NDArray[np.float64]:
    """max(|re|, |im|) over each matrix's entries, per matrix: entry by entry into one
    running maximum of the real and imaginary parts side by side (no copy of the entries
    stacked; the maximum is exact, so the same as over the stack). An entry with one
    value for the whole batch (a broadcast view: a part no trial draws) is taken once."""
    parts = np.zeros(2 * size)
    constant = np.zeros(1)
    magnitude = np.empty(2 * size)
    for key in plan.original:
        entry = a[key]
        if size > 1 and entry.strides[0] == 0:
            np.maximum(constant, np.abs(entry[:1].view(np.float64)).max(), out=constant)
            continue
        np.abs(np.ascontiguousarray(entry).view(np.float64), out=magnitude)
        np.maximum(parts, magnitude, out=parts)
    return np.maximum(np.maximum(parts[0::2], parts[1::2]), constant)


def _largest(v: Complex) -> NDArray[np.float64]:
    """max(|re|, |im|) over every entry of each matrix, per matrix (the batch axis last)."""
    size = v.shape[-1]
    flat = np.ascontiguousarray(v).reshape(-1, size).view(np.float64)
    # max |x| as max(max x, -min x): two reductions, no array of magnitudes written out
    parts = np.maximum(flat.max(axis=0), -flat.min(axis=0))
    return np.maximum(parts[0::2], parts[1::2])
