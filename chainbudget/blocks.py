"""The catalogue of kinds and their fields, as ``chainbudget blocks`` shows it."""

from __future__ import annotations

import math
from dataclasses import dataclass

from chainbudget import fields as f
from chainbudget.chainfile import LOAD_FIELDS, SETTINGS_FIELDS, SOURCE_FIELDS
from chainbudget.notation import eng
from chainbudget.parts import (
    GENERIC_OPAMPS,
    GENERIC_TRANSISTORS,
    OPAMP_FIELDS,
    TRANSISTOR_FIELDS,
    OpAmp,
    Transistor,
)
from chainbudget.stages import KINDS as STAGE_KINDS
from chainbudget.supplies import KINDS as SUPPLY_KINDS
from chainbudget.tolerance import TOLERANCE_FIELDS, tolerance_note


@dataclass(frozen=True)
class Entry:
    """One kind (or table) and its fields."""

    name: str
    table: str
    summary: str
    fields: tuple[f.Field, ...]


def catalogue() -> dict[str, Entry]:
    """Every stage kind, supply kind and top-level table, by name."""
    entries = [
        Entry("chain", "[chain]", "title, band, reference frequency, ambient", SETTINGS_FIELDS),
        Entry("source", "[source]", "what feeds the first stage", SOURCE_FIELDS),
        Entry("load", "[load]", "the loudspeaker (or line load) at the end", LOAD_FIELDS),
        Entry("opamp", "[opamp.NAME]", "an op-amp part", OPAMP_FIELDS),
        Entry("transistor", "[transistor.NAME]", "a bipolar transistor part", TRANSISTOR_FIELDS),
        Entry("tolerances", "[tolerances]", "part classes' tolerances (spread)", TOLERANCE_FIELDS),
    ]
    entries += [Entry(k.kind, "[[stage]]", k.summary, k.fields) for k in STAGE_KINDS.values()]
    for k in SUPPLY_KINDS.values():
        head = (
            (f.Field("from", f.NAME, "the supply this one is fed from"),)
            if (k.needs_parent)
            else ()
        )
        entries.append(Entry(k.kind, "[[supply]]", k.summary, (*head, *k.fields)))
    return {e.name: e for e in entries}


# Kinds whose defaults read best with an engineering prefix ("20 mA", "1 kHz").
_PREFIXED = {"ohm", "F", "Hz", "V", "A", "V/s", "V/rtHz", "A/rtHz", "Ah"}


def default_text(field: f.Field) -> str:
    """How the default shows in the catalogue."""
    if field.required:
        return "required"
    if field.default is None:
        return "optional"
    return value_text(field, field.default)


def value_text(field: f.Field, value: object) -> str:
    """A field's value as a designer writes it ("20 mA", "100 dB", "10 %", "7 V/us")."""
    if value is None:
        return "-"
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, tuple):
        return " to ".join(eng(v, "Hz") for v in value)
    if not isinstance(value, float):
        return str(value)
    if field.kind in (f.GAIN, f.OPEN_LOOP_GAIN):
        return f"{20.0 * math.log10(value):.3g} dB"
    if field.kind is f.FRACTION:
        return f"{100.0 * value:g} %"
    if field.kind is f.SLEW_RATE:
        return f"{value / 1e6:.3g} V/us"
    unit, _, measure = field.kind.unit.partition(" ")  # "A peak": the unit and its measure
    if unit in _PREFIXED:
        return eng(value, unit) + (f" {measure}" if measure else "")
    if field.kind.unit not in ("", "number", "0..1"):
        return f"{value:g} {field.kind.unit}"
    return f"{value:g}"


def generic_parts(table: str) -> tuple[tuple[str, ...], list[tuple[str, ...]]]:
    """Header (``field`` and the class names) and one row per field of the shipped generic
    classes of ``opamp`` or ``transistor``."""
    parts: dict[str, OpAmp] | dict[str, Transistor]
    if table == "opamp":
        parts, schema = GENERIC_OPAMPS, OPAMP_FIELDS
    else:
        parts, schema = GENERIC_TRANSISTORS, TRANSISTOR_FIELDS
    header = ("field", *parts)
    rows = [
        (fld.key, *(value_text(fld, getattr(part, fld.key)) for part in parts.values()))
        for fld in schema
        if fld.key != "description"
    ]
    return header, rows


def markdown(entries: dict[str, Entry]) -> str:
    """The catalogue as Markdown tables (the field reference of docs/format.md)."""
    lines: list[str] = []
    for e in entries.values():
        lines += [
            f"### `{e.name}` ({e.table})",
            "",
            e.summary[0].upper() + e.summary[1:] + ".",
            "",
            "| field | unit or form | default | meaning |",
            "| --- | --- | --- | --- |",
        ]
        lines += [
            "| "
            + " | ".join(
                cell.replace("|", "\\|")
                for cell in (f"`{fld.key}`", fld.kind.unit, default_text(fld), fld.meaning)
            )
            + " |"
            for fld in e.fields
        ]
        lines.append("")
        note = tolerance_note(e.fields) if e.table in ("[[stage]]", "[[supply]]") else None
        if note is not None:
            lines += [note.replace("tolerance = {", "`tolerance = {").replace("}:", "}`:"), ""]
        if e.name in ("opamp", "transistor"):
            header, rows = generic_parts(e.name)
            lines += [
                f"Generic `{e.name}` classes shipped (representative typical values of a family "
                "of devices, not any real part; name them in `opamp = ...` or `upper = ...`):",
                "",
                "| " + " | ".join(header) + " |",
                "| " + " | ".join("---" for _ in header) + " |",
                *("| " + " | ".join(row) + " |" for row in rows),
                "",
            ]
    return "\n".join(lines)


REFERENCE_MARKER = "<!-- field reference: generated by `python -m chainbudget.blocks` -->"


def with_reference(document: str) -> str:
    """``document`` with everything after the marker line replaced by the current reference."""
    head = document.split(REFERENCE_MARKER, 1)[0]
    return f"{head}{REFERENCE_MARKER}\n\n{markdown(catalogue())}"


if __name__ == "__main__":  # regenerates the field reference at the end of docs/format.md
    from pathlib import Path

    target = Path(__file__).resolve().parents[1] / "docs" / "format.md"
    target.write_text(with_reference(target.read_text(encoding="utf-8")), encoding="utf-8")
