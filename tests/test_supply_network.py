"""The power tree's new members: a centre-tapped (``split``) rectifier's two rails, the
``rc_filter`` and ``divider`` kinds, a stage biased from a supply, and the mains ripple
passed down the tree as a spectrum (the seed of the hum budget)."""

from __future__ import annotations

import cmath
import json
import math
import tomllib
from pathlib import Path

import pytest
from budgetkit import load_block as block

from chainbudget import rectifier
from chainbudget.budget import Budget, compute
from chainbudget.budget.supplies import loaded_analysis
from chainbudget.chainfile import Chain, ChainFileError, load_chain, parse_chain
from chainbudget.report.json_view import report_json

SQRT2 = math.sqrt(2.0)

HEAD = """
[chain]
title = "supply network"
[source]
level = "100 mV"
impedance = "1 kohm"
[load]
impedance = "10 kohm"
"""


def chain_of(text: str) -> Chain:
    return parse_chain(tomllib.loads(HEAD + text), "network.toml")


def budget_of(text: str) -> Budget:
    return compute(chain_of(text))


SPLIT = """
[[supply]]
name = "raw"
kind = "rectified"
split = true
secondary = "18 V"
bridge_drop = "0.9 V"
reservoir = "2200 uF"
regulation = "8 %"
rated_current = "1 A"
[[supply]]
name = "minus"
kind = "regulator"
from = "raw.neg"
output = "-15 V"
"""


def test_a_centre_tapped_supply_defines_two_rails_sharing_its_winding() -> None:
    """18-0-18 V, 8 % regulation, 1 A: each half's R_s = 0.08 x 18 / 1 = 1.44 ohm behind
    19.44 V rms (the definition of regulation); each rail is the cycle-by-cycle solution of
    its half under its own load (0.4 A on +, 0.2 A on - plus a regulator's 50 mA: rel 1e-9);
    each half-winding carries one rail's pulses on one half cycle and the other's on the
    next, so its rms current is sqrt((I_+^2 + I_-^2)/2) (rel 1e-9); the transformer's
    findings and the mains caution come once."""
    b = budget_of(
        SPLIT
        + block("amp", "raw", "0.4 A")
        + block("aux", "raw.neg", "0.2 A")
        + block("logic", "minus", "50 mA")
    )
    plus, minus = b.supply("raw"), b.supply("raw.neg")
    assert (plus.kind, minus.kind) == ("rectified", "rectified")
    assert minus.children == ("minus",) and b.supply("minus").parent == "raw.neg"
    low, high = SQRT2 * 19.44 * 0.9, SQRT2 * 19.44 * 1.1
    solved = {
        current: (
            rectifier.solve(low, 0.9, 1.44, 2200e-6, 50.0, current),
            rectifier.solve(high, 0.9, 1.44, 2200e-6, 50.0, current),
        )
        for current in (0.4, 0.25)
    }
    assert plus.trough_v == pytest.approx(float(solved[0.4][0].trough_v[0]), rel=1e-9)
    assert minus.trough_v == pytest.approx(float(solved[0.25][0].trough_v[0]), rel=1e-9)
    assert b.supply("minus").input_min_v == pytest.approx(minus.trough_v, rel=1e-12)
    hotter = [
        max(float(lo.winding_rms_a[0]), float(hi.winding_rms_a[0])) for lo, hi in solved.values()
    ]
    shared = math.sqrt((hotter[0] ** 2 + hotter[1] ** 2) / 2.0)
    assert plus.winding_rms_a == pytest.approx(shared, rel=1e-9)
    assert minus.winding_rms_a == pytest.approx(shared, rel=1e-9)
    assert [f.code for f in b.findings].count("mains") == 1


def test_a_split_stage_runs_from_both_rails() -> None:
    """An op-amp stage on raw / raw.neg: its rails are the two troughs, bias 0 V."""
    text = (
        SPLIT
        + block("amp", "raw", "0.1 A")
        + """
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10k"
ground_leg = "10k"
opamp = "jfet_input"
positive = "raw"
negative = "raw.neg"
"""
    )
    chain = chain_of(text)
    b = compute(chain)
    env = loaded_analysis(chain).envs[1]
    assert env.rails is not None
    assert env.rails.positive == pytest.approx(b.supply("raw").trough_v, abs=1e-6)
    assert env.rails.negative == pytest.approx(-b.supply("raw.neg").trough_v, abs=1e-6)
    assert env.rails.bias == 0.0


RAW = """
[[supply]]
name = "raw"
kind = "rectified"
secondary = "15 V"
reservoir = "2200 uF"
regulation = "10 %"
rated_current = "1 A"
"""


def test_an_rc_filter_drops_its_load_and_filters_the_ripple() -> None:
    """100 ohm, 1000 uF, 20 mA from a rectified rail: output = parent - I R (Ohm's law)
    at the nominal mean (rel 1e-12); ripple times |1/(1 + j 2 pi 100 Hz R C)| (the
    contract's rc_filter, circuit theory; rel 1e-12); each harmonic of the spectrum times
    the complex factor at its own frequency (rel 1e-12); the trough is the parent's with
    the ripple's swing below the mean so reduced, less I R; the parent carries the
    filter's load."""
    text = (
        RAW
        + """
[[supply]]
name = "clean"
kind = "rc_filter"
from = "raw"
resistance = "100 ohm"
capacitance = "1000 uF"
"""
        + block("pre", "clean", "20 mA")
        + block("amp", "raw", "0.3 A")
    )
    b = budget_of(text)
    raw, clean = b.supply("raw"), b.supply("clean")

    def factor(hz: float) -> complex:
        return 1.0 / (1.0 + 2j * math.pi * hz * 100.0 * 1000e-6)

    assert clean.mean_v == pytest.approx(raw.mean_v - 100.0 * 0.02, rel=1e-12)
    assert clean.ripple_vpp == pytest.approx(
        (raw.ripple_vpp or 0.0) * abs(factor(100.0)), rel=1e-12
    )
    trough = raw.trough_v + 0.5 * (raw.ripple_vpp or 0.0) * (1 - abs(factor(100.0))) - 2.0
    assert clean.trough_v == pytest.approx(trough, rel=1e-12)
    assert raw.max_load_a == pytest.approx(0.32, rel=1e-12)
    parent, child = raw.ripple_harmonics, clean.ripple_harmonics
    assert len(child) >= 5 and [hz for hz, _ in child[:5]] == [100.0, 200.0, 300.0, 400.0, 500.0]
    for (hz, up), (_, down) in zip(parent, child, strict=True):
        assert down == pytest.approx(up * factor(hz), rel=1e-12)
    data = json.loads(json.dumps(report_json(chain_of(text))))
    entry = next(s for s in data["supplies"] if s["name"] == "clean")
    assert entry["ripple_harmonics"][0]["hz"] == 100.0
    assert entry["ripple_harmonics"][0]["vpk"] == pytest.approx(abs(child[0][1]), rel=1e-12)


def test_the_mains_ripple_is_a_spectrum_of_the_reservoir_waveform() -> None:
    """The rectified rail's spectrum at nominal line and load is the Fourier series of the
    periodic state under its mean load (the model's, checked against a direct integration
    in tests/test_rectifier.py): its fundamental at 2 x 50 Hz, its magnitude within the
    ripple's half-swing; a regulator passes each harmonic times 10^(-60/20) (a data-sheet
    magnitude, real and positive; rel 1e-12)."""
    text = (
        RAW
        + """
[[supply]]
name = "reg"
kind = "regulator"
from = "raw"
output = "12 V"
dropout = "2 V"
ripple_rejection = "60 dB"
"""
        + block("pre", "reg", "50 mA")
        + block("amp", "raw", "0.3 A")
    )
    b = budget_of(text)
    raw, reg = b.supply("raw"), b.supply("reg")
    (hz, first), *_ = raw.ripple_harmonics
    assert hz == 100.0
    assert 0.0 < abs(first) < 0.5 * (raw.ripple_vpp or 0.0) * 1.3
    for (_, up), (_, down) in zip(raw.ripple_harmonics, reg.ripple_harmonics, strict=True):
        assert down == pytest.approx(up * 1e-3, rel=1e-12)
        assert cmath.phase(down) == pytest.approx(cmath.phase(up), abs=1e-12)


def test_a_divider_biases_a_single_supply_stage() -> None:
    """47k over 47k from a 24 V battery, 10 uF across the lower: 12 V (Thevenin: 24 x
    47/94), source 23.5 kohm; a stage whose bias names it sits at 12 V (its rails from the
    analysis); the battery carries the divider's 24 V / 94 kohm besides the stage."""
    text = """
[[supply]]
name = "bat"
kind = "dc"
voltage = "24 V"
[[supply]]
name = "vref"
kind = "divider"
from = "bat"
upper = "47k"
lower = "47k"
capacitance = "10 uF"
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10k"
ground_leg = "10k"
opamp = "jfet_input"
positive = "bat"
bias = "vref"
"""
    chain = chain_of(text)
    b = compute(chain)
    vref = b.supply("vref")
    assert vref.mean_v == pytest.approx(12.0, rel=1e-12)
    assert vref.thevenin_ohm == pytest.approx(23.5e3, rel=1e-12)
    env = loaded_analysis(chain).envs[0]
    assert env.rails is not None and env.rails.bias == pytest.approx(12.0, rel=1e-12)
    opamp_idle = b.node("pre").currents.idle_a
    assert b.supply("bat").idle_load_a == pytest.approx(opamp_idle + 24.0 / 94e3, rel=1e-12)


@pytest.mark.parametrize(
    ("text", "path", "words"),
    [
        (
            RAW
            + block("amp", "raw", "0.1 A").replace(
                'positive = "raw"', 'positive = "raw"\nbias = "nowhere"'
            ),
            'stage[1] "amp".bias',
            "expected a voltage",
        ),
        (
            RAW.replace('"rectified"\n', '"rectified"\nsplit = true\nhalf_wave = true\n')
            + block("amp", "raw", "0.1 A"),
            'supply[1] "raw".split',
            "half_wave",
        ),
        (
            RAW.replace('"rectified"\n', '"rectified"\nsplit = true\n')
            + RAW.replace('"raw"', '"raw.neg"')
            + block("amp", "raw", "0.1 A"),
            'supply[2] "raw.neg".name',
            "already defined",
        ),
        (RAW + block("amp", "raw.neg", "0.1 A"), 'stage[1] "amp".positive', "no supply"),
    ],
)
def test_the_loader_checks_rails_and_named_biases(text: str, path: str, words: str) -> None:
    with pytest.raises(ChainFileError) as caught:
        chain_of(text)
    assert path in str(caught.value) and words in str(caught.value)
    assert "\n" not in str(caught.value)


EXAMPLES = sorted((Path(__file__).resolve().parents[1] / "chains").glob("*.toml"))
SUPPLY_KEYS = {"trough_v", "crest_v", "mean_v", "ripple_vpp", "ripple_harmonics", "collapsed"}
RECTIFIED_KEYS = {
    "winding_rms_a",
    "diode_peak_a",
    "reservoir_ripple_a",
    "conduction_deg",
    "inrush_a",
}


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_every_example_carries_the_supply_keys_of_the_contract(path: Path) -> None:
    """chain-format.md, "Extensions: Supplies": every supply's trough, crest, mean, ripple,
    its spectrum ({"hz", "vpk"}, at least five; empty where there is no mains ripple) and
    whether it collapsed; a rectified one's currents; the output's clip power at the
    reference and at the band's low edge."""
    data = json.loads(json.dumps(report_json(load_chain(path))))
    assert {"clip_power_w", "clip_power_low_w"} <= data["output"].keys()
    for entry in data["supplies"]:
        assert SUPPLY_KEYS <= entry.keys()
        spectrum = entry["ripple_harmonics"]
        assert spectrum == [] or (
            len(spectrum) >= 5 and all(set(h) == {"hz", "vpk"} for h in spectrum)
        )
        if entry["kind"] == "rectified":
            assert RECTIFIED_KEYS <= entry.keys()
            assert len(spectrum) >= 5
