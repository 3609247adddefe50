"""`chainbudget.sparse_lu`: the batched LU with a pivot order fixed by the pattern.

References: LAPACK's partial-pivoting LU through ``numpy.linalg.solve`` (an independent
solver) on random MNA networks over a frequency axis; a resistive divider and a voltage
source by Ohm's and Kirchhoff's laws; the normwise backward error of Rigal & Gaches (Higham,
Accuracy and Stability of Numerical Algorithms, 2nd ed., Theorem 7.1; from memory)
computed in the test with numpy's own norms.
"""

from __future__ import annotations

import numpy as np
import pytest
from numpy.typing import NDArray

from chainbudget import sparse_lu
from chainbudget.network import GROUND, Netlist, node_ref
from chainbudget.sparse_lu import Pattern

FREQUENCY = np.geomspace(10.0, 1e5, 25)


def _random_network(rng: np.random.Generator, nodes: int) -> Netlist:
    """A connected RC network with an op-amp (gain 1e5, a pole), a driven input and a
    controlled source: the kinds of rows and columns the stages stamp."""
    names = [f"n{i}" for i in range(nodes)]
    net = Netlist(FREQUENCY)
    trials = 6
    for i in range(1, nodes):  # a tree keeps every node connected
        r = 10 ** rng.uniform(2, 6, (trials, 1))
        net.resistor(names[i], names[int(rng.integers(0, i))], r, label=f"r{i}")
    for j in range(nodes):
        if rng.random() < 0.5:
            other = GROUND if rng.random() < 0.5 else names[int(rng.integers(0, nodes))]
            if other != names[j]:
                net.capacitor(names[j], other, 10 ** rng.uniform(-10, -6))
        if rng.random() < 0.3:
            net.resistor(names[j], GROUND, 10 ** rng.uniform(3, 6), label=f"g{j}")
    net.voltage_source(names[0], GROUND, label="drive")
    gain = 1e5 / (1 + 1j * FREQUENCY / 10.0)
    plus, minus, out = rng.choice(np.arange(1, nodes), size=3, replace=False)
    net.vcvs(names[plus], names[minus], names[out], gain, label="amp")
    return net


def _rhs(net: Netlist, columns: int, rng: np.random.Generator) -> NDArray[np.complex128]:
    return rng.normal(size=(net.size, columns)) + 1j * rng.normal(size=(net.size, columns))


@pytest.mark.parametrize("seed", range(40))
def test_random_networks_agree_with_partial_pivoting(seed: int) -> None:
    """Forty random networks of 4 to 14 nodes, 6 trials x 25 frequencies each, two and
    three right-hand sides, solved as they are and transposed (the adjoint solve): each
    matrix's backward error is as small as LAPACK's (under 1e-14), and the solutions agree
    with LAPACK's as two backward-stable solutions must, within the condition number times
    a few units of round-off of the largest entry (Higham, op. cit., sec. 7.1)."""
    rng = np.random.default_rng(seed)
    net = _random_network(rng, int(rng.integers(4, 15)))
    stamped = net.stamped()
    for s, b in ((stamped, _rhs(net, 2, rng)), (stamped.transposed(), _rhs(net, 3, rng))):
        m = s.batch_major()
        reference = np.linalg.solve(m, np.broadcast_to(b, (*m.shape[:-1], b.shape[-1])))
        found = sparse_lu.solve(s.entries, s.pattern, s.batch, b)
        residual = b - m @ found
        error = np.abs(residual).max(axis=(-2, -1)) / (
            np.abs(m).sum(axis=-1).max(axis=-1) * np.abs(found).max(axis=(-2, -1)) + np.abs(b).max()
        )
        assert error.max() < 1e-14
        condition = np.linalg.cond(m, p=np.inf)[..., None, None]
        largest = np.abs(reference).max(axis=(-2, -1), keepdims=True)
        assert np.all(np.abs(found - reference) <= 1e-14 * condition * largest)


def test_divider_and_source_by_hand() -> None:
    """A 1 V source into 3 k over 1 k: 0.25 V at the tap, the source delivering 1/4 mA
    (its branch current flows out of the + node: -0.25 mA)."""
    net = Netlist(np.array([1e3]))
    drive = net.voltage_source("in", GROUND, label="drive")
    net.resistor("in", "tap", 3e3, label="upper")
    net.resistor("tap", GROUND, 1e3, label="lower")
    k = net.index(drive)  # once every node is in: branches are numbered after the nodes
    b = np.zeros((net.size, 1))
    b[k, 0] = 1.0
    stamped = net.stamped()
    x = sparse_lu.solve(stamped.entries, stamped.pattern, stamped.batch, b)[0, :, 0]
    # rel 1e-11: every node's 1e-15 S leak to ground (`network.GMIN`) moves the tap by 6e-13
    assert x[net.index(node_ref("tap"))] == pytest.approx(0.25, rel=1e-11)
    assert x[net.index(node_ref("in"))] == pytest.approx(1.0, rel=1e-11)
    assert x[k] == pytest.approx(-0.25e-3, rel=1e-11)


def _two_by_two(
    a11: NDArray[np.float64],
) -> tuple[dict[tuple[int, int], NDArray[np.complex128]], Pattern]:
    """[[a11, 1], [1, 1]] for each a11 of a batch: the pattern pivots on a11 first."""
    dense = np.ones((2, 2, a11.size), dtype=complex)
    dense[0, 0] = a11
    pattern = Pattern(np.ones((2, 2), bool), np.zeros((2, 2), bool), nodes=2)
    return sparse_lu.by_entry(dense, pattern), pattern


def test_a_pivot_the_pattern_chose_badly_is_solved_with_partial_pivoting() -> None:
    """A pivot of 1e-20 (growth 1e20) or exactly zero breaks the static order; those
    matrices, and only those, take LAPACK's answer. For b = (1, 2): x1 + x2 = 2 and
    a11 x1 + x2 = 1, so x = (1, 1) / (1 - a11) + (0, -a11) / (1 - a11): (1, 1) to 1e-20."""
    a11 = np.array([2.0, 1e-20, 0.0, 0.5])
    entries, pattern = _two_by_two(a11)
    b = np.array([[1.0], [2.0]])
    found = sparse_lu.solve(entries, pattern, (4,), b)[..., 0]
    by_hand = np.stack([1 / (1 - a11), (1 - 2 * a11) / (1 - a11)], axis=-1)
    np.testing.assert_allclose(found, by_hand, rtol=1e-15)
    # the static order alone gets the 1e-20 pivot's x1 wrong (0 where it is 1)
    plan = sparse_lu.plan_for(pattern)
    assert plan is not None
    batch_b = np.repeat(b[:, :, None], 4, 2).astype(complex)
    with np.errstate(all="ignore"):
        unchecked = sparse_lu._factored_solve(plan, entries, batch_b)
        errors = sparse_lu._backward_error(
            plan, entries, batch_b, unchecked, sparse_lu._largest(batch_b)
        )
    assert abs(unchecked[0, 0, 1] - 1.0) > 0.5
    assert list(errors > sparse_lu.BACKWARD_ERROR) == [False, True, True, False]


def test_a_singular_matrix_raises() -> None:
    entries, pattern = _two_by_two(np.array([1.0]))  # [[1, 1], [1, 1]]
    with pytest.raises(np.linalg.LinAlgError):
        sparse_lu.solve(entries, pattern, (1,), np.array([[1.0], [0.0]]))


@pytest.mark.parametrize("seed", range(30))
def test_random_patterns_with_poor_static_pivots(seed: int) -> None:
    """Random sparse complex matrices (3 to 12 unknowns, a random permutation's entries
    and a few more, no node rows: the matching alone picks the pivots), 200 per pattern,
    with entries over eight decades so that many static pivots are poor: whatever the
    order gets wrong goes back to partial pivoting, and every matrix's backward error is
    LAPACK's level (under 1e-14)."""
    rng = np.random.default_rng(1000 + seed)
    n = int(rng.integers(3, 13))
    nonzero = np.zeros((n, n), bool)
    nonzero[np.arange(n), rng.permutation(n)] = True  # structurally nonsingular
    nonzero |= rng.random((n, n)) < 0.25
    size = 200
    magnitude = 10 ** rng.uniform(-4, 4, (n, n, size))
    phase = np.exp(2j * np.pi * rng.random((n, n, size)))
    entries = np.where(nonzero[:, :, None], magnitude * phase, 0.0)
    pattern = Pattern(nonzero, np.zeros((n, n), bool), nodes=0)
    b = rng.normal(size=(n, 2)) + 1j * rng.normal(size=(n, 2))
    found = sparse_lu.solve(sparse_lu.by_entry(entries, pattern), pattern, (size,), b)
    m = np.moveaxis(entries, (0, 1), (-2, -1))
    error = np.abs(b - m @ found).max(axis=(-2, -1)) / (
        np.abs(m).sum(axis=-1).max(axis=-1) * np.abs(found).max(axis=(-2, -1)) + np.abs(b).max()
    )
    assert error.max() < 1e-14


def _entries_some_broadcast(
    seed: int, size: int
) -> tuple[dict[tuple[int, int], NDArray[np.complex128]], Pattern, NDArray[np.complex128]]:
    """A random nonsingular pattern of 4 to 12 unknowns whose entries are arrays over a
    batch, every third one a single value broadcast over it (a part no trial draws, as
    the stages hand such entries in), and the matrices as a dense stack (N, N, size)."""
    rng = np.random.default_rng(2000 + seed)
    n = int(rng.integers(4, 13))
    nonzero = np.zeros((n, n), bool)
    nonzero[np.arange(n), rng.permutation(n)] = True
    nonzero |= rng.random((n, n)) < 0.3
    pattern = Pattern(nonzero, np.zeros((n, n), bool), nodes=0)
    entries: dict[tuple[int, int], NDArray[np.complex128]] = {}
    stack = np.zeros((n, n, size), dtype=complex)
    for i, (r, c) in enumerate(zip(*np.nonzero(nonzero), strict=True)):
        count = 1 if i % 3 == 0 else size
        value = 10 ** rng.uniform(-3, 3, count) * np.exp(2j * np.pi * rng.random(count))
        entries[int(r), int(c)] = np.broadcast_to(value, (size,)) if count == 1 else value
        stack[r, c] = entries[int(r), int(c)]
    return entries, pattern, stack


@pytest.mark.parametrize("seed", range(12))
def test_the_entries_handed_in_are_left_as_they_were(seed: int) -> None:
    """The elimination writes its multipliers and updated entries into copies and reads
    the rest where they are: after the solve every entry handed in holds the values it
    held before (a stage's stamped matrices are read again by the residual check and by
    the next solve of the same network), and the solutions agree with LAPACK's within
    the condition number times a few units of round-off (Higham, op. cit., sec. 7.1)."""
    entries, pattern, stack = _entries_some_broadcast(seed, 50)
    before = {key: value.copy() for key, value in entries.items()}
    n = stack.shape[0]
    b = np.random.default_rng(seed).normal(size=(n, 2)) + 0.5j
    found = sparse_lu.solve(entries, pattern, (50,), b)
    for key, value in entries.items():
        np.testing.assert_array_equal(value, before[key])
    m = np.moveaxis(stack, (0, 1), (-2, -1))
    reference = np.linalg.solve(m, np.broadcast_to(b, (50, n, 2)))
    condition = np.linalg.cond(m, p=np.inf)[..., None, None]
    largest = np.abs(reference).max(axis=(-2, -1), keepdims=True)
    assert np.all(np.abs(found - reference) <= 1e-14 * condition * largest)


@pytest.mark.parametrize("seed", range(6))
def test_largest_entry_against_the_dense_stack(seed: int) -> None:
    """||A|| of the residual check, max(|re|, |im|) over each matrix's entries, with some
    entries broadcast over the batch: the same numbers as the dense stack's, worked out
    in the test with numpy's own reductions (a maximum is exact)."""
    entries, pattern, stack = _entries_some_broadcast(seed, 40)
    plan = sparse_lu.plan_for(pattern)
    assert plan is not None
    by_hand = np.maximum(np.abs(stack.real), np.abs(stack.imag)).max(axis=(0, 1))
    np.testing.assert_array_equal(sparse_lu._largest_entry(plan, entries, 40), by_hand)
