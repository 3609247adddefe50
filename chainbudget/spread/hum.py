"""The hum of a batch of trials: every rail's mains ripple, per trial, carried through the
drawn parts to every node in one batched solve.

Notes
-----
`chainbudget.budget.hum.hum_field` places each stage's ripple sources in the whole
chain's network on the ripple's harmonics; with the drawn parts as (T, 1) arrays the one
solve has matrices (T, H, n, n) and gives each source's transfer to each node per trial.
Each rail's ripple is the trial's own where its supply is spread (a rectifier's drawn
reservoir, and the filters, dividers and regulators below it passing it on,
`chainbudget.spread.evaluate`): each source's phasor at node j is H_jr(f_h) v_r(f_h) with
both factors per trial, (R, J, T, H); a rail whose supply is not spread keeps the nominal
check's ripple. The figures are summed as `chainbudget.budget.hum.hum_budget` sums them:
complex sums within one root supply, powers across roots and harmonics,
V_j^2 = sum_h sum_roots |sum_(r in root) H_jr(f_h) v_r(f_h)|^2 / 2; A-weighting
|A(f_h)| per harmonic (IEC 61672-1); at 1 m L = sensitivity + 20 log10(V / sqrt(1 W Z)).
By root supply, by path (one source alone) and by harmonic as the check's ``hum``
lists them.

The hum rules per trial (`chainbudget.findings.hum`): ``hum-over-noise`` and
``hum-audible`` are limits on figures (`hum_thresholds`); with either, the check names
the dominant path (``hum-dominant-path``, the source giving the most A-weighted hum
alone, a flag per stage, `chainbudget.spread.flags`) and its remedies (``hum-remedy``,
drawn where at least one is found for the attenuation the trial's dominant path needs,
max(its hum / the target, 2), the target 6 dB under the trial's A-weighted noise and
under the audible level; `chainbudget.budget.hum_remedies.remedy_reach` tells, once,
up to which attenuation each path's remedies are found).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget import Budget
from chainbudget.budget.hum import hum_field
from chainbudget.budget.hum_remedies import (
    LEAST_ATTENUATION,
    TARGET_FACTOR,
    audible_a_vrms,
    remedy_reach,
)
from chainbudget.chainfile import Chain
from chainbudget.outputmath import hiss_spl
from chainbudget.spread.flags import as_flag, flag_key
from chainbudget.stages.base import Environment
from chainbudget.supplies.base import RippleSpread
from chainbudget.thresholds import HUM_AUDIBLE_SPL_A_DB
from chainbudget.weighting import a_weighting

Figures = dict[str, NDArray[np.float64]]


@dataclass(frozen=True)
class HumRemedyReach:
    """Each hum path of the nominal check, by (stage, path, supply), and the largest
    attenuation with which a remedy is still found when it dominates (inf: whatever the
    need; 0: none; `chainbudget.budget.hum_remedies.remedy_reach`)."""

    reach: Mapping[tuple[str, str, str], float]


def remedy_reach_of(chain: Chain, nominal: Budget) -> HumRemedyReach:
    """`HumRemedyReach` of the nominal check's hum paths, with the stages' nominal
    currents (those the check sizes a supply filter by)."""
    hum = nominal.hum
    if hum is None:
        return HumRemedyReach({})
    currents = [0.0 if n.currents is None else n.currents.nominal_a for n in nominal.nodes]
    return HumRemedyReach(
        {
            (p.stage, p.path, p.supply): remedy_reach(chain, nominal.supplies, currents, p)
            for p in hum.paths
            # a path from a rail without mains ripple (a battery's) carries no hum in any
            # trial: never the dominant one, it needs no remedy (and has no fundamental)
            if nominal.supply(p.supply).ripple_harmonics
        }
    )


def harmonic_key(hz: float) -> str:
    """A harmonic's frequency as one component of a figure's path: in Hz as ``%g`` writes
    it, a decimal point written ``_`` (a path's components are separated by dots):
    ``100``, ``33_4``."""
    return f"{hz:g}".replace(".", "_")


def _power_sum(
    phasors: NDArray[Any], roots: Sequence[str], weights: NDArray[np.float64]
) -> NDArray[np.float64]:
    """Mean-square hum per trial, V^2, of peak phasors (R, T, H): complex sums within each
    root, powers across roots and harmonics (`chainbudget.budget.hum.power_sum`)."""
    total = np.zeros(phasors.shape[1:-1])
    for root in dict.fromkeys(roots):
        mine = [r for r, name in enumerate(roots) if name == root]
        coherent = phasors[mine].sum(axis=0) * weights
        total = total + np.sum(np.abs(coherent) ** 2, axis=-1) / 2.0
    return total


def hum_figures(
    chain: Chain,
    envs: Sequence[Environment],
    nominal: Budget,
    noise: Mapping[str, NDArray[np.float64]],
    trials: int,
    ripples: Mapping[str, RippleSpread] | None = None,
    reach: HumRemedyReach | None = None,
) -> Figures:
    """Each node's ``hum_vrms`` and the check JSON's ``hum`` figures per trial, shape (T,):
    ``hum.output_vrms``, ``hum.output_a_vrms``, ``hum.input_vrms``, ``hum.input_a_vrms``,
    ``hum.hum_to_noise_db`` (over the trial's A-weighted output noise, from ``noise``),
    with a loudspeaker sensitivity ``hum.spl_db``, ``hum.spl_a_db``; by root supply
    ``hum.by_rail.SUPPLY.vrms`` and ``.a_vrms``, by path ``hum.by_path.STAGE.PATH.vrms``
    and ``.a_vrms``, by harmonic ``hum.harmonics.HZ.vrms`` and ``.a_vrms`` (`harmonic_key`);
    and the flags of ``hum-dominant-path`` and ``hum-remedy`` (module notes).

    ``chain`` and ``envs`` hold the drawn parts as (T, 1) arrays; ``ripples`` each spread
    rail's ripple per trial (the others keep the nominal check's); ``reach`` how far each
    path's remedies reach (None: worked out here). None where the nominal check has no hum
    (no rail with mains ripple reaches a stage).
    """
    if nominal.hum is None or nominal.hum.dominant is None:
        return {}
    given = {
        rail: (ripple.frequency, ripple.harmonics_vpk)
        for rail, ripple in (ripples or {}).items()
        if ripple.harmonics_vpk.shape[-1]
    }
    field, _ = hum_field(chain, envs, nominal.supplies, given)
    if field is None or not field.sources:
        return {}
    count = field.frequency.size
    at_nodes = np.stack(
        [
            [np.broadcast_to(field.at_nodes[r, j], (trials, count)) for j in range(len(envs))]
            for r in range(len(field.sources))
        ]
    )  # (R, J, T, H)
    flat = np.ones(count)
    weights = a_weighting(field.frequency)
    found: Figures = {}
    for j, stage in enumerate(chain.stages):
        found[f"nodes.{stage.name}.hum_vrms"] = np.sqrt(
            _power_sum(at_nodes[:, j], field.roots, flat)
        )
    at_out = at_nodes[:, -1]
    found["hum.output_vrms"] = np.sqrt(_power_sum(at_out, field.roots, flat))
    found["hum.output_a_vrms"] = np.sqrt(_power_sum(at_out, field.roots, weights))
    gain = np.abs(np.broadcast_to(field.gain, (trials, count)))
    if np.all(gain > 0.0):
        found["hum.input_vrms"] = np.sqrt(_power_sum(at_out / gain, field.roots, flat))
        found["hum.input_a_vrms"] = np.sqrt(_power_sum(at_out / gain, field.roots, weights))
    noise_a = noise.get(f"nodes.{chain.stages[-1].name}.noise_a_vrms")
    if noise_a is not None and np.all(noise_a > 0.0):
        with np.errstate(divide="ignore"):
            found["hum.hum_to_noise_db"] = 20.0 * np.log10(found["hum.output_a_vrms"] / noise_a)
    sensitivity = chain.load.sensitivity
    if sensitivity is not None:
        for key, hum in (("hum.spl_db", "hum.output_vrms"), ("hum.spl_a_db", "hum.output_a_vrms")):
            found[key] = np.asarray(
                hiss_spl(sensitivity, found[hum], chain.load.impedance), dtype=float
            )
    found.update(_by_rail(at_out, field.roots, weights))
    path_a = np.sqrt(np.sum(np.abs(at_out * weights) ** 2, axis=-1) / 2.0)  # (R, T)
    found.update(_by_path(at_out, path_a, field.sources))
    found.update(_by_harmonic(at_out, field.roots, field.frequency, weights))
    if reach is None:
        reach = remedy_reach_of(chain, nominal)
    found.update(_rule_flags(chain, found, path_a, field.sources, noise_a, reach))
    return found


def _by_rail(at_out: NDArray[Any], roots: Sequence[str], weights: NDArray[np.float64]) -> Figures:
    """The output hum from each root supply alone (the check's ``hum.by_rail``)."""
    found: Figures = {}
    flat = np.ones_like(weights)
    for root in dict.fromkeys(roots):
        mine = [r for r, name in enumerate(roots) if name == root]
        named = [root] * len(mine)
        found[f"hum.by_rail.{root}.vrms"] = np.sqrt(_power_sum(at_out[mine], named, flat))
        found[f"hum.by_rail.{root}.a_vrms"] = np.sqrt(_power_sum(at_out[mine], named, weights))
    return found


def _by_path(
    at_out: NDArray[Any], path_a: NDArray[np.float64], sources: Sequence[tuple[Any, str, int]]
) -> Figures:
    """The output hum of each source alone (the check's ``hum.by_path``), harmonics as
    powers; a stage's path named twice (none of the shipped kinds has one) is left out,
    its entries being no one path's."""
    names = [(source.stage, source.path) for source, _, _ in sources]
    found: Figures = {}
    for i, (stage, path) in enumerate(names):
        if names.count((stage, path)) > 1:
            continue
        found[f"hum.by_path.{stage}.{path}.vrms"] = np.sqrt(
            np.sum(np.abs(at_out[i]) ** 2, axis=-1) / 2.0
        )
        found[f"hum.by_path.{stage}.{path}.a_vrms"] = path_a[i]
    return found


def _by_harmonic(
    at_out: NDArray[Any],
    roots: Sequence[str],
    frequency: NDArray[np.float64],
    weights: NDArray[np.float64],
) -> Figures:
    """The output hum at each harmonic, every root together (the check's
    ``hum.harmonics``)."""
    found: Figures = {}
    for h, hz in enumerate(frequency):
        one = at_out[..., h : h + 1]
        key = f"hum.harmonics.{harmonic_key(float(hz))}."
        found[key + "vrms"] = np.sqrt(_power_sum(one, roots, np.ones(1)))
        found[key + "a_vrms"] = np.sqrt(_power_sum(one, roots, weights[h : h + 1]))
    return found


def _rule_flags(
    chain: Chain,
    found: Figures,
    path_a: NDArray[np.float64],
    sources: Sequence[tuple[Any, str, int]],
    noise_a: NDArray[np.float64] | None,
    reach: HumRemedyReach,
) -> Figures:
    """Per trial, whether the check names the dominant path (a flag per stage) and finds a
    remedy (module notes); none where neither hum warning can be drawn."""
    warnings = [found[path] > limit for path, limit, _, _ in hum_thresholds(found)]
    if not warnings:
        return {}
    either = np.logical_or.reduce(warnings)
    trials = path_a.shape[1]
    best = np.argmax(path_a, axis=0)  # the first of equals, as the check's stable sort
    top = path_a[best, np.arange(trials)]
    named = either & (top > 0.0)
    flags: Figures = {}
    stages = [source.stage for source, _, _ in sources]
    for stage in dict.fromkeys(stages):
        mine = [i for i, name in enumerate(stages) if name == stage]
        flags[flag_key("note", "hum-dominant-path", stage)] = as_flag(
            named & np.isin(best, mine), trials
        )
    bounds = []
    if noise_a is not None:
        bounds.append(np.where(noise_a > 0.0, noise_a, math.inf))
    audible = audible_a_vrms(chain)
    if audible is not None:
        bounds.append(np.full(trials, audible))
    if not bounds:
        flags[flag_key("note", "hum-remedy", "output")] = as_flag(False, trials)
        return flags
    target = np.minimum.reduce(bounds) * TARGET_FACTOR
    limits = np.array(
        [reach.reach.get((source.stage, source.path, rail), 0.0) for source, rail, _ in sources]
    )
    need = np.maximum(top / target, LEAST_ATTENUATION)
    remedied = named & (found["hum.output_a_vrms"] > target) & (need <= limits[best])
    flags[flag_key("note", "hum-remedy", "output")] = as_flag(remedied, trials)
    return flags


def hum_thresholds(figures: Mapping[str, object]) -> list[tuple[str, float, str, str]]:
    """The hum rules' limits (`chainbudget.findings.hum`) as (path, limit, code,
    severity), each drawn above its limit: hum over the A-weighted noise floor, audible
    hum at 1 m."""
    found = []
    if "hum.hum_to_noise_db" in figures:
        found.append(("hum.hum_to_noise_db", 0.0, "hum-over-noise", "warning"))
    if "hum.spl_a_db" in figures:
        found.append(("hum.spl_a_db", HUM_AUDIBLE_SPL_A_DB, "hum-audible", "warning"))
    return found
