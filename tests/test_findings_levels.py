"""Findings about levels: one finding per cause."""

from __future__ import annotations

import tomllib
from pathlib import Path

from chainbudget.budget import compute
from chainbudget.chainfile import load_chain, parse_chain
from chainbudget.findings import findings

CHAINS = Path(__file__).resolve().parents[1] / "chains"


def test_a_margin_carried_by_unity_gain_stages_is_reported_once() -> None:
    """The violin belt-pack's buffer sets the level; the bass and treble stages after it are
    flat (gain -1 at mid rotation; Baxandall, Wireless World, Oct. 1952) on the same rails,
    so they share its thin margin: one warning at the buffer, naming the others."""
    budget = compute(load_chain(CHAINS / "violin_piezo_preamp.toml"))
    heads = {n.stage: n.headroom_db for n in budget.nodes if n.headroom_db is not None}
    assert (
        abs(heads["buffer"] - heads["bass"]) < 0.05 and abs(heads["bass"] - heads["treble"]) < 0.05
    )
    thin = [f for f in findings(budget) if f.code == "thin-headroom"]
    assert [f.stage for f in thin] == ["buffer"]
    assert '"bass", "treble"' in thin[0].message


def test_a_follower_with_no_bias_reports_the_cause_not_its_clipping() -> None:
    """A follower whose base sits 0.2 V above the negative rail cannot conduct (V_E = V_B -
    V_BE < V-; Horowitz & Hill 3rd ed. sec. 2.2): one error says so, and the clipping it
    causes at that node is not repeated as clip-nominal."""
    text = """
[source]
level = "100 mV"
impedance = "1k"
[load]
impedance = "10k"
[[supply]]
name = "rail"
kind = "dc"
voltage = "24 V"
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10k"
ground_leg = "1k"
[[stage]]
name = "buf"
kind = "follower"
emitter_resistor = "1k"
base_bias = "0.2 V"
"""
    budget = compute(parse_chain(tomllib.loads(text), "t.toml"))
    at_buf = {f.code for f in findings(budget) if f.stage == "buf"}
    assert "follower-off" in at_buf
    assert not at_buf & {"clip-nominal", "clip-max", "thin-headroom"}
