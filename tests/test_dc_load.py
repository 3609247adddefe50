"""DC the chain puts on its load."""

from __future__ import annotations

import tomllib
from pathlib import Path

import pytest

from chainbudget.budget import compute
from chainbudget.chainfile import parse_chain
from chainbudget.findings import findings

CHAINS = Path(__file__).resolve().parents[1] / "chains"


def dc_into_load(text: str) -> list[tuple[str, float]]:
    budget = compute(parse_chain(tomllib.loads(text), "t.toml"))
    return [(f.severity, f.figures["dc_v"]) for f in findings(budget) if f.code == "dc-into-load"]


def test_a_dc_coupled_follower_and_output_stage_put_a_vbe_on_the_speaker() -> None:
    """Driver at 0 V DC -> NPN follower's emitter one V_BE (0.7 V) and its base-stopper drop
    lower (Horowitz & Hill 3rd ed. sec. 2.2) -> a push-pull stage whose bias spreader cancels
    its own V_BE drops passes that on: about -0.71 V across 4 ohm, a warning (over 50 mV,
    under 1 V; common practice). The shipped busking amp biases its driver one diode drop
    up and so puts no DC on the speaker."""
    text = (CHAINS / "busking_amp.toml").read_text(encoding="utf-8")
    assert dc_into_load(text) == []
    start = text.index('ground_cap = "100u"          # DC gain of one')
    end = text.index('opamp = "line_driver"', start)
    text = text[:start] + text[end:]  # the driver DC-coupled again, its + input at 0 V
    found = dc_into_load(text)
    assert len(found) == 1
    severity, volts = found[0]
    assert severity == "warning"
    assert volts == pytest.approx(-0.71, abs=0.02)


def test_a_single_supply_line_output_at_mid_rail_is_noted() -> None:
    """An op-amp line driver on a 5 V single supply sits at mid-rail, 2.5 V (contract: the
    signal sits at mid-rail), DC-coupled into a 10 kohm line input: a note."""
    found = dc_into_load((CHAINS / "field_recorder_battery.toml").read_text(encoding="utf-8"))
    assert found == [("note", pytest.approx(2.5, rel=1e-9, abs=0))]
