"""The numeric state every budget reads: frequency grid, control axes and the cascades.

`analyse` solves the chain three ways: with every control as set (the nominal figures),
with every swept control on its own axis (the worst-case search), and with the volume pot
on a fine axis at the reference frequency (the rotation at which the output clips).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from typing import cast

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget.budget.dcbias import dc_walk
from chainbudget.budget.rails import stage_rails, supply_voltages
from chainbudget.cascade import Cascade, sections, solve_cascade
from chainbudget.chainfile import Chain, ChainFileError
from chainbudget.loudspeaker import load_impedance
from chainbudget.network import SingularNetwork
from chainbudget.source_network import source_impedance
from chainbudget.spectrum import log_frequency_grid, zero_celsius_k
from chainbudget.stages import KINDS
from chainbudget.stages.base import Control, Environment, Stage
from chainbudget.supplies.base import Corners

# Rotations tried for each swept pot in the worst-case search (and the setting itself).
SWEEP_POINTS = 11
# The search solves every combination of swept rotations at once; past this many
# combinations each pot gets fewer rotations (never fewer than 0, 0.5 and 1) so that memory
# stays within a few hundred MB (docs/performance.md).
MAX_COMBINATIONS = 30_000
# Rotations tried for the volume pot when finding where the output starts to clip.
VOLUME_POINTS = 401


@dataclass(frozen=True)
class SweptControl:
    """A control on the worst-case grid: its stage, its axis and its rotations."""

    stage_index: int
    control: Control
    axis: int
    rotations: NDArray[np.float64]


@dataclass(frozen=True)
class Analysis:
    """Everything solved for one chain; index 0 of the frequency axis is the reference."""

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

    @property
    def band_slice(self) -> slice:
        """The band grid within the frequency axis (index 0 is the reference)."""
        return slice(1, None)

    @property
    def temperature_k(self) -> float:
        return self.chain.settings.ambient + zero_celsius_k


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


def solve_chain(
    chain: Chain,
    envs: tuple[Environment, ...],
    frequency: NDArray[np.float64],
    positions: Sequence[Mapping[str, object]],
) -> Cascade:
    """Solve every stage (a loop section as one network) and cascade them between the
    source and the load, both impedances on the frequency axis (a reactive source's
    `chainbudget.source_network.source_impedance`, a loudspeaker's
    `chainbudget.loudspeaker.load_impedance`).

    A singular network is an input error: it is reported with the stage (or the loop
    section's first stage) whose network it is.
    """
    load = load_impedance(chain.load, frequency)
    source = source_impedance(chain.source, frequency)
    settings = cast(Sequence[Mapping[str, ArrayLike]], positions)
    try:
        return solve_cascade(chain.stages, envs, frequency, settings, source, load)
    except SingularNetwork as exc:
        for section in sections(chain.stages):
            try:
                solve_cascade(
                    chain.stages[section.first : section.last + 1],
                    envs[section.first : section.last + 1],
                    frequency,
                    settings[section.first : section.last + 1],
                    source,
                    load,
                )
            except SingularNetwork:
                stage = chain.stages[section.first]
                raise ChainFileError(chain.file, stage.path, str(exc)) from None
        raise ChainFileError(chain.file, "", str(exc)) from None


def master_volume(chain: Chain) -> int | None:
    """Index of the volume control the listener turns: the last stage whose kind sets the
    volume (one earlier in the chain is a trim or an input attenuator)."""
    found = [k for k, st in enumerate(chain.stages) if KINDS[st.kind].sets_volume]
    return found[-1] if found else None


def sweep_points(n_pots: int) -> int:
    """Rotations per pot so that the grid of all swept pots stays within MAX_COMBINATIONS
    (counting the setting and mid rotation each pot adds); at least 3 (0, 0.5, 1)."""
    points = SWEEP_POINTS
    while points > 3 and (points + 2) ** n_pots > MAX_COMBINATIONS:
        points -= 1
    return points


def analyse(
    chain: Chain, corner: str = "nominal", voltages: Mapping[str, Corners] | None = None
) -> Analysis:
    """Solve the chain nominally, over the worst-case control grid and the volume axis.

    The stages' rails are the supplies' ``voltages`` at ``corner``; by default the
    unloaded power tree's (`chainbudget.budget.supplies.loaded_analysis` passes the loaded
    tree's).
    """
    frequency = frequency_axis(chain)
    voltages = dict(supply_voltages(chain) if voltages is None else voltages)
    envs = environments(chain, corner, voltages)
    as_set = positions_as_set(chain.stages)
    nominal = solve_chain(chain, envs, frequency, list(as_set))

    swept_pots = [
        (k, control)
        for k, stage in enumerate(chain.stages)
        for control in KINDS[stage.kind].controls(stage)
        if control.sweep
    ]
    points = sweep_points(len(swept_pots))
    swept = [
        SweptControl(
            k, control, axis, np.unique(np.r_[np.linspace(0.0, 1.0, points), 0.5, control.position])
        )
        for axis, (k, control) in enumerate(swept_pots)
    ]
    n_axes = len(swept)
    grid_positions: list[dict[str, object]] = [dict(p) for p in as_set]
    for sc in swept:
        shape = [1] * (n_axes + 1)
        shape[sc.axis] = sc.rotations.size
        grid_positions[sc.stage_index][sc.control.key] = sc.rotations.reshape(shape)
    worst = solve_chain(chain, envs, frequency, grid_positions) if swept else nominal

    volume_index = master_volume(chain)
    rotations = np.linspace(0.0, 1.0, VOLUME_POINTS)
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
        worst,
        tuple(swept),
        points,
        volume_index,
        rotations,
        volume_sweep,
    )
