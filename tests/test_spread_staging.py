"""The gain-staging rules that compare stages, per trial (`chainbudget.spread.staging`):
``clip-order`` behind the volume and ``boost-over-headroom`` of a tone stage. Brute force,
one trial at a time through the real check (each trial's drawn parts written into the
chain, `Chain.with_values`), and the share of trials drawing ``clip-order`` against the
analytic share of a uniform draw."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from test_spread import _chain, trial_changes

from chainbudget.budget import compute
from chainbudget.budget.supplies import settle
from chainbudget.chainfile import Chain
from chainbudget.spread.evaluate import Evaluator
from chainbudget.spread.flags import flag_key
from chainbudget.spread.parts import chain_parts

ROOT = Path(__file__).resolve().parents[1]

# A near-ideal op-amp of our own (120 dB open-loop, 100 GHz GBW, a demonstration part) on
# +/-15 V: it swings to within 1.5 V of each rail, 13.5 V peak.
HEAD = """
[chain]
title = "staging spread"
band = ["20 Hz", "20 kHz"]
reference = "1 kHz"
ambient = "25 degC"
points_per_decade = 10

[tolerances]
resistors = "{resistors}"
capacitors = "0 %"
pots = "{pots}"

[opamp.ideal]
gbw = "100 gigahertz"
slew_rate = "1000 V/us"
open_loop_gain = "120 dB"
output_resistance = "50 ohm"
swing_margin = "1.5 V"
output_current = "50 mA"

[[supply]]
name = "plus"
kind = "dc"
voltage = "15 V"

[[supply]]
name = "minus"
kind = "dc"
voltage = "15 V"

[source]
level = "100 mV"
max_level = "500 mV"

[load]
impedance = "10 kohm"
"""

# A buffer block whose clip sets the headroom ahead of a bass stage (its full boost, about
# (outer + pot)/outer at the band's low edge, near that headroom: its drawn outer and pot
# move it across), a linear volume pot, a line block clipping at 2 V peak and an
# op-amp output stage of gain 1 + Rf/Rg behind an input high-pass (8 nF into its 100k bias
# resistor, a 199 Hz corner: 0.17 dB down at the reference, flat at the band's top, so the
# margin over the band is not the one at the reference): with the volume fully up the line
# block clips first when 2 (1 + Rf/Rg) |H(20 kHz)| < 13.5 V, so the drawn Rf and Rg move
# the order across.
BASS = """
[[stage]]
name = "bass"
kind = "tone_bass"
outer = "10k"
pot = "100k"
cap = "10n"
opamp = "ideal"
positive = "plus"
negative = "minus"
"""
STAGED = (
    HEAD
    + """
[[stage]]
name = "buffer"
kind = "block"
gain = 1
input_impedance = "1 Mohm"
output_impedance = "1 ohm"
max_output = "{buffer_max}"

{bass}
[[stage]]
name = "volume"
kind = "volume"
pot = "10k"
taper = "linear"
position = 0.3
tolerance = {{ pot = "0 %" }}

[[stage]]
name = "line"
kind = "block"
gain = 1
input_impedance = "10 kohm"
output_impedance = "100 ohm"
max_output = "2 V"

[[stage]]
name = "power"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "{feedback}"
ground_leg = "10k"
input_cap = "8n"
bias_resistor = "100k"
opamp = "ideal"
positive = "plus"
negative = "minus"
{power_tolerance}
"""
)


def _staged(
    buffer_max: str = "8 V",
    feedback: str = "57.5k",
    resistors: str = "1 %",
    pots: str = "5 %",
    power_tolerance: str = "",
    bass: str = BASS,
) -> Chain:
    return _chain(
        STAGED.format(
            buffer_max=buffer_max,
            feedback=feedback,
            resistors=resistors,
            pots=pots,
            power_tolerance=power_tolerance,
            bass=bass,
        )
    )


def _evaluator(chain: Chain) -> Evaluator:
    parts, _ = chain_parts(chain)
    return Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)


CLIP_ORDER = flag_key("warning", "clip-order", "line")
BOOST = flag_key("warning", "boost-over-headroom", "bass")


def test_each_trials_flags_are_the_check_of_that_trial() -> None:
    """Twelve trials of the staged chain (1 % resistors, 5 % pots: the bass stage's outer
    and pot, the output stage's Rf and Rg among them), each written into the chain and checked
    alone: the batch flags ``clip-order`` at the line block exactly in the trials whose
    check finds it there, and ``boost-over-headroom`` at the bass stage likewise; each
    code is drawn in some trials and not in others (the margins sit near 0 dB), and no
    other stage is flagged (the output stage is not compared with itself)."""
    chain = _staged(buffer_max="7.76 V")
    evaluate = _evaluator(chain)
    parts = evaluate.parts
    positions = np.random.default_rng(5).random((12, len(parts)))
    flags = evaluate(positions, flags=True)
    staged = {p for p in flags if ":clip-order:" in p or ":boost-over-headroom:" in p}
    assert staged == {CLIP_ORDER, BOOST}
    for t in range(len(positions)):
        changes = trial_changes(chain, parts, evaluate.values(positions[t : t + 1]))
        found = {(f.code, f.stage) for f in compute(chain.with_values(changes)).findings}
        assert bool(flags[CLIP_ORDER][t]) == (("clip-order", "line") in found), t
        assert bool(flags[BOOST][t]) == (("boost-over-headroom", "bass") in found), t
    for path in (CLIP_ORDER, BOOST):
        assert 0 < flags[path].sum() < len(positions), path


def test_steps_alone_give_the_staging_flags_of_the_whole_evaluation() -> None:
    """The ``staging`` step asked alone gives the flags of the whole evaluation, and
    `Evaluator.steps_of` files them under it."""
    chain = _staged(buffer_max="7.76 V")
    evaluate = _evaluator(chain)
    positions = np.random.default_rng(8).random((6, len(evaluate.parts)))
    whole = evaluate(positions, flags=True)
    alone = evaluate(positions, flags=True, steps=frozenset(("staging",)))
    for path in (CLIP_ORDER, BOOST):
        assert evaluate.steps_of[path] == "staging"
        np.testing.assert_array_equal(alone[path], whole[path])


def _closed_loop_gain(rf: float, rg: float, open_loop: float) -> float:
    """Non-inverting amplifier with finite open-loop gain A: G = (1 + Rf/Rg) /
    (1 + (1 + Rf/Rg)/A) (Franco, Design with Operational Amplifiers, sec. 1.3, from
    memory)."""
    ideal = 1.0 + rf / rg
    return ideal / (1.0 + ideal / open_loop)


def test_share_drawing_clip_order_is_the_uniform_draws_share_beyond_the_threshold() -> None:
    """The staged chain without its bass stage (so that the level reaching the line block
    is flat over the band), every part exact but Rf = 57.2k, drawn uniformly within 1 %.
    The line block's 100 ohm output drives the output stage's input, Z_in = R + 1/(j w C)
    (8 nF into the 100k bias resistor; the op-amp's own input draws nothing): the line
    node is the divider Z_in/(Z_in + 100) of the block's open voltage, greatest at the
    band's low edge, 20 Hz; the output node that times the high-pass R/Z_in and the
    stage's closed-loop gain G(Rf), R/(Z_in + 100) G greatest at the top, 20 kHz (first-
    order RC dividers). With the volume fully up the line block (2 V peak) clips before
    the output stage (13.5 V swing) while 2 max|output| < 13.5 max|line|; the threshold
    Rf* solves that as an equality at an open-loop gain of 120 dB (its roll-off at
    20 kHz, some 1e-5 of the gain, left out: it moves Rf* by under 1 ohm of the draw's
    1144). The share of 4000 trials drawing ``clip-order`` is
    P(Rf < Rf*) = (Rf* - Rf0 (1 - t)) / (2 t Rf0), within four standard errors of a
    binomial share."""
    rf0, rg, t = 57.2e3, 10e3, 0.01
    chain = _staged(
        feedback="57.2k",
        resistors="0 %",
        pots="0 %",
        bass="",
        power_tolerance='tolerance = { feedback = "1 %" }',
    )
    evaluate = _evaluator(chain)
    assert [(p.owner, p.key) for p in evaluate.parts] == [("power", "feedback")]
    open_loop = 10.0 ** (120.0 / 20.0)

    def z_in(f_hz: float) -> complex:
        return 100e3 + 1.0 / (2j * math.pi * f_hz * 8e-9)

    line = abs(z_in(20.0) / (z_in(20.0) + 100.0))
    high_pass = abs(100e3 / (z_in(20e3) + 100.0))
    # 2 |H| G = 13.5 |L| solved for Rf: 1 + Rf/Rg = g / (1 - g/A), g = 13.5 |L| / (2 |H|)
    g = 13.5 * line / (2.0 * high_pass)
    threshold = rg * (g / (1.0 - g / open_loop) - 1.0)
    gain = _closed_loop_gain(threshold, rg, open_loop)
    assert 2.0 * high_pass * gain == pytest.approx(13.5 * line, rel=1e-12)
    expected = (threshold - rf0 * (1.0 - t)) / (2.0 * t * rf0)
    trials = 4000
    positions = np.random.default_rng(3).random((trials, len(evaluate.parts)))
    share = float(evaluate(positions, flags=True, steps=frozenset(("staging",)))[CLIP_ORDER].mean())
    sigma = math.sqrt(expected * (1.0 - expected) / trials)
    assert 0.65 < expected < 0.85  # the threshold lies inside the draw, off its centre
    assert abs(share - expected) < 4.0 * sigma, (share, expected, sigma)


@pytest.mark.parametrize(
    ("name", "codes"),
    [
        # the shed amplifier's driver clips 0.2 dB before its output stage
        ("shed_amp_mains.toml", ("clip-order",)),
        # the violin pre-amp's bass stage clips in its own worst case (so the check keeps
        # quiet about its boost) and its treble stage, whose worst case carries the bass
        # stage's margin (one finding, the bass stage's), boosts past the headroom
        ("violin_piezo_preamp.toml", ("boost-over-headroom",)),
    ],
)
def test_example_trials_flags_are_the_check_of_that_trial(name: str, codes: tuple[str]) -> None:
    """Four trials of an example, each written into the file and checked alone: every
    staging flag of the batch is 1 exactly where that trial's check finds the code at
    that stage (the tone stage that clips in its worst case drawing no boost)."""
    from chainbudget.chainfile import load_chain

    chain = load_chain(ROOT / "chains" / name)
    evaluate = _evaluator(chain)
    parts = evaluate.parts
    positions = np.random.default_rng(21).random((4, len(parts)))
    flags = evaluate(positions, flags=True)
    staged = [p for p in flags if any(f":{code}:" in p for code in codes)]
    assert staged
    for t in range(len(positions)):
        changes = trial_changes(chain, parts, evaluate.values(positions[t : t + 1]))
        found = {(f.code, f.stage) for f in compute(chain.with_values(changes)).findings}
        for path in staged:
            _, code, stage = path.removeprefix("finding:").split(":", 2)
            assert bool(flags[path][t]) == ((code, stage) in found), (path, t)
