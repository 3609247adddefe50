"""Tests for the power end of the budget (chainbudget.budget.power), its findings
(chainbudget.findings.power) and its report parts (chainbudget.report.power).

References (section numbers quoted from memory): Horowitz & Hill, The Art of Electronics,
3rd ed., sec. 1.7.1 (RC high-pass corner 1/(2 pi R C)), sec. 2.1.1 (I_B = I_C/beta),
sec. 2.4.1 (push-pull output stages), sec. 4.2.1 (op-amp feedback networks); Boylestad &
Nashelsky, Electronic Devices and Circuit Theory, class B section (P_o = V_pk^2/(2 R_L);
I_dc per rail I_pk/pi). SPL from a sensitivity, the damping factor: common practice, no
source.
"""

from __future__ import annotations

import json
import tomllib
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from budgetkit import cautions, dissipation, handovers, opamp_drives
from rich.console import Console

from chainbudget.budget import Budget, budget_from, compute
from chainbudget.budget.analysis import analyse
from chainbudget.budget.currents import stage_currents
from chainbudget.budget.levels import node_levels
from chainbudget.cascade import cascade, solve_stage
from chainbudget.chainfile import Chain, load_chain, parse_chain
from chainbudget.findings import Finding, findings
from chainbudget.report.json_view import budget_json
from chainbudget.report.table_view import render

ROOT = Path(__file__).resolve().parents[1]
DRIVE_CHAIN = ROOT / "tests" / "data" / "opamp_into_push_pull.toml"
BUSKING = ROOT / "chains" / "busking_amp.toml"

# A follower able to drive the drive chain's output stage: a 70 mA current sink.
STRONG_FOLLOWER = {
    "name": "buffer",
    "kind": "follower",
    "transistor": "driver_npn",
    "bias": "current",
    "current": "70 mA",
    "positive": "plus",
    "negative": "minus",
}


def drive_chain(insert: dict[str, Any] | None = None, **output: Any) -> Chain:
    """The test chain of tests/data (op-amp straight into a push-pull stage), with a stage
    inserted between them and output-stage fields changed if asked."""
    data = tomllib.loads(DRIVE_CHAIN.read_text(encoding="utf-8"))
    data["stage"][-1].update(output)
    for key in [k for k, v in output.items() if v is None]:  # None: leave the field out
        del data["stage"][-1][key]
    if insert is not None:
        data["stage"].insert(1, insert)
    return parse_chain(data, str(DRIVE_CHAIN))


def codes(found: list[Finding]) -> dict[str, Finding]:
    return {f.code: f for f in found}


def test_opamp_straight_into_push_pull_is_a_drive_shortfall() -> None:
    """An op-amp of 25 mA driving a beta-50 pair into 8 ohm: at the output stage's clip
    (12.85 V peak, Horowitz & Hill sec. 2.4.1) the base current is I_pk/(beta + 1) = 1.56 A/
    51 = 31 mA (sec. 2.1.1), more than the op-amp has, so its current limit binds first:
    the drive-shortfall error, naming the op-amp stage. Base current rtol 1e-6."""
    budget = compute(drive_chain())
    handover = handovers(budget)[0]
    assert handover.shortfall
    assert handover.driver_limited_by == "current"
    assert handover.base_current_a == pytest.approx(
        handover.output_clip_vpk / 8.0 / 51.0, rel=1e-6, abs=0
    )
    assert handover.available_a == pytest.approx(0.025, rel=1e-6, abs=0)
    assert handover.needed_a is not None and handover.needed_a > 0.025
    found = codes(findings(budget))
    assert found["drive-shortfall"].severity == "error"
    assert found["drive-shortfall"].stage == "drive"
    # the maximum output is then set by the op-amp's current limit
    assert budget.output is not None and budget.output.clip_stage == "drive"
    assert budget.output.clip_vpk < budget.output.output_stage_clip_vpk  # type: ignore[operator]


def test_inserting_a_follower_clears_the_drive_shortfall() -> None:
    """The same chain with an emitter follower on a 70 mA sink between the op-amp and the
    output stage: the op-amp now sees (beta + 1) times the load (Horowitz & Hill sec.
    2.2.3), no stage runs out of current, no error."""
    budget = compute(drive_chain(STRONG_FOLLOWER))
    assert not any(h.shortfall for h in handovers(budget))
    found = findings(budget)
    assert "drive-shortfall" not in codes(found)
    assert not [f for f in found if f.severity == "error"]


def test_resistor_biased_follower_runs_out_of_pull_down_current() -> None:
    """A follower biased by 1.5 kohm to -15 V has about 9.5 mA; driving the output stage's
    ~420 ohm input its emitter current swings by V/(R_E || Z_in) and it cuts off long
    before the output stage clips (Horowitz & Hill sec. 2.2.3-2.2.5): the drive-shortfall
    names the follower and its cut-off limit."""
    weak = {**STRONG_FOLLOWER, "bias": "resistor", "emitter_resistor": "1k5"}
    del weak["current"]
    budget = compute(drive_chain(weak))
    handover = handovers(budget)[0]
    assert handover.driver == "buffer" and handover.shortfall
    assert handover.driver_limit == "cut-off"
    found = codes(findings(budget))
    assert found["drive-shortfall"].stage == "buffer"
    assert "bias current" in found["drive-shortfall"].message


def test_follower_clipping_on_its_bias_side_is_reported() -> None:
    """A resistor-biased follower into 600 ohm whose binding limit is its cut-off,
    I_E (R_E || R_L) (Horowitz & Hill sec. 2.2.3), gets the follower-cut-off finding with
    that swing."""
    data = {
        "chain": {"title": "t", "points_per_decade": 5},
        "source": {"level": "-10 dBV", "max_level": "0 dBV"},
        "load": {"impedance": "600 ohm"},
        "supply": [
            {"name": "p", "kind": "dc", "voltage": "15 V"},
            {"name": "m", "kind": "dc", "voltage": "15 V"},
        ],
        "stage": [
            {
                "name": "buf",
                "kind": "follower",
                "emitter_resistor": "4k7",
                "positive": "p",
                "negative": "m",
            }
        ],
    }
    budget = compute(parse_chain(data, "t.toml"))
    finding = codes(findings(budget))["follower-cut-off"]
    i_e = (15.0 - 0.65) / 4700.0
    assert finding.figures["cut_off_vpk"] == pytest.approx(
        i_e * 4700.0 * 600.0 / 5300.0, rel=1e-6, abs=0
    )


def test_output_figures_follow_from_the_clip_level() -> None:
    """P = V_pk^2/(2 R_L) (Boylestad & Nashelsky, class B section), SPL = sensitivity +
    10 log10(P/1 W) and damping factor R_L/|Z_out| (common practice, no source), read from
    the budget of the follower-driven chain: rtol 1e-9."""
    budget = compute(drive_chain(STRONG_FOLLOWER))
    out = budget.output
    assert out is not None
    assert out.clip_power_w == pytest.approx(out.clip_vpk**2 / 16.0, rel=1e-9, abs=0)
    assert out.nominal_power_w == pytest.approx(out.nominal_vpk**2 / 16.0, rel=1e-9, abs=0)
    assert out.max_spl_db == pytest.approx(88.0 + 10 * np.log10(out.clip_power_w), rel=1e-9, abs=0)
    assert out.damping_factor == pytest.approx(8.0 / out.zout_ohm, rel=1e-9, abs=0)
    nodes = {n.stage: n for n in budget.nodes}
    assert out.nominal_vpk == pytest.approx(
        np.sqrt(2) * nodes["output"].level_vrms, rel=1e-9, abs=0
    )


def test_maximum_output_is_the_output_stages_own_clip_when_it_clips_first() -> None:
    """The example busking amp: with the volume fully up the output stage is the first to
    clip, so the maximum output is its own swing limit at the load; rtol 1e-9."""
    budget = compute(load_chain(BUSKING))
    out = budget.output
    assert out is not None and out.clip_stage == "output"
    assert out.clip_vpk == pytest.approx(out.output_stage_clip_vpk or 0.0, rel=1e-9, abs=0)
    node = {n.stage: n for n in budget.nodes}["output"]
    assert out.clip_vpk == pytest.approx(node.clip_vpk or 0.0, rel=1e-6, abs=0)


def test_output_cap_corner_is_where_the_bass_is_3_db_down() -> None:
    """A single-supply output stage with 470 uF into 8 ohm: the corner 1/(2 pi (R_L + R_out)
    C) (Horowitz & Hill sec. 1.7.1) sits at about 41 Hz, inside a band from 20 Hz: the
    output-cap-bass warning. At that frequency the stage's network response is 1/sqrt(2)
    of its high-frequency value (rtol 2e-3)."""
    c = drive_chain(STRONG_FOLLOWER, output_cap="470u", negative="ground")
    budget = compute(c)
    out = budget.output
    assert out is not None and out.output_cap_corner_hz is not None
    assert 35.0 < out.output_cap_corner_hz < 45.0
    found = codes(findings(budget))
    assert found["output-cap-bass"].severity == "warning"
    analysis = analyse(c)
    stage, env = c.stages[-1], analysis.envs[-1]
    frequency = np.array([out.output_cap_corner_hz, 1e5])
    solved = cascade([solve_stage(stage, env, frequency, {})], 1.0, 8.0)
    response = np.abs(solved.v_out[0])
    assert response[0] / response[1] == pytest.approx(1.0 / np.sqrt(2.0), rel=2e-3, abs=0)


def test_single_supply_output_without_a_capacitor_puts_dc_on_the_load() -> None:
    """Half the supply across the speaker: an error (common practice, no source)."""
    budget = compute(drive_chain(STRONG_FOLLOWER, negative="ground"))
    assert codes(findings(budget))["dc-on-load"].severity == "error"


@pytest.mark.parametrize(
    ("heatsink", "code"),
    [("40 K/W", "junction-over"), ("32 K/W", "junction-near"), ("3 K/W", None)],
)
def test_junction_findings_follow_the_heatsink(heatsink: str, code: str | None) -> None:
    """Worst device dissipation V_cc^2/(pi^2 R_L) + V_cc I_q = 15^2/(pi^2 8) + 15 x 0.04 =
    3.45 W (Boylestad & Nashelsky, class B section); at 25 degC through theta_jc 2 +
    theta_cs 0.5 + theta_sa (Horowitz & Hill sec. 9.4): 40 K/W gives 171 degC, over the
    150 degC maximum (error); 32 K/W gives 144 degC, within 25 K of it (warning); 3 K/W
    gives 44 degC (nothing). Junction abs 1e-9 degC."""
    budget = compute(drive_chain(STRONG_FOLLOWER, heatsink=heatsink))
    assert dissipation(budget) is not None
    p = 15.0**2 / (np.pi**2 * 8.0) + 15.0 * 0.04
    expected = 25.0 + p * (2.5 + float(heatsink.split()[0]))
    assert dissipation(budget).junction_degc == pytest.approx(expected, abs=1e-9)
    heat = {k: f for k, f in codes(findings(budget)).items() if k.startswith("junction")}
    if code is None:
        assert not heat
    else:
        # restates the project's own threshold (not an outside check): near is
        # within JUNCTION_MARGIN_K (25 K) of the maximum
        assert list(heat) == [code]
        assert heat[code].severity == ("error" if code == "junction-over" else "warning")


def test_unknown_thermal_path_gives_the_heatsink_it_needs() -> None:
    """Without theta_jc the junction cannot be worked out; the note says so. With theta_jc
    but no heatsink, the largest heatsink theta_sa = (T_max - T_a)/P - theta_jc - theta_cs
    (Horowitz & Hill sec. 9.4) is in the budget: rtol 1e-9."""
    budget = compute(drive_chain(STRONG_FOLLOWER, heatsink=None))
    # the fixture gives theta_jc 2 and theta_cs 0.5 K/W
    assert dissipation(budget) is not None
    d = dissipation(budget)
    assert d.junction_degc is None
    assert d.max_heatsink_k_per_w == pytest.approx(
        (150.0 - 25.0) / d.worst_device_w - 2.5, rel=1e-9, abs=0
    )
    assert "heat-unknown" in codes(findings(budget))


def test_opamp_drive_current_is_load_plus_feedback_current() -> None:
    """An op-amp stage of gain 2 (10k/10k, Horowitz & Hill sec. 4.2.1) into a 600 ohm block:
    at max_level (1 V rms, about 2.83 V peak out) it sources, by Kirchhoff's current law at
    its output, V_out/600 + V_out/20k (4.86 mA peak); an op-amp of 8 mA is then within 6 dB
    of its limit: the margin warning. A0 100 dB, R_o 50 ohm (inside the loop); rtol 1e-6."""
    data = {
        "chain": {"title": "t", "points_per_decade": 5},
        "source": {"level": "-10 dBV", "max_level": "0 dBV"},
        "load": {"impedance": "10 kohm"},
        "opamp": {
            "typical": {
                "gbw": "10 MHz",
                "slew_rate": "100 V/us",
                "open_loop_gain": "100 dB",
                "output_resistance": "50 ohm",
                "output_current": "8 mA",
            }
        },
        "supply": [
            {"name": "p", "kind": "dc", "voltage": "15 V"},
            {"name": "m", "kind": "dc", "voltage": "15 V"},
        ],
        "stage": [
            {
                "name": "amp",
                "kind": "opamp_gain",
                "topology": "non-inverting",
                "feedback": "10k",
                "ground_leg": "10k",
                "opamp": "typical",
                "positive": "p",
                "negative": "m",
            },
            {
                "name": "line",
                "kind": "block",
                "gain": 1,
                "input_impedance": "600 ohm",
                "output_impedance": "0 ohm",
            },
        ],
    }
    budget = compute(parse_chain(data, "t.toml"))
    drive = opamp_drives(budget)[0]
    v_out = np.sqrt(2.0) * budget.nodes[0].max_level_vrms
    assert v_out == pytest.approx(2.0 * np.sqrt(2.0), rel=1e-4, abs=0)
    assert drive.peak_a == pytest.approx(v_out / 600.0 + v_out / 20e3, rel=1e-6, abs=0)
    assert drive.load_ohm == pytest.approx(1.0 / (1 / 600.0 + 1 / 20e3), rel=1e-6, abs=0)
    # restates the project's own threshold (not an outside check): 6 dB is DRIVE_MARGIN
    assert codes(findings(budget))["opamp-current-margin"].severity == "warning"


def test_rail_currents_of_opamp_and_follower() -> None:
    """Per rail: an op-amp draws its supply current plus I_pk/pi of what it sources (the
    mean of a half-wave rectified sine, Boylestad & Nashelsky class B section); a class-A
    follower draws its bias current at every level. rtol 1e-6."""
    analysis = analyse(drive_chain(STRONG_FOLLOWER))
    currents = {c.stage: c for c in stage_currents(analysis)}
    assert currents["buffer"].idle_a == pytest.approx(0.07, rel=1e-12, abs=0)
    assert currents["buffer"].clip_a == pytest.approx(0.07, rel=1e-12, abs=0)
    op = currents["drive"]
    clip = node_levels(analysis)[0]
    probe = float(np.abs(analysis.nominal.probe(0, "drive.opamp.current")[0]))
    source_peak = (clip.clip_vpk or 0.0) / float(np.abs(analysis.nominal.v_out[0][0]))
    assert op.clip_a == pytest.approx(0.005 + probe * source_peak / np.pi, rel=1e-6, abs=0)


def _report(budget: Budget) -> tuple[dict[str, Any], str]:
    found = findings(budget)
    console = Console(record=True, width=200)
    render(budget, found, console)
    return json.loads(json.dumps(budget_json(budget, found))), console.export_text()


def test_example_amp_reports_power_dissipation_and_junction_in_table_and_json() -> None:
    """The example small amplifier: the JSON ``output`` object carries the six keys of the
    issue as finite numbers (the table shows the same figures), with the heat and
    loudness cautions."""
    budget = compute(load_chain(BUSKING))
    data, text = _report(budget)
    output = data["output"]
    for key in (
        "clip_power_w",
        "nominal_power_w",
        "max_spl_db",
        "damping_factor",
        "device_dissipation_w",
        "junction_degc",
    ):
        assert isinstance(output[key], float) and np.isfinite(output[key]), key
    assert dissipation(budget) is not None
    assert output["clip_power_w"] == budget.output.clip_power_w
    assert output["junction_degc"] == dissipation(budget).junction_degc
    assert "max output" in text and "device dissipation, worst sine" in text and "junction" in text
    assert f"{dissipation(budget).junction_degc:.0f} degC" in text
    texts = cautions(budget)
    assert any(t.startswith("Hot parts") for t in texts)
    assert any(t.startswith("Loudness") for t in texts)
    for node in data["nodes"]:  # every stage on rails reports its currents from each rail
        if node["kind"] == "volume":
            assert "rail_current_a" not in node
        else:
            idle, clip = node["rail_current_a"]["idle"], node["rail_current_a"]["clip"]
            assert 0.0 < idle <= node["rail_current_a"]["nominal"] <= clip


def test_line_level_chain_has_no_power_cautions() -> None:
    """A chain ending in a line driver into 10 kohm with no speaker sensitivity shows no
    output-stage table and no heat or loudness caution."""
    budget = compute(load_chain(ROOT / "chains" / "desk_speaker_preamp.toml"))
    assert budget.output is not None and dissipation(budget) is None
    assert not [t for t in cautions(budget) if t.startswith(("Hot", "Loud"))]
    _, text = _report(budget)
    assert "Output into" not in text


def test_budget_from_and_compute_agree_on_the_output() -> None:
    """`budget_from` on an analysis of a chain with plain dc supplies equals `compute`."""
    c = drive_chain(STRONG_FOLLOWER)
    a, b = budget_from(analyse(c, "low")).output, compute(c).output
    assert a is not None and b is not None
    assert a.clip_power_w == pytest.approx(b.clip_power_w, rel=1e-9, abs=0)
