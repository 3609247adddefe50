"""Tests for chainbudget.outputmath: emitter follower and class-B/AB output stage physics.

Each test names its reference and tolerance. Book values are quoted from memory (section
numbers as remembered); scenarios without a book example are our own, with the expected
figure worked by hand in the comment or checked against an independent computation
(a hybrid-pi nodal solve with numpy, or scipy.integrate / scipy.signal).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import integrate, signal

from chainbudget import outputmath as om
from chainbudget.thermal import junction_temperature

# --------------------------------------------------------------------------------------
# Small-signal quantities
# --------------------------------------------------------------------------------------


def test_thermal_voltage_matches_exact_si_constants() -> None:
    """SI 2019 exact k = 1.380649e-23 J/K, e = 1.602176634e-19 C (typed here): rtol 1e-12."""
    expected = 1.380649e-23 * 300.0 / 1.602176634e-19  # 25.852 mV
    assert om.thermal_voltage(300.0) == pytest.approx(expected, rel=1e-12, abs=0)
    np.testing.assert_allclose(
        om.thermal_voltage(np.array([273.15, 300.0])), [0.023539, 0.025852], rtol=1e-4
    )


def test_emitter_resistance_is_25_85_ohm_at_1_ma_300_k() -> None:
    """Horowitz & Hill 3rd ed. sec. 2.3.2 (from memory): r_e = V_T / I_E, 25.85 ohm at 1 mA
    and 300 K; rtol 1e-3."""
    vt = om.thermal_voltage(300.0)
    assert om.emitter_resistance(1e-3, vt) == pytest.approx(25.85, rel=1e-3, abs=0)
    assert om.transconductance(1e-3, vt) == pytest.approx(1 / 25.852, rel=1e-3, abs=0)
    # r_pi = beta / g_m: beta 100 at 1 mA -> 2.585 kohm
    assert om.r_pi(100.0, om.transconductance(1e-3, vt)) == pytest.approx(2585.2, rel=1e-4, abs=0)


def test_parallel_combines_resistors_shorts_and_opens() -> None:
    """Ohm's law, 1/Z = sum 1/Z_k (common practice, no source); exact to rtol 1e-12."""
    assert om.parallel(1e3, 1e3) == pytest.approx(500.0, rel=1e-12, abs=0)
    assert om.parallel(1500.0, 600.0) == pytest.approx(428.5714286, rel=1e-9, abs=0)
    assert om.parallel(1e3, 0.0) == 0.0
    assert om.parallel(1e3, np.inf) == pytest.approx(1e3, rel=1e-12, abs=0)
    assert om.parallel(np.inf, np.inf) == np.inf
    z_l = 8.0 + 2j * np.pi * np.array([100.0, 1e4]) * 0.5e-3
    np.testing.assert_allclose(om.parallel(1500.0, z_l), 1500.0 * z_l / (1500.0 + z_l), rtol=1e-12)
    with pytest.raises(TypeError):
        om.parallel(1.0)


# --------------------------------------------------------------------------------------
# Emitter follower: small signal against a hybrid-pi nodal solve
# --------------------------------------------------------------------------------------

BETA = 100.0
I_E = 10e-3
VT_300 = 1.380649e-23 * 300.0 / 1.602176634e-19


def _hybrid_pi() -> tuple[float, float, float]:
    """g_m and r_pi of the hybrid-pi model at I_C = alpha I_E, and r_e = V_T / I_E."""
    ic = BETA / (BETA + 1.0) * I_E
    gm = ic / VT_300
    return gm, BETA / gm, VT_300 / I_E


def _emitter_load() -> np.ndarray:
    """R_E 1.5 kohm in parallel with 600 ohm + 1 mH, over a frequency axis (our scenario)."""
    f = np.geomspace(20.0, 20e3, 7)
    return 1500.0 * (600.0 + 2j * np.pi * f * 1e-3) / (2100.0 + 2j * np.pi * f * 1e-3)


# --------------------------------------------------------------------------------------
# Emitter follower: bias and swing
# --------------------------------------------------------------------------------------


# --------------------------------------------------------------------------------------
# Push-pull stage
# --------------------------------------------------------------------------------------


def test_push_pull_clip_hand_value() -> None:
    """Horowitz & Hill 3rd ed. sec. 2.4.1 (from memory), our scenario: +/-25 V, 1 V drive
    saturation, 1.3 V Darlington V_BE, 0.22 ohm into 8 ohm -> 22.7 * 8 / 8.22 = 22.092 V;
    rtol 1e-4."""
    assert om.push_pull_clip_vpk(25.0, 1.0, 1.3, 0.22, 8.0) == pytest.approx(
        22.0925, rel=1e-4, abs=0
    )


@settings(derandomize=True, database=None, max_examples=300)
@given(
    v_rail=st.floats(1.0, 100.0),
    vce_sat=st.floats(0.0, 3.0),
    vbe=st.floats(0.0, 3.0),
    r_e=st.floats(0.0, 2.0),
    z_l=st.floats(1.0, 100.0),
)
def test_push_pull_clip_satisfies_its_swing_equation(
    v_rail: float, vce_sat: float, vbe: float, r_e: float, z_l: float
) -> None:
    """Defining equation V = V_rail - V_CE(sat) - V_BE - (V / Z_L) R_E (Horowitz & Hill
    3rd ed. sec. 2.4.1, from memory), solved in closed form; atol 1e-9 V. Where the drops
    exceed the rail the stage cannot swing at all and 0 is returned."""
    v = float(om.push_pull_clip_vpk(v_rail, vce_sat, vbe, r_e, z_l))
    available = v_rail - vce_sat - vbe
    if available <= 0:
        assert v == 0.0
    else:
        assert v == pytest.approx(available - (v / z_l) * r_e, abs=1e-9)


@settings(derandomize=True, database=None, max_examples=200)
@given(
    r_e=st.floats(0.0, 2.0),
    z_mag=st.floats(1.0, 100.0),
    phase=st.floats(-np.pi / 2, np.pi / 2),
)
def test_push_pull_clip_complex_load_phasor_equation(
    r_e: float, z_mag: float, phase: float
) -> None:
    """For a sine into complex Z_L the voltage behind R_E, |V (1 + R_E / Z_L)|, equals the
    available swing (phasor algebra, common practice, no source); rtol 1e-9."""
    z = z_mag * np.exp(1j * phase)
    v = float(om.push_pull_clip_vpk(20.0, 1.0, 0.7, r_e, z))
    assert abs(v * (1 + r_e / z)) == pytest.approx(18.3, rel=1e-9, abs=0)


# --------------------------------------------------------------------------------------
# Class B power and dissipation
# --------------------------------------------------------------------------------------


def test_class_b_maximum_efficiency_is_pi_over_4() -> None:
    """Boylestad & Nashelsky, class B section (from memory): eta_max = pi/4 = 78.54 % at
    V_pk = V_cc; abs 5e-5. Cross-checked as P_o / P_dc for 30 V into 16 ohm."""
    ratio = om.sine_power(30.0, 16.0) / om.class_b_supply_power(30.0, 30.0, 16.0)
    assert ratio == pytest.approx(0.7854, abs=5e-5)
    assert ratio == pytest.approx(np.pi / 4, rel=1e-12, abs=0)


def test_class_b_30_v_into_16_ohm_worked_example() -> None:
    """Boylestad & Nashelsky, class B worked example (from memory): V_CC = 30 V each rail,
    16 ohm, full swing V_pk = 30 V: P_o = 28.125 W (rtol 1e-12), P_i = 35.81 W (book
    rounding, rtol 2e-4); maximum dissipation per transistor 5.7 W (book rounding, rtol
    2e-3; 2 * 900 / (pi^2 16) / 2 = 5.699 W). At full swing itself each device dissipates
    (35.81 - 28.125) / 2 = 3.84 W, less than the maximum."""
    assert om.sine_power(30.0, 16.0) == pytest.approx(28.125, rel=1e-12, abs=0)
    assert om.class_b_supply_power(30.0, 30.0, 16.0) == pytest.approx(35.81, rel=2e-4, abs=0)
    worst = om.class_b_worst_vpk(30.0)
    assert om.class_b_device_dissipation(30.0, worst, 16.0) == pytest.approx(5.7, rel=2e-3, abs=0)
    assert om.class_b_device_dissipation(30.0, 30.0, 16.0) == pytest.approx(3.843, rel=1e-3, abs=0)


def test_class_b_worst_dissipation_15_v_8_ohm() -> None:
    """Boylestad & Nashelsky, class B section (from memory): P_2Q(max) = 2 V_cc^2/(pi^2 R_L)
    at V_pk = 2 V_cc / pi. Our scenario +/-15 V, 8 ohm: 450 / 78.957 = 5.699 W at
    30 / pi = 9.549 V; abs 5e-4."""
    assert om.class_b_worst_vpk(15.0) == pytest.approx(9.549, abs=5e-4)
    worst = om.class_b_worst_vpk(15.0)
    assert om.class_b_total_dissipation(15.0, worst, 8.0) == pytest.approx(5.699, abs=5e-4)


def test_class_b_worst_vpk_maximises_dissipation_on_a_grid() -> None:
    """Numerical maximisation over np.linspace(0, V_cc, 30001), no source needed: the argmax
    sits within one grid step of 2 V_cc / pi and the grid maximum does not exceed the
    closed-form maximum (rtol 1e-12)."""
    vcc, r_l = 15.0, 8.0
    vpk = np.linspace(0.0, vcc, 30001)
    p = om.class_b_total_dissipation(vcc, vpk, r_l)
    assert vpk[np.argmax(p)] == pytest.approx(float(om.class_b_worst_vpk(vcc)), abs=vpk[1])
    at_worst = float(om.class_b_total_dissipation(vcc, om.class_b_worst_vpk(vcc), r_l))
    assert p.max() <= at_worst * (1 + 1e-12)


def test_class_b_quiescent_current_adds_2_vcc_iq() -> None:
    """Idle dissipation 2 V_cc I_q (common practice, no source): 100 mA on +/-15 V adds
    3 W to the class-B figure; rtol 1e-12."""
    extra = om.class_b_total_dissipation(15.0, 5.0, 8.0, 0.1) - om.class_b_total_dissipation(
        15.0, 5.0, 8.0
    )
    assert extra == pytest.approx(3.0, rel=1e-12, abs=0)


def test_class_b_rail_current_matches_integrated_half_sine() -> None:
    """Average of the half-sine rail current, integrated with scipy.integrate.quad over one
    period (upper device conducts while i > 0); 10 V peak into 8 ohm -> 1.25 / pi A per
    rail; rtol 1e-9."""
    ipk = 10.0 / 8.0
    avg, _ = integrate.quad(lambda t: max(ipk * np.sin(t), 0.0), 0, 2 * np.pi, points=[np.pi])
    assert om.class_b_rail_average_current(10.0, 8.0) == pytest.approx(
        avg / (2 * np.pi), rel=1e-9, abs=0
    )


@pytest.mark.parametrize("phase_deg", [0.0, 30.0, -45.0, 60.0, 89.0])
def test_class_b_reactive_dissipation_matches_integration(phase_deg: float) -> None:
    """Both devices' average dissipation, (V_cc - v) i on the upper half-cycle of the
    current plus (v + V_cc)(-i) on the lower, integrated with scipy.integrate.quad; our
    scenario +/-20 V, 12 V peak into |Z| 6 ohm at the given phase; rtol 1e-8."""
    vcc, vpk, zmag = 20.0, 12.0, 6.0
    phi = np.deg2rad(phase_deg)
    ipk = vpk / zmag

    def upper(theta: float) -> float:
        return (vcc - vpk * np.sin(theta)) * ipk * np.sin(theta - phi)

    def lower(theta: float) -> float:
        return (vpk * np.sin(theta) + vcc) * -ipk * np.sin(theta - phi)

    p_upper, _ = integrate.quad(upper, phi, phi + np.pi)
    p_lower, _ = integrate.quad(lower, phi + np.pi, phi + 2 * np.pi)
    expected = (p_upper + p_lower) / (2 * np.pi)
    z = zmag * np.exp(1j * phi)
    assert om.class_b_total_dissipation(vcc, vpk, z) == pytest.approx(expected, rel=1e-8, abs=0)


def test_class_b_reactive_worst_vpk_on_a_grid() -> None:
    """Numerical maximisation (no source): at 30 deg the dissipation peaks at
    2 V_cc / (pi cos 30 deg) = 0.735 V_cc (within one grid step of 30001); at 60 deg it
    keeps rising to full swing, so V_cc is returned (exact)."""
    vcc, zmag = 20.0, 8.0
    vpk = np.linspace(0.0, vcc, 30001)
    phi = np.deg2rad(30.0)
    z = zmag * np.exp(1j * phi)
    p = om.class_b_total_dissipation(vcc, vpk, z)
    assert vpk[np.argmax(p)] == pytest.approx(float(om.class_b_worst_vpk(vcc, phi)), abs=vpk[1])
    assert om.class_b_worst_vpk(vcc, phi) == pytest.approx(0.7351 * vcc, rel=1e-4, abs=0)
    assert om.class_b_worst_vpk(vcc, np.deg2rad(60.0)) == vcc


# --------------------------------------------------------------------------------------
# Output figures
# --------------------------------------------------------------------------------------


def test_sine_power_complex_load_matches_time_average() -> None:
    """Average of v(t) i(t) over one cycle (scipy.integrate.quad) for 10 V peak into
    8 ohm at 40 deg: V^2 cos(phi) / (2 |Z|) = 4.788 W; rtol 1e-9."""
    z = 8.0 * np.exp(1j * np.deg2rad(40.0))
    avg, _ = integrate.quad(
        lambda t: 10 * np.sin(t) * 10 / abs(z) * np.sin(t - np.angle(z)), 0, 2 * np.pi
    )
    assert om.sine_power(10.0, z) == pytest.approx(avg / (2 * np.pi), rel=1e-9, abs=0)
    assert om.sine_power(10.0, 8.0) == pytest.approx(6.25, rel=1e-12, abs=0)


def test_spl_87_db_speaker_at_10_w_is_97_db() -> None:
    """Common practice, no source: 87 dB/1 W/1 m + 10 log10(10) = 97 dB; abs 1e-9. Zero
    power is -inf without a warning."""
    assert om.spl_at_1m(87.0, 10.0) == pytest.approx(97.0, abs=1e-9)
    assert om.spl_at_1m(87.0, 0.0) == -np.inf


def test_hiss_spl_at_1_w_equivalent_voltage_returns_sensitivity() -> None:
    """Common practice, no source: sqrt(1 W * 8 ohm) = 2.828 V rms gives exactly the 1 W
    sensitivity; 100 uV gives 87 + 20 log10(1e-4 / 2.828) = -2.03 dB (abs 5e-3)."""
    assert om.hiss_spl(87.0, np.sqrt(8.0), 8.0) == pytest.approx(87.0, abs=1e-9)
    assert om.hiss_spl(87.0, 100e-6, 8.0) == pytest.approx(-2.03, abs=5e-3)


def test_damping_factor() -> None:
    """Common practice, no source: 8 ohm / 0.05 ohm = 160; rtol 1e-12."""
    assert om.damping_factor(8.0, 0.05) == pytest.approx(160.0, rel=1e-12, abs=0)


def test_highpass_corner_is_the_minus_3_db_point() -> None:
    """scipy.signal.freqs of H(s) = sRC / (sRC + 1): at the returned corner (2200 uF into
    8 ohm, 9.043 Hz) |H| = 1/sqrt(2); rtol 1e-9."""
    c, r = 2200e-6, 8.0
    fc = float(om.highpass_corner(c, r))
    assert fc == pytest.approx(9.0429, rel=1e-4, abs=0)
    _, h = signal.freqs([r * c, 0.0], [r * c, 1.0], worN=[2 * np.pi * fc])
    assert abs(h[0]) == pytest.approx(1 / np.sqrt(2), rel=1e-9, abs=0)


# --------------------------------------------------------------------------------------
# Thermal
# --------------------------------------------------------------------------------------


def test_junction_temperature_2_w_through_16_k_per_w() -> None:
    """Horowitz & Hill 3rd ed. sec. 9.4 (from memory): T_j = T_a + P (theta_jc + theta_cs
    + theta_sa); 50 + 2 * (5 + 1 + 10) = 82 degC; abs 1e-9."""
    assert junction_temperature(2.0, 5.0 + 1.0 + 10.0, 50.0) == pytest.approx(82.0, abs=1e-9)
