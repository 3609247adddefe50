"""The chain's figures for a batch of trials at once: each drawn part an array over a
leading trial axis through the same network solve `check` uses.

Notes
-----
A batch of T trials is one solve: every drawn stage part is an array of shape (T, 1)
against the frequency axis (F,) (here the reference frequency alone), so each stage's
matrices are (T, F, n, n) and `numpy.linalg.solve` takes them in one call
(`chainbudget.network`). The supply figures a kind spreads (`SupplyKind.spread`, e.g. a
regulator's output over its reference and divider) are closed forms on (T,) arrays; a
spread rail reaches the stages it feeds as an array rail, so their swing limits follow it.

The operating point around which the parts vary is the nominal check's: the power tree
settled for the nominal parts (`chainbudget.budget.supplies.settle`) at low line, as
`check` analyses the stages. What is not spread is listed in docs/tolerances.md.

The node figures and the level rules mirror `chainbudget.budget.levels.node_levels` and
`chainbudget.findings.levels` at the reference frequency with the controls as set:
``clip-nominal`` where the nominal level clips a node, else ``clip-max`` where
``max_level`` does, else ``thin-headroom`` under `THIN_HEADROOM_DB`.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, replace
from typing import Any, cast

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget import Budget
from chainbudget.budget.analysis import environments, frequency_axis, positions_as_set, solve_chain
from chainbudget.budget.levels import SQRT2, clip_source_peak, db
from chainbudget.budget.steps import with_value
from chainbudget.chainfile import Chain
from chainbudget.spread.parts import Part, with_beta
from chainbudget.supplies import KINDS as SUPPLY_KINDS
from chainbudget.supplies.base import Corners, SpreadThreshold
from chainbudget.thresholds import THIN_HEADROOM_DB

Figures = dict[str, NDArray[np.float64]]


@dataclass(frozen=True)
class Threshold:
    """A rule's limit on a spread figure: the trials below ``limit`` (and not below a
    tighter limit of the same figure) draw ``code``."""

    path: str
    limit: float
    code: str
    severity: str


@dataclass(frozen=True)
class Evaluator:
    """Evaluates the spread figures of ``chain`` for any batch of part positions."""

    chain: Chain
    parts: tuple[Part, ...]
    nominal: Budget
    voltages: Mapping[str, Corners]

    def values(self, positions: NDArray[np.float64]) -> list[NDArray[np.float64]]:
        """Each part's value per trial from positions (T, n) in 0..1."""
        return [part.at(positions[:, i]) for i, part in enumerate(self.parts)]

    def __call__(self, positions: NDArray[np.float64]) -> Figures:
        """Every spread figure, shape (T,), for part positions of shape (T, n)."""
        trials = positions.shape[0]
        values = self.values(positions)
        figures: Figures = {}
        voltages = dict(self.voltages)
        lows: dict[str, NDArray[np.float64]] = {}
        for j in _parents_first(self.chain):
            supply = self.chain.supplies[j]
            drawn = {
                p.key: v
                for p, v in zip(self.parts, values, strict=True)
                if p.table == "supply" and p.index == j
            }
            kind = SUPPLY_KINDS[supply.kind]
            if not kind.spread_fields(supply):
                continue
            parent = None if supply.parent is None else lows.get(supply.parent)
            bounds = {
                p.key: (p.low, p.high) for p in self.parts if p.table == "supply" and p.index == j
            }
            spread = kind.spread(supply, drawn, self.nominal.supply(supply.name), parent, bounds)
            if spread is None:
                continue
            for key, array in spread.figures.items():
                figures[f"supplies.{supply.name}.{key}"] = _trials(array, trials)
            if spread.rail_low_v is not None and supply.name in voltages:
                lows[supply.name] = _trials(spread.rail_low_v, trials)
                rail = lows[supply.name].reshape(trials, 1)
                # an array rail: `chainbudget.budget.rails.stage_rails` keeps it one
                voltages[supply.name] = replace(voltages[supply.name], low=cast(float, rail))
        chain = self.chain
        betas: dict[int, list[tuple[str, NDArray[np.float64]]]] = {}
        for part, value in zip(self.parts, values, strict=True):
            if part.table != "stage":
                continue
            column = value.reshape(trials, 1)
            if part.is_beta:
                name = str(chain.stages[part.index].values[part.key])
                betas.setdefault(part.index, []).append((name, column))
            else:
                chain = with_value(chain, part.index, part.key, column)
        # DC operating points held at the nominal check's (DC is not spread)
        dc_inputs = [
            node.dc.input_v if node.dc is not None else None for node in self.nominal.nodes
        ]
        envs = list(environments(chain, "low", voltages, dc_inputs))
        for k, drawn_betas in betas.items():
            for name, column in drawn_betas:
                envs[k] = with_beta(envs[k], name, column)
        frequency = frequency_axis(self.chain)[:1]
        cascade = solve_chain(chain, tuple(envs), frequency, positions_as_set(self.chain.stages))
        source = self.chain.source
        for k, sol in enumerate(cascade.stages):
            node = f"nodes.{sol.stage.name}."
            v_out = cascade.v_out[k][..., 0]
            figures[node + "gain_db"] = _trials(db(v_out / cascade.v_in[k][..., 0]), trials)
            figures[node + "total_gain_db"] = _trials(db(v_out), trials)
            figures[node + "level_vrms"] = _trials(source.level * np.abs(v_out), trials)
            figures[node + "zout_ohm"] = _trials(
                np.abs(cascade.output_impedance[k][..., 0]), trials
            )
            figures[node + "zload_ohm"] = _trials(
                np.abs(1.0 / cascade.load_admittance[k][..., 0]), trials
            )
            clip = clip_source_peak(cascade, k)
            if clip is None:
                continue
            peak = clip[0][..., 0]
            figures[node + "clip_vpk"] = _trials(peak * np.abs(v_out), trials)
            figures[node + "headroom_db"] = _trials(db(peak / (SQRT2 * source.max_level)), trials)
            figures[node + "nominal_headroom_db"] = _trials(
                db(peak / (SQRT2 * source.level)), trials
            )
        return figures

    def thresholds(self, figures: Mapping[str, Any]) -> list[Threshold]:
        """The rules' limits on the figures spread covers."""
        found = []
        for node in self.nominal.nodes:
            path = f"nodes.{node.stage}."
            if path + "headroom_db" not in figures:
                continue
            found += [
                Threshold(path + "nominal_headroom_db", 0.0, "clip-nominal", "error"),
                Threshold(path + "headroom_db", 0.0, "clip-max", "error"),
                Threshold(path + "headroom_db", THIN_HEADROOM_DB, "thin-headroom", "warning"),
            ]
        for supply in self.chain.supplies:
            kind = SUPPLY_KINDS[supply.kind]
            if not kind.spread_fields(supply):
                continue
            nominal = self.nominal.supply(supply.name)
            spread = kind.spread(supply, {}, nominal)
            if spread is None:
                continue
            found += [_supply_threshold(supply.name, t) for t in spread.thresholds]
        return found


def _parents_first(chain: Chain) -> list[int]:
    """The supplies' indices, each after the supply it is fed from."""
    order: list[int] = []
    done: set[str] = set()
    while len(order) < len(chain.supplies):
        before = len(order)
        for j, supply in enumerate(chain.supplies):
            if j not in order and (supply.parent is None or supply.parent in done):
                order.append(j)
                done.add(supply.name)
        if len(order) == before:  # a parent that is no supply's name (the loader refuses it)
            order += [j for j in range(len(chain.supplies)) if j not in order]
    return order


def _supply_threshold(name: str, threshold: SpreadThreshold) -> Threshold:
    return Threshold(
        f"supplies.{name}.{threshold.key}", threshold.limit, threshold.code, threshold.severity
    )


def _trials(array: Any, trials: int) -> NDArray[np.float64]:
    """A figure as a (T,) float array (a figure no trial moves is broadcast)."""
    flat = np.asarray(array, dtype=float).reshape(-1)
    return np.broadcast_to(flat, (trials,)).copy() if flat.size == 1 else flat.reshape(trials)


def failing(
    thresholds: list[Threshold], figures: Mapping[str, NDArray[np.float64]]
) -> dict[str, NDArray[np.bool_]]:
    """Per finding code, the trials that draw it (any node or supply).

    A figure's thresholds nest: a trial below the tightest draws only that code (the rules'
    ``elif``); a node clipped at the nominal level draws ``clip-nominal`` alone.
    """
    by_code: dict[str, NDArray[np.bool_]] = {}
    clipped_nominal: dict[str, NDArray[np.bool_]] = {}
    for t in thresholds:
        if t.code == "clip-nominal":
            clipped_nominal[t.path.rsplit(".", 1)[0]] = figures[t.path] < t.limit
    for t in thresholds:
        value = figures[t.path]
        tighter = [u.limit for u in thresholds if u.path == t.path and u.limit < t.limit]
        mask = value < t.limit
        if tighter:
            mask &= value >= max(tighter)
        owner = t.path.rsplit(".", 1)[0]
        if t.code != "clip-nominal" and owner in clipped_nominal:
            mask &= ~clipped_nominal[owner]
        by_code[t.code] = by_code.get(t.code, np.zeros(value.shape, bool)) | mask
    return by_code
