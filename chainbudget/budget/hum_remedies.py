"""What would lower the hum: concrete changes with E-series values, and the hum expected
after each.

The dominant path (the source giving the most A-weighted hum at the output alone) is
attacked where it enters: a bias divider's capacitor, a supply filter or a regulator in
front of the stage, or a larger reservoir at the root. Each change is a linear factor on
the ripple of the sources it reaches, so the expected hum is the same complex sum as the
budget's (`chainbudget.budget.hum.output_hum`) with those sources scaled, harmonic by
harmonic; nothing else in the chain is solved again.

Notes
-----
First-order RC filter: v_out/v_in = 1/(1 + j 2 pi f R C) (a divider with a capacitor across
its lower leg: its ratio times the same factor with R = upper || lower; the contract's
rc_filter and divider). For an attenuation N at the ripple fundamental f_1, |1 + j w R C| = N
gives R C = sqrt(N^2 - 1)/(2 pi f_1). The regulator is taken at a real rejection factor
(the contract: a data-sheet magnitude). A larger reservoir is solved again by the
rectifier model under the same load (its new ripple spectrum over the old, harmonic by
harmonic, passed on to every rail below it unchanged in ratio: every factor below is
linear).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Sequence

import numpy as np
from numpy.typing import NDArray

from chainbudget import outputmath as om
from chainbudget.budget.analysis import Analysis
from chainbudget.budget.hum import (
    HumBudget,
    HumField,
    HumPath,
    HumRemedy,
    hum_budget,
    output_hum,
    root_of,
)
from chainbudget.budget.rails import rail_owners, rails_of
from chainbudget.chainfile import Chain
from chainbudget.eseries import MATCH_RTOL, largest_at_most, smallest_at_least
from chainbudget.network import Complex, RippleSource
from chainbudget.notation import amps, eng, sig
from chainbudget.supplies import KINDS as SUPPLY_KINDS
from chainbudget.supplies.base import SupplyBudget
from chainbudget.supplymath import microfarads
from chainbudget.thresholds import (
    HUM_AUDIBLE_SPL_A_DB,
    HUM_FILTER_DROP_FRACTION,
    HUM_FILTER_MAX_CAP_F,
    HUM_REGULATOR_REJECTION_DB,
    HUM_TARGET_MARGIN_DB,
)

#: E series of a suggested resistor and capacitor (IEC 60063).
RESISTOR_SERIES = "E12"
CAPACITOR_SERIES = "E6"
#: The least attenuation a remedy aims for on the dominant path (6 dB): below it a change
#: is not worth a part.
LEAST_ATTENUATION = 2.0
#: The target's margin under its bound as a ratio of voltages.
TARGET_FACTOR = 10.0 ** (-HUM_TARGET_MARGIN_DB / 20.0)


def hum_with_remedies(
    analysis: Analysis,
    supplies: Sequence[SupplyBudget],
    noise_a_vrms: float | None,
    stage_currents_a: Sequence[float],
) -> HumBudget:
    """The hum budget (`chainbudget.budget.hum.hum_budget`) with the remedies of its
    dominant path, when the hum is over the target (`target_a_vrms`)."""
    budget, solved = hum_budget(analysis, supplies, noise_a_vrms)
    dominant = budget.dominant
    target = target_a_vrms(analysis.chain, noise_a_vrms)
    if solved is None or dominant is None or target is None or budget.output_a_vrms <= target:
        return budget
    need = max(dominant.a_vrms / target, LEAST_ATTENUATION)
    context = _Context(analysis.chain, {s.name: s for s in supplies}, solved, stage_currents_a)
    candidates = [
        _supply_remedy(context, dominant.supply, need),
        _rc_filter(context, dominant, need),
        _regulator(context, dominant, need),
    ]
    root_rail = context.top(dominant.supply)
    if root_rail != dominant.supply:
        candidates.append(_supply_remedy(context, root_rail, need))
    found = [remedy for remedy in candidates if remedy is not None]
    found.sort(key=lambda r: r.expected_a_vrms)
    return dataclasses.replace(budget, remedies=tuple(found))


def target_a_vrms(chain: Chain, noise_a_vrms: float | None) -> float | None:
    """The A-weighted output hum a remedy aims under: `HUM_TARGET_MARGIN_DB` below the
    A-weighted noise floor and below the audible threshold at 1 m (with the load's
    sensitivity), V rms; None when neither is known."""
    bounds = []
    if noise_a_vrms is not None and noise_a_vrms > 0.0:
        bounds.append(noise_a_vrms)
    audible = audible_a_vrms(chain)
    if audible is not None:
        bounds.append(audible)
    if not bounds:
        return None
    return min(bounds) * TARGET_FACTOR


def audible_a_vrms(chain: Chain) -> float | None:
    """The A-weighted output hum that reaches `HUM_AUDIBLE_SPL_A_DB` at 1 m with the load's
    sensitivity, V rms (None without one): L = sensitivity + 20 log10(V / sqrt(1 W Z))
    solved for V."""
    sensitivity = chain.load.sensitivity
    if sensitivity is None:
        return None
    at_one_volt = float(om.hiss_spl(sensitivity, 1.0, chain.load.impedance))
    return float(10.0 ** ((HUM_AUDIBLE_SPL_A_DB - at_one_volt) / 20.0))


def remedy_reach(
    chain: Chain,
    supplies: Sequence[SupplyBudget],
    stage_currents_a: Sequence[float],
    path: HumPath,
) -> float:
    """The largest attenuation ``path`` may need (as `hum_with_remedies` works it out when
    the path dominates) with at least one remedy still found: infinite when one is found
    whatever the need (a value of the path's own supply or of its root, a regulator in
    front of the stage), the supply filter's limit where only the filter is (its capacitor
    grows with the need up to `HUM_FILTER_MAX_CAP_F`), zero when none is.

    Each shipped kind's own remedy (`SupplyKind.ripple_remedy`) is found for every need
    from `LEAST_ATTENUATION` up or for none (a rectifier's reservoir, capped at
    `chainbudget.supplies.rectified.kind.RESERVOIR_MAX_FACTOR` times, always grows it); it
    is asked at both ends to be sure."""
    ctx = _Context(chain, {s.name: s for s in supplies}, None, stage_currents_a)
    fixed = [(_own_remedy_found(ctx, path.supply)), _regulator_fits(ctx, path)]
    root_rail = ctx.top(path.supply)
    if root_rail != path.supply:
        fixed.append(_own_remedy_found(ctx, root_rail))
    if any(fixed):
        return math.inf
    filter_parts = _filter_parts(ctx, path)
    if filter_parts is None:
        return 0.0
    _, r, _ = filter_parts
    w = 2.0 * math.pi * ctx.fundamental(path.supply)
    # smallest_at_least(x) <= C_max exactly where x <= (the series' largest value not above
    # C_max) / (1 - its matching slack): x = sqrt(N^2 - 1)/(w R) solved for N
    largest = largest_at_most(HUM_FILTER_MAX_CAP_F, CAPACITOR_SERIES) / (1.0 - MATCH_RTOL)
    return math.sqrt(1.0 + (w * r * largest) ** 2)


def _own_remedy_found(ctx: _Context, rail: str) -> bool:
    """Whether the rail's own supply has a value to change at every need (both ends)."""
    supply = rail_owners(ctx.chain)[rail]
    kind = SUPPLY_KINDS[supply.kind]
    fundamental = ctx.fundamental(rail)
    ends = [kind.ripple_remedy(supply, need, fundamental) for need in (LEAST_ATTENUATION, 1e9)]
    return all(remedy is not None for remedy in ends)


@dataclasses.dataclass(frozen=True)
class _Context:
    chain: Chain
    supplies: dict[str, SupplyBudget]
    #: The solved phasors (None where only whether a remedy is found is asked).
    hum: HumField | None
    currents_a: Sequence[float]

    def descends(self, rail: str, ancestor: str) -> bool:
        """Whether ``rail`` is ``ancestor`` or is fed from it, however far down."""
        owners = rail_owners(self.chain)
        while True:
            if rail == ancestor:
                return True
            parent = owners[rail].parent
            if parent is None:
                return False
            rail = parent

    def top(self, rail: str) -> str:
        """The root supply's rail that ``rail`` descends from."""
        owners = rail_owners(self.chain)
        while owners[rail].parent is not None:
            rail = str(owners[rail].parent)
        return rail

    def scaled(
        self,
        reached: Callable[[RippleSource, str, int], bool],
        factor: Callable[[NDArray[np.float64]], Complex],
    ) -> tuple[float, float]:
        """The output hum with the sources ``reached`` picks scaled by ``factor(f)``."""
        hum = self.hum
        assert hum is not None
        scale = np.ones((len(hum.sources), hum.frequency.size), dtype=complex)
        for i, (source, rail, k) in enumerate(hum.sources):
            if reached(source, rail, k):
                scale[i] = factor(hum.frequency)
        return output_hum(hum, scale)

    def fundamental(self, rail: str) -> float:
        return self.supplies[rail].ripple_harmonics[0][0]


def _lowpass(r: float, c: float) -> Callable[[NDArray[np.float64]], Complex]:
    def factor(f: NDArray[np.float64]) -> Complex:
        return np.asarray(1.0 / (1.0 + 2j * np.pi * f * r * c), dtype=complex)

    return factor


def _done(
    what: str,
    stage: str | None,
    supply: str,
    text: str,
    expected: tuple[float, float],
    values: dict[str, float],
    edits: tuple[tuple[str, str], ...] = (),
) -> HumRemedy:
    return HumRemedy(what, stage, supply, text, expected[0], expected[1], values, edits)


def _supply_remedy(ctx: _Context, rail: str, need: float) -> HumRemedy | None:
    """A value of the rail's own supply changed (`SupplyKind.ripple_remedy`: a bias
    divider's capacitor, a filter's capacitor, a rectifier's reservoir), reaching every
    source fed from that supply."""
    supply = rail_owners(ctx.chain)[rail]
    kind = SUPPLY_KINDS[supply.kind]
    remedy = kind.ripple_remedy(supply, need, ctx.fundamental(rail))
    if remedy is None:
        return None
    hum = ctx.hum
    assert hum is not None
    scale = np.ones((len(hum.sources), hum.frequency.size), dtype=complex)
    ratios: dict[str, dict[float, complex]] = {}
    if remedy.factor is None:
        # solved again with the new value under the same loads: its new spectrum over the
        # old, passed on in ratio by every (linear) supply below it
        changed = dataclasses.replace(supply, values={**supply.values, remedy.key: remedy.value})
        own = rails_of(supply)
        parent = None if supply.parent is None else ctx.supplies[supply.parent].state
        loads = {name: ctx.supplies[name].load for name in own}
        states = kind.rail_states(changed, parent, loads)
        for name, state in states.items():
            before = dict(ctx.supplies[name].ripple_harmonics)
            after = dict(state.ripple_harmonics())
            ratios[name] = {hz: after.get(hz, 0j) / v for hz, v in before.items() if v != 0}
    for i, (_source, found, _k) in enumerate(hum.sources):
        for name in rails_of(supply):
            if not ctx.descends(found, name):
                continue
            if remedy.factor is not None:
                scale[i] = [remedy.factor(float(hz)) for hz in hum.frequency]
            else:
                scale[i] = [ratios[name].get(float(hz), 1.0) for hz in hum.frequency]
    expected = output_hum(hum, scale)
    old = supply.values.get(remedy.key)
    was = "" if old is None else f" (now {_written(remedy.key, float(old))})"
    return _done(
        remedy.key,
        None,
        supply.name,
        f'give supply "{supply.name}" {remedy.key} = "{remedy.written}"{was}',
        expected,
        {remedy.key: remedy.value},
        ((f"{supply.name}.{remedy.key}", remedy.written),),
    )


def _written(key: str, value: float) -> str:
    """A supply's value as the message shows it (capacitors in microfarads)."""
    return microfarads(value) if key in ("capacitance", "reservoir") else eng(value, "")


def _stage_rails(ctx: _Context, path: HumPath) -> dict[str, str]:
    """The rails (by role) of the path's stage that carry ripple from the path's root: a
    filter or regulator in front of a stage goes on each of them."""
    stage = ctx.chain.stages[path.stage_index]
    found = {}
    for role in ("positive", "negative"):
        rail = stage.values.get(role)
        if rail is None or rail not in ctx.supplies:
            continue
        if ctx.supplies[rail].ripple_harmonics and root_of(ctx.chain, rail) == path.root:
            found[role] = str(rail)
    return found


def _stage_reached(
    path: HumPath, roles: dict[str, str]
) -> Callable[[RippleSource, str, int], bool]:
    """The sources of the path's stage that take one of its rails ``roles``."""

    def reached(source: RippleSource, rail: str, k: int) -> bool:
        return k == path.stage_index and roles.get(source.rail) == rail

    return reached


def _filter_parts(ctx: _Context, path: HumPath) -> tuple[dict[str, str], float, float] | None:
    """The rails (by role) a supply filter in front of the path's stage goes on, its
    resistor (from the drop the stage's current may take, `HUM_FILTER_DROP_FRACTION` of
    the rail) and that current; None where no filter fits."""
    roles = _stage_rails(ctx, path)
    if path.role not in roles:
        return None
    current = ctx.currents_a[path.stage_index]
    rail_v = min(ctx.supplies[rail].mean_v for rail in roles.values())
    if current <= 0.0 or rail_v <= 0.0:
        return None
    r = largest_at_most(HUM_FILTER_DROP_FRACTION * rail_v / current, RESISTOR_SERIES)
    return roles, r, current


def _rc_filter(ctx: _Context, path: HumPath, need: float) -> HumRemedy | None:
    """An rc_filter between each rippling rail and the stage (`_filter_parts`), C for the
    attenuation needed at the ripple's fundamental."""
    fitted = _filter_parts(ctx, path)
    if fitted is None:
        return None
    roles, r, current = fitted
    w = 2.0 * math.pi * ctx.fundamental(path.supply)
    c = smallest_at_least(math.sqrt(need**2 - 1.0) / (w * r), CAPACITOR_SERIES)
    if c > HUM_FILTER_MAX_CAP_F:
        return None
    expected = ctx.scaled(_stage_reached(path, roles), _lowpass(r, c))
    names = {role: _new_supply_name(ctx.chain, f"{path.stage}_{role[:3]}_filter") for role in roles}
    parts = [
        f'{role} = "{names[role]}", a new rc_filter off "{rail}"' for role, rail in roles.items()
    ]
    return _done(
        "filter",
        path.stage,
        path.supply,
        f'feed "{path.stage}" through a supply filter: ' + "; ".join(parts) + ", each with "
        f'resistance = "{eng(r, "ohm")}", capacitance = "{microfarads(c)}" '
        f"({sig(r * current, 'V')} drop at its {amps(current)})",
        expected,
        {"resistance_ohm": r, "capacitance_f": c, "drop_v": r * current},
        tuple((f"{path.stage}.{role}", name) for role, name in names.items()),
    )


def _new_supply_name(chain: Chain, wanted: str) -> str:
    taken = {rail for supply in chain.supplies for rail in rails_of(supply)}
    name, n = wanted, 2
    while name in taken:
        name, n = f"{wanted}{n}", n + 1
    return name


def _regulator_fits(ctx: _Context, path: HumPath) -> bool:
    """Whether a regulator can go in front of the path's stage: the path's rail is one of
    the stage's rippling rails and none of them is a regulator's already."""
    roles = _stage_rails(ctx, path)
    return path.role in roles and not any(
        SUPPLY_KINDS[ctx.supplies[r].kind].regulates for r in roles.values()
    )


def _regulator(ctx: _Context, path: HumPath, need: float) -> HumRemedy | None:
    """A regulator between each rippling rail and the stage, when none is a regulator's."""
    if not _regulator_fits(ctx, path):
        return None
    roles = _stage_rails(ctx, path)
    factor = 10.0 ** (-HUM_REGULATOR_REJECTION_DB / 20.0)
    expected = ctx.scaled(
        _stage_reached(path, roles), lambda f: np.full(f.shape, factor, dtype=complex)
    )
    trough = min(ctx.supplies[rail].trough_v for rail in roles.values())
    each = " each" if len(roles) > 1 else ""
    rails = " and ".join(f'"{rail}"' for rail in roles.values())
    return _done(
        "regulate",
        path.stage,
        path.supply,
        f'feed "{path.stage}" from a regulator off {rails}{each} (about '
        f"{HUM_REGULATOR_REJECTION_DB:g} dB of ripple rejection, a typical figure from "
        f"memory; with a 2 V dropout its output can be at most {sig(trough - 2.0, 'V')})",
        expected,
        {"ripple_rejection_db": HUM_REGULATOR_REJECTION_DB},
    )
