"""A kind's own figures: a frozen dataclass whose fields carry what the views need.

Each stage or supply kind returns its figures as a dataclass of its own, subclassing
`KindFigures`, and declares each field with `figure`: the label and unit a table shows it
with, and where its value also appears in the JSON report beside the generic figures
(``node_key``: a key of the node's JSON object; ``output_key``: a key of the top-level
``output`` object). The class says which JSON group it joins as a whole (``json_place``):
``"drive.followers[]"`` appends it to that list, ``"output.dissipation"`` sets that object.
The views read only this metadata; they never name a kind.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any, ClassVar


def figure(
    label: str = "",
    unit: str = "",
    *,
    node_key: str | None = None,
    output_key: str | None = None,
    default: Any = dataclasses.MISSING,
) -> Any:
    """A dataclass field of a kind's figures: its table label and unit (SI, or ``degC``,
    ``K/W``, ``h``, ``Ah``, ``%`` for a fraction shown as a percentage), and the JSON keys
    it also appears under. A field without a label is data for the rules, not a table row."""
    metadata = {"label": label, "unit": unit, "node_key": node_key, "output_key": output_key}
    if default is dataclasses.MISSING:
        return dataclasses.field(metadata=metadata)
    return dataclasses.field(default=default, metadata=metadata)


@dataclass(frozen=True)
class FigureRow:
    """One labelled figure of a kind, as a table shows it."""

    label: str
    value: Any
    unit: str


@dataclass(frozen=True)
class KindFigures:
    """Base of every kind's own figures (SI units; degC for temperatures)."""

    #: The heading of the kind's table in the report.
    title: ClassVar[str] = "figures"
    #: The JSON group the whole object joins ("a.b[]": append to a list; "a.b": set), or None.
    json_place: ClassVar[str | None] = None

    def rows(self) -> Iterator[FigureRow]:
        """The labelled figures, in field order."""
        for item in dataclasses.fields(self):
            label = item.metadata.get("label")
            if label:
                yield FigureRow(label, getattr(self, item.name), item.metadata["unit"])

    def _keyed(self, which: str) -> dict[str, Any]:
        return {
            item.metadata[which]: getattr(self, item.name)
            for item in dataclasses.fields(self)
            if item.metadata.get(which)
        }

    def node_json(self) -> dict[str, Any]:
        """The figures the node's JSON object carries beside the generic ones."""
        return self._keyed("node_key")

    def output_json(self) -> dict[str, Any]:
        """The figures the top-level ``output`` object carries."""
        return self._keyed("output_key")

    def as_json(self) -> dict[str, Any]:
        """Every field as plain data (nested dataclasses as objects)."""
        return dataclasses.asdict(self)
