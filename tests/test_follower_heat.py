"""A follower's own heat: idle dissipation at high line, warned past what a small transistor
takes in free air."""

from __future__ import annotations

import tomllib

import pytest
from budgetkit import followers

from chainbudget.budget import compute
from chainbudget.chainfile import parse_chain
from chainbudget.findings import findings

TEXT = """
[source]
level = "100 mV"
impedance = "1k"
[load]
impedance = "10k"
[[supply]]
name = "plus"
kind = "dc"
voltage = "15 V"
max_voltage = "16 V"
[[supply]]
name = "minus"
kind = "dc"
voltage = "15 V"
max_voltage = "16 V"
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10k"
ground_leg = "10k"
positive = "plus"
negative = "minus"
[[stage]]
name = "buf"
kind = "follower"
transistor = "driver_npn"
bias = "current"
current = "{current}"
positive = "plus"
negative = "minus"
"""


@pytest.mark.parametrize(("current", "hot"), [("40 mA", True), ("10 mA", False)])
def test_follower_dissipation_is_vce_times_ic_at_high_line(current: str, hot: bool) -> None:
    """P = V_CE I_C (any transistor text): the collector at the 16 V high-line rail, the
    emitter one V_BE (0.7 V) below the base at 0 V, I_C = beta/(beta+1) I_E; 40 mA gives
    ~0.67 W, past the 0.5 W a small device takes in free air (common practice), 10 mA
    ~0.17 W."""
    budget = compute(parse_chain(tomllib.loads(TEXT.format(current=current)), "t.toml"))
    fo = followers(budget)[0]
    i_e = float(current.split()[0]) * 1e-3
    expected = (16.0 + 0.7) * i_e * 100.0 / 101.0  # driver_npn: beta 100, V_BE 0.7 V
    assert fo.dissipation_w == pytest.approx(expected, rel=0.02, abs=0)
    codes = {f.code for f in findings(budget) if f.stage == "buf"}
    # restates the project's own threshold (not an outside check): 0.5 W is FOLLOWER_HOT_W
    assert ("follower-hot" in codes) is hot
