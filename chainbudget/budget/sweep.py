"""A control or a part value swept: the key figures of the chain at each step.

`stepped_control` and `stepped_value` turn what the user names (``tone.bass_position``,
``driver.feedback``) into a `chainbudget.budget.steps.Stepped`, refusing what cannot be
stepped with one line that says why; `sweep` solves every step in one batched analysis
(`chainbudget.budget.steps.loaded_steps`) and gives each step's `Budget`, the same budget a
``check`` of the file edited to that value gives; `SweepRow` holds the figures the sweep
table shows.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass, replace

import numpy as np
from numpy.typing import NDArray

from chainbudget import fields as f
from chainbudget.budget import Budget, budget_from
from chainbudget.budget.analysis import environments, frequency_axis
from chainbudget.budget.steps import Stepped, loaded_steps, with_value
from chainbudget.cascade import solve_stage
from chainbudget.chainfile import Chain, ChainError, ChainFileError, chain_to_dict, parse_chain
from chainbudget.fields import suggest
from chainbudget.findings import findings as draw_findings
from chainbudget.stages import KINDS
from chainbudget.stages.base import Stage
from chainbudget.units import UnitParseError

# Steps a sweep may take: two ends at least; past a hundred the table stops being read.
MIN_STEPS, MAX_STEPS = 2, 101
# Part values that are elements of a stage's network: a sweep steps them through the solve.
PART_VALUE_KINDS = (f.RESISTANCE, f.RESISTANCE_OR_ZERO, f.CAPACITANCE, f.GAIN, f.NONZERO_GAIN)


class SweepError(ValueError, ChainError):
    """A sweep that cannot be run as asked: one line naming the option and the reason."""


def _stage(chain: Chain, name: str, option: str) -> tuple[int, Stage]:
    names = [st.name for st in chain.stages]
    if name not in names:
        raise SweepError(
            f'{option}: no stage named "{name}"{suggest(name, names)}; '
            f"the stages are: {', '.join(names)}"
        )
    k = names.index(name)
    return k, chain.stages[k]


def _split(spec: str, option: str, what: str) -> tuple[str, str]:
    stage, dot, key = spec.partition(".")
    if not stage or not dot or not key:
        raise SweepError(f'{option}: got "{spec}", expected STAGE.{what} such as "tone.{what}"')
    return stage, key


def stepped_control(chain: Chain, spec: str, steps: int) -> Stepped:
    """A pot stepped from 0 to 1 in ``steps`` rotations; ``spec`` is ``stage.control``
    (``volume.position``, ``tone.bass_position``) or a stage with one pot."""
    _check_steps(steps)
    name, _, key = spec.partition(".")
    k, stage = _stage(chain, name, "--control")
    controls = {c.key: c for c in KINDS[stage.kind].controls(stage)}
    if not controls:
        raise SweepError(f'--control: stage "{name}" ({stage.kind}) has no pot to turn')
    if not key and len(controls) == 1:
        key = next(iter(controls))
    if key not in controls:
        listed = ", ".join(f"{name}.{c}" for c in controls)
        raise SweepError(
            f'--control: got "{spec}", expected one of {listed}{suggest(key, controls)}'
        )
    stepped = Stepped(k, key, True, np.linspace(0.0, 1.0, steps))
    _check_loads(chain, stepped, "--control")
    return stepped


def stepped_value(
    chain: Chain, spec: str, start: str, stop: str, steps: int, spacing: str = "linear"
) -> Stepped:
    """A part value of a stage stepped from ``start`` to ``stop`` (strings with units, read
    as the field reads them), ``linear`` or ``log`` spaced.

    Refused: a field that is not a resistor, capacitor or gain of the stage's network, a
    field of a kind whose model takes one value at a time (push-pull: its bias arithmetic
    is scalar), and a pot (use `stepped_control`).
    """
    _check_steps(steps)
    name, key = _split(spec, "--value", "FIELD")
    k, stage = _stage(chain, name, "--value")
    kind = KINDS[stage.kind]
    fields = {fld.key: fld for fld in kind.fields}
    if key not in fields:
        raise SweepError(
            f'--value: {stage.kind} stage "{name}" has no field "{key}"{suggest(key, fields)}'
        )
    if any(c.key == key for c in kind.controls(stage)):
        raise SweepError(f'--value: "{spec}" is a pot; sweep it with --control {spec}')
    field = fields[key]
    if field.kind not in PART_VALUE_KINDS:
        raise SweepError(
            f'--value: "{spec}" is not a part value of the network (a resistor, capacitor or '
            "gain); only those are swept"
        )
    ends = []
    for option, text in (("--from", start), ("--to", stop)):
        try:
            ends.append(float(field.kind.read(text)))
        except UnitParseError as exc:
            raise SweepError(f"{option}: {exc}") from None
    if spacing == "log":
        if min(ends) <= 0.0:
            raise SweepError("--spacing log: both ends must be above zero")
        values = np.geomspace(ends[0], ends[1], steps)
    else:
        values = np.linspace(ends[0], ends[1], steps)
    stepped = Stepped(k, key, False, values)
    _check_loads(chain, stepped, "--value")
    _check_batched(chain, stepped)
    return stepped


def _check_steps(steps: int) -> None:
    if not MIN_STEPS <= steps <= MAX_STEPS:
        raise SweepError(f"--steps: got {steps}, expected {MIN_STEPS} to {MAX_STEPS}")


def _check_loads(chain: Chain, stepped: Stepped, option: str) -> None:
    """Refuse a step whose edited file the loader would refuse (a zero gain, a value another
    field rules out): each step's chain is written back as the file would hold it and read
    again by the loader."""
    for step, value in enumerate(stepped.values):
        try:
            parse_chain(chain_to_dict(stepped.edited(chain, step)), chain.file)
        except ChainFileError as exc:
            raise SweepError(f"{option}: the step at {value:g} would not load: {exc}") from None


def _check_batched(chain: Chain, stepped: Stepped) -> None:
    """Refuse a part value the stage's model cannot take as an array, or one that moves
    more than the stage's network (its rails or bias point).

    The stage is built alone at the reference with the two end values as an array: a model
    that takes the array returns a two-port with a step axis of length 2.
    """
    k = stepped.stage_index
    stage = chain.stages[k]
    env = environments(chain)[k]
    ends = with_value(chain, k, stepped.key, stepped.values[[0, -1]].reshape(2, 1))
    positions = {c.key: c.position for c in KINDS[stage.kind].controls(stage)}
    try:
        solved = solve_stage(ends.stages[k], env, frequency_axis(chain)[:1], positions)
        batched = np.shape(solved.two_port.a)[:1] == (2,) and np.ndim(solved.two_port.a) == 2
    except (TypeError, ValueError):  # scalar arithmetic in the model (an `if` on the value)
        batched = False
    if not batched:
        raise SweepError(
            f'--value: the {stage.kind} model of "{stage.name}" takes {stepped.key} one value '
            "at a time, so it cannot be stepped in one batched analysis"
        )
    for step in (0, stepped.values.size - 1):
        if environments(stepped.edited(chain, step))[k] != env:
            raise SweepError(
                f'--value: "{stage.name}.{stepped.key}" moves the stage\'s rails or bias '
                "point; only values of its network are swept"
            )


def sweep(chain: Chain, stepped: Stepped) -> Iterator[Budget]:
    """Each step's budget, findings drawn, as ``check`` of the edited file reports it; the
    network is solved for every step at once (`loaded_steps`)."""
    for analysis in loaded_steps(chain, stepped):
        budget = budget_from(analysis)
        yield replace(budget, findings=tuple(draw_findings(budget)))


@dataclass(frozen=True)
class SweepRow:
    """The key figures of one step (SI units, dB where named; None where undefined).

    ``gain_db``: source to output at the reference; ``headroom_db``: the least nominal
    headroom of any node (the first to clip); ``worst_headroom_db``: the least worst-case
    headroom of any node; ``snr_db``: at the output, unweighted; ``clip_power_w``: the
    output's clip power; ``errors``/``warnings``/``notes``: counts of the findings.
    """

    value: float
    gain_db: float
    headroom_db: float | None
    worst_headroom_db: float | None
    first_clip: str | None
    snr_db: float | None
    clip_power_w: float | None
    errors: int
    warnings: int
    notes: int
    codes: tuple[str, ...]


def _least(values: list[float | None]) -> float | None:
    known = [v for v in values if v is not None]
    return min(known) if known else None


def sweep_row(value: float, budget: Budget) -> SweepRow:
    """The key figures of a step's budget."""
    severities = [fi.severity for fi in budget.findings]
    return SweepRow(
        value=value,
        gain_db=budget.nodes[-1].total_gain_db,
        headroom_db=_least([n.headroom_db for n in budget.nodes]),
        worst_headroom_db=_least([n.worst_headroom_db for n in budget.nodes]),
        first_clip=budget.first_clip,
        snr_db=None if budget.noise is None else budget.noise.output.snr_db,
        clip_power_w=None if budget.output is None else budget.output.clip_power_w,
        errors=severities.count("error"),
        warnings=severities.count("warning"),
        notes=severities.count("note"),
        codes=tuple(fi.code for fi in budget.findings),
    )


def sweep_rows(chain: Chain, stepped: Stepped) -> list[SweepRow]:
    """The key figures at every step."""
    values: NDArray[np.float64] = stepped.values
    return [sweep_row(float(v), b) for v, b in zip(values, sweep(chain, stepped), strict=True)]
