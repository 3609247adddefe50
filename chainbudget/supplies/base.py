"""What every supply kind provides.

A supply kind is one module under ``chainbudget/supplies/`` holding a `SupplyKind`
subclass: its fields, its output state (trough, nominal, crest, ripple) under the load the
power tree puts on it, given its parent's state, and what it draws from its parent.
Supplies form a tree through their ``from`` field; ``ground`` is always defined.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, ClassVar

from chainbudget import fields as f

GROUND_SUPPLY = "ground"


@dataclass(frozen=True)
class Supply(f.TableEntry):
    """One validated ``[[supply]]`` table."""

    table = "supply"

    @property
    def parent(self) -> str | None:
        value = self.values.get("from")
        return None if value is None else str(value)


@dataclass(frozen=True)
class Corners:
    """A voltage at low line (or low battery), nominal, and high line, V."""

    low: float
    nominal: float
    high: float


@dataclass(frozen=True)
class SupplyLoad:
    """Mean current drawn from a supply's output at idle, nominal level and heaviest, A.

    ``heaviest_a`` is every stage at its own clip level at once (an upper bound: they do
    not all clip at the same source level).
    """

    idle_a: float = 0.0
    nominal_a: float = 0.0
    heaviest_a: float = 0.0

    def __add__(self, other: SupplyLoad) -> SupplyLoad:
        return SupplyLoad(
            self.idle_a + other.idle_a,
            self.nominal_a + other.nominal_a,
            self.heaviest_a + other.heaviest_a,
        )

    def plus(self, current_a: float) -> SupplyLoad:
        """The same load with a constant current added at every level."""
        return self + SupplyLoad(current_a, current_a, current_a)


NO_LOAD = SupplyLoad()


@dataclass(frozen=True)
class SupplyState:
    """A supply's output voltage (magnitude) over the line corners and loads, V.

    Attributes
    ----------
    trough_v : float
        Lowest instantaneous voltage: low line (low battery), heaviest load, bottom of the
        ripple. The rail a stage sees at the ``"low"`` corner.
    nominal_v : float
        Mean voltage at nominal line and nominal load (the ``"nominal"`` corner).
    crest_v : float
        Highest voltage: high line (fresh battery), no load (the ``"high"`` corner).
    high_heavy_v : float
        Mean voltage at high line and heaviest load (what heats a regulator fed from it).
    high_idle_v : float
        Mean voltage at high line and idle load.
    ripple_vpp : float or None
        Ripple at the heaviest load, V peak-to-peak; None when not known.
    """

    trough_v: float
    nominal_v: float
    crest_v: float
    high_heavy_v: float
    high_idle_v: float
    ripple_vpp: float | None

    @property
    def corners(self) -> Corners:
        return Corners(low=self.trough_v, nominal=self.nominal_v, high=self.crest_v)


class SupplyKind(ABC):
    """A supply kind: its fields and its output under load."""

    kind: ClassVar[str]
    summary: ClassVar[str]
    fields: ClassVar[tuple[f.Field, ...]]
    needs_parent: ClassVar[bool] = False

    @abstractmethod
    def state(self, supply: Supply, parent: SupplyState | None, load: SupplyLoad) -> SupplyState:
        """Output state given the parent's state (None for a root) and the external load."""

    def input_load(self, supply: Supply, load: SupplyLoad) -> SupplyLoad:
        """Current this supply draws from its parent given its external load (a root: none)."""
        return NO_LOAD

    def missing(self, values: Mapping[str, Any]) -> list[str]:
        """Keys that the other values make required."""
        return []

    def problems(self, values: Mapping[str, Any]) -> list[tuple[str, str]]:
        """(key, message) for values that are valid alone but not together."""
        return []
