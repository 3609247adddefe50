"""An op-amp stage's output current (the drive figures and the ``current`` limit) against
a plain nodal solve written here: numpy, the stage's admittance matrix stamped by hand,
independent of chainbudget.network."""

from __future__ import annotations

import tomllib

import numpy as np
import pytest

from chainbudget.budget.analysis import analyse
from chainbudget.chainfile import parse_chain

CHAIN = """
[chain]
title = "op-amp output current"
[source]
level = "10 mV"
impedance = "0 ohm"
[load]
impedance = "{load}"
[[supply]]
name = "bat"
kind = "dc"
voltage = "30 V"
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "9k"
ground_leg = "1k"
opamp = "part"
positive = "bat"
[opamp.part]
gbw = "{gbw}"
slew_rate = "1000 V/us"
noise_voltage = "1 nV/rtHz"
noise_current = "0.1 pA/rtHz"
open_loop_gain = "{gain_db} dB"
output_resistance = "{r_o} ohm"
swing_margin = "1 V"
output_current = "1 A"
supply_current = "1 mA"
"""


def _nodal_current(f: np.ndarray, a0: float, gbw: float, r_o: float, r_load: float) -> np.ndarray:
    """The non-inverting stage (9k from output to the - input, 1k from there to ground,
    the + input at the 1 V source) with its op-amp A(s) = A0/(1 + s A0/(2 pi GBW)) behind
    R_o, solved node by node: unknowns V_out, V_-, V_int (the source inside R_o); KCL at
    the output and the - input, and V_int = A (1 - V_-). The output current is then the
    load side's, V_out/R_L + (V_out - V_-)/R_f (Kirchhoff's current law at the output)."""
    r_f, r_g = 9e3, 1e3
    s = 2j * np.pi * f
    gain = a0 / (1.0 + s * a0 / (2.0 * np.pi * gbw))
    m = np.zeros((f.size, 3, 3), dtype=complex)
    b = np.zeros((f.size, 3), dtype=complex)
    m[:, 0, 0] = 1 / r_o + 1 / r_load + 1 / r_f
    m[:, 0, 1] = -1 / r_f
    m[:, 0, 2] = -1 / r_o
    m[:, 1, 0] = -1 / r_f
    m[:, 1, 1] = 1 / r_f + 1 / r_g
    m[:, 2, 1] = gain
    m[:, 2, 2] = 1.0
    b[:, 2] = gain
    v = np.linalg.solve(m, b[..., None])[..., 0]
    v_out, v_minus = v[:, 0], v[:, 1]
    return v_out / r_load + (v_out - v_minus) / r_f


def _chain_current(
    gain_db: float, gbw: str, r_o: float, load: str
) -> tuple[np.ndarray, np.ndarray]:
    text = CHAIN.format(gain_db=gain_db, gbw=gbw, r_o=r_o, load=load)
    analysis = analyse(parse_chain(tomllib.loads(text), "current.toml"))
    return analysis.frequency, analysis.nominal.probe(0, "pre.opamp.current")


def test_an_ideal_opamp_output_current_is_the_nodal_solve_at_every_frequency() -> None:
    """200 dB, 100 GHz, R_o = 0 (stamped as the solver's 1 mohm floor, used here too) into
    10 kohm: 2 mA per volt of source at every point. Read as the branch current of the
    op-amp's source, g1 V1 + g2 V2 with g2 ~ 1e12 S, it was off by up to 25 %; relative
    error < 1e-6 against the nodal solve, at every frequency."""
    f, current = _chain_current(200.0, "100 gigahertz", 0.0, "10 kohm")
    want = _nodal_current(f, 1e10, 100e9, 1e-3, 1e4)
    error = np.abs(np.abs(current) - np.abs(want)) / np.abs(want)
    assert np.all(error < 1e-6), (f[np.argmax(error)], float(error.max()))
    # the phase too: the current the op-amp delivers, in phase with the output
    assert np.allclose(current, want, rtol=1e-6, atol=0)


def test_an_ordinary_opamp_output_current_is_the_nodal_solve() -> None:
    """100 dB, 100 kHz, R_o = 75 ohm into 600 ohm: the closed loop's gain (10) falls and
    the current with it from about 10 kHz; relative error < 1e-6 against the nodal solve at every
    frequency."""
    f, current = _chain_current(100.0, "100 kilohertz", 75.0, "600 ohm")
    want = _nodal_current(f, 1e5, 1e5, 75.0, 600.0)
    assert np.allclose(current, want, rtol=1e-6, atol=0)
    # the premise: the loop runs out within the band, so the current moves over it
    assert np.ptp(np.abs(want)) > 0.1 * np.max(np.abs(want))


@pytest.mark.parametrize("r_o", [0.0, 75.0])
def test_the_check_drive_figure_is_the_nodal_current_at_max_level(r_o: float) -> None:
    """The check's ``drive_current_a``: |I_out / V_source| sqrt(2) V_max at the reference,
    V_max the source's max_level (here its default, the nominal level)."""
    from budgetkit import opamp_drives

    from chainbudget.budget import compute

    text = CHAIN.format(gain_db=200.0, gbw="100 gigahertz", r_o=r_o, load="10 kohm")
    chain = parse_chain(tomllib.loads(text), "current.toml")
    budget = compute(chain)
    drive = opamp_drives(budget)[0]
    reference = np.array([chain.settings.reference])
    per_volt = abs(_nodal_current(reference, 1e10, 100e9, max(r_o, 1e-3), 1e4)[0])
    want = per_volt * np.sqrt(2.0) * chain.source.max_level
    assert drive.peak_a == pytest.approx(want, rel=1e-6, abs=0)
