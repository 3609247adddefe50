"""IEC 60063 preferred-number series and the resistor pickers built on them."""

from __future__ import annotations

import math
from decimal import ROUND_HALF_UP, Decimal, getcontext

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from chainbudget import eseries
from chainbudget.supplymath import adjustable_output

# IEC 60063 tables, written out from memory (not copied from the implementation).
IEC_E6 = (1.0, 1.5, 2.2, 3.3, 4.7, 6.8)
IEC_E12 = (1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2)
IEC_E24 = (
    1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
    3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1,
)  # fmt: skip
IEC_E96_HUNDREDTHS = (
    100, 102, 105, 107, 110, 113, 115, 118, 121, 124, 127, 130,
    133, 137, 140, 143, 147, 150, 154, 158, 162, 165, 169, 174,
    178, 182, 187, 191, 196, 200, 205, 210, 215, 221, 226, 232,
    237, 243, 249, 255, 261, 267, 274, 280, 287, 294, 301, 309,
    316, 324, 332, 340, 348, 357, 365, 374, 383, 392, 402, 412,
    422, 432, 442, 453, 464, 475, 487, 499, 511, 523, 536, 549,
    562, 576, 590, 604, 619, 634, 649, 665, 681, 698, 715, 732,
    750, 768, 787, 806, 825, 845, 866, 887, 909, 931, 953, 976,
)  # fmt: skip


def e96_by_formula() -> tuple[float, ...]:
    """round(100 * 10**(i/96)) / 100 in 40-digit decimal arithmetic, independent of numpy."""
    getcontext().prec = 40
    out = []
    for i in range(96):
        x = Decimal(10) ** (Decimal(i) / Decimal(96)) * 100
        out.append(float(x.quantize(Decimal(1), rounding=ROUND_HALF_UP)) / 100.0)
    return tuple(out)


def test_e6_e12_e24_match_iec_60063_tables() -> None:
    """IEC 60063 E6/E12/E24 tables (from memory); exact equality of the mantissas."""
    assert eseries.series("E6") == IEC_E6
    assert eseries.series("E12") == IEC_E12
    assert eseries.series("E24") == IEC_E24


def test_e24_departs_from_the_geometric_formula_at_the_historical_values() -> None:
    """IEC 60063 E24 (from memory) differs from round(10**(i/24), 1) at exactly 8 places."""
    formula = [round(10 ** (i / 24), 1) for i in range(24)]
    differing = {t for t, f in zip(eseries.series("E24"), formula, strict=True) if t != f}
    assert differing == {2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2}


def test_e96_is_the_rounded_geometric_series() -> None:
    """IEC 60063 E96 = round(100*10**(i/96))/100, computed here in Decimal; exact equality.

    Also checked against the E96 table written out from memory: the two agree at all 96
    entries. The one listing exception remembered (9.20 in place of 9.19) belongs to E192,
    not E96, so no exception is asserted here.
    """
    assert eseries.series("E96") == e96_by_formula()
    assert eseries.series("E96") == tuple(h / 100 for h in IEC_E96_HUNDREDTHS)


def test_coarser_series_are_every_nth_value_of_the_finer() -> None:
    """IEC 60063 structure: E12 = E24[::2], E6 = E12[::2], E48 = E96[::2]; exact."""
    assert eseries.series("E12") == eseries.series("E24")[::2]
    assert eseries.series("E6") == eseries.series("E12")[::2]
    assert eseries.series("E48") == eseries.series("E96")[::2]
    assert len(eseries.series("E48")) == 48


def test_series_name_is_case_insensitive_and_unknown_names_are_rejected() -> None:
    assert eseries.series("e24") == eseries.series("E24")
    with pytest.raises(ValueError, match="unknown E series"):
        eseries.series("E25")


def test_values_between_spans_decades_and_equals_the_decimal_literals() -> None:
    """Decade repetition (IEC 60063); exact float equality with the written values."""
    got = eseries.values_between("E12", 0.1, 1e3)
    want = [m * 10**k for k in (-1, 0, 1, 2) for m in IEC_E12] + [1000.0]
    assert got.tolist() == pytest.approx(want, rel=1e-15, abs=0)
    # Correct rounding: 4.7 kohm is the literal 4700.0, 0.47 is the literal 0.47.
    assert 4700.0 in eseries.values_between("E12", 1e3, 1e4).tolist()
    assert 0.47 in eseries.values_between("E12", 0.1, 1.0).tolist()
    assert eseries.values_between("E24", 1e3, 1e3).tolist() == [1000.0]


def test_values_between_rejects_empty_and_nonpositive_intervals() -> None:
    with pytest.raises(ValueError):
        eseries.values_between("E24", 10.0, 1.0)
    with pytest.raises(ValueError):
        eseries.values_between("E24", 0.0, 1.0)


def test_nearest_is_nearest_in_ratio() -> None:
    """Log-scale nearest (documented choice), exact values returned.

    1.097 lies above the geometric mean sqrt(1.0 * 1.2) = 1.0954, so it rounds to 1.2,
    although it is linearly closer to 1.0.
    """
    assert eseries.nearest(4.5e3, "E12") == 4.7e3
    assert eseries.nearest(1.097, "E12") == 1.2
    assert eseries.nearest(1.09, "E12") == 1.0
    assert eseries.nearest(9.6e5, "E24") == 1e6


def test_floor_and_ceiling_to_series() -> None:
    """Exact series values returned; 1e-9 relative slack absorbs arithmetic residue."""
    assert eseries.largest_at_most(4700.0, "E12") == 4700.0
    assert eseries.largest_at_most(4699.9999999, "E12") == 4700.0
    assert eseries.largest_at_most(4690.0, "E12") == 3900.0
    assert eseries.largest_at_most(999.0, "E24") == 910.0
    assert eseries.smallest_at_least(4701.0, "E12") == 5600.0
    assert eseries.smallest_at_least(9.2, "E24") == 10.0
    assert eseries.smallest_at_least(0.0101, "E6") == 0.015
    with pytest.raises(ValueError):
        eseries.largest_at_most(-1.0, "E12")


@given(st.floats(min_value=1e-3, max_value=1e9), st.sampled_from(["E6", "E12", "E24", "E96"]))
def test_floor_and_ceiling_bracket_the_value_with_no_series_value_between(
    value: float, name: str
) -> None:
    """Property (definition of floor/ceiling in a sorted set); rtol 1e-9 slack."""
    lo = eseries.largest_at_most(value, name)
    hi = eseries.smallest_at_least(value, name)
    assert lo <= value * (1 + 1e-9)
    assert hi >= value * (1 - 1e-9)
    # Adjacent: the closed interval [lo, hi] holds at most these two series values.
    assert len(eseries.values_between(name, lo, hi)) <= 2


# Largest ratio between adjacent E96 values (1.00 -> 1.02 ... 1.33 -> 1.37 etc.), from the
# test's own table: bounds the rounding error of any one resistor.
E96_STEPS = np.array([*IEC_E96_HUNDREDTHS[1:], 1000]) / np.array(IEC_E96_HUNDREDTHS)
E96_WORST_STEP = float(E96_STEPS.max() - 1.0)


def is_e96(x: float) -> bool:
    return any(
        math.isclose(x, h * 10.0**k, rel_tol=1e-12)
        for k in range(-4, 6)
        for h in IEC_E96_HUNDREDTHS
    )


def brute_force_divider_error(target: float, vref: float, iadj: float) -> float:
    """Smallest |Vout - target| over every E96 lower in 100..10k x every E96 upper 1..10M."""
    decades = [10.0**k for k in range(0, 7)]
    uppers = np.array([h / 100 * d for d in decades for h in IEC_E96_HUNDREDTHS])
    lowers = np.array([h / 100 * d for d in (100.0, 1000.0) for h in IEC_E96_HUNDREDTHS] + [1e4])
    vout = vref * (1 + uppers[:, None] / lowers[None, :]) + iadj * uppers[:, None]
    return float(np.abs(vout - target).min())


def test_best_divider_for_12_volts() -> None:
    """Adjustable-regulator equation (Horowitz & Hill 3rd ed. ch. 9, from memory).

    Error below 0.5 %; the returned vout equals the equation applied to the returned pair
    (rtol 1e-12); the optimum equals a brute-force search over all pairs (atol 1e-12 V).
    """
    upper, lower, vout, err = eseries.best_divider(12.0, 1.25, 50e-6)
    assert abs(err) < 0.005
    assert vout == pytest.approx(
        float(adjustable_output(1.25, 50e-6, upper, lower)), rel=1e-12, abs=0
    )
    assert err == pytest.approx((vout - 12.0) / 12.0, rel=1e-12, abs=0)
    assert is_e96(upper)
    assert is_e96(lower)
    assert 100.0 <= lower <= 10e3
    assert abs(vout - 12.0) == pytest.approx(
        brute_force_divider_error(12.0, 1.25, 50e-6), abs=1e-12
    )


def test_best_divider_breaks_ties_toward_the_smaller_lower_resistor() -> None:
    """With Iadj = 0, upper/lower = 10 is exact in three decades; documented tie-break."""
    assert eseries.best_divider(13.75, 1.25, 0.0) == (1000.0, 100.0, 13.75, 0.0)


def test_best_divider_rejects_target_at_or_below_reference() -> None:
    with pytest.raises(ValueError):
        eseries.best_divider(1.25, 1.25, 50e-6)


@given(st.floats(min_value=3.0, max_value=30.0))
def test_best_divider_error_within_half_the_widest_e96_step(target: float) -> None:
    """Bound: even with one fixed lower, rounding upper to the nearer bracketing E96 value
    errs by at most half the widest adjacent-value step (3.0 %, IEC 60063 E96), and
    (target - Vref) / target < 1 scales that down further.
    """
    upper, lower, vout, err = eseries.best_divider(target, 1.25, 50e-6)
    assert abs(err) <= E96_WORST_STEP / 2
    assert is_e96(upper)
    assert is_e96(lower)
    assert vout == pytest.approx(
        float(adjustable_output(1.25, 50e-6, upper, lower)), rel=1e-12, abs=0
    )
