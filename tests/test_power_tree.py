"""The power tree: currents summed up the tree, rails down it, the checks at the corners,
the minimum-load bleeder round trip through a file, the mains caution and the examples.

Current sums are Kirchhoff's current law; the op-amp idle currents are the generic classes'
``supply_current`` (parts.py); every stage current comes from chainbudget.budget.currents.
"""

from __future__ import annotations

import json
import math
import re
import tomllib
from pathlib import Path

import pytest
from budgetkit import load_block as block
from typer.testing import CliRunner

from chainbudget.budget import Budget, compute
from chainbudget.budget.rails import supply_voltages
from chainbudget.budget.supplies import loaded_analysis
from chainbudget.chainfile import Chain, ChainFileError, load_chain, parse_chain
from chainbudget.cli import app
from chainbudget.eseries import series
from chainbudget.findings import findings
from chainbudget.parts import GENERIC_OPAMPS
from chainbudget.supplies.base import SupplyBudget
from chainbudget.supplies.rectified import MAINS_CAUTION

ROOT = Path(__file__).resolve().parents[1]
runner = CliRunner()
JFET_IQ = GENERIC_OPAMPS["jfet_input"].supply_current
JFET_MARGIN = GENERIC_OPAMPS["jfet_input"].swing_margin

HEAD = """
[chain]
title = "tree test"
ambient = "25 degC"
[source]
level = "10 mV"
impedance = "1 kohm"
[load]
impedance = "10 kohm"
"""


def opamp_stage(
    name: str, positive: str, negative: str = "ground", opamp: str = "jfet_input"
) -> str:
    return f"""
[[stage]]
name = "{name}"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10k"
ground_leg = "10k"
opamp = "{opamp}"
positive = "{positive}"
negative = "{negative}"
"""


def chain_of(text: str) -> Chain:
    return parse_chain(tomllib.loads(HEAD + text), "t.toml")


def budget_of(text: str) -> Budget:
    return compute(chain_of(text))


def supply(budget: Budget, name: str) -> SupplyBudget:
    return budget.supply(name)


TREE = """
[[supply]]
name = "raw"
kind = "rectified"
secondary = "18 V"
reservoir = "4700 uF"
[[supply]]
name = "plus"
kind = "regulator"
from = "raw"
reference = "1.25 V"
upper = "2k7"
lower = "240R"
adjust_current = "50 uA"
[[supply]]
name = "logic"
kind = "regulator"
from = "plus"
output = "5 V"
quiescent = "3 mA"
dropout = "1 V"
[[supply]]
name = "minus"
kind = "dc"
voltage = "-15 V"
"""


def test_idle_currents_sum_up_the_tree() -> None:
    """Kirchhoff: "logic" delivers 30 mA and draws 30 + 3 mA from "plus"; "plus" delivers
    the split-rail op-amp's Iq + 33 mA + its divider 1.25/240, and draws that + 50 uA from
    "raw", which also feeds 100 mA directly; "minus" takes the op-amp's Iq. rtol 1e-12."""
    text = (
        TREE
        + opamp_stage("pre", "plus", "minus")
        + block("dsp", "logic", "30 mA")
        + block("amp", "raw", "100 mA")
    )
    b = budget_of(text)
    logic, plus, raw, minus = (supply(b, n) for n in ("logic", "plus", "raw", "minus"))
    assert logic.idle_load_a == pytest.approx(0.030, rel=1e-12, abs=0)
    assert logic.input_idle_a == pytest.approx(0.033, rel=1e-12, abs=0)
    divider = 1.25 / 240
    assert plus.idle_load_a == pytest.approx(JFET_IQ + 0.033 + divider, rel=1e-12, abs=0)
    assert plus.input_idle_a == pytest.approx(JFET_IQ + 0.033 + divider + 50e-6, rel=1e-12, abs=0)
    assert raw.idle_load_a == pytest.approx(0.100 + plus.input_idle_a, rel=1e-12, abs=0)
    assert minus.idle_load_a == pytest.approx(JFET_IQ, rel=1e-12, abs=0)
    assert plus.stages == ("pre",) and minus.stages == ("pre",)
    assert plus.children == ("logic",) and raw.children == ("plus",)
    # heaviest >= nominal >= idle: the op-amp's signal current adds at level and at clip
    for s in (plus, raw, minus):
        assert s.max_load_a >= s.nominal_load_a >= s.idle_load_a


def test_the_ripple_sets_the_trough_with_the_whole_tree_loading_the_reservoir() -> None:
    """raw's ripple is its heaviest load's, the load including every regulator below it:
    under the constant-current figure I/(2 f C) and within 20 % of it (Horowitz & Hill 3rd
    ed. sec. 9.5.2, from memory; the cycle-by-cycle solution lies below it); the regulator
    sees raw's trough (rel 1e-12)."""
    b = budget_of(TREE + opamp_stage("pre", "plus", "minus") + block("dsp", "logic", "30 mA"))
    raw = supply(b, "raw")
    limit = raw.max_load_a / (2 * 50 * 4700e-6)
    assert 0.8 * limit < (raw.ripple_vpp or 0.0) < limit
    assert supply(b, "plus").input_min_v == pytest.approx(raw.output_min_v, rel=1e-12, abs=0)


@pytest.mark.parametrize(
    ("old", "new", "path", "words"),
    [
        ('from = "plus"', 'from = "logic"', 'supply[3] "logic".from', "loop"),
        ('from = "plus"', 'from = "pluss"', 'supply[3] "logic".from', 'did you mean "plus"'),
        ('positive = "plus"', 'positive = "plux"', 'stage[1] "pre".positive', "no supply"),
        ('negative = "minus"', 'negative = "minsu"', 'stage[1] "pre".negative', "no supply"),
    ],
)
def test_tree_errors_are_clear(old: str, new: str, path: str, words: str) -> None:
    """A cycle, an unknown parent, a stage on an undefined rail: one line with the path."""
    text = TREE + opamp_stage("pre", "plus", "minus")
    assert old in text
    with pytest.raises(ChainFileError) as caught:
        chain_of(text.replace(old, new, 1))
    message = str(caught.value)
    assert path in message and words in message and "\n" not in message


def test_a_longer_cycle_is_caught_too() -> None:
    text = """
[[supply]]
name = "a"
kind = "regulator"
from = "c"
output = "5 V"
[[supply]]
name = "b"
kind = "regulator"
from = "a"
output = "5 V"
[[supply]]
name = "c"
kind = "regulator"
from = "b"
output = "5 V"
""" + block("x", "a", "1 mA")
    with pytest.raises(ChainFileError, match="loop"):
        chain_of(text)


LIGHT = """
[[supply]]
name = "bench"
kind = "dc"
voltage = "24 V"
[[supply]]
name = "opamps"
kind = "regulator"
from = "bench"
reference = "1.25 V"
adjust_current = "50 uA"
upper = "8k2"
lower = "1k"
min_load = "10 mA"
"""


def light_chain() -> str:
    return LIGHT + opamp_stage("a", "opamps") + opamp_stage("b", "opamps")


def test_light_idle_load_gives_the_minimum_load_warning_and_an_e24_bleeder() -> None:
    """Two 1.5 mA op-amps and a 1.25 mA divider (1.25/1k) make 4.25 mA against 10 mA: the
    classic adjustable-regulator failure (common practice, no source). Shortfall 5.75 mA,
    plus the stated margin of 10 % of the minimum load (1 mA; the project's own allowance),
    at V_out = 1.25 (1 + 8.2) + 50e-6 x 8200 = 11.91 V: R <= 1764 ohm, the largest E24 value
    (IEC 60063, from memory) is 1.6 kohm, 89 mW; rtol 1e-12."""
    b = budget_of(light_chain())
    reg = supply(b, "opamps")
    vout = 1.25 * (1 + 8200 / 1000) + 50e-6 * 8200
    assert reg.vout_v == pytest.approx(vout, rel=1e-12, abs=0)
    assert reg.idle_load_a == pytest.approx(2 * JFET_IQ + 1.25e-3, rel=1e-12, abs=0)
    assert reg.min_load_margin_a == pytest.approx(2 * JFET_IQ + 1.25e-3 - 10e-3, rel=1e-12, abs=0)
    bleeder = reg.bleeder_suggestion
    assert bleeder is not None and bleeder.series == "E24"
    assert bleeder.resistance_ohm == 1600.0
    assert bleeder.power_w == pytest.approx(vout**2 / 1600.0, rel=1e-12, abs=0)
    # the next E24 value up would not reach the margin
    e24 = [m * 10.0**k for k in range(0, 6) for m in series("E24")]
    above = min(v for v in e24 if v > 1600.0 * (1 + 1e-9))
    assert vout / above < -reg.min_load_margin_a + 1e-3
    finding = next(f for f in findings(b) if f.code == "regulator-min-load")
    assert finding.severity == "warning"
    assert 'bleeder = "1600 ohm"' in finding.message


def test_the_suggested_bleeder_added_to_the_file_clears_the_finding(tmp_path: Path) -> None:
    """Round trip through the real command: check, take the suggested bleeder from the
    finding, add it to the regulator's table, check again."""
    file = tmp_path / "light.toml"
    file.write_text(HEAD + light_chain(), encoding="utf-8")
    first = json.loads(runner.invoke(app, ["check", str(file), "--format", "json"]).stdout)
    warning = next(f for f in first["findings"] if f["code"] == "regulator-min-load")
    match = re.search(r'bleeder = "([^"]+)"', warning["message"])
    assert match is not None
    text = file.read_text(encoding="utf-8").replace(
        'min_load = "10 mA"\n', f'min_load = "10 mA"\nbleeder = "{match.group(1)}"\n'
    )
    file.write_text(text, encoding="utf-8")
    second = json.loads(runner.invoke(app, ["check", str(file), "--format", "json"]).stdout)
    assert not any(f["code"] == "regulator-min-load" for f in second["findings"])
    reg = next(s for s in second["supplies"] if s["name"] == "opamps")
    assert reg["min_load_margin_a"] >= 0.0
    assert reg["bleeder_a"] == pytest.approx(reg["vout_v"] / 1600.0, rel=1e-12, abs=0)
    assert reg["min_load_margin_a"] >= 0.1 * 10e-3  # the stated margin, 10 % of min_load
    # the bleeder loads the parent too (Kirchhoff)
    bench = next(s for s in second["supplies"] if s["name"] == "bench")
    assert bench["idle_load_a"] == pytest.approx(reg["idle_load_a"] + 50e-6, rel=1e-12, abs=0)


def test_swing_limits_use_the_low_battery_end() -> None:
    """Single supply at mid-rail: the clip level is min_voltage/2 - swing margin, not the
    nominal voltage's (the rails limit of stages/base.py); rtol 1e-9."""
    text = """
[[supply]]
name = "battery"
kind = "dc"
voltage = "24 V"
min_voltage = "20 V"
""" + opamp_stage("pre", "battery")
    b = budget_of(text)
    assert b.nodes[0].clip_vpk == pytest.approx(20.0 / 2 - JFET_MARGIN, rel=1e-9, abs=0)


def test_a_stage_on_a_rectified_rail_swings_within_its_loaded_trough() -> None:
    """The op-amp's rail is the reservoir's trough at low line with the heaviest load the
    tree settles on (the fixed point of rails -> currents -> ripple): the clip level is
    trough/2 - margin, and the analysed rail agrees with the reported trough to 1 mV."""
    text = (
        """
[[supply]]
name = "raw"
kind = "rectified"
secondary = "15 V"
reservoir = "470 uF"
"""
        + opamp_stage("pre", "raw")
        + block("amp", "raw", "0.3 A")
    )
    chain = chain_of(text)
    b = compute(chain)
    raw = supply(b, "raw")
    assert b.nodes[0].clip_vpk == pytest.approx(raw.output_min_v / 2 - JFET_MARGIN, abs=1e-3)
    analysis = loaded_analysis(chain)
    env = analysis.envs[0]
    assert env.rails is not None
    assert env.rails.positive == pytest.approx(raw.output_min_v, abs=1e-3)
    # the unloaded peak would have been about 2 V higher: the load matters
    unloaded = supply_voltages(chain)["raw"].low
    assert unloaded - raw.output_min_v > 1.0


def test_opamp_maximum_supply_is_checked_at_high_line() -> None:
    """A 30 V rectified rail fine at low line can exceed the op-amp's 36 V at high line
    (no load): sqrt(2) 24 x 1.1 - 1.8 = 35.5 V is fine, 26 V rms gives 38.6 V, an error."""
    rail = """
[[supply]]
name = "raw"
kind = "rectified"
secondary = "{v}"
reservoir = "1000 uF"
"""
    fine = budget_of(rail.format(v="24 V") + opamp_stage("pre", "raw"))
    assert "opamp-supply-high" not in {f.code for f in findings(fine)}
    over = budget_of(rail.format(v="26 V") + opamp_stage("pre", "raw"))
    high = [f for f in findings(over) if f.code == "opamp-supply-high"]
    assert len(high) == 1 and high[0].severity == "error"
    assert high[0].figures["high_total_v"] == pytest.approx(
        math.sqrt(2) * 26 * 1.1 - 1.8, rel=1e-12, abs=0
    )


def test_every_chain_with_a_rectified_supply_carries_the_mains_caution() -> None:
    """Safety (rules.md): mains wiring, fusing, earthing and insulation; a battery chain
    has no mains caution."""
    mains = runner.invoke(app, ["check", str(ROOT / "chains" / "kitchen_radio_mains.toml")])
    assert MAINS_CAUTION.split(";")[0] in " ".join(mains.output.split())
    data = json.loads(
        runner.invoke(
            app, ["check", str(ROOT / "chains" / "kitchen_radio_mains.toml"), "--format", "json"]
        ).stdout
    )
    assert MAINS_CAUTION in [f["message"] for f in data["findings"] if f["severity"] == "caution"]
    battery = json.loads(
        runner.invoke(
            app,
            ["check", str(ROOT / "chains" / "field_recorder_battery.toml"), "--format", "json"],
        ).stdout
    )
    assert MAINS_CAUTION not in [f["message"] for f in battery["findings"]]


CONTRACT_SUPPLY_KEYS = {
    "name", "kind", "vout_v", "idle_load_a", "max_load_a", "dropout_margin_v",
    "min_load_margin_a", "dissipation_w", "junction_degc", "ripple_vpp", "input_min_v",
    "input_max_v",
}  # fmt: skip


def test_the_mains_example_reports_every_supply_figure() -> None:
    """Transformer -> rectifier -> regulator: every contract key present and, for the
    regulator, every figure a number; the table has both supply tables."""
    file = ROOT / "chains" / "kitchen_radio_mains.toml"
    data = json.loads(runner.invoke(app, ["check", str(file), "--format", "json"]).stdout)
    kinds = {s["kind"] for s in data["supplies"]}
    assert {"rectified", "regulator"} <= kinds
    for s in data["supplies"]:
        assert CONTRACT_SUPPLY_KEYS <= s.keys()
    reg = next(s for s in data["supplies"] if s["kind"] == "regulator")
    for key in CONTRACT_SUPPLY_KEYS - {"name", "kind"}:
        assert isinstance(reg[key], float), key
    assert reg["in_regulation"] is True
    table = runner.invoke(app, ["check", str(file)]).output
    assert "Supplies" in table and "Supply pre (regulator)" in table


def test_the_battery_example_reports_its_run_time() -> None:
    """Run time = capacity / drain (definition of the ampere-hour), rtol 1e-12."""
    file = ROOT / "chains" / "field_recorder_battery.toml"
    b = compute(load_chain(file))
    pack = next(s for s in b.supplies if s.capacity_ah is not None)
    assert pack.runtime_idle_h == pytest.approx(
        pack.capacity_ah / pack.idle_load_a, rel=1e-12, abs=0
    )
    assert pack.runtime_nominal_h == pytest.approx(
        pack.capacity_ah / pack.nominal_load_a, rel=1e-12, abs=0
    )
    assert "run time at idle" in runner.invoke(app, ["check", str(file)]).output
