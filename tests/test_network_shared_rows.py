"""`chainbudget.network.shared_rows`: a batch whose rows repeat is assembled and solved once
per distinct row, with the same bits as the whole batch solved row by row.

References: the loaded RC divider by hand (Ohm's and Kirchhoff's laws: v_out / v_in =
Z2 / (R1 + Z2), Z2 = R2 || 1/(j w C)); a non-inverting op-amp stage's return ratio at
low frequency, T = A0 R_g / (R_f + R_g) (Bode's loop gain A beta; Franco, Design with
Operational Amplifiers and Analog Integrated Circuits, 4th ed., sec. 1.3, from memory),
here with the output resistance R_o in the feedback divider: T = |A| R_g / (R_o + R_f + R_g).
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager

import numpy as np
import pytest
from numpy.typing import NDArray

from chainbudget import network
from chainbudget.network import GROUND, Netlist, node_ref, shared_rows, two_port

FREQUENCY = np.array([20.0, 1e3, 2e4])
R1 = np.array([1e3, 2.2e3, 1e3, 4.7e3, 2.2e3, 1e3])  # rows 0, 2, 5 alike; 1 and 4 alike
C = np.array([10e-9, 22e-9, 10e-9, 10e-9, 22e-9, 10e-9])


@contextmanager
def _solved_counted() -> Iterator[list[int]]:
    """The matrices the batched solve (`chainbudget.sparse_lu.solve`) is handed (the
    batch's leading axis' length), per call."""
    counted: list[int] = []
    original = network.sparse_lu.solve

    def counting(entries: object, pattern: object, batch: tuple[int, ...], b: object) -> object:
        counted.append(batch[0] if len(batch) > 1 else 1)
        return original(entries, pattern, batch, b)  # type: ignore[arg-type]

    network.sparse_lu.solve = counting  # type: ignore[assignment]
    try:
        yield counted
    finally:
        network.sparse_lu.solve = original


def _divider(r1: NDArray[np.float64], c: NDArray[np.float64]) -> Netlist:
    net = Netlist(FREQUENCY)
    net.resistor("in", "out", r1.reshape(-1, 1), label="r1")
    net.resistor("out", GROUND, 1e3, label="r2")
    net.capacitor("out", GROUND, c.reshape(-1, 1))
    return net


def _out(net: Netlist) -> NDArray[np.complex128]:
    k = net.index(net.voltage_source("in", GROUND, label="drive"))
    rhs = np.zeros((net.size, 1))
    rhs[k, 0] = 1.0
    return net.solve(rhs)[..., net.index(node_ref("out")), 0]


def test_repeated_rows_are_solved_once_each_with_the_same_bits() -> None:
    """Six rows, three distinct: within `shared_rows` numpy is handed three matrices per
    frequency, the solution is bit for bit the plain one, and both are the hand divider
    (rtol 1e-12)."""
    plain = _out(_divider(R1, C))
    with _solved_counted() as counted, shared_rows():
        shared = _out(_divider(R1, C))
    assert counted == [3]
    assert np.array_equal(shared, plain)
    w = 2.0 * np.pi * FREQUENCY
    z2 = 1.0 / (1.0 / 1e3 + 1j * w * C.reshape(-1, 1))
    np.testing.assert_allclose(plain, z2 / (R1.reshape(-1, 1) + z2), rtol=1e-12, atol=0)


@pytest.mark.parametrize("r1", [1e3, 2.2e3, 4.7e3, 6.8e3, 10e3, 47e3])
def test_rows_all_alike_are_one_solve_with_the_same_bits(r1: float) -> None:
    """Every row alike: one matrix per frequency, and the same bits as the whole batch (a
    per-row value is stamped as an array even where one row is left, not summed into the
    constant part: at 6.8k and 10k that order of sums rounds differently)."""
    r, c = np.full(5, r1), np.full(5, 47e-9)
    plain = _out(_divider(r, c))
    with _solved_counted() as counted, shared_rows():
        shared = _out(_divider(r, c))
    assert counted == [1]
    assert np.array_equal(shared, plain)


def test_outside_shared_rows_every_row_is_solved() -> None:
    with _solved_counted() as counted:
        _out(_divider(R1, C))
    assert counted == [R1.size]


def _follower_stage(rf: NDArray[np.float64]) -> Netlist:
    net = Netlist(FREQUENCY)
    net.opamp("in", "n", "out", open_loop_gain=1e5, gbw=1e6, output_resistance=50.0, label="u")
    net.resistor("out", "n", rf.reshape(-1, 1), label="rf")
    net.resistor("n", GROUND, 1e3, label="rg")
    return net


def test_two_ports_adjoints_and_return_ratios_repeat_the_plain_bits() -> None:
    """An op-amp stage whose feedback resistor repeats over six rows: its two-port, its
    adjoint transfers and its return ratio within `shared_rows` equal the plain ones bit
    for bit, and the return ratio's magnitude at 20 Hz is |A| R_g / (R_o + R_f + R_g),
    |A| = A0 / sqrt(1 + (f A0 / GBW)^2) (rtol 1e-9)."""
    rf = np.array([9e3, 9e3, 4e3, 9e3, 4e3, 9e3])
    found = {}
    for mode in ("plain", "shared"):
        with shared_rows() if mode == "shared" else _nothing():
            port = two_port(_follower_stage(rf), "in", "out", {"n": node_ref("n")})
            z, transfers = _follower_stage(rf).adjoint_transfer("out")
            ratio = _follower_stage(rf).return_ratio("u")
        found[mode] = (port.a, port.b, port.c, port.d, *port.probes["n"], z, *transfers, ratio)
    for got, expected in zip(found["shared"], found["plain"], strict=True):
        assert np.array_equal(got, expected)
    ratio = found["plain"][-1][:, 0]
    gain = 1e5 / np.sqrt(1.0 + (20.0 * 1e5 / 1e6) ** 2)  # |A| at 20 Hz
    np.testing.assert_allclose(np.abs(ratio), gain * 1e3 / (50.0 + rf + 1e3), rtol=1e-9, atol=0)


@contextmanager
def _nothing() -> Iterator[None]:
    yield
