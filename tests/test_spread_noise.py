"""The spread of the noise budget's detail: each generator's part of the output noise
(``noise_sources``), each stage's share (``noise.stage_shares``) and the placement note
(``noise-attenuator-before-gain``, with the lift it is judged by) per trial. Checked by
brute force (each trial written into the chain file and checked alone) and against the
closed form of a non-inverting stage's noise."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from test_spread import NON_INVERTING, _chain, _json_figure, trial_changes

from chainbudget.budget import Budget, compute
from chainbudget.budget.supplies import settle
from chainbudget.chainfile import Chain, load_chain
from chainbudget.report.json_view import budget_json
from chainbudget.spread.evaluate import Evaluator, failing
from chainbudget.spread.flags import flag_parts, is_flag
from chainbudget.spread.noise_placement import CODE
from chainbudget.spread.parts import chain_parts

ROOT = Path(__file__).resolve().parents[1]

#: The figure groups this file is about.
DETAIL = ("noise_sources.", "noise.stage_shares.", "noise.placement.")

# A volume pot ahead of a make-up gain that is a loop round a buffer (the main gain is a
# loop section), after a pre-amp noisy enough that moving the pot after the make-up gain
# would lift the output SNR by 3.0 dB: the pot's 20 % moves the lift across the note's
# 3 dB limit (`chainbudget.thresholds.PLACEMENT_LIFT_DB`). The op-amp's values are a
# designer's round figures, not any part's.
PLACEMENT = """
[chain]
title = "volume ahead of a looped make-up gain"
ambient = "25 degC"
[source]
level = "50 mV"
max_level = "100 mV"
impedance = "10k"
[load]
impedance = "8 ohm"
[tolerances]
resistors = "5 %"
pots = "20 %"
[opamp.quiet]
gbw = "10 MHz"
slew_rate = "10 V/us"
noise_voltage = "3 nV/rtHz"
noise_current = "0.5 pA/rtHz"
swing_margin = "1 V"
output_current = "40 mA"
supply_current = "4 mA"
[[supply]]
name = "plus"
kind = "dc"
voltage = "15 V"
[[supply]]
name = "minus"
kind = "dc"
voltage = "-15 V"
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "9k"
ground_leg = "1k"
opamp = "quiet"
positive = "plus"
negative = "minus"
[[stage]]
name = "volume"
kind = "volume"
pot = "100k"
taper = "log"
position = 0.5
[[stage]]
name = "makeup"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "22k"
ground_leg = "1k"
opamp = "quiet"
positive = "plus"
negative = "minus"
feedback_from = "buf"
[[stage]]
name = "buf"
kind = "block"
gain = 1
input_impedance = "100k"
output_impedance = "50 ohm"
[[stage]]
name = "amp"
kind = "block"
gain = "20 dB"
input_impedance = "20k"
output_impedance = "0.1 ohm"
noise = "5 nV/rtHz"
"""


def _detail(figures: dict[str, np.ndarray]) -> list[str]:
    return [p for p in figures if p.startswith(DETAIL)]


def _expected_paths(nominal: Budget) -> set[str]:
    """The detail figures the nominal check's JSON carries."""
    assert nominal.noise is not None
    found = {
        f"noise_sources.{c.label}.{key}"
        for c in nominal.noise.top_contributors
        for key in ("noise_vrms", "share", "share_a")
    }
    found |= {
        f"noise.stage_shares.{s.stage}.{key}"
        for s in nominal.noise.stage_shares
        for key in ("share", "share_a")
    }
    return found | {f"noise.placement.{p.stage}.lift_db" for p in nominal.noise.placement}


def _brute_force(chain: Chain, seed: int, trials: int) -> tuple[dict[str, np.ndarray], Evaluator]:
    """Each of ``trials`` trials written into the chain file and checked alone gives the
    batched detail figures (rtol 1e-9; a generator's noise voltage in dB, within 1e-8 dB)
    and, at each stage, whether it draws the placement note."""
    parts, held = chain_parts(chain)
    assert held == []
    nominal = compute(chain)
    evaluate = Evaluator(chain, tuple(parts), nominal, settle(chain, "low").voltages)
    positions = np.random.default_rng(seed).random((trials, len(parts)))
    figures = evaluate(positions, flags=True)
    paths = _detail(figures)
    assert set(paths) == _expected_paths(nominal)
    for path in paths:  # each is moved by the parts
        assert np.ptp(figures[path]) > 0.0, path
    flags = [p for p in figures if is_flag(p) and flag_parts(p)[1] == CODE]
    assert flags
    for t in range(trials):
        budget = compute(
            chain.with_values(trial_changes(chain, parts, evaluate.values(positions[t : t + 1])))
        )
        data = json.loads(json.dumps(budget_json(budget, list(budget.findings))))
        for path in paths:
            held_value = _json_figure(data, path, budget)
            if path.endswith("_vrms"):  # tiny voltages: compared in dB
                got, want = 20 * math.log10(figures[path][t]), 20 * math.log10(held_value)
                assert got == pytest.approx(want, rel=0, abs=1e-8), (path, t)
            else:
                assert figures[path][t] == pytest.approx(held_value, rel=1e-9, abs=0), (path, t)
        for path in flags:
            where = path.rsplit(":", 1)[-1]
            found = any(f.code == CODE and f.stage == where for f in budget.findings)
            assert bool(figures[path][t]) == found, (path, t)
    return figures, evaluate


def test_noise_detail_of_each_trial_of_an_example_equals_the_check_of_that_trial() -> None:
    """Brute force on an example (its hiss set late by a make-up gain after the volume
    pot): four trials, each written into the file and checked alone, give every batched
    generator's noise and shares, every stage's shares and the placement lift."""
    chain = load_chain(ROOT / "chains" / "workshop_radio_late_noise.toml")
    figures, _ = _brute_force(chain, seed=7, trials=4)
    assert "noise.placement.volume.lift_db" in figures


def test_placement_note_of_each_trial_is_the_check_finding_of_that_trial() -> None:
    """Brute force on a chain whose main gain is a loop section and whose placement lift
    sits on the note's limit: each of a dozen trials written into the file and checked
    alone gives the batched lift, shares and contributors, and draws the note exactly
    when the check of that trial finds it; some trials draw it and some do not."""
    chain = _chain(PLACEMENT)
    nominal = compute(chain)
    assert nominal.noise is not None
    (placement,) = nominal.noise.placement
    assert placement.main_stage == "makeup"  # the loop round the buffer
    figures, evaluate = _brute_force(chain, seed=3, trials=12)
    drawn = failing(evaluate.thresholds(figures), figures)[CODE]
    assert 0 < drawn.sum() < drawn.size


def test_shares_of_a_non_inverting_stage_against_its_closed_form() -> None:
    """Each generator's share of a non-inverting stage's output noise, per trial, against
    the textbook noise model of the stage with an ideal op-amp (e.g. Motchenbacher &
    Connelly, Low-Noise Electronic System Design, ch. 4, from memory): with G = 1 + Rf/Rg,
    at the output the source's 4 k T Rs G^2 (Johnson 1928, Nyquist 1928), e_n^2 G^2,
    (i_n Rs)^2 G^2 at the + input, (i_n Rf)^2 at the - input, 4 k T Rf from Rf and
    4 k T Rg (Rf/Rg)^2 from Rg: all white, so each share is its PSD over their sum and the
    A-weighted share is the same; the feedback resistor's noise over the band is
    sqrt(4 k T Rf (f2 - f1)). Boltzmann's constant is the SI's exact value. Every
    generator here meets the op-amp's finite loop gain through the same factor
    A beta / (1 + A beta), so the shares are exact to rounding (rtol 1e-9); the band noise
    carries that factor (|1 - 1/(A beta)|, A beta over 5e5 in the band) and the
    integration's error, both under 1e-6 dB."""
    text = NON_INVERTING.replace('impedance = "0 ohm"', 'impedance = "10k"').replace(
        'resistors = "1 %"', 'resistors = "5 %"'
    )
    text = text.replace('title = "gain spread"', 'title = "noise shares"\nambient = "27 degC"')
    chain = _chain(text)
    parts, _ = chain_parts(chain)
    evaluate = Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)
    positions = np.random.default_rng(9).random((64, len(parts)))
    figures = evaluate(positions)
    drawn = {p.label: v for p, v in zip(parts, evaluate.values(positions), strict=True)}
    rf, rg = drawn["pre.feedback"], drawn["pre.ground_leg"]
    k_t = 1.380649e-23 * (27.0 + 273.15)
    rs, e_n, i_n = 10e3, 1e-9, 0.1e-12  # the source, and IDEAL's densities
    gain = 1.0 + rf / rg
    psd = {
        "source.impedance": 4 * k_t * rs * gain**2,
        "pre.opamp.e_n": e_n**2 * gain**2,
        "pre.opamp.i_n+": (i_n * rs) ** 2 * gain**2,
        "pre.opamp.i_n-": (i_n * rf) ** 2,
        "pre.feedback": 4 * k_t * rf,
        "pre.ground_leg": 4 * k_t * rg * (rf / rg) ** 2,
    }
    total = sum(psd.values())
    assert {p.removeprefix("noise_sources.").rsplit(".", 1)[0] for p in figures} >= set(psd)
    for label, power in psd.items():
        for key in ("share", "share_a"):
            got = figures[f"noise_sources.{label}.{key}"]
            np.testing.assert_allclose(got, power / total, rtol=1e-9, atol=0, err_msg=label)
    np.testing.assert_allclose(
        figures["noise.stage_shares.source.share"], psd["source.impedance"] / total, rtol=1e-9
    )
    np.testing.assert_allclose(
        figures["noise.stage_shares.pre.share_a"],
        1.0 - psd["source.impedance"] / total,
        rtol=1e-9,
    )
    # the band's integral of white noise by Simpson's rule in ln f: about 6e-8 at 40 points
    # a decade (h^4/180, `chainbudget.spectrum.integrate_psd`)
    band = 20e3 - 20.0
    got_db = 20 * np.log10(figures["noise_sources.pre.feedback.noise_vrms"])
    want_db = 10 * np.log10(4 * k_t * rf * band)
    np.testing.assert_allclose(got_db, want_db, rtol=0, atol=1e-6)


def test_the_spread_table_shows_shares_in_per_cent_and_names_their_figures() -> None:
    """A share is a fraction (``share_a`` is A-weighted, not amperes): the table gives it
    in per cent, at its stage or generator, named as a share."""
    from chainbudget.spread.view import _place_and_figure, _unit, scaled

    assert _unit("noise.stage_shares.pre.share_a") == ""
    assert scaled("noise_sources.pre.opamp.i_n-.share_a", 0.3) == (0.01, "%")
    assert _place_and_figure("noise_sources.pre.opamp.i_n-.share_a") == (
        "pre.opamp.i_n-",
        "noise share a",
    )
    assert _place_and_figure("noise.placement.volume.lift_db") == ("volume", "snr lift if moved")
    # a chain-wide figure at the chain, not at its own key folded over two lines
    assert _place_and_figure("dynamic_range_a_db") == ("chain", "dynamic range a")
    assert _place_and_figure("output.dissipation.clip_device_w") == ("output heat", "clip device")
    assert _unit("noise.placement.volume.lift_db") == "dB"


NOISELESS = """
[chain]
band = ["20 Hz", "20 kHz"]
reference = "1 kHz"
[source]
level = "100 mV"
max_level = "1 V"
impedance = "0 ohm"
[load]
impedance = "10 kohm"
[[stage]]
name = "blk"
kind = "block"
gain = 2
input_impedance = "1 Mohm"
output_impedance = "0 ohm"
max_output = "10 V"
tolerance = { input_impedance = "10 %" }
"""


def test_a_chain_without_any_noise_generator_spreads_without_noise_figures(
    tmp_path: Path,
) -> None:
    """A 0 ohm source into a noiseless block: no generator anywhere, so every node's noise
    is zero and its SNR undefined (the check prints none). The real command, warnings
    turned into errors, finishes with no traceback and no noise figure but the zeros."""
    import subprocess
    import sys

    chain = tmp_path / "noiseless.toml"
    chain.write_text(NOISELESS)
    run = subprocess.run(
        [sys.executable, "-W", "error", "-m", "chainbudget", "spread", str(chain)]
        + ["--trials", "40", "--seed", "3", "--format", "json"],
        capture_output=True,
        text=True,
        check=False,
    )
    assert run.returncode == 0, run.stderr
    assert "Traceback" not in run.stderr
    figures = json.loads(run.stdout)["figures"]
    assert "nodes.blk.snr_db" not in figures
    assert not any(p.startswith(("noise_sources.", "noise.stage_shares.")) for p in figures)
    assert figures["nodes.blk.noise_vrms"]["max"] == 0.0
