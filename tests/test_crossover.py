"""Crossover: the push-pull stage at idle beside conduction, Oliver's optimum quiescent, and
the distortion of its static exponential transfer, against outside sources."""

from __future__ import annotations

import math
import tomllib
from pathlib import Path

import numpy as np
import pytest
from scipy.constants import e as Q_ELECTRON
from scipy.constants import k as BOLTZMANN
from scipy.constants import zero_Celsius
from scipy.optimize import brentq

from chainbudget.budget import compute
from chainbudget.chainfile import load_chain, parse_chain
from chainbudget.stages.push_pull import crossover
from chainbudget.stages.push_pull.crossover import HARMONICS, Crossover, HalfLaw, harmonics

ROOT = Path(__file__).resolve().parents[1]

PAIR = """
[chain]
reference = "1 kHz"
ambient = "{ambient} degC"
[source]
level = "1 Vrms"
impedance = "0 ohm"
[load]
impedance = "8 ohm"
[transistor.out_npn]
polarity = "npn"
beta = {beta}
base_resistance = "{rbb} ohm"
[transistor.out_pnp]
polarity = "pnp"
beta = {beta}
base_resistance = "{rbb} ohm"
[[supply]]
name = "plus"
kind = "dc"
voltage = "20 V"
[[supply]]
name = "minus"
kind = "dc"
voltage = "20 V"
[[stage]]
name = "drive"
kind = "block"
gain = 1
input_impedance = "1 Mohm"
output_impedance = "{zs} ohm"
[[stage]]
name = "output"
kind = "push_pull"
upper = "out_npn"
lower = "out_pnp"
emitter_resistors = "{re} ohm"
quiescent = "{iq} A"
positive = "plus"
negative = "minus"
"""


def test_idle_output_impedance_is_both_halves_in_parallel() -> None:
    """At idle both halves conduct at I_q, each an emitter follower of output impedance
    R_E + r_e + r_bb'/(beta + 1), r_e = V_T/I_q (Horowitz & Hill, The Art of Electronics,
    3rd ed., sec. 2.2.3, from memory), in parallel with R_E the other's; both draw their
    base current through the one source impedance, which adds Z_s/(beta + 1) (the two
    base currents add in it; Kirchhoff). In conduction one half at its peak current:
    R_E + r_e + (Z_s + r_bb')/(beta + 1). rtol 1e-6."""
    ambient, beta, rbb, zs, r_e_resistor, iq = 25.0, 60.0, 8.0, 0.5, 0.33, 0.05
    text = PAIR.format(ambient=ambient, beta=beta, rbb=rbb, zs=zs, re=r_e_resistor, iq=iq)
    budget = compute(parse_chain(tomllib.loads(text), "pair.toml"))
    own = budget.node("output").figures(Crossover)
    assert isinstance(own, Crossover)
    v_t = BOLTZMANN * (ambient + zero_Celsius) / Q_ELECTRON
    per_half = r_e_resistor + v_t / iq + rbb / (beta + 1.0)
    idle = per_half / 2.0 + zs / (beta + 1.0)
    assert own.idle_zout_ohm == pytest.approx(idle, rel=1e-6)
    # Oliver's optimum: I_q R_E = V_T (HP Journal, Feb. 1971).
    assert own.optimum_quiescent_a == pytest.approx(v_t / r_e_resistor, rel=1e-9)
    # In conduction: the conducting half at V_swing/(R_E + R_L), r_e = V_T/I there.
    swing = 20.0 - max(0.2 + 0.65, 0.2)  # the class's V_CE(sat) + V_BE
    i_pk = swing / (r_e_resistor + 8.0)
    conduction = r_e_resistor + v_t / i_pk + (zs + rbb) / (beta + 1.0)
    assert own.zout_ohm == pytest.approx(conduction, rel=1e-6)
    # The gain step into the load: the divider R_L/(R_L + Z_out) at idle over conduction.
    step = 20.0 * math.log10((8.0 / (8.0 + idle)) / (8.0 / (8.0 + conduction)))
    assert own.gain_step_db == pytest.approx(step, abs=1e-6)


def test_the_busking_amp_crossover_figures() -> None:
    """The busking example: 0.45 ohm in conduction, 1.10 ohm at idle, a gain step of about
    1.2 dB, and 30 mA a quarter of the optimum V_T/R_E for 0.22 ohm at 35 degC (the figures
    of the issue that asked for them, worked by hand there)."""
    budget = compute(load_chain(ROOT / "chains" / "busking_amp.toml"))
    own = budget.node("output").figures(Crossover)
    assert isinstance(own, Crossover)
    assert own.zout_ohm == pytest.approx(0.45, abs=0.01)
    assert own.idle_zout_ohm == pytest.approx(1.10, abs=0.01)
    assert own.gain_step_db == pytest.approx(-1.2, abs=0.05)
    assert own.optimum_quiescent_a is not None
    assert 0.03 / own.optimum_quiescent_a == pytest.approx(0.25, abs=0.01)
    codes = {(fi.code, fi.severity) for fi in budget.findings if fi.stage == "output"}
    assert ("quiescent-low", "warning") in codes


def brute_force_output(
    v_in: float,
    upper: tuple[int, float],
    lower: tuple[int, float],
    iq: float,
    r_load: float,
    v_t: float,
) -> float:
    """The pair's output for one drive voltage, solved by root finding (scipy brentq):
    each half's current from m V_T ln(I/I_q) + (I - I_q) R = y (the exponential junction
    law, Ebers-Moll), and the output where I_u - I_l = v_o/R_L."""

    def current(y: float, law: tuple[int, float]) -> float:
        m, r = law

        def f(log_i: float) -> float:
            i = math.exp(log_i)
            return m * v_t * (log_i - math.log(iq)) + (i - iq) * r - y

        # ln(I/I_q) lies between 0 and y/(m V_T) (the resistor's term has y's sign), and
        # I below I_q + y/R.
        low = math.log(iq) + min(y, 0.0) / (m * v_t)
        high = math.log(iq) + max(y, 0.0) / (m * v_t)
        if r > 0.0:
            high = min(high, math.log(iq + max(y, 0.0) / r))
        return math.exp(brentq(f, low - 1.0, high + 1.0, xtol=1e-15))

    def g(v_o: float) -> float:
        return current(v_in - v_o, upper) - current(v_o - v_in, lower) - v_o / r_load

    if v_in == 0.0:
        return 0.0
    return brentq(g, min(0.0, v_in), max(0.0, v_in), xtol=1e-15, rtol=1e-15)


@pytest.mark.parametrize(
    ("upper", "lower", "iq", "r_load", "level"),
    [
        ((2, 0.22), (2, 0.22), 0.03, 4.0, 1.1),  # a Darlington pair, under-biased
        ((1, 0.33), (1, 0.47), 0.08, 8.0, 10.0),  # unequal halves: even harmonics
        ((1, 0.0), (1, 0.0), 0.01, 8.0, 3.0),  # no emitter resistors at all
    ],
)
def test_thd_of_the_static_transfer_against_root_finding_per_sample(
    upper: tuple[int, float],
    lower: tuple[int, float],
    iq: float,
    r_load: float,
    level: float,
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    """The tool's vectorised solve of the static transfer against scipy.optimize.brentq
    per sample (written here), both taken through the same DFT: harmonics within 0.01 dB
    where above -120 dB, THD within 1e-6 relative. (128 samples a cycle on both sides, to
    keep the brute force quick; the tool's own count only moves the aliasing floor.)"""
    samples = 128
    monkeypatch.setattr(crossover, "SAMPLES", samples)
    v_t = BOLTZMANN * (25.0 + zero_Celsius) / Q_ELECTRON
    up, lo = HalfLaw(upper[0], upper[1], iq), HalfLaw(lower[0], lower[1], iq)
    (tool,) = harmonics([level], up, lo, r_load, v_t)
    # The drive that gives the tool's fundamental: found here by the same brute force.
    phase = 2.0 * np.pi * np.arange(samples) / samples

    def fundamental(drive: float) -> tuple[float, np.ndarray]:
        out = np.array(
            [brute_force_output(drive * math.sin(p), upper, lower, iq, r_load, v_t) for p in phase]
        )
        spectrum = np.abs(np.fft.rfft(out)) * 2.0 / samples
        return float(spectrum[1]), spectrum

    drive = brentq(lambda d: fundamental(d)[0] - level, level, 1.5 * level + 0.5, xtol=1e-12)
    _, spectrum = fundamental(drive)
    h = spectrum[1 : HARMONICS + 1]
    thd = math.sqrt(float(np.sum(h[1:] ** 2))) / h[0]
    assert tool.open_thd == pytest.approx(thd, rel=1e-6)
    assert tool.thd == pytest.approx(thd, rel=1e-6)  # open loop: no correction
    for n, (mine, theirs) in enumerate(zip(tool.open_harmonics_db, h[1:], strict=True), 2):
        expected = 20.0 * math.log10(theirs / h[0])
        if expected > -120.0:
            assert mine == pytest.approx(expected, abs=0.01), f"harmonic {n}"


def test_the_loop_divides_each_harmonic_by_its_return_difference() -> None:
    """Inside a loop each harmonic n is divided by |1 + T(n f)| at the same fundamental (the
    convention: the distortion an output stage generates inside a loop, over the return
    difference at its frequency; Black's feedback, e.g. Horowitz & Hill 3rd ed. sec. 2.5.3,
    from memory)."""
    v_t = 0.0257
    law = HalfLaw(1, 0.22, 0.02)
    factor = np.linspace(100.0, 5.0, HARMONICS)
    (open_loop,) = harmonics([5.0], law, law, 8.0, v_t)
    (closed,) = harmonics([5.0], law, law, 8.0, v_t, factor)
    for n in range(2, HARMONICS + 1):
        before, after = open_loop.open_harmonics_db[n - 2], closed.harmonics_db[n - 2]
        if math.isfinite(before):
            expected = before - 20.0 * math.log10(factor[n - 1])
            assert after == pytest.approx(expected, abs=1e-9)


def test_a_half_driven_far_off_has_no_slope_and_no_warning() -> None:
    """dI/dy = 1/(m V_T/I + R) (the junction law behind R differentiated), whose limit as
    I -> 0 is 0: a current underflowed to 0, or a subnormal one, gives 0 (the suite turns
    a division warning into a failure). Found by the fuzz: rails of 10^6 V drive the off
    half's current below the smallest double. 1 mA by hand: 1/(0.0257/1e-3 + 0.22)."""
    law = HalfLaw(1, 0.22, 0.02)
    slope = law.slope(np.array([0.0, 5e-324, 1e-3]), 0.0257)
    assert slope[0] == 0.0
    assert 0.0 <= slope[1] < 1e-300
    assert slope[2] == pytest.approx(1.0 / (0.0257 / 1e-3 + 0.22), rel=1e-15)


def test_the_busking_amps_bias_is_named_for_what_it_is() -> None:
    """30 mA in 0.22 ohm emitter resistors is a quarter of Oliver's optimum I_q = V_T/R_E
    (B. M. Oliver, HP Journal, Feb. 1971): quiescent-low; 300 mA is 2.5 times it:
    quiescent-high, with the optimum V_T/R_E at the ambient's thermal voltage (kT/q at
    35 degC, exact SI constants), rel 1e-6. An untracked spreader on the warm heatsink lets
    the 30 mA climb: quiescent-climbs."""
    import chainbudget as cb

    chain = cb.load(Path(__file__).resolve().parents[1] / "chains" / "busking_amp.toml")
    found = {f.code: f for f in cb.compute(chain).findings if f.stage == "output"}
    assert found["quiescent-low"].severity == "warning"
    assert found["quiescent-climbs"].severity == "note"
    hot = {f.code: f for f in cb.compute(chain.replace("output.quiescent", "300 mA")).findings}
    high = hot["quiescent-high"]
    assert high.severity == "note" and high.stage == "output"
    v_t = 1.380649e-23 * (35.0 + 273.15) / 1.602176634e-19
    assert high.figures["optimum_quiescent_a"] == pytest.approx(v_t / 0.22, rel=1e-6, abs=0)


def test_lambert_w_of_exp_against_scipy() -> None:
    """W(e^x) by Newton in ln w against scipy.special.lambertw (an independent
    implementation) where e^x is finite, and against its defining equation w + ln w = x
    beyond (Corless et al., Adv. Comput. Math. 5 (1996) 329)."""
    from scipy.special import lambertw

    from chainbudget.stages.push_pull.crossover import _w_of_exp

    x = np.linspace(-700.0, 700.0, 20001)
    w = _w_of_exp(x)
    assert np.max(np.abs(w / lambertw(np.exp(x)).real - 1.0)) < 1e-13
    # Started anywhere positive (the last step's answer, or far from it), the same root.
    start = np.geomspace(1e-30, 1e30, x.size)
    assert np.max(np.abs(_w_of_exp(x, start) / lambertw(np.exp(x)).real - 1.0)) < 1e-13
    big = np.geomspace(700.0, 1e8, 201)
    wb = _w_of_exp(big)
    assert np.max(np.abs((wb + np.log(wb) - big) / big)) < 1e-14


def _extended_harmonics(
    level: float, upper: HalfLaw, lower: HalfLaw, r_load: float, v_t: float
) -> np.ndarray:
    """Harmonic amplitudes 1..HARMONICS of the static transfer at the fundamental
    ``level``, worked out here in extended precision (numpy's longdouble, 64-bit mantissa
    on x86-64): W(e^x) by plain Newton on w + ln w = x (Corless et al., Adv. Comput. Math.
    5 (1996) 329), the output by plain Newton on I_u - I_l - v_o/R_L, far more steps than
    either needs, the DFT as a sum, the drive by plain ratio corrections."""
    ld = np.longdouble
    samples = crossover.SAMPLES

    def current(law: HalfLaw, y: np.ndarray) -> np.ndarray:
        a, r, iq = ld(law.junctions) * ld(v_t), ld(law.r_ohm), ld(law.i_q)
        x = np.log(r * iq / a) + (y + iq * r) / a
        u = np.where(x > 1, np.log(np.maximum(x, ld(1))), x - 1)
        for _ in range(30):
            e = np.exp(u)
            u = u - (e + u - x) / (e + 1)
        return a / r * np.exp(u)

    def slope(law: HalfLaw, i: np.ndarray) -> np.ndarray:
        return 1 / (ld(law.junctions) * ld(v_t) / i + ld(law.r_ohm))

    k = np.arange(samples, dtype=ld)
    sine = np.sin(2 * ld(np.pi) * k / samples)
    cos = np.cos(2 * ld(np.pi) * np.outer(np.arange(HARMONICS + 1), k) / samples)
    sin = np.sin(2 * ld(np.pi) * np.outer(np.arange(HARMONICS + 1), k) / samples)
    drive = ld(level)
    out = drive * sine * ld(r_load) / (ld(r_load) + (ld(upper.r_ohm) + ld(lower.r_ohm)) / 2)
    for _ in range(25):
        v = drive * sine
        for _ in range(12):  # from the last drive's output
            i_u, i_l = current(upper, v - out), current(lower, out - v)
            g = i_u - i_l - out / ld(r_load)
            out = out + g / (slope(upper, i_u) + slope(lower, i_l) + 1 / ld(r_load))
        amplitude = np.hypot(cos @ out, sin @ out) * 2 / samples
        drive = drive * ld(level) / amplitude[1]
    return amplitude[1:]


@pytest.mark.skipif(
    np.finfo(np.longdouble).eps > 1e-18, reason="needs an extended-precision longdouble"
)
@pytest.mark.parametrize(
    ("upper", "lower", "iq", "r_load", "level"),
    [
        ((2, 0.4258), (2, 0.4258), 0.03, 4.0, 1.097),  # busking_amp.toml's pair, nominal
        ((2, 0.4258), (2, 0.4258), 0.03, 4.0, 7.261),  # and 1 dB below its clip
        ((1, 0.33), (1, 0.47), 0.08, 8.0, 10.0),  # unequal halves: even harmonics
    ],
)
def test_harmonics_reach_the_floats_precision_against_an_extended_precision_solve(
    upper: tuple[int, float],
    lower: tuple[int, float],
    iq: float,
    r_load: float,
    level: float,
) -> None:
    """The solve stops when it has converged, not before: THD within 1e-13 relative and
    every harmonic above -160 dB within 1e-8 dB of the same transfer worked out in
    extended precision (written here; a float64 solve that stops a step early, or whose
    bracket bisects at the rounding, misses by 1e-12 and more)."""
    v_t = BOLTZMANN * (35.0 + zero_Celsius) / Q_ELECTRON
    up, lo = HalfLaw(upper[0], upper[1], iq), HalfLaw(lower[0], lower[1], iq)
    (tool,) = harmonics([level], up, lo, r_load, v_t)
    reference = _extended_harmonics(level, up, lo, r_load, v_t)
    thd = float(np.sqrt(np.sum(reference[1:] ** 2)) / reference[0])
    assert tool.open_thd == pytest.approx(thd, rel=1e-13, abs=0)
    expected = 20.0 * np.log10((reference[1:] / reference[0]).astype(float))
    for n, (mine, theirs) in enumerate(zip(tool.open_harmonics_db, expected, strict=True), 2):
        if theirs > -160.0:
            assert mine == pytest.approx(theirs, abs=1e-8), f"harmonic {n}"


@pytest.mark.skipif(
    np.finfo(np.longdouble).eps > 1e-18, reason="needs an extended-precision longdouble"
)
@pytest.mark.parametrize(
    ("junctions", "r_ohm", "iq", "peak"), [(2, 0.4258, 0.03, 9.0), (1, 0.0, 0.01, 3.0)]
)
def test_static_output_reaches_the_floats_precision_from_a_cold_start(
    junctions: int, r_ohm: float, iq: float, peak: float
) -> None:
    """One call of the static transfer (no level corrections to refine it) gives every
    sample of a sine drive within 8 units in the last place of its peak of the same
    transfer solved in extended precision here (plain Newton, far more steps than it
    needs): the Newton steps stop at the float's precision, not before."""
    ld = np.longdouble
    v_t = 0.0265
    law = HalfLaw(junctions, r_ohm, iq)
    v = peak * np.sin(2.0 * np.pi * np.arange(512) / 512)
    tool = crossover.static_output(v, law, law, 4.0, v_t)
    a, r = ld(junctions) * ld(v_t), ld(r_ohm)

    def current(y: np.ndarray) -> np.ndarray:
        if r == 0:
            return ld(iq) * np.exp(y / a)
        x = np.log(r * ld(iq) / a) + (y + ld(iq) * r) / a
        u = np.where(x > 1, np.log(np.maximum(x, ld(1))), x - 1)
        for _ in range(60):
            e = np.exp(u)
            u = u - (e + u - x) / (e + 1)
        return a / r * np.exp(u)

    vin = v.astype(ld)
    out = vin * 4 / (4 + r)
    for _ in range(60):
        i_u, i_l = current(vin - out), current(out - vin)
        slope = 1 / (a / i_u + r) + 1 / (a / i_l + r) + ld(1) / 4
        out = out + (i_u - i_l - out / 4) / slope
    assert np.max(np.abs(tool - out.astype(float))) <= 8 * np.spacing(peak)


def test_the_solve_stops_when_converged_not_at_its_caps(monkeypatch: pytest.MonkeyPatch) -> None:
    """On the busking example the output's Newton steps and the drive's level corrections
    stop well inside their caps (the float's rounding reached: the test above): the
    bracketed solve runs once, for the first drive, and each later drive is settled by the
    joint Newton steps from the last solve without handing back to it; the crossover solves
    W(e^x) a few dozen times, not 2 x NEWTON_STEPS x LEVEL_STEPS."""
    calls = {"w": 0, "static": 0, "joint": 0}
    w_of_exp, static_output = crossover._w_of_exp, crossover._solved_output
    refined_output = crossover._refined_output

    def counted(name, function):  # type: ignore[no-untyped-def]
        def call(*args, **kwargs):  # type: ignore[no-untyped-def]
            calls[name] += 1
            return function(*args, **kwargs)

        return call

    monkeypatch.setattr(crossover, "_w_of_exp", counted("w", w_of_exp))
    monkeypatch.setattr(crossover, "_solved_output", counted("static", static_output))
    monkeypatch.setattr(crossover, "_refined_output", counted("joint", refined_output))
    compute(load_chain(ROOT / "chains" / "busking_amp.toml"))
    assert calls["static"] == 1
    assert 1 <= calls["joint"] <= crossover.LEVEL_STEPS // 2
    assert calls["w"] <= 2 * (crossover.NEWTON_STEPS // 4) * calls["static"]


@pytest.mark.parametrize(
    ("r_bounds", "iq_bounds", "level_bounds", "cold_starts"),
    [
        # parts within a build's tolerances of one design: the joint steps settle them all
        ((0.42, 0.47), (0.027, 0.033), (6.5, 7.5), 1),
        # far apart (a factor 10 in R, 20 in I_q, 300 in level): some samples are handed
        # to the bracketed solve, and every trial still comes out as it does alone
        ((0.1, 1.0), (0.005, 0.1), (0.05, 15.0), 2),
    ],
)
def test_trials_started_from_the_first_equal_each_trial_solved_alone(
    monkeypatch: pytest.MonkeyPatch,
    r_bounds: tuple[float, float],
    iq_bounds: tuple[float, float],
    level_bounds: tuple[float, float],
    cold_starts: int,
) -> None:
    """Trials of an output pair (three levels each, into 4 ohm), started from the first
    trial's solve by the joint Newton steps: each trial's harmonics equal those of the
    trial solved alone with the bracketed solve for every drive (the reference: W(e^x)
    per half inside a bracketed Newton on the output) to rtol 1e-9 above -140 dB (below
    it the float's rounding of the fundamental is itself 1e-9 of a harmonic); and the
    bracketed solve runs as often as expected (once for the first trial's cold start; once
    more, on the samples the joint steps leave, where the trials are far apart)."""
    from chainbudget.stages.push_pull.crossover import harmonic_amplitudes

    rng = np.random.default_rng(7)
    trials = 40
    r_upper = rng.uniform(*r_bounds, (trials, 1))
    r_lower = rng.uniform(*r_bounds, (trials, 1))
    iq = np.exp(rng.uniform(*np.log(iq_bounds), (trials, 1)))
    levels = np.exp(rng.uniform(*np.log(level_bounds), (trials, 3)))
    v_t = 0.0262
    calls = {"static": 0}
    static_output = crossover._solved_output

    def counted(*args, **kwargs):  # type: ignore[no-untyped-def]
        calls["static"] += 1
        return static_output(*args, **kwargs)

    monkeypatch.setattr(crossover, "_solved_output", counted)
    batched = harmonic_amplitudes(
        levels, HalfLaw(2, r_upper, iq), HalfLaw(2, r_lower, iq), 4.0, v_t
    )
    assert calls["static"] == cold_starts
    monkeypatch.setattr(crossover, "_refined_output", _bracketed_only)
    for t in range(0, trials, 3):
        up = HalfLaw(2, float(r_upper[t, 0]), float(iq[t, 0]))
        lo = HalfLaw(2, float(r_lower[t, 0]), float(iq[t, 0]))
        alone = harmonic_amplitudes(levels[t], up, lo, 4.0, v_t)
        deep = alone > alone[:, :1] * 1e-7
        assert batched[t][deep] == pytest.approx(alone[deep], rel=1e-9, abs=0)


@pytest.mark.parametrize(
    ("start_law", "start_peak"),
    [((0.45, 0.03), 7.2), ((0.1, 0.005), 0.05), ((1.0, 0.1), 15.0)],
)
def test_the_joint_steps_reach_the_bracketed_solves_answer_from_any_start(
    start_law: tuple[float, float], start_peak: float
) -> None:
    """One call of `_refined_output` for a pair (0.43 ohm, 30 mA, 7 V peak into 4 ohm)
    started from the solve of another pair and drive (near it; ten times smaller; twice
    as large) gives every sample within 8 units in the last place of the peak of the cold
    bracketed solve of the same drive (the reference, itself held to an extended-precision
    solve above): where its own steps do not settle a sample, the bracketed solve does."""
    v_t = 0.0262
    law = HalfLaw(2, 0.43, 0.03)
    wave = np.sin(2.0 * np.pi * np.arange(512) / 512)
    v = 7.0 * wave
    other = HalfLaw(2, *start_law)
    near = crossover._solved_output(start_peak * wave, other, other, 4.0, v_t)
    joint = crossover._refined_output(v, law, law, 4.0, v_t, near)
    cold = crossover.static_output(v, law, law, 4.0, v_t)
    assert np.max(np.abs(joint.out - cold)) <= 8 * np.spacing(7.0)


def _bracketed_only(v, upper, lower, r_load, v_t, near):  # type: ignore[no-untyped-def]
    """`_refined_output` replaced by the bracketed solve from the same start."""
    return crossover._solved_output(v, upper, lower, r_load, v_t, near)


def test_harmonics_over_a_trial_axis_equal_a_plain_loop_over_the_trials() -> None:
    """Laws whose resistance and quiescent current are arrays over trials (one trial
    without any resistance: the pure exponential), levels per trial and per level: the
    batched amplitudes equal those of each trial solved alone in a plain Python loop
    (the reference), rtol 1e-9 for every harmonic above -160 dB."""
    from chainbudget.stages.push_pull.crossover import harmonic_amplitudes, thd_of

    v_t = 0.0257
    r_upper = np.array([[0.0], [0.22], [0.47], [1.0]])
    r_lower = np.array([[0.0], [0.33], [0.22], [0.8]])
    iq = np.array([[0.01], [0.03], [0.05], [0.02]])
    levels = np.array([[1.0, 4.0], [2.0, 8.0], [0.5, 12.0], [3.0, 3.5]])
    batched = harmonic_amplitudes(
        levels, HalfLaw(2, r_upper, iq), HalfLaw(1, r_lower, iq), 8.0, v_t
    )
    assert batched.shape == (4, 2, HARMONICS)
    for t in range(4):
        up = HalfLaw(2, float(r_upper[t, 0]), float(iq[t, 0]))
        lo = HalfLaw(1, float(r_lower[t, 0]), float(iq[t, 0]))
        alone = harmonic_amplitudes(levels[t], up, lo, 8.0, v_t)
        assert thd_of(batched[t]) == pytest.approx(thd_of(alone), rel=1e-9, abs=0)
        deep = alone > alone[:, :1] * 1e-8
        assert batched[t][deep] == pytest.approx(alone[deep], rel=1e-9, abs=0)
