"""A loudspeaker as the load: the Thiele-Small electrical equivalent and the cable
capacitance, checked against the published driver model."""

from __future__ import annotations

import math
import tomllib

import numpy as np
import pytest

from chainbudget.budget import compute
from chainbudget.chainfile import ChainFileError, Load, parse_chain
from chainbudget.loudspeaker import driver_impedance, load_impedance

# A demonstration 8 ohm woofer (invented values).
RE, LE, FS, QES, QMS = 6.4, 0.5e-3, 45.0, 0.42, 3.1


def test_impedance_peak_at_resonance_is_re_plus_re_qms_over_qes() -> None:
    """At f_s the motional branch of the free-air equivalent is R_ES = R_E Q_MS/Q_ES alone
    (Small, J. Audio Eng. Soc. 20 (1972) 383, the driver's electrical equivalent), so with
    no coil inductance |Z(f_s)| = R_E + R_E Q_MS/Q_ES, the peak of |Z|; rtol 1e-12."""
    peak = RE + RE * QMS / QES
    assert abs(driver_impedance(FS, RE, 0.0, FS, QES, QMS)) == pytest.approx(peak, rel=1e-12)
    f = np.geomspace(10.0, 200.0, 20001)
    z = np.abs(driver_impedance(f, RE, 0.0, FS, QES, QMS))
    assert f[np.argmax(z)] == pytest.approx(FS, rel=2e-4)
    assert z.max() == pytest.approx(peak, rel=1e-6)
    # The coil's inductance adds j w L_E in series: the real part at f_s is unchanged.
    with_coil = driver_impedance(FS, RE, LE, FS, QES, QMS)
    assert with_coil.real == pytest.approx(peak, rel=1e-12)
    assert with_coil.imag == pytest.approx(2.0 * math.pi * FS * LE, rel=1e-12)


def test_impedance_far_from_resonance_is_the_voice_coil() -> None:
    """Far below and far above f_s the motional branch shorts through its inductance or its
    capacitance C_MES = Q_ES/(2 pi f_s R_E): R_E, and above it R_E + j w L_E - j/(w C_MES)
    (the same equivalent); rtol 1e-4 three hundredfold away."""
    low = driver_impedance(FS / 300.0, RE, LE, FS, QES, QMS)
    assert low.real == pytest.approx(RE, rel=1e-4)
    w = 2.0 * math.pi * FS * 300.0
    high = driver_impedance(FS * 300.0, RE, LE, FS, QES, QMS)
    assert high.real == pytest.approx(RE, rel=1e-4)
    c_mes = QES / (2.0 * math.pi * FS * RE)
    assert high.imag == pytest.approx(w * LE - 1.0 / (w * c_mes), rel=1e-4)


def test_cable_capacitance_hangs_across_the_load() -> None:
    """Z = Z_L || 1/(j w C) (parallel impedances)."""
    load = Load(impedance=8.0, sensitivity=None, capacitance=2.2e-6)
    f = np.array([1e3, 1e5])
    z_c = 1.0 / (2j * math.pi * f * 2.2e-6)
    expected = 8.0 * z_c / (8.0 + z_c)
    np.testing.assert_allclose(load_impedance(load, f), expected, rtol=1e-12)


def test_an_incomplete_thiele_small_set_is_refused() -> None:
    text = """
[source]
level = "-10 dBV"
[load]
impedance = "8 ohm"
re = "6.4 ohm"
qes = 0.4
[[stage]]
name = "amp"
kind = "block"
gain = "20 dB"
input_impedance = "10k"
output_impedance = "0.1 ohm"
"""
    with pytest.raises(ChainFileError, match=r"load\.fs: missing required field"):
        parse_chain(tomllib.loads(text), "ts.toml")


def test_the_load_is_the_driver_at_the_reference() -> None:
    """A block of 0.1 ohm output impedance into the driver: the power at the reference is
    V^2 Re(1/Z)/2 with Z the driver's impedance there (sine power into a complex load), the
    damping factor the nominal rating over the output impedance (the trade's definition)."""
    text = f"""
[chain]
reference = "1 kHz"
[source]
level = "1 Vrms"
[load]
impedance = "8 ohm"
re = "{RE} ohm"
le = "{LE} H"
fs = "{FS} Hz"
qes = {QES}
qms = {QMS}
[[stage]]
name = "amp"
kind = "block"
gain = 2
input_impedance = "1 Mohm"
output_impedance = "0.1 ohm"
"""
    budget = compute(parse_chain(tomllib.loads(text), "ts.toml"))
    z = driver_impedance(1e3, RE, LE, FS, QES, QMS)
    v = 2.0 * math.sqrt(2.0) * abs(z / (z + 0.1))
    out = budget.output
    assert out is not None
    assert out.nominal_vpk == pytest.approx(v, rel=1e-6)
    assert out.nominal_power_w == pytest.approx(v * v * (1.0 / z).real / 2.0, rel=1e-6)
    assert out.damping_factor == pytest.approx(8.0 / 0.1, rel=1e-6)
