"""Tests for the push-pull output stage (chainbudget.stages.push_pull) and its figures.

Every figure comes from the stage built into a chain: its hybrid-pi network in the cascade,
its swing limit through the level budget, its dissipation and heat through
chainbudget.budget.power.

References (section numbers quoted from memory): Horowitz & Hill, The Art of Electronics,
3rd ed., sec. 2.4.1 (push-pull follower: swing V_rail - V_CE(sat) - V_BE - I_pk R_E, input
impedance (beta + 1)(R_E + Z_L)), sec. 2.4.2 (Darlington: the betas multiply), sec. 9.4
(thermal resistances in series); Boylestad & Nashelsky, Electronic Devices and Circuit
Theory, class B section (P_dc = 2 V_cc V_pk/(pi R_L), P_2Q(max) = 2 V_cc^2/(pi^2 R_L) at
V_pk = 2 V_cc/pi). Dissipation is also checked against scipy.integrate of the instantaneous
device power over a cycle, which needs none of those formulas.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pytest
from budgetkit import dissipation, handovers
from scipy import constants, integrate

from chainbudget.budget import budget_from
from chainbudget.budget.analysis import analyse
from chainbudget.budget.currents import stage_currents
from chainbudget.budget.levels import node_levels
from chainbudget.cascade import cascade, solve_stage, whole_chain_network
from chainbudget.chainfile import Chain, ChainFileError, parse_chain
from chainbudget.network import branch_ref, node_ref
from chainbudget.stages.push_pull import push_pull_model

T_300K_DEGC = "26.85 degC"
NO_RBB = {
    "out_n": {
        "polarity": "npn",
        "beta": 50,
        "vbe": "0.8 V",
        "vce_sat": "1 V",
        "base_resistance": "0 ohm",
    },
    "out_p": {
        "polarity": "pnp",
        "beta": 50,
        "vbe": "0.8 V",
        "vce_sat": "1 V",
        "base_resistance": "0 ohm",
    },
    "drv_n": {
        "polarity": "npn",
        "beta": 100,
        "vbe": "0.65 V",
        "vce_sat": "0.2 V",
        "base_resistance": "0 ohm",
    },
    "drv_p": {
        "polarity": "pnp",
        "beta": 100,
        "vbe": "0.65 V",
        "vce_sat": "0.2 V",
        "base_resistance": "0 ohm",
    },
}
THERMAL = {"theta_jc": "5 K/W", "theta_cs": "1 K/W", "heatsink": "10 K/W"}


def chain(
    push_pull: dict[str, Any],
    *,
    before: list[dict[str, Any]] | None = None,
    load: str = "8 ohm",
    source: str = "0 ohm",
    rails: tuple[str, str | None] = ("15 V", "15 V"),
    ambient: str = T_300K_DEGC,
    transistors: dict[str, Any] | None = None,
) -> Chain:
    """Stages ``before`` (if any), then the push-pull stage, on split or single rails."""
    supplies = [{"name": "plus", "kind": "dc", "voltage": rails[0]}]
    negative = "ground"
    if rails[1] is not None:
        supplies.append({"name": "minus", "kind": "dc", "voltage": rails[1]})
        negative = "minus"
    railed = {"positive": "plus", "negative": negative}
    stages = [{**st, **railed} for st in (before or [])]
    stages.append({"name": "out", "kind": "push_pull", **railed, **push_pull})
    data = {
        "chain": {"title": "push-pull test", "ambient": ambient, "points_per_decade": 5},
        "source": {"level": "-10 dBV", "max_level": "0 dBV", "impedance": source},
        "load": {"impedance": load, "sensitivity": "90 dB"},
        "transistor": NO_RBB if transistors is None else transistors,
        "supply": supplies,
        "stage": stages,
    }
    return parse_chain(data, "test.toml")


PLAIN = {"upper": "out_n", "lower": "out_p", "emitter_resistors": "0R22", "quiescent": "50 mA"}
DARLINGTON = {**PLAIN, "driver_upper": "drv_n", "driver_lower": "drv_p"}


def at_reference(c: Chain) -> tuple[complex, complex]:
    """(Z_in, Z_out) of the last stage at the reference frequency, as loaded in the chain."""
    nominal = analyse(c).nominal
    k = len(c.stages) - 1
    y_in = nominal.input_admittance if k == 0 else nominal.load_admittance[k - 1]
    return 1.0 / complex(np.asarray(y_in)[0]), complex(nominal.output_impedance[k][0])


def test_input_impedance_per_half_is_beta_plus_one_times_emitter_resistor_plus_load() -> None:
    """Horowitz & Hill 3rd ed. sec. 2.4.1: Z_in = (beta + 1)(R_E + Z_L) per half in
    conduction. The network (r_bb' = 0) gives (beta + 1)(r_e + R_E + Z_L) exactly, rtol
    1e-7, with r_e at the conduction current; the textbook form within r_e/(R_E + R_L),
    rtol 3e-3."""
    c = chain(PLAIN)
    r_e = push_pull_model(c.stages[0], analyse(c).envs[0]).output.r_e
    z_in, _ = at_reference(c)
    assert z_in.real == pytest.approx(51.0 * (r_e + 0.22 + 8.0), rel=1e-7, abs=0)
    assert z_in.real == pytest.approx(51.0 * (0.22 + 8.0), rel=3e-3, abs=0)


def test_darlington_multiplies_the_input_impedance_by_the_drivers_beta_plus_one() -> None:
    """Horowitz & Hill 3rd ed. sec. 2.4.2: a Darlington's current gain is about
    beta_1 beta_2, so Z_in = (beta_d + 1)(r_e,d + (beta + 1)(r_e + R_E + Z_L)) exactly in
    the network (rtol 1e-7), (beta_d + 1)(beta + 1)(R_E + Z_L) to within 1 %."""
    c = chain(DARLINGTON)
    model = push_pull_model(c.stages[0], analyse(c).envs[0])
    assert model.driver is not None
    z_in, _ = at_reference(c)
    exact = 101.0 * (model.driver.r_e + 51.0 * (model.output.r_e + 0.22 + 8.0))
    assert z_in.real == pytest.approx(exact, rel=1e-7, abs=0)
    assert z_in.real == pytest.approx(101.0 * 51.0 * 8.22, rel=1e-2, abs=0)


@pytest.mark.parametrize("source_ohm", [0.0, 100.0, 1000.0])
def test_output_impedance_is_emitter_resistor_plus_follower_output_impedance(
    source_ohm: float,
) -> None:
    """Horowitz & Hill 3rd ed. sec. 2.2.3 and 2.4.1: Z_out = R_E + r_e + (R_s + r_bb')/(beta
    + 1) for the conducting half (power_npn/pnp generic classes: beta 50, r_bb' 10 ohm),
    from the cascade: rtol 1e-7."""
    c = chain(
        {**PLAIN, "upper": "power_npn", "lower": "power_pnp"},
        source=f"{source_ohm} ohm",
        transistors={},
    )
    r_e = push_pull_model(c.stages[0], analyse(c).envs[0]).output.r_e
    _, z_out = at_reference(c)
    assert z_out.real == pytest.approx(0.22 + r_e + (source_ohm + 10.0) / 51.0, rel=1e-7, abs=0)


def test_conduction_r_e_is_thermal_voltage_over_the_clip_current() -> None:
    """r_e = V_T/I (Horowitz & Hill sec. 2.3.2) at the clip current into the load:
    I_pk = (15 - 1.8) V/(0.22 + 8) ohm = 1.606 A; rtol 1e-9."""
    c = chain(PLAIN)
    model = push_pull_model(c.stages[0], analyse(c).envs[0])
    i_pk = 13.2 / 8.22
    assert model.conduction_a == pytest.approx(i_pk, rel=1e-12, abs=0)
    assert model.output.r_e == pytest.approx(
        constants.k * 300.0 / constants.e / i_pk, rel=1e-9, abs=0
    )


@pytest.mark.parametrize(
    ("stage", "drop"),
    [(PLAIN, 1.0 + 0.8), (DARLINGTON, 0.2 + 0.65 + 0.8)],
)
def test_swing_is_rail_less_saturation_and_vbe_less_emitter_resistor_drop(
    stage: dict[str, Any], drop: float
) -> None:
    """Horowitz & Hill 3rd ed. sec. 2.4.1: V_pk = V_rail - V_CE(sat) - V_BE(drivers) -
    I_pk R_E with I_pk = V_pk/R_L, i.e. (V_rail - drops) R_L/(R_L + R_E): +/-15 V, 0.22 ohm
    into 8 ohm; plain pair (V_CE(sat) 1 V + V_BE 0.8 V): 12.847 V; Darlington (driver
    V_CE(sat) 0.2 V + 0.65 V + 0.8 V). Through the stage's limit in the level budget: rtol
    1e-6."""
    node = node_levels(analyse(chain(stage)))[0]
    assert node.limited_by == "swing"
    assert node.clip_vpk == pytest.approx((15.0 - drop) * 8.0 / 8.22, rel=1e-6, abs=0)


def test_single_supply_stage_swings_about_half_the_supply_through_its_output_cap() -> None:
    """A single 24 V supply with an output capacitor works as +/-12 V about the mid-rail
    bias (Boylestad & Nashelsky, class B section): the emitters swing 12 - 1.8 V, and at the
    load the capacitor's reactance joins R_E in the divider, V = A |Z_L|/|Z_L + R_E + Z_C|
    at 1 kHz with 2200 uF; rtol 1e-6."""
    c = chain({**PLAIN, "output_cap": "2200u"}, rails=("24 V", None))
    node = node_levels(analyse(c))[0]
    z_c = 1.0 / (2j * np.pi * 1e3 * 2200e-6)
    assert node.clip_vpk == pytest.approx(10.2 * 8.0 / abs(8.0 + 0.22 + z_c), rel=1e-6, abs=0)


def test_peak_base_current_is_peak_load_current_over_beta_plus_one() -> None:
    """Horowitz & Hill 3rd ed. sec. 2.1.1: I_B = I_E/(beta + 1). The output stage's peak
    input (base) current at its clip level, as the hand-over check reads it from the
    cascade, against the load current at that level: rtol 1e-6."""
    driver = {
        "name": "drv",
        "kind": "opamp_gain",
        "topology": "non-inverting",
        "feedback": "10k",
        "ground_leg": "10k",
    }
    c = chain(PLAIN, before=[driver])
    budget = budget_from(analyse(c))
    handover = handovers(budget)[0]
    i_pk = handover.output_clip_vpk / 8.0
    assert handover.base_current_a == pytest.approx(i_pk / 51.0, rel=1e-6, abs=0)


def _device_power_by_integration(vcc: float, vpk: float, z: complex, i_q: float) -> float:
    """Average power of the upper device over one cycle of a sine: (V_cc - v) i while its
    current i = V_pk/|Z| sin(wt - phi) is positive, plus the idle V_cc I_q (scipy.integrate)."""
    phi = float(np.angle(z))

    def power(theta: float) -> float:
        current = vpk / abs(z) * np.sin(theta - phi)
        return (vcc - vpk * np.sin(theta)) * max(current, 0.0)

    value, _ = integrate.quad(power, 0.0, 2.0 * np.pi, points=[phi, phi + np.pi], limit=200)
    return value / (2.0 * np.pi) + vcc * i_q


def test_dissipation_figures_match_class_b_theory_and_a_cycle_integration() -> None:
    """Boylestad & Nashelsky, class B section: per device the worst is
    V_cc^2/(pi^2 R_L) + V_cc I_q at V_pk = 2 V_cc/pi; total supply power at V_pk is
    2 V_cc (V_pk/(pi R_L) + I_q). +/-15 V, 8 ohm, I_q 50 mA: 2.8497 + 0.75 W per device.
    Also the same numbers by integrating the instantaneous device power over a cycle
    (scipy.integrate.quad). rtol 1e-6."""
    c = chain({**PLAIN, **THERMAL})
    budget = budget_from(analyse(c))
    assert dissipation(budget) is not None
    d = dissipation(budget)
    worst = 15.0**2 / (np.pi**2 * 8.0) + 15.0 * 0.05
    assert d.worst_vpk == pytest.approx(2.0 * 15.0 / np.pi, rel=1e-9, abs=0)
    assert d.worst_device_w == pytest.approx(worst, rel=1e-9, abs=0)
    assert d.worst_device_w == pytest.approx(
        _device_power_by_integration(15.0, d.worst_vpk, 8.0, 0.05), rel=1e-6, abs=0
    )
    assert d.idle_device_w == pytest.approx(15.0 * 0.05, rel=1e-12, abs=0)
    clip = d.levels_vpk[-1]
    assert d.clip_supply_w == pytest.approx(
        2 * 15.0 * (clip / (np.pi * 8.0) + 0.05), rel=1e-9, abs=0
    )
    assert d.clip_device_w == pytest.approx(
        _device_power_by_integration(15.0, clip, 8.0, 0.05), rel=1e-6, abs=0
    )


def test_reactive_load_raises_the_dissipation_as_a_cycle_integration_says() -> None:
    """A load of phase 40 deg (the same 8 ohm magnitude): the device conducts for half of
    the current's cycle, so the supply current is unchanged while less power reaches the
    load (derived from the Boylestad & Nashelsky class B analysis); the worst level
    moves to 2 V_cc/(pi cos phi). Checked by scipy.integrate over the phase-shifted cycle:
    rtol 1e-6, and above the resistive figure."""
    c = chain({**PLAIN, **THERMAL, "load_phase": "40 deg"})
    budget = budget_from(analyse(c))
    assert dissipation(budget) is not None
    d = dissipation(budget)
    z = 8.0 * np.exp(1j * np.radians(40.0))
    assert d.worst_vpk == pytest.approx(
        2.0 * 15.0 / (np.pi * np.cos(np.radians(40.0))), rel=1e-9, abs=0
    )
    assert d.worst_device_w == pytest.approx(
        _device_power_by_integration(15.0, d.worst_vpk, z, 0.05), rel=1e-6, abs=0
    )
    assert d.worst_device_w > d.resistive_worst_device_w


def _two_watt_stage(**thermal: Any) -> Chain:
    """+/-12 V into 8 ohm with the quiescent current set so the worst device dissipation is
    exactly 2 W: V_cc^2/(pi^2 R_L) + V_cc I_q = 2 (Boylestad & Nashelsky, class B)."""
    i_q = (2.0 - 12.0**2 / (np.pi**2 * 8.0)) / 12.0
    return chain(
        {**PLAIN, "quiescent": f"{i_q!r} A", **thermal}, rails=("12 V", "12 V"), ambient="50 degC"
    )


def test_junction_temperature_2_w_through_5_1_10_k_per_w_at_50_degc_is_82_degc() -> None:
    """Thermal Ohm's law (Horowitz & Hill 3rd ed. sec. 9.4): 50 degC + 2 W x (5 + 1 + 10)
    K/W = 82 degC, each device on its own heatsink; the largest heatsink that holds 150 degC
    is (150 - 50)/2 - 6 = 44 K/W. Through the stage's dissipation: abs 1e-9 degC."""
    budget = budget_from(analyse(_two_watt_stage(**THERMAL)))
    assert dissipation(budget) is not None
    d = dissipation(budget)
    assert d.worst_device_w == pytest.approx(2.0, rel=1e-12, abs=0)
    assert d.junction_degc == pytest.approx(82.0, abs=1e-9)
    assert d.max_heatsink_k_per_w == pytest.approx(44.0, rel=1e-9, abs=0)


def test_shared_heatsink_carries_both_devices() -> None:
    """Both devices on one 10 K/W heatsink (Horowitz & Hill sec. 9.4, resistances in
    series, powers adding in the shared part): the sink runs at 50 + 4 W x 10 = 90 degC and
    each junction at 90 + 2 x 6 = 102 degC; the largest shared heatsink for 150 degC is
    (150 - 50 - 12)/4 = 22 K/W. abs 1e-9 degC."""
    budget = budget_from(analyse(_two_watt_stage(**THERMAL, heatsink_shared=True)))
    assert dissipation(budget) is not None
    d = dissipation(budget)
    assert d.heatsink_degc == pytest.approx(90.0, abs=1e-9)
    assert d.junction_degc == pytest.approx(102.0, abs=1e-9)
    assert d.max_heatsink_k_per_w == pytest.approx(22.0, rel=1e-9, abs=0)


def test_free_air_device_uses_theta_ja() -> None:
    """No heatsink: T_j = T_a + P theta_ja (Horowitz & Hill sec. 9.4): 50 + 2 x 40 = 130
    degC; abs 1e-9."""
    budget = budget_from(analyse(_two_watt_stage(theta_ja="40 K/W")))
    assert dissipation(budget) is not None
    assert dissipation(budget).junction_degc == pytest.approx(130.0, abs=1e-9)


def test_rail_current_is_quiescent_plus_peak_over_pi_per_rail() -> None:
    """Boylestad & Nashelsky, class B section: each rail delivers half-sine pulses of peak
    I_pk, average I_pk/pi, on top of the quiescent current; at the stage's clip into 8 ohm
    (I_pk = V_clip/R_L); rtol 1e-6."""
    c = chain(PLAIN)
    analysis = analyse(c)
    currents = stage_currents(analysis)[0]
    clip = node_levels(analysis)[0].clip_vpk
    assert clip is not None
    assert currents.idle_a == pytest.approx(0.05, rel=1e-12, abs=0)
    assert currents.clip_a == pytest.approx(0.05 + clip / 8.0 / np.pi, rel=1e-6, abs=0)


def test_cascade_with_follower_and_darlington_matches_the_whole_chain_network() -> None:
    """The cascade (Pozar, Microwave Engineering, 4th ed., sec. 4.4) against one nodal solve
    of the whole chain built by the same stage code: node voltages within rtol 1e-9."""
    buffer = {
        "name": "buf",
        "kind": "follower",
        "transistor": "small_npn",
        "emitter_resistor": "1k",
        "base_resistor": "100R",
        "output_cap": "47u",
    }
    c = chain(
        {**DARLINGTON, "output_cap": "2200u"},
        before=[buffer],
        source="600 ohm",
        transistors={**NO_RBB},
    )
    analysis = analyse(c)
    frequency = analysis.frequency
    positions: list[dict[str, Any]] = [{}, {}]
    solutions = [
        solve_stage(st, env, frequency, pos)
        for st, env, pos in zip(c.stages, analysis.envs, positions, strict=True)
    ]
    joined = cascade(solutions, 600.0, 8.0)
    net, outs = whole_chain_network(c.stages, analysis.envs, frequency, positions, 600.0, 8.0)
    rhs = np.zeros((net.size, 1))
    rhs[net.index(branch_ref("source")), 0] = 1.0
    x = net.solve(rhs)[..., 0]
    for k, out in enumerate(outs):
        np.testing.assert_allclose(joined.v_out[k], x[..., net.index(node_ref(out))], rtol=1e-9)


@pytest.mark.parametrize(
    ("change", "key"),
    [
        ({"lower": "out_n"}, "lower"),
        ({"upper": "out_p"}, "upper"),
        ({"driver_upper": "drv_p"}, "driver_upper"),
        ({"upper": "nope"}, "upper"),
    ],
)
def test_loader_rejects_wrong_or_unknown_devices(change: dict[str, str], key: str) -> None:
    """Contract (chain-format.md): a reference to an undefined part is a one-line error with
    the table path; a device of the wrong polarity for its half is one too."""
    with pytest.raises(ChainFileError) as caught:
        chain({**PLAIN, **change})
    assert f'stage[1] "out".{key}' in str(caught.value)


def test_load_phase_needs_an_angle_with_its_unit() -> None:
    """An angle field reads "30 deg" (or rad) and refuses a bare number or more than 90 deg."""
    for bad in ("30", "120 deg", "2 V"):
        with pytest.raises(ChainFileError):
            chain({**PLAIN, "load_phase": bad})
    c = chain({**PLAIN, "load_phase": "30 deg"})
    assert c.stages[0].number("load_phase") == pytest.approx(np.pi / 6.0, rel=1e-12, abs=0)
