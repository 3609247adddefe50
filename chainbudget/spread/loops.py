"""The op-amp loops of a batch of trials: loop gain, unity-gain frequency and phase margin
of every op-amp loop with the drawn feedback parts.

Notes
-----
`chainbudget.budget.loops.LoopSolver` works out Bode's return ratio of each op-amp's
controlled source in its section terminated as the chain terminates it (Bode, Network
Analysis and Feedback Amplifier Design, 1945, ch. 4); with the drawn parts as (T, 1)
arrays its one solve on the stability axis (the reference to a hundred times the fastest
op-amp, `chainbudget.loopmath.stability_axis`; the op-amps are not drawn, so the axis is
the nominal check's) gives T per trial, (T, F). `chainbudget.loopmath.crossings` reads
the loop gain at the reference, the unity-gain frequency and the phase margin of each row,
as `chainbudget.stages.opamp_loop.loop_figures` does for the check.

Which stages have a loop is read from the nominal check (a stage whose own figures hold an
op-amp loop); a loop round later stages (the check JSON's ``loop[]``) is keyed
``loop.STAGE.KEY``.

A loop round later stages also carries its closed-loop figures (`closed_loop_figures`), as
`chainbudget.stages.opamp_loop.loop_figures` works them out: the closed-loop gain
|V_out(last) / V_in(first)| of its section, the closed-loop output impedance at the sensed
stage's output with the load removed (the section's two-port output impedance from its
source impedance: Blackman's Z_ol/(1 + T), docs/power.md) and, where that stage drives the
load, the damping factor R_L/|Z_out| (the nominal load over it, common practice), each in
conduction and at idle, and the gain step idle over conduction. They are read at the
reference frequency: in conduction from the cascade the trials solve anyway (the chain with
the controls as set), at idle from the chain at idle (`chainbudget.spread.idle`: one solve
at the reference alone, which the push-pull stages' idle figures share); a few divisions
per trial. A figure the nominal check leaves undefined is left out. The isolation remedy (a
text naming a network) is the nominal check's.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget import Budget
from chainbudget.budget.loops import LoopSolver
from chainbudget.cascade import Cascade
from chainbudget.chainfile import Chain
from chainbudget.loopmath import crossings
from chainbudget.loops import section_of, sections
from chainbudget.spread.idle import at_reference
from chainbudget.stages.base import Environment
from chainbudget.stages.opamp_loop import GlobalLoop, OwnLoop
from chainbudget.thresholds import PHASE_MARGIN_ERROR_DEG, PHASE_MARGIN_WARN_DEG

Figures = dict[str, NDArray[np.float64]]

KEYS = ("loop_gain_db", "unity_gain_hz", "phase_margin_deg")
# The reduced stability axis (`reduced_axis`): every this-many points of the whole axis
# (40 a decade: a point every 0.2 decade), and the whole axis within this factor of each
# loop's nominal unity-gain frequency.
COARSE_STRIDE = 8
WINDOW = 10.0**0.25


def _loops(nominal: Budget) -> list[tuple[int, str, OwnLoop | GlobalLoop]]:
    """Each op-amp loop of the nominal check: its stage index, its JSON prefix, figures."""
    found: list[tuple[int, str, OwnLoop | GlobalLoop]] = []
    for k, node in enumerate(nominal.nodes):
        for own in node.own:
            if isinstance(own, OwnLoop):
                found.append((k, f"nodes.{node.stage}.", own))
            elif isinstance(own, GlobalLoop):
                found.append((k, f"loop.{own.stage}.", own))
    return found


def loop_figures(
    chain: Chain, envs: Sequence[Environment], nominal: Budget, trials: int
) -> Figures:
    """Each op-amp loop's ``loop_gain_db``, ``unity_gain_hz`` and ``phase_margin_deg`` per
    trial, shape (T,), keyed by their path in the check JSON (a figure the nominal check
    leaves undefined, a loop that never falls through unity gain, is left out).

    ``chain`` and ``envs`` hold the drawn parts as (T, 1) arrays. The return ratios are
    solved on `reduced_axis` first and on the whole stability axis only where that cannot
    stand for it (`_same_as_full`)."""
    loops = _loops(nominal)
    if not loops:
        return {}
    solver = LoopSolver(chain, envs, chain.settings.reference)
    full = solver.stability_axis()
    kept = reduced_axis(full, [own.unity_gain_hz for _, _, own in loops])
    ratios = [solver.return_ratio(k, full[kept]) for k, _, _ in loops]
    if not all(t is None or _same_as_full(kept, np.asarray(t)) for t in ratios):
        kept = np.arange(full.size)
        ratios = [solver.return_ratio(k, full) for k, _, _ in loops]
    axis = full[kept]
    found: Figures = {}
    for (_, prefix, own), t in zip(loops, ratios, strict=True):
        if t is None:
            continue
        rows = np.broadcast_to(t, (trials, axis.size))
        figures = crossings(axis, rows)
        values = (figures.loop_gain_db, figures.unity_gain_hz, figures.phase_margin_deg)
        for key, value in zip(KEYS, values, strict=True):
            if getattr(own, key) is not None:
                found[prefix + key] = np.asarray(value, dtype=float)
    return found


def closed_loop_figures(
    chain: Chain, as_set: Cascade, idle: Cascade | None, nominal: Budget, trials: int
) -> Figures:
    """Each loop round later stages' ``closed_loop_gain_db``, ``closed_loop_zout_ohm``,
    ``damping_factor`` and their ``idle_`` counterparts and ``idle_gain_step_db`` per trial,
    shape (T,), keyed ``loop.STAGE.KEY`` (the module's notes): ``as_set`` is the trials'
    chain with the controls as set, ``idle`` the same at idle (None: no loop round later
    stages in the nominal check). A damping factor the nominal check leaves out (the loop
    does not drive the load) is left out."""
    found: Figures = {}
    if idle is None:
        return found
    units = sections(chain.stages)
    load_ohm = chain.load.impedance
    for k, prefix, own in _loops(nominal):
        if not isinstance(own, GlobalLoop):
            continue
        section = section_of(units, k)
        first, last = section.first, section.last
        gain = at_reference(as_set.v_out[last], trials) / at_reference(as_set.v_in[first], trials)
        idle_gain = at_reference(idle.v_out[last], trials) / at_reference(idle.v_in[first], trials)
        zout = at_reference(as_set.output_impedance[last], trials)
        idle_zout = at_reference(idle.output_impedance[last], trials)
        with np.errstate(divide="ignore", invalid="ignore"):
            values = {
                "closed_loop_gain_db": 20.0 * np.log10(gain),
                "closed_loop_zout_ohm": zout,
                "damping_factor": load_ohm / zout,
                "idle_closed_loop_zout_ohm": idle_zout,
                "idle_damping_factor": load_ohm / idle_zout,
                "idle_gain_step_db": 20.0 * np.log10(idle_gain / gain),
            }
        for key, value in values.items():
            held = getattr(own, key)
            # the check's None (no damping factor where the loop does not drive the load)
            # or a gain it cannot give (no signal into the loop: a volume at its stop)
            if held is not None and np.isfinite(held):
                found[prefix + key] = np.asarray(value, dtype=float)
    return found


def reduced_axis(full: NDArray[np.float64], unity_hz: Sequence[float | None]) -> NDArray[np.intp]:
    """Indices of the stability axis the trials are solved on first: the reference (index
    0), every `COARSE_STRIDE`-th point, and every point within `WINDOW` (a factor either
    way) of each loop's nominal unity-gain frequency, where the crossing of every trial
    lies unless its parts move it by more than that factor."""
    keep = np.zeros(full.size, bool)
    keep[0] = True
    keep[::COARSE_STRIDE] = True
    keep[-1] = True
    for unity in unity_hz:
        if unity is not None:
            keep |= (full >= unity / WINDOW) & (full <= unity * WINDOW)
    return np.flatnonzero(keep)


def _same_as_full(kept: NDArray[np.intp], t: NDArray[np.complex128]) -> bool:
    """True when the figures read from the reduced axis are those of the whole axis: every
    trial's first fall through |T| = 1 lies between two points that are neighbours on the
    whole axis (so its interpolation is the same), no point before it is under 1 (no earlier
    fall the coarse points could hide; common practice, no source: a loop gain that dips
    under 1 and climbs back between points 1/5 decade apart is not one a designer
    builds), and the unwrapped phase moves by under 90 deg between kept points (so that
    unwrapping the reduced axis gives the whole axis's phase)."""
    rows = t.reshape(-1, kept.size)
    above = np.abs(rows) >= 1.0
    falls = above[:, :-1] & ~above[:, 1:]
    first = np.argmax(falls, axis=1)
    found = falls.any(axis=1)
    neighbours = kept[first + 1] - kept[first] == 1
    before = np.arange(kept.size)[None, :] <= first[:, None]
    no_dip = np.all(above | ~before, axis=1)
    steps = np.abs(np.diff(np.unwrap(np.angle(rows), axis=1), axis=1))
    return bool(np.all(~found | (neighbours & no_dip)) and np.all(steps < np.pi / 2.0))


def loop_thresholds(figures: Mapping[str, object]) -> list[tuple[str, float, str, str]]:
    """The phase-margin rule's limits (`chainbudget.stages.opamp_loop.loop_rules`) as
    (path, limit, code, severity), each drawn below its limit: under 45 deg a warning,
    under 20 deg an error (the tighter limit alone)."""
    found = []
    for path in figures:
        if path.endswith(".phase_margin_deg"):
            found.append((path, PHASE_MARGIN_WARN_DEG, "phase-margin", "warning"))
            found.append((path, PHASE_MARGIN_ERROR_DEG, "phase-margin", "error"))
    return found
