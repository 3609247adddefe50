"""The power tree: every supply's output voltage at low line, nominal and high line."""

from __future__ import annotations

from chainbudget.chainfile import Chain
from chainbudget.stages.base import Rails, Stage
from chainbudget.supplies import KINDS
from chainbudget.supplies.base import GROUND_SUPPLY, Corners


def supply_voltages(chain: Chain) -> dict[str, Corners]:
    """Output voltage magnitude of every supply at the three line corners, V.

    Parents are solved before children (the loader has ruled out cycles).
    """
    found: dict[str, Corners] = {}
    pending = list(chain.supplies)
    while pending:
        for supply in list(pending):
            parent = supply.parent
            if parent is None or parent in found:
                corners = KINDS[supply.kind].output(
                    supply, None if parent is None else found[parent]
                )
                found[supply.name] = corners
                pending.remove(supply)
    return found


def stage_rails(stage: Stage, voltages: dict[str, Corners], corner: str) -> Rails | None:
    """The rails of a stage at one corner (``"low"``, ``"nominal"`` or ``"high"``).

    A supply named as the negative rail sits below ground. The bias point is the stage's
    ``bias`` if given, else mid-rail for a single supply and ground for split rails.
    """
    positive_name = stage.values.get("positive")
    if positive_name is None:
        return None
    negative_name = stage.values.get("negative", GROUND_SUPPLY)

    def level(name: str) -> float:
        return 0.0 if name == GROUND_SUPPLY else float(getattr(voltages[name], corner))

    positive = level(positive_name)
    negative = -level(negative_name)
    bias = stage.optional("bias")
    if bias is None:
        bias = (positive + negative) / 2.0 if negative_name == GROUND_SUPPLY else 0.0
    return Rails(positive=positive, negative=negative, bias=bias)
