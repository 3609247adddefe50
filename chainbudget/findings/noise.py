"""Findings about the noise budget: what sets the floor, placement, hiss and SNR."""

from __future__ import annotations

from typing import TYPE_CHECKING

from chainbudget.finding import Finding
from chainbudget.notation import eng
from chainbudget.thresholds import HISS_SPL_A_LIMIT_DB, PLACEMENT_LIFT_DB, SNR_MIN_DB

if TYPE_CHECKING:
    from chainbudget.budget import Budget
    from chainbudget.budget.noise import NodeNoise, NoiseBudget


def rules(budget: Budget) -> list[Finding]:
    """Noise floor set late, attenuation ahead of the gain, audible hiss, low SNR."""
    noise = budget.noise
    if noise is None:
        return []
    return [*_late_stage(noise), *_placement(noise), *_hiss(noise), *_snr(noise)]


def _percent(share: float) -> str:
    return f"{100.0 * share:.0f} %"


def _remedy(node: NodeNoise) -> str:
    if node.set_by_index < 0:
        return "the source's own resistance sets the floor: lower its resistance"
    return f'quieten "{node.set_by}", which sets the floor,'


#: What each generator kind is, in words (`chainbudget.network` names them).
_GENERATOR = {
    "thermal": "thermal noise of a resistor",
    "e_n": "the op-amp's voltage noise",
    "i_n": "the op-amp's current noise",
    "shot": "a transistor's shot noise",
}


def _what(kind: str) -> str:
    return _GENERATOR.get(kind, f"{kind} noise")


def _late_stage(noise: NoiseBudget) -> list[Finding]:
    stages = [s for s in noise.stage_shares if s.stage_index >= 0]
    if len(noise.nodes) < 2:
        return []
    first_name = noise.nodes[0].stage
    first = next((s.share for s in stages if s.stage_index == 0), 0.0)
    largest = max(stages, key=lambda s: s.share, default=None)
    if largest is None or largest.stage_index == 0 or largest.share <= first:
        return []
    source = next((s.share for s in noise.stage_shares if s.stage_index < 0), 0.0)
    tail = (
        f"; the source's own resistance gives {_percent(source)}" if source > largest.share else ""
    )
    top = next(c for c in noise.contributors if c.stage_index == largest.stage_index)
    return [
        Finding(
            "note",
            "noise-set-late",
            largest.stage,
            f"this stage sets the noise floor: {_percent(largest.share)} of the output noise "
            f'power against {_percent(first)} from the first stage "{first_name}"{tail}; its '
            f'largest source is "{top.stage}.{top.part}" ({_what(top.kind)}, '
            f"{_percent(top.share)}): quieten it "
            "(a lower-noise part, lower resistances) or move gain ahead of it",
            {"share": largest.share, "first_stage_share": first, "source_share": source},
        )
    ]


def _placement(noise: NoiseBudget) -> list[Finding]:
    return [
        Finding(
            "note",
            "noise-attenuator-before-gain",
            p.stage,
            f'this {p.kind} stage ahead of the main gain "{p.main_stage}" '
            f"({p.main_gain_db:+.1f} dB) lifts the noise floor: the output SNR at the "
            f"nominal level is {p.snr_db:.1f} dB as built and would be {p.moved_snr_db:.1f} dB "
            f'with this stage after "{p.main_stage}" ({p.lift_db:.1f} dB better); move it '
            "there if the headroom allows, or take gain from after it to before it",
            {"lift_db": p.lift_db, "snr_db": p.snr_db, "moved_snr_db": p.moved_snr_db},
        )
        for p in noise.placement
        if p.lift_db > PLACEMENT_LIFT_DB
    ]


def _hiss(noise: NoiseBudget) -> list[Finding]:
    spl = noise.hiss_spl_a_db
    if spl is None or spl <= HISS_SPL_A_LIMIT_DB:
        return []
    over = spl - HISS_SPL_A_LIMIT_DB
    return [
        Finding(
            "warning",
            "hiss-audible",
            noise.output.stage,
            f"hiss at the loudspeaker is {spl:.1f} dB SPL(A) at 1 m "
            f"({eng(noise.output.noise_a_vrms, 'V')} A-weighted), above the "
            f"{HISS_SPL_A_LIMIT_DB:g} dB(A) at which it is heard in a quiet room; "
            f"{_remedy(noise.output)} by {over:.1f} dB, or lower the gain after the "
            "volume control",
            {"hiss_spl_a_db": spl, "limit_db": HISS_SPL_A_LIMIT_DB},
        )
    ]


def _snr(noise: NoiseBudget) -> list[Finding]:
    snr = noise.output.snr_db
    if snr is None or snr >= SNR_MIN_DB:
        return []
    return [
        Finding(
            "warning",
            "snr-low",
            noise.output.stage,
            f"the nominal level is only {snr:.1f} dB above the output noise "
            f"({eng(noise.output.noise_vrms, 'V')} unweighted over the band), short of "
            f"the {SNR_MIN_DB:g} dB usually wanted; {_remedy(noise.output)} or raise "
            "the signal ahead of it",
            {"snr_db": snr, "limit_db": SNR_MIN_DB},
        )
    ]
