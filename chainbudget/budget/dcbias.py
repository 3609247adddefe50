"""The DC operating point along the chain, worked out the way a designer does it by hand.

Each node's DC potential is carried from the source to the load: series capacitors block
DC, so the node behind one sits where its own stage puts it; every other stage maps the DC
at its input to the DC at its output (`StageKind.dc_output`). Unknown DC (behind a block, or
an op-amp input that floats) is None and stops the check until a stage defines its input
again.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING, cast

import numpy as np

from chainbudget.chainfile import Chain
from chainbudget.loops import Section, sections
from chainbudget.stages import KINDS
from chainbudget.stages.base import DcWindow, Environment, Stage

if TYPE_CHECKING:
    from chainbudget.budget.analysis import Analysis

#: DC potential of the source, V. A source with a DC offset of its own is outside the model:
#: a signal source is AC-coupled or sits at 0 V (common practice, no source).
SOURCE_DC_V = 0.0
#: DC potential the load returns an undriven (capacitor-coupled) output node to, V: the
#: load is resistive to 0 V.
LOAD_DC_V = 0.0
#: A DC this close to the edge of an output's range counts as at the edge (rounding only).
EDGE_TOLERANCE_V = 1e-9


def stages_at_dc(chain: Chain) -> tuple[Stage, ...]:
    """The chain's stages as DC sees them.

    A capacitive source (a piezo) passes no DC, as a series capacitor does: where the first
    stage's kind has an ``input_cap`` and it is left out, the source's capacitance stands in
    for it, so the stage's own DC rules (its bias resistor, the DC resistance its input
    current meets, a floating + input) apply as they do behind a coupling capacitor.
    """
    stages = chain.stages
    capacitance = chain.source.capacitance
    if capacitance is None or not stages:
        return stages
    first = stages[0]
    keys = {field.key for field in KINDS[first.kind].fields}
    if "input_cap" not in keys or first.values.get("input_cap") is not None:
        return stages
    seen = replace(first, values={**first.values, "input_cap": capacitance})
    return (seen, *stages[1:])


@dataclass(frozen=True)
class DcPoint:
    """DC potentials of one stage, V (None: unknown).

    Attributes
    ----------
    input_v : float or None
        DC at the stage's input node.
    output_v : float or None
        DC the stage drives its own output to, worked out linearly (it may lie beyond what
        the output can reach; the finding quotes it).
    node_v : float or None
        DC at the stage's output node: ``output_v`` held within the reach of an active
        output (a saturated output sits at its limit), or, behind an output capacitor, where
        the next stage's input (or the load) returns it.
    window : DcWindow or None
        Where an active output is meant to sit and the range it can reach.
    pot_top_v : float or None
        DC at the upper end of the stage's pot (a volume control).
    output_name : str
        How the findings name the stage's output ("its output", "its emitter").
    """

    stage: str
    kind: str
    input_v: float | None
    output_v: float | None
    node_v: float | None
    window: DcWindow | None
    pot_top_v: float | None
    output_name: str = "its output"
    #: The stage heads a loop whose feedback passes a series capacitor: at DC its op-amp
    #: has no feedback, and its output's DC is not held anywhere.
    loop_open_at_dc: bool = False

    @property
    def outside(self) -> bool:
        """Whether the output's DC lies at or beyond the edge of the range it can reach
        (at the edge it is already saturated)."""
        w, v = self.window, self.output_v
        if w is None or v is None:
            return False
        return not w.low_v + EDGE_TOLERANCE_V < v < w.high_v - EDGE_TOLERANCE_V

    @property
    def offset_v(self) -> float | None:
        """DC of the output less its bias point, V."""
        if self.window is None or self.output_v is None:
            return None
        return self.output_v - self.window.bias_v

    @property
    def room_v(self) -> float | None:
        """Room from the bias point to the edge of the range on the side of the offset, V."""
        w, offset = self.window, self.offset_v
        if w is None or offset is None:
            return None
        return w.high_v - w.bias_v if offset >= 0.0 else w.bias_v - w.low_v

    @property
    def offset_fraction(self) -> float | None:
        """|offset| as a fraction of the room on its side (inf with no room there)."""
        offset, room = self.offset_v, self.room_v
        if offset is None or room is None:
            return None
        if room <= 0.0:
            return math.inf if offset != 0.0 else 0.0
        return abs(offset) / room

    @property
    def headroom_loss_db(self) -> float | None:
        """Headroom lost to the offset, dB.

        Notes
        -----
        The swing figures assume the output sits at its bias point, where the clip peak is
        min(V_high - V_b, V_b - V_low); sitting at V_dc it is min(V_high - V_dc, V_dc -
        V_low); the loss is 20 log10 of their ratio (none when the offset moves the output
        towards the middle of its range).
        """
        w, v = self.window, self.output_v
        if w is None or v is None or self.outside:
            return None
        assumed = min(w.high_v - w.bias_v, w.bias_v - w.low_v)
        actual = min(w.high_v - v, v - w.low_v)
        if assumed <= 0.0 or actual >= assumed:
            return 0.0
        if actual <= 0.0:
            return math.inf
        return 20.0 * math.log10(assumed / actual)


def _clamp(value: float | None, window: DcWindow | None) -> float | None:
    """``value`` held within the window; element-wise where the parts are arrays over a
    trial axis (`chainbudget.spread.dc`), a plain float otherwise."""
    if value is None or window is None:
        return value
    held = np.minimum(np.maximum(value, window.low_v), window.high_v)
    return float(held) if np.ndim(held) == 0 else cast(float, held)


def dc_points(analysis: Analysis) -> tuple[DcPoint, ...]:
    """The DC operating point of every stage of an analysed chain (`dc_walk`)."""
    return dc_walk(analysis.chain, analysis.envs)


def dc_walk(chain: Chain, envs: Sequence[Environment]) -> tuple[DcPoint, ...]:
    """The DC operating point of every stage, from the source (0 V DC) to the load, each
    stage in its environment ``envs[k]``.

    Notes
    -----
    Pots at their settings. A node behind an output capacitor sits where the next stage's
    input returns it (`StageKind.dc_rest`), or at 0 V through the load. On split rails every
    bias point is 0 V, so a 0 V source leaves every op-amp node at 0 V. A loop section
    (`_loop_points`) holds its sensed node where its first stage's feedback puts it. A
    capacitive source (a piezo) passes no DC: the first input rests where its own stage
    returns it, as behind a series capacitor.
    """
    stages = stages_at_dc(chain)
    points: list[DcPoint] = []
    dc_in: float | None = SOURCE_DC_V
    if chain.source.capacitance is not None and stages:
        # A piezo blocks DC: the first input rests where its own stage returns it, as behind
        # a series capacitor.
        dc_in = KINDS[stages[0].kind].dc_rest(stages[0], envs[0])
    for section in sections(stages):
        if section.is_loop:
            found = _loop_points(stages, envs, section, dc_in)
            points += found
            dc_in = found[-1].node_v
            continue
        k = section.first
        stage, env = stages[k], envs[k]
        kind = KINDS[stage.kind]
        window = kind.dc_window(stage, env)
        output = kind.dc_output(stage, env, dc_in)
        node = _clamp(output, window)
        if not kind.output_defined(stage):
            node = _rest(stages, envs, k)
        points.append(
            DcPoint(
                stage.name,
                stage.kind,
                dc_in,
                output,
                node,
                window,
                kind.pot_dc(stage, dc_in),
                kind.output_name,
            )
        )
        dc_in = node
    return tuple(points)


def _rest(stages: Sequence[Stage], envs: Sequence[Environment], k: int) -> float | None:
    """Where the node behind stage k's output capacitor rests: the next stage's input, or
    the load."""
    if k + 1 >= len(stages):
        return LOAD_DC_V
    return KINDS[stages[k + 1].kind].dc_rest(stages[k + 1], envs[k + 1])


def _loop_points(
    stages: Sequence[Stage], envs: Sequence[Environment], section: Section, dc_in: float | None
) -> list[DcPoint]:
    """DC points of a loop section.

    Notes
    -----
    The first stage's feedback holds the sensed node where its own stage would hold its
    output (`StageKind.dc_output` of the first stage: V+ (1 + R_f/R_g), or V+ with a ground
    leg capacitor), the loop gain taking up what the stages inside drop. Working back from
    there, each stage inside needs at its input its output's DC plus its own drop
    (x - dc_output(x) at x = its output's DC, exact for a stage whose output follows its
    input less a fixed V_BE); the op-amp's output sits at the first of those. A series
    capacitor inside the loop leaves it open at DC: the op-amp's output is not held. A last
    stage sensed inside itself (`StageKind.sense_node`, before its output capacitor) is
    held there, and its output node rests where the load returns it.
    """
    head = section.first
    inside = list(section.indices)[1:]
    last = stages[section.last]
    last_kind = KINDS[last.kind]
    sensed_inside = last_kind.sense_node(last, "out") != "out"
    open_at_dc = any(not KINDS[stages[j].kind].output_defined(stages[j]) for j in inside[:-1]) or (
        not sensed_inside and not last_kind.output_defined(last)
    )
    head_kind = KINDS[stages[head].kind]
    target = None if open_at_dc else head_kind.dc_output(stages[head], envs[head], dc_in)
    needed: dict[int, float | None] = {section.last: target}
    for j in reversed(inside):
        out = needed[j]
        moved = None if out is None else KINDS[stages[j].kind].dc_output(stages[j], envs[j], out)
        needed[j - 1] = None if out is None or moved is None else out + (out - moved)
    points: list[DcPoint] = []
    node_in = dc_in
    for j in section.indices:
        kind = KINDS[stages[j].kind]
        window = kind.dc_window(stages[j], envs[j])
        output = needed[j]
        node = _clamp(output, window)
        if j == section.last and not kind.output_defined(stages[j]):
            node = _rest(stages, envs, j)
        points.append(
            DcPoint(
                stages[j].name,
                stages[j].kind,
                node_in,
                output,
                node,
                window,
                kind.pot_dc(stages[j], node_in),
                kind.output_name,
                loop_open_at_dc=open_at_dc and j == head,
            )
        )
        node_in = node
    return points


def dc_errors(analysis: Analysis) -> tuple[float | None, ...]:
    """Worst-case DC error at each stage's output node from the op-amps' offset voltages and
    bias currents (and a pair's V_BE difference), V (None: unknown).

    Notes
    -----
    Each stage maps the error at its input to its output (`StageKind.dc_error`): through
    its DC gain, plus its own; an output capacitor stops it. A loop section's first stage
    gives the error at the sensed node, its loop gain taking out what the stages inside
    add (their V_BE differences divided by A0 beta); the nodes inside are left unknown.
    """
    return dc_error_walk(analysis.chain, analysis.envs)


def dc_error_walk(chain: Chain, envs: Sequence[Environment]) -> tuple[float | None, ...]:
    """`dc_errors` of ``chain`` with each stage in its environment ``envs[k]`` (the parts
    may be arrays over a trial axis)."""
    stages = stages_at_dc(chain)
    found: list[float | None] = []
    error: float | None = 0.0  # the source sits at 0 V DC, exactly
    for section in sections(stages):
        head = section.first
        error = KINDS[stages[head].kind].dc_error(stages[head], envs[head], error)
        if section.is_loop:
            last = stages[section.last]
            kind = KINDS[last.kind]
            if kind.sense_node(last, "out") != "out" and not kind.output_defined(last):
                error = 0.0  # sensed before its output capacitor: the load sees none of it
            found += [None] * (section.last - section.first)
        found.append(error)
    return tuple(found)


def load_offset(analysis: Analysis) -> float | None:
    """Worst-case DC across the load, V: the DC the chain puts there as built (V_BE drops,
    bias points; `dc_points`) plus the worst-case error of `dc_errors` (None: unknown)."""
    points = dc_points(analysis)
    node = points[-1].node_v if points else None
    error = dc_errors(analysis)[-1]
    if node is None or error is None:
        return None
    return abs(node) + error
