"""Views of the noise budget: node columns, the chain figures, contributors, spectral detail."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from chainbudget.budget import Budget
from chainbudget.budget.noise import NoiseBudget
from chainbudget.notation import DASH, decibels, eng
from chainbudget.report.layout import ReportTable
from chainbudget.report.tables import add_row, new_table


def _percent(share: float) -> str:
    return f"{100.0 * share:.1f} %"


def _density(value: float | None) -> str:
    return eng(value, "V/rtHz")


# --- JSON ------------------------------------------------------------------------------------


def node_json(budget: Budget, k: int) -> dict[str, Any]:
    """Noise keys of node k (contract: noise_vrms, noise_a_vrms, snr_db; and more)."""
    noise = budget.noise
    if noise is None:
        return {}
    n = noise.nodes[k]
    return {
        "noise_vrms": n.noise_vrms,
        "noise_a_vrms": n.noise_a_vrms,
        "noise_468_vrms": n.noise_468_vrms,
        "noise_density_v_rthz": n.density_v_rthz,
        "snr_db": n.snr_db,
        "snr_a_db": n.snr_a_db,
        "noise_set_by": n.set_by,
    }


def json_part(budget: Budget) -> dict[str, Any]:
    """Top-level noise keys: chain figures, the ten largest sources and the details."""
    noise = budget.noise
    if noise is None:
        return {}
    return {
        "input_noise_vrms": noise.input_noise_vrms,
        "input_noise_a_vrms": noise.input_noise_a_vrms,
        "ein_dbu": noise.ein_dbu,
        "ein_a_dbu": noise.ein_a_dbu,
        "noise_figure_db": noise.noise_figure_db,
        "noise_figure_hz": noise.noise_figure_hz,
        "dynamic_range_db": noise.dynamic_range_db,
        "dynamic_range_a_db": noise.dynamic_range_a_db,
        "hiss_spl_db": noise.hiss_spl_db,
        "hiss_spl_a_db": noise.hiss_spl_a_db,
        "noise_sources": [
            {
                "label": c.label,
                "stage": c.stage,
                "part": c.part,
                "kind": c.kind,
                "noise_vrms": c.noise_vrms,
                "share": c.share,
                "share_a": c.share_a,
            }
            for c in noise.top_contributors
        ],
        "noise": {
            "source_resistance_ohm": noise.source_resistance_ohm,
            "output_clip_vrms": noise.output_clip_vrms,
            "stage_shares": [
                {"stage": s.stage, "share": s.share, "share_a": s.share_a}
                for s in noise.stage_shares
            ],
            "spectrum": [
                {
                    "frequency_hz": spot.frequency_hz,
                    "density_v_rthz": spot.density_v_rthz,
                    "input_density_v_rthz": spot.input_density_v_rthz,
                    "contributors": [
                        {
                            "label": c.label,
                            "stage": c.stage,
                            "part": c.part,
                            "kind": c.kind,
                            "density_v_rthz": c.density_v_rthz,
                            "share": c.share,
                        }
                        for c in spot.contributors
                    ],
                }
                for spot in noise.spectrum
            ],
            "placement": [
                {
                    "stage": p.stage,
                    "main_stage": p.main_stage,
                    "snr_db": p.snr_db,
                    "moved_snr_db": p.moved_snr_db,
                    "lift_db": p.lift_db,
                }
                for p in noise.placement
            ],
        },
    }


# --- tables ----------------------------------------------------------------------------------


def _node_cell(attribute: str, unit: str | None = None) -> Callable[[Budget, int], str]:
    def cell(budget: Budget, k: int) -> str:
        if budget.noise is None:
            return DASH
        value = getattr(budget.noise.nodes[k], attribute)
        if unit is None:
            return decibels(value, signed=False)
        return eng(value, unit)

    return cell


# The noise column set of the node table: (header, justify, cell).
NODE_COLUMNS: list[tuple[str, str, Callable[[Budget, int], str]]] = [
    ("noise", "right", _node_cell("noise_vrms", "V")),
    ("noise A", "right", _node_cell("noise_a_vrms", "V")),
    ("SNR dB", "right", _node_cell("snr_db")),
]


def _figures_table(noise: NoiseBudget, budget: Budget) -> ReportTable:
    table = new_table(
        f"Noise over {eng(budget.band_hz[0], 'Hz')} to {eng(budget.band_hz[1], 'Hz')} "
        "(controls as set; A: IEC 61672-1)",
        "figure",
        "unweighted",
        "A-weighted",
    )
    out = noise.output
    add_row(
        table,
        f'output noise ("{out.stage}"), set by "{out.set_by}"',
        eng(out.noise_vrms, "V"),
        eng(out.noise_a_vrms, "V"),
    )
    add_row(
        table,
        "referred to the source",
        eng(noise.input_noise_vrms, "V"),
        eng(noise.input_noise_a_vrms, "V"),
    )
    add_row(
        table, "equivalent input noise, dBu", decibels(noise.ein_dbu), decibels(noise.ein_a_dbu)
    )
    add_row(
        table,
        "SNR at nominal level, dB",
        decibels(out.snr_db, signed=False),
        decibels(out.snr_a_db, signed=False),
    )
    add_row(
        table,
        "dynamic range (clip over noise), dB",
        decibels(noise.dynamic_range_db, signed=False),
        decibels(noise.dynamic_range_a_db, signed=False),
    )
    if noise.hiss_spl_db is not None:
        add_row(
            table,
            "hiss at 1 m, dB SPL",
            decibels(noise.hiss_spl_db, signed=False),
            decibels(noise.hiss_spl_a_db, signed=False),
        )
    nf = decibels(noise.noise_figure_db, signed=False)
    add_row(
        table,
        f"noise figure at {eng(noise.noise_figure_hz, 'Hz')} vs "
        f"{eng(noise.source_resistance_ohm, 'ohm')} source, dB"
        if budget.source_capacitance_f is None and budget.source_inductance_h is None
        # a reactive source: only its real part is noisy, and that is the reference
        else f"noise figure at {eng(noise.noise_figure_hz, 'Hz')} vs "
        f"{eng(noise.source_resistance_ohm, 'ohm')} (Re Zs), dB",
        nf,
        "",
    )
    return table


def contributors_table(noise: NoiseBudget) -> ReportTable:
    """The ten largest noise sources at the output, ranked by share of the noise power."""
    table = new_table(
        "Largest noise sources at the output (share of band noise power)",
        "#",
        "stage.part",
        "kind",
        "at output",
        "share",
        "share A",
        left=("stage.part", "kind"),
    )
    for rank, c in enumerate(noise.top_contributors, 1):
        add_row(
            table,
            str(rank),
            f"{c.stage}.{c.part}",
            c.kind,
            eng(c.noise_vrms, "V"),
            _percent(c.share),
            _percent(c.share_a),
        )
    return table


def tables(budget: Budget) -> list[ReportTable]:
    """The chain's noise figures and its ranked contributors."""
    noise = budget.noise
    if noise is None:
        return []
    return [_figures_table(noise, budget), contributors_table(noise)]


def detail_tables(budget: Budget) -> list[ReportTable]:
    """Spectral detail (``check --noise-detail``): at each listed frequency the output noise
    density, its input-referred value and the largest contributors."""
    noise = budget.noise
    if noise is None:
        return []
    found = []
    for spot in noise.spectrum:
        table = new_table(
            f"Noise at {eng(spot.frequency_hz, 'Hz')}: {_density(spot.density_v_rthz)} "
            f"at the output, {_density(spot.input_density_v_rthz)} referred to the source",
            "stage.part",
            "kind",
            "density at output",
            "share",
            left=("kind",),
        )
        for c in spot.contributors:
            add_row(
                table,
                f"{c.stage}.{c.part}",
                c.kind,
                _density(c.density_v_rthz),
                _percent(c.share),
            )
        found.append(table)
    return found
