"""Figures at the output stage's idle point for a batch of trials: the chain solved once at
the reference frequency with every stage at idle, and a push-pull stage's idle output
impedance and gain step beside its figures in conduction.

Notes
-----
As the check works them out (`chainbudget.budget.loops.LoopSolver.idle`, read by
`chainbudget.stages.push_pull.crossover.crossover_figures`): the chain with each stage built
at its idle point (`Environment.idle`: an output pair with both halves conducting at the
quiescent current, each with its own drawn beta), cascaded at the reference frequency with
the controls as set. With the drawn parts as (T, 1) arrays that is one solve of every
section at one frequency, shape (T, 1, n, n): a fraction 1/F of the solve of the chain on
its F-point axis that the trials take anyway. The figures in conduction are the trial's
own cascade with the controls as set (``as_set``), already solved.

A push-pull stage's ``idle_zout_ohm`` is |Z_out| at its output at idle and
``gain_step_db`` = 20 log10(|G_idle| / |G|), the chain's gain to its output at idle over
that in conduction; the loop round later stages' idle figures are in
`chainbudget.spread.loops.closed_loop_figures`.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget import Budget
from chainbudget.budget.loops import LoopSolver
from chainbudget.cascade import Cascade
from chainbudget.chainfile import Chain
from chainbudget.stages.base import Environment
from chainbudget.stages.opamp_loop import GlobalLoop
from chainbudget.stages.push_pull.crossover import Crossover

Figures = dict[str, NDArray[np.float64]]


def needs_idle(nominal: Budget) -> bool:
    """Whether the nominal check reports any figure at idle: a push-pull stage's crossover
    figures, or a loop round later stages."""
    return any(
        isinstance(own, Crossover | GlobalLoop) for node in nominal.nodes for own in node.own
    )


def idle_cascade(chain: Chain, envs: Sequence[Environment]) -> Cascade:
    """The chain at the reference frequency with every stage at its idle point, the drawn
    parts as arrays (the check's `LoopSolver.idle`, the same code)."""
    return LoopSolver(chain, envs, chain.settings.reference).idle()


def at_reference(array: object, trials: int) -> NDArray[np.float64]:
    """|a| at the reference frequency (index 0 of the last axis) as a (T,) array."""
    flat = np.abs(np.asarray(array)[..., 0]).reshape(-1)
    return np.broadcast_to(flat, (trials,)).copy() if flat.size == 1 else flat.reshape(trials)


def crossover_idle_figures(
    as_set: Cascade, idle: Cascade | None, nominal: Budget, trials: int
) -> Figures:
    """Each push-pull stage's ``nodes.NAME.idle_zout_ohm`` and ``nodes.NAME.gain_step_db``
    per trial, shape (T,) (the module's notes)."""
    if idle is None:
        return {}
    figures: Figures = {}
    for k, node in enumerate(nominal.nodes):
        own = node.figures(Crossover)
        if not isinstance(own, Crossover):
            continue
        prefix = f"nodes.{node.stage}."
        figures[prefix + "idle_zout_ohm"] = at_reference(idle.output_impedance[k], trials)
        # a gain step the check cannot give (no signal reaches the stage: a volume at its
        # stop) is left out
        if np.isfinite(own.gain_step_db):
            gain = at_reference(as_set.v_out[k], trials)
            figures[prefix + "gain_step_db"] = 20.0 * np.log10(
                at_reference(idle.v_out[k], trials) / gain
            )
    return figures
