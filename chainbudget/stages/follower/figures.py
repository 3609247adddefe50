"""A follower's own figures (its bias, where it cuts off, its heat at high line) and rules.

Notes
-----
Dissipation at idle and high line: P = V_CE I_C with V_CE from the collector rail to the
quiescent emitter at the high-line rails (where it is largest) and I_C the bias's collector
current. The cut-off swing is the source peak at which the cut-off limit binds, carried to
the output node by the chain's gain (see `chainbudget.stages.follower.model`).
"""

from __future__ import annotations

from dataclasses import dataclass

from chainbudget.finding import Finding
from chainbudget.kindfigures import KindFigures, figure
from chainbudget.notation import amps, sig, watts
from chainbudget.stages.base import NodeFacts, StageContext
from chainbudget.stages.follower.bias import CUT_OFF, follower_bias
from chainbudget.thresholds import FOLLOWER_HOT_W, HOT_PART_W, THIN_HEADROOM_DB


@dataclass(frozen=True)
class FollowerFigures(KindFigures):
    """A follower's bias and swing (V, A), and its idle dissipation at high line (W).

    ``cut_off_vpk`` is None where no signal level reaches the cut-off limit.
    """

    title = "follower"
    json_place = "drive.followers[]"

    stage: str
    i_e_a: float = figure("bias current", "A", node_key="bias_current_a")
    emitter_v: float = figure("emitter at rest", "V")
    cut_off: bool = figure("cut off (no working bias)")
    limited_by: str | None = figure("clips first on")
    #: Where the bias side would cut off, however far beyond the swing the rails allow.
    cut_off_vpk: float | None = figure(node_key="cut_off_vpk")
    dissipation_w: float = figure("dissipation at idle, high line", "W")
    #: The same where it is what clips the stage (a level the signal can reach).
    cuts_off_at_vpk: float | None = figure("cuts off at", "Vpk", default=None)


def follower_figures(context: StageContext) -> FollowerFigures:
    """Bias, cut-off swing and dissipation of the follower ``context.stage``."""
    stage, k = context.stage, context.index
    bias = follower_bias(stage, context.env)
    hot = follower_bias(stage, context.hot_env)
    rails = context.hot_env.rails
    assert rails is not None, "a follower always has rails"
    collector = rails.positive if hot.polarity > 0 else rails.negative
    v_ce = abs(collector - hot.emitter_v)
    cut_source = context.limit_source_peak(k, CUT_OFF)
    own = context.source_clip(k)
    cut_off = None if cut_source is None else cut_source * context.gain(k)
    return FollowerFigures(
        stage=stage.name,
        i_e_a=bias.i_e,
        emitter_v=bias.emitter_v,
        cut_off=bias.cut_off,
        limited_by=None if own is None else own[1].name,
        cut_off_vpk=cut_off,
        dissipation_w=v_ce * hot.small_signal.i_c,
        cuts_off_at_vpk=cut_off if own is not None and own[1].name == CUT_OFF else None,
    )


def follower_rules(fo: FollowerFigures, facts: NodeFacts) -> list[Finding]:
    """Heat in free air, no working bias, cut-off first, and the hot-parts caution."""
    found: list[Finding] = []
    if fo.dissipation_w >= FOLLOWER_HOT_W:
        found.append(
            Finding(
                "warning",
                "follower-hot",
                fo.stage,
                f"the follower's transistor dissipates {watts(fo.dissipation_w)} at idle and "
                f"high line, more than the {watts(FOLLOWER_HOT_W)} a small transistor takes "
                "in free air; give it a heatsink, a larger device, or less bias current",
                {"dissipation_w": fo.dissipation_w},
            )
        )
    if fo.cut_off:
        found.append(
            Finding(
                "error",
                "follower-off",
                fo.stage,
                f"the follower has no working bias (emitter at {sig(fo.emitter_v, 'V')}, "
                f"{amps(fo.i_e_a)}): its base bias leaves no room to a rail; set base_bias "
                "between the rails with room for V_BE and the swing",
                {"i_e_a": fo.i_e_a, "emitter_v": fo.emitter_v},
            )
        )
    elif fo.limited_by == CUT_OFF and fo.cut_off_vpk is not None:
        thin = facts.headroom_db is not None and facts.headroom_db < THIN_HEADROOM_DB
        found.append(
            Finding(
                "warning" if thin else "note",
                "follower-cut-off",
                fo.stage,
                f"clips first on the bias side: with {amps(fo.i_e_a)} of bias current the "
                f"transistor cuts off at {sig(fo.cut_off_vpk, 'V')} peak into its load "
                "(I_E times the emitter resistor in parallel with the load); raise the bias "
                "current or bias it with a current sink",
                {"i_e_a": fo.i_e_a, "cut_off_vpk": fo.cut_off_vpk},
            )
        )
    if fo.dissipation_w >= HOT_PART_W:
        found.append(
            Finding(
                "caution",
                "hot-follower",
                fo.stage,
                f'Hot parts: follower "{fo.stage}" dissipates {sig(fo.dissipation_w, "W")} at '
                "idle; "
                "its transistor can burn on touch. Mount it where it cannot be touched and check "
                "its temperature on the bench.",
                {"dissipation_w": fo.dissipation_w},
            )
        )
    return found
