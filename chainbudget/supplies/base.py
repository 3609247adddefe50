"""What every supply kind provides.

A supply kind is one module under ``chainbudget/supplies/`` holding a `SupplyKind`
subclass: its fields and its output voltage at low, nominal and high line given its
parent's. Supplies form a tree through their ``from`` field; ``ground`` is always defined.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, ClassVar

from chainbudget import fields as f

GROUND_SUPPLY = "ground"


@dataclass(frozen=True)
class Supply:
    """One validated ``[[supply]]`` table (1-based ``index``), SI values."""

    index: int
    name: str
    kind: str
    values: Mapping[str, Any]

    def number(self, key: str) -> float:
        return float(self.values[key])

    def optional(self, key: str) -> float | None:
        value = self.values.get(key)
        return None if value is None else float(value)

    @property
    def parent(self) -> str | None:
        value = self.values.get("from")
        return None if value is None else str(value)

    @property
    def path(self) -> str:
        return f'supply[{self.index}] "{self.name}"'


@dataclass(frozen=True)
class Corners:
    """A voltage at low line (or low battery), nominal, and high line, V."""

    low: float
    nominal: float
    high: float


class SupplyKind(ABC):
    """A supply kind: its fields and its output voltage."""

    kind: ClassVar[str]
    summary: ClassVar[str]
    fields: ClassVar[tuple[f.Field, ...]]
    needs_parent: ClassVar[bool] = False

    @abstractmethod
    def output(self, supply: Supply, parent: Corners | None) -> Corners:
        """Output voltage magnitude at the three corners, V."""

    def missing(self, values: Mapping[str, Any]) -> list[str]:
        """Keys that the other values make required."""
        return []
