"""Tests for the emitter-follower stage (chainbudget.stages.follower, stages.hybrid_pi).

Every figure is taken from the follower stage built into a chain (its hybrid-pi network in
the cascade, its limits through the level budget), not from the closed forms alone.

References (section numbers quoted from memory): Horowitz & Hill, The Art of Electronics,
3rd ed., ch. 2: sec. 2.2.3 (follower input and output impedance, the source impedance
divided by beta + 1; asymmetric clipping), sec. 2.2.5 (biasing), sec. 2.3.2 (r_e = V_T/I_E,
25 ohm at 1 mA); sec. 8.3 (bipolar voltage noise e_n^2 = 4kT(r_bb' + r_e/2)). Constants:
scipy.constants (SI 2019 exact k and q).
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pytest
from scipy import constants

from chainbudget.budget.analysis import analyse
from chainbudget.budget.levels import node_levels
from chainbudget.chainfile import Chain, ChainFileError, parse_chain
from chainbudget.network import Netlist
from chainbudget.stages import KINDS
from chainbudget.stages.follower import follower_bias

T_300K_DEGC = "26.85 degC"  # 300 K
# A transistor with r_bb' = 0, so the textbook impedance formulas apply without it.
IDEAL_BASE = {
    "polarity": "npn",
    "beta": 100,
    "vbe": "0.65 V",
    "vce_sat": "0.2 V",
    "base_resistance": "0 ohm",
}


def chain(
    follower: dict[str, Any],
    *,
    load: str = "600 ohm",
    source: str = "0 ohm",
    ambient: str = T_300K_DEGC,
    transistors: dict[str, Any] | None = None,
) -> Chain:
    """A source, one follower on +/-15 V split rails, and a load."""
    data = {
        "chain": {"title": "follower test", "ambient": ambient, "points_per_decade": 5},
        "source": {"level": "-10 dBV", "max_level": "0 dBV", "impedance": source},
        "load": {"impedance": load},
        "transistor": transistors or {"ideal_base": IDEAL_BASE},
        "supply": [
            {"name": "plus", "kind": "dc", "voltage": "15 V"},
            {"name": "minus", "kind": "dc", "voltage": "15 V"},
        ],
        "stage": [
            {"name": "buf", "kind": "follower", "positive": "plus", "negative": "minus", **follower}
        ],
    }
    return parse_chain(data, "test.toml")


def reference_values(c: Chain) -> tuple[complex, complex, complex]:
    """Input impedance, output impedance and stage gain at the reference frequency."""
    a = analyse(c)
    nominal = a.nominal
    z_in = 1.0 / complex(nominal.input_admittance[0])
    z_out = complex(nominal.output_impedance[0][0])
    gain = complex(nominal.v_out[0][0] / nominal.v_in[0][0])
    return z_in, z_out, gain


def test_emitter_resistance_is_25_85_ohm_at_1_ma_and_300_k() -> None:
    """Horowitz & Hill 3rd ed. sec. 2.3.2: r_e = V_T/I_E, 25.85 ohm at 1 mA and 300 K
    (V_T = kT/q with scipy.constants). Through the stage: a follower biased by a 1 mA sink
    at a 300 K ambient, driven from 0 ohm with r_bb' = 0, has Z_out = r_e exactly (the sink
    is open to the signal): rtol 1e-4 on 25.85, 1e-9 on V_T/I_E."""
    c = chain({"transistor": "ideal_base", "bias": "current", "current": "1 mA"})
    stage = c.stages[0]
    env = analyse(c).envs[0]
    bias = follower_bias(stage, env)
    assert bias.i_e == pytest.approx(1e-3, rel=1e-12, abs=0)
    assert bias.small_signal.r_e == pytest.approx(25.85, rel=1e-4, abs=0)
    vt = constants.k * 300.0 / constants.e
    _, z_out, _ = reference_values(c)
    assert z_out.real == pytest.approx(vt / 1e-3, rel=1e-9, abs=0)
    assert abs(z_out.imag) < 1e-9


@pytest.mark.parametrize(("source_ohm", "current_ma"), [(10e3, 2.0), (600.0, 10.0), (0.0, 0.5)])
def test_output_impedance_is_r_e_plus_source_and_rbb_over_beta_plus_one(
    source_ohm: float, current_ma: float
) -> None:
    """Horowitz & Hill 3rd ed. sec. 2.2.3: Z_out = r_e + (R_s + r_bb')/(beta + 1), here with
    the generic small_npn (beta 200, r_bb' 100 ohm) on a current sink, against the network
    model of the stage in the cascade: rtol 1e-7."""
    c = chain(
        {"transistor": "small_npn", "bias": "current", "current": f"{current_ma} mA"},
        source=f"{source_ohm} ohm",
        transistors={},
    )
    vt = constants.k * 300.0 / constants.e
    r_e = vt / (current_ma * 1e-3)
    expected = r_e + (source_ohm + 100.0) / 201.0
    _, z_out, _ = reference_values(c)
    assert z_out.real == pytest.approx(expected, rel=1e-7, abs=0)


def test_output_impedance_with_resistor_bias_has_the_emitter_resistor_in_parallel() -> None:
    """The same Z_out (Horowitz & Hill 3rd ed. sec. 2.2.3) in parallel with R_E = 1.5 kohm,
    the emitter resistor being a path to AC ground beside the transistor: rtol 1e-7."""
    c = chain(
        {"transistor": "small_npn", "emitter_resistor": "1k5"}, source="10 kohm", transistors={}
    )
    env = analyse(c).envs[0]
    r_e = follower_bias(c.stages[0], env).small_signal.r_e
    transistor = r_e + (10e3 + 100.0) / 201.0
    _, z_out, _ = reference_values(c)
    assert z_out.real == pytest.approx(transistor * 1500.0 / (transistor + 1500.0), rel=1e-7, abs=0)


@pytest.mark.parametrize("load_ohm", [600.0, 10e3, 150.0])
def test_input_impedance_is_beta_plus_one_times_r_e_plus_emitter_load(load_ohm: float) -> None:
    """Horowitz & Hill 3rd ed. sec. 2.2.3: Z_in = (beta + 1)(r_e + R_E || R_L), R_E 1.5 kohm,
    beta 100, r_bb' 0, from the chain's input admittance with the real load: rtol 1e-7."""
    c = chain(
        {"transistor": "ideal_base", "emitter_resistor": "1k5", "base_bias": "0.65 V"},
        load=f"{load_ohm} ohm",
    )
    env = analyse(c).envs[0]
    r_e = follower_bias(c.stages[0], env).small_signal.r_e
    z_e = 1500.0 * load_ohm / (1500.0 + load_ohm)
    z_in, _, gain = reference_values(c)
    assert z_in.real == pytest.approx(101.0 * (r_e + z_e), rel=1e-7, abs=0)
    # and the gain is the divider of r_e and the emitter load (sec. 2.3.2), from 0 ohm
    assert gain.real == pytest.approx(z_e / (r_e + z_e), rel=1e-7, abs=0)


def test_input_impedance_adds_rbb_and_base_resistor() -> None:
    """r_bb' (100 ohm) and the base stopper (220 ohm) are in series with the base:
    Z_in = R_b + r_bb' + (beta + 1)(r_e + R_E || R_L) (Horowitz & Hill sec. 2.2.3 with the
    base lead added): rtol 1e-7."""
    c = chain(
        {"transistor": "small_npn", "emitter_resistor": "1k5", "base_resistor": "220R"},
        transistors={},
    )
    env = analyse(c).envs[0]
    r_e = follower_bias(c.stages[0], env).small_signal.r_e
    z_in, _, _ = reference_values(c)
    assert z_in.real == pytest.approx(
        220.0 + 100.0 + 201.0 * (r_e + 1500.0 * 600.0 / 2100.0), rel=1e-7, abs=0
    )


def test_negative_swing_is_bias_current_times_emitter_resistor_parallel_load() -> None:
    """Horowitz & Hill 3rd ed. sec. 2.2.3-2.2.5: a follower on +/-15 V with R_E = 1.5 kohm to
    -15 V and its emitter at 0 V (I_Q = 10 mA) cuts off on the downswing at
    I_Q (R_E || R_L) = 10 mA x 428.6 ohm = 4.286 V peak into 600 ohm. Through the stage's
    limits in the level budget: rtol 1e-6, and the binding limit is the cut-off."""
    c = chain({"transistor": "ideal_base", "emitter_resistor": "1k5", "base_bias": "0.65 V"})
    node = node_levels(analyse(c))[0]
    assert node.limited_by == "cut-off"
    assert node.clip_vpk == pytest.approx(4.286, rel=1e-4, abs=0)
    assert node.clip_vpk == pytest.approx(0.010 * 1500.0 * 600.0 / 2100.0, rel=1e-6, abs=0)


def test_current_sink_follower_cuts_off_at_bias_current_times_load() -> None:
    """Horowitz & Hill 3rd ed. sec. 2.2.3: with a current sink only the load takes signal
    current, so the downswing stops at I_bias |Z_L|: 4 mA into 600 ohm gives 2.4 V peak;
    rtol 1e-6."""
    c = chain({"transistor": "ideal_base", "bias": "current", "current": "4 mA"})
    node = node_levels(analyse(c))[0]
    assert node.limited_by == "cut-off"
    assert node.clip_vpk == pytest.approx(2.4, rel=1e-6, abs=0)


def test_positive_swing_stops_v_ce_sat_below_the_collector_rail() -> None:
    """Horowitz & Hill 3rd ed. sec. 2.2.3: the upswing ends at V+ - V_CE(sat) - V_E. Base at
    5.65 V puts the emitter at 5 V (I_E = 20 V / 1.5 kohm = 13.3 mA, cut-off far off at
    13.3 mA x 1.48 kohm into 100 kohm): the clip is 15 - 0.2 - 5 = 9.8 V peak; rtol 1e-6."""
    c = chain(
        {"transistor": "ideal_base", "emitter_resistor": "1k5", "base_bias": "5.65 V"},
        load="100 kohm",
    )
    node = node_levels(analyse(c))[0]
    assert node.limited_by == "saturation"
    assert node.clip_vpk == pytest.approx(9.8, rel=1e-6, abs=0)


def test_bias_current_includes_the_base_resistor_drop() -> None:
    """Horowitz & Hill 3rd ed. sec. 2.2.5: the base current I_E/(beta + 1) drops across the
    base resistance, so I_E = (V_B - V_BE - V-)/(R_E + R_b/(beta + 1)). V_B = 0, V- = -15 V,
    V_BE 0.65 V, R_E 1 kohm, R_b 10 kohm, beta 100: I_E = 14.35/(1000 + 99.01) = 13.057 mA;
    rtol 1e-9."""
    c = chain({"transistor": "ideal_base", "emitter_resistor": "1k", "base_resistor": "10k"})
    bias = follower_bias(c.stages[0], analyse(c).envs[0])
    assert bias.i_e == pytest.approx(14.35 / (1000.0 + 10e3 / 101.0), rel=1e-9, abs=0)
    assert bias.emitter_v == pytest.approx(-15.0 + bias.i_e * 1000.0, rel=1e-9, abs=0)


def test_pnp_follower_is_the_mirror_image_of_the_npn_one() -> None:
    """A PNP follower with R_E to the positive rail is the NPN one mirrored through 0 V
    (Horowitz & Hill 3rd ed. sec. 2.2, complementary followers): same bias current, same
    clip level and impedances; rtol 1e-9."""
    pnp = dict(IDEAL_BASE, polarity="pnp")
    npn_chain = chain(
        {"transistor": "ideal_base", "emitter_resistor": "1k5", "base_bias": "0.65 V"}
    )
    pnp_chain = chain(
        {"transistor": "p", "emitter_resistor": "1k5", "base_bias": "-0.65 V"},
        transistors={"p": pnp},
    )
    n_bias = follower_bias(npn_chain.stages[0], analyse(npn_chain).envs[0])
    p_bias = follower_bias(pnp_chain.stages[0], analyse(pnp_chain).envs[0])
    assert p_bias.i_e == pytest.approx(n_bias.i_e, rel=1e-12, abs=0)
    assert p_bias.emitter_v == pytest.approx(-n_bias.emitter_v, abs=1e-12)
    n_node, p_node = node_levels(analyse(npn_chain))[0], node_levels(analyse(pnp_chain))[0]
    assert p_node.clip_vpk == pytest.approx(n_node.clip_vpk, rel=1e-9, abs=0)
    assert p_node.zout_ohm == pytest.approx(n_node.zout_ohm, rel=1e-9, abs=0)


def test_output_cap_forms_a_high_pass_with_the_load() -> None:
    """A series output capacitor C into R_L from the follower's Z_out is a first-order high
    pass with its corner at 1/(2 pi (R_L + Z_out) C) (Horowitz & Hill 3rd ed. sec. 1.7.1):
    10 uF into 600 ohm, current-sink bias. The network's gain there is 1/sqrt(2) of its
    mid-band value; rtol 1e-3."""
    c = chain(
        {"transistor": "ideal_base", "bias": "current", "current": "5 mA", "output_cap": "10u"}
    )
    stage, env = c.stages[0], analyse(c).envs[0]
    r_e = follower_bias(stage, env).small_signal.r_e
    corner = 1.0 / (2.0 * np.pi * (600.0 + r_e) * 10e-6)
    net = Netlist(np.array([corner, 1e4]))
    KINDS["follower"].build(net, stage, env, "in", "out", {})
    drive = net.voltage_source("in", "0", label="drive")
    net.resistor("out", "0", 600.0, label="load")
    rhs = np.zeros((net.size, 1))
    rhs[net.index(drive), 0] = 1.0
    x = net.solve(rhs)[..., 0]
    v_out = np.abs(x[:, net.nodes["out"]])
    assert v_out[0] / v_out[1] == pytest.approx(1.0 / np.sqrt(2.0), rel=1e-3, abs=0)


def test_noise_sources_are_shot_noise_of_both_currents_and_rbb_thermal_noise() -> None:
    """The hybrid-pi noise model (van der Ziel 1986; Horowitz & Hill 3rd ed. sec. 8.3): shot
    noise 2qI_B and 2qI_C, thermal 4kT r_bb'. With the base grounded and a current sink the
    output noise is the transistor's input-referred e_n^2 = 4kT(r_bb' + r_e/2) plus the base
    shot noise through r_bb', 2qI_B r_bb'^2; rtol 2e-3."""
    c = chain({"transistor": "small_npn", "bias": "current", "current": "1 mA"}, transistors={})
    stage, env = c.stages[0], analyse(c).envs[0]
    ss = follower_bias(stage, env).small_signal
    net = Netlist(np.array([1e3]))
    KINDS["follower"].build(net, stage, env, "in", "out", {})
    net.voltage_source("in", "0", label="short")
    psd = {s.label: float(s.psd[0]) for s in net.noise}
    k, q, t = constants.k, constants.e, 300.0
    assert psd["buf.q.shot_b"] == pytest.approx(2 * q * ss.i_b, rel=1e-12, abs=0)
    assert psd["buf.q.shot_c"] == pytest.approx(2 * q * ss.i_c, rel=1e-12, abs=0)
    assert psd["buf.q.rbb"] == pytest.approx(4 * k * t / 100.0, rel=1e-12, abs=0)
    _, transfers = net.adjoint_transfer("out")
    total = sum(
        float(np.abs(h[0]) ** 2) * s.psd[0] for h, s in zip(transfers, net.noise, strict=True)
    )
    expected = 4 * k * t * (100.0 + ss.r_e / 2.0) + 2 * q * ss.i_b * 100.0**2
    assert total == pytest.approx(expected, rel=2e-3, abs=0)


@pytest.mark.parametrize(
    ("follower", "key", "message"),
    [
        ({"transistor": "smal_npn", "emitter_resistor": "1k"}, "transistor", "did you mean"),
        ({"transistor": "small_npn"}, "emitter_resistor", "missing"),
        ({"transistor": "small_npn", "bias": "current"}, "current", "missing"),
        ({"emitter_resistor": "1k", "input_cap": "1u"}, "bias_resistor", "missing"),
    ],
)
def test_loader_rejects_bad_follower_tables(
    follower: dict[str, Any], key: str, message: str
) -> None:
    """Contract (chain-format.md, Values): an undefined part or a missing required field is a
    one-line error naming the table path."""
    with pytest.raises(ChainFileError) as caught:
        chain(follower, transistors={})
    assert f'stage[1] "buf".{key}' in str(caught.value)
    assert message in str(caught.value)


def test_dc_coupled_follower_swings_from_the_dc_its_driver_puts_on_its_base() -> None:
    """Horowitz & Hill 3rd ed. sec. 2.2.3 and 2.2.5: the emitter sits V_BE + I_B R_b below
    the base, and the upswing ends at V+ - V_CE(sat) - V_E. The base is driven DC-coupled
    by an op-amp stage held at 5 V DC (a 5 V bias point and a DC gain of one through its
    ground-leg capacitor), so the emitter rests at 5 - 0.65 - (2 mA/101) x 1 kohm and the
    clip is 15 - 0.2 - V_E: the operating point the DC check finds, not the follower's own
    base_bias of 0 V (which would put the emitter at -0.67 V and the clip at 15.47 V);
    rtol 1e-9."""
    data = {
        "chain": {"title": "driven follower", "ambient": T_300K_DEGC, "points_per_decade": 5},
        "source": {"level": "-10 dBV", "max_level": "0 dBV", "impedance": "0 ohm"},
        "load": {"impedance": "100 kohm"},
        "transistor": {"ideal_base": IDEAL_BASE},
        "opamp": {
            "wide": {
                "gbw": "100 gigahertz",
                "slew_rate": "1000 V/us",
                "swing_margin": "0 V",
                "output_current": "1 A",
            }
        },
        "supply": [
            {"name": "plus", "kind": "dc", "voltage": "15 V"},
            {"name": "minus", "kind": "dc", "voltage": "15 V"},
        ],
        "stage": [
            {
                "name": "drv",
                "kind": "opamp_gain",
                "topology": "non-inverting",
                "feedback": "10k",
                "ground_leg": "10k",
                "ground_cap": "1000u",
                "input_cap": "10u",
                "bias_resistor": "100k",
                "bias": "5 V",
                "opamp": "wide",
                "positive": "plus",
                "negative": "minus",
            },
            {
                "name": "buf",
                "kind": "follower",
                "transistor": "ideal_base",
                "bias": "current",
                "current": "2 mA",
                "compliance": "0.5 V",
                "base_resistor": "1k",
                "positive": "plus",
                "negative": "minus",
            },
        ],
    }
    analysis = analyse(parse_chain(data, "test.toml"))
    emitter = 5.0 - 0.65 - 2e-3 / 101.0 * 1e3
    bias = follower_bias(analysis.chain.stages[1], analysis.envs[1])
    assert bias.emitter_v == pytest.approx(emitter, rel=1e-9, abs=0)
    node = node_levels(analysis)[1]
    assert node.limited_by == "saturation"
    assert node.clip_vpk == pytest.approx(15.0 - 0.2 - emitter, rel=1e-9, abs=0)
