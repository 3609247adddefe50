"""Views of the DC operating point: each node's DC potential in the JSON and the node table."""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

from chainbudget.budget import Budget
from chainbudget.notation import DASH


def _node_dc(budget: Budget, k: int) -> float | None:
    dc = budget.nodes[k].dc
    if dc is None:
        return None
    value = dc.node_v
    return None if value is None or not math.isfinite(value) else float(value)


def node_json(budget: Budget, k: int) -> dict[str, Any]:
    """``dc_v``: the DC potential of node k, V (null where unknown)."""
    return {"dc_v": _node_dc(budget, k)}


def dc_cell(budget: Budget, k: int) -> str:
    value = _node_dc(budget, k)
    return DASH if value is None else f"{value:.2f} V"


NODE_COLUMNS: list[tuple[str, str, Callable[[Budget, int], str]]] = [("DC", "right", dc_cell)]
