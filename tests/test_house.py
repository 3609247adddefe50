"""The house: each kind owns its figures and rules, and the generic layers never name a kind.

Two kinds written here and registered at run time - a supply (a shunt reference fed through
a resistor) and a stage (a resistive L-pad) - must work end to end without a line changed
elsewhere: loaded from a chain file, solved, their figures in the JSON and the table, their
findings drawn. And the generic layers (`budget/`, `findings/`, `report/`) are read as
text: no kind's name compared, no kind's module imported.
"""

from __future__ import annotations

import ast
import json
import math
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pytest
from numpy.typing import ArrayLike
from rich.console import Console

from chainbudget import fields as f
from chainbudget.budget import compute
from chainbudget.chainfile import parse_chain
from chainbudget.finding import Finding
from chainbudget.kindfigures import KindFigures, figure
from chainbudget.network import GROUND, Netlist, node_ref
from chainbudget.report.json_view import budget_json
from chainbudget.report.table_view import render
from chainbudget.stages import KINDS as STAGE_KINDS
from chainbudget.stages.base import (
    Built,
    Environment,
    NodeFacts,
    OwnParts,
    Stage,
    StageContext,
    StageKind,
)
from chainbudget.supplies import KINDS as SUPPLY_KINDS
from chainbudget.supplies.base import (
    Supply,
    SupplyBudget,
    SupplyContext,
    SupplyKind,
    SupplyLoad,
    SupplyState,
)

ROOT = Path(__file__).resolve().parents[1]
GENERIC_LAYERS = ("budget", "findings", "report")


# --- a supply kind written in one place -------------------------------------------------


@dataclass(frozen=True)
class ShuntFigures(KindFigures):
    title = "shunt reference"

    resistor_drop_v: float = figure("drop across the feed resistor", "V")
    margin_v: float = figure("margin at the parent's trough", "V")


class Shunt(SupplyKind):
    """A fixed reference fed from its parent through a resistor, which carries the load
    plus the reference's own standing current: the reference holds while the parent's
    trough exceeds V_ref + R (I_load + I_standing) (Ohm's law)."""

    kind = "shunt"
    summary = "shunt reference fed through a resistor"
    needs_parent = True
    fields = (
        f.Field("voltage", f.POSITIVE_VOLTAGE, "reference voltage"),
        f.Field("resistance", f.RESISTANCE, "feed resistor from the parent"),
        f.Field("standing", f.CURRENT, "the reference's own current", 0.0),
    )

    def state(self, supply: Supply, parent: SupplyState | None, load: SupplyLoad) -> SupplyState:
        v = supply.number("voltage")
        return SupplyState(v, v, v, v, v, 0.0)

    def input_load(self, supply: Supply, load: SupplyLoad) -> SupplyLoad:
        return load.plus(supply.number("standing"))

    def figures(self, context: SupplyContext) -> ShuntFigures:
        assert context.parent_state is not None
        supply = context.supply
        drop = supply.number("resistance") * (context.load.heaviest_a + supply.number("standing"))
        return ShuntFigures(
            resistor_drop_v=drop,
            margin_v=context.parent_state.trough_v - supply.number("voltage") - drop,
        )

    def rules(self, supply: SupplyBudget, ambient_degc: float) -> list[Finding]:
        own = supply.own
        assert isinstance(own, ShuntFigures)
        if own.margin_v >= 0.0:
            return []
        return [Finding("error", "shunt-starved", None, "starved", {"margin_v": own.margin_v})]


# --- a stage kind written in one place --------------------------------------------------


@dataclass(frozen=True)
class PadFigures(KindFigures):
    title = "pad"

    loss_db: float = figure("loss in the chain", "dB", node_key="pad_loss_db")


class Pad(StageKind):
    """A resistive L-pad: ``series`` from in to out, ``shunt`` from out to ground."""

    kind = "pad"
    summary = "resistive L-pad"
    uses_rails = False
    fields = (
        f.Field("series", f.RESISTANCE, "series resistor"),
        f.Field("shunt", f.RESISTANCE, "shunt resistor"),
    )

    def build(
        self,
        net: Netlist,
        stage: Stage,
        env: Environment,
        node_in: str,
        node_out: str,
        positions: Mapping[str, ArrayLike],
    ) -> Built:
        own = OwnParts(net, stage.name, env.temperature_k)
        own.resistor("series", node_in, node_out, stage.number("series"))
        own.resistor("shunt", node_out, GROUND, stage.number("shunt"))
        return Built(probes={"out": node_ref(node_out)}, output_probe="out")

    def figures(self, context: StageContext) -> tuple[KindFigures, ...]:
        k = context.index
        before = 1.0 if k == 0 else context.gain(k - 1)
        return (PadFigures(loss_db=20.0 * math.log10(context.gain(k) / before)),)

    def rules(self, figures: tuple[KindFigures, ...], facts: NodeFacts) -> list[Finding]:
        return [Finding("note", "pad-loss", facts.stage, "a pad", {}) for _ in figures]


CHAIN = """
[source]
level = "-10 dBV"
impedance = "600 ohm"
[load]
impedance = "8 ohm"
[[supply]]
name = "bat"
kind = "dc"
voltage = "12 V"
[[supply]]
name = "ref"
kind = "shunt"
from = "bat"
voltage = "{ref}"
resistance = "100 ohm"
standing = "5 mA"
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10k"
ground_leg = "1k"
positive = "ref"
negative = "ground"
[[stage]]
name = "pad"
kind = "pad"
series = "9k"
shunt = "1k"
[[stage]]
name = "amp"
kind = "block"
gain = "20 dB"
input_impedance = "1 Mohm"
output_impedance = "0.1 ohm"
"""


@pytest.fixture
def new_kinds(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setitem(SUPPLY_KINDS, "shunt", Shunt())
    monkeypatch.setitem(STAGE_KINDS, "pad", Pad())


@pytest.mark.usefixtures("new_kinds")
def test_a_kind_added_in_one_place_works_end_to_end() -> None:
    budget = compute(parse_chain(tomllib.loads(CHAIN.format(ref="6 V")), "house.toml"))
    data = json.loads(json.dumps(budget_json(budget, list(budget.findings))))
    # The supply's figures: what the op-amp stage draws plus the 5 mA standing current,
    # through 100 ohm; Ohm's law written here.
    ref = budget.supply("ref")
    load = ref.max_load_a
    assert ref.own is not None and isinstance(ref.own, ShuntFigures)
    assert ref.own.resistor_drop_v == pytest.approx(100.0 * (load + 5e-3), rel=1e-12, abs=0)
    assert ref.own.margin_v == pytest.approx(12.0 - 6.0 - 100.0 * (load + 5e-3), rel=1e-12, abs=0)
    (ref_json,) = [s for s in data["supplies"] if s["name"] == "ref"]
    assert ref_json["margin_v"] == pytest.approx(ref.own.margin_v, rel=1e-12, abs=0)
    assert ref_json["vout_v"] == 6.0
    assert budget.supply("bat").max_load_a == pytest.approx(load + 5e-3, rel=1e-12, abs=0)
    # The stage's figures: the pad's loss is its node's gain in the chain.
    pad = budget.node("pad")
    (own,) = pad.own
    assert isinstance(own, PadFigures)
    assert own.loss_db == pytest.approx(pad.gain_db, rel=1e-9, abs=0)
    # An L-pad of 9k over 1k into 1 Mohm from an op-amp's near-zero output impedance:
    # 20 log10((1k || 1M) / (9k + 1k || 1M)) (voltage divider; Ohm's law).
    shunt = 1e3 * 1e6 / (1e3 + 1e6)
    assert own.loss_db == pytest.approx(20.0 * math.log10(shunt / (9e3 + shunt)), abs=1e-3)
    (pad_json,) = [n for n in data["nodes"] if n["stage"] == "pad"]
    assert pad_json["pad_loss_db"] == pytest.approx(own.loss_db, rel=1e-12, abs=0)
    # Their rules are drawn with the others, and their figures reach the table.
    codes = {(fi.code, fi.stage, fi.supply) for fi in budget.findings}
    assert ("pad-loss", "pad", None) in codes
    assert not any(code == "shunt-starved" for code, _, _ in codes)
    console = Console(width=100, record=True, color_system=None)
    render(budget, list(budget.findings), console)
    text = console.export_text()
    assert "margin at the parent's trough" in text and "loss in the chain" in text


@pytest.mark.usefixtures("new_kinds")
def test_a_kind_added_in_one_place_draws_its_findings() -> None:
    """A 11.5 V reference from 12 V through 100 ohm at more than 5 mA is starved."""
    budget = compute(parse_chain(tomllib.loads(CHAIN.format(ref="11.5 V")), "house.toml"))
    starved = [fi for fi in budget.findings if fi.code == "shunt-starved"]
    assert [(fi.severity, fi.supply) for fi in starved] == [("error", "ref")]


def _sources(layer: str) -> list[Path]:
    return sorted((ROOT / "chainbudget" / layer).rglob("*.py"))


@pytest.mark.parametrize("layer", GENERIC_LAYERS)
def test_the_generic_layers_name_no_kind(layer: str) -> None:
    """No kind's name as a string, no kind's module imported, no kind class checked."""
    kinds = set(STAGE_KINDS) | set(SUPPLY_KINDS)
    kind_modules = {f"chainbudget.stages.{k}" for k in STAGE_KINDS} | {
        f"chainbudget.supplies.{k}" for k in SUPPLY_KINDS
    }
    kind_classes = {type(k).__name__ for k in (*STAGE_KINDS.values(), *SUPPLY_KINDS.values())}
    problems: list[str] = []
    for path in _sources(layer):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            where = f"{path.relative_to(ROOT)}:{getattr(node, 'lineno', '?')}"
            if isinstance(node, ast.Constant) and node.value in kinds:
                problems.append(f"{where}: names the kind {node.value!r}")
            if isinstance(node, ast.ImportFrom) and node.module is not None:
                if any(node.module.startswith(m) for m in kind_modules):
                    problems.append(f"{where}: imports {node.module}")
            if isinstance(node, ast.Name) and node.id in kind_classes:
                problems.append(f"{where}: uses the kind class {node.id}")
    assert not problems, "\n".join(problems)


def test_the_supplies_do_not_read_the_chain_file() -> None:
    for path in sorted((ROOT / "chainbudget" / "supplies").rglob("*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        modules: list[Any] = [
            n.module for n in ast.walk(tree) if isinstance(n, ast.ImportFrom) and n.module
        ]
        assert "chainbudget.chainfile" not in modules, path
