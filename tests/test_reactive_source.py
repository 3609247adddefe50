"""Reactive sources: ``[source] capacitance`` (a piezo element) and ``inductance`` (a
magnetic pickup) in series with ``impedance``.

Each check names where its expected value comes from. Book sections are quoted from
memory.
"""

from __future__ import annotations

import math
import subprocess
import sys
import tomllib
from pathlib import Path

import numpy as np
import pytest
from scipy import integrate
from scipy.constants import k as BOLTZMANN
from test_offset import LOOP, offset_of
from typer.testing import CliRunner

from chainbudget.budget import compute
from chainbudget.budget.analysis import analyse
from chainbudget.budget.noise_spectra import noise_spectra
from chainbudget.budget.response import Setting, chain_response
from chainbudget.chainfile import Chain, load_chain, parse_chain
from chainbudget.cli import app
from chainbudget.network import GMIN, POT_END_FRACTION, SOURCE_FLOOR_OHM
from chainbudget.report.json_view import report_json
from chainbudget.source_network import source_impedance

ROOT = Path(__file__).resolve().parents[1]
T_KELVIN = 300.0
T_DEGC = "26.85 degC"  # 300 K


def chain_of(text: str, name: str = "reactive.toml") -> Chain:
    return parse_chain(tomllib.loads(text), name)


def db(ratio: float | np.ndarray) -> np.ndarray:
    return np.asarray(10.0 * np.log10(ratio), dtype=float)


# --- a piezo's thermal noise: kT/C ----------------------------------------------------------

PIEZO_C = 1e-9  # a 1 nF piezo element (demo value)
BIAS_R = 1e6  # the stage's bias resistor to ground (demo value)


def piezo_into_bias_resistor(band: str = '["0.1 Hz", "100 kHz"]', per_decade: int = 100) -> Chain:
    """A lossless 1 nF source into a 1 Mohm resistor to ground (a linear pot at full
    rotation: its wiper is the input node) and a noiseless unity-gain block after it, whose
    1 Tohm input barely touches the node."""
    return chain_of(
        f"""
[chain]
band = {band}
reference = "1 kHz"
ambient = "{T_DEGC}"
points_per_decade = {per_decade}
[source]
level = "100 mV"
impedance = "0 ohm"
capacitance = "1 nF"
[load]
impedance = "10 kohm"
[[stage]]
name = "bias"
kind = "volume"
pot = "1 Mohm"
taper = "linear"
position = 1.0
[[stage]]
name = "sense"
kind = "block"
gain = 1
input_impedance = "1000 gigaohm"
output_impedance = "0 ohm"
"""
    )


def input_noise_psd(f: np.ndarray | float) -> np.ndarray:
    """4kT Re(Z) at the input node: Z = R || 1/(j 2 pi f C), the bias resistor in parallel
    with the source's capacitance (its voltage shorted). Nyquist's theorem for a passive
    one-port (Nyquist, Phys. Rev. 32, 110 (1928)); the test's own network, no project code."""
    y = 1.0 / BIAS_R + 2j * np.pi * np.asarray(f, dtype=float) * PIEZO_C
    return np.asarray(4.0 * BOLTZMANN * T_KELVIN * np.real(1.0 / y), dtype=float)


def test_the_integral_of_4kt_re_z_of_the_piezo_and_its_bias_resistor_is_kt_over_c() -> None:
    """Equipartition theorem: the capacitor's mean-square voltage is kT/C whatever the
    resistor (Nyquist, Phys. Rev. 32, 110 (1928); Reif, Fundamentals of Statistical and
    Thermal Physics, sec. 7.x on equipartition; from memory). Numerically integrated in the
    test over all frequency; 1e-6 relative."""
    corner = 1.0 / (2.0 * math.pi * BIAS_R * PIEZO_C)
    edges = [0.0, *(corner * 10.0**d for d in range(-3, 7)), np.inf]
    total = sum(
        integrate.quad(input_noise_psd, a, b, limit=200, epsrel=1e-10)[0]
        for a, b in zip(edges, edges[1:], strict=False)
    )
    assert total == pytest.approx(BOLTZMANN * T_KELVIN / PIEZO_C, rel=1e-6, abs=0)
    # sqrt(kT/C) for 1 nF at 300 K: 2.03 uV (the "2 uV"; arithmetic).
    assert math.sqrt(total) == pytest.approx(2.035e-6, rel=1e-3, abs=0)


def as_built_noise_psd(f: np.ndarray | float) -> np.ndarray:
    """4kT Re(Z) at the input node as the test chain builds it (Nyquist again): the pot's
    lower half R + e to ground and its upper half e in series with the source's C, e its
    end resistance (POT_END_FRACTION of the track, the chain-format contract)."""
    end = POT_END_FRACTION * BIAS_R
    branch = end + 1.0 / (2j * np.pi * np.asarray(f, dtype=float) * PIEZO_C)
    y = 1.0 / (BIAS_R + end) + 1.0 / branch
    return np.asarray(4.0 * BOLTZMANN * T_KELVIN * np.real(1.0 / y), dtype=float)


def test_the_projects_density_at_the_piezo_input_is_4kt_re_z_and_integrates_to_kt_over_c() -> None:
    """The density the project computes at the input node equals 4kT Re(Z) of the network
    the test builds (1e-4 dB: the block's noiseless 1000 Gohm is left out), and the ideal
    R || C within 0.01 dB below 1 kHz (the pot's 1 ohm end only shows far above the corner);
    the source's lossless capacitance adds no generator. The project's band noise over
    0.1 Hz to 100 kHz is the test's numerical integral of its density (scipy quad, 0.001 dB)
    and kT/C within 0.01 dB (the band's edges and the pot's end cost 0.004 dB)."""
    chain = piezo_into_bias_resistor()
    a = analyse(chain)
    spectra = noise_spectra(chain, a.envs, a.frequency, a.nominal, a.temperature_k, a.band_slice)
    assert "source.impedance" not in [o.label for o in spectra.origins]
    f = a.frequency
    project = spectra.node_psd[0]
    np.testing.assert_allclose(db(project), db(as_built_noise_psd(f)), rtol=0, atol=1e-4)
    low = f <= 1e3
    np.testing.assert_allclose(db(project[low]), db(input_noise_psd(f[low])), rtol=0, atol=0.01)

    budget = compute(chain)
    band_noise = budget.nodes[0].noise.noise_vrms ** 2
    edges = np.geomspace(0.1, 1e5, 7)
    integral = sum(
        integrate.quad(as_built_noise_psd, a, b, epsrel=1e-10)[0]
        for a, b in zip(edges, edges[1:], strict=False)
    )
    assert abs(float(db(band_noise / integral))) < 0.001
    assert abs(float(db(band_noise / (BOLTZMANN * T_KELVIN / PIEZO_C)))) < 0.01
    # The floor here is the bias resistor's (the first stage's), never the source's.
    assert budget.nodes[-1].noise.set_by == "bias"


def test_a_piezo_source_with_a_series_resistance_counts_4kt_r_only() -> None:
    """A 1 kohm + 1 nF source: its own generator is 4kT x 1 kohm at every frequency (Nyquist:
    Re Z_S = R for R, C in series), not 4kT|Z_S| (which is 8 Mohm at 20 Hz); checked at the
    first node against 4kTR |v_node|^2, in dB, 1e-9 dB."""
    text = """
[chain]
band = ["20 Hz", "20 kHz"]
ambient = "26.85 degC"
[source]
level = "100 mV"
impedance = "1 kohm"
capacitance = "1 nF"
[load]
impedance = "10 kohm"
[[stage]]
name = "bias"
kind = "volume"
pot = "1 Mohm"
taper = "linear"
position = 1.0
"""
    chain = chain_of(text)
    a = analyse(chain)
    spectra = noise_spectra(chain, a.envs, a.frequency, a.nominal, a.temperature_k, a.band_slice)
    index = [o.label for o in spectra.origins].index("source.impedance")
    own = spectra.contribution[index, 0]
    expected = 4.0 * BOLTZMANN * T_KELVIN * 1e3 * np.abs(a.nominal.v_out[0]) ** 2
    np.testing.assert_allclose(db(own), db(expected), rtol=0, atol=1e-9)


# --- an inductive pickup's level response: a nodal solve in the test -------------------------

PICKUP = """
[chain]
band = ["20 Hz", "20 kHz"]
reference = "1 kHz"
[source]
level = "200 mV"
max_level = "1 V"
impedance = "6 kohm"
inductance = "3 H"
[load]
impedance = "10 kohm"
[[stage]]
name = "volume"
kind = "volume"
pot = "250k"
taper = "linear"
position = 0.6
[[stage]]
name = "amp"
kind = "block"
gain = 10
input_impedance = "1 Mohm"
output_impedance = "0 ohm"
max_output = "10 V"
"""


def pickup_nodal_solve(f: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """V(in) and V(wiper) per volt of pickup EMF: a plain two-node nodal solve (Kirchhoff's
    current law), the pickup as 6 kohm + j w 3 H in series, the pot as 0.4 x 250k + ends
    above the wiper and 0.6 x 250k + ends below, the block's 1 Mohm at the wiper, the
    network's 1e-15 S leak at each node as the project stamps it (twice: both two-ports)."""
    z_s = 6e3 + 2j * np.pi * f * 3.0
    end = POT_END_FRACTION * 250e3
    upper, lower = 0.4 * 250e3 + end, 0.6 * 250e3 + end
    y_s, y_u, y_l = 1.0 / z_s, 1.0 / upper, 1.0 / lower + 1.0 / 1e6
    leak = 2.0 * GMIN
    m = np.zeros((f.size, 2, 2), dtype=complex)
    m[:, 0, 0] = y_s + y_u + leak
    m[:, 0, 1] = -y_u
    m[:, 1, 0] = -y_u
    m[:, 1, 1] = y_u + y_l + leak
    rhs = np.zeros((f.size, 2, 1), dtype=complex)
    rhs[:, 0, 0] = y_s
    v = np.linalg.solve(m, rhs)[..., 0]
    return v[:, 0], v[:, 1]


def test_an_inductive_pickups_level_response_is_the_nodal_solution() -> None:
    """The cascade with the pickup's complex impedance against the nodal solve written
    above: input and wiper voltages at every frequency, the response the report draws,
    and the level at the reference; rtol 1e-9."""
    chain = chain_of(PICKUP)
    a = analyse(chain)
    v_in, v_wiper = pickup_nodal_solve(a.frequency)
    np.testing.assert_allclose(a.nominal.v_in[0], v_in, rtol=1e-9)
    np.testing.assert_allclose(a.nominal.v_out[0], v_wiper, rtol=1e-9)
    # The block's 0 ohm output is stamped as SOURCE_FLOOR_OHM, into the 10 kohm load.
    out = 10.0 * v_wiper * 1e4 / (1e4 + SOURCE_FLOOR_OHM)
    np.testing.assert_allclose(a.nominal.v_out[1], out, rtol=1e-9)
    response = chain_response(chain, a.envs, 1, (Setting("as set", {}),), a.frequency)
    np.testing.assert_allclose(response.transfer[0], out, rtol=1e-9)
    budget = compute(chain)
    assert budget.nodes[1].level_vrms == pytest.approx(0.2 * abs(out[0]), rel=1e-9)
    # The pickup's inductance against the 250k || ... input is a low-pass: less at 20 kHz.
    assert abs(v_wiper[-1]) < 0.75 * abs(v_wiper[1])


def test_the_pickups_loss_at_the_top_of_the_band_is_flagged_with_its_corner() -> None:
    """A pickup loaded by about 250 kohm: the first-order RL corner R/(2 pi L) (textbook
    divider) falls inside the band, and the source-loaded warning says so."""
    budget = compute(chain_of(PICKUP))
    found = [fi for fi in budget.findings if fi.code == "source-loaded"]
    assert len(found) == 1
    assert found[0].figures["at_hz"] == pytest.approx(20e3, rel=1e-6)
    assert "low-pass corner" in found[0].message


# --- a capacitive source's high-pass corner ---------------------------------------------------

PIEZO_INTO_1M = """
[chain]
band = ["20 Hz", "20 kHz"]
reference = "1 kHz"
points_per_decade = 200
[source]
level = "100 mV"
max_level = "1 V"
impedance = "0 ohm"
capacitance = "1 nF"
[load]
impedance = "10 kohm"
[[stage]]
name = "pre"
kind = "block"
gain = 2
input_impedance = "1 Mohm"
output_impedance = "0 ohm"
max_output = "10 V"
"""


def test_a_capacitive_source_sets_a_high_pass_corner_at_one_over_2_pi_r_in_c() -> None:
    """The piezo's EMF divides across C and the input resistance: H = 1/(1 + 1/(j w R C)),
    a first-order high-pass with its -3 dB corner at 1/(2 pi R C) = 159.15 Hz (first-order
    RC network; any circuits text). The response's -3 dB point (interpolated on its grid)
    within 0.1 %, its magnitude at every point within 1e-9, and the headroom curve rising by
    -20 log10 |H| towards the low edge (headroom is the clip level over the level there)."""
    chain = chain_of(PIEZO_INTO_1M)
    a = analyse(chain)
    corner = 1.0 / (2.0 * math.pi * 1e6 * 1e-9)
    f = a.frequency
    leak = 2.0 * GMIN  # the network's leak, at the input node (both two-ports stamp it)
    y_in = 1.0 / 1e6 + leak
    h = 1.0 / (1.0 + y_in / (2j * np.pi * f * 1e-9))
    np.testing.assert_allclose(a.nominal.v_in[0], h, rtol=1e-9)

    response = chain_response(chain, a.envs, 0, (Setting("as set", {}),), f[a.band_slice])
    magnitude = response.magnitude_db[0] - 20.0 * math.log10(2.0)
    crossing = np.interp(-10.0 * math.log10(2.0), magnitude, np.log(response.frequency_hz))
    assert math.exp(crossing) == pytest.approx(corner, rel=1e-3)

    budget = compute(chain)
    curve = budget.curves.nodes[0]
    # (the block's 0 ohm output is stamped as SOURCE_FLOOR_OHM, into the 10 kohm load)
    gain = 2.0 * 1e4 / (1e4 + SOURCE_FLOOR_OHM)
    clip_db = 20.0 * math.log10(10.0 / (math.sqrt(2.0) * 1.0 * gain))
    expected = clip_db - 20.0 * np.log10(np.abs(h[a.band_slice]))
    np.testing.assert_allclose(curve.as_set_db, expected, rtol=0, atol=1e-6)

    found = [fi for fi in budget.findings if fi.code == "source-loaded"]
    assert len(found) == 1
    assert found[0].figures["at_hz"] == pytest.approx(20.0)
    assert found[0].figures["corner_hz"] == pytest.approx(corner, rel=1e-6)
    # 20 log10 |H(20 Hz)|: 20/159.15 -> -18.1 dB (the first-order formula above).
    assert found[0].figures["loss_db"] == pytest.approx(
        20.0 * math.log10(abs(1.0 / (1.0 + corner / (1j * 20.0)))), abs=1e-6
    )


def test_the_json_reports_the_source_impedance_at_the_reference_and_its_parts() -> None:
    """``impedance_ohm`` is |Z_S| at the reference: 1/(2 pi 1 kHz 1 nF) = 159.15 kohm;
    ``capacitance_f`` and ``inductance_h`` hold the parts (null when absent)."""
    data = report_json(chain_of(PIEZO_INTO_1M))
    source = data["source"]
    assert source["impedance_ohm"] == pytest.approx(1.0 / (2.0 * math.pi * 1e3 * 1e-9), rel=1e-12)
    assert source["capacitance_f"] == 1e-9
    assert source["inductance_h"] is None
    assert source["worst_loss_hz"] == pytest.approx(20.0)


def test_source_impedance_is_r_plus_reactances() -> None:
    """Z = R + 1/(j w C) + j w L for series parts (any circuits text): at the series
    resonance 1/(2 pi sqrt(LC)) the reactances cancel and Z = R."""
    chain = chain_of(
        PICKUP.replace('inductance = "3 H"', 'inductance = "3 H"\ncapacitance = "1 nF"')
    )
    resonance = 1.0 / (2.0 * math.pi * math.sqrt(3.0 * 1e-9))
    z = source_impedance(chain.source, [resonance, 1e3])
    assert z[0] == pytest.approx(6e3, rel=1e-9)
    assert z[1] == pytest.approx(6e3 + 2j * math.pi * 1e3 * 3.0 + 1.0 / (2j * math.pi * 1e3 * 1e-9))


# --- bad input --------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("line", "expected"),
    [
        ('capacitance = "-1 nF"', "source.capacitance"),
        ('capacitance = "1 nH"', "source.capacitance"),
        ('inductance = "3 F"', "source.inductance"),
        ('inductance = "300 H"', "source.inductance"),  # past plausible.SOURCE_INDUCTANCE
    ],
)
def test_bad_reactive_source_values_give_one_line_and_exit_2(
    tmp_path: Path, line: str, expected: str
) -> None:
    """The real command in a subprocess: one line naming the file and the field, exit 2, no
    traceback."""
    path = tmp_path / "bad_source.toml"
    path.write_text(PIEZO_INTO_1M.replace('capacitance = "1 nF"', line))
    run = subprocess.run(
        [sys.executable, "-m", "chainbudget", "check", str(path)],
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert run.returncode == 2
    told = (run.stdout + run.stderr).strip()
    assert "Traceback" not in told
    assert len(told.splitlines()) == 1
    assert "bad_source.toml" in told
    assert expected in told


# --- the demo -----------------------------------------------------------------------------------


def test_the_violin_demos_floor_is_set_by_its_op_amps_not_by_its_piezo() -> None:
    """The belt-pack's piezo (1 kohm + 1 nF): the source gives well under 1 % of the output
    noise power and a stage sets the floor."""
    budget = compute(load_chain(ROOT / "chains" / "violin_piezo_preamp.toml"))
    assert budget.noise is not None
    assert budget.nodes[-1].noise.set_by != "source"
    source = [s.share for s in budget.noise.stage_shares if s.stage_index < 0]
    assert source and source[0] < 0.01


# --- DC: a piezo passes none ------------------------------------------------------------------

DC_COUPLED = """
[chain]
band = ["20 Hz", "20 kHz"]
[source]
level = "100 mV"
impedance = "1 kohm"
{extra}
[load]
impedance = "10 kohm"
[[supply]]
name = "rail"
kind = "dc"
voltage = "9 V"
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10k"
ground_leg = "10k"
ground_cap = "10u"
opamp = "low_noise_bipolar"
{bias}
"""


@pytest.mark.parametrize(
    ("extra", "bias", "floats"),
    [
        ("", "", False),  # a resistive source is the + input's DC path
        ('inductance = "2 H"', "", False),  # so is a pickup's coil
        ('capacitance = "1 nF"', "", True),  # a piezo is an open circuit at DC
        ('capacitance = "1 nF"', 'bias_resistor = "10 Mohm"', False),
    ],
)
def test_a_piezo_straight_into_a_plus_input_leaves_it_without_a_dc_path(
    extra: str, bias: str, floats: bool
) -> None:
    """A capacitor passes no DC (common practice, no source): a DC-coupled + input fed by a
    piezo needs its own bias resistor, and ``no-dc-path`` says so."""
    budget = compute(chain_of(DC_COUPLED.format(extra=extra, bias=bias)))
    codes = [fi.code for fi in budget.findings]
    assert ("no-dc-path" in codes) is floats


def test_behind_a_piezo_the_bias_current_meets_the_bias_resistor() -> None:
    """A DC-coupled non-inverting stage with a ground-leg capacitor (DC noise gain 1) behind a
    piezo: |V_os| + I_b (R_f + R_+), R_+ the 1 Mohm bias resistor, since the piezo passes no
    DC (Franco, Design with Operational Amplifiers, 4th ed., sec. 5.1-5.2, input offset
    error, from memory): 2 mV + 500 nA x 1.022 Mohm = 513 mV at the speaker. With a
    resistive source the + input is driven from a stiff 0 V (the source): 2 mV + 11 mV."""
    leg = 'ground_leg = "1k"\nground_cap = "220u"\nbias_resistor = "1 Mohm"'
    resistive = LOOP.format(topology="non-inverting", leg=leg)
    piezo = resistive.replace(
        'impedance = "600 ohm"', 'impedance = "600 ohm"\ncapacitance = "1 nF"'
    )
    assert offset_of(resistive)[0] == pytest.approx(2e-3 + 500e-9 * 22e3, rel=1e-9)
    assert offset_of(piezo)[0] == pytest.approx(2e-3 + 500e-9 * (22e3 + 1e6), rel=1e-9)


def test_the_report_names_the_sources_parts() -> None:
    """The report's second line gives a reactive source's parts in series; the noise figure
    row says its reference is Re Z_S (80 columns: tests/test_report.py checks every example)."""
    result = CliRunner().invoke(
        app,
        ["check", str(ROOT / "chains" / "violin_piezo_preamp.toml")],
        env={"COLUMNS": "80", "NO_COLOR": "1"},
    )
    assert "(1 kohm + 1 nF)" in " ".join(result.output.split())
    assert "vs 1 kohm (Re Zs)" in result.output
