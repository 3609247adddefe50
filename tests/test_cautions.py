"""The report's safety cautions: mains, hot parts, loudness."""

from __future__ import annotations

import tomllib
from pathlib import Path

from budgetkit import cautions
from test_follower_heat import TEXT as FOLLOWER

from chainbudget.budget import compute
from chainbudget.chainfile import load_chain, parse_chain
from chainbudget.thresholds import HOT_PART_W

BASE = """
[source]
level = "-10 dBV"
impedance = "1k"
[load]
impedance = "8 ohm"
[[supply]]
name = "raw"
kind = "rectified"
secondary = "18 V"
reservoir = "4700u"
regulation = "10 %"
[[supply]]
name = "reg"
kind = "regulator"
from = "raw"
output = "12 V"
theta_ja = "50 K/W"
[[stage]]
name = "amp"
kind = "block"
gain = "20 dB"
input_impedance = "10k"
output_impedance = "0.1 ohm"
max_output = "{max_output}"
supply_current = "{current}"
positive = "reg"
"""


def texts(max_output: str, current: str) -> list[str]:
    data = tomllib.loads(BASE.format(max_output=max_output, current=current))
    return cautions(compute(parse_chain(data, "t.toml")))


def test_a_mains_chain_always_carries_the_mains_caution() -> None:
    assert any(t.startswith("Mains:") for t in texts("1 V", "10 mA"))


def test_a_regulator_dissipating_watts_carries_a_hot_parts_caution() -> None:
    """0.4 A through a 12 V regulator from a ~22 V reservoir is several watts (P = (V_in -
    V_out) I, any linear-regulator text); 10 mA is a fraction of a watt."""
    hot = [t for t in texts("1 V", "0.4 A") if t.startswith('Hot parts: regulator "reg"')]
    assert len(hot) == 1
    cool = [t for t in texts("1 V", "10 mA") if t.startswith('Hot parts: regulator "reg"')]
    assert cool == []


def test_a_power_block_driving_the_speaker_carries_a_hot_parts_caution() -> None:
    """10 V peak into 8 ohm is 6.25 W (P = V_pk^2 / 2R); 1 V peak is 62.5 mW."""
    assert HOT_PART_W < 6.25  # restates the project's own threshold (not an outside check)
    assert any(t.startswith('Hot parts: "amp"') for t in texts("10 V", "10 mA"))
    assert not any(t.startswith('Hot parts: "amp"') for t in texts("1 V", "10 mA"))


def test_a_block_with_no_output_limit_still_carries_its_cautions() -> None:
    """With no stage declaring a limit the maximum output is unknown: the report says so
    (no infinite watts) and takes the loudness from the nominal level: 316 mV through the
    1k/10k input divider, x 31.6, through 0.1 ohm into 8 ohm is 8.98 V rms, 10.1 W, and
    90 dB + 10 log10(10.1) = 100 dB SPL (the definition of sensitivity)."""
    text = """
[source]
level = "-10 dBV"
impedance = "1k"
[load]
impedance = "8 ohm"
sensitivity = "90 dB"
[[stage]]
name = "amp"
kind = "block"
gain = "30 dB"
input_impedance = "10k"
output_impedance = "0.1 ohm"
"""
    found = cautions(compute(parse_chain(tomllib.loads(text), "t.toml")))
    assert not any("inf" in t for t in found)
    assert any(t.startswith("Loudness: this amplifier can reach about 100 dB") for t in found)
    assert any(t.startswith('Hot parts: "amp" drives the load with no output limit') for t in found)


def _caution_codes(budget: object) -> set[tuple[str, str | None]]:
    found = budget.findings  # type: ignore[attr-defined]
    return {(f.code, f.stage or f.supply) for f in found if f.severity == "caution"}


def test_each_caution_is_a_finding_of_its_own_code_on_what_it_concerns() -> None:
    """Cautions are findings of severity "caution": the mains one on the transformer-fed
    supply, hot parts on the part that runs hot, loudness on the chain."""
    root = Path(__file__).resolve().parents[1]
    kitchen = compute(load_chain(root / "chains" / "kitchen_radio_mains.toml"))
    assert {("mains", "raw"), ("hot-power-block", "amp"), ("loud", None)} <= _caution_codes(kitchen)
    busking = compute(load_chain(root / "chains" / "busking_amp.toml"))
    assert ("hot-output-stage", "output") in _caution_codes(busking)
    hot_regulator = compute(
        parse_chain(tomllib.loads(BASE.format(max_output="1 V", current="0.4 A")), "t.toml")
    )
    assert ("hot-regulator", "reg") in _caution_codes(hot_regulator)


def test_a_follower_dissipating_a_watt_carries_the_hot_parts_caution() -> None:
    """80 mA through a follower from 16 V rails: P = V_CE I_C ~ 16.7 V x 79 mA = 1.3 W
    (any transistor text), past the watt that burns a finger (common practice, no source)."""
    budget = compute(parse_chain(tomllib.loads(FOLLOWER.format(current="80 mA")), "t.toml"))
    assert ("hot-follower", "buf") in _caution_codes(budget)
    cool = compute(parse_chain(tomllib.loads(FOLLOWER.format(current="10 mA")), "t.toml"))
    assert not any(code == "hot-follower" for code, _ in _caution_codes(cool))
