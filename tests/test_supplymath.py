"""Closed-form supply physics: rectified rails, regulators, bleeders, batteries."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from scipy.optimize import brentq

from chainbudget import supplymath as sm
from chainbudget.thermal import junction_temperature

# IEC 60063 E24, written out from memory (independent of chainbudget.eseries).
IEC_E24 = (
    1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
    3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1,
)  # fmt: skip


def test_mains_factors_for_a_ten_percent_band() -> None:
    """230 V mains +/-10 % (CENELEC harmonisation, IEC 60038); rtol 1e-15."""
    assert sm.mains_factors(0.10) == pytest.approx((0.9, 1.0, 1.1), rel=1e-15, abs=0)
    with pytest.raises(ValueError):
        sm.mains_factors(1.0)
    with pytest.raises(ValueError):
        sm.mains_factors(-0.1)


def test_ripple_full_wave_textbook_values() -> None:
    """Constant-current ripple I/(2fC), Horowitz & Hill 3rd ed. sec. 9.5.2 (from memory).

    1 A, 4700 uF, 50 Hz -> 2.128 V p-p; 2 A, 1000 uF, 60 Hz -> 16.67 V p-p; abs 5e-4 and
    5e-3 V (the quoted digits).
    """
    assert float(sm.ripple_vpp(1.0, 50.0, 4700e-6)) == pytest.approx(2.128, abs=5e-4)
    assert float(sm.ripple_vpp(2.0, 60.0, 1000e-6)) == pytest.approx(16.67, abs=5e-3)


def test_ripple_half_wave_is_twice_full_wave() -> None:
    """Half-wave recharges once per cycle: I/(fC), same source; 1 A, 4700 uF, 50 Hz ->
    4.255 V p-p, abs 5e-4 V.
    """
    assert float(sm.ripple_vpp(1.0, 50.0, 4700e-6, half_wave=True)) == pytest.approx(
        4.255, abs=5e-4
    )


def exact_constant_current_ripple(v_peak: float, current: float, f: float, c: float) -> float:
    """Ripple of an ideal full-wave rectifier into C with a constant-current load.

    The capacitor follows |Vp sin wt| until the sine falls faster than I/C lets it
    discharge (Vp w cos wt = -I/C), then ramps down at I/C until the next half-wave meets
    it. Both instants are found with scipy.optimize.brentq (reference root finder).
    """
    w = 2 * math.pi * f
    slope = current / c
    t_detach = (math.pi - math.acos(min(1.0, slope / (v_peak * w)))) / w  # just after T/4
    v_detach = v_peak * math.sin(w * t_detach)

    def gap(t: float) -> float:
        return (v_detach - slope * (t - t_detach)) - abs(v_peak * math.sin(w * t))

    half = 1 / (2 * f)
    t_meet = brentq(gap, half, half + half / 2, xtol=1e-15)
    return v_peak - (v_detach - slope * (t_meet - t_detach))


@pytest.mark.parametrize(
    ("v_peak", "current", "c"), [(24.06, 1.0, 4700e-6), (24.06, 0.2, 4700e-6), (40.0, 2.0, 2200e-6)]
)
def test_ripple_formula_overestimates_the_exact_discharge(
    v_peak: float, current: float, c: float
) -> None:
    """Conservative claim checked against the exact ideal-diode waveform (scipy brentq):
    formula >= exact, and within 30 % of it for these cases, whose ripple runs from 2 % to
    23 % of the peak (plausibility band, ours).
    """
    approx = float(sm.ripple_vpp(current, 50.0, c))
    exact = exact_constant_current_ripple(v_peak, current, 50.0, c)
    assert approx >= exact
    assert approx <= 1.3 * exact


def test_rectified_peak_at_the_three_line_conditions() -> None:
    """sqrt(2) x 18 V rms x (0.9, 1, 1.1) minus two 0.7 V diode drops (bridge; Horowitz &
    Hill 3rd ed. sec. 9.5, from memory; +/-10 % band per CENELEC): 21.51, 24.06, 26.60 V,
    abs 5e-3 V (the quoted digits).
    """
    factors = np.array(sm.mains_factors(0.10))
    peaks = sm.rectified_peak(18.0, factors, 2 * 0.7)
    assert peaks.shape == (3,)
    assert peaks.tolist() == pytest.approx([21.51, 24.06, 26.60], abs=5e-3)


def test_rectified_peak_regulation_interpolates_between_no_load_and_rated_load() -> None:
    """Regulation = no-load rise over rated-load voltage (common practice, no source);
    linear in load fraction (our documented model). 18 V, 10 %: no load 1.1 x, rated 1 x,
    half load 1.05 x the rated-load peak; rtol 1e-12.
    """
    root2_18 = math.sqrt(2) * 18.0
    got = sm.rectified_peak(18.0, 1.0, 0.0, regulation_fraction=0.10, load_fraction=[0, 0.5, 1])
    assert got.tolist() == pytest.approx(
        [1.1 * root2_18, 1.05 * root2_18, root2_18], rel=1e-12, abs=0
    )


def test_trough_and_crest_of_a_rectified_rail() -> None:
    """Composition of the two checks above (same sources). 18 V rms, +/-10 %, 1.4 V drop,
    4700 uF, 50 Hz, 1 A: trough = 21.51 - 2.128 = 19.38 V, crest = 26.60 V; abs 5e-3 V.
    """
    rail = sm.trough_and_crest(18.0, 0.10, 1.4, 50.0, 4700e-6, 1.0)
    assert float(rail.trough_v) == pytest.approx(19.38, abs=5e-3)
    assert float(rail.crest_v) == pytest.approx(26.60, abs=5e-3)
    assert float(rail.ripple_vpp) == pytest.approx(2.128, abs=5e-4)


def test_trough_and_crest_with_transformer_regulation() -> None:
    """10 % regulation, 2 A rated, 1 A drawn: trough at half load (1.05 x), crest at no
    load (1.1 x); values from the linear model, rtol 1e-12.
    """
    rail = sm.trough_and_crest(18.0, 0.10, 1.4, 50.0, 4700e-6, 1.0, 0.10, rated_current_a=2.0)
    root2_18 = math.sqrt(2) * 18.0
    ripple = 1.0 / (2 * 50.0 * 4700e-6)
    assert float(rail.trough_v) == pytest.approx(
        root2_18 * 0.9 * 1.05 - 1.4 - ripple, rel=1e-12, abs=0
    )
    assert float(rail.crest_v) == pytest.approx(root2_18 * 1.1 * 1.1 - 1.4, rel=1e-12, abs=0)


def test_adjustable_regulator_output_and_divider_current() -> None:
    """Vref 1.25 V, Iadj 50 uA, 240 ohm across the reference, 2.4 kohm to ground:
    Vout = 1.25 (1 + 2400/240) + 50e-6 x 2400 = 13.87 V (common textbook values, not from
    any datasheet; equation Horowitz & Hill 3rd ed. ch. 9, from memory), abs 5e-3 V; the
    divider draws 1.25/240 = 5.2 mA, abs 0.05 mA (the quoted digits).
    """
    assert float(sm.adjustable_output(1.25, 50e-6, 2400.0, 240.0)) == pytest.approx(13.87, abs=5e-3)
    assert float(sm.divider_current(1.25, 240.0)) == pytest.approx(5.2e-3, abs=0.05e-3)


def test_regulator_junction_temperature() -> None:
    """12 V -> 5 V at 0.5 A: 3.5 W; at 50 K/W from 25 degC, T_j = 200 degC (thermal Ohm's
    law, Horowitz & Hill 3rd ed. sec. 9.4, from memory); abs 1e-9 degC.
    """
    p = sm.regulator_dissipation(12.0, 5.0, 0.5, 0.0)
    assert float(p) == pytest.approx(3.5, abs=1e-12)
    assert float(junction_temperature(p, 50.0, 25.0)) == pytest.approx(200.0, abs=1e-9)


def test_regulator_quiescent_current_is_drawn_across_the_whole_input() -> None:
    """Power balance (input power minus output power): 5 mA ground current at 12 V adds
    60 mW; abs 1e-12 W.
    """
    vin, vout, load, iq = 12.0, 5.0, 0.5, 5e-3
    p = float(sm.regulator_dissipation(vin, vout, load, iq))
    assert p == pytest.approx(vin * (load + iq) - vout * load, abs=1e-12)
    assert p - 3.5 == pytest.approx(0.060, abs=1e-12)


def test_ripple_after_regulator_uses_field_quantity_decibels() -> None:
    """20 log10 for voltage ratios (IEC 60027-3): 60 dB turns 1 V p-p into 1 mV, 20 dB
    into 0.1 V; rtol 1e-12.
    """
    got = sm.ripple_after_regulator(1.0, np.array([60.0, 20.0, 0.0]))
    assert got.tolist() == pytest.approx([1e-3, 0.1, 1.0], rel=1e-12, abs=0)


def test_battery_runtime() -> None:
    """Definition of the ampere-hour: 7 A h at 0.5 A lasts 14 h; zero drain -> inf without
    a warning (pytest turns warnings into errors). rtol 1e-12.
    """
    assert float(sm.battery_runtime_h(7.0, 0.5)) == pytest.approx(14.0, rel=1e-12, abs=0)
    assert math.isinf(float(sm.battery_runtime_h(7.0, 0.0)))


def test_sag_of_a_dc_source() -> None:
    """Thevenin source (Ohm's law): 12 V emf, 0.1 ohm, 2 A -> 11.8 V at the terminals;
    abs 1e-12 V.
    """
    assert float(sm.sag(12.0, 0.1, 2.0)) == pytest.approx(11.8, abs=1e-12)
    assert sm.sag(12.0, 0.1, np.array([0.0, 1.0])).tolist() == pytest.approx(
        [12.0, 11.9], rel=1e-12, abs=0
    )


def e24_next_above(r: float) -> float:
    """Next E24 value above r, from the test's own table."""
    values = sorted(m * 10.0**k for k in range(-2, 9) for m in IEC_E24)
    return next(v for v in values if v > r * (1 + 1e-9))


def test_bleeder_for_a_three_milliamp_shortfall() -> None:
    """Ohm's law: at 13.87 V, 3 mA needs R <= 4623 ohm -> 4.3 kohm (IEC 60063 E24, from
    memory); 4.7 kohm would draw only 2.95 mA. P = V^2/R; rtol 1e-12.
    """
    r, p = sm.bleeder_suggestion(13.87, 3e-3)
    assert r == 4300.0
    assert p == pytest.approx(13.87**2 / 4300.0, rel=1e-12, abs=0)
    with pytest.raises(ValueError):
        sm.bleeder_suggestion(13.87, 0.0)


@given(st.floats(min_value=1.0, max_value=60.0), st.floats(min_value=1e-4, max_value=0.1))
def test_bleeder_draws_the_shortfall_and_the_next_e24_value_would_not(
    vout: float, shortfall: float
) -> None:
    """Property from Ohm's law and the E24 table (IEC 60063, from memory); 1e-9 relative
    slack for values that land on a series value.
    """
    r, p = sm.bleeder_suggestion(vout, shortfall)
    assert vout / r >= shortfall * (1 - 1e-9)
    assert vout / e24_next_above(r) < shortfall
    assert any(math.isclose(r, m * 10.0**k, rel_tol=1e-12) for k in range(-2, 9) for m in IEC_E24)
    assert p == pytest.approx(vout**2 / r, rel=1e-12, abs=0)
