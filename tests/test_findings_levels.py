"""Findings about levels: one finding per cause."""

from __future__ import annotations

from pathlib import Path

from chainbudget.budget import compute
from chainbudget.chainfile import load_chain
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
