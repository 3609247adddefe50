"""The DC operating point along the chain, worked out the way a designer does it by hand.

Each node's DC potential is carried from the source to the load: series capacitors block
DC, so the node behind one sits where its own stage puts it; every other stage maps the DC
at its input to the DC at its output (`StageKind.dc_output`). Unknown DC (behind a block, or
an op-amp input that floats) is None and stops the check until a stage defines its input
again.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from chainbudget.budget.analysis import Analysis
from chainbudget.stages import KINDS
from chainbudget.stages.base import DcWindow

#: DC potential of the source, V. A source with a DC offset of its own is outside the model:
#: a signal source is AC-coupled or sits at 0 V (common practice, no source).
SOURCE_DC_V = 0.0
#: DC potential the load returns an undriven (capacitor-coupled) output node to, V: the
#: load is resistive to 0 V.
LOAD_DC_V = 0.0
#: A DC this close to the edge of an output's range counts as at the edge (rounding only).
EDGE_TOLERANCE_V = 1e-9


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
    if value is None or window is None:
        return value
    return min(max(value, window.low_v), window.high_v)


def dc_points(analysis: Analysis) -> tuple[DcPoint, ...]:
    """The DC operating point of every stage, from the source (0 V DC) to the load.

    Notes
    -----
    Pots at their settings. A node behind an output capacitor sits where the next stage's
    input returns it (`StageKind.dc_rest`), or at 0 V through the load. On split rails every
    bias point is 0 V, so a 0 V source leaves every op-amp node at 0 V.
    """
    stages, envs = analysis.chain.stages, analysis.envs
    points: list[DcPoint] = []
    dc_in: float | None = SOURCE_DC_V
    for k, (stage, env) in enumerate(zip(stages, envs, strict=True)):
        kind = KINDS[stage.kind]
        window = kind.dc_window(stage, env)
        output = kind.dc_output(stage, env, dc_in)
        node = _clamp(output, window)
        if not kind.output_defined(stage):
            following = KINDS[stages[k + 1].kind] if k + 1 < len(stages) else None
            node = LOAD_DC_V if following is None else following.dc_rest(stages[k + 1], envs[k + 1])
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
