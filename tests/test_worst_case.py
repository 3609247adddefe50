"""The worst-case search: where it reports the worst case, and the size of its grid."""

from __future__ import annotations

import tomllib

import numpy as np

from chainbudget.budget import compute
from chainbudget.budget.analysis import SWEEP_POINTS, analyse
from chainbudget.chainfile import parse_chain
from chainbudget.findings import findings

HEAD = """
[chain]
title = "worst case"
[source]
level = "-10 dBV"
max_level = "0 dBV"
impedance = "1 kohm"
[load]
impedance = "10 kohm"
[[supply]]
name = "rail"
kind = "dc"
voltage = "15 V"
[[supply]]
name = "neg"
kind = "dc"
voltage = "15 V"
"""

GAIN = """
[[stage]]
name = "{name}"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10k"
ground_leg = "10k"
opamp = "low_noise_bipolar"
positive = "rail"
negative = "neg"
"""

BASS = """
[[stage]]
name = "{name}"
kind = "tone_bass"
outer = "10k"
pot = "100k"
cap = "47n"
opamp = "low_noise_bipolar"
positive = "rail"
negative = "neg"
"""


def chain(text: str):  # type: ignore[no-untyped-def]
    return parse_chain(tomllib.loads(HEAD + text), "t.toml")


def test_a_flat_stage_reports_its_worst_case_at_the_reference_frequency() -> None:
    """A DC-coupled gain-of-2 stage is flat over the band to well under 0.01 dB (closed-loop
    bandwidth GBW/2 = 5 MHz), so its worst case is a plateau; the report names the reference
    frequency, not an arbitrary point of it."""
    node = compute(chain(GAIN.format(name="pre"))).nodes[0]
    assert node.worst is not None
    assert node.worst.frequency_hz == 1000.0
    assert node.headroom_db is not None
    assert abs(node.worst.headroom_db - node.headroom_db) < 0.01


def test_bass_boost_worst_case_is_full_boost_at_the_bottom_of_the_band() -> None:
    """A feedback bass stage's gain rises towards low frequency and with rotation (Baxandall,
    Wireless World, Oct. 1952: full boost -(R+P)/R below the turnover), so its worst headroom
    is at rotation 1 and the lowest band frequency."""
    worst = compute(chain(BASS.format(name="bass"))).nodes[0].worst
    assert worst is not None
    assert worst.controls == {("bass", "position"): 1.0}
    assert worst.frequency_hz == 20.0


def test_every_pot_keeps_every_rotation_however_many_are_swept() -> None:
    """The search is no grid of every pot at once (chainbudget.budget.search), so six swept
    pots keep all SWEEP_POINTS rotations each (and mid rotation, and the setting)."""
    six = chain("".join(BASS.format(name=f"b{i}") for i in range(6)))
    analysis = analyse(six)
    assert analysis.sweep_points == SWEEP_POINTS
    for sc in analysis.swept_controls:
        assert sc.rotations.tolist() == np.linspace(0.0, 1.0, SWEEP_POINTS).tolist()


def test_no_coarse_search_finding_for_many_pots() -> None:
    """The note a coarsened grid used to give has no cause left (its code is retired)."""
    six = compute(chain("".join(BASS.format(name=f"b{i}") for i in range(6))))
    assert "coarse-search" not in {f.code for f in findings(six)}
