"""The budget as terminal tables (rich): nodes, then each area's tables, findings, cautions."""

from __future__ import annotations

from collections.abc import Callable

from rich import box
from rich.console import Console
from rich.table import Table

from chainbudget.budget import Budget
from chainbudget.findings import Finding
from chainbudget.report import noise, power, supplies
from chainbudget.report.cautions import cautions
from chainbudget.report.text import DASH, decibels, eng
from chainbudget.units import vrms_to_dbu

# Areas of the budget add columns to the node table (NODE_COLUMNS: header, justify and a
# cell function of (budget, k)) and tables of their own (TABLES).
NODE_COLUMNS: list[tuple[str, str, Callable[[Budget, int], str]]] = [*noise.NODE_COLUMNS]
TABLES: list[Callable[[Budget], list[Table]]] = [noise.tables, supplies.tables, power.tables]

_SEVERITY_MARK = {"error": "ERROR", "warning": "warn ", "note": "note "}


def node_table(budget: Budget) -> Table:
    """One row per node: gain, level, clip level, headroom nominal and worst, impedances."""
    table = Table(title="Signal path (max_level headroom; worst over band and controls)",
                  box=box.SIMPLE_HEAD, title_justify="left")
    for header, justify in (("stage", "left"), ("kind", "left"), ("gain dB", "right"),
                            ("total dB", "right"), ("level", "right"), ("level dBu", "right"),
                            ("clip pk", "right"), ("headroom dB", "right"),
                            ("worst dB", "right"), ("worst at", "left"), ("Zout", "right"),
                            ("drives", "right")):
        table.add_column(header, justify=justify)  # type: ignore[arg-type]
    for header, justify, _cell in NODE_COLUMNS:
        table.add_column(header, justify=justify)  # type: ignore[arg-type]
    for k, n in enumerate(budget.nodes):
        worst = n.worst
        worst_at = DASH
        if worst is not None:
            turned = ", ".join(f"{key.split('.', 1)[1]}={v:g}" if key.startswith(n.stage + ".")
                               else f"{key}={v:g}" for key, v in worst.controls.items())
            worst_at = f"{eng(worst.frequency_hz, 'Hz')} {turned}".strip()
        table.add_row(
            n.stage, n.kind, decibels(n.gain_db), decibels(n.total_gain_db),
            eng(n.level_vrms, "V"), decibels(vrms_to_dbu(n.level_vrms)) if n.level_vrms > 0
            else DASH,
            eng(n.clip_vpk, "V"), decibels(n.headroom_db),
            decibels(None if worst is None else worst.headroom_db), worst_at,
            eng(n.zout_ohm, "ohm"), eng(n.zload_ohm, "ohm"),
            *(cell(budget, k) for _h, _j, cell in NODE_COLUMNS),
        )
    return table


def render(budget: Budget, found: list[Finding], console: Console) -> None:
    """Print the whole report."""
    console.print(f"[bold]{budget.title}[/bold]  ({budget.file})", highlight=False)
    console.print(
        f"reference {eng(budget.reference_hz, 'Hz')}, band {eng(budget.band_hz[0], 'Hz')} to "
        f"{eng(budget.band_hz[1], 'Hz')}, ambient {budget.ambient_degc:g} degC; source "
        f"{eng(budget.source_level_vrms, 'Vrms')} nominal, "
        f"{eng(budget.source_max_level_vrms, 'Vrms')} max", highlight=False)
    console.print(node_table(budget))
    if budget.first_clip is not None:
        console.print(f"First to clip at max_level: {budget.first_clip}", highlight=False)
    for tables in TABLES:
        for table in tables(budget):
            console.print(table)
    console.print()
    if found:
        console.print("[bold]Findings[/bold]")
        for fi in found:
            where = f" [{fi.stage}]" if fi.stage else ""
            console.print(f"  {_SEVERITY_MARK[fi.severity]} {fi.code}{where}: {fi.message}",
                          highlight=False, markup=False)
    else:
        console.print("Findings: none")
    for text in cautions(budget):
        console.print(f"CAUTION  {text}", highlight=False, markup=False)
