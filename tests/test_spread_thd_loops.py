"""The spread of the output stage's harmonics and of a loop round later stages (closed-loop
gain, output impedance, damping factor, in conduction and at idle): brute force, one trial
at a time through the real check, a plain nodal solve of a loop written here, and the
harmonics of a push-pull pair's transfer computed here sample by sample with an FFT."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from scipy import constants
from test_spread import (
    HARMONIC_FLOOR_DB,
    PUSH_PULL,
    _chain,
    _json_figure,
    trial_changes,
)

from chainbudget.chainfile import Chain

ROOT = Path(__file__).resolve().parents[1]

# Harmonic amplitudes (over the fundamental) agree to this, absolute: the pair's transfer is
# solved to a few units in the last place of its drive (8 ulps, `crossover.ROUNDING_ULPS`)
# and the DFT of 512 such samples carries some 1e-15 of the fundamental; a batch started
# from its first trial rounds differently from a trial solved alone. A harmonic at -100 dB
# (1e-5) is then held to 1e-9 of itself; one near the floor (-200 dB, 1e-10) to 1e-4.
HARMONIC_ABS = 1e-14


def _evaluator(chain: Chain):  # noqa: ANN202
    from chainbudget.budget import compute
    from chainbudget.budget.supplies import settle
    from chainbudget.spread.evaluate import Evaluator
    from chainbudget.spread.parts import chain_parts

    parts, _ = chain_parts(chain)
    return parts, Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)


def _check_json(chain: Chain) -> dict:  # type: ignore[type-arg]
    from chainbudget.budget import compute
    from chainbudget.report.json_view import budget_json

    budget = compute(chain)
    return dict(json.loads(json.dumps(budget_json(budget, list(budget.findings)))))


def _ratio(db: float) -> float:
    """A harmonic in dB re the fundamental as the amplitude ratio."""
    return float(10.0 ** (db / 20.0))


# The bench amplifier with stiff supplies: the spread settles the power tree once, at the
# nominal parts' loads (docs/tolerances.md), so a trial's drawn parts, which move the
# stages' supply currents, would move the rails of the check of that trial through the
# supplies' resistance (and with them the output pair's conduction current and model).
BENCH_STIFF = (
    (ROOT / "chains" / "bench_amp.toml")
    .read_text()
    .replace('resistance = "0.1 ohm"', 'resistance = "0 ohm"')
)

CLOSED_LOOP_KEYS = (
    "closed_loop_gain_db",
    "closed_loop_zout_ohm",
    "damping_factor",
    "idle_closed_loop_zout_ohm",
    "idle_damping_factor",
    "idle_gain_step_db",
)


def test_harmonics_and_closed_loop_of_each_trial_equal_the_check_of_that_trial() -> None:
    """Brute force, one sample at a time, on the bench amplifier (a Darlington pair inside
    the op-amp's loop into a loudspeaker's impedance, with a Zobel network and an output
    inductor; its supplies stiff, `BENCH_STIFF`): each of four trials written into the file
    (`Chain.with_values`) and checked alone gives the batched harmonics 2 to 20 at every
    level the check reports (the check's null as the floor; amplitudes to rtol 1e-9 and
    `HARMONIC_ABS`), the loop's closed-loop gain, output impedance and damping factor in
    conduction and at idle and its gain step, the pair's idle output impedance and gain
    step and the output's damping factor (rtol 1e-9), and every other figure the spread
    gives (tiny voltages in dB, 1e-8 dB). The parts move every new one of them,
    and the drawn betas of unequal halves raise even harmonics that the symmetric nominal
    pair has none of."""
    assert BENCH_STIFF.count('resistance = "0 ohm"') == 2
    chain = _chain(BENCH_STIFF)
    parts, evaluate = _evaluator(chain)
    positions = np.random.default_rng(21).random((4, len(parts)))
    batched = evaluate(positions)
    loop = [f"loop.amp.{key}" for key in CLOSED_LOOP_KEYS]
    idle = ["nodes.output.idle_zout_ohm", "nodes.output.gain_step_db", "output.damping_factor"]
    harmonics = [p for p in batched if "_harmonic_" in p]
    levels = ("nominal", "one_watt", "below_clip")
    assert sorted(harmonics) == sorted(
        f"output.thd_{level}_harmonic_{n}_db" for level in levels for n in range(2, 21)
    )
    for path in loop + idle:
        assert path in batched, path
        assert np.ptp(batched[path]) > 0.0, path
    nominal = _check_json(chain)
    second = "output.thd_one_watt_harmonic_2_db"
    assert _json_figure(nominal, second) == HARMONIC_FLOOR_DB  # symmetric: none
    assert np.all(batched[second] > -140.0)  # unequal betas: a real second harmonic
    for t in range(len(positions)):
        changes = trial_changes(chain, parts, evaluate.values(positions[t : t + 1]))
        data = _check_json(chain.with_values(changes))
        for path in batched:  # the new figures and every other the spread gives
            held = _json_figure(data, path)
            if path in harmonics:
                got, want = _ratio(batched[path][t]), _ratio(held)
                assert got == pytest.approx(want, rel=1e-9, abs=HARMONIC_ABS), (path, t)
            elif path.endswith(("_vrms", "_rthz")):  # tiny voltages: compared in dB
                got, want = 20 * math.log10(batched[path][t]), 20 * math.log10(held)
                assert got == pytest.approx(want, rel=0, abs=1e-8), (path, t)
            else:
                assert batched[path][t] == pytest.approx(held, rel=1e-9, abs=1e-12), (path, t)


# An op-amp with a modest open-loop gain and a real output resistance whose feedback is taken
# from a later gain block driving the load: the loop's closed-loop figures are far from
# their ideal values, and the block's parts (and the feedback's) move them.
BLOCK_IN_LOOP = """
[chain]
title = "a block inside a loop"
reference = "1 kHz"
[source]
level = "100 mV"
impedance = "600 ohm"
[load]
impedance = "8 ohm"
[tolerances]
resistors = "5 %"
[opamp.modest]
gbw = "1 MHz"
slew_rate = "1 V/us"
noise_voltage = "10 nV/rtHz"
noise_current = "1 pA/rtHz"
open_loop_gain = "80 dB"
output_resistance = "200 ohm"
swing_margin = "1 V"
output_current = "20 mA"
supply_current = "2 mA"
[[supply]]
name = "plus"
kind = "dc"
voltage = "15 V"
[[supply]]
name = "minus"
kind = "dc"
voltage = "15 V"
[[stage]]
name = "amp"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10k"
ground_leg = "1k"
opamp = "modest"
feedback_from = "buffer"
positive = "plus"
negative = "minus"
[[stage]]
name = "buffer"
kind = "block"
gain = "6 dB"
input_impedance = "2k2"
output_impedance = "4.7 ohm"
"""


def _nodal_loop(
    rf: np.ndarray, rg: np.ndarray, z_in: np.ndarray, z_out: np.ndarray, r_load: float
) -> tuple[np.ndarray, np.ndarray]:
    """Closed-loop gain |V_out/V_+| and output impedance |Z| (load removed) of BLOCK_IN_LOOP
    per trial, from a plain nodal solve at 1 kHz written here.

    Nodes: the summing node s, the op-amp's internal source x, its output pin o (the block's
    input), the output y. The op-amp: x = A (v_+ - s), A = A0/(1 + j f A0/GBW) (the
    dominant-pole model, Franco, Design with Operational Amplifiers, 4th ed., sec. 6.1, from
    memory), R_o from x to o; the block: Z_in from o to ground, a source G v_o behind Z_out to
    y; the feedback R_f from y to s, R_g from s to ground. The + input draws no current, so
    v_+ is the source's voltage (1 V for the gain, 0 with 1 A injected into y for the
    impedance, the load then removed)."""
    a0, gbw, f, r_o = 1e4, 1e6, 1e3, 200.0
    gain_block = 10.0 ** (6.0 / 20.0)
    a = a0 / (1.0 + 1j * f * a0 / gbw)
    trials = rf.size
    m = np.zeros((trials, 4, 4), complex)
    s, x, o, y = range(4)
    # KCL at s: (y - s)/R_f - s/R_g = 0
    m[:, s, y] += 1.0 / rf
    m[:, s, s] -= 1.0 / rf + 1.0 / rg
    # the op-amp's source: x + A s = A v_+
    m[:, x, x] = 1.0
    m[:, x, s] = a
    # KCL at o: (x - o)/R_o - o/Z_in = 0
    m[:, o, x] = 1.0 / r_o
    m[:, o, o] = -(1.0 / r_o + 1.0 / z_in)
    # KCL at y: (G o - y)/Z_out - (y - s)/R_f - y/R_L + I = 0
    m[:, y, o] = gain_block / z_out
    m[:, y, y] = -(1.0 / z_out + 1.0 / rf)
    m[:, y, s] = 1.0 / rf
    loaded = m.copy()
    loaded[:, y, y] -= 1.0 / r_load
    drive = np.zeros((trials, 4), complex)
    drive[:, x] = a  # v_+ = 1 V
    gain = np.abs(np.linalg.solve(loaded, drive[..., None])[:, y, 0])
    inject = np.zeros((trials, 4), complex)
    inject[:, y] = -1.0  # the 1 A moved to the right-hand side
    z = np.abs(np.linalg.solve(m, inject[..., None])[:, y, 0])
    return gain, z


def test_closed_loop_gain_impedance_and_damping_per_trial_against_a_nodal_solve() -> None:
    """A gain block inside an op-amp's loop, driving the load: per trial, the spread's
    closed-loop gain, closed-loop output impedance (at idle too: a block has no idle point
    of its own, so the same) and damping factor against a plain nodal solve of the loop
    written here (`_nodal_loop`), rtol 1e-9; the damping factor is R_L/|Z_out| (the nominal
    load over the output impedance, common practice, no source), here and at the output,
    and the gain step at idle is none."""
    chain = _chain(BLOCK_IN_LOOP)
    parts, evaluate = _evaluator(chain)
    positions = np.random.default_rng(17).random((12, len(parts)))
    figures = evaluate(positions)
    values = {p.label: v for p, v in zip(parts, evaluate.values(positions), strict=True)}
    gain, z = _nodal_loop(
        values["amp.feedback"],
        values["amp.ground_leg"],
        values["buffer.input_impedance"],
        values["buffer.output_impedance"],
        8.0,
    )
    assert np.ptp(z) > 0.05 * np.mean(z)  # the parts move the impedance
    prefix = "loop.amp."
    assert figures[prefix + "closed_loop_gain_db"] == pytest.approx(
        20.0 * np.log10(gain), rel=1e-9, abs=0
    )
    for key in ("closed_loop_zout_ohm", "idle_closed_loop_zout_ohm"):
        assert figures[prefix + key] == pytest.approx(z, rel=1e-9, abs=0), key
    for key in ("damping_factor", "idle_damping_factor"):
        assert figures[prefix + key] == pytest.approx(8.0 / z, rel=1e-9, abs=0), key
    assert figures["output.damping_factor"] == pytest.approx(8.0 / z, rel=1e-9, abs=0)
    assert figures[prefix + "idle_gain_step_db"] == pytest.approx(0.0, abs=1e-12)


# Halvings of each bracket: from 1060 (ln I/I_q from -1000 to 60) to 1e-21, and from a drive
# of at most 10 V to 1e-23 V, past the float's resolution of either at the roots.
BISECTIONS = 80


def _half_current(
    y: np.ndarray, junctions: int, v_t: float, r: np.ndarray, i_q: float
) -> np.ndarray:
    """I with u(I) = m V_T ln(I/I_q) + (I - I_q) R = y (the pair's junction law,
    docs/power.md: the Ebers-Moll exponential behind the emitter resistance, Horowitz &
    Hill, The Art of Electronics, 3rd ed., sec. 2.3.1, from memory), by bisection on
    x = ln(I/I_q), where u = m V_T x + I_q R (e^x - 1) rises: every sample at once, to the
    float's resolution (no Lambert W, no Newton step)."""
    lo = np.full(y.shape, -1000.0)
    hi = np.full(y.shape, 60.0)
    a = junctions * v_t
    for _ in range(BISECTIONS):
        mid = 0.5 * (lo + hi)
        above = a * mid + i_q * r * np.expm1(mid) > y
        hi = np.where(above, mid, hi)
        lo = np.where(above, lo, mid)
    return np.asarray(i_q * np.exp(0.5 * (lo + hi)))


def _pair_output(
    drive: np.ndarray, r_up: np.ndarray, r_down: np.ndarray, v_t: float, i_q: float, r_l: float
) -> np.ndarray:
    """The pair's output for drive voltages (trials x samples): the load closes it,
    I_u(v - v_o) - I_l(v_o - v) = v_o/R_L, a function falling in v_o with its root between
    0 and v; by bisection on v_o, every sample at once (two junctions a half: a Darlington)."""
    lo, hi = np.minimum(drive, 0.0), np.maximum(drive, 0.0)
    for _ in range(BISECTIONS):
        mid = 0.5 * (lo + hi)
        excess = (
            _half_current(drive - mid, 2, v_t, r_up, i_q)
            - _half_current(mid - drive, 2, v_t, r_down, i_q)
            - mid / r_l
        )
        lo = np.where(excess > 0.0, mid, lo)
        hi = np.where(excess > 0.0, hi, mid)
    return np.asarray(0.5 * (lo + hi))


def test_harmonics_per_trial_against_an_fft_of_the_pair_s_waveform() -> None:
    """The open-loop output pair of tests/test_spread.py (unequal halves: betas of 60 and
    45), its emitter resistors and four betas drawn: each trial's harmonics 2 to 20 at 1 W
    into 8 ohm against the FFT of the pair's output over a cycle of sine drive computed
    here (1024 samples, each solved by bisection on its junction law; the drive amplitude
    by secant steps until the fundamental is sqrt(2 R_L) V to 1e-13); the resistance in
    each half R_E + r_bb'/(beta + 1) + r_bb',driver/((beta + 1)(beta_d + 1)) (the base
    resistances seen through the devices' current gain, docs/power.md), V_T = k T/q at
    the chain's ambient (CODATA constants through scipy). Amplitudes to rtol 1e-9 and
    `HARMONIC_ABS`; the even harmonics are those of the unequal halves and move with the
    drawn betas."""
    chain = _chain(PUSH_PULL)
    parts, evaluate = _evaluator(chain)
    positions = np.random.default_rng(23).random((3, len(parts)))
    figures = evaluate(positions)
    values = {p.label: v for p, v in zip(parts, evaluate.values(positions), strict=True)}
    r_e = values["output.emitter_resistors"][:, None]

    def half(side: str, r_bb: float, r_bb_driver: float) -> np.ndarray:
        beta = values[f"output.{side} beta"][:, None]
        beta_d = values[f"output.driver_{side} beta"][:, None]
        return np.asarray(r_e + r_bb / (beta + 1.0) + r_bb_driver / ((beta + 1) * (beta_d + 1)))

    r_up, r_down = half("upper", 10.0, 50.0), half("lower", 10.0, 50.0)
    v_t = constants.k * (chain.settings.ambient + constants.zero_Celsius) / constants.e
    i_q, r_l, samples = 0.040, 8.0, 1024
    target = math.sqrt(2.0 * r_l)  # 1 W into 8 ohm, peak
    sine = np.sin(2.0 * np.pi * np.arange(samples) / samples)[None, :]

    def spectrum(amplitude: np.ndarray) -> np.ndarray:
        out = _pair_output(amplitude * sine, r_up, r_down, v_t, i_q, r_l)
        return np.asarray(np.abs(np.fft.rfft(out, axis=-1)[:, 1:21]) * 2.0 / samples)

    before, drive = np.full((3, 1), target), np.full((3, 1), 1.05 * target)
    fundamental_before = spectrum(before)[:, :1]
    for _ in range(30):
        found = spectrum(drive)
        miss = found[:, :1] - target
        if np.all(np.abs(miss) <= 1e-13 * target):
            break
        slope = (found[:, :1] - fundamental_before) / (drive - before)
        before, fundamental_before = drive, found[:, :1]
        drive = drive - miss / slope
    assert np.all(np.abs(found[:, 0] / target - 1.0) <= 1e-12)
    reference = found[:, 1:] / found[:, :1]
    for n in range(2, 21):
        got = 10.0 ** (figures[f"output.thd_one_watt_harmonic_{n}_db"] / 20.0)
        want = np.maximum(reference[:, n - 2], 10.0 ** (HARMONIC_FLOOR_DB / 20.0))
        assert got == pytest.approx(want, rel=1e-9, abs=HARMONIC_ABS), n
    assert np.ptp(figures["output.thd_one_watt_harmonic_2_db"]) > 1.0  # dB: the betas
    assert np.all(reference[:, 0] > 1e-6)  # a second harmonic well above the rounding


def _shed_amp_near_clip() -> Chain:
    """The shed amplifier driven at +0.5 dBV with 10 % resistors: its nominal level at
    the load within a few per cent of the chain's clip."""
    text = (ROOT / "chains" / "shed_amp_mains.toml").read_text()
    for old, new in (
        ('level = "-10 dBV"', 'level = "0.5 dBV"'),
        ('max_level = "-6 dBV"', 'max_level = "3 dBV"'),
    ):
        assert old in text, old
        text = text.replace(old, new, 1)
    return _chain(text.replace("\n[", '\n[tolerances]\nresistors = "10 %"\n\n[', 1))


def test_thd_at_a_level_a_trial_cannot_reach_is_undefined_as_in_its_check() -> None:
    """The shed amplifier driven at +0.5 dBV with 10 % resistors: its nominal level at
    the load lies within a few per cent of the chain's clip, and the resistors move the
    one against the other. The check of a trial lists THD only at the levels the chain
    reaches (below its clip, `crossover._distortion`); of six trials drawn with seed 5,
    written into the file and checked alone, four cannot reach the nominal level. The
    spread's THD and harmonics at the nominal level are NaN in exactly those trials
    (undefined, as the check leaves them) and equal the check's in the others (rtol
    1e-6: the rectified rail a trial's stages run on is settled through the rectifier's
    load expansion, within 7e-6 of its own solve, docs/tolerances.md, and moves the
    pair's conduction; harmonics as amplitudes)."""
    from test_spread import trial_chain

    chain = _shed_amp_near_clip()
    parts, evaluate = _evaluator(chain)
    positions = np.random.default_rng(5).random((6, len(parts)))
    batched = evaluate(positions)
    paths = ["output.thd_nominal_percent"]
    paths += [f"output.thd_nominal_harmonic_{n}_db" for n in range(2, 21)]
    unreached = 0
    for t in range(len(positions)):
        data = _check_json(trial_chain(chain, parts, evaluate.values(positions[t : t + 1])))
        output = data["output"]
        nominal_vrms = output["nominal_vpk"] / math.sqrt(2.0)
        listed = any(math.isclose(e["level_vrms"], nominal_vrms) for e in output["thd"])
        unreached += not listed
        for path in paths:
            if not listed:
                assert math.isnan(batched[path][t]), (path, t)
                continue
            held = _json_figure(data, path)
            if "_harmonic_" in path:
                got, want = _ratio(batched[path][t]), _ratio(held)
                assert got == pytest.approx(want, rel=1e-6, abs=HARMONIC_ABS), (path, t)
            else:
                assert batched[path][t] == pytest.approx(held, rel=1e-6, abs=0), (path, t)
    assert unreached == 4


def test_the_table_names_an_undefined_thd_and_counts_its_harmonics() -> None:
    """Where the nominal level's THD is undefined in some trials (the chain above), the
    table's note names it with its share and counts its 19 harmonics (JSON-only figures)
    in one entry instead of listing each."""
    from chainbudget.report.plain_text import plain_text
    from chainbudget.spread.run import run_spread
    from chainbudget.spread.view import spread_tables

    result = run_spread(_shed_amp_near_clip(), 40, 5)
    assert 0.0 < result.undefined["output.thd_nominal_percent"] < 1.0
    drawn = plain_text(spread_tables(result, "near clip"), 80)
    assert drawn is not None
    text = " ".join(drawn.split())
    assert "output.thd_nominal_percent in " in text
    assert "; 19 harmonics (in the JSON)" in text
    assert "output.thd_nominal_harmonic_" not in text
