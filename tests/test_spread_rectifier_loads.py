"""A rectified supply's spread under a load that differs per trial (a `SupplyLoad` whose
fields are (T,) arrays, as a spread that settles the power tree again per trial gives it):
each trial's figures against the same spread called with that trial's load as floats and
its reservoir alone (a direct solve of that trial's own circuits: the brute force), for
the centre-tapped supply of tests/test_spread_split.py and for a single rail under the
half-sine pulses of a push-pull output at the signal frequency; a trial's figures the same
whatever batch it is in; and a load equal in every trial against the float load, bit for
bit."""

from __future__ import annotations

import tomllib
from pathlib import Path

import numpy as np
import pytest
from test_spread_split import RESERVOIR, SPLIT

from chainbudget.budget import compute
from chainbudget.chainfile import load_chain, parse_chain
from chainbudget.spread.parts import chain_parts
from chainbudget.supplies.base import Supply, SupplyLoad, SupplySpread
from chainbudget.supplies.rectified.spread import GRID_POINTS, LOAD_KEYS, rectified_spread

ROOT = Path(__file__).resolve().parents[1]
#: The single rail: a bridge rectifier feeding a push-pull power stage (half-sine pulses
#: of some 0.76 A peak at 1 kHz at clip, 0.2 A at the nominal level).
PULSED = "chains/shed_amp_mains.toml"
#: Batches of more trials than the grid of reservoir values, and of fewer.
MANY = 24
FEW = 10
assert FEW <= GRID_POINTS < MANY

# How close a trial's figure is to the brute force, loads within 5 % of nominal field by
# field, each drawn on its own (harsher than a settled tree, whose fields move together),
# expanded about the nominal load or the trials' medians (measured, seeds 3 and 5,
# reservoir drawn or not, on this split supply, on the shed amplifier's pulsed rail and on
# the practice amplifier's split pulsed rails; `python tests/test_spread_rectifier_loads.py`
# prints them): the rails' voltages (trough, mean, high line) within 6.8e-6 relative; each
# harmonic within 3.3e-6 of the fundamental; the ripple, the winding's and diodes'
# currents and the conduction angle within 9.6e-5; the reservoir's rms ripple current
# within 4.9e-3 (the solver's rms quadrature under pulsed loads is not smooth in the
# load: the pulses' corners move inside a charging interval; module notes). The error is
# the third-order terms the parabolas and the mixed differences leave out.
VOLTAGE_RTOL = 2e-5
OTHER_RTOL = 2.5e-4
RIPPLE_CURRENT_RTOL = 1e-2
HARMONIC_OF_FUNDAMENTAL = 1e-5
VOLTAGES = ("trough_v", "output_min_v", "mean_v", "vout_v", "heavy_v", "idle_v")


def _case(name: str) -> tuple[Supply, tuple[float, float], dict[str, SupplyLoad]]:
    """A chain's rectified supply, its reservoir's bounds and each rail's nominal load."""
    if name == "split":
        chain = parse_chain(tomllib.loads(SPLIT), "split.toml")
        assert f'reservoir = "{RESERVOIR}"' in SPLIT
    else:
        chain = load_chain(ROOT / name)
    budget = compute(chain)
    supply = next(s for s in chain.supplies if s.kind == "rectified")
    parts, _ = chain_parts(chain)
    part = next(p for p in parts if p.label == f"{supply.name}.reservoir")
    rails = [supply.name] + ([supply.name + ".neg"] if supply.values.get("split") else [])
    loads = {rail: budget.supply(rail).load for rail in rails}
    if name == PULSED:
        assert len(rails) == 1 and loads[supply.name].heaviest_pulse_a > 0.5
    return supply, (part.low, part.high), loads


def _scaled(load: SupplyLoad, trials: int, rng: np.random.Generator) -> SupplyLoad:
    """The load with each field times its own factor in 0.95..1.05 in each trial."""
    scaled = {k: getattr(load, k) * rng.uniform(0.95, 1.05, trials) for k in LOAD_KEYS}
    return SupplyLoad(signal_hz=load.signal_hz, **scaled)


def _trial(load: SupplyLoad, t: int) -> SupplyLoad:
    """Trial ``t``'s load as floats."""
    one = {k: float(getattr(load, k)[t]) for k in LOAD_KEYS}
    return SupplyLoad(signal_hz=load.signal_hz, **one)


def _figures(spreads: dict[str, SupplySpread], trials: int) -> dict[str, np.ndarray]:
    """Every figure per trial, (trials,), by rail and name: the rail's own (trough, ripple,
    mean, currents), its ripple's harmonics (complex), its means at high line under the
    heaviest and the idle load, the rules' flags."""
    found: dict[str, np.ndarray] = {}
    for rail, s in spreads.items():
        for key, value in s.figures.items():
            found[f"{rail}.{key}"] = np.broadcast_to(np.asarray(value, float), (trials,))
        assert s.ripple is not None and s.ripple.high is not None
        harmonics = np.broadcast_to(np.atleast_2d(s.ripple.harmonics_vpk), (trials, 8))
        for k in range(harmonics.shape[1]):
            found[f"{rail}.harmonic.{k + 1}"] = harmonics[:, k]
        found[f"{rail}.high.heavy_v"] = np.broadcast_to(s.ripple.high.heavy_v, (trials,))
        found[f"{rail}.high.idle_v"] = np.broadcast_to(s.ripple.high.idle_v, (trials,))
        for key, flag in s.flags.items():
            found[f"{rail}.{key}"] = np.broadcast_to(flag, (trials,))
    return found


def _batch_and_alone(
    name: str, trials: int, seed: int, reservoir_drawn: bool, about: bool = True
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """The spread of a batch of trials under loads drawn per trial (and its reservoir, or
    the nominal one), expanded about the nominal load (``about``) or the trials' medians,
    and the same kind's spread of each trial alone, its load as floats and its reservoir
    value alone (a direct solve), stacked."""
    supply, bounds, loads = _case(name)
    rng = np.random.default_rng(seed)
    per_trial = {rail: _scaled(load, trials, rng) for rail, load in loads.items()}
    reservoir = bounds[0] + (bounds[1] - bounds[0]) * rng.random(trials)
    drawn = {"reservoir": reservoir} if reservoir_drawn else {}
    span = {"reservoir": bounds}
    centre = loads if about else None
    batch = _figures(rectified_spread(supply, drawn, per_trial, span, centre), trials)
    alone: dict[str, list[object]] = {}
    for t in range(trials):
        one = {"reservoir": reservoir[t : t + 1]} if reservoir_drawn else {}
        loads_t = {rail: _trial(load, t) for rail, load in per_trial.items()}
        for key, value in _figures(rectified_spread(supply, one, loads_t, span), 1).items():
            alone.setdefault(key, []).append(value[0])
    assert batch.keys() == alone.keys()
    return batch, {key: np.array(values) for key, values in alone.items()}


def _worst(batch: dict[str, np.ndarray], alone: dict[str, np.ndarray]) -> dict[str, float]:
    """Each figure's largest error over the trials, relative as the tolerances take it:
    a voltage or current of itself, a harmonic of its rail's fundamental."""
    worst = {}
    for key, want in alone.items():
        if want.dtype == bool:
            continue
        got = batch[key]
        if ".harmonic." in key:
            scale = np.abs(alone[key.rsplit(".", 1)[0] + ".1"])
        else:
            scale = np.abs(want)
        worst[key] = float(np.max(np.abs(got - want) / scale))
    return worst


@pytest.mark.parametrize("name", ["split", PULSED])
@pytest.mark.parametrize("reservoir_drawn", [True, False])
@pytest.mark.parametrize("about", [True, False])
def test_loads_per_trial_follow_each_trial_solved_alone(
    name: str, reservoir_drawn: bool, about: bool
) -> None:
    """Brute force: 24 trials, each field of each rail's load times its own factor in
    0.95..1.05 per trial, the reservoir drawn (the grid of 17 values interpolated) or not
    (the nominal value's), against each trial's spread alone, its load as floats and its
    reservoir value alone (solved directly, exact to the solver). Each figure to second
    order in each field about the nominal load (or the trials' medians) holds within the
    measured tolerances (module constants), each of which moves from trial to trial; the
    rules' flags (collapse, large ripple) are the same."""
    batch, alone = _batch_and_alone(name, MANY, 3, reservoir_drawn, about)
    for key, error in _worst(batch, alone).items():
        if ".harmonic." in key:
            tolerance = HARMONIC_OF_FUNDAMENTAL
        elif key.endswith("reservoir_ripple_a"):
            tolerance = RIPPLE_CURRENT_RTOL
        else:
            tolerance = VOLTAGE_RTOL if key.endswith(VOLTAGES) else OTHER_RTOL
        assert error <= tolerance, (key, error)
        assert np.ptp(np.abs(alone[key])) > 0.0, key  # the loads (and C) move it
    for key, flags in alone.items():
        if flags.dtype == bool:
            assert np.array_equal(batch[key], flags), key


@pytest.mark.parametrize("name", ["split", PULSED])
@pytest.mark.parametrize("reservoir_drawn", [True, False])
def test_a_trials_figures_do_not_depend_on_its_batch(name: str, reservoir_drawn: bool) -> None:
    """Expanded about the nominal load, the first ten of 24 trials give in a batch of
    their own what they give among the 24 (the same solves, kept: the corners and the
    Monte Carlo of the spread agree), to round-off."""
    supply, bounds, loads = _case(name)
    rng = np.random.default_rng(5)
    per_trial = {rail: _scaled(load, MANY, rng) for rail, load in loads.items()}
    reservoir = bounds[0] + (bounds[1] - bounds[0]) * rng.random(MANY)
    span = {"reservoir": bounds}

    def first(count: int) -> dict[str, np.ndarray]:
        drawn = {"reservoir": reservoir[:count]} if reservoir_drawn else {}
        part = {
            rail: SupplyLoad(
                signal_hz=load.signal_hz, **{k: getattr(load, k)[:count] for k in LOAD_KEYS}
            )
            for rail, load in per_trial.items()
        }
        return _figures(rectified_spread(supply, drawn, part, span, loads), count)

    few, many = first(FEW), first(MANY)
    assert few.keys() == many.keys()
    for key, value in few.items():
        np.testing.assert_allclose(value, many[key][:FEW], rtol=1e-12, atol=0, err_msg=key)


@pytest.mark.parametrize("name", ["split", PULSED])
@pytest.mark.parametrize("trials", [FEW, MANY])
@pytest.mark.parametrize("reservoir_drawn", [True, False])
def test_a_load_equal_in_every_trial_is_the_float_load_bit_for_bit(
    name: str, trials: int, reservoir_drawn: bool
) -> None:
    """A load whose fields are arrays of one value in every trial gives what that load as
    floats gives, bit for bit (the same path, the same batch of circuits)."""
    supply, bounds, loads = _case(name)
    reservoir = np.linspace(bounds[0], bounds[1], trials)
    drawn = {"reservoir": reservoir} if reservoir_drawn else {}
    span = {"reservoir": bounds}
    equal = {
        rail: SupplyLoad(
            signal_hz=load.signal_hz,
            **{k: np.full(trials, getattr(load, k)) for k in LOAD_KEYS},
        )
        for rail, load in loads.items()
    }
    size = trials if reservoir_drawn else 1
    want = _figures(rectified_spread(supply, drawn, loads, span), size)
    for centre in (None, loads):  # the nominal load given as the centre: no expansion
        got = _figures(rectified_spread(supply, drawn, equal, span, centre), size)
        assert got.keys() == want.keys()
        for key, value in want.items():
            assert np.array_equal(got[key], value), key


if __name__ == "__main__":  # the measured errors behind the tolerances
    for case in ("split", PULSED, "chains/practice_amp_mains.toml"):
        for seed in (3, 5):
            for drawn_c in (True, False):
                for about in (True, False):
                    b, a = _batch_and_alone(case, MANY, seed, drawn_c, about)
                    w = _worst(b, a)
                    volts = max(v for k, v in w.items() if k.endswith(VOLTAGES))
                    harm = max(v for k, v in w.items() if ".harmonic." in k)
                    rest = max(
                        (v, k) for k, v in w.items() if not k.endswith(VOLTAGES) and "harm" not in k
                    )
                    print(case, seed, drawn_c, about, f"V {volts:.1e} H {harm:.1e} {rest}")
