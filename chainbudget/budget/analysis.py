"""The numeric state every budget reads: frequency grid, control axes and the cascades.

`analyse` solves the chain three ways: with every control as set (the nominal figures),
at the settings the worst-case search (`chainbudget.budget.search`) singles out from every
combination of the swept controls' rotations, and with the volume pot on a fine axis at the
reference frequency (the rotation at which the output clips).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from typing import cast

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget.budget.dcbias import dc_walk
from chainbudget.budget.rails import stage_rails, supply_voltages
from chainbudget.budget.search import SearchInput, SearchResult, SectionGrid, search
from chainbudget.budget.segments import map_section, search_port, section_at
from chainbudget.cascade import (
    Cascade,
    SectionSolution,
    cascade,
    sections,
    solve_section,
    stamp_section,
)
from chainbudget.chainfile import Chain, ChainFileError
from chainbudget.loops import Section
from chainbudget.loudspeaker import load_impedance
from chainbudget.network import Complex, Netlist, SingularNetwork
from chainbudget.source_network import source_impedance
from chainbudget.spectrum import log_frequency_grid, zero_celsius_k
from chainbudget.stages import KINDS
from chainbudget.stages.base import Built, Control, Environment, Stage
from chainbudget.supplies.base import Corners

# Rotations tried for each swept pot in the worst-case search (and the setting itself), for
# any number of pots: the search grows polynomially with them (docs/performance.md).
SWEEP_POINTS = 11
# Matrix entries (combinations x frequencies x N^2) of a section's network solved at once
# over its own controls' combinations: 32 MB of complex entries.
SECTION_BLOCK = 1 << 21
# Rotations tried for the volume pot when finding where the output starts to clip.
VOLUME_POINTS = 401
#: Those rotations, evenly from 0 to 1 (read only: every volume sweep shares it).
VOLUME_ROTATIONS = np.linspace(0.0, 1.0, VOLUME_POINTS)
VOLUME_ROTATIONS.flags.writeable = False


@dataclass(frozen=True)
class SweptControl:
    """A control the worst-case search sweeps: its stage, its column in the candidate
    settings (`Analysis.candidates`) and its rotations."""

    stage_index: int
    control: Control
    axis: int
    rotations: NDArray[np.float64]

    @property
    def as_set(self) -> int:
        """The index of the control's setting as set among its rotations."""
        return int(np.flatnonzero(self.rotations == self.control.position)[0])


@dataclass(frozen=True)
class Analysis:
    """Everything solved for one chain; index 0 of the frequency axis is the reference.

    ``swept`` is the chain solved at candidate settings of the swept controls (its leading
    axis; ``candidates`` holds each one's rotation indices, in grid order): every control as
    set, each stage's controls fully up with the others as set, and the settings of each
    op-amp's largest output current the search found. Each op-amp's largest current over
    ``swept`` is its largest over every combination of rotations; each node's worst case is
    in ``worst`` (worked out by `chainbudget.budget.levels` at its own setting). ``grids``
    holds each section solved over its own controls' combinations.
    """

    chain: Chain
    frequency: NDArray[np.float64]
    voltages: dict[str, Corners]
    envs: tuple[Environment, ...]
    nominal: Cascade
    swept: Cascade
    swept_controls: tuple[SweptControl, ...]
    sweep_points: int
    volume_index: int | None
    volume_rotations: NDArray[np.float64]
    volume_sweep: Cascade | None
    grids: tuple[SectionGrid, ...] = ()
    candidates: NDArray[np.intp] = field(default_factory=lambda: np.zeros((1, 0), np.intp))
    worst: SearchResult | None = None

    @property
    def band_slice(self) -> slice:
        """The band grid within the frequency axis (index 0 is the reference)."""
        return slice(1, None)

    @property
    def temperature_k(self) -> float:
        return self.chain.settings.ambient + zero_celsius_k

    def candidate_row(self, rotations: Sequence[int]) -> int:
        """The row of ``swept`` with these rotation indices (one per swept control)."""
        hits = np.nonzero(np.all(self.candidates == np.asarray(rotations), axis=1))[0]
        if hits.size == 0:
            raise LookupError(f"no candidate setting with rotations {tuple(rotations)}")
        return int(hits[0])

    def setting_rotations(self, setting: NDArray[np.intp]) -> tuple[int, ...]:
        """Rotation index of each swept control at a setting (a combination per section)."""
        found: list[int] = []
        for grid, combo in zip(self.grids, setting, strict=True):
            found += [int(i) for i in grid.combos[combo]]
        return tuple(found)

    def at_settings(self, settings: NDArray[np.intp]) -> Cascade:
        """The chain with each section at its combination ``settings[section, f]`` at each
        frequency f, or at ``settings[section, 0]`` at every one (arrays of shape (1, F))."""
        return cascade(
            [section_at(g.solution, settings[j][None, :]) for j, g in enumerate(self.grids)],
            *chain_ends(self.chain, self.frequency),
        )


def frequency_axis(chain: Chain) -> NDArray[np.float64]:
    """The reference frequency followed by the log-spaced band grid, Hz."""
    s = chain.settings
    grid = log_frequency_grid(s.band[0], s.band[1], s.points_per_decade)
    return np.concatenate(([s.reference], grid))


def environments(
    chain: Chain,
    corner: str = "nominal",
    voltages: Mapping[str, Corners] | None = None,
    dc_inputs: Sequence[float | None] | None = None,
) -> tuple[Environment, ...]:
    """Each stage's environment: temperature, parts and rails at a supply corner (of the
    unloaded tree unless ``voltages`` are given), and the DC at its input as the chain's DC
    walk finds it (`chainbudget.budget.dcbias.dc_walk`), so a DC-coupled stage is built at
    the operating point the DC check reports. ``dc_inputs`` gives those DCs instead of
    walking them (the spread holds them at the nominal check's: its parts are arrays)."""
    if voltages is None:
        voltages = supply_voltages(chain)
    temperature = chain.settings.ambient + zero_celsius_k
    envs = tuple(
        Environment(
            temperature,
            chain.opamps,
            chain.transistors,
            stage_rails(stage, voltages, corner),
            chain.load.impedance,
        )
        for stage in chain.stages
    )
    if dc_inputs is None:
        dc_inputs = [point.input_v for point in dc_walk(chain, envs)]
    return tuple(replace(env, dc_input_v=dc_in) for env, dc_in in zip(envs, dc_inputs, strict=True))


def positions_as_set(stages: Sequence[Stage]) -> list[dict[str, float]]:
    """Every control of every stage at its set position."""
    return [{c.key: c.position for c in KINDS[st.kind].controls(st)} for st in stages]


def solve_sections(
    chain: Chain,
    envs: Sequence[Environment],
    frequency: NDArray[np.float64],
    positions: Sequence[Mapping[str, object]],
) -> list[SectionSolution]:
    """Solve every section of the chain (a stage, or a loop section as one network).

    A singular network is an input error: it is reported with the stage (or the loop
    section's first stage) whose network it is.
    """
    settings = cast(Sequence[Mapping[str, ArrayLike]], positions)
    found = []
    for section in sections(chain.stages):
        try:
            found.append(solve_section(chain.stages, envs, frequency, settings, section))
        except SingularNetwork as exc:
            stage = chain.stages[section.first]
            raise ChainFileError(chain.file, stage.path, str(exc)) from None
    return found


def solve_chain(
    chain: Chain,
    envs: Sequence[Environment],
    frequency: NDArray[np.float64],
    positions: Sequence[Mapping[str, object]],
) -> Cascade:
    """Solve every section (`solve_sections`) and cascade them between the source and the
    load (its impedance on the frequency axis)."""
    solved = solve_sections(chain, envs, frequency, positions)
    return cascade(solved, *chain_ends(chain, frequency))


def chain_ends(chain: Chain, frequency: NDArray[np.float64]) -> tuple[Complex, Complex]:
    """The source's and the load's impedances on the frequency axis (ohm): what every
    cascade of the chain, and the worst-case search, is terminated in (a reactive source's
    `chainbudget.source_network.source_impedance`, a loudspeaker's
    `chainbudget.loudspeaker.load_impedance`)."""
    source = np.broadcast_to(
        np.asarray(source_impedance(chain.source, frequency), dtype=complex), frequency.shape
    )
    return source, np.asarray(load_impedance(chain.load, frequency), dtype=complex)


def master_volume(chain: Chain) -> int | None:
    """Index of the volume control the listener turns: the last stage whose kind sets the
    volume (one earlier in the chain is a trim or an input attenuator)."""
    found = [k for k, st in enumerate(chain.stages) if KINDS[st.kind].sets_volume]
    return found[-1] if found else None


def rotations_tried(position: float) -> NDArray[np.float64]:
    """The rotations the search tries for a pot set at ``position``: SWEEP_POINTS evenly
    from 0 to 1, mid rotation and the setting itself, ascending, each once."""
    return np.unique(np.r_[np.linspace(0.0, 1.0, SWEEP_POINTS), 0.5, position])


def swept_controls(chain: Chain) -> tuple[SweptControl, ...]:
    """Every control the search sweeps, in chain order (its column in the candidates)."""
    found: list[SweptControl] = []
    for k, stage in enumerate(chain.stages):
        for control in KINDS[stage.kind].controls(stage):
            if control.sweep:
                found.append(
                    SweptControl(k, control, len(found), rotations_tried(control.position))
                )
    return tuple(found)


def _network_size(
    chain: Chain,
    envs: Sequence[Environment],
    as_set: Sequence[Mapping[str, ArrayLike]],
    section: Section,
) -> int:
    """Unknowns of a section's network (with its two port sources)."""
    net = Netlist(np.ones(1))
    stamp_section(net, chain.stages, envs, as_set, section, "in", "out")
    return net.size + 2


def section_grid(
    chain: Chain,
    envs: Sequence[Environment],
    frequency: NDArray[np.float64],
    as_set: Sequence[Mapping[str, float]],
    section: Section,
    controls: Sequence[SweptControl],
    builts: Sequence[Built],
    as_set_solution: SectionSolution | None = None,
) -> SectionGrid:
    """A section solved over every combination of its own swept controls' rotations, a run
    of frequencies at a time so that its matrices stay within SECTION_BLOCK entries; a
    section with none is its solution with every control as set (``as_set_solution`` when
    given: the nominal solve's, not solved again).

    Each stage keeps the build of the nominal solve (``builts``: its limits over the whole
    band)."""
    n_freq = frequency.size
    sizes = [sc.rotations.size for sc in controls]
    count = math.prod(sizes)
    positions: list[dict[str, object]] = [dict(p) for p in as_set]
    for q, sc in enumerate(controls):
        shape = [1] * (len(controls) + 1)
        shape[q] = sc.rotations.size
        positions[sc.stage_index][sc.control.key] = sc.rotations.reshape(shape)
    settings = cast(Sequence[Mapping[str, ArrayLike]], positions)
    if controls:
        n = _network_size(chain, envs, settings, section)
        step = max(1, SECTION_BLOCK // (count * n * n))
    else:
        step = n_freq
    if not controls and as_set_solution is not None:
        pieces = [as_set_solution]
    else:
        pieces = [
            solve_section(chain.stages, envs, frequency[i : i + step], settings, section)
            for i in range(0, n_freq, step)
        ]

    chunks = [frequency[i : i + step].size for i in range(0, n_freq, step)]

    def joined(parts: list[Complex]) -> Complex:
        return np.concatenate(
            [
                np.broadcast_to(x, (*sizes, f)).reshape(count, f)
                for x, f in zip(parts, chunks, strict=True)
            ],
            axis=-1,
        )

    solved = map_section(pieces, joined)
    solved = replace(
        solved,
        stages=tuple(
            replace(sol, built=built)
            for sol, built in zip(
                solved.stages, builts[section.first : section.last + 1], strict=True
            )
        ),
    )
    combos = np.indices(sizes).reshape(len(sizes), count).T.astype(np.intp)
    distances = tuple(np.abs(sc.rotations - sc.control.position) for sc in controls)
    at_set = [sc.as_set for sc in controls]
    distance = np.zeros(count)
    for q, d in enumerate(distances):
        distance = distance + d[combos[:, q]]
    return SectionGrid(
        solved,
        search_port(solved),
        combos,
        distances,
        int(np.ravel_multi_index(at_set, sizes)) if sizes else 0,
        distance,
    )


@dataclass(frozen=True)
class WorstSearch:
    """The worst-case search of one chain: the swept controls, each section's grid, what
    the search found, the candidate settings and the chain solved at them."""

    controls: tuple[SweptControl, ...]
    grids: tuple[SectionGrid, ...]
    found: SearchResult
    candidates: NDArray[np.intp]
    swept: Cascade


def worst_search(
    chain: Chain,
    envs: Sequence[Environment],
    frequency: NDArray[np.float64],
    nominal: Cascade,
    nominal_sections: Sequence[SectionSolution] | None = None,
) -> WorstSearch:
    """Search every combination of the swept controls' rotations for the worst cases
    (`chainbudget.budget.search`), section by section, and solve the chain at the
    candidate settings the other figures read. ``nominal_sections`` (the sections of
    ``nominal``, when at hand) serve as the grids of the sections with no swept control."""
    as_set = positions_as_set(chain.stages)
    controls = swept_controls(chain)
    found_sections = sections(chain.stages)
    builts = [sol.built for sol in nominal.stages]
    grids = tuple(
        section_grid(
            chain,
            envs,
            frequency,
            as_set,
            section,
            [sc for sc in controls if sc.stage_index in section],
            builts,
            None if nominal_sections is None else nominal_sections[u],
        )
        for u, section in enumerate(found_sections)
    )
    unit_of = tuple(
        next(u for u, section in enumerate(found_sections) if k in section)
        for k in range(len(chain.stages))
    )
    source, load = chain_ends(chain, frequency)
    limited = [k for k, built in enumerate(builts) if built.limits]
    found = search(
        SearchInput(
            grids,
            unit_of,
            tuple(builts),
            source,
            np.broadcast_to(1.0 / load, frequency.shape),
            math.sqrt(2.0) * chain.source.max_level,
            slice(1, None),
        ),
        limited,
    )
    candidates = _candidates(chain, controls, grids, found)
    at_candidates = cascade(
        [
            section_at(g.solution, _section_combos(candidates, controls, section)[:, None])
            for g, section in zip(grids, found_sections, strict=True)
        ],
        source,
        load,
    )
    return WorstSearch(controls, grids, found, candidates, at_candidates)


def _candidates(
    chain: Chain,
    controls: Sequence[SweptControl],
    grids: Sequence[SectionGrid],
    found: SearchResult,
) -> NDArray[np.intp]:
    """Rotation indices (one column per swept control) of every candidate setting, each
    once, in grid order: as set; each stage's controls fully up, the others as set (what
    `chainbudget.budget.levels.set_point_index` looks up); and the settings of each
    op-amp's largest output current. (Each node's worst case is worked out at its own
    setting: `chainbudget.budget.levels`.)"""
    as_set = [sc.as_set for sc in controls]
    rows = {tuple(as_set)}
    for k in range(len(chain.stages)):
        own = [sc for sc in controls if sc.stage_index == k]
        if own:
            up = list(as_set)
            for sc in own:
                up[sc.axis] = sc.rotations.size - 1  # fully up: the last rotation, 1
            rows.add(tuple(up))
    for _k, _label, near in found.drives:
        for column in near.T:
            rows.add(tuple(int(i) for g, c in zip(grids, column, strict=True) for i in g.combos[c]))
    return np.array(sorted(rows), dtype=np.intp).reshape(len(rows), len(controls))


def _section_combos(
    candidates: NDArray[np.intp], controls: Sequence[SweptControl], section: Section
) -> NDArray[np.intp]:
    """Each candidate's combination of one section's swept controls (0 for none)."""
    own = [sc for sc in controls if sc.stage_index in section]
    if not own:
        return np.zeros(1, dtype=np.intp)
    columns = tuple(candidates[:, sc.axis] for sc in own)
    return np.asarray(np.ravel_multi_index(columns, [sc.rotations.size for sc in own]), np.intp)


def analyse(
    chain: Chain, corner: str = "nominal", voltages: Mapping[str, Corners] | None = None
) -> Analysis:
    """Solve the chain nominally, at the worst-case search's settings and on the volume axis.

    The stages' rails are the supplies' ``voltages`` at ``corner``; by default the
    unloaded power tree's (`chainbudget.budget.supplies.loaded_analysis` passes the loaded
    tree's).
    """
    frequency = frequency_axis(chain)
    voltages = dict(supply_voltages(chain) if voltages is None else voltages)
    envs = environments(chain, corner, voltages)
    as_set = positions_as_set(chain.stages)
    solved = solve_sections(chain, envs, frequency, list(as_set))
    nominal = cascade(solved, *chain_ends(chain, frequency))
    worst = worst_search(chain, envs, frequency, nominal, solved)

    volume_index = master_volume(chain)
    rotations = VOLUME_ROTATIONS
    volume_sweep = None
    if volume_index is not None:
        fine: list[dict[str, object]] = [dict(p) for p in as_set]
        fine[volume_index]["position"] = rotations[:, None]
        volume_sweep = solve_chain(chain, envs, frequency[:1], fine)
    return Analysis(
        chain,
        frequency,
        voltages,
        envs,
        nominal,
        worst.swept,
        worst.controls,
        SWEEP_POINTS,
        volume_index,
        rotations,
        volume_sweep,
        worst.grids,
        worst.candidates,
        worst.found,
    )
