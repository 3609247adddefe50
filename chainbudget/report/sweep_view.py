"""A sweep as a table, CSV or JSON: one row per step of the swept control or value."""

from __future__ import annotations

import csv
import io
import json
from collections.abc import Sequence
from dataclasses import asdict, dataclass
from typing import Any

from chainbudget.budget.sweep import SweepRow
from chainbudget.notation import DASH, decibels, eng
from chainbudget.report.json_view import json_ready
from chainbudget.report.layout import ReportTable
from chainbudget.report.tables import add_row, new_table

# The columns of the CSV and the keys of each JSON step, in order.
COLUMNS = (
    "value",
    "gain_db",
    "headroom_db",
    "worst_headroom_db",
    "first_clip",
    "snr_db",
    "clip_power_w",
    "errors",
    "warnings",
    "notes",
)


@dataclass(frozen=True)
class SweepInfo:
    """What was swept: ``stage.field``, whether it is a pot, and its unit (SI, "" for a pot
    or a plain ratio)."""

    title: str
    file: str
    target: str
    control: bool
    unit: str


def _value_text(info: SweepInfo, value: float) -> str:
    if info.control or not info.unit:
        return f"{value:.3g}"
    return eng(value, info.unit)


def sweep_table(info: SweepInfo, rows: Sequence[SweepRow]) -> ReportTable:
    """One row per step: the value and the chain's key figures there."""
    what = "rotation" if info.control else "value"
    table = new_table(
        f"{info.title}: {info.target} swept in {len(rows)} steps, solved together (dB; "
        "headroom: the least of any node at max_level; findings: errors, warnings, notes)",
        what,
        "gain",
        "headroom",
        "worst",
        "first to clip",
        "SNR",
        "clip power",
        "err",
        "warn",
        "note",
        left=("first to clip",),
    )
    for row in rows:
        add_row(
            table,
            _value_text(info, row.value),
            decibels(row.gain_db),
            decibels(row.headroom_db),
            decibels(row.worst_headroom_db),
            row.first_clip or DASH,
            decibels(row.snr_db, signed=False),
            eng(row.clip_power_w, "W"),
            str(row.errors),
            str(row.warnings),
            str(row.notes),
        )
    return table


def sweep_json(info: SweepInfo, rows: Sequence[SweepRow]) -> dict[str, Any]:
    """The sweep as plain data: what was swept and, per step, the key figures and the codes
    of the findings."""
    stage, _, field = info.target.partition(".")
    return json_ready(
        {
            "title": info.title,
            "file": info.file,
            "swept": {
                "stage": stage,
                "field": field,
                "control": info.control,
                "unit": info.unit,
                "values": [row.value for row in rows],
            },
            "steps": [
                {**{key: asdict(row)[key] for key in COLUMNS}, "codes": list(row.codes)}
                for row in rows
            ],
        }
    )


def sweep_text(info: SweepInfo, rows: Sequence[SweepRow], output_format: str) -> str:
    """The sweep as CSV (``csv``) or JSON (``json``) text."""
    if output_format == "json":
        return json.dumps(sweep_json(info, rows), indent=2)
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(COLUMNS)
    for row in rows:
        data = asdict(row)
        writer.writerow(["" if data[key] is None else data[key] for key in COLUMNS])
    return buffer.getvalue()
