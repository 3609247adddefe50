"""The budget as one JSON-ready object (the contract's keys; SI units, dB where named)."""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import numpy as np

from chainbudget.budget import Budget, compute
from chainbudget.budget.levels import NodeLevels
from chainbudget.chainfile import Chain
from chainbudget.findings import Finding
from chainbudget.report import dcbias, hum, noise, power, supplies


def json_ready(value: Any) -> Any:
    """Plain JSON data: floats (numpy's too) finite or None, tuples as lists, nested alike."""
    if isinstance(value, float | np.floating):
        return float(value) if math.isfinite(value) else None
    if isinstance(value, dict):
        return {key: json_ready(item) for key, item in value.items()}
    if isinstance(value, list | tuple):
        return [json_ready(item) for item in value]
    return value


def _node(node: NodeLevels) -> dict[str, Any]:
    """The generic level figures of one node, controls named ``"stage.control"``."""
    worst = node.worst
    return {
        "stage": node.stage,
        "kind": node.kind,
        "gain_db": node.gain_db,
        "total_gain_db": node.total_gain_db,
        "level_vrms": node.level_vrms,
        "max_level_vrms": node.max_level_vrms,
        "clip_vpk": node.clip_vpk,
        "limited_by": node.limited_by,
        "headroom_db": node.headroom_db,
        "nominal_headroom_db": node.nominal_headroom_db,
        "worst_headroom_db": None if worst is None else worst.headroom_db,
        "worst_at": None
        if worst is None
        else {
            "frequency_hz": worst.frequency_hz,
            "controls": {f"{stage}.{key}": value for (stage, key), value in worst.controls.items()},
            "limited_by": worst.limited_by,
        },
        "zout_ohm": node.zout_ohm,
        "zload_ohm": node.zload_ohm,
    }


# Areas of the budget add their parts here: NODE_PARTS entries give extra keys for node k,
# TOP_PARTS entries extra top-level keys.
NODE_PARTS: list[Callable[[Budget, int], dict[str, Any]]] = [
    noise.node_json,
    power.node_json,
    dcbias.node_json,
    hum.node_json,
]
TOP_PARTS: list[Callable[[Budget], dict[str, Any]]] = [
    noise.json_part,
    hum.json_part,
    supplies.json_part,
    power.json_part,
]


def finding_json(finding: Finding) -> dict[str, Any]:
    return {
        "severity": finding.severity,
        "code": finding.code,
        "stage": finding.stage,
        "supply": finding.supply,
        "message": finding.message,
        "figures": dict(finding.figures),
    }


def budget_json(budget: Budget, found: list[Finding]) -> dict[str, Any]:
    """The whole report as plain data."""
    nodes = []
    for k, node in enumerate(budget.nodes):
        entry = _node(node.levels)
        for part in NODE_PARTS:
            entry.update(part(budget, k))
        nodes.append(entry)
    data: dict[str, Any] = {
        "title": budget.title,
        "file": budget.file,
        "reference_hz": budget.reference_hz,
        "band_hz": list(budget.band_hz),
        "ambient_degc": budget.ambient_degc,
        "source": {
            "level_vrms": budget.source_level_vrms,
            "max_level_vrms": budget.source_max_level_vrms,
            "impedance_ohm": budget.source_impedance_ohm,
            "input_impedance_ohm": budget.input_impedance_ohm,
            "loss_db": budget.source_loss_db,
            # A reactive source (docs/format.md): impedance_ohm is |Z_S| at the reference.
            "capacitance_f": budget.source_capacitance_f,
            "inductance_h": budget.source_inductance_h,
            "worst_loss_db": budget.source_loss_worst_db,
            "worst_loss_hz": budget.source_loss_worst_hz,
        },
        "nodes": nodes,
        "first_clip": budget.first_clip,
        "output_stage": budget.output_stage,
    }
    for top_part in TOP_PARTS:
        data.update(top_part(budget))
    data["findings"] = [finding_json(fi) for fi in found]
    return json_ready(data)


def report_json(chain: Chain) -> dict[str, Any]:
    """The JSON report of a chain, as ``chainbudget check FILE --format json`` prints it."""
    budget = compute(chain)
    return budget_json(budget, list(budget.findings))


def without_nulls(value: Any) -> Any:
    """The same data with every None dropped (TOML has no null)."""
    if isinstance(value, dict):
        return {k: without_nulls(v) for k, v in value.items() if v is not None}
    if isinstance(value, list):
        return [without_nulls(v) for v in value if v is not None]
    return value
