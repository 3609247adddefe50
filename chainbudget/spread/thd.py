"""The output stage's THD for a batch of trials: the push-pull crossover's static transfer
(`chainbudget.stages.push_pull.crossover`) with the drawn parts as arrays over the trials.

Notes
-----
As the check works it out for a push-pull stage that drives the load
(`chainbudget.stages.push_pull.crossover`): each half's junction law u(I) = m V_T ln(I/I_q)
+ (I - I_q) R with R = R_E + r_bb'/(beta + 1) (+ the driver's r_bb' over both betas)
(`pair_laws`), the drawn emitter resistors and betas as (T, 1) arrays; the fundamental at
three levels per trial, the nominal output level with the controls as set, 1 W into the
nominal load and 1 dB below the chain's clip (the first stage to reach its limit, the
controls as set), each worked out from the trial's own cascade; inside a loop each harmonic
divided by the trial's own return difference |1 + T(n f)| at its frequency (the loop's
network solved with the parts as arrays on the harmonics' frequencies). Every level of every
trial goes through `harmonic_amplitudes` as one array (trials x levels x samples): no loop
over trials. THD = sqrt(sum_{n=2..20} H_n^2)/H_1 (IEC 60268-3's definition over the
harmonics, from memory). Each harmonic n = 2..20 at each level is a figure of its own, in
dB re the fundamental (the closed-loop one, as the check's ``harmonics_db``), read from the
same amplitudes: one division and a logarithm per trial. Below `HARMONIC_FLOOR_DB` the
check reports none (null: the even harmonics of a symmetric pair, which drawn betas of
unequal halves make real); a trial there reads the floor itself, so every trial has a
finite figure and a trial at the floor is one the check of that build reports null.

The figures are those of the levels the nominal check reports (a level the chain cannot
reach with its nominal parts is left out). A trial whose clip falls below the nominal level
or 1 W still gets the crossover's THD there (the static transfer has no clip of its own);
the check of that build leaves the entry out. No finding is drawn from THD, so no
threshold goes with these figures.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget import Budget
from chainbudget.budget.levels import SQRT2, clip_source_peak
from chainbudget.budget.loops import LoopSolver
from chainbudget.cascade import Cascade
from chainbudget.chainfile import Chain
from chainbudget.loops import section_of, sections
from chainbudget.outputmath import thermal_voltage
from chainbudget.stages.base import Environment
from chainbudget.stages.push_pull.crossover import (
    BELOW_CLIP_DB,
    HARMONIC_FLOOR_DB,
    HARMONICS,
    Crossover,
    closed_loop,
    harmonic_amplitudes,
    pair_laws,
    thd_of,
)

#: The levels the check reports THD at: each one's name in the figure paths and the field
#: of `Crossover` that says whether the nominal check reaches it.
LEVELS = (
    ("nominal", "thd_nominal"),
    ("one_watt", "thd_one_watt"),
    ("below_clip", "thd_below_clip"),
)


def thd_paths(nominal: Budget) -> list[tuple[str, str]]:
    """The levels the nominal check reports THD at, each with its figure's path
    (``output.thd_nominal_percent``...); empty when the last stage reports none."""
    if not nominal.nodes:
        return []
    own = nominal.nodes[-1].figures(Crossover)
    if not isinstance(own, Crossover) or not own.thd:
        return []
    return [(level, f"output.{field}_percent") for level, field in LEVELS if getattr(own, field)]


def harmonic_path(level: str, n: int) -> str:
    """The figure path of harmonic ``n`` at a THD level (``output.thd_one_watt_harmonic_3_db``:
    the check JSON's ``output.thd`` entry at that level, ``harmonics_db[n - 2]``)."""
    return f"output.thd_{level}_harmonic_{n}_db"


def harmonics_db(amplitude: NDArray[np.float64]) -> NDArray[np.float64]:
    """Harmonics 2 to `HARMONICS` in dB re the fundamental (last axis of ``amplitude``: 1 to
    `HARMONICS`), as `chainbudget.stages.push_pull.crossover.harmonics` gives them, with a
    harmonic below `HARMONIC_FLOOR_DB` (the check's null) at the floor."""
    with np.errstate(divide="ignore"):
        found = 20.0 * np.log10(amplitude[..., 1:] / amplitude[..., :1])
    return np.asarray(np.maximum(found, HARMONIC_FLOOR_DB))


def _per_trial(value: object, trials: int) -> NDArray[np.float64]:
    """A figure as a (T,) array (one no trial moves broadcast)."""
    flat = np.asarray(value, dtype=float).reshape(-1)
    return np.broadcast_to(flat, (trials,)) if flat.size == 1 else flat.reshape(trials)


def _gain_to_load(chain: Chain, as_set: Cascade, trials: int) -> NDArray[np.float64]:
    """The chain's gain from the source to the load in every trial, at the reference."""
    last = len(chain.stages) - 1
    return _per_trial(np.abs(np.asarray(as_set.v_out[last])[..., 0]), trials)


def _clip_vpk(as_set: Cascade, gain: NDArray[np.float64]) -> NDArray[np.float64]:
    """The chain's clip at the load in every trial, the first stage to reach its limit
    with the controls as set (V peak at the reference; infinite where no stage has a
    limit), as the check's THD levels take it; ``gain`` from `_gain_to_load`."""
    trials = gain.size
    peaks = [np.full(trials, np.inf)]
    for k in range(len(as_set.v_out)):
        clip = clip_source_peak(as_set, k)
        if clip is not None:
            peaks.append(_per_trial(np.asarray(clip[0])[..., 0], trials))
    return np.asarray(np.min(peaks, axis=0) * gain)


def _levels_vpk(
    chain: Chain, level: str, gain: NDArray[np.float64], clip_vpk: NDArray[np.float64]
) -> NDArray[np.float64]:
    """A THD level of every trial, the fundamental's peak at the load (V): ``gain`` the
    chain's to the load and ``clip_vpk`` its clip there (`_clip_vpk`)."""
    if level == "nominal":
        return SQRT2 * chain.source.level * gain
    if level == "one_watt":
        return np.full(gain.size, float(np.sqrt(2.0 * chain.load.impedance)))
    return np.asarray(clip_vpk * 10.0 ** (-BELOW_CLIP_DB / 20.0))


def _loop_factor(
    chain: Chain, envs: Sequence[Environment], trials: int
) -> NDArray[np.float64] | None:
    """|1 + T(n f)| of the loop round the output stage at harmonics n = 1..`HARMONICS`
    of the reference, shape (T, 1, HARMONICS); None outside a loop (or a loop without an
    op-amp)."""
    last = len(chain.stages) - 1
    section = section_of(sections(chain.stages), last)
    if not section.first < last:
        return None
    reference = chain.settings.reference
    solver = LoopSolver(chain, envs, reference)
    harmonics_hz = np.arange(1.0, HARMONICS + 1.0, dtype=np.float64) * reference
    ratio = solver.return_ratio(section.first, harmonics_hz)
    if ratio is None:
        return None
    factor = np.abs(1.0 + np.asarray(ratio))
    return np.broadcast_to(factor.reshape(-1, HARMONICS), (trials, HARMONICS))[:, None, :]


def thd_figures(
    chain: Chain,
    envs: Sequence[Environment],
    as_set: Cascade,
    nominal: Budget,
    trials: int,
) -> dict[str, NDArray[np.float64]]:
    """The output stage's THD (percent) at each level the nominal check reports, and open
    loop where the stage sits in a loop, and each harmonic's level in dB (`harmonic_path`),
    each of shape (T,): ``chain`` and ``envs`` carry the trials' parts as (T, 1) arrays,
    ``as_set`` is the chain solved with the controls as set over them."""
    paths = thd_paths(nominal)
    if not paths:
        return {}
    last = len(chain.stages) - 1
    env = envs[last]
    upper, lower = pair_laws(chain.stages[last], env)
    v_t = float(thermal_voltage(env.temperature_k))
    gain = _gain_to_load(chain, as_set, trials)
    clip_vpk = _clip_vpk(as_set, gain)
    levels = np.stack([_levels_vpk(chain, level, gain, clip_vpk) for level, _ in paths], axis=1)
    # a level the trial's chain cannot reach (at or above its clip) has no THD, as the
    # check leaves it out of its list (`crossover._distortion`): undefined in that trial
    unreached = levels >= clip_vpk[:, None]
    amplitude = harmonic_amplitudes(levels, upper, lower, chain.load.impedance, v_t)
    factor = _loop_factor(chain, envs, trials)
    closed_amplitude = closed_loop(amplitude, factor)

    def per_level(values: NDArray[np.float64], j: int) -> NDArray[np.float64]:
        """One level's figure (T,), NaN in the trials that cannot reach it."""
        return np.where(unreached[:, j], np.nan, _per_trial(values, trials))

    closed = thd_of(closed_amplitude)
    figures = {}
    for j, (_, path) in enumerate(paths):
        figures[path] = per_level(100.0 * closed[..., j], j)
    in_db = harmonics_db(closed_amplitude)
    for j, (level, _) in enumerate(paths):
        for n in range(2, HARMONICS + 1):
            figures[harmonic_path(level, n)] = per_level(in_db[..., j, n - 2], j)
    if factor is not None:
        open_loop = thd_of(amplitude)
        for j, (_, path) in enumerate(paths):
            key = path.replace("output.thd_", "output.open_loop_thd_")
            figures[key] = per_level(100.0 * open_loop[..., j], j)
    return figures
