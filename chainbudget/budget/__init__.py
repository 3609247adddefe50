"""The budget of a chain: plain numbers computed from a validated chain, no formatting.

`compute` runs the analysis once and gathers every figure the views and the findings read,
so a number shown in the table, the JSON and a plot comes from one field here.
"""

from __future__ import annotations

from dataclasses import dataclass

from chainbudget.budget.analysis import Analysis
from chainbudget.budget.dcbias import DcPoint, dc_points
from chainbudget.budget.levels import (
    HeadroomCurves,
    NodeLevels,
    VolumeClip,
    headroom_curves,
    node_levels,
    volume_clip_rotation,
)
from chainbudget.budget.noise import NoiseBudget, noise_budget
from chainbudget.budget.power import DriveBudget, OutputFigures, drive_budget, output_figures
from chainbudget.budget.staging import (
    Boost,
    FloatingInput,
    StageHeadroom,
    SupplyRange,
    floating_inputs,
    post_volume_headroom,
    supply_ranges,
    tone_boosts,
)
from chainbudget.budget.supplies import (
    SupplyFigures,
    loaded_analysis,
    supply_figures,
)
from chainbudget.chainfile import Chain


@dataclass(frozen=True)
class Budget:
    """Every figure of one chain (SI units; dB where the name says so)."""

    title: str
    file: str
    reference_hz: float
    band_hz: tuple[float, float]
    ambient_degc: float
    source_level_vrms: float
    source_max_level_vrms: float
    load_ohm: float
    nodes: tuple[NodeLevels, ...]
    first_clip: str | None
    output_stage: str | None
    volume_clip: VolumeClip | None
    post_volume: tuple[StageHeadroom, ...]
    boosts: tuple[Boost, ...]
    supply_ranges: tuple[SupplyRange, ...]
    floating: tuple[FloatingInput, ...]
    has_mains: bool
    volume_stage: str | None
    sweep_points: int
    curves: HeadroomCurves
    noise: NoiseBudget | None = None
    supplies: tuple[SupplyFigures, ...] = ()
    output: OutputFigures | None = None
    drive: DriveBudget | None = None
    dc_points: tuple[DcPoint, ...] = ()


def compute(chain: Chain) -> Budget:
    """Work out the whole budget of a chain.

    Stages are analysed on their rails at low line (low battery) under the loaded power
    tree (`chainbudget.budget.supplies.loaded_analysis`): the swing limits a build must meet.
    """
    analysis = loaded_analysis(chain, corner="low")
    return budget_from(analysis)


def budget_from(analysis: Analysis) -> Budget:
    """The budget of an already solved chain."""
    chain = analysis.chain
    nodes = node_levels(analysis)
    limited = [k for k, n in enumerate(nodes) if n.headroom_db is not None]
    first_clip = min(limited, key=lambda k: nodes[k].headroom_db or 0.0) if limited else None
    output_index = limited[-1] if limited else None
    return Budget(
        title=chain.settings.title,
        file=chain.file,
        reference_hz=chain.settings.reference,
        band_hz=chain.settings.band,
        ambient_degc=chain.settings.ambient,
        source_level_vrms=chain.source.level,
        source_max_level_vrms=chain.source.max_level,
        load_ohm=chain.load.impedance,
        nodes=tuple(nodes),
        first_clip=None if first_clip is None else nodes[first_clip].stage,
        output_stage=None if output_index is None else nodes[output_index].stage,
        volume_clip=None if output_index is None else volume_clip_rotation(analysis, output_index),
        post_volume=tuple(post_volume_headroom(analysis)),
        boosts=tuple(tone_boosts(analysis, nodes)),
        supply_ranges=tuple(supply_ranges(analysis)),
        floating=tuple(floating_inputs(analysis)),
        has_mains=any(s.kind == "rectified" for s in chain.supplies),
        volume_stage=None
        if analysis.volume_index is None
        else chain.stages[analysis.volume_index].name,
        sweep_points=analysis.sweep_points,
        curves=headroom_curves(analysis),
        noise=noise_budget(analysis),
        supplies=supply_figures(analysis),
        output=output_figures(analysis),
        drive=drive_budget(analysis),
        dc_points=dc_points(analysis),
    )
