"""The ``rectified`` kind: fields, states and remedies of a capacitor-input rectifier."""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

from chainbudget import fields as f
from chainbudget.eseries import largest_at_most, smallest_at_least
from chainbudget.finding import Finding
from chainbudget.notation import eng
from chainbudget.supplies.base import (
    NO_LOAD,
    RippleRemedy,
    RippleSpread,
    Supply,
    SupplyBudget,
    SupplyContext,
    SupplyKind,
    SupplyLoad,
    SupplySpread,
    SupplyState,
    TroughRemedy,
)
from chainbudget.supplies.rectified.circuit import (
    NEGATIVE_SUFFIX,
    reservoir_for_trough,
    secondary_for_trough,
    solve_rails,
    transformer,
)
from chainbudget.supplies.rectified.figures import RectifiedFigures, rectified_figures
from chainbudget.supplies.rectified.rules import rectified_rules
from chainbudget.supplies.rectified.spread import SPREAD_FIELDS, rectified_spread
from chainbudget.supplymath import microfarads
from chainbudget.units import UnitParseError, parse_fraction, parse_level

#: The most a reservoir remedy multiplies the reservoir by: past a few times, a filter or a
#: regulator after it is the cheaper remedy (ours).
RESERVOIR_MAX_FACTOR = 4.7


def _read_tolerance(value: object) -> float:
    number = parse_fraction(value)
    if not 0.0 <= number < 1.0:
        raise UnitParseError(
            value, 'a mains tolerance from 0 up to (not including) 100 %, e.g. "10 %"'
        )
    return number


TOLERANCE = f.FieldKind("fraction or %", _read_tolerance, float)
# The secondary is an rms voltage: "15 V" and "15 Vrms" are the same, "21.2 Vpk" too.
SECONDARY = f.FieldKind("V rms", parse_level, lambda v: f"{v!r} Vrms")


class Rectified(SupplyKind):
    """Capacitor-input rectifier from a mains transformer, solved cycle by cycle.

    Notes
    -----
    The transformer is its open-circuit secondary behind its winding resistance, the diodes
    a fixed drop, the reservoir charged in pulses against the load as a waveform (the
    stages' steady current and the half-sine pulses of their class-B outputs), in periodic
    steady state at each mains corner (:mod:`chainbudget.supplies.rectified.circuit`,
    :mod:`chainbudget.rectifier`). The state: trough = the lowest voltage at low line and
    heaviest load (over the relative phases of signal and mains); nominal = the mean at
    nominal line and load; crest = high line, no load; the means at high line under the
    heaviest and the idle load. The constant-current ripple I/(2 f C) (I/(f C) half wave;
    Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 9.5.2, from memory) is the limit
    this approaches as the winding resistance goes to zero and the reservoir grows
    (tests/test_rectifier.py).
    """

    kind = "rectified"
    summary = "mains transformer, rectifier and reservoir capacitor (unregulated)"
    fields = (
        f.Field(
            "secondary", SECONDARY, "secondary, V rms at nominal mains, rated load (each half)"
        ),
        f.Field("mains_tolerance", TOLERANCE, "mains tolerance either way (low/high line)", 0.1),
        f.Field("line_frequency", f.FREQUENCY, "mains frequency (50 Hz: the larger ripple)", 50.0),
        f.Field(
            "bridge_drop",
            f.VOLTAGE_OR_ZERO,
            "diode drop at peak current (default 1.8 V bridge, 0.9 V half-wave or split)",
            None,
        ),
        f.Field("reservoir", f.CAPACITANCE, "reservoir capacitor (each rail's)"),
        f.Field("regulation", f.FRACTION, "transformer no-load rise over rated-load voltage", 0.0),
        f.Field(
            "rated_current", f.POSITIVE_CURRENT, "transformer rated current, rms (each half)", None
        ),
        f.Field(
            "winding_resistance",
            f.RESISTANCE_OR_ZERO,
            "winding resistance referred to the secondary (default regulation x secondary / "
            "rated_current)",
            None,
        ),
        f.Field("half_wave", f.FLAG, "half-wave rectifier (one recharge per mains cycle)", False),
        f.Field(
            "split",
            f.FLAG,
            'centre-tapped: two rails, this name (positive) and "<name>.neg" (negative)',
            False,
        ),
        f.Field(
            "reservoir_ripple_rating",
            f.POSITIVE_CURRENT,
            "the reservoir's rated ripple current, rms",
            None,
        ),
    )

    def problems(self, values: Mapping[str, Any]) -> list[tuple[str, str]]:
        if values.get("split") and values.get("half_wave"):
            return [("split", "a centre-tapped supply charges on both half cycles; drop half_wave")]
        drop, secondary = values.get("bridge_drop"), values.get("secondary")
        if drop is not None and secondary is not None:
            # the highest the winding ever reaches: high line, no load (open circuit)
            peak = (
                math.sqrt(2.0)
                * float(secondary)
                * (1.0 + float(values.get("regulation") or 0.0))
                * (1.0 + float(values.get("mains_tolerance") or 0.0))
            )
            if float(drop) >= peak:
                return [
                    (
                        "bridge_drop",
                        f"got {eng(float(drop), 'V')}, expected less than the winding's "
                        f"highest peak ({eng(peak, 'V')} at high line, no load): the diodes "
                        "would never conduct",
                    )
                ]
        return []

    def rails(self, supply: Supply) -> tuple[str, ...]:
        if supply.values.get("split"):
            return (supply.name, supply.name + NEGATIVE_SUFFIX)
        return (supply.name,)

    def state(self, supply: Supply, parent: SupplyState | None, load: SupplyLoad) -> SupplyState:
        return self.rail_states(supply, parent, {supply.name: load})[supply.name]

    def rail_states(
        self, supply: Supply, parent: SupplyState | None, loads: Mapping[str, SupplyLoad]
    ) -> dict[str, SupplyState]:
        tr = transformer(supply)
        mine = {rail: loads.get(rail, NO_LOAD) for rail in self.rails(supply)}
        solved = solve_rails(tr, mine)
        return {
            rail: SupplyState(
                trough_v=s.trough_v,
                nominal_v=s.nominal_v,
                crest_v=s.crest_v,
                high_heavy_v=s.high_heavy_v,
                high_idle_v=s.high_idle_v,
                ripple_vpp=s.ripple_vpp,
                collapsed=s.collapsed,
                ripple_hz=s.ripple_hz,
                harmonics_vpk=s.harmonics_vpk,
            )
            for rail, s in solved.items()
        }

    def spread_fields(self, supply: Supply) -> tuple[str, ...]:
        # a split supply's one reservoir field is both rails' capacitor: drawn once
        return SPREAD_FIELDS

    def rail_spreads(
        self,
        supply: Supply,
        drawn: Mapping[str, Any],
        nominals: Mapping[str, SupplyBudget],
        parent_low_v: Any = None,
        bounds: Mapping[str, tuple[float, float]] | None = None,
        parent_ripple: RippleSpread | None = None,
        *,
        ambient_degc: float | None = None,
        about: Mapping[str, SupplyLoad] | None = None,
    ) -> dict[str, SupplySpread]:
        """Every rail's trough and ripple per trial (a split supply's two, solved together
        as `rail_states` solves them; `chainbudget.supplies.rectified.spread`), a load per
        trial expanded about ``about``'s."""
        loads = {rail: nominals[rail].load for rail in self.rails(supply)}
        return rectified_spread(supply, drawn, loads, bounds, about)

    def figures(self, context: SupplyContext) -> RectifiedFigures:
        return rectified_figures(context)

    def rules(self, supply: SupplyBudget, ambient_degc: float) -> list[Finding]:
        assert isinstance(supply.own, RectifiedFigures)
        return rectified_rules(supply, supply.own)

    def ripple_remedy(
        self, supply: Supply, attenuation: float, fundamental_hz: float
    ) -> RippleRemedy | None:
        """A larger reservoir: the ripple of a capacitor-input rectifier falls about as 1/C
        (the constant-current estimate I/(2 f C)), so C times the attenuation, at most
        `RESERVOIR_MAX_FACTOR` times, rounded to E6; its spectrum is solved again."""
        old = supply.number("reservoir")
        c = smallest_at_least(old * attenuation, "E6")
        if c > old * RESERVOIR_MAX_FACTOR:
            c = largest_at_most(old * RESERVOIR_MAX_FACTOR, "E6")
        if c <= old:
            return None
        return RippleRemedy("reservoir", c, microfarads(c))

    def trough_remedy(
        self, supply: Supply, trough_v: float, load: SupplyLoad, rail: str | None = None
    ) -> TroughRemedy:
        """The secondary, or the reservoir, that alone brings the low-line trough under the
        same load to ``trough_v`` (root finding on the solved rectifier)."""
        tr = transformer(supply)
        return TroughRemedy(
            secondary_for_trough(tr, load, trough_v), reservoir_for_trough(tr, load, trough_v)
        )
