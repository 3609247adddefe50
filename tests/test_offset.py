"""DC at the speaker: the op-amps' offset voltage and bias currents through each DC path, and
the switch-on thump of an output capacitor; against hand formulas named beside each."""

from __future__ import annotations

import json
import tomllib

import pytest

from chainbudget.budget import compute
from chainbudget.chainfile import parse_chain
from chainbudget.report.json_view import budget_json

LOOP = """
[chain]
ambient = "25 degC"
[source]
level = "0.1 Vrms"
impedance = "600 ohm"
[load]
impedance = "8 ohm"
[opamp.drifty]
gbw = "5 MHz"
slew_rate = "5 V/us"
offset_voltage = "2 mV"
bias_current = "500 nA"
swing_margin = "1 V"
output_current = "40 mA"
[[supply]]
name = "plus"
kind = "dc"
voltage = "15 V"
[[supply]]
name = "minus"
kind = "dc"
voltage = "15 V"
[[stage]]
name = "amp"
kind = "opamp_gain"
topology = "{topology}"
feedback = "22k"
{leg}
feedback_from = "output"
opamp = "drifty"
positive = "plus"
negative = "minus"
[[stage]]
name = "output"
kind = "push_pull"
driver_upper = "driver_npn"
driver_lower = "driver_pnp"
emitter_resistors = "0R22"
quiescent = "60 mA"
positive = "plus"
negative = "minus"
"""


def offset_of(text: str) -> tuple[float, set[str]]:
    budget = compute(parse_chain(tomllib.loads(text), "offset.toml"))
    assert budget.output is not None and budget.output.offset_v is not None
    return budget.output.offset_v, {fi.code for fi in budget.findings}


def test_a_dc_coupled_loop_multiplies_the_offset_by_its_dc_gain() -> None:
    """|V_os| (1 + R_f/R_g) + I_b R_f for a DC-coupled non-inverting stage round the output
    stage (Franco, Design with Operational Amplifiers, 4th ed., sec. 5.1-5.2, input offset
    error, from memory; the + input driven from a stiff 0 V); the loop takes out the output
    pair's V_BE difference. 46 + 11 = 57 mV: over the 50 mV a designer trims to (common
    practice), a warning."""
    offset, codes = offset_of(LOOP.format(topology="non-inverting", leg='ground_leg = "1k"'))
    assert offset == pytest.approx(2e-3 * 23.0 + 500e-9 * 22e3, rel=1e-9)
    assert "offset-at-load" in codes


def test_a_capacitor_in_the_ground_leg_gives_unity_dc_gain() -> None:
    """With ground_cap the DC gain is one: |V_os| + I_b R_f = 2 + 11 = 13 mV, no finding."""
    leg = 'ground_leg = "1k"\nground_cap = "220u"'
    offset, codes = offset_of(LOOP.format(topology="non-inverting", leg=leg))
    assert offset == pytest.approx(2e-3 + 500e-9 * 22e3, rel=1e-9)
    assert "offset-at-load" not in codes


def test_an_inverting_loop_and_its_input_error() -> None:
    """Inverting, DC-coupled: |V_os| (1 + R_f/R_i) + I_b R_f (the same source)."""
    offset, _ = offset_of(LOOP.format(topology="inverting", leg='input = "4k7"'))
    assert offset == pytest.approx(2e-3 * (1.0 + 22e3 / 4.7e3) + 500e-9 * 22e3, rel=1e-9)


SINGLE = """
[chain]
ambient = "25 degC"
[source]
level = "0.1 Vrms"
impedance = "600 ohm"
[load]
impedance = "8 ohm"
[[supply]]
name = "rail"
kind = "dc"
voltage = "24 V"
[[stage]]
name = "amp"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "22k"
ground_leg = "1k"
ground_cap = "100u"
input_cap = "1u"
bias_resistor = "47k"
feedback_from = "output"
opamp = "low_noise_bipolar"
[[stage]]
name = "output"
kind = "push_pull"
driver_upper = "driver_npn"
driver_lower = "driver_pnp"
emitter_resistors = "0R22"
quiescent = "60 mA"
output_cap = "2200u"
"""


def test_switch_on_of_a_single_supply_output_capacitor() -> None:
    """The capacitor charges to the mid-point V_s/2 = 12 V through the 8 ohm speaker: C V^2/2
    = 158 mJ stored and V/R_L = 1.5 A peak (RC charging, Horowitz & Hill 3rd ed. sec. 1.4,
    from memory); a note. No DC reaches the speaker: the offset is 0 behind the capacitor,
    and the loop, sensing before it, holds the mid-point."""
    budget = compute(parse_chain(tomllib.loads(SINGLE), "single.toml"))
    (thump,) = [fi for fi in budget.findings if fi.code == "turn-on-thump"]
    assert thump.severity == "note"
    assert thump.figures["energy_j"] == pytest.approx(2200e-6 * 12.0**2 / 2.0, rel=1e-12)
    assert thump.figures["peak_a"] == pytest.approx(12.0 / 8.0, rel=1e-12)
    assert budget.output is not None and budget.output.offset_v == 0.0
    assert not [fi for fi in budget.findings if fi.code == "loop-open-at-dc"]
    assert budget.node("amp").dc is not None
    # The contract's output keys for the output stage as built.
    data = json.loads(json.dumps(budget_json(budget, list(budget.findings))))
    for key in ("thd", "offset_v", "quiescent_hot_a", "thermal_runaway"):
        assert key in data["output"], key
    assert [entry["stage"] for entry in data["loop"]] == ["amp"]


def test_feedback_from_beyond_a_capacitor_inside_the_loop_is_open_at_dc() -> None:
    """A follower with an output capacitor inside the loop: no DC feedback, an error."""
    text = LOOP.format(topology="non-inverting", leg='ground_leg = "1k"').replace(
        'feedback_from = "output"', 'feedback_from = "output"'
    )
    text = text.replace(
        '[[stage]]\nname = "output"',
        '[[stage]]\nname = "buffer"\nkind = "follower"\nbias = "current"\ncurrent = "10 mA"\n'
        'output_cap = "10u"\npositive = "plus"\nnegative = "minus"\n\n[[stage]]\nname = "output"',
    )
    budget = compute(parse_chain(tomllib.loads(text), "open.toml"))
    found = [fi for fi in budget.findings if fi.code == "loop-open-at-dc"]
    assert [(fi.severity, fi.stage) for fi in found] == [("error", "amp")]
