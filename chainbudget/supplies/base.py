"""What every supply kind provides.

A supply kind is one module (or a small package) under ``chainbudget/supplies/`` holding a
`SupplyKind` subclass: its fields, its output state (trough, nominal, crest, ripple) under
the load the power tree puts on it given its parent's state, what it draws from its parent,
its own figures (a `KindFigures` dataclass) and its rules (findings). Supplies form a tree
through their ``from`` field; ``ground`` is always defined. The power tree itself is solved
in ``chainbudget.budget``; a supply knows only its own physics.
"""

from __future__ import annotations

import math
from abc import ABC, abstractmethod
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field, fields
from typing import Any, ClassVar, cast

import numpy as np
from numpy.typing import ArrayLike, NDArray

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


def larger(a: Any, b: Any) -> Any:
    """The larger of ``a`` and ``b`` element-wise: a float for floats (as ``max`` gives
    it), a (T,) array where either holds one value per trial (chainbudget/spread)."""
    found = np.maximum(a, b)
    return float(found) if np.ndim(found) == 0 else found


def chosen(condition: Any, a: Any, b: Any) -> Any:
    """``a`` where ``condition`` holds, else ``b``, element-wise: a float for floats (as
    ``a if condition else b`` gives it), a (T,) array over a trial axis."""
    found = np.where(condition, a, b)
    return float(found) if np.ndim(found) == 0 else found


@dataclass(frozen=True)
class SupplyLoad:
    """Current drawn from a supply's output at idle, nominal level and heaviest, A, with the
    signal's share of it as a waveform.

    The means (``idle_a``, ``nominal_a``, ``heaviest_a``) are what a supply delivers on
    average; ``heaviest_a`` is every stage at its own clip level at once (an upper bound:
    they do not all clip at the same source level). A class-AB output (a push-pull pair,
    an op-amp's output) draws its signal current from each rail in half-wave sine pulses:
    ``nominal_pulse_a`` and ``heaviest_pulse_a`` are the pulses' peaks, at ``signal_hz``,
    included in the means at their average, peak/pi. Pulses from different stages on one
    rail are taken in phase (their peaks add: the upper bound).

    Each current is a float in the check, or a (T,) array holding one value per trial where
    the tree is settled over the spread's trials (chainbudget/spread): the arithmetic here
    is element-wise (`larger` where a float would take ``max``), ``signal_hz`` one float.
    """

    idle_a: float = 0.0
    nominal_a: float = 0.0
    heaviest_a: float = 0.0
    nominal_pulse_a: float = 0.0
    heaviest_pulse_a: float = 0.0
    signal_hz: float | None = None

    def __add__(self, other: SupplyLoad) -> SupplyLoad:
        return SupplyLoad(
            self.idle_a + other.idle_a,
            self.nominal_a + other.nominal_a,
            self.heaviest_a + other.heaviest_a,
            self.nominal_pulse_a + other.nominal_pulse_a,
            self.heaviest_pulse_a + other.heaviest_pulse_a,
            self.signal_hz if self.signal_hz is not None else other.signal_hz,
        )

    def plus(self, current_a: float) -> SupplyLoad:
        """The same load with a constant current added at every level."""
        return self + SupplyLoad(current_a, current_a, current_a)

    def scaled(self, factor: float) -> SupplyLoad:
        """The same load times ``factor`` (its waveform's shape kept)."""
        return SupplyLoad(
            self.idle_a * factor,
            self.nominal_a * factor,
            self.heaviest_a * factor,
            self.nominal_pulse_a * factor,
            self.heaviest_pulse_a * factor,
            self.signal_hz,
        )

    @property
    def nominal_dc_a(self) -> float:
        """The steady part of the nominal load (the mean less the pulses' average), A."""
        return cast(float, larger(self.nominal_a - self.nominal_pulse_a / math.pi, 0.0))

    @property
    def heaviest_dc_a(self) -> float:
        """The steady part of the heaviest load, A."""
        return cast(float, larger(self.heaviest_a - self.heaviest_pulse_a / math.pi, 0.0))

    @property
    def trials(self) -> tuple[int, ...]:
        """The shape of its trial axis: () for floats, (T,) for one load per trial."""
        return np.broadcast_shapes(
            *(
                np.shape(value)
                for value in (
                    self.idle_a,
                    self.nominal_a,
                    self.heaviest_a,
                    self.nominal_pulse_a,
                    self.heaviest_pulse_a,
                )
            )
        )

    @property
    def heaviest_peak_a(self) -> float:
        """The heaviest load at the crest of its pulses, A."""
        return self.heaviest_dc_a + self.heaviest_pulse_a


NO_LOAD = SupplyLoad()


def on_trials(load: SupplyLoad, *values: ArrayLike | None) -> list[NDArray[np.float64] | None]:
    """The parts ``values`` (each (T,), one value or None) on one trial axis with the
    ``load``'s (one load per trial, or the nominal one): every figure then holds one value
    per trial, whichever of them is drawn."""
    arrays = [None if v is None else np.asarray(v, dtype=float) for v in values]
    shape = np.broadcast_shapes(load.trials, *(a.shape for a in arrays if a is not None))
    return [
        a if a is None or a.shape == shape else np.broadcast_to(a, shape).copy() for a in arrays
    ]


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
    collapsed : bool
        No steady operating point holds the load: the output falls to zero (the figures
        of the trough corner are then not a working rail's).
    ripple_hz : float or None
        Fundamental of the mains ripple (twice the line frequency from a full-wave
        rectifier), Hz; None for a supply with no mains ripple.
    harmonics_vpk : tuple of complex
        The mains ripple at nominal line and nominal (mean) load as a spectrum: the k-th
        entry is the complex peak amplitude at k times ``ripple_hz`` (phase referred to the
        line's zero crossing), as every supply from its root passes it on.
    """

    trough_v: float
    nominal_v: float
    crest_v: float
    high_heavy_v: float
    high_idle_v: float
    ripple_vpp: float | None
    collapsed: bool = False
    ripple_hz: float | None = None
    harmonics_vpk: tuple[complex, ...] = ()

    @property
    def corners(self) -> Corners:
        return Corners(low=self.trough_v, nominal=self.nominal_v, high=self.crest_v)

    @property
    def mean_v(self) -> float:
        """The mean output at nominal line and nominal load, V."""
        return self.nominal_v

    def ripple_harmonics(self) -> tuple[tuple[float, complex], ...]:
        """The ripple spectrum as (frequency in Hz, complex peak amplitude in V) pairs, the
        fundamental first (empty when the supply has no mains ripple or it is not known)."""
        if self.ripple_hz is None:
            return ()
        return tuple((k * self.ripple_hz, v) for k, v in enumerate(self.harmonics_vpk, start=1))

    def through(self, gain: Callable[[float], complex]) -> tuple[complex, ...]:
        """The harmonics passed through a network of complex gain ``gain(hz)``."""
        return tuple(v * gain(hz) for hz, v in self.ripple_harmonics())


@dataclass(frozen=True)
class TroughRemedy:
    """What a supply would need to hold a higher trough under the same load (None: this
    kind cannot say)."""

    secondary_vrms: float | None = None
    reservoir_f: float | None = None


@dataclass(frozen=True)
class RippleRemedy:
    """One of a supply's own values changed so that it passes less ripple: the field, its
    new value (SI) and how the file writes it, and the change in its output's ripple at
    each frequency, ``factor(hz)`` (new over old, complex); ``factor`` None: the kind must
    be solved again with the new value (a rectifier's reservoir)."""

    key: str
    value: float
    written: str
    factor: Callable[[float], complex] | None = None


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
    #: The rail these figures are for (a split supply has two: ``name`` and ``name.neg``).
    rail: str = ""
    #: The external load on every rail of this supply, by rail name.
    rail_loads: Mapping[str, SupplyLoad] = field(default_factory=dict)


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
    #: The output clip power the supply's own source resistance costs at the reference
    #: frequency, dB (None where the kind has no such resistance to speak of).
    sag_cost_db: float | None = None

    @property
    def trough_v(self) -> float:
        """Lowest output: low line, heaviest load, bottom of the ripple, V."""
        return self.state.trough_v

    @property
    def crest_v(self) -> float:
        """Highest output: high line, no load, V."""
        return self.state.crest_v

    @property
    def mean_v(self) -> float:
        """Mean output at nominal line and nominal load, V."""
        return self.state.nominal_v

    @property
    def collapsed(self) -> bool:
        """No steady operating point holds the load."""
        return self.state.collapsed

    @property
    def ripple_harmonics(self) -> tuple[tuple[float, complex], ...]:
        """The mains ripple at the output as (Hz, complex V peak) pairs."""
        return self.state.ripple_harmonics()

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


SUPPLY_PARTS = frozenset(item.name for item in fields(SupplyBudget))


@dataclass(frozen=True)
class SpreadThreshold:
    """A rule's limit on one of a kind's spread figures: the trials where the figure falls
    below ``limit`` (and not below a tighter threshold of the same figure) draw ``code``."""

    key: str
    limit: float
    code: str
    severity: str


@dataclass(frozen=True)
class HighLine:
    """A rail's output at high line over a leading trial axis (chainbudget/spread): its
    crest with no load (`SupplyState.crest_v`) and its means under the heaviest and the
    idle load (`SupplyState.high_heavy_v`, `SupplyState.high_idle_v`), V, each (T,) or one
    value for every trial: what a regulator below dissipates from and what its input's
    maximum is."""

    crest_v: NDArray[np.float64]
    heavy_v: NDArray[np.float64]
    idle_v: NDArray[np.float64]

    @classmethod
    def of(cls, state: SupplyState) -> HighLine:
        """A supply's nominal state's, the same in every trial."""
        return cls(
            np.asarray(state.crest_v, dtype=float),
            np.asarray(state.high_heavy_v, dtype=float),
            np.asarray(state.high_idle_v, dtype=float),
        )


@dataclass(frozen=True)
class RippleSpread:
    """A rail's mains ripple over a leading trial axis (chainbudget/spread), with the
    rest of its state a supply below takes from it per trial besides its trough.

    ``vpp`` is its peak-to-peak at low line and the heaviest load (`SupplyState.ripple_vpp`),
    shape (T,) or one value for every trial (None: not known); ``harmonics_vpk`` its
    spectrum at nominal line and load (`SupplyState.harmonics_vpk`), complex V peak, shape
    (T, K) or (K,), the k-th at k times ``ripple_hz``; ``mean_v`` the mean that spectrum
    rides on (`SupplyState.nominal_v`), (T,) or one value (None: the nominal check's; a
    filter or divider below takes its own mean from it); ``high`` its output at high line
    (`HighLine`; None: not known, where a trial moves it and the kind does not say how).
    """

    ripple_hz: float | None
    vpp: NDArray[np.float64] | None
    harmonics_vpk: NDArray[np.complex128]
    mean_v: NDArray[np.float64] | None = None
    high: HighLine | None = None

    @classmethod
    def of(cls, state: SupplyState) -> RippleSpread:
        """The ripple of a supply's nominal state, the same in every trial."""
        vpp = None if state.ripple_vpp is None else np.asarray(state.ripple_vpp, dtype=float)
        harmonics = np.asarray(state.harmonics_vpk, dtype=complex).reshape(-1)
        return cls(
            state.ripple_hz,
            vpp,
            harmonics,
            np.asarray(state.nominal_v, dtype=float),
            HighLine.of(state),
        )

    @property
    def frequency(self) -> NDArray[np.float64]:
        """The harmonics' frequencies, Hz, (K,): computed as `SupplyState.ripple_harmonics`
        computes them, so that they match the nominal check's exactly."""
        count = self.harmonics_vpk.shape[-1]
        if self.ripple_hz is None:
            return np.zeros(0)
        return np.array([k * self.ripple_hz for k in range(1, count + 1)], dtype=float)

    def through(self, gain: Callable[[float], complex | float]) -> NDArray[np.complex128]:
        """The harmonics passed by a network of complex gain ``gain(hz)``, per trial."""
        factor = np.array([gain(float(hz)) for hz in self.frequency], dtype=complex)
        return np.asarray(self.harmonics_vpk * factor, dtype=complex)


@dataclass(frozen=True)
class SupplySpread:
    """A supply's figures over a leading trial axis (chainbudget/spread), each of shape
    (T,); ``rail_low_v`` is its output at low line, what its stages run from, per trial;
    ``ripple`` its mains ripple per trial (None: the nominal check's); ``flags`` whether
    each of its rules that reads more than one figure fires, per trial (a boolean, (T,) or
    one for every trial), under its flag's key (`chainbudget.spread.flags.flag_key`)."""

    figures: Mapping[str, NDArray[np.float64]]
    thresholds: tuple[SpreadThreshold, ...]
    rail_low_v: NDArray[np.float64] | None
    ripple: RippleSpread | None = None
    flags: Mapping[str, NDArray[np.bool_]] = field(default_factory=dict)


class SupplyKind(ABC):
    """A supply kind: its fields, its output under load, its figures and its rules."""

    kind: ClassVar[str]
    summary: ClassVar[str]
    fields: ClassVar[tuple[f.Field, ...]]
    needs_parent: ClassVar[bool] = False
    #: Its output's ripple is held down by a regulation loop (a rejection), not passed on by
    #: a filter: feeding a stage from another such supply is no remedy for its hum.
    regulates: ClassVar[bool] = False

    @abstractmethod
    def state(self, supply: Supply, parent: SupplyState | None, load: SupplyLoad) -> SupplyState:
        """Output state given the parent's state (None for a root) and the external load."""

    def input_load(self, supply: Supply, load: SupplyLoad) -> SupplyLoad:
        """Current this supply draws from its parent given its external load (a root: none)."""
        return NO_LOAD

    def standing_current(self, supply: Supply, parent: SupplyState) -> float:
        """Current the supply draws from its parent whatever its load, A, at the parent's
        state (e.g. a divider's current through both resistors); none by default."""
        return 0.0

    def trial_draw(
        self,
        supply: Supply,
        drawn: Mapping[str, NDArray[np.float64]],
        load: SupplyLoad,
        parent: SupplyState,
    ) -> SupplyLoad | None:
        """What the supply draws from its parent with its own parts ``drawn`` (field ->
        (T,) values: the spread's trials) under its external ``load``: its `input_load`
        and `standing_current` (at the parent's state ``parent``) with each trial's values.
        None where no drawn part moves it (the default): the file's values then serve."""
        return None

    def trial_delivered(
        self, supply: Supply, drawn: Mapping[str, NDArray[np.float64]], load: SupplyLoad
    ) -> SupplyLoad | None:
        """`delivered` with its own parts ``drawn`` (field -> (T,) values: the spread's
        trials) under its external ``load``; None where no drawn part moves it (the
        default): the file's values then serve."""
        return None

    def rails(self, supply: Supply) -> tuple[str, ...]:
        """The rails the supply defines, by the names stages and supplies use for them; one,
        its own name, unless the kind builds more (a centre-tapped supply's ``.neg``)."""
        return (supply.name,)

    def rail_states(
        self, supply: Supply, parent: SupplyState | None, loads: Mapping[str, SupplyLoad]
    ) -> dict[str, SupplyState]:
        """The state of each of its rails under its load (by default the one rail's)."""
        return {supply.name: self.state(supply, parent, loads.get(supply.name, NO_LOAD))}

    def stiff_state(
        self, supply: Supply, parent: SupplyState | None, load: SupplyLoad
    ) -> SupplyState | None:
        """The state with the supply's own source resistance taken away (what its sag costs
        is measured against it); None when the kind has no such resistance to speak of."""
        return None

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

    def spread_fields(self, supply: Supply) -> tuple[str, ...]:
        """The toleranced fields `spread` draws for this supply (none by default: its
        figures hold their nominal values in every trial)."""
        return ()

    def spread(
        self,
        supply: Supply,
        drawn: Mapping[str, NDArray[np.float64]],
        nominal: SupplyBudget,
        parent_low_v: NDArray[np.float64] | None = None,
        bounds: Mapping[str, tuple[float, float]] | None = None,
        parent_ripple: RippleSpread | None = None,
        *,
        ambient_degc: float | None = None,
    ) -> SupplySpread | None:
        """The kind's figures with ``drawn`` (field -> (T,) values) in place of the file's,
        about the nominal operating point ``nominal`` (whose ``load`` may hold one load per
        trial, its currents (T,) arrays: the tree settled for each trial; a kind that
        reads its load gives each trial its own, element-wise); ``parent_low_v`` is the parent's
        low-line trough, per trial where the parent spreads it, else its nominal one;
        ``bounds`` each drawn field's (low, high); ``parent_ripple`` the parent's ripple,
        mean and output at high line (per trial where the parent spreads them, else its
        nominal ones). Both None for a root or where only the rules' limits are asked for.
        ``ambient_degc`` the chain's ambient (None: no heat asked for). None: the kind
        spreads nothing.

        A kind is asked even with nothing of its own drawn when its parent is spread: its
        output follows the parent's trough and ripple per trial."""
        return None

    def rail_spreads(
        self,
        supply: Supply,
        drawn: Mapping[str, NDArray[np.float64]],
        nominals: Mapping[str, SupplyBudget],
        parent_low_v: NDArray[np.float64] | None = None,
        bounds: Mapping[str, tuple[float, float]] | None = None,
        parent_ripple: RippleSpread | None = None,
        *,
        ambient_degc: float | None = None,
        about: Mapping[str, SupplyLoad] | None = None,
    ) -> dict[str, SupplySpread] | None:
        """`spread` for each of the supply's rails, by rail name (`rails`), given each
        rail's nominal budget ``nominals``; by default the one rail's `spread`. A kind
        defining more than one rail (a centre-tapped rectifier's ``.neg``) overrides this,
        as it does `rail_states`. None: the kind spreads nothing. ``about``: where the
        budgets hold a load per trial, each rail's load as the nominal check has it (a kind
        that expands its figures in the load, the rectifier, expands them about it; the
        others take each trial's load exactly and ignore it)."""
        found = self.spread(
            supply,
            drawn,
            nominals[supply.name],
            parent_low_v,
            bounds,
            parent_ripple,
            ambient_degc=ambient_degc,
        )
        return None if found is None else {supply.name: found}

    def trough_remedy(
        self, supply: Supply, trough_v: float, load: SupplyLoad, rail: str | None = None
    ) -> TroughRemedy:
        """What would raise the low-line trough of this supply's ``rail`` (default: its own
        name) to ``trough_v`` under the same load (asked by a child that drops out); the
        default knows no remedy."""
        return TroughRemedy()

    def ripple_remedy(
        self, supply: Supply, attenuation: float, fundamental_hz: float
    ) -> RippleRemedy | None:
        """A value of its own that would lower its output's ripple at ``fundamental_hz`` by
        ``attenuation`` (a ratio above 1) or as near as it sensibly can; None: the kind has
        no such value (the default)."""
        return None

    def missing(self, values: Mapping[str, Any]) -> list[str]:
        """Keys that the other values make required."""
        return []

    def problems(self, values: Mapping[str, Any]) -> list[tuple[str, str]]:
        """(key, message) for values that are valid alone but not together."""
        return []
