"""Tests for the op-amp gain stage (chainbudget.stages.opamp_gain and stages.base).

References: Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 4.2.1 (ideal gains
1 + Rf/Rg and -Rf/Ri); Franco, Design with Operational Amplifiers and Analog Integrated
Circuits, 4th ed., ch. 1 (finite loop gain, A_CL = A_ideal / (1 + 1/(a beta)); closed-loop
output resistance R_o / (1 + a beta)) and ch. 6 (closed-loop bandwidth f_t / (1/beta);
full-power bandwidth SR / (2 pi V_p)); scipy.signal.freqs for the capacitor responses.
Section numbers are quoted from memory.
"""

from __future__ import annotations

import numpy as np
import pytest
from numpy.typing import NDArray
from scipy import signal
from stagekit import environment, make_stage, near_ideal_opamp, solve, unloaded_gain

from chainbudget.budget.levels import clip_source_peak
from chainbudget.cascade import cascade
from chainbudget.stages.base import Rails

AUDIO = np.logspace(np.log10(20.0), np.log10(20e3), 31)


def _minus_3db_frequency(frequency: NDArray[np.float64], gain: NDArray[np.complex128]) -> float:
    """Where |H| first falls 3.0103 dB (1/sqrt(2)) below its low-frequency value, by
    linear interpolation of the dB magnitude on log frequency."""
    relative_db = 20.0 * np.log10(np.abs(gain) / np.abs(gain[0]))
    target = -10.0 * np.log10(2.0)
    # Magnitude falls with frequency here: interpolate on the reversed (rising) arrays.
    return float(10.0 ** np.interp(target, relative_db[::-1], np.log10(frequency)[::-1]))


@pytest.mark.parametrize(("rf", "rg"), [(47e3, 4.7e3), (10e3, 10e3), (100e3, 1e3)])
def test_non_inverting_gain_is_one_plus_rf_over_rg(rf: float, rg: float) -> None:
    """Ideal non-inverting gain 1 + Rf/Rg (Horowitz & Hill 3rd ed. sec. 4.2.1), with an op-amp
    of A0 = 1e9: rtol 1e-6 over 20 Hz..20 kHz."""
    stage = make_stage("opamp_gain", topology="non-inverting", feedback=rf, ground_leg=rg)
    gain = unloaded_gain(solve(stage, AUDIO))
    np.testing.assert_allclose(gain, 1.0 + rf / rg, rtol=1e-6)


@pytest.mark.parametrize(("rf", "ri"), [(100e3, 22e3), (10e3, 10e3), (47e3, 4.7e3)])
def test_inverting_gain_is_minus_rf_over_ri(rf: float, ri: float) -> None:
    """Ideal inverting gain -Rf/Ri (Horowitz & Hill 3rd ed. sec. 4.2.1), A0 = 1e9: rtol 1e-6."""
    stage = make_stage("opamp_gain", topology="inverting", feedback=rf, input=ri)
    gain = unloaded_gain(solve(stage, AUDIO))
    np.testing.assert_allclose(gain, -rf / ri, rtol=1e-6)


@pytest.mark.parametrize("topology", ["non-inverting", "inverting"])
def test_finite_open_loop_gain_follows_the_loop_gain_formula(topology: str) -> None:
    """With a(f) = A0/(1 + j f A0/GBW) and beta = Ri/(Ri + Rf), the closed-loop gain is
    A_ideal / (1 + 1/(a beta)) (Franco, 4th ed., ch. 1). A0 = 1000 makes the error ~1 %,
    so the check is sharp; R_o = 0 for the exact form (stamped as the solver's 1 mohm
    floor, which adds ~1e-8); rtol 1e-7."""
    rf, r_low, a0, gbw = 90e3, 10e3, 1e3, 1e6
    beta = r_low / (r_low + rf)
    part = near_ideal_opamp("finite", open_loop_gain=a0, gbw=gbw)
    extra = {"ground_leg": r_low} if topology == "non-inverting" else {"input": r_low}
    stage = make_stage("opamp_gain", topology=topology, feedback=rf, opamp="finite", **extra)
    frequency = np.array([10.0, 1e3, 10e3, 100e3])
    gain = unloaded_gain(solve(stage, frequency, environment(part)))
    a = a0 / (1.0 + 1j * frequency * a0 / gbw)
    ideal = 1.0 / beta if topology == "non-inverting" else -rf / r_low
    np.testing.assert_allclose(gain, ideal / (1.0 + 1.0 / (a * beta)), rtol=1e-7)


@pytest.mark.parametrize(
    ("topology", "extra"),
    [("inverting", {"input": 10e3}), ("non-inverting", {"ground_leg": 10e3})],
)
def test_closed_loop_bandwidth_is_gbw_over_noise_gain(topology: str, extra: dict) -> None:
    """GBW 10 MHz, Rf = 100k, R = 10k: noise gain 1/beta = 11 for both forms (gain -10
    inverting, +11 non-inverting), so f_-3dB = 10 MHz / 11 = 909.1 kHz (Franco, 4th ed.,
    ch. 6). Found numerically on a dense grid from the stage model with A0 = 1e8, R_o = 0
    (the exact single-pole value differs by 11/A0); rtol 1e-4."""
    part = near_ideal_opamp("gbw10", open_loop_gain=1e8, gbw=10e6)
    stage = make_stage("opamp_gain", topology=topology, feedback=100e3, opamp="gbw10", **extra)
    frequency = np.concatenate(([10.0], np.logspace(5, 7, 4001)))
    gain = unloaded_gain(solve(stage, frequency, environment(part)))
    assert _minus_3db_frequency(frequency, gain) == pytest.approx(909.09e3, rel=1e-4, abs=0)


def test_closed_loop_output_impedance_is_ro_over_one_plus_loop_gain() -> None:
    """Non-inverting, Rf = 9k, Rg = 1k (beta = 0.1), R_o = 50 ohm, A0 = 1e5, GBW 10 MHz:
    Z_out = R_o/(1 + a beta) (Franco, 4th ed., ch. 1), in parallel with the feedback
    network's Rf + Rg that the output also drives (nodal analysis by hand). Complex values,
    driven from a 0-ohm source; rtol 1e-6."""
    a0, gbw, ro = 1e5, 10e6, 50.0
    part = near_ideal_opamp("ro50", open_loop_gain=a0, gbw=gbw, output_resistance=ro)
    stage = make_stage(
        "opamp_gain", topology="non-inverting", feedback=9e3, ground_leg=1e3, opamp="ro50"
    )
    frequency = np.array([100.0, 1e3, 10e3, 100e3])
    z_out = solve(stage, frequency, environment(part)).two_port.output_impedance(0.0)
    a = a0 / (1.0 + 1j * frequency * a0 / gbw)
    closed = ro / (1.0 + a * 0.1)
    expected = 1.0 / (1.0 / closed + 1.0 / 10e3)
    np.testing.assert_allclose(z_out, expected, rtol=1e-6)
    # At 1 kHz the loop gain is ~1e3: about 50 mohm, far below R_o.
    assert abs(z_out[1]) == pytest.approx(0.05, rel=1e-2, abs=0)


def test_full_power_bandwidth_through_the_slew_limit() -> None:
    """Full-power bandwidth f_p = SR/(2 pi V_p): 2 V/us at 12 V peak is 26.53 kHz (Franco,
    4th ed., ch. 6). The stage declares it as its slew Limit; with +-15 V rails and a 1.5 V
    swing margin (13.5 V peak) the slew limit is the tightest above 23.6 kHz, and the
    output's clip level, found through the cascade, falls to 12 V peak at f_p; rtol 1e-3."""
    # A realistic loop (A0 1e5, R_o 50 ohm) keeps the op-amp current probe well conditioned.
    part = near_ideal_opamp(
        "slow", slew_rate=2e6, open_loop_gain=1e5, gbw=1e9, output_resistance=50.0
    )
    stage = make_stage(
        "opamp_gain", topology="non-inverting", feedback=10e3, ground_leg=10e3, opamp="slow"
    )
    frequency = np.logspace(4, 5, 2001)
    sol = solve(stage, frequency, environment(part))
    slew = next(lim for lim in sol.built.limits if lim.name == "slew")
    np.testing.assert_allclose(slew.peak, 2e6 / (2.0 * np.pi * frequency), rtol=1e-12)

    chain = cascade([sol], 0.0, 1e9)
    found = clip_source_peak(chain, 0)
    assert found is not None
    source_peak, which = found
    node_clip = source_peak * np.abs(chain.v_out[0])
    f_12v = 10.0 ** np.interp(-12.0, -node_clip, np.log10(frequency))
    assert f_12v == pytest.approx(2e6 / (2.0 * np.pi * 12.0), rel=1e-3, abs=0)
    names = [lim.name for lim in sol.built.limits]
    assert names[which[np.searchsorted(frequency, f_12v)]] == "slew"
    assert names[which[0]] == "rails"  # 10 kHz: 31.8 V slew limit, rails bind at 13.5 V
    np.testing.assert_allclose(node_clip[0], 13.5, rtol=1e-9)


def test_feedback_cap_rolls_off_as_a_first_order_pole() -> None:
    """Inverting, Rf = 100k with Cf = 1.5 nF across it, Ri = 10k:
    H(s) = -(Rf/Ri)/(1 + s Rf Cf) (Horowitz & Hill 3rd ed. sec. 4.2.1 with Z_f = Rf || Cf),
    against scipy.signal.freqs; rtol 1e-6."""
    rf, cf, ri = 100e3, 1.5e-9, 10e3
    stage = make_stage("opamp_gain", topology="inverting", feedback=rf, input=ri, feedback_cap=cf)
    gain = unloaded_gain(solve(stage, AUDIO))
    _, expected = signal.freqs([-rf / ri], [rf * cf, 1.0], worN=2.0 * np.pi * AUDIO)
    np.testing.assert_allclose(gain, expected, rtol=1e-6)


def test_input_cap_and_bias_resistor_form_a_high_pass() -> None:
    """Non-inverting with C_in = 100 nF into R_bias = 100k: H(s) = G s R C/(1 + s R C),
    G = 1 + Rf/Rg (Horowitz & Hill 3rd ed. secs. 1.7.1 and 4.2.1), against
    scipy.signal.freqs; rtol 1e-6."""
    c, r, gain_ideal = 100e-9, 100e3, 2.0
    stage = make_stage(
        "opamp_gain",
        topology="non-inverting",
        feedback=10e3,
        ground_leg=10e3,
        input_cap=c,
        bias_resistor=r,
    )
    gain = unloaded_gain(solve(stage, AUDIO))
    _, expected = signal.freqs([gain_ideal * r * c, 0.0], [r * c, 1.0], worN=2.0 * np.pi * AUDIO)
    np.testing.assert_allclose(gain, expected, rtol=1e-6)


def test_rails_limit_is_the_room_to_the_nearer_rail_minus_the_margin() -> None:
    """Single 12 V supply, bias at mid-rail (6 V), swing margin 1.5 V: the output swings
    4.5 V peak either way (contract, "Supplies"; common practice, no source)."""
    env = environment(rails=Rails(positive=12.0, negative=0.0, bias=6.0))
    stage = make_stage("opamp_gain", topology="inverting", feedback=10e3, input=10e3)
    rails = next(lim for lim in solve(stage, [1e3], env).built.limits if lim.name == "rails")
    assert rails.peak == pytest.approx(4.5, rel=1e-12, abs=0)
