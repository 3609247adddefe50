"""What every supply kind provides.

A supply kind is one module (or a small package) under ``chainbudget/supplies/`` holding a
`SupplyKind` subclass: its fields, its output state (trough, nominal, crest, ripple) under
the load the power tree puts on it given its parent's state, what it draws from its parent,
its own figures (a `KindFigures` dataclass) and its rules (findings). Supplies form a tree
through their ``from`` field; ``ground`` is always defined. The power tree itself is solved
in ``chainbudget.budget``; a supply knows only its own physics.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from collections.abc import Mapping
from dataclasses import dataclass, fields
from typing import Any, ClassVar

from chainbudget import fields as f
from chainbudget.finding import Finding
from chainbudget.kindfigures import KindFigures

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


@dataclass(frozen=True)
class TroughRemedy:
    """What a supply would need to hold a higher trough under the same load (None: this
    kind cannot say)."""

    secondary_vrms: float | None = None
    reservoir_f: float | None = None


@dataclass(frozen=True)
class SupplyContext:
    """What a supply kind is given to work out its own figures: its state and load in the
    solved tree, its parent's, and the ambient temperature (degC)."""

    supply: Supply
    state: SupplyState
    load: SupplyLoad
    parent: Supply | None
    parent_kind: SupplyKind | None
    parent_state: SupplyState | None
    parent_load: SupplyLoad | None
    ambient_degc: float


@dataclass(frozen=True)
class SupplyBudget:
    """One supply in the solved power tree: where it sits, its state and loads, and its kind's
    own figures (``own``; None for a kind with none).

    ``load`` is the current out of its output pin (a regulator's includes its divider and
    bleeder), ``drawn`` what it takes from its parent (None for a root). ``vout_v`` is the
    nominal mean output, or for a regulator its set output (its figures say whether it
    holds it).
    """

    name: str
    kind: str
    parent: str | None
    stages: tuple[str, ...]
    children: tuple[str, ...]
    vout_v: float
    state: SupplyState
    load: SupplyLoad
    drawn: SupplyLoad | None
    own: KindFigures | None

    @property
    def output_min_v(self) -> float:
        return self.state.trough_v

    @property
    def output_max_v(self) -> float:
        return self.state.crest_v

    @property
    def ripple_vpp(self) -> float | None:
        return self.state.ripple_vpp

    @property
    def idle_load_a(self) -> float:
        return self.load.idle_a

    @property
    def nominal_load_a(self) -> float:
        return self.load.nominal_a

    @property
    def max_load_a(self) -> float:
        return self.load.heaviest_a

    @property
    def input_idle_a(self) -> float | None:
        return None if self.drawn is None else self.drawn.idle_a

    @property
    def input_max_a(self) -> float | None:
        return None if self.drawn is None else self.drawn.heaviest_a

    def figure(self, key: str) -> Any:
        """One of the kind's own figures by name; None when the kind has no such figure."""
        return getattr(self.own, key, None)

    def __getattr__(self, key: str) -> Any:
        """The kind's own figures read as attributes too (``supply.dropout_margin_v``)."""
        if key.startswith("_") or key in SUPPLY_PARTS:  # not yet set (copying, unpickling)
            raise AttributeError(key)
        if self.own is not None and hasattr(self.own, key):
            return getattr(self.own, key)
        raise AttributeError(f"supply {self.name!r} has no figure {key!r}")

    def __repr__(self) -> str:
        return (
            f"<SupplyBudget {self.name!r} ({self.kind}): {self.vout_v:.4g} V, "
            f"{self.state.trough_v:.4g}..{self.state.crest_v:.4g} V, "
            f"load {self.load.idle_a:.3g}..{self.load.heaviest_a:.3g} A>"
        )


SUPPLY_PARTS = frozenset(f.name for f in fields(SupplyBudget))


class SupplyKind(ABC):
    """A supply kind: its fields, its output under load, its figures and its rules."""

    kind: ClassVar[str]
    summary: ClassVar[str]
    fields: ClassVar[tuple[f.Field, ...]]
    needs_parent: ClassVar[bool] = False
    #: Whether the supply starts at the mains (the report then shows the mains caution).
    from_mains: ClassVar[bool] = False

    @abstractmethod
    def state(self, supply: Supply, parent: SupplyState | None, load: SupplyLoad) -> SupplyState:
        """Output state given the parent's state (None for a root) and the external load."""

    def input_load(self, supply: Supply, load: SupplyLoad) -> SupplyLoad:
        """Current this supply draws from its parent given its external load (a root: none)."""
        return NO_LOAD

    def delivered(self, supply: Supply, load: SupplyLoad) -> SupplyLoad:
        """Current out of the output pin given the external load (the load itself unless
        the kind adds its own, e.g. a regulator's divider and bleeder)."""
        return load

    def output_voltage(self, supply: Supply, state: SupplyState) -> float:
        """The supply's headline output, V: the nominal mean unless the kind sets one."""
        return state.nominal_v

    def figures(self, context: SupplyContext) -> KindFigures | None:
        """The kind's own figures in the solved tree (none by default)."""
        return None

    def rules(self, supply: SupplyBudget, ambient_degc: float) -> list[Finding]:
        """The kind's findings (and cautions) about one supply (none by default)."""
        return []

    def trough_remedy(self, supply: Supply, trough_v: float, heaviest_a: float) -> TroughRemedy:
        """What would raise this supply's low-line trough to ``trough_v`` at the same load
        (asked by a child that drops out); the default knows no remedy."""
        return TroughRemedy()

    def missing(self, values: Mapping[str, Any]) -> list[str]:
        """Keys that the other values make required."""
        return []

    def problems(self, values: Mapping[str, Any]) -> list[tuple[str, str]]:
        """(key, message) for values that are valid alone but not together."""
        return []
