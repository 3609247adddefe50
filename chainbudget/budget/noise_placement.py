"""What placing an attenuating stage ahead of the main gain costs in output SNR: the chain
with the stage moved, and both output SNRs compared.

Moving a stage changes no section's own network (each stage keeps its parts, rails and
controls as set; a pot is never moved into or out of a loop): the sections the analysis
solved are joined again in the new order (`chainbudget.cascade.cascade`), and only what
the order changes is worked out again, the cascade's terminations and the noise each stage
meets through them (`chainbudget.budget.noise_spectra`)."""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from chainbudget.budget.analysis import Analysis, chain_ends, positions_as_set, solve_chain
from chainbudget.budget.noise_spectra import NoiseSpectra, noise_spectra, unweighted
from chainbudget.budget.segments import map_section
from chainbudget.cascade import Cascade, Injection, SectionSolution, cascade
from chainbudget.chainfile import Chain
from chainbudget.loops import Section, sections
from chainbudget.network import Complex, TwoPort
from chainbudget.stages import KINDS

# A stage with more voltage gain than this at the reference is a gain stage (a factor of 2;
# a flat tone stage, a follower or a volume pot stays well below it). Our choice.
MAIN_GAIN_MIN_DB = 6.0


def _db20(ratio: float) -> float | None:
    return 20.0 * math.log10(ratio) if ratio > 0.0 and math.isfinite(ratio) else None


@dataclass(frozen=True)
class PlacementCost:
    """What putting an attenuating stage ahead of the main gain costs in output SNR.

    ``lift_db`` is the SNR at the output with the stage moved to just after ``main_stage``
    minus the SNR as built (positive: the placement lifts the noise floor by that much
    relative to the signal).
    """

    stage: str
    kind: str
    main_stage: str
    main_gain_db: float
    snr_db: float
    moved_snr_db: float
    lift_db: float


def output_snr_db(spectra: NoiseSpectra, level_vrms: float) -> float | None:
    """Nominal level at the output over its unweighted band noise, dB."""
    noise = float(spectra.integrate(spectra.node_psd[-1], unweighted))
    return _db20(level_vrms * float(spectra.signal[-1, 0]) / math.sqrt(noise)) if noise else None


def placement_costs(analysis: Analysis, spectra: NoiseSpectra) -> list[PlacementCost]:
    """Output SNR lost by each volume or tone stage that sits ahead of the main gain.

    The main gain is the stage after it with the most voltage gain at the reference, if
    that exceeds `MAIN_GAIN_MIN_DB` and it is not the last stage (a pot cannot move onto the
    loudspeaker line). The chain is solved again with the stage moved to just after the main
    gain, controls as set, and both output SNRs compared (nominal level, unweighted).
    """
    chain = analysis.chain
    stages = chain.stages
    nominal = analysis.nominal
    # A loop section counts as one stage here: its gain is the closed loop's, and a pot is
    # never moved into it.
    units = nominal.sections or tuple(Section(k, k) for k in range(len(stages)))
    gains = {
        unit: float(20.0 * np.log10(abs(nominal.v_out[unit.last][0] / nominal.v_in[unit.first][0])))
        for unit in units
    }
    snr = output_snr_db(spectra, chain.source.level)
    found: list[PlacementCost] = []
    for v, stage in enumerate(stages):
        if not KINDS[stage.kind].attenuates or snr is None or nominal.section(v).is_loop:
            continue
        after = [unit for unit in units if unit.first > v and unit.last < len(stages) - 1]
        if not after:
            continue
        unit = max(after, key=lambda u: gains[u])
        if gains[unit] <= MAIN_GAIN_MIN_DB:
            continue
        main = unit.last
        order = [*range(v), *range(v + 1, main + 1), v, *range(main + 1, len(stages))]
        moved = replace(chain, stages=tuple(stages[k] for k in order))
        envs = tuple(analysis.envs[k] for k in order)
        cas = _moved_cascade(analysis, moved, order)
        if cas is None:  # no solved sections at hand: solve the moved chain
            cas = solve_chain(moved, envs, analysis.frequency, positions_as_set(moved.stages))
        moved_spectra = noise_spectra(
            moved, envs, analysis.frequency, cas, analysis.temperature_k, analysis.band_slice
        )
        moved_snr = output_snr_db(moved_spectra, chain.source.level)
        if moved_snr is None:
            continue
        found.append(
            PlacementCost(
                stage.name,
                stage.kind,
                stages[unit.first].name,
                gains[unit],
                snr,
                moved_snr,
                moved_snr - snr,
            )
        )
    return found


def _as_set_sections(analysis: Analysis) -> list[SectionSolution] | None:
    """Each section of the chain with its controls as set, as the analysis solved it: the
    setting's combination of each section's grid (the nominal solve itself where the
    section sweeps nothing). None when the analysis holds no grids."""
    if len(analysis.grids) != len(sections(analysis.chain.stages)):
        return None
    found = []
    for grid in analysis.grids:

        def at_setting(arrays: list[Complex], combo: int = grid.set_combo) -> Complex:
            return arrays[0][combo]

        found.append(map_section([grid.solution], at_setting))
    return found


def _renumbered(solution: SectionSolution, first: int) -> SectionSolution:
    """A solved section moved to start at stage ``first``: its network is the same, only
    the stage indices its loop's probes and injections are keyed by move with it."""
    old = solution.section
    shift = first - old.first
    if shift == 0:
        return solution
    section = Section(first, old.last + shift)
    if not old.is_loop:
        return replace(solution, section=section)

    def key(name: str) -> str:
        for prefix in ("node", "link"):
            if name.startswith(prefix) and name[len(prefix) :].isdigit():
                return f"{prefix}{int(name[len(prefix) :]) + shift}"
        return name

    tp = solution.two_port
    probes = {key(name): pair for name, pair in tp.probes.items()}
    injections: dict[int, Injection] = {k + shift: i for k, i in solution.injections.items()}
    return replace(
        solution,
        section=section,
        two_port=TwoPort(tp.a, tp.b, tp.c, tp.d, probes),
        injections=injections,
    )


def _moved_cascade(analysis: Analysis, moved: Chain, order: list[int]) -> Cascade | None:
    """The moved chain's cascade joined from the sections the analysis solved (stage
    ``order[j]`` of the chain is stage j of ``moved``); None when they are not at hand or
    the move would split a section (the caller then solves the moved chain)."""
    solved = _as_set_sections(analysis)
    if solved is None:
        return None
    by_first = {sol.section.first: sol for sol in solved}
    found = []
    for section in sections(moved.stages):
        sol = by_first.get(order[section.first])
        if sol is None or [order[j] for j in section.indices] != list(sol.section.indices):
            return None
        found.append(_renumbered(sol, section.first))
    return cascade(found, *chain_ends(moved, analysis.frequency))
