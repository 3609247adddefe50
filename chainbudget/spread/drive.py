"""Whether each stage can drive the next, per trial: the op-amps' output currents, a
follower's bias and heat, and the base current an output pair asks of its driver.

Notes
-----
The figures and rules of `chainbudget.budget.power.opamp_drives` with
`chainbudget.findings.power`, `chainbudget.stages.follower.figures` and
`chainbudget.stages.push_pull.drive` / ``rules``, read from the batch's solved cascade
(the controls as set, at the reference frequency; arrays over the trial axis) instead of
the nominal one:

- an op-amp's peak current at ``max_level`` is |I_out / V_source| sqrt(2) V_max;
  its worst over the band is that current at ``max_level`` or at the stage's voltage clip,
  whichever is lower, the largest over the setting where the nominal check finds it
  largest, that setting's neighbours and each control's end stops (held fixed, as the
  worst headroom's candidates are: `chainbudget.spread.settings.current_candidates`).
  ``opamp-current`` where the worst passes the op-amp's rating (the peak at the
  reference not already past it: then ``clip-max`` says it), ``opamp-current-margin``
  where it passes `DRIVE_MARGIN` of it;
- a follower's bias I_E = (V_B - V_BE - V-)/(R_E + R_dc/(beta + 1)) and emitter
  V_B - V_BE - I_B R_dc (Horowitz & Hill 3rd ed. sec. 2.2.5, `follower_bias`) at the
  trial's parts and DC; ``cut_off_vpk`` the source peak at which its bias current runs
  out, carried to its node; its idle dissipation V_CE I_C at high line. ``follower-off``
  where it has no working bias, ``follower-cut-off`` where the cut-off is its tightest
  limit (a warning with thin headroom, else a note), ``follower-hot`` from
  `FOLLOWER_HOT_W`;
- an output pair's peak base current at its own clip level (the current into its input
  node at that source peak) and the driver's current on its tightest current limit there;
  ``drive-shortfall`` where the driver clips first on a current limit, ``drive-margin``
  where it needs more than `DRIVE_MARGIN` of that limit.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget.levels import SQRT2, clip_source_peak, db
from chainbudget.budget.power import asked_current
from chainbudget.cascade import Cascade
from chainbudget.chainfile import Chain
from chainbudget.spread.flags import as_flag, flag_key
from chainbudget.spread.settings import HeldSettings
from chainbudget.stages.base import Environment
from chainbudget.stages.follower.bias import CUT_OFF, follower_bias
from chainbudget.thresholds import DRIVE_MARGIN, FOLLOWER_HOT_W, THIN_HEADROOM_DB

Figures = dict[str, NDArray[np.float64]]


def _trials(array: Any, trials: int) -> NDArray[np.float64]:
    flat = np.asarray(array, dtype=float).reshape(-1)
    return np.broadcast_to(flat, (trials,)).copy() if flat.size == 1 else flat.reshape(trials)


def _at_reference(array: Any, trials: int) -> NDArray[np.float64]:
    """A cascade's array at the reference frequency, |.| as (T,)."""
    return _trials(np.abs(np.asarray(array)[..., 0]), trials)


def _clip(cascade: Cascade, k: int, trials: int) -> tuple[NDArray[np.float64], NDArray[Any]]:
    """Stage k's clip source peak and the index of the limit that sets it, per trial, at
    the reference frequency."""
    clip = clip_source_peak(cascade, k)
    assert clip is not None
    peak, which = np.asarray(clip[0]), np.asarray(clip[1])
    shape = np.broadcast_shapes(peak.shape, which.shape)
    peak = np.broadcast_to(peak, shape)[..., 0]
    which = np.broadcast_to(which, shape)[..., 0]
    return _trials(peak, trials), np.broadcast_to(which.reshape(-1), (trials,))


def drive_figures(
    chain: Chain,
    as_set: Cascade,
    held: Sequence[Cascade],
    settings: HeldSettings,
    envs: Sequence[Environment],
    hot_envs: Sequence[Environment],
    trials: int,
) -> Figures:
    """Every op-amp's, follower's and output pair's drive figures and rule flags, (T,):
    ``envs`` each stage's environment at low line with the trial's DC (as the check builds
    it), ``hot_envs`` at high line (a follower's heat)."""
    figures: Figures = {}
    figures.update(_opamps(chain, as_set, held, settings, trials))
    for k, stage in enumerate(chain.stages):
        if stage.kind == "follower":
            figures.update(_follower(chain, as_set, envs[k], hot_envs[k], k, trials))
        elif stage.kind == "push_pull":
            if k > 0:
                figures.update(_hand_over(chain, as_set, k, trials))
            figures.update(_output_bias(stage.name, stage.optional("output_cap"), envs[k], trials))
    return figures


def _output_bias(name: str, output_cap: float | None, env: Environment, trials: int) -> Figures:
    """``dc-on-load``: a single-supply pair without an output capacitor rests at its bias
    point, across the load (`chainbudget.stages.push_pull.drive.output_bias`)."""
    bias = 0.0 if env.rails is None else env.rails.bias
    on_load = output_cap is None and np.abs(np.asarray(bias)) > 1e-9
    return {flag_key("error", "dc-on-load", name): as_flag(on_load, trials)}


def _opamps(
    chain: Chain,
    as_set: Cascade,
    held: Sequence[Cascade],
    settings: HeldSettings,
    trials: int,
) -> Figures:
    """`chainbudget.budget.power.opamp_drives` and its rules, per trial."""
    max_peak = SQRT2 * chain.source.max_level
    figures: Figures = {}
    for k, sol in enumerate(as_set.stages):
        if not sol.built.opamps:
            continue
        peaks, worsts, limits = [], [], []
        for label, part in sol.built.opamps:
            probe = f"{label}.current"
            peak = _at_reference(as_set.probe(k, probe), trials) * max_peak
            worst = np.zeros(trials)
            for row in settings.current_rows.get((k, label), (None,)):
                cascade = as_set if row is None else held[row]
                asked = asked_current(cascade, k, label, max_peak)
                if row is not None:  # the points the row is not solved at: none to search
                    size = np.shape(as_set.v_in[0])[-1]
                    asked = settings.on_axis(row, np.asarray(asked), size, 0.0)
                band = np.broadcast_to(asked, (trials, asked.shape[-1]))[:, 1:]
                worst = np.maximum(worst, band.max(axis=1))
            limit = part.output_current
            peaks.append(peak)
            worsts.append(worst)
            limits.append(limit)
            where = sol.stage.name
            quiet = peak <= limit  # past it, the clip-max finding says it
            over = quiet & (worst > limit)
            figures[flag_key("warning", "opamp-current", where)] = as_flag(over, trials)
            figures[flag_key("warning", "opamp-current-margin", where)] = as_flag(
                quiet & ~over & (worst > DRIVE_MARGIN * limit), trials
            )
        node = f"nodes.{sol.stage.name}."
        figures[node + "drive_current_a"] = np.max(peaks, axis=0)
        figures[node + "drive_worst_current_a"] = np.max(worsts, axis=0)
    return figures


def _follower(
    chain: Chain, as_set: Cascade, env: Environment, hot_env: Environment, k: int, trials: int
) -> Figures:
    """`chainbudget.stages.follower.figures` and its rules, per trial."""
    sol = as_set.stages[k]
    stage, name = sol.stage, sol.stage.name
    bias = follower_bias(stage, env)
    hot = follower_bias(stage, hot_env)
    rails = hot_env.rails
    assert rails is not None, "a follower always has rails"
    collector = rails.positive if hot.polarity > 0 else rails.negative
    dissipation = _trials(np.abs(collector - hot.emitter_v) * hot.small_signal.i_c, trials)
    figures: Figures = {
        f"nodes.{name}.bias_current_a": _trials(bias.i_e, trials),
        f"drive.followers.{name}.emitter_v": _trials(bias.emitter_v, trials),
        f"drive.followers.{name}.dissipation_w": dissipation,
    }
    cut_off = np.broadcast_to(np.asarray(bias.cut_off).reshape(-1), (trials,))
    limits = sol.built.limits
    which_cut = next(i for i, limit in enumerate(limits) if limit.name == CUT_OFF)
    limit = limits[which_cut]
    gain = _at_reference(as_set.v_out[k], trials)
    with np.errstate(divide="ignore", invalid="ignore"):
        cut_source = _trials(np.asarray(limit.peak), trials) / _at_reference(
            as_set.probe(k, limit.probe), trials
        )
    cut_vpk = cut_source * gain
    if np.all(np.isfinite(cut_vpk)):
        figures[f"nodes.{name}.cut_off_vpk"] = cut_vpk
    peak, which = _clip(as_set, k, trials)
    headroom = db(peak / (SQRT2 * chain.source.max_level))
    first = ~cut_off & (which == which_cut) & np.isfinite(cut_vpk)
    thin = headroom < THIN_HEADROOM_DB
    figures[flag_key("error", "follower-off", name)] = as_flag(cut_off, trials)
    figures[flag_key("warning", "follower-cut-off", name)] = as_flag(first & thin, trials)
    figures[flag_key("note", "follower-cut-off", name)] = as_flag(first & ~thin, trials)
    figures[flag_key("warning", "follower-hot", name)] = as_flag(
        dissipation >= FOLLOWER_HOT_W, trials
    )
    return figures


def _hand_over(chain: Chain, as_set: Cascade, k: int, trials: int) -> Figures:
    """`chainbudget.stages.push_pull.drive.hand_over` and its rules, per trial."""
    name = as_set.stages[k].stage.name
    driver = as_set.stages[k - 1].stage.name
    source_peak, _ = _clip(as_set, k, trials)
    into = as_set.v_in[k] * as_set.load_admittance[k - 1]
    figures: Figures = {f"nodes.{name}.base_current_a": _at_reference(into, trials) * source_peak}
    needed = available = None
    for limit in as_set.stages[k - 1].built.limits:
        if not limit.bounds_current:
            continue
        current = _at_reference(as_set.probe(k - 1, limit.probe), trials) * source_peak
        peak = float(np.asarray(limit.peak).flat[0])
        if needed is None or available is None:
            needed, available = current, np.full(trials, peak)
        else:  # the tightest limit of the driver, trial by trial
            tighter = current / peak > needed / available
            needed = np.where(tighter, current, needed)
            available = np.where(tighter, peak, available)
    shortfall = np.zeros(trials, bool)
    if clip_source_peak(as_set, k - 1) is not None:
        driver_peak, driver_which = _clip(as_set, k - 1, trials)
        on_current = np.array(
            [limit.bounds_current for limit in as_set.stages[k - 1].built.limits], dtype=bool
        )
        shortfall = on_current[driver_which] & (driver_peak < source_peak)
    if needed is not None and available is not None:
        figures[f"drive.handovers.{name}.needed_a"] = needed
        figures[flag_key("error", "drive-shortfall", driver)] = as_flag(shortfall, trials)
        figures[flag_key("warning", "drive-margin", driver)] = as_flag(
            ~shortfall & (needed > DRIVE_MARGIN * available), trials
        )
    return figures
