"""Views of the hum budget: the node key, the top-level ``hum`` JSON and the hum tables."""

from __future__ import annotations

from typing import Any

from chainbudget.budget import Budget
from chainbudget.budget.hum import HumBudget
from chainbudget.notation import decibels, eng
from chainbudget.report.layout import ReportTable
from chainbudget.report.tables import add_row, new_table

#: Paths listed in the table (the JSON lists every one).
TABLE_PATHS = 8


def _hum(budget: Budget) -> HumBudget | None:
    return budget.hum


# --- JSON ------------------------------------------------------------------------------------


def node_json(budget: Budget, k: int) -> dict[str, Any]:
    """The node's ``hum_vrms`` (contract), V rms."""
    hum = _hum(budget)
    return {} if hum is None else {"hum_vrms": hum.node_vrms[k]}


def json_part(budget: Budget) -> dict[str, Any]:
    """The top-level ``hum`` object (contract keys, and more)."""
    hum = _hum(budget)
    if hum is None:
        return {}
    return {
        "hum": {
            "output_vrms": hum.output_vrms,
            "output_a_vrms": hum.output_a_vrms,
            "spl_db": hum.spl_db,
            "spl_a_db": hum.spl_a_db,
            "hum_to_noise_db": hum.hum_to_noise_db,
            "input_vrms": hum.input_vrms,
            "input_a_vrms": hum.input_a_vrms,
            "by_rail": [
                {"supply": r.supply, "vrms": r.vrms, "a_vrms": r.a_vrms} for r in hum.by_rail
            ],
            "by_path": [
                {
                    "stage": p.stage,
                    "path": p.path,
                    "supply": p.supply,
                    "vrms": p.vrms,
                    "a_vrms": p.a_vrms,
                }
                for p in hum.paths
            ],
            "harmonics": [{"hz": h.hz, "vrms": h.vrms, "a_vrms": h.a_vrms} for h in hum.harmonics],
            "ideal_bias": list(hum.ideal_bias),
            "remedies": [
                {
                    "what": r.what,
                    "stage": r.stage,
                    "supply": r.supply,
                    "text": r.text,
                    "expected_vrms": r.expected_vrms,
                    "expected_a_vrms": r.expected_a_vrms,
                }
                for r in hum.remedies
            ],
        }
    }


# --- tables ----------------------------------------------------------------------------------


def _figures_table(hum: HumBudget, budget: Budget) -> ReportTable:
    table = new_table(
        "Hum: mains ripple at the output (nominal line and load; A: IEC 61672-1)",
        "figure",
        "unweighted",
        "A-weighted",
    )
    out = budget.nodes[-1].stage
    add_row(table, f'output hum ("{out}")', eng(hum.output_vrms, "V"), eng(hum.output_a_vrms, "V"))
    add_row(table, "referred to the source", eng(hum.input_vrms, "V"), eng(hum.input_a_vrms, "V"))
    if hum.spl_db is not None or hum.spl_a_db is not None:
        add_row(
            table,
            "hum at 1 m, dB SPL",
            decibels(hum.spl_db, signed=False),
            decibels(hum.spl_a_db, signed=False),
        )
    add_row(table, "hum over the noise floor, dB", "", decibels(hum.hum_to_noise_db))
    for rail in hum.by_rail:
        add_row(table, f'from supply "{rail.supply}"', eng(rail.vrms, "V"), eng(rail.a_vrms, "V"))
    if hum.ideal_bias:
        named = ", ".join(f'"{name}"' for name in hum.ideal_bias)
        add_row(table, f"bias point taken as ideal (no supply named): {named}", "", "")
    return table


def _paths_table(hum: HumBudget) -> ReportTable:
    table = new_table(
        "Hum by path: each alone at the output",
        "stage",
        "path",
        "from",
        "at output",
        "A-weighted",
        left=("path", "from"),
    )
    for p in hum.paths[:TABLE_PATHS]:
        add_row(table, p.stage, p.path, p.supply, eng(p.vrms, "V"), eng(p.a_vrms, "V"))
    return table


def _spread_table(hum: HumBudget, budget: Budget) -> ReportTable:
    """Hum at each node beside its harmonics at the output (two lists side by side)."""
    table = new_table(
        "Hum at each node, and at the output by harmonic",
        "stage",
        "hum",
        "harmonic",
        "at output",
        "A-weighted",
    )
    rows = max(len(budget.nodes), len(hum.harmonics))
    for i in range(rows):
        node = (
            (budget.nodes[i].stage, eng(hum.node_vrms[i], "V"))
            if i < len(budget.nodes)
            else ("", "")
        )
        harmonic = (
            (eng(hum.harmonics[i].hz, "Hz"), eng(hum.harmonics[i].vrms, "V"))
            if i < len(hum.harmonics)
            else ("", "")
        )
        a = eng(hum.harmonics[i].a_vrms, "V") if i < len(hum.harmonics) else ""
        add_row(table, *node, *harmonic, a)
    return table


def tables(budget: Budget) -> list[ReportTable]:
    """The hum figures, its paths, and the hum at each node and harmonic (none when no rail
    carries mains ripple)."""
    hum = _hum(budget)
    if hum is None or not hum.harmonics:
        return []
    return [_figures_table(hum, budget), _paths_table(hum), _spread_table(hum, budget)]


__all__ = ["json_part", "node_json", "tables"]
