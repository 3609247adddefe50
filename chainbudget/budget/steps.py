"""One chain analysed at several settings of one control or part value, in one batched solve.

A `Stepped` names what moves: a pot of a stage (``tone.bass_position``) or a part value
(``driver.feedback``), and the values it takes. `loaded_steps` gives the `Analysis` a
``check`` of the chain edited to each value would work from, without solving the chain once
per value: the step is one more array axis through the network solve, as frequency and the
swept controls are (`chainbudget.budget.analysis`).

Notes
-----
Two solves of `chainbudget.budget.analysis.analyse` carry the step axis:

- the nominal cascade has shape (S, F): the stepped pot's position, or the stepped part's
  value, is an array of shape (S, 1);
- the volume axis takes the step axis in front of its rotations (none when the stepped pot
  is the volume pot itself: that axis turns it through every rotation already).

Each step's nominal and volume figures are then read out of the batched arrays without
solving again; the worst-case search (`chainbudget.budget.analysis.worst_search`), which
grows only polynomially with the pots, runs on each step's chain as it is read out. The
supplies' rails under load depend on what the stages draw, so, as
`chainbudget.budget.supplies.loaded_analysis` does for one chain, each step's loaded rails
are worked out from its analysis; steps whose rails moved are solved again together,
grouped by their new rails.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator, Mapping, Sequence
from dataclasses import dataclass, replace
from typing import Any, cast

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget.analysis import (
    SWEEP_POINTS,
    VOLUME_ROTATIONS,
    Analysis,
    environments,
    frequency_axis,
    master_volume,
    positions_as_set,
    solve_chain,
    worst_search,
)
from chainbudget.budget.rails import supply_voltages
from chainbudget.budget.supplies import settle
from chainbudget.cascade import Cascade, StageSolution
from chainbudget.chainfile import Chain
from chainbudget.network import TwoPort
from chainbudget.stages.base import Built, Stage
from chainbudget.supplies.base import Corners


@dataclass(frozen=True)
class Stepped:
    """What a sweep moves: a pot (``control``) or a part value of one stage, and its values.

    ``key`` is the stage's field (``bass_position``, ``feedback``); ``values`` are rotations
    (0..1) for a pot and SI values for a part.
    """

    stage_index: int
    key: str
    control: bool
    values: NDArray[np.float64]

    def edited(self, chain: Chain, step: int) -> Chain:
        """The chain as a file edited to this step's value would load."""
        return with_value(chain, self.stage_index, self.key, float(self.values[step]))


@dataclass(frozen=True)
class _ArrayStage(Stage):
    """A stage whose stepped field holds an array: ``number`` hands it to the build as is,
    so the stage's network is stamped for every step at once."""

    def number(self, key: str) -> float:
        value = self.values[key]
        if isinstance(value, np.ndarray):
            # An array where the build reads a float: numpy broadcasts it through the stamps.
            return cast(float, value)
        return float(value)

    def optional(self, key: str) -> float | None:
        value = self.values.get(key)
        return None if value is None else self.number(key)


def with_value(chain: Chain, k: int, key: str, value: Any) -> Chain:
    stage = chain.stages[k]
    cls = _ArrayStage if isinstance(value, np.ndarray) else Stage
    edited = cls(stage.index, stage.name, stage.kind, {**stage.values, key: value})
    return replace(chain, stages=(*chain.stages[:k], edited, *chain.stages[k + 1 :]))


# --- reading one step out of batched arrays ----------------------------------------------


def _pick(array: Any, ndim: int, axis: int, index: int | NDArray[np.intp]) -> Any:
    """Index ``axis`` (counted from the left of a full shape of ``ndim`` axes) of an array
    that broadcasts against that shape: an int drops the axis, an index array keeps it.
    An array that lacks the axis, or holds it at length 1, is returned as it is (after
    dropping a length-1 axis for an int index)."""
    if not isinstance(array, np.ndarray):
        return array
    local = axis - (ndim - array.ndim)
    if local < 0:
        return array
    if array.shape[local] == 1:
        return array.take(0, axis=local) if isinstance(index, int) else array
    if isinstance(index, int):
        return array[(slice(None),) * local + (index,)]
    if index.size and np.array_equal(index, np.arange(index[0], index[0] + index.size)):
        return array[(slice(None),) * local + (slice(index[0], index[0] + index.size),)]
    return array.take(index, axis=local)


@dataclass(frozen=True)
class _Take:
    """One step's view of a batched cascade: index ``index`` on ``axis`` of ``ndim``."""

    ndim: int
    axis: int
    index: int | NDArray[np.intp]

    def __call__(self, array: Any) -> Any:
        return _pick(array, self.ndim, self.axis, self.index)

    def two_port(self, tp: TwoPort) -> TwoPort:
        return TwoPort(
            self(tp.a),
            self(tp.b),
            self(tp.c),
            self(tp.d),
            {name: (self(g1), self(g2)) for name, (g1, g2) in tp.probes.items()},
        )

    def built(self, built: Built) -> Built:
        limits = [replace(lim, peak=self(lim.peak)) for lim in built.limits]
        return replace(built, limits=limits)

    def cascade(self, cas: Cascade, stages: Sequence[Stage]) -> Cascade:
        def each(arrays: tuple[Any, ...]) -> tuple[Any, ...]:
            return tuple(self(a) for a in arrays)

        return Cascade(
            tuple(
                StageSolution(stage, self.two_port(sol.two_port), self.built(sol.built))
                for stage, sol in zip(stages, cas.stages, strict=True)
            ),
            each(cas.v_in),
            each(cas.v_out),
            each(cas.load_admittance),
            each(cas.source_impedance),
            each(cas.output_impedance),
            self(cas.input_admittance),
        )


def _restaged(cas: Cascade, stages: Sequence[Stage]) -> Cascade:
    """A cascade that holds no step axis, its stages as the step's chain has them."""
    solutions = zip(stages, cas.stages, strict=True)
    return replace(cas, stages=tuple(replace(sol, stage=stage) for stage, sol in solutions))


# --- the batched solve -------------------------------------------------------------------


@dataclass(frozen=True)
class _Batch:
    """Steps solved together on the same rails: the two batched cascades and how to read
    one step out of each."""

    chain: Chain
    stepped: Stepped
    steps: tuple[int, ...]
    frequency: NDArray[np.float64]
    #: Each step's supply voltages (they agree at ``corner``, the rails the batch is solved
    #: on; the other corners feed the step's supply and heat figures).
    voltages: tuple[dict[str, Corners], ...]
    corner: str
    nominal: Cascade
    volume_index: int | None
    volume_rotations: NDArray[np.float64]
    volume_sweep: Cascade | None
    volume_stepped: bool

    def analysis(self, position: int, grid: bool = True) -> Analysis:
        """The analysis of ``self.steps[position]``, read out of the batched arrays.

        Without ``grid`` only the nominal cascade is read out (the worst-case search and the
        volume axis are left out): enough for the stages' rail currents.
        """
        step = self.steps[position]
        chain = self.stepped.edited(self.chain, step)
        stages = chain.stages
        voltages = self.voltages[position]
        envs = environments(chain, self.corner, voltages)
        nominal = _Take(2, 0, position).cascade(self.nominal, stages)
        if not grid:
            return Analysis(
                chain,
                self.frequency,
                dict(voltages),
                envs,
                nominal,
                nominal,
                (),
                SWEEP_POINTS,
                None,
                self.volume_rotations,
                None,
            )
        worst = worst_search(chain, envs, self.frequency, nominal)
        volume = self.volume_sweep
        if volume is not None:
            volume = (
                _Take(3, 0, position).cascade(volume, stages)
                if self.volume_stepped
                else _restaged(volume, stages)
            )
        return Analysis(
            chain,
            self.frequency,
            dict(voltages),
            envs,
            nominal,
            worst.swept,
            worst.controls,
            SWEEP_POINTS,
            self.volume_index,
            self.volume_rotations,
            volume,
            worst.grids,
            worst.candidates,
            worst.found,
        )


def _solve_batch(
    chain: Chain,
    stepped: Stepped,
    steps: Sequence[int],
    corner: str,
    voltages: Sequence[dict[str, Corners]],
) -> _Batch:
    """Solve ``steps`` of ``stepped`` together on each step's ``voltages``, which agree at
    ``corner`` (see the module notes)."""
    k_step, key = stepped.stage_index, stepped.key
    values = stepped.values[list(steps)]
    frequency = frequency_axis(chain)
    envs = environments(chain, corner, voltages[0])
    as_set = positions_as_set(chain.stages)

    def solve(
        freq: NDArray[np.float64], ndim: int, overrides: Callable[[list[dict[str, Any]]], None]
    ) -> Cascade:
        """Solve with the step values on axis 0 of ``ndim`` axes (F last) and the other
        overrides ``overrides`` puts into the positions."""
        column = values.reshape((values.size,) + (1,) * (ndim - 1))
        positions: list[dict[str, Any]] = [dict(p) for p in as_set]
        solved = chain
        if stepped.control:
            positions[k_step][key] = column
        else:
            solved = with_value(chain, k_step, key, column)
        overrides(positions)
        return solve_chain(solved, envs, freq, positions)

    nominal = solve(frequency, 2, lambda _p: None)

    volume_index = master_volume(chain)
    rotations = VOLUME_ROTATIONS
    volume_sweep = None
    volume_stepped = not (stepped.control and k_step == volume_index and key == "position")
    if volume_index is not None:

        def turned(positions: list[dict[str, Any]]) -> None:
            assert volume_index is not None
            positions[volume_index]["position"] = rotations.reshape(
                (1, -1, 1) if volume_stepped else (-1, 1)
            )

        if volume_stepped:
            volume_sweep = solve(frequency[:1], 3, turned)
        else:
            positions = [dict(p) for p in as_set]
            turned(positions)
            volume_sweep = solve_chain(chain, envs, frequency[:1], positions)
    return _Batch(
        chain,
        stepped,
        tuple(steps),
        frequency,
        tuple(voltages),
        corner,
        nominal,
        volume_index,
        rotations,
        volume_sweep,
        volume_stepped,
    )


def _rails_key(voltages: Mapping[str, Corners], corner: str) -> tuple[tuple[str, float], ...]:
    """What the stages' rails are solved on: every supply's voltage at ``corner``."""
    return tuple((name, float(getattr(c, corner))) for name, c in sorted(voltages.items()))


def loaded_steps(chain: Chain, stepped: Stepped, corner: str = "low") -> Iterator[Analysis]:
    """Each step's analysis on the rails its loaded power tree gives, in step order.

    The same operating point as `chainbudget.budget.supplies.loaded_analysis` (its
    `settle`), for every step: solve on the unloaded rails; settle each step's tree; solve
    the steps whose rails moved again, together with the others that moved to the same
    rails.
    The analyses are yielded one at a time (each step's worst-case search runs as it is
    read out).
    """
    steps = range(stepped.values.size)
    batches: dict[int, tuple[_Batch, int]] = {}

    def solve(group: Sequence[int], voltages: Sequence[dict[str, Corners]]) -> None:
        batch = _solve_batch(chain, stepped, list(group), corner, list(voltages))
        batches.update({step: (batch, i) for i, step in enumerate(group)})

    unloaded = supply_voltages(chain)
    solve(steps, [dict(unloaded) for _ in steps])
    # Each step's tree settled as `loaded_analysis` settles it; the steps whose rails moved
    # are solved again, grouped by the rails they moved to.
    moved: dict[tuple[Any, ...], list[tuple[int, dict[str, Corners]]]] = {}
    for step in steps:
        edited = stepped.edited(chain, step)
        settled = dict(settle(edited, corner).voltages)
        if _rails_key(settled, corner) != _rails_key(unloaded, corner):
            moved.setdefault(_rails_key(settled, corner), []).append((step, settled))
    for members in moved.values():
        solve([step for step, _ in members], [loaded for _, loaded in members])
    for step in steps:
        batch, position = batches[step]
        yield batch.analysis(position)
