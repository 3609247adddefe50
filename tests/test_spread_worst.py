"""The spread's worst case over the controls, per trial: a chain whose tone stage has its
bass and treble boosts within a fraction of a dB of each other, so that the parts'
tolerances move the worst setting from one boost to the other. Brute force: each trial
written into the file and checked alone (the check's own search over every rotation)."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from test_spread import (
    TONE_AND_VOLUME,
    _chain,
    _json_figure,
    _si,
    checked,
    trial_chain,
    trial_changes,
)

from chainbudget.chainfile import Chain

# bass boost (1 + 100k/20k at its end stop, at 20 Hz) and treble boost (at 20 kHz) within
# 0.2 dB of each other at the nominal parts: the nominal worst is the bass boost.
TWO_BOOSTS = TONE_AND_VOLUME.replace('bass_outer = "47k"', 'bass_outer = "20k"')


def test_worst_headroom_of_each_trial_is_the_checks_worst_over_every_rotation() -> None:
    """For a dozen trials, the batched worst headroom of every node (over the band and the
    spread's candidate settings) equals the check of that trial written into the file
    (its search over every rotation of every swept control), rtol 1e-9; and the trials
    include some whose worst setting is not the nominal check's (the treble boost)."""
    from chainbudget.budget import compute
    from chainbudget.budget.supplies import settle
    from chainbudget.report.json_view import budget_json
    from chainbudget.spread.evaluate import Evaluator
    from chainbudget.spread.parts import chain_parts

    chain = _chain(TWO_BOOSTS)
    parts, _ = chain_parts(chain)
    nominal = compute(chain)
    assert nominal.node("tone").worst.controls[("tone", "bass_position")] == 1.0
    evaluate = Evaluator(chain, tuple(parts), nominal, settle(chain, "low").voltages)
    positions = np.random.default_rng(21).random((12, len(parts)))
    batched = evaluate(positions)
    paths = [p for p in batched if p.endswith(".worst_headroom_db")]
    assert "nodes.tone.worst_headroom_db" in paths
    moved = 0
    for t in range(len(positions)):
        changes = {
            f"{part.owner}.{part.key}": f"{float(value[0])!r} {_si(part)}"
            for part, value in zip(parts, evaluate.values(positions[t : t + 1]), strict=True)
        }
        budget = compute(chain.with_values(changes))
        worst = budget.node("tone").worst.controls
        moved += worst != nominal.node("tone").worst.controls
        data = json.loads(json.dumps(budget_json(budget, list(budget.findings))))
        for path in paths:
            held = _json_figure(data, path)
            assert batched[path][t] == pytest.approx(held, rel=1e-9, abs=1e-12), (path, t)
    assert 0 < moved < len(positions)


@pytest.mark.parametrize("chain_file", ["kitchen_radio_mains.toml", "busking_amp.toml", None])
def test_held_settings_solved_at_their_points_only_change_no_figure(chain_file: str | None) -> None:
    """The held settings are solved only at the frequency points within `PRUNE_DB` of a
    node's worst (or of an op-amp's largest current): every figure of 40 trials equals
    the one with every held setting solved on the whole axis, to the bit where the same
    matrices are solved (rtol 1e-12); and the pruning does leave points out. An
    independent brute force of the same claim: the whole-axis solve is the plain one."""
    from dataclasses import replace
    from pathlib import Path

    from chainbudget.budget import compute
    from chainbudget.budget.analysis import frequency_axis
    from chainbudget.budget.supplies import settle
    from chainbudget.chainfile import load_chain
    from chainbudget.spread.evaluate import Evaluator
    from chainbudget.spread.parts import chain_parts

    if chain_file is None:
        chain = _chain(TWO_BOOSTS)
    else:
        chain = load_chain(Path(__file__).resolve().parents[1] / "chains" / chain_file)
    parts, _ = chain_parts(chain)
    voltages = settle(chain, "low").voltages
    pruned = Evaluator(chain, tuple(parts), compute(chain), voltages)
    whole = Evaluator(chain, tuple(parts), pruned.nominal, voltages)
    settings = pruned.settings
    size = frequency_axis(chain).size
    assert settings.row_points
    assert sum(len(p) for p in settings.row_points) < len(settings.rows) * size
    whole.__dict__["settings"] = replace(settings, row_points=())  # the cached property
    positions = np.random.default_rng(5).random((40, len(parts)))
    got, expected = pruned(positions, flags=True), whole(positions, flags=True)
    assert got.keys() == expected.keys()
    for path, values in expected.items():
        np.testing.assert_allclose(got[path], values, rtol=1e-12, atol=0, err_msg=path)


def test_noise_corners_flipping_only_the_parts_that_move_them_equal_flipping_every_part() -> None:
    """The corner search of a noise figure flips only the parts that move it one at a time
    (`run._moving`): on the kitchen radio (eighteen parts over four stages, a generator's
    noise reaching each node through the stages before it) every noise figure's corners
    equal those of the plain search that flips every part at every vertex (the reference,
    the search as it was), and the pruned search leaves some parts out."""
    from pathlib import Path

    from chainbudget.budget import compute
    from chainbudget.budget.supplies import settle
    from chainbudget.chainfile import load_chain
    from chainbudget.spread.evaluate import Evaluator
    from chainbudget.spread.parts import chain_parts
    from chainbudget.spread.run import _corners, _moving, _one_at_a_time

    chain = load_chain(Path(__file__).resolve().parents[1] / "chains" / "kitchen_radio_mains.toml")
    parts, _ = chain_parts(chain)
    n = len(parts)
    evaluate = Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)
    noise = frozenset({"noise"})
    centre = evaluate(np.full((1, n), 0.5), steps=noise)
    side = evaluate(_one_at_a_time(n), steps=noise)
    paths = sorted(p for p in centre if evaluate.steps_of.get(p) == "noise")
    deltas = {p: side[p][1::2] - side[p][0::2] for p in paths}
    moving = {p: _moving(side[p], float(centre[p][0]), "noise") for p in paths}
    every = {p: np.ones(n, dtype=bool) for p in paths}
    assert sum(int(np.sum(~m)) for m in moving.values()) > 0
    pruned = _corners(evaluate, paths, deltas, moving, n)
    plain = _corners(evaluate, paths, deltas, every, n)
    for p in paths:
        assert pruned[p] == pytest.approx(plain[p], rel=1e-12, abs=0), p


def test_largest_opamp_current_of_each_trial_is_the_checks_over_every_rotation() -> None:
    """On the violin pre-amp (its treble stage's largest output current sits inside the
    treble control's travel, where the current at max_level meets the stage's clip), for
    four trials each written into the file and checked alone (the check's search over every
    rotation), every op-amp's `drive_worst_current_a` equals the batched figure, rtol
    1e-9; and one trial's largest sits at a rotation next to the nominal check's, which
    the spread finds among its neighbours (`settings.current_candidates`)."""
    from pathlib import Path

    from chainbudget.budget import compute
    from chainbudget.budget.analysis import analyse
    from chainbudget.budget.supplies import settle
    from chainbudget.chainfile import load_chain
    from chainbudget.spread.evaluate import Evaluator
    from chainbudget.spread.parts import chain_parts
    from chainbudget.spread.settings import opamp_current_settings

    def largest_at(chain):  # noqa: ANN001, ANN202
        analysis = analyse(chain, "low", settle(chain, "low").voltages)
        return {key: at.rotations for key, at in opamp_current_settings(analysis).items()}

    chain = load_chain(Path(__file__).resolve().parents[1] / "chains" / "violin_piezo_preamp.toml")
    parts, _ = chain_parts(chain)
    assert not any(part.is_beta for part in parts)  # one value per part: the file holds it
    evaluate = Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)
    positions = np.random.default_rng(5).random((4, len(parts)))
    batched = evaluate(positions)
    paths = [p for p in batched if p.endswith(".drive_worst_current_a")]
    assert "nodes.treble.drive_worst_current_a" in paths
    nominal = largest_at(chain)
    moved = 0
    for t in range(len(positions)):
        trial = chain.with_values(
            trial_changes(chain, parts, evaluate.values(positions[t : t + 1]))
        )
        moved += largest_at(trial) != nominal
        _, data = checked(trial)
        for path in paths:
            held = _json_figure(data, path)
            assert batched[path][t] == pytest.approx(held, rel=1e-9, abs=0), (path, t)
    assert moved > 0


def test_largest_opamp_current_found_across_a_flat_bass_ridge() -> None:
    """The kitchen radio with a lower output block gain, a higher pre-amp rail and 20 %
    capacitors: the tone stage's largest current, at its treble boost, hardly depends on
    the bass control (a flat ridge along its travel), and the nominal check finds it at
    bass 0.9 while the tolerances move it to the far end stop, bass 0, in two trials of
    three. Each trial checked alone gives the batched figure, rtol 1e-6 (the ridge's
    near-ties leave 2e-7)."""
    import tomllib
    from pathlib import Path

    from chainbudget.budget import compute
    from chainbudget.budget.supplies import settle
    from chainbudget.chainfile import parse_chain
    from chainbudget.spread.evaluate import Evaluator
    from chainbudget.spread.parts import chain_parts

    text = (Path(__file__).resolve().parents[1] / "chains" / "kitchen_radio_mains.toml").read_text()
    for old, new in (
        ('reference = "1 kHz"', 'reference = "0.5 kHz"'),
        ('secondary = "15 V"', 'secondary = "7.5 V"'),
        ('lower = "240R"', 'lower = "120R"'),
        ('ground_cap = "47u"', 'ground_cap = "23.5u"'),
        ('bias_resistor = "100k"', 'bias_resistor = "30k"'),
        ('gain = "26 dB"', 'gain = "7.8 dB"'),
    ):
        assert old in text, old
        text = text.replace(old, new)
    text = text.replace("\n[", '\n[tolerances]\ncapacitors = "20 %"\n\n[', 1)
    chain = parse_chain(tomllib.loads(text), "ridge.toml")

    assert _tone_largest_at(chain) == (9, 1, 10)
    parts, _ = chain_parts(chain)
    evaluate = Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)
    positions = np.random.default_rng(5).random((3, len(parts)))
    batched = evaluate(positions)["nodes.tone.drive_worst_current_a"]
    far = 0
    for t in range(len(positions)):
        trial = trial_chain(chain, parts, evaluate.values(positions[t : t + 1]))
        far += _tone_largest_at(trial)[0] == 0
        _, data = checked(trial)
        held = _json_figure(data, "nodes.tone.drive_worst_current_a")
        assert batched[t] == pytest.approx(held, rel=1e-6, abs=0), t
    assert far == 2


def _tone_largest_at(chain: Chain, stage: int = 1, name: str = "tone") -> tuple[int, ...]:
    """The setting (rotation indices) of the largest output current of the op-amp of
    stage ``stage`` (named ``name``: the tone stage), as the check finds it."""
    from chainbudget.budget.analysis import analyse
    from chainbudget.budget.supplies import settle
    from chainbudget.spread.settings import opamp_current_settings

    analysis = analyse(chain, "low", settle(chain, "low").voltages)
    return opamp_current_settings(analysis)[(stage, f"{name}.opamp")].rotations


def _tone_current_of_each_trial(
    chain: Chain,
    trials: int,
    rows: list[int] | None = None,
    stage: int = 1,
    name: str = "tone",
    rtol: float = 1e-9,
) -> list[tuple[int, ...]]:
    """The tone stage's (stage ``stage``'s, named ``name``) ``drive_worst_current_a`` of
    the first ``trials`` trials drawn with seed 5 (those of them in ``rows``), each trial
    written into the file and checked alone (the check's search over every rotation): the
    batched figure, ``rtol``. Returns each trial's setting of its largest
    (`_tone_largest_at`)."""
    from chainbudget.budget import compute
    from chainbudget.budget.supplies import settle
    from chainbudget.spread.evaluate import Evaluator
    from chainbudget.spread.parts import chain_parts

    parts, _ = chain_parts(chain)
    evaluate = Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)
    positions = np.random.default_rng(5).random((trials, len(parts)))
    positions = positions if rows is None else positions[rows]
    batched = evaluate(positions)[f"nodes.{name}.drive_worst_current_a"]
    found = []
    for t in range(len(positions)):
        trial = trial_chain(chain, parts, evaluate.values(positions[t : t + 1]))
        found.append(_tone_largest_at(trial, stage, name))
        _, data = checked(trial)
        held = _json_figure(data, f"nodes.{name}.drive_worst_current_a")
        assert batched[t] == pytest.approx(held, rel=rtol, abs=0), t
    return found


def _example_text(name: str) -> str:
    from pathlib import Path

    return (Path(__file__).resolve().parents[1] / "chains" / name).read_text()


def _replaced(text: str, *changes: tuple[str, str]) -> str:
    """``text`` with each (old, new) change made once, each old text asserted present (a
    variant of an example stays what its test says it is)."""
    for old, new in changes:
        assert old in text, old
        text = text.replace(old, new, 1)
    return text


def _parsed(text: str, name: str) -> Chain:
    import tomllib

    from chainbudget.chainfile import parse_chain

    return parse_chain(tomllib.loads(text), name)


def test_largest_opamp_current_found_when_it_moves_from_one_boost_to_the_other() -> None:
    """The desk pre-amp with 40 % pots: the nominal check finds its tone stage's largest
    output current at a treble boost (bass 0.1, treble 1); in one trial of the sixty
    drawn with seed 5 (the 56th) the tolerances move it to the bass boost with the treble
    as set (bass 1, treble 0.5), two controls away. Each of three trials checked alone
    (the check's search over every rotation) gives the batched figure, rtol 1e-9: the
    spread also holds the end stops and settings as set of the stage's own controls in
    combination (`settings.current_candidates`)."""
    text = _example_text("desk_speaker_preamp.toml")
    assert "[tolerances]" not in text
    chain = _parsed(text + '\n[tolerances]\npots = "40 %"\n', "desk40.toml")
    assert _tone_largest_at(chain) == (1, 10, 10)
    assert _tone_current_of_each_trial(chain, 60, [0, 1, 55])[2] == (10, 5, 10)


def test_largest_opamp_current_found_at_a_lower_summit_of_the_nominal_check() -> None:
    """The desk pre-amp with its driver's input resistor halved and 10 % resistors: the
    nominal check finds its tone stage's largest output current at full bass and treble
    (bass 1, treble 1), and lists a lower summit of the same ridge among its candidates
    (bass 0.1, treble 1, a few per cent lower); in the first trial drawn with seed 5 the
    tolerances lift that summit above the largest. Each of two trials checked alone gives
    the batched figure, rtol 1e-9: the spread also holds the nominal check's candidate
    settings (`settings.current_candidates`)."""
    text = _example_text("desk_speaker_preamp.toml")
    assert text.count('input = "10k"') == 1 and "[tolerances]" not in text
    text = text.replace('input = "10k"', 'input = "5k"') + '\n[tolerances]\nresistors = "10 %"\n'
    chain = _parsed(text, "desk_half_input.toml")
    assert _tone_largest_at(chain) == (10, 10, 10)
    assert _tone_current_of_each_trial(chain, 2)[0] == (1, 10, 10)


def test_largest_opamp_current_found_beside_a_lower_summit() -> None:
    """A busking amp on a 3.2 ohm speaker with smaller tone parts, a bias tap on its
    positive battery, a lower floor on its negative one and 10 % resistors: the nominal
    check finds its tone stage's largest current at a bass boost (bass 1, treble 0.9) and
    lists a lower summit at bass 0.1, treble 1; in the second trial drawn with seed 5 the
    largest lies beside that summit (bass 0.1, treble 0.9), one rotation from it. Each of
    two trials checked alone gives the batched figure, rtol 1e-9: the spread holds each
    of the nominal check's candidates with its neighbours in the stage's own controls
    (`settings.current_candidates`; without them that trial came out 0.24 % low)."""
    text = _example_text("busking_amp.toml")
    text = _replaced(
        text,
        ('impedance = "4 ohm"', 'impedance = "3.2 ohm"'),
        ('sensitivity = "91 dB"', 'sensitivity = "72.8 dB"'),
        ('noise_voltage = "5 nV/rtHz"', 'noise_voltage = "10 nV/rtHz"'),
        ('swing_margin = "0.6 V"', 'swing_margin = "0.3 V"'),
        ('max_supply = "36 V"', 'max_supply = "72 V"'),
        ('resistance = "0.05 ohm"', 'resistance = "0.04 ohm"'),
        ('bass_cap = "47n"', 'bass_cap = "23.5n"'),
        ('treble_pot = "25k"', 'treble_pot = "12.5k"'),
        ('theta_jc = "2.5 K/W"', 'theta_jc = "3.125 K/W"'),
        ('theta_cs = "0.5 K/W"', 'theta_cs = "0.25 K/W"'),
    )
    minus = text.index('name = "bat_minus"')
    text = text[:minus] + text[minus:].replace(
        'min_voltage = "10.5 V"', 'min_voltage = "5.25 V"', 1
    )
    text += (
        '\n[[supply]]\nname = "tap"\nkind = "divider"\nfrom = "bat_plus"\n'
        'upper = "4k7"\nlower = "3k3"\n\n[tolerances]\nresistors = "10 %"\n'
    )
    chain = _parsed(text, "busking_small_speaker.toml")
    assert _tone_largest_at(chain) == (10, 9, 10)
    assert _tone_current_of_each_trial(chain, 2)[1] == (1, 9, 10)


def test_largest_opamp_current_found_beside_a_stop_of_the_tone_stage() -> None:
    """The test chain of every kind with an 80 dB op-amp of 1.875 V swing margin and its
    gain stage's ground leg 4k2 (default tolerances). The nominal check finds the tone
    stage's (stage 4's) largest output current at rotations (0, 10, 1, 11) of the bass
    stage before it, the tone stage's bass and treble and the volume. In the second
    trial drawn with seed 5 it lies at (1, 0, 0, 11): the tone stage's two controls at
    their lower end stops and, at once, the earlier bass stage one rotation from the
    nominal's. Each of two trials checked alone (the check's search over every
    rotation) gives the batched figure, rtol 1e-9: the spread holds each combination of
    the own section's end stops and settings as set with the earlier sections' controls
    moved one rotation either side (`settings.current_candidates`; without that, the
    trial came out 0.85 % low)."""
    from pathlib import Path

    text = (Path(__file__).resolve().parent / "data" / "every_kind.toml").read_text()
    text = _replaced(
        text,
        ('open_loop_gain = "100 dB"', 'open_loop_gain = "80 dB"'),
        ('swing_margin = "1.5 V"', 'swing_margin = "1.875 V"'),
        ('ground_leg = "2k2"', 'ground_leg = "4k2"'),
    )
    chain = _parsed(text, "every_kind_low_gain.toml")
    assert _tone_largest_at(chain, 4) == (0, 10, 1, 11)
    assert _tone_current_of_each_trial(chain, 2, stage=4)[1] == (1, 0, 0, 11)


def test_worst_headroom_found_in_a_hollow_beside_an_end_stop() -> None:
    """A busking amp with a smaller bass pot and capacitor (20k, 23.5n; default
    tolerances). At the nominal parts the tone node's worst is its bass boost at 20 Hz,
    and along the treble boost (treble 1, 20 kHz) the clip level is least with the bass
    at 0.1, not at its end stop 0: the bass control's cut reaches up to meet the boost.
    In the first two trials drawn with seed 5 the worst moves to that treble boost with
    the bass at 0.1. Each trial checked alone (the check's search over every rotation)
    gives the batched worst headroom of every node, rtol 1e-9: the spread holds the
    hollow a coordinate descent at the nominal parts reaches from each candidate
    (`settings.downhill`; without it both trials came out about 0.035 dB high)."""
    from chainbudget.budget import compute
    from chainbudget.budget.supplies import settle
    from chainbudget.spread.evaluate import Evaluator
    from chainbudget.spread.parts import chain_parts

    text = _example_text("busking_amp.toml")
    text = _replaced(
        text,
        ('bass_pot = "25k"', 'bass_pot = "20k"'),
        ('bass_cap = "47n"', 'bass_cap = "23.5n"'),
    )
    chain = _parsed(text, "busking_small_bass.toml")
    nominal = compute(chain)
    assert nominal.node("tone").worst.controls[("tone", "bass_position")] == 1.0
    parts, _ = chain_parts(chain)
    evaluate = Evaluator(chain, tuple(parts), nominal, settle(chain, "low").voltages)
    positions = np.random.default_rng(5).random((2, len(parts)))
    batched = evaluate(positions)
    paths = [p for p in batched if p.endswith(".worst_headroom_db")]
    for t in range(len(positions)):
        trial = trial_chain(chain, parts, evaluate.values(positions[t : t + 1]))
        budget, data = checked(trial)
        assert budget.node("tone").worst.controls == {
            ("tone", "bass_position"): 0.1,
            ("tone", "treble_position"): 1.0,
        }
        for path in paths:
            held = _json_figure(data, path)
            assert batched[path][t] == pytest.approx(held, rel=1e-9, abs=1e-12), (path, t)


def test_largest_opamp_current_found_at_a_summit_beside_an_end_stop() -> None:
    """A violin pre-amp with a 50 dB, 2 MHz op-amp, a 12.5k load, its battery's floor at
    3.75 V and its gain stage's and treble stage's parts moved: along the treble stage's
    bass-cut ridge (treble 0) its op-amp's largest current hardly moves with the bass
    stage before it, and at the nominal parts its end stop 0 is a lower neighbour of a
    summit one rotation in (bass 0.1). The nominal check finds the largest at bass 1; in
    the second trial drawn with seed 5 it lies at that summit. Each of two trials checked
    alone gives the batched figure, rtol 1e-9: the spread holds the summit a climb at the
    nominal parts reaches from each candidate (`settings.downhill` on the negated
    current; without it that trial came out 0.45 % low)."""
    text = _example_text("violin_piezo_preamp.toml")
    lines = text.splitlines()
    for number, old, new in (
        (18, 'impedance = "10 kohm"', 'impedance = "12.5 kohm"'),
        (21, 'gbw = "1 MHz"', 'gbw = "2 MHz"'),
        (26, 'open_loop_gain = "100 dB"', 'open_loop_gain = "50 dB"'),
        (38, 'min_voltage = "7.5 V"', 'min_voltage = "3.75 V"'),
        (45, 'ground_leg = "47k"', 'ground_leg = "58.75k"'),
        (62, 'outer = "10k"', 'outer = "12.5k"'),  # the treble stage's (the bass one's too)
        (64, 'cap = "4n7"', 'cap = "8n7"'),
    ):
        assert lines[number - 1].startswith(old), (number, old)
        lines[number - 1] = new
    chain = _parsed("\n".join(lines) + "\n", "violin_low_gain.toml")
    assert _tone_largest_at(chain, 2, "treble") == (10, 0, 11)
    assert _tone_current_of_each_trial(chain, 2, stage=2, name="treble")[1] == (1, 0, 11)


def test_largest_opamp_current_found_where_a_later_control_moves_its_load() -> None:
    """The kitchen radio with its pre-amp's ground leg 4k2, the tone stage's bass outer
    resistor 44k and treble capacitor 1n2, and 10 % resistors. The pre-amp's op-amp has
    no control before it: its current is its output over the load the tone stage
    presents, which the tone controls move. The nominal check finds its largest at
    rotations (1, 10, 10) of bass, treble and volume; in the second trial drawn with
    seed 5 the treble's neighbour (1, 9, 10) loads it harder. Each of two trials checked
    alone gives the batched figure, rtol 1e-9: the spread holds the nominal largest's
    neighbours in every control, the later ones too (`settings.current_candidates`;
    without them that trial came out 8.7e-4 low)."""
    text = _example_text("kitchen_radio_mains.toml")
    for old, new in (
        ('ground_leg = "2k2"', 'ground_leg = "4k2"'),
        ('treble_cap = "2n2"', 'treble_cap = "1n2"'),
        ('bass_outer = "22k"', 'bass_outer = "44k"'),
    ):
        assert text.count(old) == 1, old
        text = text.replace(old, new)
    assert "[tolerances]" not in text
    text = text.replace("\n[", '\n[tolerances]\nresistors = "10 %"\n\n[', 1)
    chain = _parsed(text, "kitchen_light_tone_load.toml")
    assert _tone_largest_at(chain, 0, "pre") == (1, 10, 10)
    assert _tone_current_of_each_trial(chain, 2, stage=0, name="pre")[1] == (1, 9, 10)


def test_largest_opamp_current_found_two_rotations_inside_the_travel() -> None:
    """A kitchen radio on a 12 V winding of 9.6 % regulation, its pre-amp's input
    capacitor 2u, its treble pot 80k with a 0.8k wiper, a divider on its raw rail and 20 %
    resistors: the nominal check finds its tone stage's largest current with the treble
    at 0.9, inside its travel (the current there is its gain times the lower of max_level
    and the stage's clip, which a boost moves opposite ways), and in the second trial
    drawn with seed 5 it lies at treble 0.7, two rotations in. Each of two trials checked
    alone gives the batched figure, rtol 1e-7 (the raw rail a trial's stages run on is
    settled through the rectifier's load expansion: 4e-9 here): the spread moves the
    stage's own controls up to `settings.TOP_REACH` rotations from the nominal largest
    (with one, that trial came out 1.5 % low)."""
    lines = _example_text("kitchen_radio_mains.toml").splitlines()
    for number, old, new in (
        (35, 'secondary = "15 V"', 'secondary = "12 V"'),
        (40, 'regulation = "12 %"', 'regulation = "9.6 %"'),
        (67, 'input_cap = "1u"', 'input_cap = "2u"'),  # the pre-amp's
        (79, 'treble_pot = "100k"', 'treble_pot = "80k"'),
        (81, 'treble_wiper = "1k"', 'treble_wiper = "0.8k"'),
    ):
        assert lines[number - 1].startswith(old), (number, old)
        lines[number - 1] = new
    text = "\n".join(lines) + "\n"
    assert "[tolerances]" not in text
    text += (
        '\n[[supply]]\nname = "tap_raw"\nkind = "divider"\nfrom = "raw"\nupper = "5k7"\n'
        'lower = "3k3"\n\n[tolerances]\nresistors = "20 %"\n'
    )
    chain = _parsed(text, "kitchen_treble_inside.toml")
    assert _tone_largest_at(chain) == (0, 9, 10)
    assert _tone_current_of_each_trial(chain, 2, rtol=1e-7)[1] == (0, 7, 10)


def _worst_setting(chain: Chain, stage: str) -> tuple[float, ...]:
    """Where the check puts a node's worst headroom: each swept control's position, in the
    chain's order (controls after the node's section included)."""
    from chainbudget.budget.analysis import analyse
    from chainbudget.budget.supplies import settle

    analysis = analyse(chain, "low", settle(chain, "low").voltages)
    k = [s.name for s in chain.stages].index(stage)
    found = analysis.worst.nodes[k]  # type: ignore[union-attr]
    assert found is not None
    rotations = analysis.setting_rotations(found.setting)
    swept = analysis.swept_controls
    return tuple(round(float(sc.rotations[rotations[sc.axis]]), 6) for sc in swept)


def _treble_worst_of_each_trial(chain: Chain) -> list[tuple[tuple[float, ...], float, float]]:
    """The first two trials drawn with seed 5: each one's worst setting of the treble node
    (`_worst_setting`), its batched ``worst_headroom_db`` and the check's of the trial
    written into the file and checked alone (the check's search over every rotation)."""
    from chainbudget.budget import compute
    from chainbudget.budget.supplies import settle
    from chainbudget.spread.evaluate import Evaluator
    from chainbudget.spread.parts import chain_parts

    parts, _ = chain_parts(chain)
    evaluate = Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)
    positions = np.random.default_rng(5).random((2, len(parts)))
    batched = evaluate(positions)["nodes.treble.worst_headroom_db"]
    found = []
    for t in range(len(positions)):
        trial = trial_chain(chain, parts, evaluate.values(positions[t : t + 1]))
        _, data = checked(trial)
        held = _json_figure(data, "nodes.treble.worst_headroom_db")
        found.append((_worst_setting(trial, "treble"), float(batched[t]), float(held)))
    return found


def test_worst_headroom_where_a_later_volume_pot_loads_the_node() -> None:
    """A violin pre-amp with a 12.5k load, a 1.25 MHz op-amp and a 50k bass pot (default
    tolerances). The volume pot after the treble stage loads it: at the nominal parts the
    treble node's worst is its treble boost with the volume at 0.9, where the check's
    tie-break stops (within 0.01 dB of the least, nearer the volume as set, 0.7); in the
    first trial drawn with seed 5 the end stop 1 is lower by more than the tie, and the
    check moves there. Checked alone, that trial gives the batched worst headroom, rtol
    1e-9: the spread holds each setting near the node's worst with each later control
    moved (`settings.loaded_by_later`; without it the trial came out 0.01 dB high). The
    second trial's worst is the bass boost, where the volume moves the least clip level by
    less than `LOAD_MOVES_DB` and is not held: within that."""
    from chainbudget.spread.settings import LOAD_MOVES_DB

    text = _example_text("violin_piezo_preamp.toml")
    text = _replaced(
        text,
        ('impedance = "10 kohm"', 'impedance = "12.5 kohm"'),
        ('gbw = "1 MHz"', 'gbw = "1.25 MHz"'),
        ('pot = "100k"\ncap = "22n"', 'pot = "50k"\ncap = "22n"'),
    )
    chain = _parsed(text, "violin_loaded_treble.toml")
    # bass, treble, volume
    assert _worst_setting(chain, "treble") == (0.1, 1.0, 0.9)
    (first, got, want), (second, got_2, want_2) = _treble_worst_of_each_trial(chain)
    assert first == (0.1, 1.0, 1.0)
    assert got == pytest.approx(want, rel=1e-9, abs=0)
    assert second[0] == 1.0  # the bass boost
    assert abs(got_2 - want_2) < LOAD_MOVES_DB


def test_worst_headroom_where_the_tie_break_stops_on_the_way_to_a_hollow() -> None:
    """A violin pre-amp with an 8n7 treble capacitor (default tolerances). Along its
    treble boost the clip level falls as the bass control turns down to a hollow, and the
    check's tie-break stops on the way, within 0.01 dB of the least and nearer the bass as
    set: at the nominal parts at bass 0.4; in the first trial drawn with seed 5 at 0.3,
    neither an end stop, the setting as set nor the hollow. Checked alone, both trials
    give the batched worst headroom, rtol 1e-9: the spread holds the settings a descent
    passes on its way to the hollow (`settings.downhill`; without them the first trial
    came out 0.009 dB low, at the hollow)."""
    text = _example_text("violin_piezo_preamp.toml")
    assert 'cap = "4n7"' in text
    chain = _parsed(text.replace('cap = "4n7"', 'cap = "8n7"', 1), "violin_big_treble_cap.toml")
    assert _worst_setting(chain, "treble") == (0.4, 1.0, 1.0)
    found = _treble_worst_of_each_trial(chain)
    assert found[0][0] == (0.3, 1.0, 1.0)
    for t, (_, got, want) in enumerate(found):
        assert got == pytest.approx(want, rel=1e-9, abs=0), t


def test_a_node_that_clips_at_no_level_leaves_no_traceback(tmp_path: Path) -> None:
    """The shed amplifier with a second divider (4k7 over 3k3) hung on its half-rail
    divider and 10 % resistors: the half rail falls so far that the pre-amp and the driver
    clip at no level at all (a clip level of zero at every setting and point). Weighing
    how far a later control's load moves such a node (`settings._moves`) divided by that
    zero, and `spread` gave up on the chain (exit 2); it now runs through (the real
    command, in a subprocess)."""
    import subprocess
    import sys

    text = _example_text("shed_amp_mains.toml")
    text += (
        '\n[[supply]]\nname = "tap_half"\nkind = "divider"\nfrom = "half"\n'
        'upper = "4k7"\nlower = "3k3"\n\n[tolerances]\nresistors = "10 %"\n'
    )
    chain_file = tmp_path / "shed_half_tapped.toml"
    chain_file.write_text(text)
    ran = subprocess.run(
        [sys.executable, "-m", "chainbudget", "spread", str(chain_file), "--trials", "20"]
        + ["--seed", "1", "--format", "json"],
        capture_output=True,
        text=True,
        timeout=600,
    )
    assert "Traceback" not in ran.stderr, ran.stderr[-2000:]
    assert ran.returncode in (0, 1), ran.stderr[-2000:]
    assert '"yield"' in ran.stdout


def test_largest_opamp_current_found_at_the_far_end_of_a_flat_ridge() -> None:
    """A kitchen radio on a 7.5 V secondary (mains within 20 %, a 1 V dropout regulator, a
    0.125 A power block; 20 % pots, 1 % resistors, 5 % capacitors). The tone stage's op-amp
    current is limited by its clip along a ridge that the bass control hardly moves: the
    nominal check's largest is at bass 0.9, treble 0.2; in the second trial drawn with
    seed 5 the ridge has moved to treble 0.1 and slopes the other way, its largest at the
    bass's far end stop (bass 0, treble 0.1). Each of the two trials checked alone gives the
    batched figure, rtol 1e-7 (the regulator is in dropout, so the op-amps' clip follows
    the rectified rail, whose interpolated spread meets these trials' checks within 2e-7):
    the spread holds each own-section control's end stop with the other controls a
    rotation either side (`settings.current_candidates`; without it that trial came out
    0.16 % low, at bass 0.9, treble 0.1)."""
    text = _example_text("kitchen_radio_mains.toml")
    assert "[tolerances]" not in text
    text = text.replace(
        "[chain]\n",
        '[tolerances]\nresistors = "1 %"\npots = "20 %"\ncapacitors = "5 %"\n\n[chain]\n',
        1,
    )
    text = _replaced(
        text,
        ('secondary = "15 V"', 'secondary = "7.5 V"'),
        ('mains_tolerance = "10 %"', 'mains_tolerance = "20 %"'),
        ('dropout = "2 V"', 'dropout = "1 V"'),
        ('supply_current = "0.25 A"', 'supply_current = "0.125 A"'),
    )
    chain = _parsed(text, "kitchen_low_secondary.toml")
    assert _tone_largest_at(chain) == (9, 2, 10)
    assert _tone_current_of_each_trial(chain, 2, rtol=1e-7) == [(9, 2, 10), (0, 1, 10)]


def test_largest_opamp_current_found_with_an_earlier_stage_near_its_end_stop() -> None:
    """A violin pre-amp whose buffer gains 5 (94k over 23.5k, 5u), on a 0.8 MHz op-amp and
    with a 0.96 Vpk max level (default tolerances). The treble stage's op-amp current is
    largest at the nominal parts with the bass stage as set (0.5), the treble at 0.1 and
    the volume up; in the first trial drawn with seed 5 the bass stage's control, a
    section before it, has moved it to 0.1, one rotation inside that control's end stop,
    a move of neither one rotation from the largest nor to an end stop. Each of the two
    trials checked alone gives the batched figure, rtol 1e-9: the spread holds the own
    section's end stop combinations with each earlier section's control also at its end
    stops, and a rotation either side of those (`settings.current_candidates`; without
    them that trial came out 0.04 % low)."""
    text = _example_text("violin_piezo_preamp.toml")
    text = _replaced(
        text,
        ('max_level = "1.2 Vpk"', 'max_level = "0.96 Vpk"'),
        ('gbw = "1 MHz"', 'gbw = "0.8 MHz"'),
        ('feedback = "47k"', 'feedback = "94k"'),
        ('ground_leg = "47k"', 'ground_leg = "23.5k"'),
        ('ground_cap = "10u"', 'ground_cap = "5u"'),
    )
    chain = _parsed(text, "violin_gain_five.toml")
    assert _tone_largest_at(chain, 2, "treble") == (5, 1, 11)
    found = _tone_current_of_each_trial(chain, 2, stage=2, name="treble")
    assert found == [(1, 1, 11), (4, 1, 11)]
