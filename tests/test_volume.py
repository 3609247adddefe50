"""Tests for the volume stage and the pot taper laws (chainbudget.stages.volume, base).

References: the loaded potential divider (Horowitz & Hill, The Art of Electronics, 3rd ed.,
sec. 1.2.3: V_out/V_in = R_lower || R_L / (R_upper + R_lower || R_L)); the taper laws of
the chain-format contract ("Stage topologies": log = (10^(2x) - 1)/99, "10 % at mid" being
the usual audio taper, common practice, no source).

The contract gives each pot half a 1e-6 P series resistance for numerical stability; that
shifts a divider ratio by ~1e-6 (relative near the top, absolute near the bottom of the
track), hence the 1e-5 relative and 2e-6 absolute tolerances below.
"""

from __future__ import annotations

import numpy as np
import pytest
from stagekit import make_stage, solve, unloaded_gain

from chainbudget.stages.base import taper_fraction

POT = 10e3


def _parallel(*resistances: float) -> float:
    return 1.0 / sum(1.0 / r for r in resistances)


def _loaded_ratio(
    rotation: float, load: float, series: float = 0.0, shunt: float = np.inf
) -> float:
    """H&H 3rd ed. sec. 1.2.3, linear taper: lower = xP || shunt || R_L, upper = (1-x)P +
    series."""
    lower = _parallel(rotation * POT, shunt, load)
    return lower / ((1.0 - rotation) * POT + series + lower)


@pytest.mark.parametrize("rotation", [0.1, 0.3, 0.5, 0.8])
@pytest.mark.parametrize("load", [1e3, 10e3, 100e3])
def test_loaded_linear_pot_matches_the_divider_formula(rotation: float, load: float) -> None:
    """A linear pot loaded by R_L, against the loaded-divider formula (H&H 3rd ed. sec.
    1.2.3); rtol 1e-5. A 1 kohm load on a 10 kohm pot sags the output by up to 5x."""
    stage = make_stage("volume", pot=POT, taper="linear", position=rotation)
    ratio = solve(stage, [1e3]).two_port.voltage_ratio(1.0 / load)
    np.testing.assert_allclose(ratio, _loaded_ratio(rotation, load), rtol=1e-5)


def test_series_and_shunt_resistors_join_the_divider() -> None:
    """series 4.7k from the input to the pot's top, shunt 22k from wiper to ground, 10k
    load, rotation 0.6: lower = xP || shunt || R_L, upper = (1-x)P + series (H&H 3rd ed.
    sec. 1.2.3); rtol 1e-5."""
    stage = make_stage("volume", pot=POT, taper="linear", position=0.6, series=4.7e3, shunt=22e3)
    ratio = solve(stage, [1e3]).two_port.voltage_ratio(1.0 / 10e3)
    expected = _loaded_ratio(0.6, 10e3, series=4.7e3, shunt=22e3)
    np.testing.assert_allclose(ratio, expected, rtol=1e-5)


def test_output_impedance_of_the_wiper() -> None:
    """Driven from 0 ohm, the wiper's source impedance is xP || (1-x)P (Thevenin, H&H 3rd
    ed. sec. 1.2.5): 2.5 kohm at mid of a 10 kohm linear pot; rtol 1e-5."""
    stage = make_stage("volume", pot=POT, taper="linear", position=0.5)
    z = solve(stage, [1e3]).two_port.output_impedance(0.0)
    np.testing.assert_allclose(z, 2.5e3, rtol=1e-5)


def test_log_taper_law_and_its_mid_value() -> None:
    """Contract log law (10^(2x) - 1)/99: 0 at 0, 1 at 1, 9/99 = 9.09 % at mid ("10 % at
    mid", the usual audio taper, common practice); exact to 1e-12."""
    rotation = np.array([0.0, 0.25, 0.5, 0.75, 1.0])
    expected = (10.0 ** (2.0 * rotation) - 1.0) / 99.0
    np.testing.assert_allclose(taper_fraction(rotation, "log"), expected, rtol=1e-12)
    assert float(taper_fraction(0.5, "log")) == pytest.approx(0.0909091, rel=1e-6, abs=0)


def test_log_taper_volume_stage_at_mid_gives_nine_percent() -> None:
    """Unloaded, a log volume pot at mid rotation passes 9.09 % (-20.8 dB) of its input
    (contract taper law); rtol 1e-5."""
    stage = make_stage("volume", pot=POT, position=0.5)  # log is the volume default
    gain = unloaded_gain(solve(stage, [1e3]))
    np.testing.assert_allclose(gain, 9.0 / 99.0, rtol=1e-5)
    assert 20.0 * np.log10(abs(gain[0])) == pytest.approx(-20.83, abs=0.01)


@pytest.mark.parametrize("mid", [0.05, 0.15, 0.2, 0.3])
def test_custom_taper_hits_its_mid_fraction(mid: float) -> None:
    """A numeric taper is the fraction at mid rotation (contract): the law passes through
    (0, 0), (0.5, mid) and (1, 1), rises monotonically, and the unloaded stage at mid passes
    ``mid`` of its input; rtol 1e-5 + atol 2e-6 (stage), 1e-12 (law)."""
    rotation = np.linspace(0.0, 1.0, 101)
    law = taper_fraction(rotation, mid)
    np.testing.assert_allclose(law[[0, 50, 100]], [0.0, mid, 1.0], rtol=1e-12, atol=1e-15)
    assert np.all(np.diff(law) > 0.0)
    stage = make_stage("volume", pot=POT, taper=mid, position=0.5)
    np.testing.assert_allclose(unloaded_gain(solve(stage, [1e3])), mid, rtol=1e-5, atol=2e-6)


def test_custom_taper_of_one_eleventh_is_the_log_law() -> None:
    """A mid fraction of 1/11 gives base (1/m - 1)^2 = 100, i.e. the contract's log law;
    rtol 1e-12."""
    rotation = np.linspace(0.0, 1.0, 21)
    np.testing.assert_allclose(
        taper_fraction(rotation, 1.0 / 11.0), taper_fraction(rotation, "log"), rtol=1e-12
    )


def test_position_zero_is_silent() -> None:
    """Rotation 0 puts the wiper at the grounded end (contract): only the 1e-6 P stability
    resistance remains below the wiper, so the output is ~1e-6 of the input (-120 dB)."""
    stage = make_stage("volume", pot=POT, position=0.0)
    gain = unloaded_gain(solve(stage, [1e3]))
    assert abs(gain[0]) < 2e-6


def test_volume_rotations_on_a_batch_axis() -> None:
    """Rotations may ride on a batch axis (the volume sweep of the analysis): one solve,
    shape (rotations, F), each entry the unloaded log-law fraction; rtol 1e-5, atol 2e-6."""
    rotation = np.linspace(0.1, 1.0, 10)
    stage = make_stage("volume", pot=POT)
    gain = unloaded_gain(
        solve(stage, [100.0, 1e3, 10e3], positions={"position": rotation[:, None]})
    )
    assert gain.shape == (10, 3)
    expected = np.broadcast_to(taper_fraction(rotation, "log")[:, None], gain.shape)
    np.testing.assert_allclose(gain, expected, rtol=1e-5, atol=2e-6)
