"""Tests for chainbudget.cascade: cascaded two-ports against one whole-chain network.

Reference: the cascade joins per-stage chain (ABCD) parameters with exact loading both ways
(Pozar, Microwave Engineering, 4th ed., sec. 4.4, quoted from memory); the check is that it
agrees with a direct modified-nodal solve of the whole chain as one network (Ho, Ruehli &
Brennan, IEEE Trans. CAS-22 (1975) 504), which needs no two-port algebra at all.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from numpy.typing import ArrayLike
from stagekit import environment, make_stage, near_ideal_opamp, positions_as_set, unloaded_gain

from chainbudget.budget.steps import _ArrayStage
from chainbudget.cascade import cascade, solve_stage, solving_once, whole_chain_network
from chainbudget.fields import FrozenMapping
from chainbudget.network import SOURCE_FLOOR_OHM, Complex, TwoPort, branch_ref, node_ref
from chainbudget.stages import KINDS as STAGE_KINDS
from chainbudget.stages.base import Stage

ROOT = Path(__file__).resolve().parents[1]
FREQUENCY = np.logspace(1, 5, 17)  # 10 Hz .. 100 kHz
SOURCE_OHM, LOAD_OHM = 1e3, 600.0

# A realistic op-amp, so every stage has a finite output impedance and loads matter.
PART = near_ideal_opamp("typical", open_loop_gain=1e5, gbw=10e6, output_resistance=50.0)
ENV = environment(PART)

STAGES = (
    make_stage(
        "opamp_gain",
        "pre",
        1,
        topology="non-inverting",
        feedback=22e3,
        ground_leg=2.2e3,
        input_cap=1e-6,
        bias_resistor=100e3,
        opamp="typical",
    ),
    make_stage(
        "opamp_gain",
        "inv",
        2,
        topology="inverting",
        feedback=10e3,
        input=4.7e3,
        feedback_cap=100e-12,
        opamp="typical",
    ),
    make_stage(
        "tone_two_band",
        "tone",
        3,
        bass_outer=10e3,
        bass_pot=100e3,
        bass_cap=22e-9,
        treble_pot=100e3,
        treble_cap=2.2e-9,
        treble_wiper=4.7e3,
        bass_position=0.8,
        treble_position=0.3,
        opamp="typical",
    ),
    make_stage("volume", "vol", 4, pot=10e3, position=0.7, series=1e3),
    make_stage("block", "out", 5, gain=10.0, input_impedance=10e3, output_impedance=100.0),
)


def _compare(positions: list[Mapping[str, ArrayLike]]) -> tuple[int, ...]:
    """Solve the chain both ways; assert node voltages agree; return the batch shape."""
    envs = [ENV] * len(STAGES)
    solutions = [
        solve_stage(stage, env, FREQUENCY, pos)
        for stage, env, pos in zip(STAGES, envs, positions, strict=True)
    ]
    chain = cascade(solutions, SOURCE_OHM, LOAD_OHM)
    net, outs = whole_chain_network(STAGES, envs, FREQUENCY, positions, SOURCE_OHM, LOAD_OHM)
    rhs = np.zeros((net.size, 1))
    rhs[net.index(branch_ref("source")), 0] = 1.0
    x = net.solve(rhs)[..., 0]

    def node(name: str) -> np.ndarray:
        return x[..., net.index(node_ref(name))]

    np.testing.assert_allclose(chain.v_in[0], node("n0"), rtol=1e-9)
    for k, out in enumerate(outs):
        np.testing.assert_allclose(chain.v_out[k], node(out), rtol=1e-9, err_msg=f"stage {k}")
        if k + 1 < len(outs):
            np.testing.assert_allclose(chain.v_in[k + 1], chain.v_out[k], rtol=1e-12)
    # The op-amp output current probes of the cascade are the currents of the whole network:
    # what the op-amp delivers, minus its source's branch current (which flows into it).
    for k, stage in enumerate(STAGES):
        label = f"{stage.name}.opamp"
        if f"{label}.current" in solutions[k].built.probes:
            direct = -x[..., net.index(branch_ref(label))]
            np.testing.assert_allclose(
                chain.probe(k, f"{label}.current"), direct, rtol=1e-6, err_msg=label
            )
    return chain.v_out[-1].shape


def test_cascade_matches_the_whole_chain_with_controls_as_set() -> None:
    """Controls as set: every node voltage per source volt agrees with the whole-chain
    network within rtol 1e-9 over 10 Hz..100 kHz."""
    shape = _compare([positions_as_set(stage) for stage in STAGES])
    assert shape == (FREQUENCY.size,)


@pytest.mark.parametrize(
    ("bass", "treble", "volume"),
    [(0.0, 1.0, 0.05), (1.0, 0.0, 1.0), (0.5, 0.5, 0.5), (0.93, 0.12, 0.0)],
)
def test_cascade_matches_the_whole_chain_at_other_settings(
    bass: float, treble: float, volume: float
) -> None:
    """Stops and odd settings of every pot (volume at 0 is silent but must still agree):
    rtol 1e-9 against the whole-chain network."""
    positions = [positions_as_set(stage) for stage in STAGES]
    positions[2] = {"bass_position": bass, "treble_position": treble}
    positions[3] = {"position": volume}
    _compare(positions)


def test_cascade_matches_the_whole_chain_on_batch_control_axes() -> None:
    """Three controls on three batch axes (bass 3 x treble 4 x volume 5) broadcast with the
    frequency axis in both solvers; every one of the 60 settings agrees within rtol 1e-9."""
    positions = [positions_as_set(stage) for stage in STAGES]
    positions[2] = {
        "bass_position": np.array([0.0, 0.4, 1.0]).reshape(3, 1, 1, 1),
        "treble_position": np.array([0.0, 0.3, 0.7, 1.0]).reshape(1, 4, 1, 1),
    }
    positions[3] = {"position": np.linspace(0.2, 1.0, 5).reshape(1, 1, 5, 1)}
    assert _compare(positions) == (3, 4, 5, FREQUENCY.size)


def test_cascade_loading_is_exact_for_a_resistive_pair() -> None:
    """Two blocks: source 1k into block A (Zin 10k, gain 2, Zout 1k) into block B (Zin 1k,
    gain 1, Zout 0) into a 1k load. By hand (Thevenin, Horowitz & Hill 3rd ed. sec. 1.2.5):
    v_in,A = 10/11, v_out,A = 2 (10/11)(1/2) = 10/11, and B's output is its open-circuit
    voltage into 1k through the solver's 1 mohm floor for a zero output impedance; the
    impedances A sees are 1k (source) and 1k (B's input); rtol 1e-9."""
    a = make_stage("block", "a", 1, gain=2.0, input_impedance=10e3, output_impedance=1e3)
    b = make_stage("block", "b", 2, gain=1.0, input_impedance=1e3, output_impedance=0.0)
    f = np.array([1e3])
    env = environment()
    chain = cascade([solve_stage(st, env, f, {}) for st in (a, b)], 1e3, 1e3)
    np.testing.assert_allclose(chain.v_in[0], 10.0 / 11.0, rtol=1e-9)
    np.testing.assert_allclose(chain.v_out[0], 10.0 / 11.0, rtol=1e-9)
    floor = 1e3 / (1e3 + SOURCE_FLOOR_OHM)
    np.testing.assert_allclose(chain.v_out[1], 10.0 / 11.0 * floor, rtol=1e-9)
    np.testing.assert_allclose(chain.source_impedance[0], 1e3, rtol=1e-9)
    np.testing.assert_allclose(1.0 / chain.load_admittance[0], 1e3, rtol=1e-9)
    np.testing.assert_allclose(chain.output_impedance[0], 1e3, rtol=1e-9)
    np.testing.assert_allclose(1.0 / chain.input_admittance, 10e3, rtol=1e-9)


# --- a stage solved once per check ---------------------------------------------------------


def replace_value(stage: Stage, key: str, value: object) -> Stage:
    """The stage with one value changed, as the loader holds it (a float: a hashable
    mapping) or as a spread or sweep steps it (an array, `chainbudget.budget.steps`)."""
    if isinstance(value, np.ndarray):
        return _ArrayStage(stage.index, stage.name, stage.kind, {**stage.values, key: value})
    return Stage(stage.index, stage.name, stage.kind, FrozenMapping({**stage.values, key: value}))


# The environment as a chain gives it: its parts libraries in hashable mappings.
LOADED_ENV = replace(
    ENV, opamps=FrozenMapping(ENV.opamps), transistors=FrozenMapping(ENV.transistors)
)


def test_a_stage_solved_again_in_one_check_is_the_first_solve() -> None:
    """Within `solving_once` equal inputs give the one solution; any input that differs
    (the frequencies, a part value) is solved anew and agrees with a solve outside the
    block (no stale answer)."""
    stage, env = STAGES[0], LOADED_ENV
    at = positions_as_set(stage)
    with solving_once():
        first = solve_stage(stage, env, FREQUENCY, at)
        assert solve_stage(stage, env, FREQUENCY.copy(), dict(at)) is first
        other_band = solve_stage(stage, env, FREQUENCY[:5], at)
        other_part = solve_stage(replace_value(stage, "feedback", 47e3), env, FREQUENCY, at)
    assert solve_stage(stage, env, FREQUENCY, at) is not first  # outside: no keeping
    plain_band = solve_stage(stage, env, FREQUENCY[:5], at)
    plain_part = solve_stage(replace_value(stage, "feedback", 47e3), env, FREQUENCY, at)
    assert other_band is not first and other_part is not first
    np.testing.assert_array_equal(unloaded_gain(other_band), unloaded_gain(plain_band))
    np.testing.assert_array_equal(unloaded_gain(other_part), unloaded_gain(plain_part))


def test_a_solve_with_array_parts_is_not_kept() -> None:
    """A spread's trials ride as array parts: such a solve cannot be compared, so each one
    is solved (and answers as one value at a time would)."""
    stage = replace_value(STAGES[0], "feedback", np.array([[22e3], [47e3]]))
    env = LOADED_ENV
    at = positions_as_set(STAGES[0])
    with solving_once():
        one = solve_stage(stage, env, FREQUENCY, at)
        two = solve_stage(stage, env, FREQUENCY, at)
    assert one is not two
    single = solve_stage(replace_value(STAGES[0], "feedback", 47e3), env, FREQUENCY, at)
    np.testing.assert_allclose(unloaded_gain(two)[1], unloaded_gain(single), rtol=1e-14)


def _every_example_stage() -> list[tuple[str, int, str]]:
    """Each stage on rails of every example chain: its file, index and kind."""
    from chainbudget.chainfile import load_chain

    found = []
    for path in sorted((ROOT / "chains").glob("*.toml")):
        chain = load_chain(path)
        found += [
            (path.name, k, stage.kind)
            for k, stage in enumerate(chain.stages)
            if STAGE_KINDS[stage.kind].uses_rails  # a volume pot or a block has none
        ]
    return found


def _two_port_at_rails(
    name: str, k: int, shift: float, changes: Mapping[str, object] | None = None
) -> list[Complex]:
    """Stage k of an example (with ``changes``) solved alone (no keeping) at its rails
    widened by ``shift`` volts each way, the bias point moved by half of it: every array
    of its two-port."""
    from chainbudget.budget.analysis import environments, positions_as_set
    from chainbudget.chainfile import load_chain

    chain = load_chain(ROOT / "chains" / name).with_values(changes or {})
    env = environments(chain)[k]
    assert env.rails is not None
    rails = replace(
        env.rails,
        positive=env.rails.positive + shift,
        negative=env.rails.negative - shift,
        bias=env.rails.bias + shift / 2,
    )
    frequency = np.logspace(1, 5, 9)
    stage = chain.stages[k]
    port = solve_stage(
        stage, replace(env, rails=rails), frequency, positions_as_set(chain.stages)[k]
    ).two_port
    arrays = [port.a, port.b, port.c, port.d]
    arrays += [np.asarray(g) for pair in port.probes.values() for g in pair]
    return arrays


@pytest.mark.parametrize(
    ("name", "k"),
    [
        (name, k)
        for name, k, kind in _every_example_stage()
        if not STAGE_KINDS[kind].network_uses_rails
    ],
)
def test_a_kind_whose_network_ignores_its_rails_solves_the_same_at_any_rails(
    name: str, k: int
) -> None:
    """`StageKind.network_uses_rails` lets a check reuse a two-port at other rails: the
    claim held against solves at rails 3 V wider (and the bias point moved), brute force."""
    here, there = _two_port_at_rails(name, k, 0.0), _two_port_at_rails(name, k, 3.0)
    assert all(np.array_equal(a, b) for a, b in zip(here, there, strict=True))


def test_the_kinds_that_make_no_such_claim_do_move_with_their_rails() -> None:
    """The probe above is not blind: each kind that keeps the flag (a transistor's operating
    point, hence its gm, can follow its rails) moves with them in some example."""
    # every example's follower sinks a set current; one on an emitter resistor to its
    # negative rail draws (V_B - V_BE - V_-)/R_E, and its gm follows (Horowitz & Hill)
    resistor_bias = {"buffer.bias": "resistor", "buffer.emitter_resistor": "1k"}
    cases = [(name, k, kind, None) for name, k, kind in _every_example_stage()]
    cases.append(("busking_amp.toml", 4, "follower", resistor_bias))
    moved: dict[str, bool] = {}
    for name, k, kind, changes in cases:
        if STAGE_KINDS[kind].network_uses_rails:
            here = _two_port_at_rails(name, k, 0.0, changes)
            there = _two_port_at_rails(name, k, 3.0, changes)
            differs = not all(np.array_equal(a, b) for a, b in zip(here, there, strict=True))
            moved[kind] = moved.get(kind, False) or differs
    assert moved == {"follower": True, "push_pull": True}


def test_a_node_clip_is_worked_out_once_per_cascade_and_never_carried_over() -> None:
    """`clip_source_peak` keeps each stage's clip on its cascade; a cascade made from it
    with `dataclasses.replace` (other stages, other clips) starts with none."""
    from chainbudget.budget.levels import clip_source_peak
    from chainbudget.budget.supplies import loaded_analysis
    from chainbudget.chainfile import load_chain

    chain = load_chain(ROOT / "chains" / "busking_amp.toml")
    nominal = loaded_analysis(chain, corner="low").nominal
    limited = next(k for k, sol in enumerate(nominal.stages) if sol.built.limits)
    first = clip_source_peak(nominal, limited)
    assert first is not None and clip_source_peak(nominal, limited) is first
    assert not first[0].flags.writeable  # shared, so no figure may change it in place
    assert replace(nominal, v_out=nominal.v_out).clips == {}


def test_cascades_joined_with_kept_terminations_equal_those_joined_alone(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    """Two settings of the tone stage (the sections before and after it shared, as the
    spread joins its settings, `cascade.Joins`): every figure of each cascade equals the
    one joined alone, to the bit, the shared head and tail are worked out once (the same
    arrays), and each agrees with the whole-chain network (rtol 1e-9, `_compare`)."""
    from chainbudget.cascade import Joins

    envs = [ENV] * len(STAGES)
    as_set = [positions_as_set(stage) for stage in STAGES]
    other = list(as_set)
    other[2] = {"bass_position": 0.1, "treble_position": 0.9}
    solved = [
        solve_stage(stage, env, FREQUENCY, pos)
        for stage, env, pos in zip(STAGES, envs, as_set, strict=True)
    ]
    moved = list(solved)
    moved[2] = solve_stage(STAGES[2], ENV, FREQUENCY, other[2])
    alone = [cascade(s, SOURCE_OHM, LOAD_OHM) for s in (solved, moved)]
    worked: list[str] = []
    for what in ("input_admittance", "output_impedance", "voltage_ratio"):
        original = getattr(TwoPort, what)

        def counted(self: TwoPort, z: ArrayLike, _f=original, _w=what) -> Complex:  # type: ignore[no-untyped-def]
            worked.append(_w)
            return _f(self, z)  # type: ignore[no-any-return]

        monkeypatch.setattr(TwoPort, what, counted)
    joins = Joins()
    kept = [cascade(s, SOURCE_OHM, LOAD_OHM, joins) for s in (solved, moved)]
    for a, b in zip(kept, alone, strict=True):
        for name in ("v_in", "v_out", "load_admittance", "source_impedance", "output_impedance"):
            for x, y in zip(getattr(a, name), getattr(b, name), strict=True):
                np.testing.assert_array_equal(x, y)
        np.testing.assert_array_equal(a.input_admittance, b.input_admittance)
    # The first cascade works out each termination of each stage; the second only those
    # that see the moved tone stage (index 2): the admittances looking in at stages 2, 1,
    # 0 (the tail after it is shared), the output impedances of stages 2 onwards (the
    # head before it is shared) and the ratios of stages 0 to 2 (their loads moved).
    n = len(STAGES)
    assert worked.count("input_admittance") == n + 3
    assert worked.count("output_impedance") == n + (n - 2)
    assert worked.count("voltage_ratio") == n + 3
    _compare(other)
