"""What a supply's output does under load: the loads the power tree puts on it and its state.

A supply kind that models load (sag, ripple, transformer regulation, dropout) turns the
load on its output into a `SupplyState`; ``supplies.tree.supply_voltages`` gives the rails
of the tree under a set of loads.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from dataclasses import dataclass

from chainbudget.supplies.base import Corners, Supply
from chainbudget.supplymath import sag


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


class LoadModel(ABC):
    """A supply kind whose output depends on its load (mixed into a `SupplyKind`)."""

    @abstractmethod
    def state(self, supply: Supply, parent: SupplyState | None, load: SupplyLoad) -> SupplyState:
        """Output state given the parent's state (None for a root) and the external load."""

    def input_load(self, supply: Supply, load: SupplyLoad) -> SupplyLoad:
        """Current this supply draws from its parent given its external load (a root: none)."""
        return NO_LOAD


def state_from_corners(corners: Corners) -> SupplyState:
    """A load-independent state with no ripple, for a supply known only by its corners."""
    return SupplyState(
        trough_v=corners.low,
        nominal_v=corners.nominal,
        crest_v=corners.high,
        high_heavy_v=corners.high,
        high_idle_v=corners.high,
        ripple_vpp=0.0,
    )


def dc_state(supply: Supply, load: SupplyLoad) -> SupplyState:
    """Output of a ``dc`` supply (battery or bench supply) under load.

    Notes
    -----
    A Thevenin source, emf E in series with its internal resistance R, gives E - R I at the
    terminals (:func:`chainbudget.supplymath.sag`; Horowitz & Hill, The Art of Electronics,
    3rd ed., ch. 1, from memory). The low end (``min_voltage``) sags under the heaviest load,
    the nominal voltage under the nominal load; the high end (``max_voltage``) is taken
    unloaded. No ripple.
    """
    nominal = abs(supply.number("voltage"))
    low = supply.optional("min_voltage")
    high = supply.optional("max_voltage")
    low_v = nominal if low is None else abs(low)
    high_v = nominal if high is None else abs(high)
    r = supply.number("resistance")

    def terminal(emf: float, current: float) -> float:
        return max(float(sag(emf, r, current)), 0.0)

    return SupplyState(
        trough_v=terminal(low_v, load.heaviest_a),
        nominal_v=terminal(nominal, load.nominal_a),
        crest_v=high_v,
        high_heavy_v=terminal(high_v, load.heaviest_a),
        high_idle_v=terminal(high_v, load.idle_a),
        ripple_vpp=0.0,
    )
