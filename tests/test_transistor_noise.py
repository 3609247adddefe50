"""A transistor's input noise, read from the real command's JSON, against closed forms.

One emitter follower (current-sink bias, so nothing but the transistor and the source
resistance makes noise) between a resistive source and the load; the check's
`input_noise_vrms` (the output noise referred to the source EMF, over the band) gives the
input-referred density: every source here is white, so v_eq^2 = input_noise_vrms^2 / B with
B = 20 kHz - 20 Hz. Densities are compared in dB: a power spectral density near 1e-18 V^2/Hz
is lost under pytest.approx's default absolute floor of 1e-12.

Sources:
- The hybrid-pi noise model (van der Ziel, Noise in Solid State Devices and Circuits, 1986,
  from memory): shot noise 2qI_B from the internal base b' to the emitter, shot noise 2qI_C
  from the collector to the emitter, thermal noise 4kT r_bb' of the base spreading
  resistance; r_pi is a dynamic resistance and makes no noise.
- The textbook densities (Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 8.3.1-8.3.2,
  and Motchenbacher & Connelly, Low-Noise Electronic System Design, 1993, ch. 4, both from
  memory): e_n^2 = 4kT r_bb' + 2qI_C r_e^2 with r_e = V_T/I_C, i_n^2 = 2qI_B.
Constants: scipy.constants (SI 2019 exact k and q).
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass
from pathlib import Path

import pytest
from scipy import constants
from typer.testing import CliRunner

from chainbudget.cli import app

K, Q = constants.k, constants.e
T = 300.0  # the chain's ambient, 26.85 degC
BAND_HZ = 20e3 - 20.0

runner = CliRunner()


@dataclass(frozen=True)
class Follower:
    """One case: source resistance, the transistor's beta and r_bb', the sink's current."""

    source_ohm: float
    beta: float
    rbb_ohm: float
    current_a: float


def chain_text(case: Follower) -> str:
    return f"""
[chain]
title = "transistor noise"
band = ["20 Hz", "20 kHz"]
ambient = "26.85 degC"
points_per_decade = 20
[source]
level = "1 mV"
impedance = "{case.source_ohm!r} ohm"
[load]
impedance = "600 ohm"
[transistor.q]
polarity = "npn"
beta = {case.beta!r}
base_resistance = "{case.rbb_ohm!r} ohm"
[[supply]]
name = "plus"
kind = "dc"
voltage = "15 V"
[[supply]]
name = "minus"
kind = "dc"
voltage = "15 V"
[[stage]]
name = "buf"
kind = "follower"
transistor = "q"
bias = "current"
current = "{case.current_a!r} A"
positive = "plus"
negative = "minus"
"""


def input_psd(case: Follower, tmp_path: Path) -> float:
    """Input-referred noise density squared, V^2/Hz, from `check --format json`."""
    file = tmp_path / "follower.toml"
    file.write_text(chain_text(case), encoding="utf-8")
    result = runner.invoke(app, ["check", str(file), "--format", "json"])
    assert result.exit_code in (0, 1), result.output
    return float(json.loads(result.stdout)["input_noise_vrms"]) ** 2 / BAND_HZ


def db10(power: float) -> float:
    return 10.0 * math.log10(power)


def follower_closed_form(case: Follower) -> float:
    """v_eq^2 (V^2/Hz) of a follower from source resistance R_s, by hand.

    Nodal analysis of the hybrid-pi follower (collector at AC ground, emitter into any load;
    r_pi = (beta + 1) r_e, g_m r_pi = beta, r_e = V_T/I_E), each noise source referred to the
    source EMF; with R = R_s + r_bb':
    - r_bb' and R_s in series with the source: 4kT (R_s + r_bb');
    - base shot i_b across r_pi: v_eq = i_b (r_e - R beta/(beta + 1));
    - collector shot i_c into the emitter: v_eq = i_c (r_e + R/(beta + 1)).
    The load cancels out of every referral; the three sources are uncorrelated.
    """
    i_e = case.current_a
    i_c = case.beta / (case.beta + 1.0) * i_e
    i_b = i_e - i_c
    r_e = K * T / Q / i_e
    r = case.source_ohm + case.rbb_ohm
    thermal = 4.0 * K * T * r
    base = 2.0 * Q * i_b * (r_e - r * case.beta / (case.beta + 1.0)) ** 2
    collector = 2.0 * Q * i_c * (r_e + r / (case.beta + 1.0)) ** 2
    return thermal + base + collector


# Each case is set so that one noise source carries most of the total (its share in the
# comment), so a model that loses it, scales it or takes it at the wrong temperature moves the
# total by far more than the tolerance.
CASES = {
    "collector shot (r_bb' 0, R_s 0: 99 % collector)": Follower(0.0, 100.0, 0.0, 1e-3),
    "r_bb' thermal (1 kohm, beta 1000: 97 % r_bb')": Follower(0.0, 1000.0, 1e3, 1e-3),
    "base shot (R_s 100 kohm: 94 % base)": Follower(100e3, 100.0, 0.0, 1e-3),
    "all together (generic small-signal values)": Follower(10e3, 200.0, 100.0, 0.5e-3),
}


@pytest.mark.parametrize("case", CASES.values(), ids=CASES.keys())
def test_follower_input_noise_is_the_hybrid_pi_closed_form(case: Follower, tmp_path: Path) -> None:
    """Independent closed form (nodal analysis written out in `follower_closed_form`) against
    the real command's input-referred noise: within 0.001 dB (the band integral on a log grid
    of 20 points per decade is exact to about 1e-5 for a white density)."""
    assert db10(input_psd(case, tmp_path)) == pytest.approx(
        db10(follower_closed_form(case)), abs=1e-3
    )


def test_voltage_noise_density_is_the_textbook_en(tmp_path: Path) -> None:
    """Horowitz & Hill 3rd ed. sec. 8.3.1 / Motchenbacher & Connelly ch. 4 (from memory):
    e_n^2 = 4kT r_bb' + 2qI_C r_e^2, r_e = V_T/I_C. Source shorted (R_s = 0), beta 1000,
    r_bb' 100 ohm, 1 mA: 1.37 nV/rtHz, r_bb' 88 % and collector shot 12 % of it. The textbook
    form leaves out the base shot noise through r_bb' and terms in 1/beta, together under
    0.3 % of e_n^2 here: within 0.02 dB."""
    case = Follower(0.0, 1000.0, 100.0, 1e-3)
    i_c = case.beta / (case.beta + 1.0) * case.current_a
    r_e = K * T / Q / i_c
    e_n2 = 4.0 * K * T * case.rbb_ohm + 2.0 * Q * i_c * r_e**2
    assert math.sqrt(e_n2) == pytest.approx(1.37e-9, rel=5e-3, abs=0)
    assert db10(input_psd(case, tmp_path)) == pytest.approx(db10(e_n2), abs=0.02)


def test_current_noise_density_is_the_textbook_in(tmp_path: Path) -> None:
    """Horowitz & Hill 3rd ed. sec. 8.3.2 / Motchenbacher & Connelly ch. 4 (from memory):
    i_n^2 = 2qI_B, and from a source resistance R_s the input noise is
    4kT R_s + e_n^2 + i_n^2 R_s^2 (Motchenbacher & Connelly ch. 1, from memory). beta 1000,
    1 mA (I_B = 1.0 uA: 0.566 pA/rtHz), R_s = 1 Mohm, where i_n R_s carries 95 % of the
    total; i_n taken out of the real command's figure agrees within 0.02 dB (terms in
    1/beta and the e_n/i_n correlation: under 0.3 %)."""
    case = Follower(1e6, 1000.0, 0.0, 1e-3)
    i_b = case.current_a / (case.beta + 1.0)
    i_c = case.current_a - i_b
    e_n2 = 2.0 * Q * i_c * (K * T / Q / i_c) ** 2
    measured = (input_psd(case, tmp_path) - 4.0 * K * T * case.source_ohm - e_n2) / (
        case.source_ohm**2
    )
    assert math.sqrt(2.0 * Q * i_b) == pytest.approx(0.566e-12, rel=2e-3, abs=0)
    assert db10(measured) == pytest.approx(db10(2.0 * Q * i_b), abs=0.02)
