"""Tests for chainbudget.weighting against the IEC 61672-1 and ITU-R BS.468 tables."""

from __future__ import annotations

import numpy as np
import pytest

from chainbudget.weighting import (
    a_weighting,
    a_weighting_db,
    itu468_weighting,
    itu468_weighting_db,
)

# IEC 61672-1:2013 Table 3, A-weighting column, dB, for the one-third-octave bands from
# 20 Hz (n = -17) to 20 kHz (n = 13). Values written from memory; the table gives them to
# 0.1 dB. The table's values belong to the exact base-ten frequencies 1000 * 10**(n/10) Hz,
# not to the nominal labels (20, 25, 31.5, ... Hz): at the nominal labels the weighting
# differs from these by up to 0.11 dB (at 25 Hz), more than the rounding, so the exact
# frequencies are used.
IEC61672_TABLE3_A_DB = {
    -17: -50.5,
    -16: -44.7,
    -15: -39.4,
    -14: -34.6,
    -13: -30.2,
    -12: -26.2,
    -11: -22.5,
    -10: -19.1,
    -9: -16.1,
    -8: -13.4,
    -7: -10.9,
    -6: -8.6,
    -5: -6.6,
    -4: -4.8,
    -3: -3.2,
    -2: -1.9,
    -1: -0.8,
    0: 0.0,
    1: 0.6,
    2: 1.0,
    3: 1.2,
    4: 1.3,
    5: 1.2,
    6: 1.0,
    7: 0.5,
    8: -0.1,
    9: -1.1,
    10: -2.5,
    11: -4.3,
    12: -6.6,
    13: -9.3,
}


def test_a_weighting_matches_iec61672_table3_at_exact_third_octaves() -> None:
    """IEC 61672-1 Table 3 (A column), tolerance 0.05 dB = half the table's last digit."""
    band = np.array(sorted(IEC61672_TABLE3_A_DB))
    f_exact = 1000.0 * 10.0 ** (band / 10.0)
    table_db = np.array([IEC61672_TABLE3_A_DB[n] for n in band])
    np.testing.assert_allclose(a_weighting_db(f_exact), table_db, rtol=0, atol=0.05)


def test_a_weighting_is_exactly_0db_at_1khz() -> None:
    """Normalisation: IEC 61672-1 sets the weighting to 0 dB at 1 kHz; atol 1e-12 dB."""
    assert a_weighting(1000.0) == pytest.approx(1.0, rel=1e-15, abs=0)
    assert abs(float(a_weighting_db(1000.0))) < 1e-12


def _iec61672_annex_e_a_db(f: np.ndarray) -> np.ndarray:
    # IEC 61672-1 Annex E eq. (E.6) as printed there, with its rounded offset
    # A1000 = -2.000 dB; written out here independently of the module.
    f1, f2, f3, f4 = 20.598997, 107.65265, 737.86223, 12194.217
    ra = f4**2 * f**4 / ((f**2 + f1**2) * np.sqrt((f**2 + f2**2) * (f**2 + f3**2)) * (f**2 + f4**2))
    return 20.0 * np.log10(ra) + 2.000


def test_a_weighting_agrees_with_iec61672_annex_e_formula() -> None:
    """IEC 61672-1 Annex E eq. (E.6) with A1000 = -2.000 dB, 10 Hz-20 kHz, atol 1e-3 dB.

    The only expected difference is the standard's rounding of A1000 (0.0003 dB).
    """
    f = np.geomspace(10.0, 20_000.0, 301)
    np.testing.assert_allclose(a_weighting_db(f), _iec61672_annex_e_a_db(f), rtol=0, atol=1e-3)


def test_a_weighting_asymptotic_slopes() -> None:
    """IEC 61672-1 Annex E: four zeros at 0 Hz (+80 dB/decade far below f1 = 20.6 Hz) and a
    double pole at f4 = 12.2 kHz (-40 dB/decade far above it); atol 0.1 dB/decade."""
    low_slope = a_weighting_db(0.1) - a_weighting_db(0.01)
    high_slope = a_weighting_db(2e7) - a_weighting_db(2e6)
    assert low_slope == pytest.approx(80.0, abs=0.1)
    assert high_slope == pytest.approx(-40.0, abs=0.1)


def test_a_weighting_is_vectorised_and_keeps_shape() -> None:
    """Shape contract: elementwise over any shape; equal to the per-element values."""
    f = np.array([[20.0, 1000.0, 20_000.0], [50.0, 500.0, 5000.0]])
    out = a_weighting(f)
    assert out.shape == f.shape
    expected = np.array([[float(a_weighting(x)) for x in row] for row in f])
    np.testing.assert_array_equal(out, expected)
    assert a_weighting(0.0) == 0.0


# ITU-R BS.468-4 Table 1, weighting response in dB, 1 kHz referenced; written from memory,
# given to 0.1 dB in the standard.
ITU468_TABLE_DB = {
    31.5: -29.9,
    63.0: -23.9,
    100.0: -19.8,
    200.0: -13.8,
    400.0: -7.8,
    800.0: -1.9,
    1000.0: 0.0,
    2000.0: 5.6,
    3150.0: 9.0,
    4000.0: 10.5,
    5000.0: 11.7,
    6300.0: 12.2,
    7100.0: 12.0,
    8000.0: 11.4,
    9000.0: 10.1,
    10000.0: 8.1,
    12500.0: 0.0,
    14000.0: -5.3,
    16000.0: -11.7,
    20000.0: -22.2,
    31500.0: -42.7,
}


def test_itu468_weighting_matches_bs468_table() -> None:
    """ITU-R BS.468-4 Table 1, atol 0.06 dB: 0.05 dB table rounding plus 0.01 dB for the
    closed-form fit (its worst point, 100 Hz, is 0.050 dB off)."""
    f = np.array(sorted(ITU468_TABLE_DB))
    table_db = np.array([ITU468_TABLE_DB[x] for x in f])
    np.testing.assert_allclose(itu468_weighting_db(f), table_db, rtol=0, atol=0.06)


def test_itu468_weighting_is_0db_at_1khz_and_peaks_near_6k3() -> None:
    """ITU-R BS.468-4: reference 0 dB at 1 kHz (atol 1e-12 dB); the maximum, +12.2 dB,
    lies near 6.3 kHz (between the 5 kHz and 7.1 kHz table points, atol 0.06 dB)."""
    assert abs(float(itu468_weighting_db(1000.0))) < 1e-12
    f = np.geomspace(1000.0, 20_000.0, 4001)
    w_db = itu468_weighting_db(f)
    assert 5000.0 < f[np.argmax(w_db)] < 7100.0
    assert w_db.max() == pytest.approx(12.2, abs=0.06)
    assert itu468_weighting(f).shape == f.shape
