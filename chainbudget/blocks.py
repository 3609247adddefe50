"""The catalogue of kinds and their fields, as ``chainbudget blocks`` shows it."""

from __future__ import annotations

from dataclasses import dataclass

from chainbudget import fields as f
from chainbudget.chainfile import LOAD_FIELDS, SETTINGS_FIELDS, SOURCE_FIELDS
from chainbudget.parts import OPAMP_FIELDS, TRANSISTOR_FIELDS
from chainbudget.stages import KINDS as STAGE_KINDS
from chainbudget.supplies import KINDS as SUPPLY_KINDS


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
        Entry("transistor", "[transistor.NAME]", "a bipolar transistor part",
              TRANSISTOR_FIELDS),
    ]
    entries += [Entry(k.kind, "[[stage]]", k.summary, k.fields) for k in STAGE_KINDS.values()]
    for k in SUPPLY_KINDS.values():
        head = (f.Field("from", f.NAME, "the supply this one is fed from"),) if (
            k.needs_parent) else ()
        entries.append(Entry(k.kind, "[[supply]]", k.summary, (*head, *k.fields)))
    return {e.name: e for e in entries}


def default_text(field: f.Field) -> str:
    """How the default shows in the catalogue."""
    if field.required:
        return "required"
    if field.default is None:
        return "optional"
    if isinstance(field.default, float) and field.kind.unit not in ("", "number"):
        return f"{field.default:g} {field.kind.unit}"
    return str(field.default)
