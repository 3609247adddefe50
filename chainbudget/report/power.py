"""The output end in the report: the JSON ``output`` and ``drive`` objects, per-node drive
figures, the output, kind-figure, op-amp drive and rail-current tables."""

from __future__ import annotations

import math
from dataclasses import asdict
from typing import Any

from chainbudget.budget import Budget
from chainbudget.budget.power import OutputFigures
from chainbudget.notation import DASH, eng
from chainbudget.report.kinds import figures_table, place
from chainbudget.report.layout import ReportTable
from chainbudget.report.tables import add_row, new_table

# The contract's keys of the ``output`` object; a kind's figures fill the ones it knows.
OUTPUT_KEYS = (
    "clip_power_w",
    "nominal_power_w",
    "max_spl_db",
    "damping_factor",
    "device_dissipation_w",
    "junction_degc",
)


def json_part(budget: Budget) -> dict[str, Any]:
    """Top-level ``output`` (the contract's keys and more) and ``drive`` objects; each kind's
    figures join the group their class names."""
    part: dict[str, Any] = {}
    out = budget.output
    if out is not None:
        data: dict[str, Any] = {key: getattr(out, key, None) for key in OUTPUT_KEYS}
        data.update(asdict(out))
        part["output"] = data
    part["drive"] = {"opamps": [asdict(op) for node in budget.nodes for op in node.opamps]}
    part["loop"] = []  # the contract's one entry per global loop, filled by the kinds below
    for node in budget.nodes:
        for own in node.own:
            if out is not None and node.stage == out.stage:
                part["output"].update(own.output_json())
            place(part, own)
    return part


def node_json(budget: Budget, k: int) -> dict[str, Any]:
    """Per node: its rail currents, its op-amps' drive, and its kind's node figures."""
    node = budget.nodes[k]
    part: dict[str, Any] = {}
    currents = node.currents
    if currents is not None and currents.positive is not None:
        part["rail_current_a"] = {
            "idle": currents.idle_a,
            "nominal": currents.nominal_a,
            "clip": currents.clip_a,
        }
    if node.opamps:
        part["drive_current_a"] = max(op.peak_a for op in node.opamps)
        part["drive_worst_current_a"] = max(op.worst_a for op in node.opamps)
        part["drive_limit_a"] = min(op.limit_a for op in node.opamps)
    for own in node.own:
        part.update(own.node_json())
    return part


def _db(value: float | None) -> str:
    if value is None:
        return DASH
    return f"{value:.1f} dB" if math.isfinite(value) else "no limit given"


def output_table(out: OutputFigures) -> ReportTable:
    table = new_table(
        f"Output into {eng(out.load_ohm, 'ohm')} (reference frequency; sine)",
        "figure",
        "value",
        "note",
        left=("value", "note"),
    )
    limited = math.isfinite(out.clip_power_w)
    add_row(
        table,
        "max output",
        f"{eng(out.clip_power_w, 'W')} ({eng(out.clip_vpk, 'Vpk')})"
        if limited
        else "no limit given (no stage declares one)",
        f"set by {out.clip_stage}: {out.clip_limit}" if out.clip_stage else DASH,
    )
    if out.clip_power_low_w is not None and limited:
        table.add_row(
            "max output, band's low edge",
            eng(out.clip_power_low_w, "W"),
            "the supplies sag longest between charges there",
        )
    if out.output_stage_clip_power_w is not None and out.clip_stage != out.stage:
        add_row(
            table,
            "output stage alone",
            eng(out.output_stage_clip_power_w, "W"),
            f"{out.stage} on its own limit",
        )
    add_row(
        table,
        "nominal",
        f"{eng(out.nominal_power_w, 'W')} ({eng(out.nominal_vpk, 'Vpk')})",
        "nominal source level, controls as set",
    )
    add_row(table, "max SPL at 1 m", _db(out.max_spl_db), "with the load's sensitivity")
    add_row(table, "nominal SPL at 1 m", _db(out.nominal_spl_db), "")
    add_row(table, "output impedance", eng(out.zout_ohm, "ohm"), "")
    add_row(table, "damping factor", f"{out.damping_factor:.3g}", "Z_L / Z_out")
    if out.output_cap_corner_hz is not None:
        add_row(
            table,
            "output cap corner",
            eng(out.output_cap_corner_hz, "Hz"),
            f"-3 dB, {eng(out.output_cap_f, 'F')} into the load",
        )
    return table


def drive_table(budget: Budget) -> ReportTable | None:
    ops = [op for node in budget.nodes for op in node.opamps]
    if not ops:
        return None
    table = new_table(
        "Op-amp drive at max_level (peak currents; worst over band and controls)",
        "stage",
        "op-amp",
        "needs",
        "worst",
        "at",
        "has",
        "into",
        left=("op-amp",),
    )
    for op in ops:
        add_row(
            table,
            op.stage,
            op.opamp,
            eng(op.peak_a, "A"),
            eng(op.worst_a, "A"),
            eng(op.worst_hz, "Hz"),
            eng(op.limit_a, "A"),
            eng(op.load_ohm, "ohm"),
        )
    return table


def currents_table(budget: Budget) -> ReportTable | None:
    currents = [n.currents for n in budget.nodes if n.currents is not None]
    if not any(c.idle_a or c.clip_a for c in currents):
        return None
    table = new_table("Stage currents from each rail (mean)", "stage", "idle", "nominal", "clip")
    for c in currents:
        if c.positive is None:  # a passive stage draws nothing
            continue
        add_row(table, c.stage, eng(c.idle_a, "A"), eng(c.nominal_a, "A"), eng(c.clip_a, "A"))
    return table


def tables(budget: Budget) -> list[ReportTable]:
    """Output (when the chain ends in a power stage or the load has a sensitivity), each
    stage kind's own figures, op-amp drive and stage currents."""
    found: list[ReportTable] = []
    out = budget.output
    if out is not None and (out.power_stage or out.max_spl_db is not None):
        found.append(output_table(out))
    for node in budget.nodes:
        table = figures_table(f"Stage {node.stage} ({node.kind})", node.own)
        if table is not None:
            found.append(table)
    for table in (drive_table(budget), currents_table(budget)):
        if table is not None:
            found.append(table)
    return found
