"""A regulator's findings: dropout, minimum load, junction, input maximum, a better divider,
and the hot-parts caution.

The conditions of the junction's and the input maximum's findings are element-wise
(`junction_over`, `junction_near`, `dissipates`, `input_over`): the spread draws them per
trial as flags (`chainbudget.supplies.regulator.spread`).
"""

from __future__ import annotations

from typing import Any

import numpy as np
from numpy.typing import NDArray

from chainbudget.finding import Finding
from chainbudget.notation import amps, eng, sig, watts
from chainbudget.supplies.base import SupplyBudget
from chainbudget.supplies.regulator.figures import RegulatorFigures
from chainbudget.thresholds import (
    HOT_PART_DEGC,
    HOT_PART_W,
    JUNCTION_MARGIN_K,
    THIN_DROPOUT_MARGIN_V,
)


def junction_over(junction_degc: Any, max_junction_degc: float) -> NDArray[np.bool_]:
    """``regulator-junction``: the junction over its maximum, element-wise."""
    return np.asarray(np.asarray(junction_degc) > max_junction_degc, dtype=bool)


def junction_near(junction_degc: Any, max_junction_degc: float) -> NDArray[np.bool_]:
    """``regulator-junction-near``: within `JUNCTION_MARGIN_K` of its maximum and not over
    it, element-wise."""
    junction = np.asarray(junction_degc)
    near = junction > max_junction_degc - JUNCTION_MARGIN_K
    return np.asarray(near & ~junction_over(junction, max_junction_degc), dtype=bool)


def dissipates(dissipation_w: Any) -> NDArray[np.bool_]:
    """``regulator-no-thermal`` (with no thermal resistance given): anything dissipated,
    element-wise."""
    return np.asarray(np.asarray(dissipation_w) > 0.0, dtype=bool)


def input_over(input_max_v: Any, max_input_v: float) -> NDArray[np.bool_]:
    """``regulator-max-input``: the input's crest over the part's maximum, element-wise."""
    return np.asarray(np.asarray(input_max_v) > max_input_v, dtype=bool)


def regulator_rules(s: SupplyBudget, r: RegulatorFigures, ambient_degc: float) -> list[Finding]:
    """Every finding about one regulator (its ``supply`` is set by the caller)."""
    return [
        *_dropout(s, r),
        *_min_load(s, r),
        *_junction(s, r, ambient_degc),
        *_max_input(s, r),
        *_divider(s, r),
        *_hot(s, r),
    ]


def _dropout(s: SupplyBudget, r: RegulatorFigures) -> list[Finding]:
    if not r.in_regulation:
        d = r.dropout_suggestion
        ways = ""
        if d is not None and d.secondary_needed_vrms is not None:
            ways = (
                f': a secondary of at least {sig(d.secondary_needed_vrms, "V rms")} on "{d.parent}"'
            )
            if d.reservoir_needed_f is not None:
                ways += f", or a reservoir of at least {eng(d.reservoir_needed_f, 'F')}"
        needed = r.dropout_v + s.vout_v if d is None else d.input_needed_v
        return [
            Finding(
                "error",
                "regulator-dropout",
                None,
                f'regulator "{s.name}" drops out of regulation on the ripple troughs at low '
                f"line and heaviest load: its input falls to {sig(r.input_min_v, 'V')}, "
                f"{sig(-r.dropout_margin_v, 'V', 2)} short of the {sig(s.vout_v, 'V')} output plus "
                f"{sig(r.dropout_v, 'V')} dropout; raise the input to at least "
                f"{sig(needed, 'V')}{ways}, or use a lower-dropout type",
                {
                    "input_min_v": r.input_min_v,
                    "dropout_margin_v": r.dropout_margin_v,
                    "input_needed_v": needed,
                },
            )
        ]
    if r.dropout_margin_v < THIN_DROPOUT_MARGIN_V:
        return [
            Finding(
                "warning",
                "regulator-dropout-margin",
                None,
                f'regulator "{s.name}" stays in regulation at low line and heaviest load with '
                f"only {sig(r.dropout_margin_v, 'V', 2)} to spare (input trough "
                f"{sig(r.input_min_v, 'V')}); "
                f"allow at least {THIN_DROPOUT_MARGIN_V:g} V: raise the input by "
                f"{sig(THIN_DROPOUT_MARGIN_V - r.dropout_margin_v, 'V', 2)} or use a "
                "lower-dropout type",
                {"dropout_margin_v": r.dropout_margin_v},
            )
        ]
    return []


def _min_load(s: SupplyBudget, r: RegulatorFigures) -> list[Finding]:
    b = r.bleeder_suggestion
    if b is None or r.min_load_a is None:
        return []
    return [
        Finding(
            "warning",
            "regulator-min-load",
            None,
            f'regulator "{s.name}" delivers only {amps(s.idle_load_a)} at idle (divider '
            f"{amps(r.divider_a)} included) against its minimum load of "
            f"{amps(r.min_load_a)}: below it the output can drift up out of "
            f'regulation; add a bleeder = "{sig(b.resistance_ohm, "ohm")}" ({b.series}) '
            f"across the output: it draws {amps(b.current_a)} and dissipates "
            f"{watts(b.power_w)} (use a part rated for twice that)",
            {
                "idle_load_a": s.idle_load_a,
                "min_load_a": r.min_load_a,
                "min_load_margin_a": r.min_load_margin_a,
                "bleeder_ohm": b.resistance_ohm,
                "bleeder_w": b.power_w,
            },
        )
    ]


def _junction(s: SupplyBudget, r: RegulatorFigures, ambient_degc: float) -> list[Finding]:
    if r.junction_degc is None:
        if not dissipates(r.dissipation_w):
            return []
        return [
            Finding(
                "note",
                "regulator-no-thermal",
                None,
                f'regulator "{s.name}" dissipates {sig(r.dissipation_w, "W")} at high line and '
                "heaviest load; give theta_ja (or theta_jc and heatsink) to check its junction",
                {"dissipation_w": r.dissipation_w},
            )
        ]
    if junction_over(r.junction_degc, r.max_junction_degc):
        fix = "a heatsink"
        if r.heatsink_allowed_k_per_w is not None and r.heatsink_allowed_k_per_w > 0.0:
            fix = f"a heatsink (with interface) of at most {sig(r.heatsink_allowed_k_per_w, 'K/W')}"
        elif r.theta_allowed_k_per_w is not None:
            fix = (
                f"a heatsink bringing junction-to-ambient to at most "
                f"{sig(r.theta_allowed_k_per_w, 'K/W')}"
            )
        return [
            Finding(
                "error",
                "regulator-junction",
                None,
                f'regulator "{s.name}" dissipates {sig(r.dissipation_w, "W")} at high line '
                f"and heaviest load: its junction reaches {r.junction_degc:.0f} degC at "
                f"{ambient_degc:g} degC ambient, over its {r.max_junction_degc:.0f} degC "
                f"maximum; fit {fix}, or lower its input voltage",
                {
                    "dissipation_w": r.dissipation_w,
                    "junction_degc": r.junction_degc,
                    "max_junction_degc": r.max_junction_degc,
                },
            )
        ]
    if junction_near(r.junction_degc, r.max_junction_degc):
        return [
            Finding(
                "warning",
                "regulator-junction-near",
                None,
                f'regulator "{s.name}" runs its junction at {r.junction_degc:.0f} degC at high '
                f"line and heaviest load, within {JUNCTION_MARGIN_K:g} K of its "
                f"{r.max_junction_degc:.0f} degC maximum; a larger heatsink or a lower "
                "input voltage buys life and margin for a hot day",
                {"junction_degc": r.junction_degc, "max_junction_degc": r.max_junction_degc},
            )
        ]
    return []


def _max_input(s: SupplyBudget, r: RegulatorFigures) -> list[Finding]:
    if r.max_input_v is None or not input_over(r.input_max_v, r.max_input_v):
        return []
    return [
        Finding(
            "error",
            "regulator-max-input",
            None,
            f'regulator "{s.name}" sees {sig(r.input_max_v, "V")} at its input at high line and '
            f"no load, over its {sig(r.max_input_v, 'V')} maximum; lower the input (a smaller "
            "secondary) or use a higher-voltage type",
            {"input_max_v": r.input_max_v, "max_input_v": r.max_input_v},
        )
    ]


def _divider(s: SupplyBudget, r: RegulatorFigures) -> list[Finding]:
    dv = r.divider_suggestion
    if dv is None:  # only a better pair is news
        return []
    error = (s.vout_v - dv.target_v) / dv.target_v
    return [
        Finding(
            "note",
            "regulator-divider",
            None,
            f'regulator "{s.name}": the divider sets {sig(s.vout_v, "V", 4)} against the '
            f"{sig(dv.target_v, 'V', 4)} target ({error:+.2%}); the best {dv.series} pair with no "
            f'larger a lower resistor is upper = "{sig(dv.upper_ohm, "ohm")}", '
            f'lower = "{sig(dv.lower_ohm, "ohm")}", giving {sig(dv.vout_v, "V", 4)} '
            f"({dv.error_fraction:+.2%})",
            {
                "target_v": dv.target_v,
                "upper_ohm": dv.upper_ohm,
                "lower_ohm": dv.lower_ohm,
                "vout_v": dv.vout_v,
                "error_fraction": dv.error_fraction,
            },
        )
    ]


def _hot(s: SupplyBudget, r: RegulatorFigures) -> list[Finding]:
    junction = r.junction_degc
    hot = r.dissipation_w >= HOT_PART_W or (junction is not None and junction >= HOT_PART_DEGC)
    if not hot:
        return []
    at = "" if junction is None else f", junction about {junction:.0f} degC"
    return [
        Finding(
            "caution",
            "hot-regulator",
            None,
            f'Hot parts: regulator "{s.name}" dissipates up to {sig(r.dissipation_w, "W")}{at}; '
            "its tab and heatsink can burn on touch. Mount it where it cannot be touched "
            "or covered and check its temperature on the bench at high mains.",
            {"dissipation_w": r.dissipation_w, "junction_degc": junction},
        )
    ]
