"""The budget as a terminal report, verdict first.

Order: the chain's title and conditions; the verdict (counts by severity, the stage that
clips first and by how much, the SNR, the output power and each supply's state); the
findings, coloured by severity; the safety cautions; then, unless ``brief``, every table.
Every table reads at 80 columns: wide ones are split, cells wrap and never crop.

The report is built as plain blocks (`layout`); `terminal.shown` draws them (plain text
on a pipe or in a file, rich on a colour terminal), `render` on a given rich console.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING

from chainbudget.budget import Budget, NodeBudget
from chainbudget.finding import SEVERITIES, Finding
from chainbudget.notation import DASH, decibels, eng, settings_text
from chainbudget.report import dcbias, hum, noise, power, supplies
from chainbudget.report.layout import BLANK, Drawn, Grid, Line, ReportTable, line
from chainbudget.report.tables import add_row, new_table
from chainbudget.source_network import describe
from chainbudget.units import vrms_to_dbu

if TYPE_CHECKING:
    from rich.console import Console

# Areas of the budget add columns to the node table (NODE_COLUMNS: header, justify and a
# cell function of (budget, k)) and tables of their own (TABLES).
NODE_COLUMNS: list[tuple[str, str, Callable[[Budget, int], str]]] = [
    *noise.NODE_COLUMNS,
    *dcbias.NODE_COLUMNS,
]
TABLES: list[Callable[[Budget], list[ReportTable]]] = [
    noise.tables,
    hum.tables,
    supplies.tables,
    power.tables,
]

#: How each severity is marked: its label and its style (the style is dropped under
#: NO_COLOR or when the output is not a terminal).
SEVERITY_STYLE = {
    "error": ("ERROR", "bold red"),
    "warning": ("WARNING", "yellow"),
    "caution": ("CAUTION", "magenta"),
    "note": ("note", "cyan"),
}


def _plural(n: int, word: str) -> str:
    return f"{n} {word}" + ("" if n == 1 else "s")


def verdict_lines(budget: Budget, found: list[Finding]) -> list[Line]:
    """The verdict: counts by severity, then one line each for the first stage to clip, the
    noise, the output and every supply."""
    counts = {severity: sum(fi.severity == severity for fi in found) for severity in SEVERITIES}
    spans = [("Verdict: ", "")]
    parts = [
        (_plural(counts["error"], "error"), "bold red" if counts["error"] else "green"),
        (_plural(counts["warning"], "warning"), "yellow" if counts["warning"] else ""),
        (_plural(counts["note"], "note"), ""),
        (_plural(counts["caution"], "caution"), "magenta" if counts["caution"] else ""),
    ]
    for i, (text, style) in enumerate(parts):
        spans.append((("" if i == 0 else ", ") + text, style))
    lines = [Line(tuple(spans), "bold")]
    if budget.first_clip is not None:
        node = budget.node(budget.first_clip)
        lines.append(
            line(
                f"  first to clip at max_level: {node.stage} ({node.levels.limited_by}), "
                f"{decibels(node.headroom_db)} dB at {eng(budget.reference_hz, 'Hz')}"
            )
        )
    ahead = [n for n in budget.nodes if n.volume_reach is None and n.worst is not None]
    if ahead:
        worst = min(ahead, key=lambda n: n.worst_headroom_db or 0.0)
        lines.append(
            line(
                f"  worst over band and controls: {worst.stage}, "
                f"{decibels(worst.worst_headroom_db)} dB"
            )
        )
    if budget.noise is not None:
        out = budget.noise.output
        lines.append(
            line(
                f"  SNR at the output: {decibels(out.snr_a_db, signed=False)} dB(A), "
                f"{decibels(out.snr_db, signed=False)} dB unweighted; floor set by {out.set_by}"
            )
        )
    hum = budget.hum
    if hum is not None and hum.dominant is not None:
        lines.append(
            line(
                f"  hum: {eng(hum.output_a_vrms, 'V')}(A), {decibels(hum.hum_to_noise_db)} dB "
                f"re the noise; largest path {hum.dominant.stage} ({hum.dominant.path})"
            )
        )
    out_fig = budget.output
    if out_fig is not None:
        spl = out_fig.max_spl_db
        loud = "" if spl is None else f", {spl:.0f} dB SPL at 1 m"
        power_text = (
            f"{eng(out_fig.clip_power_w, 'W')} into {eng(out_fig.load_ohm, 'ohm')}{loud}"
            if out_fig.clip_stage is not None
            else "no stage declares an output limit"
        )
        lines.append(line(f"  maximum output: {power_text}"))
    for s in budget.supplies:
        told = [fi for fi in found if fi.supply == s.name and fi.severity != "caution"]
        worst_told = min(told, key=lambda fi: SEVERITIES.index(fi.severity), default=None)
        state = "ok" if worst_told is None else f"{worst_told.severity}: {worst_told.code}"
        lines.append(
            line(
                f"  supply {s.name} ({s.kind}): {eng(s.vout_v, 'V')}, "
                f"{eng(s.output_min_v, 'V')} to {eng(s.output_max_v, 'V')}; {state}"
            )
        )
    return lines


def findings_table(found: list[Finding], severities: tuple[str, ...]) -> Grid | None:
    """The findings of the given severities: a mark column and the text, wrapped."""
    shown = [fi for fi in found if fi.severity in severities]
    if not shown:
        return None
    rows = []
    for fi in shown:
        label, style = SEVERITY_STYLE[fi.severity]
        about = fi.stage or fi.supply
        body = [(fi.code, "bold")]
        if about:
            body.append((f" [{about}]", ""))
        body.append((f": {fi.message}", ""))
        rows.append((line(label, style), Line(tuple(body))))
    return Grid(tuple(rows))


def levels_table(budget: Budget) -> ReportTable:
    """Gain staging at the reference with the controls as set."""
    table = new_table(
        "Levels at the reference, controls as set",
        "stage",
        "gain dB",
        "total dB",
        "level",
        "dBu",
        "clip pk",
        "limit",
        left=("limit",),
    )
    for n in budget.nodes:
        add_row(
            table,
            n.stage,
            decibels(n.gain_db),
            decibels(n.total_gain_db),
            eng(n.level_vrms, "V"),
            decibels(vrms_to_dbu(n.level_vrms)) if n.level_vrms > 0 else DASH,
            eng(n.clip_vpk, "V"),
            n.levels.limited_by or DASH,
        )
    return table


def _where(budget: Budget, n: NodeBudget) -> str:
    """Where a node's worst case is, or, behind the volume, how far the volume may turn."""
    if n.volume_reach is not None:
        if n.volume_reach >= 1.0:
            return "max_level passes at every volume setting (reference, as set)"
        return (
            f"the volume may turn to {n.volume_reach:.2f} before max_level clips it "
            "(reference, as set)"
        )
    w = n.worst
    if w is None:
        return DASH
    turned = settings_text(w.controls, " ")
    return (
        f"{eng(w.frequency_hz, 'Hz')}" + (f", {turned}" if turned else "") + (f"; {w.limited_by}")
    )


def headroom_table(budget: Budget) -> ReportTable:
    """Headroom of max_level: at the reference as set, and the worst over band and controls
    (behind the volume: how far the volume may turn instead)."""
    table = new_table(
        "Headroom of max_level (dB): at the reference as set; worst over band and controls",
        "stage",
        "as set",
        "worst",
        "where (behind the volume: its reach)",
        left=("where (behind the volume: its reach)",),
    )
    for n in budget.nodes:
        if n.headroom_db is None:
            continue
        worst = DASH if n.volume_reach is not None else decibels(n.worst_headroom_db)
        add_row(table, n.stage, decibels(n.headroom_db), worst, _where(budget, n))
    return table


def loading_table(budget: Budget) -> ReportTable:
    """One row per node: output impedance, what it drives, and each area's node columns."""
    table = new_table(
        "Nodes: impedances, noise and DC (controls as set)",
        "stage",
        "Zout",
        "drives",
        *(header for header, _j, _c in NODE_COLUMNS),
    )
    for k, n in enumerate(budget.nodes):
        add_row(
            table,
            n.stage,
            eng(n.zout_ohm, "ohm"),
            eng(n.zload_ohm, "ohm"),
            *(cell(budget, k) for _h, _j, cell in NODE_COLUMNS),
        )
    return table


def reactive_source_text(budget: Budget) -> str:
    """ " (1 kohm + 1 nF)": a piezo's or pickup's impedance, its parts in series; else ""."""
    if budget.source_capacitance_f is None and budget.source_inductance_h is None:
        return ""
    resistance = None if budget.noise is None else budget.noise.source_resistance_ohm
    return (
        f" ({describe(resistance or 0.0, budget.source_capacitance_f, budget.source_inductance_h)})"
    )


def report_blocks(
    budget: Budget, found: list[Finding], brief: bool = False, noise_detail: bool = False
) -> list[Drawn]:
    """The report: verdict, findings, cautions, then (unless ``brief``) the tables, and the
    noise's spectral detail when asked for."""
    title = Line(((budget.title, ""), (f"  ({budget.file})", "")), "bold")
    blocks: list[Drawn] = [
        title,
        line(
            f"reference {eng(budget.reference_hz, 'Hz')}, band {eng(budget.band_hz[0], 'Hz')} "
            f"to {eng(budget.band_hz[1], 'Hz')}, ambient {budget.ambient_degc:g} degC; source "
            f"{eng(budget.source_level_vrms, 'Vrms')} nominal, "
            f"{eng(budget.source_max_level_vrms, 'Vrms')} max{reactive_source_text(budget)}; "
            f"load {eng(budget.load_ohm, 'ohm')}"
        ),
        BLANK,
        *verdict_lines(budget, found),
    ]
    told = findings_table(found, ("error", "warning", "note"))
    if told is not None:
        blocks += [BLANK, line("Findings", "bold"), told]
    cautions = findings_table(found, ("caution",))
    if cautions is not None:
        blocks += [BLANK, line("Cautions (safety)", "bold"), cautions]
    if brief:
        return blocks
    blocks.append(BLANK)
    blocks += [levels_table(budget), headroom_table(budget), loading_table(budget)]
    for tables in TABLES:
        blocks += tables(budget)
    if noise_detail:
        blocks += noise.detail_tables(budget)
    return blocks


def render(budget: Budget, found: list[Finding], console: Console, brief: bool = False) -> None:
    """Print the report on a rich console: verdict, findings, cautions, then (unless
    ``brief``) the tables."""
    from chainbudget.report.rich_view import print_blocks

    print_blocks(report_blocks(budget, found, brief), console)
