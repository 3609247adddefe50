"""The budget as terminal tables (rich): nodes, then each area's tables, findings, and the
safety cautions (findings of severity ``caution``) last."""

from __future__ import annotations

from collections.abc import Callable

from rich import box
from rich.console import Console
from rich.table import Table

from chainbudget.budget import Budget
from chainbudget.findings import Finding
from chainbudget.notation import DASH, decibels, eng, settings_text
from chainbudget.report import dcbias, noise, power, supplies
from chainbudget.units import vrms_to_dbu

# Areas of the budget add columns to the node table (NODE_COLUMNS: header, justify and a
# cell function of (budget, k)) and tables of their own (TABLES).
NODE_COLUMNS: list[tuple[str, str, Callable[[Budget, int], str]]] = [
    *noise.NODE_COLUMNS,
    *dcbias.NODE_COLUMNS,
]
TABLES: list[Callable[[Budget], list[Table]]] = [noise.tables, supplies.tables, power.tables]

_SEVERITY_MARK = {"error": "ERROR", "warning": "warn ", "note": "note "}
CAUTION = "caution"


def node_table(budget: Budget) -> Table:
    """One row per node: gain, level, clip level and what sets it, headroom nominal and worst."""
    table = Table(
        title="Signal path (headroom of max_level: at the reference as set; worst over band and "
        "controls)",
        box=box.SIMPLE_HEAD,
        title_justify="left",
    )
    for header, justify in (
        ("stage", "left"),
        ("gain dB", "right"),
        ("total dB", "right"),
        ("level rms", "right"),
        ("dBu", "right"),
        ("clip pk", "right"),
        ("limit", "left"),
        ("headroom dB", "right"),
        ("worst dB", "right"),
    ):
        # Figures never shrink below their header on a narrow terminal.
        table.add_column(header, justify=justify, no_wrap=True, min_width=len(header))  # type: ignore[arg-type]
    for n in budget.nodes:
        table.add_row(
            n.stage,
            decibels(n.gain_db),
            decibels(n.total_gain_db),
            eng(n.level_vrms, "V"),
            decibels(vrms_to_dbu(n.level_vrms)) if n.level_vrms > 0 else DASH,
            eng(n.clip_vpk, "V"),
            n.levels.limited_by or DASH,
            decibels(n.headroom_db),
            decibels(None if n.worst is None else n.worst.headroom_db),
        )
    return table


def worst_case_lines(budget: Budget) -> list[str]:
    """Where each node's worst case occurs: frequency, settings and the limit that binds."""
    lines = []
    for n in budget.nodes:
        w = n.worst
        if w is None:
            continue
        turned = settings_text(w.controls, " ")
        where = f"{eng(w.frequency_hz, 'Hz')}" + (f", {turned}" if turned else "")
        lines.append(
            f"  {n.stage} ({n.kind}): {decibels(w.headroom_db)} dB at {where}; "
            f"limited by {w.limited_by}"
        )
    return lines


def loading_table(budget: Budget) -> Table:
    """One row per node: output impedance, what it drives, and each area's node columns."""
    table = Table(
        title="Nodes: impedances, noise and DC (controls as set)",
        box=box.SIMPLE_HEAD,
        title_justify="left",
    )
    for header, justify in (("stage", "left"), ("Zout", "right"), ("drives", "right")):
        table.add_column(header, justify=justify, no_wrap=True)  # type: ignore[arg-type]
    for header, justify, _cell in NODE_COLUMNS:
        table.add_column(header, justify=justify, no_wrap=True)  # type: ignore[arg-type]
    for k, n in enumerate(budget.nodes):
        table.add_row(
            n.stage,
            eng(n.zout_ohm, "ohm"),
            eng(n.zload_ohm, "ohm"),
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
        f"{eng(budget.source_max_level_vrms, 'Vrms')} max",
        highlight=False,
    )
    console.print(node_table(budget))
    lines = worst_case_lines(budget)
    if lines:
        console.print("Worst cases:", highlight=False)
        for line in lines:
            console.print(line, highlight=False, markup=False)
    if budget.first_clip is not None:
        console.print(f"First to clip at max_level: {budget.first_clip}", highlight=False)
    console.print(loading_table(budget))
    for tables in TABLES:
        for table in tables(budget):
            console.print(table)
    console.print()
    told = [fi for fi in found if fi.severity != CAUTION]
    if told:
        console.print("[bold]Findings[/bold]")
        for fi in told:
            about = fi.stage or fi.supply
            where = f" [{about}]" if about else ""
            console.print(
                f"  {_SEVERITY_MARK[fi.severity]} {fi.code}{where}: {fi.message}",
                highlight=False,
                markup=False,
            )
    else:
        console.print("Findings: none")
    for fi in found:
        if fi.severity == CAUTION:
            console.print(f"CAUTION  {fi.message}", highlight=False, markup=False)
