"""``regulator``: a linear series regulator, fixed or set by a two-resistor divider."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any, cast

import numpy as np
from numpy.typing import NDArray

from chainbudget import fields as f
from chainbudget.finding import Finding
from chainbudget.supplies.base import (
    RippleSpread,
    Supply,
    SupplyBudget,
    SupplyContext,
    SupplyKind,
    SupplyLoad,
    SupplySpread,
    SupplyState,
)
from chainbudget.supplies.regulator.figures import RegulatorFigures, regulator_figures
from chainbudget.supplies.regulator.rules import regulator_rules
from chainbudget.supplies.regulator.spread import (
    SPREAD_FIELDS,
    follow_input,
    regulator_spread,
    set_point,
)
from chainbudget.supplymath import adjustable_output, divider_current, ripple_after_regulator
from chainbudget.units import UnitParseError

# A classic three-terminal linear regulator needs about 2 V from input to output (common
# practice, no source); a maximum junction of 125 degC is the usual rating of such parts
# (common practice, no source). Both are only defaults: give the part's own figures.
DEFAULT_DROPOUT_V = 2.0
DEFAULT_MAX_JUNCTION_DEGC = 125.0
SERIES = ("E6", "E12", "E24", "E48", "E96")


def _read_nonzero_voltage(value: object) -> float:
    number = f.VOLTAGE.read(value)
    if number == 0.0:
        raise UnitParseError(value, "a voltage other than zero")
    return number


# Output and reference of a negative regulator may be written negative ("-15 V"); the
# model works in magnitudes, like a dc supply named as a negative rail.
NONZERO_VOLTAGE = f.FieldKind("V", _read_nonzero_voltage, f.VOLTAGE.write)


def rejection_roll_off(
    factor: float, hz: float, fundamental_hz: float | None, corner_hz: float | None
) -> float:
    """The share of the input's ripple at ``hz`` a regulator passes: ``factor`` (its
    rejection as a ratio, given at the ripple's fundamental) rising at 20 dB/decade above
    ``corner_hz``, never above 1.

    Notes
    -----
    factor |1 + j f/f_c| / |1 + j f_r/f_c|, f_r the fundamental: a first-order roll-off of
    the rejection (the contract's ``ripple_rejection_corner``), normalised so that the
    given rejection holds at f_r; a real, positive factor (a data-sheet magnitude). A
    regulator never adds ripple, so the factor stops at 1.
    """
    if corner_hz is None or fundamental_hz is None:
        return factor
    rise = abs(1.0 + 1j * hz / corner_hz) / abs(1.0 + 1j * fundamental_hz / corner_hz)
    return min(factor * rise, 1.0)


class Regulator(SupplyKind):
    """Linear series regulator fed from another supply.

    Notes
    -----
    Output: ``output`` (fixed), or V_out = V_ref (1 + upper/lower) + I_adj upper (adjustable;
    ``lower`` is the resistor across the reference, output pin to adjust pin, ``upper`` the
    one from the adjust pin to ground; :func:`chainbudget.supplymath.adjustable_output`,
    Horowitz & Hill, The Art of Electronics, 3rd ed., ch. 9, from memory). With a divider,
    a given ``output`` is the target the divider is meant to set.

    Current: the output pin delivers the external load plus the divider current
    V_ref/lower plus any ``bleeder`` (V_out/bleeder); the regulator takes that plus its own
    ``quiescent`` current (default: the adjust current of an adjustable type, 0 for a fixed
    one) from its input.

    In regulation (input trough >= V_out + dropout) the output is V_out at every corner; out
    of regulation it follows its input less the dropout. Output ripple: input ripple times
    10^(-rejection/20) (:func:`chainbudget.supplymath.ripple_after_regulator`); out of
    regulation the output also dips with the input's troughs, by V_out - (trough - dropout).
    The rejection holds at the ripple's fundamental; with ``ripple_rejection_corner`` it
    falls at 20 dB/decade above that corner (`rejection_roll_off`), harmonic by harmonic.
    """

    kind = "regulator"
    summary = "linear series regulator, fixed or adjustable (divider)"
    needs_parent = True
    regulates = True
    fields = (
        f.Field("output", NONZERO_VOLTAGE, "fixed output (with a divider: the target)", None),
        f.Field(
            "reference",
            NONZERO_VOLTAGE,
            "adjustable: output-to-adjust reference",
            None,
            tolerance="references",
        ),
        f.Field("adjust_current", f.CURRENT, "adjustable: current out of the adjust pin", 0.0),
        f.Field("upper", f.RESISTANCE, "adjustable: adjust pin to ground", None),
        f.Field("lower", f.RESISTANCE, "adjustable: output to adjust pin (across reference)", None),
        f.Field("divider_series", f.choice(*SERIES), "E series for a suggested divider", "E96"),
        f.Field("dropout", f.VOLTAGE_OR_ZERO, "least input-output difference", DEFAULT_DROPOUT_V),
        f.Field("min_load", f.CURRENT, "least output current to regulate (divider counts)", 0.0),
        f.Field(
            "quiescent",
            f.CURRENT,
            "input current not delivered to the output (default: adjust_current, or 0)",
            None,
        ),
        f.Field(
            "ripple_rejection",
            f.DECIBELS,
            "ripple rejection at the ripple frequency (twice the mains from a bridge)",
            None,
        ),
        f.Field(
            "ripple_rejection_corner",
            f.FREQUENCY,
            "above it the ripple rejection falls at 20 dB/decade (none: flat)",
            None,
        ),
        f.Field("theta_ja", f.THERMAL_RESISTANCE, "junction to ambient, free air", None),
        f.Field("theta_jc", f.THERMAL_RESISTANCE, "junction to case (with heatsink)", None),
        f.Field("heatsink", f.THERMAL_RESISTANCE, "case to ambient: interface + sink", None),
        f.Field(
            "max_junction",
            f.TEMPERATURE,
            "greatest junction temperature",
            DEFAULT_MAX_JUNCTION_DEGC,
        ),
        f.Field("max_input", f.POSITIVE_VOLTAGE, "greatest input voltage", None),
        f.Field("bleeder", f.RESISTANCE, "resistor across the output (minimum load)", None),
    )

    def missing(self, values: Mapping[str, Any]) -> list[str]:
        found: list[str] = []
        divider = [key for key in ("reference", "upper", "lower") if values.get(key) is not None]
        if divider:
            found += [key for key in ("reference", "upper", "lower") if values.get(key) is None]
        elif values.get("output") is None:
            found.append("output")
        if values.get("theta_jc") is not None and values.get("heatsink") is None:
            found.append("heatsink")
        if values.get("heatsink") is not None and values.get("theta_jc") is None:
            found.append("theta_jc")
        return found

    # --- the model's pieces ------------------------------------------------------------

    def adjustable(self, supply: Supply) -> bool:
        return supply.values.get("reference") is not None

    def set_output(self, supply: Supply) -> float:
        """Output voltage in regulation, V."""
        if self.adjustable(supply):
            return float(
                adjustable_output(
                    abs(supply.number("reference")),
                    supply.number("adjust_current"),
                    supply.number("upper"),
                    supply.number("lower"),
                )
            )
        return abs(supply.number("output"))

    def reference(self, supply: Supply) -> float | None:
        """Reference voltage magnitude of an adjustable regulator, V (None when fixed)."""
        reference = supply.optional("reference")
        return None if reference is None else abs(reference)

    def target(self, supply: Supply) -> float | None:
        """The output an adjustable regulator's divider is meant to set, V, if given."""
        target = supply.optional("output")
        return abs(target) if target is not None and self.adjustable(supply) else None

    def divider_current(self, supply: Supply) -> float:
        """Current the divider takes from the output, V_ref / lower, A (0 when fixed)."""
        if not self.adjustable(supply):
            return 0.0
        return float(divider_current(abs(supply.number("reference")), supply.number("lower")))

    def bleeder_current(self, supply: Supply) -> float:
        """Current in the bleeder resistor at the set output, A (0 without one)."""
        bleeder = supply.optional("bleeder")
        return 0.0 if bleeder is None else self.set_output(supply) / bleeder

    def own_current(self, supply: Supply) -> float:
        """Current taken from the input and not delivered to the output, A."""
        quiescent = supply.optional("quiescent")
        if quiescent is not None:
            return quiescent
        return supply.number("adjust_current") if self.adjustable(supply) else 0.0

    def delivered(self, supply: Supply, load: SupplyLoad) -> SupplyLoad:
        """Output-pin current: the external load plus divider and bleeder, A."""
        return load.plus(self.divider_current(supply) + self.bleeder_current(supply))

    def theta(self, supply: Supply) -> float | None:
        """Junction-to-ambient thermal resistance, K/W: theta_jc + heatsink when mounted on
        one, else theta_ja; None when neither is given."""
        theta_jc = supply.optional("theta_jc")
        if theta_jc is not None:
            return theta_jc + supply.number("heatsink")
        return supply.optional("theta_ja")

    # --- SupplyKind -----------------------------------------------------------------------

    def output_voltage(self, supply: Supply, state: SupplyState) -> float:
        return self.set_output(supply)

    def figures(self, context: SupplyContext) -> RegulatorFigures:
        return regulator_figures(self, context)

    def rules(self, supply: SupplyBudget, ambient_degc: float) -> list[Finding]:
        assert isinstance(supply.own, RegulatorFigures)
        return regulator_rules(supply, supply.own, ambient_degc)

    def spread_fields(self, supply: Supply) -> tuple[str, ...]:
        keys = SPREAD_FIELDS if self.adjustable(supply) else ("bleeder",)
        return tuple(key for key in keys if supply.values.get(key) is not None)

    def spread(
        self,
        supply: Supply,
        drawn: Mapping[str, Any],
        nominal: SupplyBudget,
        parent_low_v: Any = None,
        bounds: Mapping[str, tuple[float, float]] | None = None,
        parent_ripple: RippleSpread | None = None,
        *,
        ambient_degc: float | None = None,
    ) -> SupplySpread:
        return regulator_spread(
            self, supply, drawn, nominal, parent_low_v, parent_ripple, ambient_degc
        )

    def input_load(self, supply: Supply, load: SupplyLoad) -> SupplyLoad:
        return self.delivered(supply, load).plus(self.own_current(supply))

    def trial_draw(
        self,
        supply: Supply,
        drawn: Mapping[str, NDArray[np.float64]],
        load: SupplyLoad,
        parent: SupplyState,
    ) -> SupplyLoad | None:
        """`input_load` with each trial's divider and bleeder currents
        (`trial_delivered`)."""
        delivered = self.trial_delivered(supply, drawn, load)
        return None if delivered is None else delivered.plus(self.own_current(supply))

    def trial_delivered(
        self, supply: Supply, drawn: Mapping[str, NDArray[np.float64]], load: SupplyLoad
    ) -> SupplyLoad | None:
        """`delivered` with each trial's divider and bleeder currents
        (`chainbudget.supplies.regulator.spread.set_point`)."""
        if not drawn.keys() & set(self.spread_fields(supply)):
            return None
        _, divider_a, bleeder_a = set_point(self, supply, drawn)
        return load.plus(cast(float, divider_a + bleeder_a))

    def state(self, supply: Supply, parent: SupplyState | None, load: SupplyLoad) -> SupplyState:
        assert parent is not None, "a regulator always has a parent (the loader sees to it)"
        vout = self.set_output(supply)
        dropout = supply.number("dropout")

        def follow(vin: float) -> float:
            return float(follow_input(vout, vin, dropout))

        trough = follow(parent.trough_v)
        rejection = supply.optional("ripple_rejection")
        ripple: float | None = None
        harmonics: tuple[complex, ...] = ()
        if rejection is not None and parent.ripple_vpp is not None:
            ripple = float(ripple_after_regulator(parent.ripple_vpp, rejection))
            ripple += vout - trough  # zero in regulation
            # in regulation the rejection applies to every harmonic (a real, positive
            # factor: a data-sheet magnitude); out of it the ripple passes unrejected
            factor = float(ripple_after_regulator(1.0, rejection)) if trough >= vout else 1.0
            corner = supply.optional("ripple_rejection_corner")
            harmonics = parent.through(
                lambda hz: rejection_roll_off(factor, hz, parent.ripple_hz, corner)
            )
        return SupplyState(
            trough_v=trough,
            nominal_v=follow(parent.nominal_v),
            crest_v=follow(parent.crest_v),
            high_heavy_v=follow(parent.high_heavy_v),
            high_idle_v=follow(parent.high_idle_v),
            ripple_vpp=ripple,
            collapsed=parent.collapsed,
            ripple_hz=parent.ripple_hz if harmonics else None,
            harmonics_vpk=harmonics,
        )
