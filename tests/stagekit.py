"""Building stages and solving them in tests without going through a chain file.

Values are given in SI (ohm, F, ...), as the loader would have produced them; every field
not given takes its declared default, so a test sees the same stage the loader would build.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget.cascade import StageSolution, solve_stage
from chainbudget.fields import REQUIRED
from chainbudget.parts import OpAmp
from chainbudget.stages import KINDS
from chainbudget.stages.base import Environment, Rails, Stage

TEMPERATURE_K = 298.15


def near_ideal_opamp(name: str = "near_ideal", **overrides: float) -> OpAmp:
    """An op-amp whose gain errors are far below any test tolerance (A0 1e9, GBW 1e15 Hz,
    R_o 0): a demonstration part, not a real one."""
    values: dict[str, Any] = {
        "gbw": 1e15,
        "slew_rate": 1e12,
        "open_loop_gain": 1e9,
        "output_resistance": 0.0,
        "swing_margin": 1.5,
        "output_current": 1.0,
    }
    values.update(overrides)
    return OpAmp(name=name, **values)


def environment(*opamps: OpAmp, rails: Rails | None = None) -> Environment:
    """Split +-15 V rails, 25 degC, the given op-amps (near-ideal by default)."""
    parts = opamps or (near_ideal_opamp(),)
    return Environment(
        temperature_k=TEMPERATURE_K,
        opamps={op.name: op for op in parts},
        transistors={},
        rails=Rails(positive=15.0, negative=-15.0, bias=0.0) if rails is None else rails,
    )


def make_stage(kind: str, name: str = "s", index: int = 1, **values: Any) -> Stage:
    """A stage of ``kind`` with ``values`` (SI) and every other field at its default."""
    spec = KINDS[kind]
    filled = {field.key: field.default for field in spec.fields}
    filled.update(values)
    unset = [key for key, value in filled.items() if value is REQUIRED]
    if unset:
        raise ValueError(f"required fields not given: {unset}")
    if "opamp" in filled and "opamp" not in values:
        filled["opamp"] = "near_ideal"
    return Stage(index, name, kind, filled)


def positions_as_set(stage: Stage) -> dict[str, ArrayLike]:
    return {c.key: c.position for c in KINDS[stage.kind].controls(stage)}


def solve(
    stage: Stage,
    frequency: ArrayLike,
    env: Environment | None = None,
    positions: Mapping[str, ArrayLike] | None = None,
) -> StageSolution:
    """Solve one stage as a two-port on ``frequency`` (Hz)."""
    f = np.atleast_1d(np.asarray(frequency, dtype=float))
    return solve_stage(
        stage,
        environment() if env is None else env,
        f,
        positions_as_set(stage) if positions is None else positions,
    )


def unloaded_gain(solution: StageSolution) -> NDArray[np.complex128]:
    """V_out/V_in with nothing connected to the output (open-circuit voltage gain)."""
    return np.asarray(solution.two_port.voltage_ratio(0.0))
