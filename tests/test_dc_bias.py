"""The DC operating-point check: each node's DC carried from the source to the load.

References: the DC gain of a non-inverting stage is 1 + R_f/R_g and of an inverting one
-R_f/R_i (Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 4.2.1); a series
capacitor blocks DC (an open circuit at f = 0, ibid. sec. 1.4.1, from memory); the unloaded
divider V_w = V x P/(R_s + P) (ibid. sec. 1.2.3); the emitter follower's V_E = V_B - V_BE
(ibid. sec. 2.2.1, from memory); the Baxandall bass network's low-frequency limits
(R + P)/R and R/(R + P) (Wireless World, Oct. 1952). Thresholds are common practice, no
source. Every DC figure is a sum of a few exact terms, so the tolerance is rtol 1e-12
unless stated.
"""

from __future__ import annotations

import json
import tomllib
from pathlib import Path

import numpy as np
import pytest
from stagekit import environment, make_stage, near_ideal_opamp, solve, unloaded_gain
from typer.testing import CliRunner

from chainbudget.budget import Budget, compute
from chainbudget.chainfile import parse_chain
from chainbudget.cli import app
from chainbudget.findings import Finding, findings
from chainbudget.parts import GENERIC_TRANSISTORS
from chainbudget.stages import KINDS
from chainbudget.stages.base import Environment, Rails, taper_fraction
from chainbudget.stages.tone_networks import FeedbackTone
from chainbudget.thresholds import DC_OFFSET_FRACTION, POT_DC_LIMIT_V

ROOT = Path(__file__).resolve().parents[1]
STARTER = ROOT / "chainbudget" / "templates" / "starter.toml"
WORKSHOP = ROOT / "chains" / "workshop_radio_late_noise.toml"
EXAMPLES = [*sorted((ROOT / "chains").glob("*.toml")), STARTER]
DC_CODES = {"dc-operating-point", "dc-offset", "pot-carries-dc"}
SINGLE_24 = Rails(positive=24.0, negative=0.0, bias=12.0)
runner = CliRunner()


def budget_of_text(text: str, name: str = "inline.toml") -> Budget:
    return compute(parse_chain(tomllib.loads(text), name))


def dc_findings(budget: Budget) -> list[Finding]:
    return [f for f in findings(budget) if f.code in DC_CODES]


def codes(budget: Budget) -> set[tuple[str, str | None]]:
    return {(f.code, f.stage) for f in dc_findings(budget)}


def node_dc(budget: Budget) -> dict[str, float | None]:
    return {p.stage: p.node_v for p in tuple(n.dc for n in budget.nodes)}


def without(path: Path, removed: dict[str, tuple[str, ...]]) -> Budget:
    """The budget of a shipped file with the fields ``removed[stage]`` taken out of those
    stages (the designer's original mistake)."""
    data = tomllib.loads(path.read_text(encoding="utf-8"))
    for stage in data["stage"]:
        for key in removed.get(stage["name"], ()):
            del stage[key]
    return compute(parse_chain(data, path.name))


HEAD = """
[chain]
title = "dc check"
band = ["20 Hz", "20 kHz"]
reference = "1 kHz"
ambient = "25 degC"
points_per_decade = 8
[source]
level = "-20 dBV"
max_level = "-10 dBV"
impedance = "1 kohm"
[load]
impedance = "10 kohm"
"""
SINGLE_SUPPLY = """
[[supply]]
name = "rail"
kind = "dc"
voltage = "24 V"
"""
SPLIT_SUPPLIES = """
[[supply]]
name = "plus"
kind = "dc"
voltage = "12 V"
[[supply]]
name = "minus"
kind = "dc"
voltage = "12 V"
"""


def rails_lines(split: bool) -> str:
    return 'positive = "plus"\nnegative = "minus"\n' if split else 'positive = "rail"\n'


# --- the stage formulas, stage by stage ------------------------------------------------------


def test_non_inverting_dc_gain_is_one_plus_rf_over_rg() -> None:
    """Hand formula: the DC gain of a non-inverting stage is 1 + Rf/Rg, Horowitz & Hill 3rd
    ed. sec. 4.2.1 (ground leg returned to 0 V): 1 V at the + input gives 1 + 10k/2k2."""
    stage = make_stage("opamp_gain", topology="non-inverting", feedback=10e3, ground_leg=2.2e3)
    env = environment(rails=SINGLE_24)
    assert KINDS["opamp_gain"].dc_output(stage, env, 1.0) == pytest.approx(
        1.0 + 10e3 / 2.2e3, rel=1e-12, abs=0
    )


def test_ground_cap_gives_a_dc_gain_of_one() -> None:
    """A series capacitor blocks DC: with ground_cap in the leg no DC flows in R_g, so the
    output follows the + input (H&H sec. 4.2.1 with R_g open)."""
    stage = make_stage(
        "opamp_gain", topology="non-inverting", feedback=10e3, ground_leg=2.2e3, ground_cap=47e-6
    )
    assert KINDS["opamp_gain"].dc_output(stage, environment(rails=SINGLE_24), 7.0) == 7.0


@pytest.mark.parametrize("dc_in", [0.0, 3.0, 20.0])
def test_input_cap_blocks_the_input_dc_and_the_bias_resistor_sets_the_plus_input(
    dc_in: float,
) -> None:
    """A series capacitor blocks DC: behind input_cap the + input sits at the bias point
    through bias_resistor whatever the DC before it, and with ground_cap the output does too;
    without a bias resistor the + input floats (unknown, None)."""
    kind, env = KINDS["opamp_gain"], environment(rails=SINGLE_24)
    coupled = make_stage(
        "opamp_gain",
        topology="non-inverting",
        feedback=10e3,
        ground_leg=2.2e3,
        ground_cap=47e-6,
        input_cap=1e-6,
        bias_resistor=100e3,
    )
    assert kind.dc_output(coupled, env, dc_in) == 12.0
    floating = make_stage(
        "opamp_gain", topology="non-inverting", feedback=10e3, ground_leg=2.2e3, input_cap=1e-6
    )
    assert kind.dc_output(floating, env, dc_in) is None


def test_inverting_dc_output_about_the_bias_point() -> None:
    """Hand formula: inverting gain -R_f/R_i about the bias point (H&H sec. 4.2.1, the
    reference moved to V_b): V_out = V_b + (R_f/R_i)(V_b - V_in) = 12 + 2 (12 - 5) = 26 V;
    with input_cap the DC gain from the input is zero: V_out = V_b."""
    kind, env = KINDS["opamp_gain"], environment(rails=SINGLE_24)
    stage = make_stage("opamp_gain", topology="inverting", feedback=20e3, input=10e3)
    assert kind.dc_output(stage, env, 5.0) == pytest.approx(26.0, rel=1e-12, abs=0)
    capped = make_stage(
        "opamp_gain", topology="inverting", feedback=20e3, input=10e3, input_cap=1e-6
    )
    assert kind.dc_output(capped, env, 5.0) == 12.0


@pytest.mark.parametrize("rotation", [0.0, 0.2, 0.5, 0.7, 1.0])
def test_two_band_tone_dc_gain_at_rotation(rotation: float) -> None:
    """The two-band stage's DC gain with caps open: input leg outer + (1 - x)P (pot upper
    end A to the wiper), feedback leg x P + outer (wiper to lower end B), contract node list;
    G = (R + xP)/(R + (1 - x)P), the inverting -Z_f/Z_i of H&H sec. 4.2.1, with x the log
    taper (10^(2r) - 1)/99 of the contract. Limits (R + P)/R and R/(R + P) at full boost and
    cut (Baxandall, 1952). DC output 12 + G (12 - 10) V. Cross-check: the stage's own
    network at 1 mHz (caps open to 1e-5), rtol 1e-4."""
    r, p = 10e3, 100e3
    stage = make_stage(
        "tone_two_band",
        bass_outer=r,
        bass_pot=p,
        bass_cap=33e-9,
        bass_position=rotation,
        bass_taper="log",
        treble_pot=100e3,
        treble_cap=2.2e-9,
    )
    x = (10.0 ** (2.0 * rotation) - 1.0) / 99.0
    hand = (r + x * p) / (r + (1.0 - x) * p)
    kind = KINDS["tone_two_band"]
    assert isinstance(kind, FeedbackTone)
    assert kind.dc_gain(stage) == pytest.approx(hand, rel=1e-12, abs=0)
    if rotation == 1.0:
        assert hand == pytest.approx((r + p) / r, rel=1e-12, abs=0)
    if rotation == 0.0:
        assert hand == pytest.approx(r / (r + p), rel=1e-12, abs=0)
    env = environment(rails=SINGLE_24)
    assert kind.dc_output(stage, env, 10.0) == pytest.approx(12.0 + hand * 2.0, rel=1e-12, abs=0)
    near_dc = np.abs(unloaded_gain(solve(stage, [1e-3])))[0]
    assert near_dc == pytest.approx(hand, rel=1e-4, abs=0)


def test_treble_stage_dc_gain_is_one() -> None:
    """Treble alone: the pot hangs between two caps, the flat path outer/outer = 1."""
    stage = make_stage("tone_treble", outer=10e3, pot=100e3, cap=2.2e-9, position=0.9)
    kind = KINDS["tone_treble"]
    assert isinstance(kind, FeedbackTone)
    assert kind.dc_gain(stage) == 1.0


def test_volume_wiper_and_top_follow_the_unloaded_divider() -> None:
    """H&H sec. 1.2.3: with series R_s the pot's top sits at V P/(R_s + P) and the wiper at
    V x P/(R_s + P), the lower end at 0 V; behind input_cap both sit at 0 V."""
    kind = KINDS["volume"]
    stage = make_stage("volume", pot=10e3, position=0.75, taper=0.15, series=1e3)
    x = float(taper_fraction(0.75, 0.15))
    assert kind.pot_dc(stage, 12.0) == pytest.approx(12.0 * 10e3 / 11e3, rel=1e-12, abs=0)
    assert kind.dc_output(stage, environment(), 12.0) == pytest.approx(
        12.0 * x * 10e3 / 11e3, rel=1e-12, abs=0
    )
    capped = make_stage("volume", pot=10e3, position=0.75, input_cap=4.7e-6)
    assert kind.pot_dc(capped, 12.0) == 0.0
    assert kind.dc_output(capped, environment(), 12.0) == 0.0


def test_follower_emitter_is_one_vbe_below_its_base() -> None:
    """H&H sec. 2.2.1: V_E = V_B - V_BE for an NPN (no base resistor: no I_B drop), and a
    PNP sits one V_BE above; a DC-coupled base sits at the DC before it (generic small
    transistors, V_BE 0.65 V). Behind input_cap the base is at base_bias (mid-rail) less
    the base current's drop in the bias resistor, I_B = I_E/(beta + 1) with
    I_E = (12 - 0.65)/(R_E + R_b/(beta + 1)) (H&H sec. 2.2.5, from memory)."""
    env = Environment(298.15, {}, GENERIC_TRANSISTORS, SINGLE_24)
    kind = KINDS["follower"]
    npn = make_stage("follower", transistor="small_npn", emitter_resistor=2.2e3)
    assert kind.dc_output(npn, env, 10.0) == pytest.approx(10.0 - 0.65, rel=1e-12, abs=0)
    pnp = make_stage("follower", transistor="small_pnp", emitter_resistor=2.2e3)
    assert kind.dc_output(pnp, env, 10.0) == pytest.approx(10.0 + 0.65, rel=1e-12, abs=0)
    coupled = make_stage(
        "follower",
        transistor="small_npn",
        emitter_resistor=2.2e3,
        input_cap=1e-6,
        bias_resistor=100e3,
    )
    i_e = (12.0 - 0.65) / (2.2e3 + 100e3 / 201.0)
    assert kind.dc_output(coupled, env, 0.0) == pytest.approx(
        12.0 - 0.65 - i_e / 201.0 * 100e3, rel=1e-12, abs=0
    )


# --- whole chains ----------------------------------------------------------------------------


def test_the_starters_original_mistake_is_a_dc_operating_point_error() -> None:
    """The starter as first written: "pre" DC-coupled from the 0 V source, no ground_cap, on
    a 24 V rail: its + input at 0 V, output 0 V (1 + 10k/2k2) = 0, below V- + 1.5 V; the tone
    stage after it is pinned too, and the volume pot carries DC."""
    budget = without(
        STARTER, {"pre": ("ground_cap", "input_cap", "bias_resistor"), "volume": ("input_cap",)}
    )
    found = {f.code: f for f in dc_findings(budget) if f.stage == "pre"}
    error = found["dc-operating-point"]
    assert error.severity == "error"
    assert error.figures["dc_v"] == 0.0
    assert error.figures["low_v"] == pytest.approx(1.5, rel=1e-12, abs=0)  # swing_margin above 0 V
    assert error.figures["bias_v"] == 12.0
    assert "input_cap" in error.message and "ground_cap" in error.message
    assert ("dc-operating-point", "tone") in codes(budget)
    assert ("pot-carries-dc", "volume") in codes(budget)


def test_adding_the_caps_clears_the_starter() -> None:
    """The shipped starter (input_cap + bias_resistor and ground_cap on "pre", input_cap on
    the volume): every op-amp node at the 12 V bias point, the volume wiper at 0 V."""
    budget = budget_of_text(STARTER.read_text(encoding="utf-8"), "starter.toml")
    assert dc_findings(budget) == []
    assert node_dc(budget) == {"pre": 12.0, "tone": 12.0, "volume": 0.0}


def test_only_the_ground_cap_missing_names_the_ground_cap() -> None:
    """input_cap + bias_resistor but no ground_cap: the + input sits at 12 V, the output at
    12 (1 + 4k7/4k7) = 24 V, beyond V+ - 1.5 V; the fix named is the ground_cap."""
    budget = without(STARTER, {"pre": ("ground_cap",)})
    error = next(f for f in dc_findings(budget) if f.stage == "pre")
    assert error.code == "dc-operating-point"
    assert error.figures["dc_v"] == pytest.approx(12.0 * (1.0 + 4.7e3 / 4.7e3), rel=1e-12)
    assert "ground_cap" in error.message and "input_cap" not in error.message


@pytest.mark.parametrize("split", [False, True], ids=["single", "split"])
def test_split_rails_are_silent_and_a_single_supply_inverting_stage_errors(split: bool) -> None:
    """An inverting stage of gain 2 DC-coupled from the 0 V source: on a single 24 V rail
    V_out = 12 + 2 (12 - 0) = 36 V, beyond 22.5 V: an error; on split rails the bias point
    is 0 V and everything sits at 0 V: silent."""
    text = (
        HEAD
        + (SPLIT_SUPPLIES if split else SINGLE_SUPPLY)
        + f"""
[[stage]]
name = "inv"
kind = "opamp_gain"
topology = "inverting"
input = "10k"
feedback = "20k"
{rails_lines(split)}
"""
    )
    budget = budget_of_text(text)
    if split:
        assert dc_findings(budget) == []
        assert node_dc(budget) == {"inv": 0.0}
        return
    (error,) = dc_findings(budget)
    assert (error.severity, error.code, error.stage) == ("error", "dc-operating-point", "inv")
    assert error.figures["dc_v"] == pytest.approx(36.0, rel=1e-12, abs=0)
    assert node_dc(budget) == {"inv": 22.5}  # saturated at V+ less the swing margin
    fixed = budget_of_text(text.replace('feedback = "20k"', 'feedback = "20k"\ninput_cap = "1u"'))
    assert dc_findings(fixed) == []


def line_chain(split: bool, volume_lines: str = "", after: str = "") -> str:
    """An AC-coupled stage at its bias point, a volume pot, and what follows it."""
    return (
        HEAD
        + (SPLIT_SUPPLIES if split else SINGLE_SUPPLY)
        + f"""
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10k"
ground_leg = "10k"
ground_cap = "47u"
input_cap = "1u"
bias_resistor = "100k"
{rails_lines(split)}
[[stage]]
name = "vol"
kind = "volume"
pot = "10k"
taper = "linear"
{volume_lines}
{after}
"""
    )


def test_a_volume_after_an_op_amp_at_mid_rail_carries_dc() -> None:
    """The pot's top at the 12 V bias point of the stage before (more than 0.1 V): the
    pot-carries-dc warning; input_cap on the volume clears it; split rails are silent."""
    budget = budget_of_text(line_chain(False))
    (warning,) = dc_findings(budget)
    assert (warning.severity, warning.code, warning.stage) == ("warning", "pot-carries-dc", "vol")
    assert warning.figures["pot_top_v"] == 12.0
    # restates the project's own threshold (not an outside check)
    assert warning.figures["pot_top_v"] > POT_DC_LIMIT_V
    assert node_dc(budget)["vol"] == pytest.approx(6.0, rel=1e-12, abs=0)  # linear pot at 0.5
    assert dc_findings(budget_of_text(line_chain(False, 'input_cap = "10u"'))) == []
    assert dc_findings(budget_of_text(line_chain(True))) == []


FOLLOWING = """
[[stage]]
name = "post"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10k"
ground_leg = "10k"
ground_cap = "47u"
positive = "rail"
"""


def test_an_output_a_little_off_its_bias_point_is_a_dc_offset_warning() -> None:
    """The wiper at rotation 5/6 of a linear pot from 12 V sits at 10 V; a DC-coupled
    stage of DC gain one after it sits there too: 2 V below its 12 V bias point, 19 % of the
    10.5 V room down to 1.5 V (over 10 %), and the clip peak falls from 10.5 V to 8.5 V:
    20 log10(10.5/8.5) = 1.84 dB."""
    budget = budget_of_text(line_chain(False, f"position = {5 / 6!r}", FOLLOWING))
    found = {f.code: f for f in dc_findings(budget) if f.stage == "post"}
    offset = found["dc-offset"]
    assert offset.severity == "warning"
    assert offset.figures["dc_v"] == pytest.approx(10.0, rel=1e-12, abs=0)
    assert offset.figures["offset_fraction"] == pytest.approx(2.0 / 10.5, rel=1e-12, abs=0)
    # restates the project's own threshold (not an outside check)
    assert offset.figures["offset_fraction"] > DC_OFFSET_FRACTION
    assert offset.figures["headroom_loss_db"] == pytest.approx(
        20.0 * np.log10(10.5 / 8.5), rel=1e-12, abs=0
    )
    # Within the threshold (rotation 0.95: 11.4 V, 0.6 V off, 5.7 %) it stays silent.
    near = budget_of_text(line_chain(False, "position = 0.95", FOLLOWING))
    assert not [f for f in dc_findings(near) if f.stage == "post"]


def test_a_node_behind_an_output_cap_rests_where_the_next_input_returns_it() -> None:
    """A series capacitor blocks DC: a follower DC-coupled to the 12 V output of "pre" (its
    emitter at 12 - 0.65 V, where its own bias puts it) ends in output_cap, which leaves the
    node to the next stage: a volume pot returns it to 0 V (no DC on the track), a DC-coupled
    non-inverting input returns it to the 12 V bias point through its bias resistor."""
    head = line_chain(False).split('[[stage]]\nname = "vol"')[0]
    follower = """
[[stage]]
name = "buf"
kind = "follower"
transistor = "small_npn"
emitter_resistor = "2k2"
output_cap = "10u"
positive = "rail"
"""
    into_volume = budget_of_text(
        head + follower + '[[stage]]\nname = "vol"\nkind = "volume"\npot = "10k"\n'
    )
    (buf,) = [p for p in tuple(n.dc for n in into_volume.nodes) if p.stage == "buf"]
    assert buf.output_v == pytest.approx(12.0 - 0.65, rel=1e-12, abs=0)
    assert buf.node_v == 0.0
    assert dc_findings(into_volume) == []
    into_opamp = budget_of_text(head + follower + FOLLOWING + 'bias_resistor = "100k"\n')
    assert node_dc(into_opamp)["buf"] == 12.0
    assert node_dc(into_opamp)["post"] == 12.0
    assert dc_findings(into_opamp) == []
    floating = budget_of_text(head + follower + FOLLOWING)
    # Without the bias resistor the + input behind the capacitor floats (no-dc-path).
    assert node_dc(floating)["buf"] is None
    assert node_dc(floating)["post"] is None
    assert ("no-dc-path", "post") in {(f.code, f.stage) for f in findings(floating)}


def test_a_dc_coupled_follower_off_its_base_bias_errors() -> None:
    """A follower DC-coupled to the 0 V wiper of a coupled volume pot on a 24 V rail: its
    emitter would sit at 0 - 0.65 V, below the 0 V rail (H&H sec. 2.2.1): an error naming
    input_cap + bias_resistor."""
    follower = """
[[stage]]
name = "buf"
kind = "follower"
transistor = "small_npn"
emitter_resistor = "2k2"
positive = "rail"
"""
    budget = budget_of_text(line_chain(False, 'input_cap = "10u"', follower))
    (error,) = dc_findings(budget)
    assert (error.code, error.stage) == ("dc-operating-point", "buf")
    assert error.figures["dc_v"] == pytest.approx(-0.65, rel=1e-12, abs=0)
    assert "input_cap" in error.message


def test_the_workshop_demo_mistake_and_its_fix() -> None:
    """The workshop radio as first written: "makeup" takes its + input from the volume wiper,
    12 V x (10^1 - 1)/99 = 1.09 V (log taper at mid), not its 12 V bias point: an error; and
    the pot carried the buffer's 12 V. The shipped file couples both."""
    budget = without(WORKSHOP, {"volume": ("input_cap",), "makeup": ("input_cap", "bias_resistor")})
    error = next(f for f in dc_findings(budget) if f.code == "dc-operating-point")
    assert error.stage == "makeup"
    assert error.figures["dc_v"] == pytest.approx(12.0 * 9.0 / 99.0, rel=1e-12, abs=0)
    assert ("pot-carries-dc", "volume") in codes(budget)
    fixed = budget_of_text(WORKSHOP.read_text(encoding="utf-8"), "workshop.toml")
    assert dc_findings(fixed) == []
    assert node_dc(fixed) == {"buffer": 12.0, "volume": 0.0, "makeup": 12.0, "amp": None}


@pytest.mark.parametrize("chain", EXAMPLES, ids=lambda p: p.stem)
def test_every_example_sits_at_its_bias_points(chain: Path) -> None:
    """The demos and the starter are built as a designer would: no DC finding (a floating
    + input, the violin demo's deliberate no-dc-path error, leaves its DC unknown)."""
    assert dc_findings(budget_of_text(chain.read_text(encoding="utf-8"), chain.name)) == []


def test_dc_potentials_in_json_and_table() -> None:
    """JSON: each node's dc_v (V, null where unknown); the node table has a DC column."""
    data = json.loads(runner.invoke(app, ["check", str(STARTER), "--format", "json"]).stdout)
    assert [n["dc_v"] for n in data["nodes"]] == [12.0, 12.0, 0.0]
    tape = ROOT / "chains" / "tape_replay_module.toml"
    data = json.loads(runner.invoke(app, ["check", str(tape), "--format", "json"]).stdout)
    assert data["nodes"][0]["dc_v"] is None  # a block's output DC is unknown
    table = runner.invoke(app, ["check", str(STARTER)]).output.splitlines()
    header = next(line for line in table if "Zout" in line)
    assert header.split()[-1] == "DC"
    assert any(
        line.split()[0] == "pre" and line.rstrip().endswith("12.00 V")
        for line in table
        if line.strip()
    )


def test_the_opamp_dc_window_is_the_rails_less_the_swing_margin() -> None:
    """The window is the rails less the part's swing margin: 24 V single rail, margin 2 V
    gives 2..22 V around 12 V."""
    env = environment(near_ideal_opamp(swing_margin=2.0), rails=SINGLE_24)
    stage = make_stage("opamp_gain", topology="inverting", feedback=20e3, input=10e3)
    window = KINDS["opamp_gain"].dc_window(stage, env)
    assert window is not None
    assert (window.bias_v, window.low_v, window.high_v) == (12.0, 2.0, 22.0)


def test_the_volume_input_cap_is_a_series_rc_high_pass() -> None:
    """The coupling capacitor ahead of the pot: unloaded, V_w/V_in = x P/(P + 1/(j w C)),
    a first-order high-pass with its -3 dB corner at 1/(2 pi P C) (the RC high-pass, H&H
    3rd ed. sec. 1.7.1, from memory); x/sqrt(2) there, x far above it. rtol 1e-5 (the
    pot-end resistances of 1e-6 P)."""
    pot, cap = 10e3, 1e-6
    corner = 1.0 / (2.0 * np.pi * pot * cap)
    stage = make_stage("volume", pot=pot, position=0.5, taper="linear", input_cap=cap)
    gain = np.abs(unloaded_gain(solve(stage, [corner, 1e3 * corner])))
    assert gain[0] == pytest.approx(0.5 / np.sqrt(2.0), rel=1e-5, abs=0)
    assert gain[1] == pytest.approx(0.5, rel=1e-5, abs=0)
