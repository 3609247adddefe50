"""The supplies in the report: the JSON ``supplies`` list and the supplies table."""

from __future__ import annotations

import math
from dataclasses import asdict
from typing import Any

from rich import box
from rich.table import Table

from chainbudget.budget import Budget
from chainbudget.budget.supplies import SupplyFigures
from chainbudget.notation import DASH, amps, eng


def supply_json(s: SupplyFigures) -> dict[str, Any]:
    """One supply: the contract's keys first, then every other figure (SI; degC)."""
    data = asdict(s)
    head = (
        "name",
        "kind",
        "vout_v",
        "idle_load_a",
        "max_load_a",
        "dropout_margin_v",
        "min_load_margin_a",
        "dissipation_w",
        "junction_degc",
        "ripple_vpp",
        "input_min_v",
        "input_max_v",
    )
    return {**{key: data[key] for key in head}, **data}


def json_part(budget: Budget) -> dict[str, Any]:
    return {"supplies": [supply_json(s) for s in budget.supplies]}


def _range(low: float | None, high: float | None) -> str:
    if low is None or high is None:
        return DASH
    return f"{low:.3g}..{high:.3g} V"


def _temperature(value: float | None) -> str:
    return DASH if value is None else f"{value:.0f} degC"


def tables(budget: Budget) -> list[Table]:
    """The supplies table (and a run-time table when a battery gives its capacity)."""
    if not budget.supplies:
        return []
    table = Table(
        title="Supplies (out: low-line trough at heaviest load .. high-line crest, no load)",
        box=box.SIMPLE_HEAD,
        title_justify="left",
    )
    for header, justify in (
        ("supply", "left"),
        ("kind", "left"),
        ("from", "left"),
        ("out", "right"),
        ("out range", "right"),
        ("ripple pp", "right"),
        ("load idle", "right"),
        ("load max", "right"),
        ("input range", "right"),
        ("dropout margin", "right"),
        ("min-load margin", "right"),
        ("dissipation", "right"),
        ("junction", "right"),
    ):
        table.add_column(header, justify=justify)  # type: ignore[arg-type]
    for s in budget.supplies:
        table.add_row(
            s.name,
            s.kind,
            s.parent or DASH,
            eng(s.vout_v, "V"),
            _range(s.output_min_v, s.output_max_v),
            eng(s.ripple_vpp, "V"),
            eng(s.idle_load_a, "A"),
            eng(s.max_load_a, "A"),
            _range(s.input_min_v, s.input_max_v),
            eng(s.dropout_margin_v, "V"),
            eng(s.min_load_margin_a, "A"),
            eng(s.dissipation_w, "W"),
            _temperature(s.junction_degc),
        )
    found = [table, _checks_table(budget)]
    batteries = [s for s in budget.supplies if s.capacity_ah is not None]
    if batteries:
        runtime = Table(
            title="Battery run time (capacity / mean drain; ideal)",
            box=box.SIMPLE_HEAD,
            title_justify="left",
        )
        for header in ("supply", "capacity", "drain idle", "drain nominal", "idle", "nominal"):
            runtime.add_column(header, justify="left" if header == "supply" else "right")
        for s in batteries:
            runtime.add_row(
                s.name,
                f"{s.capacity_ah:g} Ah",
                eng(s.idle_load_a, "A"),
                eng(s.nominal_load_a, "A"),
                _hours(s.runtime_idle_h),
                _hours(s.runtime_nominal_h),
            )
        found.append(runtime)
    return found


def _hours(value: float | None) -> str:
    if value is None or not math.isfinite(value):
        return DASH
    return f"{value:.3g} h"


def _checks(s: SupplyFigures) -> list[tuple[str, str, str]]:
    """(what, figure, limit) rows of one supply."""
    rows: list[tuple[str, str, str]] = []
    if s.kind == "rectified":
        rows.append(("ripple at heaviest load", f"{eng(s.ripple_vpp, 'V')} p-p", DASH))
        if s.transformer_load_fraction is not None:
            rows.append(
                ("transformer load (dc)", f"{s.transformer_load_fraction:.0%} of rated", DASH)
            )
    if s.kind == "dc":
        rows.append(("sag at heaviest load", eng(s.sag_v, "V"), DASH))
    if s.kind == "regulator":
        needed = None if s.dropout_v is None else s.vout_v + s.dropout_v
        rows.append(
            (
                "input trough, low line, heaviest load",
                eng(s.input_min_v, "V"),
                f"needs {eng(needed, 'V')}",
            )
        )
        rows.append(
            (
                "output current at idle",
                f"{amps(s.idle_load_a)} (divider {amps(s.divider_a)}, bleeder {amps(s.bleeder_a)})",
                DASH if s.min_load_a is None else f"min {amps(s.min_load_a)}",
            )
        )
        rows.append(("own current from the input", amps(s.own_current_a), DASH))
        rows.append(
            (
                "dissipation, high line",
                f"{eng(s.dissipation_full_w, 'W')} heaviest, {eng(s.dissipation_idle_w, 'W')} idle",
                DASH,
            )
        )
        rows.append(
            (
                "junction, heaviest / idle",
                f"{_temperature(s.junction_degc)} / {_temperature(s.junction_idle_degc)}",
                f"max {_temperature(s.max_junction_degc)}",
            )
        )
        rows.append(
            (
                "input crest, high line, no load",
                eng(s.input_max_v, "V"),
                DASH if s.max_input_v is None else f"max {eng(s.max_input_v, 'V')}",
            )
        )
        rows.append(("output ripple", f"{eng(s.ripple_vpp, 'V')} p-p", DASH))
        if s.bleeder_suggestion is not None:
            b = s.bleeder_suggestion
            rows.append(
                (
                    "suggested bleeder",
                    f"{eng(b.resistance_ohm, 'ohm')} {b.series}, {eng(b.power_w, 'W')}",
                    DASH,
                )
            )
        d = s.divider_suggestion
        error = 0.0 if d is None else (s.vout_v - d.target_v) / d.target_v
        if d is not None and abs(d.error_fraction) < abs(error):  # only a better pair
            rows.append(
                (
                    f"divider against the {eng(d.target_v, 'V', 4)} target",
                    f"{eng(s.vout_v, 'V', 4)} ({error:+.2%}); best {d.series}: upper "
                    f"{eng(d.upper_ohm, 'ohm')}, lower {eng(d.lower_ohm, 'ohm')}, "
                    f"{eng(d.vout_v, 'V', 4)} ({d.error_fraction:+.2%})",
                    DASH,
                )
            )
        if s.dropout_suggestion is not None:
            d2 = s.dropout_suggestion
            rows.append(
                (
                    "input needed",
                    f"{eng(d2.input_needed_v, 'V')} (secondary "
                    f"{eng(d2.secondary_needed_vrms, 'Vrms')}, or reservoir "
                    f"{eng(d2.reservoir_needed_f, 'F')})",
                    DASH,
                )
            )
    return rows


def _checks_table(budget: Budget) -> Table:
    table = Table(title="Supply checks", box=box.SIMPLE_HEAD, title_justify="left")
    for header in ("supply", "figure", "value", "limit"):
        table.add_column(header)
    for s in budget.supplies:
        for what, value, limit in _checks(s):
            table.add_row(s.name, what, value, limit)
    return table
