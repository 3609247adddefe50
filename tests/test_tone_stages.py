"""Tests for the feedback tone stages: tone_bass, tone_treble and tone_two_band.

Reference: P. J. Baxandall, "Negative-feedback tone control", Wireless World, October 1952
(quoted from memory): with the networks in the input and feedback legs of an inverting
amplifier, the gain is -Z_f/Z_i seen from the virtual-earth summing node; a linear pot at
mid rotation is flat at -1, rotations x and 1 - x mirror the network so their responses are
reciprocal, and full bass boost reaches -(R + P)/R at low frequency. The single-section
closed form is evaluated with scipy.signal.freqs.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import signal
from stagekit import make_stage, solve, unloaded_gain

from chainbudget.stages.base import Stage

AUDIO = np.logspace(np.log10(20.0), np.log10(20e3), 31)
OUTER, POT, CAP = 10e3, 100e3, 22e-9
TREBLE_POT, TREBLE_CAP = 100e3, 2.2e-9
ROTATIONS = np.array([0.0, 0.1, 0.25, 0.4, 0.5, 0.6, 0.75, 0.9, 1.0])


def _bass(**values: object) -> Stage:
    return make_stage("tone_bass", outer=OUTER, pot=POT, cap=CAP, **values)


def _treble(**values: object) -> Stage:
    return make_stage("tone_treble", outer=OUTER, pot=TREBLE_POT, cap=TREBLE_CAP, **values)


def _two_band(**values: object) -> Stage:
    return make_stage(
        "tone_two_band",
        bass_outer=OUTER,
        bass_pot=POT,
        bass_cap=CAP,
        treble_pot=TREBLE_POT,
        treble_cap=TREBLE_CAP,
        treble_wiper=4.7e3,
        **values,
    )


STAGES = {
    "bass split": lambda: _bass(),
    "bass across": lambda: _bass(cap_layout="across"),
    "treble": lambda: _treble(wiper=1e3),
    "two band": lambda: _two_band(),
}


@pytest.mark.parametrize("which", list(STAGES))
def test_linear_pot_at_mid_rotation_is_flat(which: str) -> None:
    """Baxandall (WW, Oct. 1952): a linear pot at mid rotation gives a flat -1. With an
    op-amp of A0 = 1e9: 0 dB within 0.01 dB over 20 Hz..20 kHz, and the complex gain
    -1 within 1e-6 (the mirror symmetry makes it exact for an ideal op-amp)."""
    gain = unloaded_gain(solve(STAGES[which](), AUDIO))
    assert np.max(np.abs(20.0 * np.log10(np.abs(gain)))) < 0.01
    np.testing.assert_allclose(gain, -1.0, atol=1e-6)


@pytest.mark.parametrize("which", ["bass split", "bass across", "treble"])
def test_mirrored_rotations_give_reciprocal_responses(which: str) -> None:
    """H(x) H(1 - x) = 1 for the symmetric networks (Baxandall, WW Oct. 1952): rotation
    x is the mirror image of 1 - x, so Z_f and Z_i swap. The rotations ride on a batch axis
    of one solve; tolerance 1e-6 (ideal op-amp to ~1e-8)."""
    stage = STAGES[which]()
    gain = unloaded_gain(solve(stage, AUDIO, positions={"position": ROTATIONS[:, None]}))
    assert gain.shape == (ROTATIONS.size, AUDIO.size)
    np.testing.assert_allclose(gain * gain[::-1], 1.0, atol=1e-6)
    # Not trivially flat: full boost and full cut differ by over 14 dB somewhere in band.
    assert np.abs(gain[-1] / gain[0]).max() > 5.0


def test_two_band_mirrored_rotations_give_reciprocal_responses() -> None:
    """Two-band: H(x, y) H(1 - x, 1 - y) = 1 over a 2-D batch of bass x treble rotations
    (Baxandall, WW Oct. 1952); tolerance 1e-6."""
    x = ROTATIONS[:, None, None]
    y = ROTATIONS[None, :, None]
    gain = unloaded_gain(
        solve(_two_band(), AUDIO, positions={"bass_position": x, "treble_position": y})
    )
    assert gain.shape == (ROTATIONS.size, ROTATIONS.size, AUDIO.size)
    np.testing.assert_allclose(gain * gain[::-1, ::-1], 1.0, atol=1e-6)


@pytest.mark.parametrize("layout", ["split", "across"])
def test_full_bass_boost_and_cut_low_frequency_limits(layout: str) -> None:
    """Full boost (rotation 1): H -> -(R + P)/R = -11 as f -> 0; full cut: -R/(R + P)
    (Baxandall, WW Oct. 1952; contract "Stage topologies"). At 1e-4 Hz the caps are open
    to ~1e-6; the contract's 1e-6 P end resistance (0.1 ohm against R = 10k) shifts the
    figure by 1e-5, so rtol 3e-5."""
    stage = _bass(cap_layout=layout)
    rotations = np.array([[1.0], [0.0]])
    gain = unloaded_gain(solve(stage, [1e-4], positions={"position": rotations}))
    np.testing.assert_allclose(gain[0, 0], -(OUTER + POT) / OUTER, rtol=3e-5)
    np.testing.assert_allclose(gain[1, 0], -OUTER / (OUTER + POT), rtol=3e-5)


def test_full_bass_boost_high_frequency_limit_is_minus_one() -> None:
    """At high frequency the caps short the pot and the gain is -1 (contract; Baxandall,
    WW Oct. 1952). At 1 MHz a 22 nF cap is 7 ohm against R = 10k: rtol 1e-3."""
    gain = unloaded_gain(solve(_bass(position=1.0), [1e6]))
    np.testing.assert_allclose(gain, -1.0, rtol=1e-3)


@pytest.mark.parametrize("layout", ["split", "across"])
def test_full_bass_boost_matches_the_single_section_closed_form(layout: str) -> None:
    """At full boost the wiper sits at the input-side end: Z_i = R and
    Z_f = R + P/(1 + sPC), so H = -(R + P/(1 + sPC))/R = -(sRPC + R + P)/(sRPC + R)
    (Baxandall, WW Oct. 1952), evaluated with scipy.signal.freqs over 20 Hz..20 kHz for
    both cap layouts (at full boost both leave one C across the whole track); rtol 3e-5
    (the contract's 1e-6 P end resistances)."""
    r, p, c = OUTER, POT, CAP
    gain = unloaded_gain(solve(_bass(position=1.0, cap_layout=layout), AUDIO))
    _, expected = signal.freqs([-r * p * c, -(r + p)], [r * p * c, r], worN=2.0 * np.pi * AUDIO)
    np.testing.assert_allclose(gain, expected, rtol=3e-5)
    # The shelf's corner 1/(2 pi P C) = 72 Hz is inside the band: the check sees the slope.
    assert abs(gain[0]) > 8.0
    assert abs(gain[-1]) < 1.1


def test_full_treble_boost_high_frequency_limit() -> None:
    """Treble at full boost, f -> infinity (caps short): the wiper sits at the input-side
    end, so the input drives the summing node through R and through the wiper leg R_w,
    while the track P hangs between input and output without touching the summing node.
    KCL at the virtual earth: H = -(1 + R/R_w) (nodal analysis of the contract's topology;
    Baxandall, WW Oct. 1952). R = 10k, R_w = 1k: H = -11. The wiper leg also carries the
    contract's two 1e-6 P stability resistances (0.2 ohm), kept in the formula. The limit
    is taken with 1 uF caps at 100 MHz (1.6 mohm, 1.6e-6 of R_w); rtol 3e-5, since the
    0.1 ohm pot end also carries the track current (a further ~1e-5)."""
    r, p, rw = OUTER, TREBLE_POT, 1e3
    stage = make_stage("tone_treble", outer=r, pot=p, cap=1e-6, wiper=rw, position=1.0)
    gain = unloaded_gain(solve(stage, [1e8]))
    np.testing.assert_allclose(gain, -(1.0 + r / (rw + 2e-6 * p)), rtol=3e-5)
    # At low frequency the caps are open and only the flat path is left: -1.
    low = unloaded_gain(solve(_treble(wiper=rw, position=1.0), [1e-3]))
    np.testing.assert_allclose(low, -1.0, rtol=1e-4)


def test_log_taper_tone_pot_is_not_flat_at_mid() -> None:
    """A log-taper pot at mid rotation sits at 9.1 % of its track, not 50 %: the bass stage
    is then cut, |H| < 1 at 20 Hz (contract taper law); a guard that the taper is applied."""
    gain = unloaded_gain(solve(_bass(taper="log"), [20.0]))
    assert abs(gain[0]) < 0.5
