"""The power end in the report: the JSON ``output`` and ``drive`` objects, per-node drive
figures, the output, heat and drive tables, and the heat and loudness cautions."""

from __future__ import annotations

import math
from dataclasses import asdict
from typing import Any

import numpy as np
from rich import box
from rich.table import Table

from chainbudget.budget import Budget
from chainbudget.budget.power import Dissipation, OutputFigures
from chainbudget.notation import DASH, eng

# Sustained exposure above about 85 dB(A) risks hearing damage; occupational-noise rules
# commonly take action at 80-85 dB(A) over a working day (common practice, no source).
LOUD_SPL_DB = 85.0


def output_json(out: OutputFigures) -> dict[str, Any]:
    """The contract's ``output`` keys first, then every other figure (SI units; degC)."""
    d = out.dissipation
    data: dict[str, Any] = {
        "clip_power_w": out.clip_power_w,
        "nominal_power_w": out.nominal_power_w,
        "max_spl_db": out.max_spl_db,
        "damping_factor": out.damping_factor,
        "device_dissipation_w": None if d is None else d.worst_device_w,
        "junction_degc": None if d is None else d.junction_degc,
    }
    rest = asdict(out)
    rest.pop("dissipation")
    data.update(rest)
    if d is not None:
        data["dissipation"] = asdict(d)
    return data


def json_part(budget: Budget) -> dict[str, Any]:
    """Top-level ``output`` (the contract's keys and more) and ``drive`` objects."""
    part: dict[str, Any] = {}
    if budget.output is not None:
        part["output"] = output_json(budget.output)
    if budget.drive is not None:
        part["drive"] = {
            "opamps": [asdict(op) for op in budget.drive.opamps],
            "handovers": [asdict(h) for h in budget.drive.handovers],
            "followers": [asdict(fo) for fo in budget.drive.followers],
        }
    return part


def node_json(budget: Budget, k: int) -> dict[str, Any]:
    """Per node: its rail currents, and the drive figures of its kind."""
    drive = budget.drive
    if drive is None:
        return {}
    stage = budget.nodes[k].stage
    part: dict[str, Any] = {}
    currents = next((c for c in drive.currents if c.stage == stage), None)
    if currents is not None and currents.positive is not None:
        part["rail_current_a"] = {
            "idle": currents.idle_a,
            "nominal": currents.nominal_a,
            "clip": currents.clip_a,
        }
    ops = [op for op in drive.opamps if op.stage == stage]
    if ops:
        part["drive_current_a"] = max(op.peak_a for op in ops)
        part["drive_worst_current_a"] = max(op.worst_a for op in ops)
        part["drive_limit_a"] = min(op.limit_a for op in ops)
    for h in drive.handovers:
        if h.stage == stage:
            part["base_current_a"] = h.base_current_a
    for fo in drive.followers:
        if fo.stage == stage:
            part["bias_current_a"] = fo.i_e_a
            part["cut_off_vpk"] = fo.cut_off_vpk
    return part


def _table(title: str, *columns: str) -> Table:
    table = Table(title=title, box=box.SIMPLE_HEAD, title_justify="left")
    for i, header in enumerate(columns):
        table.add_column(header, justify="left" if i == 0 else "right")
    return table


def _degc(value: float | None) -> str:
    return DASH if value is None else f"{value:.0f} degC"


def _db(value: float | None) -> str:
    if value is None:
        return DASH
    return f"{value:.1f} dB" if math.isfinite(value) else "no limit given"


def output_table(out: OutputFigures) -> Table:
    table = _table(
        f"Output into {out.load_ohm:g} ohm (reference frequency; sine)", "figure", "value", "note"
    )
    limited = math.isfinite(out.clip_power_w)
    table.add_row(
        "max output",
        f"{eng(out.clip_power_w, 'W')} ({eng(out.clip_vpk, 'Vpk')})"
        if limited
        else "no limit given (no stage declares one)",
        f"set by {out.clip_stage}: {out.clip_limit}" if out.clip_stage else DASH,
    )
    if out.output_stage_clip_power_w is not None and out.clip_stage != out.stage:
        table.add_row(
            "output stage alone",
            eng(out.output_stage_clip_power_w, "W"),
            f"{out.stage} on its own limit",
        )
    table.add_row(
        "nominal",
        f"{eng(out.nominal_power_w, 'W')} ({eng(out.nominal_vpk, 'Vpk')})",
        "nominal source level, controls as set",
    )
    table.add_row("max SPL at 1 m", _db(out.max_spl_db), "with the load's sensitivity")
    table.add_row("nominal SPL at 1 m", _db(out.nominal_spl_db), "")
    table.add_row("output impedance", eng(out.zout_ohm, "ohm"), "")
    table.add_row("damping factor", f"{out.damping_factor:.3g}", "Z_L / Z_out")
    if out.output_cap_corner_hz is not None:
        table.add_row(
            "output cap corner",
            eng(out.output_cap_corner_hz, "Hz"),
            f"-3 dB, {eng(out.output_cap_f, 'F')} into the load",
        )
    return table


def heat_table(d: Dissipation) -> Table:
    table = _table(
        f'Output stage "{d.stage}": power and heat per device (high-line rails '
        f"+{d.rail_upper_v:.3g}/-{d.rail_lower_v:.3g} V from the output's bias point)",
        "level",
        "V pk",
        "supply",
        "device",
        "junction",
    )
    rows = [
        ("idle", 0.0, d.idle_device_w, d.idle_junction_degc),
        ("nominal", d.nominal_vpk, d.nominal_device_w, d.nominal_junction_degc),
        ("worst (sine)", d.worst_vpk, d.worst_device_w, d.junction_degc),
        ("clip", d.levels_vpk[-1], d.clip_device_w, d.clip_junction_degc),
    ]
    for label, vpk, device, junction in rows:
        # the supply power is linear in V_pk between the tabulated levels
        supply = None if vpk is None else float(np.interp(vpk, d.levels_vpk, d.supply_w))
        table.add_row(label, eng(vpk, "V"), eng(supply, "W"), eng(device, "W"), _degc(junction))
    path = []
    if d.theta_jc_k_per_w is not None:
        path.append(f"theta_jc {d.theta_jc_k_per_w:g}")
    if d.theta_cs_k_per_w:
        path.append(f"theta_cs {d.theta_cs_k_per_w:g}")
    if d.heatsink_k_per_w is not None:
        shared = " shared" if d.heatsink_shared else ""
        path.append(f"heatsink{shared} {d.heatsink_k_per_w:g}")
    elif d.theta_ja_k_per_w is not None:
        path.append(f"theta_ja {d.theta_ja_k_per_w:g}")
    largest = DASH if d.max_heatsink_k_per_w is None else f"{d.max_heatsink_k_per_w:.3g} K/W"
    table.caption = (
        f"thermal path: {' + '.join(path) or 'not given'} K/W; max junction "
        f"{d.max_junction_degc:g} degC; largest heatsink for it: {largest}"
    )
    return table


def drive_table(budget: Budget) -> Table | None:
    drive = budget.drive
    if drive is None or not (drive.opamps or drive.handovers or drive.followers):
        return None
    table = _table(
        "Drive at max_level (peak currents)", "stage", "what", "needs", "has", "into", "note"
    )
    for op in drive.opamps:
        table.add_row(
            op.stage,
            f"op-amp {op.opamp}",
            eng(op.peak_a, "A"),
            eng(op.limit_a, "A"),
            eng(op.load_ohm, "ohm"),
            f"worst {eng(op.worst_a, 'A')} at {eng(op.worst_hz, 'Hz')}",
        )
    for fo in drive.followers:
        table.add_row(
            fo.stage,
            "follower bias",
            DASH,
            eng(fo.i_e_a, "A"),
            DASH,
            f"cuts off at {eng(fo.cut_off_vpk, 'Vpk')}; {eng(fo.dissipation_w, 'W')}",
        )
    for h in drive.handovers:
        table.add_row(
            h.driver,
            f'drives "{h.stage}" to clip',
            eng(h.needed_a, "A"),
            eng(h.available_a, "A"),
            DASH,
            f"base current {eng(h.base_current_a, 'A')}" + ("; SHORT" if h.shortfall else ""),
        )
    return table


def currents_table(budget: Budget) -> Table | None:
    drive = budget.drive
    if drive is None or not any(c.idle_a or c.clip_a for c in drive.currents):
        return None
    table = _table("Stage currents from each rail (mean)", "stage", "idle", "nominal", "clip")
    for c in drive.currents:
        if c.positive is None:  # a passive stage draws nothing
            continue
        table.add_row(c.stage, eng(c.idle_a, "A"), eng(c.nominal_a, "A"), eng(c.clip_a, "A"))
    return table


def tables(budget: Budget) -> list[Table]:
    """Output (when the chain ends in a push-pull stage or the load has a sensitivity), heat,
    drive and stage currents."""
    found: list[Table] = []
    out = budget.output
    if out is not None and (out.dissipation is not None or out.max_spl_db is not None):
        found.append(output_table(out))
        if out.dissipation is not None:
            found.append(heat_table(out.dissipation))
    for table in (drive_table(budget), currents_table(budget)):
        if table is not None:
            found.append(table)
    return found


def cautions(budget: Budget) -> list[str]:
    """Hot heatsinks, and loud listening near the maximum SPL."""
    found = []
    out = budget.output
    if out is not None and out.dissipation is not None:
        d = out.dissipation
        hot = "" if d.heatsink_degc is None else f" (about {d.heatsink_degc:.0f} degC at worst)"
        found.append(
            f"Hot parts: the output devices dissipate up to {d.worst_device_w:.3g} W each and "
            f"their heatsink runs hot{hot}; metal that hot can burn on touch. Mount it where "
            "it cannot be touched or covered, keep air flowing, and check the temperature on "
            "the bench before closing the box."
        )
    spl = None if out is None else out.max_spl_db
    if out is not None and spl is not None and not math.isfinite(spl):
        spl = out.nominal_spl_db  # no stage limits the output: the nominal level is known
    if spl is not None and math.isfinite(spl) and spl >= LOUD_SPL_DB:
        found.append(
            f"Loudness: this amplifier can reach about {spl:.0f} dB SPL at 1 m. "
            f"Sustained listening above about {LOUD_SPL_DB:g} dB(A) damages hearing; keep "
            "listening levels well below the maximum, and follow local rules on noise at "
            "work and in public places."
        )
    return found
