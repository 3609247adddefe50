"""The supplies in the report: the JSON ``supplies`` list, the supplies table and each
supply kind's own figures."""

from __future__ import annotations

from typing import Any

from chainbudget.budget import Budget
from chainbudget.notation import DASH, eng
from chainbudget.report.kinds import figures_table
from chainbudget.report.layout import ReportTable
from chainbudget.report.tables import add_row, new_table
from chainbudget.supplies.base import SupplyBudget

# The contract's keys of each supply; a kind's figures fill the ones it knows.
CONTRACT_KEYS = (
    "dropout_margin_v",
    "min_load_margin_a",
    "dissipation_w",
    "junction_degc",
    "input_min_v",
    "input_max_v",
)


def supply_json(s: SupplyBudget) -> dict[str, Any]:
    """One supply (one rail of a split supply): the contract's keys first, then every other
    figure (SI; degC). ``ripple_harmonics`` is the mains ripple's spectrum at nominal line
    and load, each harmonic's frequency and peak magnitude."""
    data: dict[str, Any] = {
        "name": s.name,
        "kind": s.kind,
        "vout_v": s.vout_v,
        "idle_load_a": s.idle_load_a,
        "max_load_a": s.max_load_a,
        "trough_v": s.trough_v,
        "crest_v": s.crest_v,
        "mean_v": s.mean_v,
        "ripple_vpp": s.ripple_vpp,
        "ripple_harmonics": [{"hz": hz, "vpk": abs(v)} for hz, v in s.ripple_harmonics],
        "collapsed": s.collapsed,
        **{key: s.figure(key) for key in CONTRACT_KEYS},
        "parent": s.parent,
        "stages": list(s.stages),
        "children": list(s.children),
        "output_min_v": s.output_min_v,
        "output_max_v": s.output_max_v,
        "nominal_load_a": s.nominal_load_a,
        "input_idle_a": s.input_idle_a,
        "input_max_a": s.input_max_a,
        "sag_cost_db": s.sag_cost_db,
    }
    if s.own is not None:
        data.update(s.own.as_json())
    return data


def json_part(budget: Budget) -> dict[str, Any]:
    return {"supplies": [supply_json(s) for s in budget.supplies]}


def _range(low: float | None, high: float | None) -> str:
    if low is None or high is None:
        return DASH
    return f"{low:.3g}..{high:.3g} V"


def tables(budget: Budget) -> list[ReportTable]:
    """The supplies' voltages and loads (two tables, to read at 80 columns), then each
    supply's own figures."""
    if not budget.supplies:
        return []
    volts = new_table(
        "Supplies: output (low-line trough at heaviest load to high-line crest, no load)",
        "supply",
        "kind",
        "from",
        "out",
        "range",
        "ripple pp",
        left=("kind", "from"),
    )
    loads = new_table(
        "Supplies: load (mean current out; from the parent: what it draws)",
        "supply",
        "idle",
        "nominal",
        "heaviest",
        "from parent",
    )
    for s in budget.supplies:
        add_row(
            volts,
            s.name,
            s.kind,
            s.parent or DASH,
            eng(s.vout_v, "V"),
            "collapsed" if s.collapsed else _range(s.output_min_v, s.output_max_v),
            eng(s.ripple_vpp, "V"),
        )
        add_row(
            loads,
            s.name,
            eng(s.idle_load_a, "A"),
            eng(s.nominal_load_a, "A"),
            eng(s.max_load_a, "A"),
            eng(s.input_max_a, "A"),
        )
    found = [volts, loads]
    for s in budget.supplies:
        if s.own is None:
            continue
        own = figures_table(f"Supply {s.name} ({s.kind})", [s.own])
        if own is not None:
            found.append(own)
    return found
