"""Tests for chainbudget.network: the MNA solver, its batch axes, two-ports and adjoints.

References: scipy.signal.freqs (a reference library) evaluating the analytic transfer
polynomial of each filter; hand solutions of resistive dividers (Ohm's and Kirchhoff's
laws); the chain (ABCD) parameters of a series and a shunt element (Pozar, Microwave
Engineering, 4th ed., Table 4.1, quoted from memory).
"""

from __future__ import annotations

import numpy as np
import pytest
from numpy.typing import NDArray
from scipy import signal
from scipy.constants import k as BOLTZMANN

from chainbudget.network import GROUND, Netlist, node_ref, two_port

FREQUENCY = np.logspace(0, 6, 61)  # 1 Hz .. 1 MHz


def _driven(net: Netlist, node: str = "in") -> NDArray[np.complex128]:
    """Solve ``net`` with a 1 V source from ``node`` to ground; all unknowns, (..., F, N)."""
    k = net.index(net.voltage_source(node, GROUND, label="drive"))
    rhs = np.zeros((net.size, 1))
    rhs[k, 0] = 1.0
    return net.solve(rhs)[..., 0]


def _node(net: Netlist, x: NDArray[np.complex128], name: str) -> NDArray[np.complex128]:
    return x[..., net.index(node_ref(name))]


def _freqs(numerator: list[float], denominator: list[float]) -> NDArray[np.complex128]:
    _, h = signal.freqs(numerator, denominator, worN=2.0 * np.pi * FREQUENCY)
    return np.asarray(h)


def test_rc_low_pass_matches_scipy_freqs() -> None:
    """RC low-pass H(s) = 1/(sRC + 1), checked against scipy.signal.freqs; rtol 1e-7.

    R = 10 kohm, C = 15.9 nF (corner near 1 kHz). The solver's leak per node (GMIN) is
    far below 1/R."""
    r, c = 10e3, 15.9e-9
    net = Netlist(FREQUENCY)
    net.resistor("in", "out", r, label="r")
    net.capacitor("out", GROUND, c)
    x = _driven(net)
    np.testing.assert_allclose(_node(net, x, "out"), _freqs([1.0], [r * c, 1.0]), rtol=1e-7)


def test_two_loaded_rc_sections_match_scipy_freqs() -> None:
    """Two cascaded RC sections without a buffer, second loading the first:
    H(s) = 1/(s^2 R1C1R2C2 + s(R1C1 + R2C2 + R1C2) + 1) (nodal analysis by hand),
    against scipy.signal.freqs; rtol 1e-7."""
    r1, c1, r2, c2 = 1e3, 100e-9, 10e3, 4.7e-9
    net = Netlist(FREQUENCY)
    net.resistor("in", "a", r1, label="r1")
    net.capacitor("a", GROUND, c1)
    net.resistor("a", "out", r2, label="r2")
    net.capacitor("out", GROUND, c2)
    x = _driven(net)
    expected = _freqs([1.0], [r1 * c1 * r2 * c2, r1 * c1 + r2 * c2 + r1 * c2, 1.0])
    np.testing.assert_allclose(_node(net, x, "out"), expected, rtol=1e-7)


def test_unity_gain_sallen_key_low_pass_matches_scipy_freqs() -> None:
    """Unity-gain Sallen-Key low-pass (ideal buffer as a VCVS of gain 1):
    H(s) = 1/(s^2 R1R2C1C2 + s C2(R1 + R2) + 1), C1 from the resistor junction to the
    output, C2 to ground (Sallen & Key, IRE Trans. Circuit Theory CT-2 (1955) 74; form
    quoted from memory), against scipy.signal.freqs; rtol 1e-7."""
    r1, r2, c1, c2 = 10e3, 10e3, 22e-9, 10e-9
    net = Netlist(FREQUENCY)
    net.resistor("in", "a", r1, label="r1")
    net.resistor("a", "b", r2, label="r2")
    net.capacitor("a", "out", c1)
    net.capacitor("b", GROUND, c2)
    net.vcvs("b", GROUND, "out", 1.0, label="buffer")
    x = _driven(net)
    expected = _freqs([1.0], [r1 * r2 * c1 * c2, c2 * (r1 + r2), 1.0])
    np.testing.assert_allclose(_node(net, x, "out"), expected, rtol=1e-7)
    # Q = sqrt(R1R2C1C2)/(C2(R1+R2)) = 0.742 > 0.707: the response peaks above 0 dB.
    assert np.abs(_node(net, x, "out")).max() > 1.0


def test_resistive_ladder_matches_the_hand_solution() -> None:
    """10 V into 1k series, 1k shunt, 1k series, 1k shunt. By hand: the second section
    (2k) in parallel with the first shunt is 2/3 k, so V1 = 10 (2/3)/(1 + 2/3) = 4 V,
    V2 = V1/2 = 2 V, and the source delivers 10 V / (5/3 k) = 6 mA (Ohm's and Kirchhoff's
    laws). The source's branch unknown is the current into its + terminal from the
    network side, i.e. -6 mA. rtol 1e-9 (the solver's leak per node, GMIN, is ~1e-12 of
    these conductances)."""
    net = Netlist(np.array([0.0]))
    net.resistor("in", "v1", 1e3, label="r1")
    net.resistor("v1", GROUND, 1e3, label="r2")
    net.resistor("v1", "v2", 1e3, label="r3")
    net.resistor("v2", GROUND, 1e3, label="r4")
    k = net.index(net.voltage_source("in", GROUND, label="drive"))
    rhs = np.zeros((net.size, 1))
    rhs[k, 0] = 10.0
    x = net.solve(rhs)[..., 0]
    np.testing.assert_allclose(_node(net, x, "v1"), [4.0], rtol=1e-9)
    np.testing.assert_allclose(_node(net, x, "v2"), [2.0], rtol=1e-9)
    np.testing.assert_allclose(x[..., k], [-6e-3], rtol=1e-9)


def test_batch_axes_broadcast_with_frequency() -> None:
    """Element values with leading batch axes broadcast against the frequency axis: two
    axes (3 resistors x 4 capacitors) give a batch + (F, N, N) matrix, and every entry
    equals the scalar RC low-pass of its own values (scipy.signal.freqs); rtol 1e-7."""
    resistors = np.array([1e3, 10e3, 47e3])
    capacitors = np.array([1e-9, 10e-9, 100e-9, 1e-6])
    net = Netlist(FREQUENCY)
    net.resistor("in", "out", resistors[:, None, None], label="r")
    net.capacitor("out", GROUND, capacitors[None, :, None])
    x = _driven(net)
    assert net.size == 3  # in, out, the source branch
    assert net.matrix().shape == (3, 4, FREQUENCY.size, 3, 3)
    out = _node(net, x, "out")
    assert out.shape == (3, 4, FREQUENCY.size)
    for i, r in enumerate(resistors):
        for j, c in enumerate(capacitors):
            np.testing.assert_allclose(out[i, j], _freqs([1.0], [r * c, 1.0]), rtol=1e-7)


def test_solving_at_some_points_gives_those_points_exactly() -> None:
    """``Netlist(points=...)`` assembles and solves at those frequency indices only: there
    the node voltages equal the closed form, every other point holds the first point's
    solution (the placeholder the spread masks out). The network: a VCVS whose gain is on
    the frequency axis, g(f) = 1/(1 + j f/f0), driving an RC low-pass whose resistor is
    batched, so H = g(f)/(1 + s R C) (scipy.signal.freqs for the RC, the pole by hand);
    rtol 1e-7."""
    resistors = np.array([1e3, 47e3])
    c, f0 = 15.9e-9, 3e3
    gain = 1.0 / (1.0 + 1j * FREQUENCY / f0)
    points = np.array([0, 7, 30, 60])
    net = Netlist(FREQUENCY, points)
    net.vcvs("in", GROUND, "buf", gain, label="e")
    net.resistor("buf", "out", resistors[:, None], label="r")
    net.capacitor("out", GROUND, c)
    out = _node(net, _driven(net), "out")
    assert out.shape == (2, FREQUENCY.size)
    for i, r in enumerate(resistors):
        expected = gain * _freqs([1.0], [r * c, 1.0])
        np.testing.assert_allclose(out[i, points], expected[points], rtol=1e-7)
        others = np.setdiff1d(np.arange(FREQUENCY.size), points)
        np.testing.assert_array_equal(out[i, others], out[i, 0])


def test_series_and_shunt_two_ports_have_textbook_chain_parameters() -> None:
    """Series impedance Z: [[1, Z], [0, 1]]; shunt admittance Y: [[1, 0], [Y, 1]]
    (Pozar, Microwave Engineering, 4th ed., Table 4.1); atol 1e-9 relative to scale."""
    z = 2.2e3
    series = Netlist(np.array([1e3]))
    series.resistor("in", "out", z, label="z")
    p = two_port(series, "in", "out", {})
    np.testing.assert_allclose(
        [p.a, p.b / z, p.c * z, p.d], [[1.0], [1.0], [0.0], [1.0]], atol=1e-8
    )

    c = 47e-9
    shunt = Netlist(np.array([1e3]))
    shunt.resistor("in", "out", 1e-3, label="link")  # a near-short joins the two ports
    shunt.capacitor("out", GROUND, c)
    q = two_port(shunt, "in", "out", {})
    y = 2j * np.pi * 1e3 * c
    np.testing.assert_allclose(q.c, [y], rtol=1e-6)
    np.testing.assert_allclose(q.a, [1.0], rtol=1e-6)


def test_two_port_loaded_divider_and_output_impedance() -> None:
    """A 1k/1k divider as a two-port: unloaded V2/V1 = 1/2, with a 1k load 1/3, output
    impedance from a 0-ohm source 500 ohm, input admittance unloaded 1/(2k) (Thevenin,
    Horowitz & Hill 3rd ed. sec. 1.2.5); rtol 1e-9."""
    net = Netlist(np.array([1e3]))
    net.resistor("in", "out", 1e3, label="top")
    net.resistor("out", GROUND, 1e3, label="bottom")
    p = two_port(net, "in", "out", {"mid": node_ref("out")})
    np.testing.assert_allclose(p.voltage_ratio(0.0), [0.5], rtol=1e-9)
    np.testing.assert_allclose(p.voltage_ratio(1e-3), [1.0 / 3.0], rtol=1e-9)
    np.testing.assert_allclose(p.output_impedance(0.0), [500.0], rtol=1e-9)
    np.testing.assert_allclose(p.input_admittance(0.0), [1.0 / 2e3], rtol=1e-9)
    g1, g2 = p.probes["mid"]  # the probe of the output node is V2 itself
    np.testing.assert_allclose([g1, g2], [[0.0], [1.0]], atol=1e-9)


def test_adjoint_transfer_equals_direct_solves_per_source() -> None:
    """The adjoint method (Director & Rohrer, IEEE Trans. Circuit Theory CT-16 (1969) 318)
    gives, from one transposed solve, the same transfer from every noise generator to the
    output as one direct solve per generator; rtol 1e-9.

    Network: an inverting op-amp stage with a capacitor across its feedback resistor, all
    resistors noisy, op-amp voltage noise at its branch; a batch axis on the feedback
    resistor."""
    frequency = np.logspace(1, 5, 9)
    net = Netlist(frequency)
    net.resistor("in", "sum", 10e3, label="input", temperature_k=300.0)
    net.resistor("out", "sum", np.array([22e3, 47e3])[:, None], label="fb", temperature_k=300.0)
    net.capacitor("out", "sum", 100e-12)
    net.resistor("in", GROUND, 1e3, label="source", temperature_k=300.0)
    branch = net.opamp(
        GROUND, "sum", "out", open_loop_gain=1e5, gbw=10e6, output_resistance=50.0, label="op"
    )
    gain = net.open_loop_gain(1e5, 10e6)
    net.voltage_noise_at(branch, gain, 1e-17, "op.e_n", "s", "opamp", "e_n")
    net.current_noise("sum", GROUND, 1e-26, "op.i_n", "s", "opamp", "i_n")
    assert len(net.noise) == 5

    _, transfers = net.adjoint_transfer("out")
    out = net.index(node_ref("out"))
    for source, transfer in zip(net.noise, transfers, strict=True):
        rhs = np.zeros((2, frequency.size, net.size, 1), dtype=complex)
        for ref, coefficient in source.rhs:
            rhs[..., net.index(ref), 0] = coefficient
        direct = np.linalg.solve(net.matrix(), rhs)[..., out, 0]
        assert transfer.shape == (2, frequency.size)
        np.testing.assert_allclose(transfer, direct, rtol=1e-9)


def test_thermal_noise_of_a_resistor_is_4ktr() -> None:
    """A resistor with a temperature carries a current generator 4kT/R A^2/Hz
    (Johnson/Nyquist 1928; kT from scipy.constants); at the open terminals of a 1 kohm
    resistor at 290 K that is 4kTR = 1.60e-17 V^2/Hz (4.0 nV/rtHz, Horowitz & Hill 3rd ed.
    sec. 8.1.1); rtol 1e-6."""
    net = Netlist(np.array([1e3]))
    net.resistor("a", GROUND, 1e3, label="r", temperature_k=290.0)
    _, (transfer,) = net.adjoint_transfer("a")
    v2 = net.noise[0].psd * np.abs(transfer) ** 2
    np.testing.assert_allclose(v2, [4.0 * BOLTZMANN * 290.0 * 1e3], rtol=1e-6)
    assert np.sqrt(v2[0]) == pytest.approx(4.0e-9, rel=2e-3, abs=0)


def test_pot_splits_its_track_by_fraction() -> None:
    """A pot at fraction x from a 1 V source is an unloaded divider: V_wiper = x (the
    contract's 1e-6 end resistances shift it by ~1e-6; rtol 1e-5)."""
    fractions = np.array([0.0, 0.1, 0.5, 0.9, 1.0])[:, None]
    net = Netlist(np.array([1e3]))
    net.pot("in", GROUND, "w", 10e3, fractions, label="pot")
    x = _driven(net)
    np.testing.assert_allclose(_node(net, x, "w")[:, 0], fractions[:, 0], rtol=1e-5, atol=1e-5)


def test_duplicate_branch_label_is_refused() -> None:
    """Branch labels name unknowns; two alike would silently alias."""
    net = Netlist(np.array([1.0]))
    net.voltage_source("a", GROUND, label="v")
    with pytest.raises(ValueError, match="already"):
        net.voltage_source("b", GROUND, label="v")


def test_a_singular_network_is_an_input_error() -> None:
    """Two ideal sources across one pair of nodes: the MNA rows are dependent (Ho, Ruehli &
    Brennan 1975: each source adds a row fixing the same voltage difference), so the matrix
    is singular. The solver says so as an input error, in the solve and in the adjoint
    noise transfer alike, never as numpy's LinAlgError."""
    from chainbudget import ChainError
    from chainbudget.network import SingularNetwork

    net = Netlist(FREQUENCY)
    net.resistor("a", GROUND, 1e3, label="r")
    first = net.index(net.voltage_source("a", GROUND, label="one"))
    net.voltage_source("a", GROUND, label="two")
    rhs = np.zeros((net.size, 1))
    rhs[first, 0] = 1.0
    with pytest.raises(SingularNetwork, match="no single solution") as info:
        net.solve(rhs)
    assert isinstance(info.value, ChainError) and isinstance(info.value, ValueError)
    with pytest.raises(SingularNetwork):
        net.adjoint_transfer("a")
