"""The hum of a batch of trials: every rail's mains ripple carried through the drawn
parts to every node in one batched solve.

Notes
-----
`chainbudget.budget.hum.hum_field` places each stage's ripple sources in the whole
chain's network on the ripple's harmonics; with the drawn parts as (T, 1) arrays the one
solve has matrices (T, H, n, n) and gives each source's phasor at each node per trial,
(R, J, T, H). The figures are summed as `chainbudget.budget.hum.hum_budget` sums them:
complex sums within one root supply, powers across roots and harmonics,
V_j^2 = sum_h sum_roots |sum_(r in root) H_jr(f_h) v_r(f_h)|^2 / 2; A-weighting
|A(f_h)| per harmonic (IEC 61672-1); at 1 m L = sensitivity + 20 log10(V / sqrt(1 W Z)).

The ripple on each rail is the nominal check's (its spectrum from the rectifier's
periodic steady state at the nominal reservoir, passed by the filters and regulators at
their nominal parts): a drawn reservoir moves the trough and the ripple's peak-to-peak
per trial (`supplies.NAME.ripple_vpp`), but not the harmonics the hum is summed from.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget import Budget
from chainbudget.budget.hum import hum_field
from chainbudget.chainfile import Chain
from chainbudget.outputmath import hiss_spl
from chainbudget.stages.base import Environment
from chainbudget.thresholds import HUM_AUDIBLE_SPL_A_DB
from chainbudget.weighting import a_weighting

Figures = dict[str, NDArray[np.float64]]


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
) -> Figures:
    """Each node's ``hum_vrms`` and the check JSON's ``hum`` figures per trial, shape (T,):
    ``hum.output_vrms``, ``hum.output_a_vrms``, ``hum.input_vrms``, ``hum.input_a_vrms``,
    ``hum.hum_to_noise_db`` (over the trial's A-weighted output noise, from ``noise``) and
    with a loudspeaker sensitivity ``hum.spl_db``, ``hum.spl_a_db``.

    ``chain`` and ``envs`` hold the drawn parts as (T, 1) arrays; ``nominal`` is the
    nominal check, whose rails' ripple is held (module notes). None where the nominal
    check has no hum (no rail with mains ripple reaches a stage).
    """
    if nominal.hum is None or nominal.hum.dominant is None:
        return {}
    field, _ = hum_field(chain, envs, nominal.supplies)
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
    return found


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
