"""The chain's figures for a batch of trials at once: each drawn part an array over a
leading trial axis through the same network solve `check` uses.

Notes
-----
A batch of T trials is one solve: every drawn stage part is an array of shape (T, 1)
against the frequency axis (F,) (here the reference frequency alone), so each stage's
matrices are (T, F, n, n) and `numpy.linalg.solve` takes them in one call
(`chainbudget.network`). The supply figures a kind spreads (`SupplyKind.spread`, e.g. a
regulator's output over its reference and divider) are closed forms on (T,) arrays, walked
down the tree parents first (`chainbudget.spread.tree`); a spread rail reaches the stages
it feeds as an array rail, so their swing limits and bias points follow it.

The operating point around which the parts vary is the nominal check's: the power tree
settled for the nominal parts (`chainbudget.budget.supplies.settle`) at low line, as
`check` analyses the stages. What is not spread is listed in docs/tolerances.md.

The node figures and the level rules mirror `chainbudget.budget.levels.node_levels` and
`chainbudget.findings.levels` at the reference frequency with the controls as set:
``clip-nominal`` where the nominal level clips a node, else ``clip-max`` where
``max_level`` does, else ``thin-headroom`` under `THIN_HEADROOM_DB`.
"""

from __future__ import annotations

import math
import os
from collections.abc import Callable, Iterator, Mapping, Sequence
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from functools import cache, cached_property, partial
from typing import Any

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget import Budget, source_loading
from chainbudget.budget.analysis import environments, frequency_axis, positions_as_set, solve_chain
from chainbudget.budget.dcbias import DcPoint
from chainbudget.budget.levels import SQRT2, clip_source_peak, db
from chainbudget.budget.power import (
    floored_spl,
    load_at_reference,
    peak_current,
    resistive_cap_corner,
)
from chainbudget.budget.rails import supply_states
from chainbudget.budget.steps import with_value
from chainbudget.budget.supplies import SettledTree, low_edge_tree, moving_rails, rails_sag
from chainbudget.cascade import Cascade, Joins, at_points, on_points, sections, solve_section
from chainbudget.cascade import cascade as join_cascade
from chainbudget.chainfile import Chain
from chainbudget.findings import SUPERSEDES
from chainbudget.loops import Section
from chainbudget.loudspeaker import is_reactive, load_impedance
from chainbudget.network import GMIN, SingularNetwork, shared_rows
from chainbudget.outputmath import damping_factor, sine_power
from chainbudget.source_network import source_impedance
from chainbudget.spread import aside
from chainbudget.spread.clip_tone import (
    held_budget,
    low_edge_figures,
    sag_cost_figures,
    sag_cost_thresholds,
)
from chainbudget.spread.dc import dc_figures, walked
from chainbudget.spread.drive import drive_figures
from chainbudget.spread.flags import flag_parts, is_flag
from chainbudget.spread.heap import keep_freed_memory
from chainbudget.spread.heat import heat_figures, nominal_heat_figures
from chainbudget.spread.hum import (
    HumRemedyReach,
    hum_figures,
    hum_thresholds,
    remedy_reach_of,
)
from chainbudget.spread.idle import crossover_idle_figures, idle_cascade, needs_idle
from chainbudget.spread.loops import closed_loop_figures, loop_figures, loop_thresholds
from chainbudget.spread.noise import output_noise
from chainbudget.spread.parts import Part, with_beta
from chainbudget.spread.settings import HeldSettings, held_settings, worst_of_candidates
from chainbudget.spread.settle import (
    SettledTrials,
    TrialTree,
    load_figures,
    nominal_jacobian,
    settle_trials,
)
from chainbudget.spread.staging import needs_worst_headroom, staging_flags
from chainbudget.spread.thd import thd_figures
from chainbudget.spread.volume import volume_flags
from chainbudget.stages import KINDS as STAGE_KINDS
from chainbudget.stages.base import Environment
from chainbudget.supplies import KINDS as SUPPLY_KINDS
from chainbudget.supplies.base import Corners, SpreadThreshold, SupplyState
from chainbudget.thresholds import HISS_SPL_A_LIMIT_DB, SNR_MIN_DB, THIN_HEADROOM_DB

Figures = dict[str, NDArray[np.float64]]
#: The drawn betas by stage index: each one's name in the stage and its values (T, 1).
Betas = dict[int, list[tuple[str, NDArray[np.float64]]]]

# Trial-frequency points per batched solve: each point is one stage matrix (n x n complex,
# n up to 16 in the examples), so a batch's matrices take at most about 70 MB.
CHUNK_POINTS = 1 << 14
# The steps of `Evaluator._batch` after the supplies and the DC walk (it runs them in its
# own order): each gives a family of figures, and a corner row asks for its figure's.
STEPS = frozenset(
    (
        "reference",
        "band",
        "output",
        "low_edge",
        "sag_cost",
        "noise",
        "hum",
        "loops",
        "closed_loops",
        "crossover",
        "thd",
        "drive",
        "heat",
        "staging",
        "volume",
    )
)
# Chunks solved at once (forked workers, or threads; memory grows with them).
WORKERS = max(1, min(4, os.cpu_count() or 1))
# Trials whose power trees one settling works out together, at most (`Evaluator.__call__`):
# a settling step solves the chain at one tone, a few matrices a trial, so that on a
# chunk's hundred-odd trials its cost is the Python between numpy's operations (busking
# amp, one tone: 20 ms for 133 trials, 33 ms for 1,330).
SETTLE_GROUP_TRIALS = 1024
# Groups a worker takes at least, where there are chunks enough: the workers end near
# together, and a run of a few thousand trials moves its progress bar in steps of an
# eighth on two cores.
GROUPS_PER_WORKER = 4


# No held settings: the controls as set only (a step that reads no held setting).
_NO_HELD = HeldSettings((), (), {}, None)


@dataclass(frozen=True)
class SettledRails:
    """The rails each trial of a group of chunks settled on (`SettledTrials.rails_v`, each
    moving rail's low-line value, (T,)): at the reference, and at the band's low edge
    where the chunks work that tone out (None: not asked for, or the check settles none
    there)."""

    reference: dict[str, NDArray[np.float64]]
    low_edge: dict[str, NDArray[np.float64]] | None

    def rows(self, rows: slice) -> SettledRails:
        """The same for the trials ``rows`` alone."""
        low = None if self.low_edge is None else {r: v[rows] for r, v in self.low_edge.items()}
        return SettledRails({r: v[rows] for r, v in self.reference.items()}, low)


def _grouped(batches: list[NDArray[np.float64]], workers: int) -> list[list[int]]:
    """The chunks (by index, in order) in groups that settle their trees together: at
    most about `SETTLE_GROUP_TRIALS` trials a group, and at least `GROUPS_PER_WORKER` a
    worker where there are chunks enough (a worker takes every k-th group:
    `aside.forked_map`; the progress bar moves as each group's figures come in)."""
    trials = sum(len(b) for b in batches)
    least = min(len(batches), GROUPS_PER_WORKER * workers)
    count = max(least, math.ceil(trials / SETTLE_GROUP_TRIALS))
    return [g.tolist() for g in np.array_split(np.arange(len(batches)), count) if g.size]


@dataclass(frozen=True)
class Threshold:
    """A rule's limit on a spread figure: the trials below ``limit`` (and not below a
    tighter limit of the same figure) draw ``code``."""

    path: str
    limit: float
    code: str
    severity: str
    #: Another figure that must stay at or above a limit for the code to be drawn (the
    #: worst case over band and controls is flagged only where the reference is clear).
    only_if_at_least: tuple[str, float] | None = None
    #: The trials above ``limit`` draw the code instead (a hiss level).
    above: bool = False

    def beyond(self, value: NDArray[np.float64]) -> NDArray[np.bool_]:
        """The trials on the failing side of the limit."""
        return value > self.limit if self.above else value < self.limit


@dataclass(frozen=True)
class Evaluator:
    """Evaluates the spread figures of ``chain`` for any batch of part positions."""

    chain: Chain
    parts: tuple[Part, ...]
    nominal: Budget
    voltages: Mapping[str, Corners]

    def __post_init__(self) -> None:
        # batches of trials make and free large arrays: keep their pages for the next one
        keep_freed_memory()

    def values(self, positions: NDArray[np.float64]) -> list[NDArray[np.float64]]:
        """Each part's value per trial from positions (T, n) in 0..1."""
        return [part.at(positions[:, i]) for i, part in enumerate(self.parts)]

    @cached_property
    def settings(self) -> HeldSettings:
        """The control settings held fixed per trial (`chainbudget.spread.settings`)."""
        return held_settings(self.chain, self.voltages)

    @property
    def chunk_trials(self) -> int:
        """Trials per batched solve: `CHUNK_POINTS` over the chain's frequency points, so
        that memory stays bounded however fine the chain's grid is."""
        return max(1, CHUNK_POINTS // frequency_axis(self.chain).size)

    def __call__(
        self,
        positions: NDArray[np.float64],
        flags: bool = False,
        steps: frozenset[str] | None = None,
        shared: bool = False,
        on_batch: Callable[[int], None] | None = None,
    ) -> Figures:
        """Every spread figure, shape (T,), for part positions of shape (T, n), solved
        `chunk_trials` at a time; with ``flags``, the per-trial rule flags beside them
        (`chainbudget.spread.flags`); with ``steps``, those `_batch` names only. With
        ``shared`` (rows that differ in a few parts each, as the corner search asks for),
        each network's distinct rows are solved once (`chainbudget.network.shared_rows`:
        the same figures, bit for bit). ``on_batch(trials)`` is called as each batch's
        figures are in, in order (a progress bar)."""
        size = self.chunk_trials
        # the first whole evaluation files each figure's step as it goes (`steps_of`)
        record: dict[str, str] | None = None
        if steps is None and "steps_of" not in self.__dict__:
            record = {}

        def group_work(chunks: list[NDArray[np.float64]]) -> list[Figures]:
            """Each chunk's figures, the group's trees settled together first (a group of
            one chunk settles its own in `_batch`)."""
            rails = None
            if len(chunks) > 1:
                rails = self._settled_rails(np.concatenate(chunks), steps)
            found, at = [], 0
            for chunk in chunks:
                mine = None if rails is None else rails.rows(slice(at, at + len(chunk)))
                at += len(chunk)
                found.append(self._batch(chunk, steps=steps, record=record, rails=mine))
            return found

        def batch(chunks: list[NDArray[np.float64]]) -> list[Figures]:
            if not shared:
                return group_work(chunks)
            with shared_rows():  # in the thread that solves the chunks
                return group_work(chunks)

        if positions.shape[0] <= size:
            (found,) = batch([positions])
            if on_batch is not None:
                on_batch(positions.shape[0])
        else:
            batches = [positions[i : i + size] for i in range(0, len(positions), size)]
            groups = [[batches[i] for i in group] for group in _grouped(batches, WORKERS)]
            pieces = []
            for group_pieces, group in zip(
                self._mapped(batch, groups, record), groups, strict=True
            ):
                for piece, rows in zip(group_pieces, group, strict=True):
                    pieces.append(piece)
                    if on_batch is not None:
                        on_batch(rows.shape[0])
            found = {path: np.concatenate([p[path] for p in pieces]) for path in pieces[0]}
        if record is not None:
            self.__dict__["steps_of"] = record  # the cached property's own slot
        return found if flags else {p: v for p, v in found.items() if not is_flag(p)}

    def _mapped(
        self,
        batch: Callable[[list[NDArray[np.float64]]], list[Figures]],
        batches: list[list[NDArray[np.float64]]],
        record: dict[str, str] | None,
    ) -> Iterator[list[Figures]]:
        """Each group of batches' figures, in order, the groups worked out side by side: in
        forked workers (`chainbudget.spread.aside.forked_map`: the batches' Python on
        every core) where the platform forks and this evaluator's caches are filled
        (``record`` None: a whole evaluation has run here, so the workers build nothing
        twice and file nothing the parent would miss); else in threads (numpy's batched
        solves and array arithmetic release the GIL, the Python between them runs one
        thread at a time), except in a forked child beside other work (the corner search
        beside the trials' workers), which takes them in turn: its threads there made no
        run shorter and cost the busking amp's corner search 2 s more CPU, of it 0.7 s
        the kernel's (docs/performance.md). The same figures every way (each group is
        independent of the others)."""
        if record is None and len(batches) > 1 and WORKERS > 1 and aside.can_fork():
            yield from aside.forked_map(batch, batches, WORKERS)
            return
        if aside.is_aside():  # beside the trials' workers: no core is free for a thread
            yield from map(batch, batches)
            return
        with ThreadPoolExecutor(max_workers=WORKERS) as pool:
            yield from pool.map(batch, batches)

    def _drawn_chain(self, values: list[NDArray[np.float64]]) -> tuple[Chain, Betas]:
        """The chain with each drawn stage value per trial ((T, 1) columns, from each
        part's values (T,)), and the drawn betas by stage (`with_beta` builds them into a
        stage's environment)."""
        chain = self.chain
        betas: Betas = {}
        for part, value in zip(self.parts, values, strict=True):
            if part.table != "stage":
                continue
            column = value.reshape(-1, 1)
            if part.is_beta:
                name = str(chain.stages[part.index].values[part.key])
                betas.setdefault(part.index, []).append((name, column))
            else:
                chain = with_value(chain, part.index, part.key, column)
        return chain, betas

    def _trial_tree(
        self,
        low_edge: bool,
        chain: Chain,
        betas: Betas,
        values: list[NDArray[np.float64]],
        trials: int,
    ) -> TrialTree | None:
        """The power tree of a batch of trials (`chainbudget.spread.settle.TrialTree`) for
        a tone at the reference, from the nominal check's settled rails, or with
        ``low_edge`` at the band's low edge, from the tree the check settles there
        (`low_edge_tree`; None where it settles none)."""
        if not low_edge:
            budget, voltages = self.nominal, self.voltages
            tone_hz = self.chain.settings.reference
        elif self.low_edge_tree is None:
            return None
        else:
            budget, voltages = self.low_edge_tree[0], self.low_edge_tree[1].voltages
            tone_hz = self.chain.settings.band[0]
        return TrialTree(
            chain,
            self.chain,
            partial(_envs_on, chain, betas),
            self.parts,
            values,
            budget,
            voltages,
            self.unloaded,
            tone_hz,
            trials,
        )

    def _settle_start(self, low_edge: bool) -> NDArray[np.float64] | None:
        """Where each trial's settling starts its Jacobian at the reference (or the band's
        low edge): the nominal parts' (`chainbudget.spread.settle.nominal_jacobian`), the
        same for every batch; None where the check settles no tree there."""
        count = len(moving_rails(self.chain)) + 1
        values = [np.full(count, part.nominal) for part in self.parts]
        tree = self._trial_tree(low_edge, *self._drawn_chain(values), values, count)
        return None if tree is None else nominal_jacobian(tree)

    @cached_property
    def _reference_start(self) -> NDArray[np.float64] | None:
        """`_settle_start` at the reference."""
        return self._settle_start(False)

    @cached_property
    def _low_edge_start(self) -> NDArray[np.float64] | None:
        """`_settle_start` at the band's low edge."""
        return self._settle_start(True)

    def _batch(
        self,
        positions: NDArray[np.float64],
        steps: frozenset[str] | None = None,
        record: dict[str, str] | None = None,
        rails: SettledRails | None = None,
    ) -> Figures:
        """Every spread figure for one batch of trials (one solve of each kind); with
        ``steps``, the supplies' and DC figures and those of the `STEPS` named only (the
        others' solves left out: `steps_of` says which step gives a figure). Only
        ``{"supplies"}``: the supplies' figures alone. ``record`` is filled with the step
        that gives each figure (`steps_of`). ``rails``: the rails these trials' trees
        settled on, worked out with the rest of their group (`_settled_rails`; None: the
        batch settles them itself)."""
        trials = positions.shape[0]
        filed = {} if record is None else record

        def file(found: Figures, step: str) -> Figures:
            for path in found:
                filed.setdefault(path, step)
            return found

        values = self.values(positions)
        chain, betas = self._drawn_chain(values)
        # the tree settled again for each trial at the reference (`chainbudget.spread.settle`)
        settled = self._settled(
            False, chain, betas, values, trials, None if rails is None else rails.reference
        )
        assert settled is not None  # the reference always settles
        tree = settled.tree
        figures: Figures = dict(file(tree.figures, "supplies"))
        loads = load_figures(self.chain, settled.loads, settled.drawn, settled.unloaded, trials)
        figures.update(file(loads, "supplies"))
        voltages, ripples = tree.voltages, tree.ripples
        if steps is not None and steps <= {"supplies"}:
            return figures
        # each trial's own DC walk: a DC-coupled stage is built at its trial's DC
        points, walked_envs = _trial_envs(chain, betas, voltages)
        envs = list(walked_envs)
        offset = None if self.nominal.output is None else self.nominal.output.offset_v
        figures.update(file(dc_figures(chain, envs, points, trials, offset), "dc"))
        frequency = frequency_axis(self.chain)
        settings = self.settings
        nominal = self.nominal
        wanted = STEPS if steps is None else steps
        # each solve once, and only for the steps asked for (a corner row asks for one)
        with_held = bool(wanted & {"band", "output", "drive"}) or (
            "staging" in wanted and needs_worst_headroom(nominal)
        )
        cascades = cache(
            lambda: _solve_as_set_and_held(
                chain, tuple(envs), frequency, settings if with_held else _NO_HELD
            )
        )

        def as_set() -> Cascade:
            return cascades()[0]

        def held() -> list[Cascade]:
            return cascades()[1]

        noise = cache(
            lambda: output_noise(chain, tuple(envs), frequency, as_set(), trials, nominal)
        )
        band = cache(lambda: _band_figures(self.chain, held(), as_set(), settings, trials))
        idle = cache(lambda: idle_cascade(chain, envs) if needs_idle(nominal) else None)
        hot_envs = cache(lambda: self._hot_envs(chain, betas))
        step_figures: dict[str, Callable[[], Figures]] = {
            "reference": lambda: _reference_figures(self.chain, as_set(), trials, nominal),
            "band": band,
            "output": lambda: self._output_step(chain, held(), as_set(), hot_envs(), trials),
            "low_edge": lambda: self._low_edge(
                chain,
                betas,
                values,
                tree.voltages,
                trials,
                None if rails is None else rails.low_edge,
            ),
            "sag_cost": lambda: sag_cost_figures(
                chain,
                self.parts,
                values,
                nominal,
                settled.loads,
                self.unloaded,
                partial(_envs_on, chain, betas),
                voltages,
                trials,
            ),
            "noise": noise,
            "hum": lambda: hum_figures(
                chain, envs, nominal, noise(), trials, ripples, self.hum_remedies
            ),
            "loops": lambda: loop_figures(chain, envs, nominal, trials),
            "closed_loops": lambda: closed_loop_figures(chain, as_set(), idle(), nominal, trials),
            "crossover": lambda: crossover_idle_figures(as_set(), idle(), nominal, trials),
            "thd": lambda: thd_figures(chain, envs, as_set(), nominal, trials),
            "drive": lambda: drive_figures(
                chain, as_set(), held(), settings, envs, hot_envs(), trials
            ),
            "heat": lambda: heat_figures(chain, envs, hot_envs(), trials),
            "staging": lambda: staging_flags(chain, envs, frequency, as_set(), trials, band),
            "volume": lambda: volume_flags(
                chain, envs, frequency[:1], nominal, trials, CHUNK_POINTS
            ),
        }
        for step, work in step_figures.items():
            if step in wanted:
                figures.update(file(work(), step))
        return figures

    @cached_property
    def steps_of(self) -> dict[str, str]:
        """The step of `_batch` that works out each figure (``supplies``, ``dc``, or one of
        `STEPS`; the first that gives it), filed during the first whole evaluation (of any
        rows: which step gives a figure is the chain's structure, not its values), or one
        at the nominal parts (`tests/test_spread_steps.py` asks each step alone for its
        figures)."""
        found: dict[str, str] = {}
        self._batch(np.full((1, len(self.parts)), 0.5), record=found)
        return found

    def _output_step(
        self,
        chain: Chain,
        held: list[Cascade],
        as_set: Cascade,
        hot_envs: Sequence[Environment],
        trials: int,
    ) -> Figures:
        """The output figures (`_output_figures`, `_output_cap_corner`) and the output
        pair's heat at their nominal level (`nominal_heat_figures`)."""
        output = self.nominal.output
        damping_held = output is not None and bool(np.isfinite(output.damping_factor))
        found = _output_figures(self.chain, held, as_set, self.settings, trials, damping_held)
        found.update(_output_cap_corner(chain, as_set, trials))
        if "output.nominal_vpk" in found:
            found.update(nominal_heat_figures(chain, hot_envs, found["output.nominal_vpk"], trials))
        return found

    @cached_property
    def low_edge_tree(self) -> tuple[Budget, SettledTree] | None:
        """The nominal check's tree settled for a tone at the band's low edge, and the
        nominal check with its loads and states (`chainbudget.spread.clip_tone`); None
        where no rail sags under the nominal load (the check then settles none)."""
        loaded = {s.name: s.state for s in self.nominal.supplies}
        if not rails_sag(self.chain, loaded, self.unloaded):
            return None
        settled = low_edge_tree(self.chain, self.voltages)
        return held_budget(self.nominal, self.chain, settled), settled

    def _low_edge(
        self,
        chain: Chain,
        betas: Betas,
        values: list[NDArray[np.float64]],
        own_rails: Mapping[str, Corners],
        trials: int,
        at: Mapping[str, NDArray[np.float64]] | None = None,
    ) -> Figures:
        """``output.clip_power_low_w`` per trial: on the low-tone tree settled again for
        each trial from the nominal check's (on the rails ``at`` where its group settled
        them), or on the batch's own rails where the check settles none."""
        settled = self._settled(True, chain, betas, values, trials, at)
        rails = own_rails if settled is None else settled.tree.voltages
        return low_edge_figures(chain, partial(_envs_on, chain, betas), rails, trials)

    def _settled(
        self,
        low_edge: bool,
        chain: Chain,
        betas: Betas,
        values: list[NDArray[np.float64]],
        trials: int,
        at: Mapping[str, NDArray[np.float64]] | None = None,
    ) -> SettledTrials | None:
        """Each trial's tree settled (`settle_trials`) for a tone at the reference, or with
        ``low_edge`` at the band's low edge (`_trial_tree`; None where the check settles
        none there); with ``at``, evaluated once on the rails the trials' group settled
        on."""
        tree = self._trial_tree(low_edge, chain, betas, values, trials)
        if tree is None:
            return None
        start = self._low_edge_start if low_edge else self._reference_start
        return settle_trials(tree, start, at)

    def _settled_rails(
        self, positions: NDArray[np.float64], steps: frozenset[str] | None
    ) -> SettledRails:
        """The rails each trial of ``positions`` settles on at the reference, and at the
        band's low edge where ``steps`` ask for it: the settling's steps taken once for a
        group of chunks, each chunk then evaluating its trees there once
        (`settle_trials`'s ``at``: the same figures as settling alone, to round-off:
        tests/test_spread_settle_groups.py)."""
        values = self.values(positions)
        chain, betas = self._drawn_chain(values)
        trials = positions.shape[0]
        reference = self._settled(False, chain, betas, values, trials)
        assert reference is not None  # the reference always settles
        low = None
        if steps is None or "low_edge" in steps:
            found = self._settled(True, chain, betas, values, trials)
            low = None if found is None else found.rails_v
        return SettledRails(reference.rails_v, low)

    @cached_property
    def unloaded(self) -> dict[str, SupplyState]:
        """The nominal tree with no load (where the check's settled rails start from)."""
        return supply_states(self.chain)

    @cached_property
    def hum_remedies(self) -> HumRemedyReach:
        """How far each hum path's remedies reach (`chainbudget.spread.hum`), worked out
        once from the nominal check."""
        return remedy_reach_of(self.chain, self.nominal)

    def _hot_envs(
        self, chain: Chain, betas: Mapping[int, list[tuple[str, NDArray[np.float64]]]]
    ) -> tuple[Environment, ...]:
        """Each stage's environment at high line (the nominal check's rails), with the
        drawn betas and the trial's DC walked there: where the check works out heat."""
        envs = list(environments(chain, "high", self.voltages, [None] * len(chain.stages)))
        for k, drawn_betas in betas.items():
            for name, column in drawn_betas:
                envs[k] = with_beta(envs[k], name, column)
        return walked(chain, envs)[1]

    def thresholds(self, figures: Mapping[str, Any]) -> list[Threshold]:
        """The rules' limits on the figures spread covers."""
        found = []
        names = [node.stage for node in self.nominal.nodes]
        volume_at = (
            names.index(self.nominal.volume_stage)
            if self.nominal.volume_stage in names
            else len(names)
        )
        for k, name in enumerate(names):
            path = f"nodes.{name}."
            if path + "headroom_db" not in figures:
                continue
            found += [
                Threshold(path + "nominal_headroom_db", 0.0, "clip-nominal", "error"),
                Threshold(path + "headroom_db", 0.0, "clip-max", "error"),
                Threshold(path + "headroom_db", THIN_HEADROOM_DB, "thin-headroom", "warning"),
            ]
            # `chainbudget.findings.levels`: only ahead of the volume control, and only
            # where the headroom at the reference with the controls as set is not lost
            if k < volume_at and path + "worst_headroom_db" in figures:
                found.append(
                    Threshold(
                        path + "worst_headroom_db",
                        0.0,
                        "clip-worst-case",
                        "warning",
                        (path + "headroom_db", 0.0),
                    )
                )
        output = f"nodes.{names[-1]}.snr_db" if names else ""
        if output in figures:
            found.append(Threshold(output, SNR_MIN_DB, "snr-low", "warning"))
        if "hiss_spl_a_db" in figures:
            found.append(
                Threshold(
                    "hiss_spl_a_db", HISS_SPL_A_LIMIT_DB, "hiss-audible", "warning", above=True
                )
            )
        for path, limit, code, severity in loop_thresholds(figures):
            found.append(Threshold(path, limit, code, severity))
        for path, limit, code, severity in hum_thresholds(figures):
            found.append(Threshold(path, limit, code, severity, above=True))
        for path, limit, code, severity, unless in sag_cost_thresholds(self.chain, figures):
            found.append(Threshold(path, limit, code, severity, unless, above=True))
        # the rules worked out per trial in the batch (`chainbudget.spread.flags`)
        for path in figures:
            if is_flag(path):
                severity, code = flag_parts(path)
                found.append(Threshold(path, 0.5, code, severity, above=True))
        for supply in self.chain.supplies:
            kind = SUPPLY_KINDS[supply.kind]
            rails = kind.rails(supply)
            # a supply spread in the batch (its own parts or its parent's): its figures
            if not any(p.startswith(f"supplies.{rail}.") for rail in rails for p in figures):
                continue
            nominals = {rail: self.nominal.supply(rail) for rail in rails}
            for name, spread in (kind.rail_spreads(supply, {}, nominals) or {}).items():
                found += [
                    _supply_threshold(name, t)
                    for t in spread.thresholds
                    if f"supplies.{name}.{t.key}" in figures
                ]
        return found


def _trial_envs(
    chain: Chain,
    betas: Mapping[int, list[tuple[str, NDArray[np.float64]]]],
    voltages: Mapping[str, Corners],
) -> tuple[tuple[DcPoint, ...], tuple[Environment, ...]]:
    """Each stage's environment at low line on ``voltages`` with the drawn betas, built at
    its trial's own DC (the walk's points beside them)."""
    envs = list(environments(chain, "low", voltages, [None] * len(chain.stages)))
    for k, drawn_betas in betas.items():
        for name, column in drawn_betas:
            envs[k] = with_beta(envs[k], name, column)
    return walked(chain, envs)


def _envs_on(
    chain: Chain,
    betas: Mapping[int, list[tuple[str, NDArray[np.float64]]]],
    voltages: Mapping[str, Corners],
) -> tuple[Environment, ...]:
    """`_trial_envs`' environments alone."""
    return _trial_envs(chain, betas, voltages)[1]


def _reference_figures(chain: Chain, cascade: Cascade, trials: int, nominal: Budget) -> Figures:
    """Each node's figures at the reference frequency (index 0) with the controls as set,
    as `chainbudget.budget.levels.node_levels` gives them, and the source's as
    `chainbudget.budget.budget_from` does (`_source_figures`; left out where the nominal
    check's input is held only by the solver's leak, `OPEN_INPUT_OHM`)."""
    figures: Figures = {}
    if nominal.input_impedance_ohm < OPEN_INPUT_OHM:
        figures.update(_source_figures(chain, cascade, trials))
    source = chain.source
    for k, sol in enumerate(cascade.stages):
        node = f"nodes.{sol.stage.name}."
        v_out = cascade.v_out[k][..., 0]
        figures[node + "gain_db"] = _trials(db(v_out / cascade.v_in[k][..., 0]), trials)
        figures[node + "total_gain_db"] = _trials(db(v_out), trials)
        figures[node + "level_vrms"] = _trials(source.level * np.abs(v_out), trials)
        figures[node + "max_level_vrms"] = _trials(source.max_level * np.abs(v_out), trials)
        figures[node + "zout_ohm"] = _trials(np.abs(cascade.output_impedance[k][..., 0]), trials)
        figures[node + "zload_ohm"] = _trials(
            np.abs(1.0 / cascade.load_admittance[k][..., 0]), trials
        )
        clip = clip_source_peak(cascade, k)
        if clip is None:
            continue
        peak = clip[0][..., 0]
        figures[node + "clip_vpk"] = _trials(peak * np.abs(v_out), trials)
        figures[node + "headroom_db"] = _trials(db(peak / (SQRT2 * source.max_level)), trials)
        figures[node + "nominal_headroom_db"] = _trials(db(peak / (SQRT2 * source.level)), trials)
    return figures


# An input impedance above this, ohm, is the solver's leak conductance (`GMIN`) alone: an
# input with no DC path (the check's ``no-dc-path``), whose impedance and loss are round-off.
OPEN_INPUT_OHM = 1.0 / (1000.0 * GMIN)


def _source_figures(chain: Chain, cascade: Cascade, trials: int) -> Figures:
    """What the chain's input does to the source, per trial, with the controls as set:
    `chainbudget.budget.source_loading`, the check's own function, on (T, F) arrays. The
    input impedance |1/Y_in| and the level lost across the source's impedance,
    20 log10 |V_in/V_s| (the divider of Z_s and Z_in), at the reference
    (``source.input_impedance_ohm``, ``source.loss_db``) and at the band's point where
    the least of the source's voltage reaches the input (``source.worst_loss_db``, at
    ``source.worst_loss_hz``)."""
    loading = source_loading(
        _at_row(cascade.input_admittance, trials),
        _at_row(cascade.v_in[0], trials),
        frequency_axis(chain),
    )
    return {
        "source.input_impedance_ohm": loading.input_impedance_ohm,
        "source.loss_db": loading.loss_db,
        "source.worst_loss_db": loading.worst_loss_db,
        "source.worst_loss_hz": loading.worst_loss_hz,
    }


def _solve_as_set_and_held(
    chain: Chain,
    envs: tuple[Environment, ...],
    frequency: NDArray[np.float64],
    settings: HeldSettings,
) -> tuple[Cascade, list[Cascade]]:
    """The chain solved with the controls as set, and at each held setting. A section
    (a stage, or a loop solved as one network) is solved once for each distinct setting
    of its own controls and serves every cascade that has it; at a held setting, only at
    the points some row with that setting looks at (`HeldSettings.row_points`), and each
    held cascade is joined on its own row's points alone (its arrays' last axis runs over
    them: `HeldSettings.on_axis` puts a figure back on the whole axis)."""
    as_set_positions = positions_as_set(chain.stages)
    source = source_impedance(chain.source, frequency)
    load = load_impedance(chain.load, frequency)
    units = sections(chain.stages)
    size = frequency.shape[-1]
    solved: dict[tuple[int, tuple[object, ...]], Any] = {}
    joins = Joins()  # the settings share most sections: their terminations, once

    def key_of(unit: Section, positions: list[dict[str, float]]) -> tuple[int, tuple[object, ...]]:
        return (unit.first, tuple(tuple(sorted(positions[k].items())) for k in unit.indices))

    held_positions = [settings.positions(chain, row) for row in range(len(settings.rows))]
    # each moved section's points: those of every row that has its setting
    wanted: dict[tuple[int, tuple[object, ...]], set[int]] = {}
    if settings.row_points:
        for row, positions in enumerate(held_positions):
            for unit in units:
                points = settings.row_points[row]
                wanted.setdefault(key_of(unit, positions), set()).update(points.tolist())
    for unit in units:  # the settings as set: solved on the whole axis
        wanted.pop(key_of(unit, as_set_positions), None)
    # a section on a row's points, kept for the rows with the same points
    narrowed: dict[tuple[tuple[int, tuple[object, ...]], bytes], Any] = {}
    ends: dict[bytes, tuple[Any, Any]] = {}

    def solve(positions: list[dict[str, float]], at: NDArray[np.intp] | None = None) -> Cascade:
        found = []
        for unit in units:
            key = key_of(unit, positions)
            if key not in solved:
                want = wanted.get(key)
                points = None if want is None else np.array(sorted(want), dtype=np.intp)
                solved[key] = solve_section(
                    chain.stages, envs, frequency, positions, unit, points=points
                )
            if at is None:
                found.append(solved[key])
                continue
            held_key = (key, at.tobytes())
            if held_key not in narrowed:
                narrowed[held_key] = at_points(solved[key], at, size)
            found.append(narrowed[held_key])
        if at is None:
            return join_cascade(found, source, load, joins)
        if at.tobytes() not in ends:  # the same arrays for the same points (the joins' keys)
            ends[at.tobytes()] = (on_points(source, at, size), on_points(load, at, size))
        return join_cascade(found, *ends[at.tobytes()], joins)

    try:
        as_set = solve(as_set_positions)
    except SingularNetwork:  # the check's message, naming the stage
        solve_chain(chain, envs, frequency, as_set_positions)
        raise
    return as_set, [
        solve(positions, settings.row_points[row] if settings.row_points else None)
        for row, positions in enumerate(held_positions)
    ]


def _at_row(array: Any, trials: int) -> NDArray[Any]:
    """A cascade's array as (T, F)."""
    array = np.asarray(array)
    return np.broadcast_to(array, (trials, array.shape[-1]))


def _band_figures(
    chain: Chain, held: list[Cascade], as_set: Cascade, settings: HeldSettings, trials: int
) -> Figures:
    """Each limited node's worst headroom over the whole frequency axis, at the nominal
    check's worst setting of that node held fixed (`chainbudget.spread.settings`)."""
    figures: Figures = {}
    max_peak = SQRT2 * chain.source.max_level
    size = np.shape(as_set.v_in[0])[-1]
    for k, sol in enumerate(as_set.stages):
        if k not in settings.node_rows:
            continue
        peaks = []
        for row, _ in settings.node_rows[k]:
            clip = clip_source_peak(as_set if row is None else held[row], k)
            assert clip is not None
            if row is not None:  # the points the row is not solved at: none to search
                peaks.append(settings.on_axis(row, _at_row(clip[0], trials), size, np.inf))
            else:
                peaks.append(_at_row(clip[0], trials))
        distance = np.array([d for _, d in settings.node_rows[k]])
        worst = worst_of_candidates(np.stack(peaks, axis=1), distance)
        figures[f"nodes.{sol.stage.name}.worst_headroom_db"] = _trials(db(worst / max_peak), trials)
    return figures


def _output_figures(
    chain: Chain,
    held: list[Cascade],
    as_set: Cascade,
    settings: HeldSettings,
    trials: int,
    damping_held: bool = True,
) -> Figures:
    """The output figures at the reference frequency as `chainbudget.budget.power.
    output_figures` works them out (its helpers and `chainbudget.outputmath`): the
    nominal level with the controls as set (`nominal_vpk`, `nominal_power_w` and, with a
    sensitivity, `nominal_spl_db`), the last stage's output impedance (`zout_ohm`) and the
    damping factor |Z_L|/|Z_out| of the nominal load rating over it where ``damping_held``
    (the nominal check's is finite: an output of no impedance has none); with the volume
    fully up, the tightest stage's clip peak carried to the load (`clip_vpk`,
    `clip_power_w`, `clip_current_a` and, with a sensitivity, `max_spl_db`) and the last
    limited stage's, the one driving the load, on its own limit
    (`output_stage_clip_vpk`, `output_stage_clip_power_w`)."""
    last = len(chain.stages) - 1
    z_load = load_at_reference(chain)
    sensitivity = chain.load.sensitivity
    figures: Figures = {}
    nominal_vpk = SQRT2 * chain.source.level * np.abs(as_set.v_out[last][..., 0])
    nominal_power = sine_power(nominal_vpk, z_load)
    figures["output.nominal_vpk"] = _trials(nominal_vpk, trials)
    figures["output.nominal_power_w"] = _trials(nominal_power, trials)
    if sensitivity is not None:
        figures["output.nominal_spl_db"] = _trials(floored_spl(sensitivity, nominal_power), trials)
    z_out = as_set.output_impedance[last][..., 0]
    figures["output.zout_ohm"] = _trials(np.abs(z_out), trials)
    if damping_held:
        figures["output.damping_factor"] = _trials(
            damping_factor(chain.load.impedance, z_out), trials
        )
    # the volume fully up: its row of the held settings (no volume: the controls as set)
    row = settings.volume_row
    cascade = as_set if row is None else held[row]
    peaks = []
    for k in range(last + 1):
        clip = clip_source_peak(cascade, k)
        if clip is not None:
            peaks.append(_at_row(clip[0], trials)[:, 0])
    if not peaks:
        return figures
    gain = np.abs(_at_row(cascade.v_out[last], trials)[:, 0])
    clip_vpk = np.min(peaks, axis=0) * gain
    power = _trials(sine_power(clip_vpk, z_load), trials)
    figures["output.clip_vpk"] = _trials(clip_vpk, trials)
    figures["output.clip_power_w"] = power
    figures["output.clip_current_a"] = _trials(peak_current(clip_vpk, z_load), trials)
    # the stage that drives the load: the last one with a limit, on that limit alone
    stage_vpk = peaks[-1] * gain
    figures["output.output_stage_clip_vpk"] = _trials(stage_vpk, trials)
    figures["output.output_stage_clip_power_w"] = _trials(sine_power(stage_vpk, z_load), trials)
    if sensitivity is not None:
        figures["output.max_spl_db"] = _trials(floored_spl(sensitivity, power), trials)
    return figures


def _output_cap_corner(drawn: Chain, as_set: Cascade, trials: int) -> Figures:
    """``output.output_cap_corner_hz`` per trial, as `chainbudget.budget.power.
    output_figures` has it for a resistive load (`chainbudget.budget.power.
    resistive_cap_corner`, the check's own function): the first-order high-pass corner
    1/(2 pi (R_L + R_out) C) of the last stage's output capacitor, drawn, into the load and
    the stage's own output resistance at the reference (``drawn`` holds the drawn parts as
    (T, 1) arrays). Into a reactive load the check reads the corner off the load's
    impedance curve: the nominal check's (docs/tolerances.md)."""
    last = drawn.stages[-1]
    capacitor = STAGE_KINDS[last.kind].output_capacitor(last)
    if capacitor is None or is_reactive(drawn.load):
        return {}
    z_out = _at_row(as_set.output_impedance[-1], trials)[:, 0]
    c = np.reshape(np.asarray(capacitor, dtype=float), (-1,))
    corner = resistive_cap_corner(c, drawn.load.impedance, z_out)
    return {"output.output_cap_corner_hz": _trials(corner, trials)}


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
    ``elif``); a node clipped at the nominal level draws ``clip-nominal`` alone; a code
    that names the cause of others on the same stage (`chainbudget.findings.SUPERSEDES`)
    hides them in the trials that draw it.
    """
    drawn = [(t, _drawn(t, thresholds, figures)) for t in thresholds]
    causes: dict[tuple[str, str], NDArray[np.bool_]] = {}
    for t, mask in drawn:
        key = (_stage_of(t.path), t.code)
        causes[key] = causes.get(key, np.zeros(mask.shape, bool)) | mask
    by_code: dict[str, NDArray[np.bool_]] = {}
    for t, mask in drawn:
        where = _stage_of(t.path)
        for cause, hidden in SUPERSEDES.items():
            if t.code in hidden and (where, cause) in causes:
                mask = mask & ~causes[(where, cause)]
        by_code[t.code] = by_code.get(t.code, np.zeros(mask.shape, bool)) | mask
    return by_code


def _stage_of(path: str) -> str:
    """The stage a figure or flag belongs to, as the findings name it (``nodes.pre.
    headroom_db``: ``pre``; a flag: the place its key names); a supply's figures are kept
    apart (a supply may share a stage's name)."""
    if is_flag(path):
        return path.rsplit(":", 1)[-1]
    group, _, rest = path.partition(".")
    name = rest.split(".", 1)[0] if "." in rest else ""
    return name if group == "nodes" else f"{group}:{name}"


def _drawn(
    t: Threshold, thresholds: list[Threshold], figures: Mapping[str, NDArray[np.float64]]
) -> NDArray[np.bool_]:
    """The trials that draw one threshold's code, nested with the other thresholds."""
    value = figures[t.path]
    mask = t.beyond(value)
    # a tighter limit on the same side: below a lower one, above a higher one
    tighter = [
        u.limit
        for u in thresholds
        if u.path == t.path
        and u.above == t.above
        and (u.limit > t.limit if t.above else u.limit < t.limit)
    ]
    if tighter:
        mask &= value <= min(tighter) if t.above else value >= max(tighter)
    if t.only_if_at_least is not None:
        other, floor = t.only_if_at_least
        mask &= figures[other] >= floor
    owner = t.path.rsplit(".", 1)[0]
    if t.code != "clip-nominal":
        for u in thresholds:  # a node clipped at the nominal level draws that alone
            if u.code == "clip-nominal" and u.path.rsplit(".", 1)[0] == owner:
                mask &= ~(figures[u.path] < u.limit)
    return mask
