"""The noise budget: cascade against the whole-chain network, against textbook noise sums,
integration, figures, findings and views.

Textbook formulas and section numbers are quoted from memory. The thermal-noise constant
(4kTR against published values) is tested in tests/test_spectrum.py and the A-weighting
against IEC 61672-1 in tests/test_weighting.py; they are reused here, not re-tested.
"""

from __future__ import annotations

import json
import math
import tomllib
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from scipy import integrate
from scipy.constants import k as BOLTZMANN
from typer.testing import CliRunner

from chainbudget.budget import budget_from
from chainbudget.budget.analysis import analyse, positions_as_set
from chainbudget.budget.noise import (
    SOURCE_STAGE,
    NoiseBudget,
    noise_budget,
    noise_spectra,
)
from chainbudget.cascade import whole_chain_network
from chainbudget.chainfile import Chain, load_chain, parse_chain
from chainbudget.cli import app
from chainbudget.findings import findings
from chainbudget.loudspeaker import load_impedance
from chainbudget.thresholds import HISS_SPL_A_LIMIT_DB, SNR_MIN_DB
from chainbudget.weighting import a_weighting

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((ROOT / "chains").glob("*.toml"))
DEMO = ROOT / "chains" / "workshop_radio_late_noise.toml"
T_300K_DEGC = "26.85 degC"  # 300 K
BAND = (20.0, 20_000.0)
DBU = math.sqrt(0.6)


def chain_of(text: str, name: str = "inline.toml") -> Chain:
    return parse_chain(tomllib.loads(text), name)


def budget_of(chain: Chain) -> NoiseBudget:
    noise = noise_budget(analyse(chain))
    return noise


HEAD = f"""
[chain]
band = ["20 Hz", "20 kHz"]
reference = "1 kHz"
ambient = "{T_300K_DEGC}"
[[supply]]
name = "rail"
kind = "dc"
voltage = "30 V"
"""

# The textbook op-amp: e_n 5 nV/rtHz, i_n 1 pA/rtHz (values of the worked check),
# a near-ideal loop so the closed-loop gain is 1 + Rf/Rg to better than 1e-4.
TEXTBOOK_OPAMP = """
[opamp.textbook]
gbw = "100 MHz"
slew_rate = "20 V/us"
noise_voltage = "5 nV/rtHz"
noise_current = "1 pA/rtHz"
open_loop_gain = "140 dB"
output_resistance = "0 ohm"
"""


def textbook_chain(corner: str | None = None) -> Chain:
    corner_line = f'noise_corner = "{corner}"' if corner else ""
    return chain_of(
        HEAD
        + TEXTBOOK_OPAMP
        + corner_line
        + """
[source]
level = "10 mV"
impedance = "1 kohm"
[load]
impedance = "10 kohm"
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "9k"
ground_leg = "1k"
opamp = "textbook"
"""
    )


def textbook_input_psd() -> float:
    """e_ni^2 = e_n^2 + (i_n R_s)^2 + (i_n R_p)^2 + 4kT R_s + 4kT R_p with R_p = Rf || Rg
    (the E_n-I_n amplifier noise model: Motchenbacher & Connelly, Low-Noise Electronic
    System Design, 1993, ch. 2; Horowitz & Hill, The Art of Electronics, 3rd ed., ch. 8)."""
    e_n, i_n, r_s = 5e-9, 1e-12, 1e3
    r_p = 9e3 * 1e3 / (9e3 + 1e3)
    four_kt = 4.0 * BOLTZMANN * 300.0
    return e_n**2 + (i_n * r_s) ** 2 + (i_n * r_p) ** 2 + four_kt * (r_s + r_p)


# --- the op-amp stage against the textbook quadrature sum ---------------------------------


def test_opamp_stage_input_noise_density_is_the_textbook_quadrature_sum() -> None:
    """Spot input-referred density at 1 kHz against sqrt(e_n^2 + (i_n Rs)^2 + (i_n Rf||Rg)^2
    + 4kT Rs + 4kT Rf||Rg) = 7.64 nV/rtHz at 300 K (textbook_input_psd); rtol 1e-3."""
    noise = budget_of(textbook_chain())
    spot = next(s for s in noise.spectrum if s.frequency_hz == 1000.0)
    expected = math.sqrt(textbook_input_psd())
    assert expected == pytest.approx(7.64e-9, rel=2e-3, abs=0)
    assert spot.input_density_v_rthz == pytest.approx(expected, rel=1e-3, abs=0)


def test_opamp_stage_input_noise_over_the_band_is_density_times_root_bandwidth() -> None:
    """White noise integrates to e_ni^2 (f_hi - f_lo) (definition of a PSD); rtol 1e-3."""
    noise = budget_of(textbook_chain())
    expected = math.sqrt(textbook_input_psd() * (BAND[1] - BAND[0]))
    assert noise.input_noise_vrms == pytest.approx(expected, rel=1e-3, abs=0)
    assert noise.ein_dbu == pytest.approx(20 * math.log10(expected / DBU), abs=0.01)


def test_opamp_stage_input_noise_with_a_flicker_corner_matches_the_closed_form() -> None:
    """e_n(f)^2 = e_n^2 (1 + f_c/f) integrates to e_n^2 [(f_hi - f_lo) + f_c ln(f_hi/f_lo)]
    (Horowitz & Hill 3rd ed. sec. 8.1.3); the other terms stay white. f_c = 200 Hz;
    rtol 1e-3."""
    noise = budget_of(textbook_chain("200 Hz"))
    white = textbook_input_psd() * (BAND[1] - BAND[0])
    flicker = (5e-9) ** 2 * 200.0 * math.log(BAND[1] / BAND[0])
    assert noise.input_noise_vrms == pytest.approx(math.sqrt(white + flicker), rel=1e-3, abs=0)


def test_a_weighted_input_noise_of_white_noise_matches_scipy_quad() -> None:
    """A-weighted white noise: e_ni^2 * integral of |A(f)|^2 over the band, the integral by
    scipy.integrate.quad (the weighting itself is checked against IEC 61672-1 in
    test_weighting.py); rtol 1e-3."""
    noise = budget_of(textbook_chain())
    band_a, _ = integrate.quad(lambda f: float(a_weighting(f)) ** 2, *BAND, limit=200)
    expected = math.sqrt(textbook_input_psd() * band_a)
    assert noise.input_noise_a_vrms == pytest.approx(expected, rel=1e-3, abs=0)


# --- passive networks and blocks -------------------------------------------------------------


def test_volume_pot_node_noise_is_nyquist_of_its_thevenin_impedance() -> None:
    """Source 2k2 and a linear 10k pot at 0.4, all at 300 K, loaded by a noiseless 10k: the
    wiper's noise is 4kT Re(Z_th) |R_L/(Z_th + R_L)|^2 (Nyquist, Phys. Rev. 32, 110 (1928);
    the load makes no noise), white over the band; rtol 1e-5."""
    chain = chain_of(
        HEAD
        + """
[source]
level = "100 mV"
impedance = "2k2"
[load]
impedance = "10 kohm"
[[stage]]
name = "vol"
kind = "volume"
pot = "10k"
taper = "linear"
position = 0.4
"""
    )
    noise = budget_of(chain)
    end = 1e-6 * 10e3
    lower, upper = 4e3 + end, 6e3 + end + 2.2e3
    z_th = lower * upper / (lower + upper)
    psd = 4.0 * BOLTZMANN * 300.0 * z_th * (10e3 / (z_th + 10e3)) ** 2
    assert noise.nodes[0].noise_vrms == pytest.approx(
        math.sqrt(psd * (BAND[1] - BAND[0])), rel=1e-5, abs=0
    )
    assert noise.nodes[0].density_v_rthz == pytest.approx(math.sqrt(psd), rel=1e-6, abs=0)


def block_chain(e_n: str, source: str = "10 kohm") -> Chain:
    return chain_of(
        HEAD
        + f"""
[source]
level = "10 mV"
impedance = "{source}"
[load]
impedance = "10 kohm"
sensitivity = "90 dB"
[[stage]]
name = "box"
kind = "block"
gain = "20 dB"
input_impedance = "47 kohm"
output_impedance = "100 ohm"
noise = "{e_n}"
"""
    )


def test_block_noise_figure_is_one_plus_en2_over_4ktrs_at_its_terminals() -> None:
    """Noise factor F = 1 + e_n^2 / (4kT R_s d^2), d = Z_in/(Z_in + R_s) the divider that
    attenuates the source's noise but not the block's own input-referred noise (Friis,
    Proc. IRE 32 (1944) 419: F = total output noise over that due to the source); 3 nV/rtHz,
    10 kohm, 47 kohm; abs 1e-3 dB."""
    noise = budget_of(block_chain("3 nV/rtHz"))
    d = 47e3 / 57e3
    factor = 1.0 + (3e-9) ** 2 / (4.0 * BOLTZMANN * 300.0 * 10e3 * d**2)
    assert noise.noise_figure_db == pytest.approx(10.0 * math.log10(factor), abs=1e-3)
    input_psd = 4.0 * BOLTZMANN * 300.0 * 10e3 + (3e-9 / d) ** 2
    ein = 20.0 * math.log10(math.sqrt(input_psd * (BAND[1] - BAND[0])) / DBU)
    assert noise.ein_dbu == pytest.approx(ein, abs=1e-3)


def test_a_noiseless_block_has_a_zero_db_noise_figure_and_only_the_source_contributes() -> None:
    """Block impedances are noiseless (the contract's block semantics): with zero noise only
    the source's 4kT R_s remains, so F = 1 exactly (Friis' definition); abs 1e-9 dB."""
    noise = budget_of(block_chain("0 nV/rtHz"))
    assert noise.noise_figure_db == pytest.approx(0.0, abs=1e-9)
    assert [c.stage for c in noise.contributors] == [SOURCE_STAGE]
    assert noise.contributors[0].share == pytest.approx(1.0, rel=1e-6, abs=0)


def test_a_zero_source_impedance_has_no_noise_figure_and_no_source_noise() -> None:
    """An ideal voltage source has no thermal noise, so the noise figure is undefined."""
    noise = budget_of(block_chain("3 nV/rtHz", source="0 ohm"))
    assert noise.noise_figure_db is None
    assert all(c.stage != SOURCE_STAGE for c in noise.contributors)
    assert noise.input_noise_vrms == pytest.approx(
        3e-9 * math.sqrt(BAND[1] - BAND[0]), rel=1e-4, abs=0
    )


def test_hiss_spl_follows_the_definition_of_sensitivity() -> None:
    """Sensitivity is the SPL at 1 m for 1 W; a power P gives sensitivity + 10 log10(P/1 W)
    (the definition, inverse-square free field); P = V_A^2 / Z_load; abs 1e-9 dB."""
    noise = budget_of(block_chain("3 nV/rtHz"))
    power = noise.output.noise_a_vrms**2 / 10e3
    assert noise.hiss_spl_a_db == pytest.approx(90.0 + 10.0 * math.log10(power), abs=1e-9)


def test_a_stage_named_source_is_kept_apart_from_the_source_impedance() -> None:
    """Regression guard: shares are grouped by stage position, not by name. The block's
    share is e_n^2 / (e_n^2 + 4kT R_s d^2) (white noise, both through the same gain);
    rtol 1e-3."""
    text = block_chain("3 nV/rtHz")
    chain = replace(text, stages=(replace(text.stages[0], name="source"),))
    shares = {(s.stage, s.stage_index): s.share for s in budget_of(chain).stage_shares}
    assert set(shares) == {("source", -1), ("source", 0)}
    source_at_terminals = 4.0 * BOLTZMANN * 300.0 * 10e3 * (47e3 / 57e3) ** 2
    expected = (3e-9) ** 2 / ((3e-9) ** 2 + source_at_terminals)
    assert shares[("source", 0)] == pytest.approx(expected, rel=1e-3, abs=0)


# --- the cascade against one network of the whole chain ------------------------------------

# A volume pot on a high-value track driving an op-amp with a large input current noise:
# that i_n flows back into the wiper, so the noise at the volume node depends on the stage
# after it (a check that the cascade carries noise upstream as well as down).
BACKWARD_CHAIN = (
    HEAD
    + """
[opamp.noisy_input]
gbw = "10 MHz"
slew_rate = "10 V/us"
noise_voltage = "10 nV/rtHz"
noise_current = "5 pA/rtHz"
[source]
level = "100 mV"
impedance = "1 kohm"
[load]
impedance = "10 kohm"
[[stage]]
name = "vol"
kind = "volume"
pot = "100k"
taper = "linear"
position = 0.5
[[stage]]
name = "gain"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "22k"
ground_leg = "2k2"
opamp = "noisy_input"
"""
)


def whole_chain_node_psd(chain: Chain) -> np.ndarray:
    """Noise PSD at every stage output from one netlist of the whole chain, its source
    resistance given its 4kT/R current generator (a piezo's capacitance or a pickup's
    inductance stamped as lossless parts in series after it): an independent route to the
    same figure."""
    a = analyse(chain)
    net, outs = whole_chain_network(
        chain.stages,
        a.envs,
        a.frequency,
        positions_as_set(chain.stages),
        chain.source.impedance,
        load_impedance(chain.load, a.frequency),
        source_capacitance=chain.source.capacitance,
        source_inductance=chain.source.inductance,
    )
    if chain.source.impedance > 0.0:
        psd = 4.0 * BOLTZMANN * a.temperature_k / chain.source.impedance
        reactive = chain.source.capacitance is not None or chain.source.inductance is not None
        after = "src.0" if reactive else "n0"  # the resistor's far end (whole_chain_network)
        net.current_noise("src", after, psd, "source", "source", "impedance", "thermal")
    rows = []
    for out in outs:
        _, transfers = net.adjoint_transfer(out)
        rows.append(sum(s.psd * np.abs(h) ** 2 for s, h in zip(net.noise, transfers, strict=True)))
    return np.array(rows)


@pytest.mark.parametrize(
    "chain",
    [
        *(load_chain(p) for p in EXAMPLES),
        chain_of(BACKWARD_CHAIN, "backward.toml"),
        # a magnetic pickup, 1 kohm + 2 H in series (demo values), and a piezo with both
        chain_of(
            BACKWARD_CHAIN.replace(
                'impedance = "1 kohm"', 'impedance = "1 kohm"\ninductance = "2 H"'
            ),
            "pickup.toml",
        ),
        chain_of(
            BACKWARD_CHAIN.replace(
                'impedance = "1 kohm"',
                'impedance = "1 kohm"\ninductance = "2 H"\ncapacitance = "470 pF"',
            ),
            "series_lc.toml",
        ),
    ],
    ids=[*(p.stem for p in EXAMPLES), "backward", "pickup", "series_lc"],
)
def test_cascade_noise_equals_the_whole_chain_network(chain: Chain) -> None:
    """Per-stage adjoint transfers carried through the cascade against the adjoint solve of
    cascade.whole_chain_network, at every node and frequency; rtol 1e-6."""
    a = analyse(chain)
    spectra = noise_spectra(chain, a.envs, a.frequency, a.nominal, a.temperature_k, a.band_slice)
    np.testing.assert_allclose(spectra.node_psd, whole_chain_node_psd(chain), rtol=1e-6)


def test_input_current_noise_of_the_next_stage_shows_at_the_volume_wiper() -> None:
    """At the wiper: 4kT Re(Z_th) + (i_n |Z_th|)^2, the op-amp's i_n+ flowing into the
    wiper's Thevenin impedance (superposition; the + input itself draws nothing); the i_n
    term is 30 times the thermal one here, so a cascade carrying noise only downstream
    would be far off; rtol 1e-3."""
    noise = budget_of(chain_of(BACKWARD_CHAIN))
    end = 1e-6 * 100e3
    lower, upper = 50e3 + end, 50e3 + end + 1e3
    z_th = lower * upper / (lower + upper)
    thermal = 4.0 * BOLTZMANN * 300.0 * z_th
    current = (5e-12 * z_th) ** 2
    assert current > 30 * thermal
    assert noise.nodes[0].density_v_rthz == pytest.approx(
        math.sqrt(thermal + current), rel=1e-3, abs=0
    )


# --- integration grid -------------------------------------------------------------------------


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_noise_figures_do_not_depend_on_the_point_count(path: Path) -> None:
    """20 against 80 points per decade: every band figure within 0.05 dB (the issue's
    requirement; the rule's own error is far smaller, see spectrum.integrate_psd)."""
    chain = load_chain(path)

    def figures(points: int) -> np.ndarray:
        c = replace(chain, settings=replace(chain.settings, points_per_decade=points))
        n = budget_of(c)
        values = [v for node in n.nodes for v in (node.noise_vrms, node.noise_a_vrms)]
        values += [n.input_noise_vrms or 1.0, n.input_noise_a_vrms or 1.0]
        return 20.0 * np.log10(np.array(values))

    assert np.max(np.abs(figures(20) - figures(80))) < 0.05


# --- shares, ranking ---------------------------------------------------------------------------


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_shares_add_up_and_contributors_are_ranked(path: Path) -> None:
    """Uncorrelated sources: their powers add, so shares sum to 1 and the rms contributions
    add in quadrature to the output noise; rtol 1e-9."""
    noise = budget_of(load_chain(path))
    shares = [c.share for c in noise.contributors]
    assert sum(shares) == pytest.approx(1.0, rel=1e-9, abs=0)
    assert sum(s.share for s in noise.stage_shares) == pytest.approx(1.0, rel=1e-9, abs=0)
    assert shares == sorted(shares, reverse=True)
    total = math.sqrt(sum(c.noise_vrms**2 for c in noise.contributors))
    assert total == pytest.approx(noise.output.noise_vrms, rel=1e-9, abs=0)
    assert len(noise.top_contributors) == min(10, len(noise.contributors))


# --- findings ------------------------------------------------------------------------------------


def codes(chain: Chain) -> dict[str, str | None]:
    return {f.code: f.stage for f in findings(budget_from(analyse(chain)))}


def test_a_chain_whose_noise_is_set_late_produces_that_finding() -> None:
    """The workshop-radio demo: a quiet buffer, then a 100k volume pot and a gain stage on a
    20 nV/rtHz op-amp, which gives most of the output noise power."""
    chain = load_chain(DEMO)
    noise = budget_of(chain)
    shares = {s.stage: s.share for s in noise.stage_shares}
    assert shares["makeup"] > 0.5 > shares["buffer"]
    assert codes(chain).get("noise-set-late") == "makeup"


def test_a_chain_whose_first_stage_dominates_has_no_late_stage_finding() -> None:
    """The opposite case (the rule can fail): a noisy high-impedance first stage followed
    by a quiet block."""
    chain = chain_of(
        HEAD
        + """
[source]
level = "100 mV"
impedance = "100 ohm"
[load]
impedance = "10 kohm"
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "100k"
ground_leg = "10k"
opamp = "legacy_bipolar"
[[stage]]
name = "post"
kind = "block"
gain = "6 dB"
input_impedance = "10 kohm"
output_impedance = "100 ohm"
noise = "1 nV/rtHz"
"""
    )
    shares = {s.stage: s.share for s in budget_of(chain).stage_shares}
    assert shares["pre"] > shares["post"]
    assert "noise-set-late" not in codes(chain)


def test_volume_ahead_of_the_gain_costs_the_snr_of_the_chain_built_the_other_way() -> None:
    """The placement cost equals the SNR difference of the demo and the same chain written
    with the volume after the make-up gain (solved from its own file), and the finding
    fires; abs 1e-9 dB."""
    chain = load_chain(DEMO)
    noise = budget_of(chain)
    (cost,) = noise.placement
    assert (cost.stage, cost.main_stage) == ("volume", "makeup")
    text = DEMO.read_text(encoding="utf-8")
    blocks = text.split("[[stage]]")
    moved_text = "[[stage]]".join([blocks[0], blocks[1], blocks[3], blocks[2], blocks[4]])
    moved = budget_of(chain_of(moved_text, "moved.toml"))
    assert cost.snr_db == pytest.approx(noise.output.snr_db, abs=1e-9)
    assert cost.moved_snr_db == pytest.approx(moved.output.snr_db, abs=1e-9)
    assert cost.lift_db > 3.0  # restates the project's own threshold (not an outside check)
    assert codes(chain).get("noise-attenuator-before-gain") == "volume"


def loud_chain(noise: str, level: str) -> Chain:
    return chain_of(
        HEAD
        + f"""
[source]
level = "{level}"
impedance = "600 ohm"
[load]
impedance = "8 ohm"
sensitivity = "92 dB"
[[stage]]
name = "amp"
kind = "block"
gain = "32 dB"
input_impedance = "20 kohm"
output_impedance = "0.05 ohm"
noise = "{noise}"
"""
    )


def test_hiss_above_the_threshold_is_a_warning_and_below_it_is_not() -> None:
    """400 nV/rtHz into 32 dB at 92 dB/W/m gives about 28 dB SPL(A); 5 nV/rtHz about -9 dB.
    The 20 dB SPL(A) limit is the project's own choice (HISS_SPL_A_LIMIT_DB, common
    practice, no source): this test shows only that the finding follows it, either side."""
    noisy, quiet = loud_chain("400 nV/rtHz", "0 dBV"), loud_chain("5 nV/rtHz", "0 dBV")
    # restates the project's own threshold (not an outside check)
    assert (budget_of(noisy).hiss_spl_a_db or 0.0) > HISS_SPL_A_LIMIT_DB
    assert (budget_of(quiet).hiss_spl_a_db or 99.0) < HISS_SPL_A_LIMIT_DB
    assert "hiss-audible" in codes(noisy)
    assert "hiss-audible" not in codes(quiet)


def test_snr_below_the_threshold_is_a_warning_and_above_it_is_not() -> None:
    """-60 dBV into 200 nV/rtHz gives about 31 dB, -10 dBV about 81 dB. The 60 dB limit is the
    project's own choice (SNR_MIN_DB, common practice, no source): this test shows only that
    the finding follows it, either side."""
    low, fine = loud_chain("200 nV/rtHz", "-60 dBV"), loud_chain("200 nV/rtHz", "-10 dBV")
    # restates the project's own threshold (not an outside check)
    assert (budget_of(low).output.snr_db or 99.0) < SNR_MIN_DB
    assert (budget_of(fine).output.snr_db or 0.0) > SNR_MIN_DB
    assert "snr-low" in codes(low)
    assert "snr-low" not in codes(fine)


# --- views ----------------------------------------------------------------------------------------

runner = CliRunner()
NOISE_NODE_KEYS = {"noise_vrms", "noise_a_vrms", "snr_db"}
NOISE_TOP_KEYS = {
    "input_noise_vrms",
    "input_noise_a_vrms",
    "ein_dbu",
    "noise_figure_db",
    "dynamic_range_db",
    "hiss_spl_a_db",
    "noise_sources",
}


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_json_carries_the_noise_keys(path: Path) -> None:
    result = runner.invoke(app, ["check", str(path), "--format", "json"])
    data = json.loads(result.stdout)
    assert NOISE_TOP_KEYS <= data.keys()
    for node in data["nodes"]:
        assert NOISE_NODE_KEYS <= node.keys()
        assert node["noise_vrms"] > 0.0
    sources = data["noise_sources"]
    assert 1 <= len(sources) <= 10
    assert {"stage", "part", "kind", "share"} <= sources[0].keys()
    assert data["input_noise_vrms"] > 0.0


def test_table_shows_the_noise_figures_and_detail_lists_spectral_contributors() -> None:
    plain = runner.invoke(app, ["check", str(DEMO)])
    assert "Largest noise sources at the output" in plain.output
    assert "equivalent input noise" in plain.output
    assert "Noise at 1 kHz" not in plain.output
    detail = runner.invoke(app, ["check", str(DEMO), "--noise-detail"])
    for label in ("Noise at 100 Hz", "Noise at 1 kHz", "Noise at 10 kHz"):
        assert label in detail.output


LOOP_AFTER_VOLUME = (
    HEAD
    + """
[source]
level = "100 mV"
impedance = "10k"
[load]
impedance = "10k"
[[stage]]
name = "volume"
kind = "volume"
pot = "10k"
taper = "log"
position = 0.5
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "100k"
ground_leg = "2k2"
feedback_from = "buf"
opamp = "legacy_bipolar"
positive = "rail"
[[stage]]
name = "buf"
kind = "block"
gain = "0 dB"
input_impedance = "20 kohm"
output_impedance = "100 ohm"
noise = "20 nV/rtHz"
"""
)
POST = """
[[stage]]
name = "post"
kind = "block"
gain = "0 dB"
input_impedance = "10 kohm"
output_impedance = "100 ohm"
noise = "5 nV/rtHz"
"""


@pytest.mark.parametrize("swept", [True, False], ids=["volume-swept", "volume-fixed"])
def test_placement_reuses_the_solved_sections_and_equals_the_chain_built_moved(
    swept: bool, monkeypatch: pytest.MonkeyPatch
) -> None:
    """The what-if joins the sections the analysis solved in the new order (a loop section
    renumbered behind the moved pot) instead of solving the chain again: its moved SNR
    equals that of the chain written with the volume after the loop, solved from its own
    text, abs 1e-9 dB; nothing is solved again (the solve is made to fail)."""
    volume = "" if swept else "sweep = false\n"
    text = LOOP_AFTER_VOLUME.replace("position = 0.5\n", f"position = 0.5\n{volume}") + POST
    chain = chain_of(text)
    analysis = analyse(chain)
    spectra = noise_spectra(
        chain,
        analysis.envs,
        analysis.frequency,
        analysis.nominal,
        analysis.temperature_k,
        analysis.band_slice,
    )
    from chainbudget.budget import noise_placement

    def no_solve(*_args: object, **_kwargs: object) -> None:
        raise AssertionError("the moved chain was solved again")

    monkeypatch.setattr(noise_placement, "solve_chain", no_solve)
    (cost,) = noise_placement.placement_costs(analysis, spectra)
    assert (cost.stage, cost.main_stage) == ("volume", "pre")
    blocks = text.split("[[stage]]")
    moved_text = "[[stage]]".join([blocks[0], blocks[2], blocks[3], blocks[1], blocks[4]])
    monkeypatch.undo()
    moved = budget_of(chain_of(moved_text, "moved.toml"))
    assert cost.moved_snr_db == pytest.approx(moved.output.snr_db, rel=0, abs=1e-9)
    assert cost.lift_db > 10.0  # a 10k pot's noise ahead of 33 dB of gain, not after it
