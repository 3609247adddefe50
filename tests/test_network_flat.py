"""A network none of whose element values varies with frequency is solved at one point
and its solution stands at every point (`chainbudget.network.Netlist.solve`,
`two_port`): the same figures as solving each point, and the textbook ones.

References: the chain (ABCD) parameters of a series and a shunt element and their
cascade as a matrix product (Pozar, Microwave Engineering, 4th ed., Table 4.1 and
sec. 4.4, quoted from memory); the RC low-pass 1/(1 + jwRC) by nodal analysis by hand.
"""

from __future__ import annotations

import numpy as np
import pytest

from chainbudget import network
from chainbudget.network import GROUND, Netlist, node_ref, two_port

FREQUENCY = np.logspace(1, 5, 41)  # 10 Hz .. 100 kHz
R_SERIES = np.array([[1.0e3], [2.2e3], [4.7e3]])  # a batch of three rows, (3, 1)
R_SHUNT = 10.0e3


def _l_section(frequency: np.ndarray, points: np.ndarray | None = None) -> Netlist:
    """Series R1 from in to out, shunt R2 from out to ground: no element has frequency."""
    net = Netlist(frequency, points=points)
    net.resistor("in", "out", R_SERIES, label="series")
    net.resistor("out", GROUND, R_SHUNT, label="shunt")
    return net


def test_a_resistive_l_section_has_the_textbook_chain_parameters_at_every_point() -> None:
    """[[1, R1], [0, 1]] [[1, 0], [1/R2, 1]] = [[1 + R1/R2, R1], [1/R2, 1]] (Pozar Table
    4.1, cascaded by sec. 4.4), at each of the 41 points of each row; rtol 1e-9. The
    network is flat, solved at one point: its parameters are read-only views that repeat
    that point along the axis (stride 0)."""
    net = _l_section(FREQUENCY)
    assert net.flat_over_frequency()
    p = two_port(net, "in", "out", {"mid": node_ref("out")})
    shape = (3, FREQUENCY.size)
    for value, expected in (
        (p.a, 1.0 + R_SERIES / R_SHUNT),
        (p.b, R_SERIES),
        (p.c, np.full_like(R_SERIES, 1.0 / R_SHUNT)),
        (p.d, np.ones_like(R_SERIES)),
    ):
        assert value.shape == shape
        np.testing.assert_allclose(value, np.broadcast_to(expected, shape), rtol=1e-9)
        assert value.strides[-1] == 0 and not value.flags.writeable
    g1, g2 = p.probes["mid"]  # the output node is V2 itself
    np.testing.assert_allclose(g2, np.ones(shape), rtol=1e-9)
    assert g1.shape == shape


def test_a_flat_network_gives_the_same_bits_as_solving_every_point(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    """The parameters solved at one point equal, bit for bit, those solved at each point
    (the flat path turned off), on the whole axis and on a row's points alone."""
    points = np.array([0, 3, 17, 40])
    flat = [two_port(_l_section(FREQUENCY, at), "in", "out", {}) for at in (None, points)]
    monkeypatch.setattr(Netlist, "flat_over_frequency", lambda self: False)
    each = [two_port(_l_section(FREQUENCY, at), "in", "out", {}) for at in (None, points)]
    for one, every in zip(flat, each, strict=True):
        for name in "abcd":
            np.testing.assert_array_equal(getattr(one, name), getattr(every, name))


def test_a_capacitor_makes_the_network_vary_with_frequency() -> None:
    """An RC low-pass is not flat: each point is solved, V2/V1 unloaded = 1/(1 + jwRC)
    (by hand) at every point; rtol 1e-9. Taking it for flat would give the first
    point's value everywhere."""
    r, c = 10e3, 15.9e-9
    net = Netlist(FREQUENCY)
    net.resistor("in", "out", r, label="r")
    net.capacitor("out", GROUND, c)
    assert not net.flat_over_frequency()
    p = two_port(net, "in", "out", {})
    expected = 1.0 / (1.0 + 2j * np.pi * FREQUENCY * r * c)
    np.testing.assert_allclose(p.voltage_ratio(0.0), expected, rtol=1e-9)


def test_a_right_hand_side_per_row_is_solved_at_one_point_too() -> None:
    """`Netlist.solve` with one right-hand side per row and frequency is not taken for
    flat (the right-hand side may vary along the axis): each point is solved."""
    net = _l_section(FREQUENCY)
    k = net.index(net.voltage_source("in", GROUND, label="drive"))
    rhs = np.zeros((3, FREQUENCY.size, net.size, 1))
    rhs[..., k, 0] = np.linspace(1.0, 2.0, FREQUENCY.size)  # a drive that grows with f
    x = net.solve(rhs)
    out = x[..., net.index(node_ref("out")), 0]
    expected = np.linspace(1.0, 2.0, FREQUENCY.size) * R_SHUNT / (R_SERIES + R_SHUNT)
    np.testing.assert_allclose(out, expected, rtol=1e-9)
    assert network.Netlist.flat_over_frequency(net)
