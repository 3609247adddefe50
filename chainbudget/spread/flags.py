"""Per-trial findings whose rule reads more than one figure (a DC window, a bias current
and the headroom): the batch works out, for each trial, whether the rule fires, and keeps
it as a flag beside the figures.

A flag is a (T,) array of 0.0 and 1.0 under a key that names the rule's severity, its code
and where it fires (``finding:warning:dc-offset:buffer``); the spread's rule limits take it
as drawn where it is 1 (`chainbudget.spread.evaluate.Evaluator.thresholds`). Flags are
no figures: `chainbudget.spread.run` counts them in the yields and reports no statistics
of them.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from numpy.typing import NDArray

#: The prefix of a flag's key.
FLAG = "finding:"


def flag_key(severity: str, code: str, where: str) -> str:
    """The key of the flag of ``code`` (at ``severity``) drawn at ``where``."""
    return f"{FLAG}{severity}:{code}:{where}"


def is_flag(path: str) -> bool:
    return path.startswith(FLAG)


def flag_parts(path: str) -> tuple[str, str]:
    """A flag's (severity, code)."""
    severity, code, _ = path.removeprefix(FLAG).split(":", 2)
    return severity, code


def as_flag(mask: Any, trials: int) -> NDArray[np.float64]:
    """A boolean per trial (or one for every trial) as a (T,) flag of 0.0 and 1.0."""
    flat = np.asarray(mask, dtype=bool).reshape(-1)
    flat = np.broadcast_to(flat, (trials,)) if flat.size == 1 else flat.reshape(trials)
    return flat.astype(float)
