"""The pictures: their data against outside sources, read back from the figures' lines (not
pixels); repeatable files; readable in greyscale; the plot command."""

from __future__ import annotations

import io
import json
import math
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from scipy.special import sici
from typer.testing import CliRunner

from chainbudget.budget.analysis import positions_as_set
from chainbudget.budget.response import (
    Setting,
    chain_response,
    square_harmonics,
    square_wave,
)
from chainbudget.cascade import whole_chain_network
from chainbudget.chainfile import Chain, load_chain
from chainbudget.cli import app
from chainbudget.network import branch_ref, node_ref
from chainbudget.report.pictures import NAMES, PictureInputs, draw, picture_inputs
from chainbudget.report.pictures.style import save
from chainbudget.units import vrms_to_dbu

CHAINS = Path(__file__).resolve().parents[1] / "chains"
runner = CliRunner()


@pytest.fixture(scope="module")
def violin() -> PictureInputs:
    """A chain with a bass stage, a treble stage and a volume pot."""
    return picture_inputs(load_chain(CHAINS / "violin_piezo_preamp.toml"))


def chain_from_text(folder: Path, text: str) -> Chain:
    path = folder / "chain.toml"
    path.write_text(text, encoding="utf-8")
    return load_chain(path)


def line(figure: Figure, gid: str) -> Line2D:
    found = [a for a in figure.findobj(Line2D) if a.get_gid() == gid]
    assert len(found) == 1, f"{gid}: {len(found)} lines"
    return found[0]


def data_lines(figure: Figure) -> list[Line2D]:
    return [a for a in figure.findobj(Line2D) if a.get_gid()]


# --- response ----------------------------------------------------------------------------


def test_the_response_at_the_bass_extremes_is_the_networks_transfer(violin: PictureInputs) -> None:
    """Independent: the whole chain stamped as one network (a plain nodal solve, not the
    cascade the picture uses) with the bass pot at 0 and at 1, solved at the frequencies the
    figure's lines hold; rtol 1e-9 on the gain (the cascade's own agreement with that
    network, tests/test_cascade.py)."""
    chain = violin.chain
    picture = draw("response", violin)
    k = [st.name for st in chain.stages].index("bass")
    for rotation, end in ((0.0, "cut"), (1.0, "boost")):
        drawn = line(picture.figure, f"response:bass.position={rotation:g} ({end})")
        f = np.asarray(drawn.get_xdata(), dtype=float)
        assert f[0] == pytest.approx(chain.settings.band[0] / 2.0)  # an octave beyond the band
        assert f[-1] == pytest.approx(chain.settings.band[1] * 2.0)
        positions = positions_as_set(chain.stages)
        positions[k]["position"] = rotation
        net, outs = whole_chain_network(
            chain.stages,
            violin.analysis.envs,
            f,
            positions,
            chain.source.impedance,
            chain.load.impedance,
            source_capacitance=chain.source.capacitance,
            source_inductance=chain.source.inductance,
        )
        rhs = np.zeros((net.size, 1))
        rhs[net.index(branch_ref("source")), 0] = 1.0
        v_out = net.solve(rhs)[..., 0][..., net.index(node_ref(outs[-1]))]
        np.testing.assert_allclose(drawn.get_ydata(), 20 * np.log10(np.abs(v_out)), rtol=1e-9)
    # The two ends really differ at the low band edge (a bass control, not a flat line).
    cut = line(picture.figure, "response:bass.position=0 (cut)").get_ydata()
    boost = line(picture.figure, "response:bass.position=1 (boost)").get_ydata()
    assert boost[0] - cut[0] > 20.0


def test_the_response_shows_phase_on_request(violin: PictureInputs) -> None:
    from chainbudget.report.pictures import PictureOptions

    picture = draw("response", violin, PictureOptions(phase=True))
    phase = line(picture.figure, "phase:as set").get_ydata()
    assert np.all(np.isfinite(phase))


# --- square wave -------------------------------------------------------------------------


def tilt_per_half_period(t: np.ndarray, y: np.ndarray, clear: float = 0.02) -> float:
    """The fall of the top across a half period, from two points clear of the edges and the
    exponential between them carried to the edges."""
    early, late = (float(np.interp(x, t, y)) for x in (clear, 0.5 - clear))
    return 1.0 - (late / early) ** (0.5 / (0.5 - 2.0 * clear))


def test_a_first_order_high_pass_tilts_a_square_by_the_textbook_amount() -> None:
    """RC high-pass, square of period T: the top decays as exp(-t/RC) after each edge, so it
    falls by 1 - exp(-T/2RC) across a half period (Millman & Taub, Pulse, Digital and
    Switching Waveforms, 1965, sec. 2-2; the RC step response, Horowitz & Hill, The Art of
    Electronics, 3rd ed., sec. 1.4.2; both from memory). rtol 1e-3."""
    for f0, corner in ((50.0, 20.0), (100.0, 5.0)):
        tau = 1.0 / (2 * np.pi * corner)
        n = square_harmonics(f0)
        s = 2j * np.pi * n * f0 * tau
        t, y = square_wave(s / (1 + s), n, 1.0)
        assert tilt_per_half_period(t, y) == pytest.approx(1 - math.exp(-0.5 / f0 / tau), rel=1e-3)


PASSIVE_HIGH_PASS = """
[chain]
title = "coupling capacitor into a buffer"
band = ["20 Hz", "20 kHz"]
reference = "1 kHz"
ambient = "25 degC"
[source]
level = "100 mV"
max_level = "1 V"
impedance = "1 kohm"
[load]
impedance = "10 kohm"
[[stage]]
name = "pot"
kind = "volume"
pot = "10 kohm"
taper = "linear"
position = 1.0
input_cap = "1 uF"
[[stage]]
name = "buffer"
kind = "block"
gain = 1
input_impedance = "1 gigaohm"
output_impedance = "1 ohm"
"""


def test_the_tilt_through_the_network_is_the_textbook_tilt(tmp_path: Path) -> None:
    """The same tilt with the capacitor in a real chain: 1 uF into a 10 kohm pot at full
    rotation, driven from 1 kohm, into a unity buffer: tau = C (R_S + P || R_in), which the
    square's harmonics summed through the solved network must show (rtol 2e-3; the pot's
    end resistances, 1e-6 P each, and the 1 Gohm input shift tau by ~1e-5)."""
    chain = chain_from_text(tmp_path, PASSIVE_HIGH_PASS)
    inputs = picture_inputs(chain)
    tau = 1e-6 * (1e3 + 1.0 / (1.0 / 1e4 + 1.0 / 1e9))
    f0 = 50.0
    n = square_harmonics(f0)
    response = chain_response(chain, inputs.analysis.envs, 1, (Setting("as set", {}),), n * f0)
    t, y = square_wave(response.transfer, n, 1.0)
    assert tilt_per_half_period(t, y[0]) == pytest.approx(1 - math.exp(-0.5 / f0 / tau), rel=2e-3)


IDEAL_FLAT = """
[chain]
title = "an ideal flat chain"
band = ["20 Hz", "20 kHz"]
reference = "1 kHz"
ambient = "25 degC"
[source]
level = "100 mV"
max_level = "1 V"
impedance = "1 milliohm"
[load]
impedance = "1 gigaohm"
[[stage]]
name = "wire"
kind = "block"
gain = 1
input_impedance = "1000 gigaohm"
output_impedance = "1 milliohm"
"""


def test_an_ideal_flat_chain_shows_the_gibbs_overshoot_of_the_fourier_series(
    tmp_path: Path,
) -> None:
    """A square's partial Fourier sums overshoot each jump by (1/pi) Si(pi) - 1/2 = 8.95 % of
    the jump (the Gibbs phenomenon: Kreyszig, Advanced Engineering Mathematics, 10th ed.,
    sec. 11.1-11.2, from memory; Si from scipy.special.sici). Summed plainly through an
    ideal flat chain, 999 harmonics: within 0.05 % of the jump. With the picture's Fejer
    weights the same chain never overshoots (a positive kernel; Koerner, Fourier Analysis,
    ch. 2, from memory)."""
    chain = chain_from_text(tmp_path, IDEAL_FLAT)
    inputs = picture_inputs(chain)
    f0 = 1e3
    n = square_harmonics(f0, top_hz=1e6)
    response = chain_response(chain, inputs.analysis.envs, 0, (Setting("as set", {}),), n * f0)
    assert np.abs(response.transfer) == pytest.approx(1.0, abs=1e-6)  # flat to 1 MHz
    t, plain = square_wave(response.transfer, n, 1.0, samples=1 << 16, smooth=False)
    jump = 2.0
    gibbs = sici(np.pi)[0] / np.pi - 0.5
    assert (plain.max() - 1.0) / jump == pytest.approx(gibbs, abs=5e-4)
    _, smooth = square_wave(response.transfer, n, 1.0, samples=1 << 16)
    assert smooth.max() <= 1.0 + 1e-9
    assert smooth[0, len(t) // 4] == pytest.approx(1.0, abs=2e-3)  # the top, mid half-period


def test_the_square_picture_draws_what_the_transfer_gives(violin: PictureInputs) -> None:
    """Each drawn wave is the square summed through the chain at that setting (the picture
    starts a quarter period before the rising edge)."""
    picture = draw("square", violin)
    chain = violin.chain
    n = square_harmonics(1e3)
    response = chain_response(
        chain, violin.analysis.envs, len(chain.stages) - 1, (Setting("as set", {}),), n * 1e3
    )
    _, y = square_wave(response.transfer, n, math.sqrt(2) * chain.source.level)
    drawn = line(picture.figure, "square:1000:as set").get_ydata()
    quarter = y.shape[-1] // 4
    np.testing.assert_allclose(drawn[: y.shape[-1]], np.roll(y[0], quarter), rtol=1e-12)


# --- levels ------------------------------------------------------------------------------


@pytest.mark.parametrize("name", ["busking_amp", "tape_replay_module"])
def test_the_level_diagram_holds_the_json_figures(name: str) -> None:
    """Every point of the diagram against the real ``check --format json``: nominal level,
    clip level (sine rms at clip_vpk), max level (the nominal level scaled by max/nominal
    source level, a linear chain) and the A-weighted noise, in dBu (re sqrt(0.6) V)."""
    path = CHAINS / f"{name}.toml"
    report = json.loads(runner.invoke(app, ["check", str(path), "-f", "json"]).output)
    figure = draw("levels", picture_inputs(load_chain(path))).figure
    nodes = report["nodes"]
    scale = report["source"]["max_level_vrms"] / report["source"]["level_vrms"]

    def dbu(values: list[float | None]) -> list[float]:
        return [math.nan if v is None else vrms_to_dbu(v) for v in values]

    expected = {
        "nominal": dbu([report["source"]["level_vrms"], *(n["level_vrms"] for n in nodes)]),
        "max": dbu([report["source"]["max_level_vrms"], *(n["level_vrms"] * scale for n in nodes)]),
        "clip": dbu(
            [None, *(None if n["clip_vpk"] is None else n["clip_vpk"] / 2**0.5 for n in nodes)]
        ),
        "noise_a": dbu([None, *(n["noise_a_vrms"] for n in nodes)]),
    }
    for gid, values in expected.items():
        drawn = np.asarray(line(figure, f"levels:{gid}").get_ydata(), dtype=float)
        np.testing.assert_allclose(drawn, values, rtol=1e-9, equal_nan=True, err_msg=gid)
    # The dynamic range marked at the output is the JSON's.
    marked = [
        t
        for t in figure.findobj()
        if getattr(t, "get_gid", lambda: None)() == "levels:dynamic_range"
    ]
    assert len(marked) == 1
    assert f"{report['dynamic_range_a_db']:.1f} dB" in marked[0].get_text()
    # The headroom drawn between max and clip is the JSON's headroom at every limited node.
    for k, node in enumerate(nodes, 1):
        if node["headroom_db"] is not None:
            gap = expected["clip"][k] - expected["max"][k]
            assert gap == pytest.approx(node["headroom_db"], abs=1e-9)


# --- noise -------------------------------------------------------------------------------


def test_the_noise_picture_adds_up_to_the_output_noise(violin: PictureInputs) -> None:
    """The drawn total density integrates (trapezoid in f, band grid) to the budget's output
    noise within 1 % (the budget integrates with Simpson's rule in ln f)."""
    picture = draw("noise", violin)
    total = line(picture.figure, "noise:total")
    f = np.asarray(total.get_xdata(), dtype=float)
    density = np.asarray(total.get_ydata(), dtype=float) * 1e-9
    rms = math.sqrt(float(np.trapezoid(density**2, f)))
    output = violin.budget.nodes[-1].noise
    assert output is not None
    assert rms == pytest.approx(output.noise_vrms, rel=1e-2)
    parts = [a for a in data_lines(picture.figure) if a.get_gid() != "noise:total"]
    summed = sum(np.asarray(a.get_ydata(), dtype=float) ** 2 for a in parts)
    np.testing.assert_allclose(np.sqrt(summed), np.asarray(total.get_ydata()), rtol=1e-9)


# --- every picture -----------------------------------------------------------------------


def test_every_curve_differs_from_the_others_in_line_style_and_marker(
    violin: PictureInputs,
) -> None:
    """Greyscale: no two curves of a picture share both line style and marker."""
    for name in NAMES:
        figure = draw(name, violin).figure
        for axes in figure.axes:
            curves = [a for a in axes.get_lines() if a.get_gid() and len(a.get_xdata()) > 1]
            looks = [(str(a.get_linestyle()), str(a.get_marker())) for a in curves]
            if name == "headroom":  # as set and worst share a node's marker, differ in style
                assert len(set(looks)) == len(looks), name
            else:
                assert len(set(looks)) == len(looks), (name, looks)


def test_the_headroom_legend_explains_the_lines(violin: PictureInputs) -> None:
    figure = draw("headroom", violin).figure
    texts = " | ".join(t.get_text() for legend in figure.legends for t in legend.get_texts())
    texts += " | ".join(
        t.get_text() for axes in figure.axes for c in axes.get_children() for t in _texts(c)
    )
    for wanted in ("controls as set", "worst over the swept controls", "0 dB", "6 dB"):
        assert wanted in texts


def _texts(artist: Any) -> list[Any]:
    from matplotlib.legend import Legend

    return list(artist.get_texts()) if isinstance(artist, Legend) else []


@pytest.mark.parametrize("fmt", ["png", "svg", "pdf"])
def test_pictures_are_byte_for_byte_repeatable(violin: PictureInputs, fmt: str) -> None:
    """Same chain, same bytes: fixed style, fixed SVG id salt, no date in the metadata."""
    files = []
    for _ in range(2):
        buffer = io.BytesIO()
        save(draw("levels", violin).figure, buffer, fmt, "levels")
        files.append(buffer.getvalue())
    assert files[0] == files[1]
    if fmt == "svg":
        assert b"<dc:date>" not in files[0]
    if fmt == "pdf":
        assert b"/CreationDate" not in files[0]


def test_every_summary_is_one_line(violin: PictureInputs) -> None:
    for name in NAMES:
        summary = draw(name, violin).summary
        assert summary.startswith(f"{name}: ") and "\n" not in summary and len(summary) > 30


def test_plot_draws_several_pictures_and_says_what_each_shows(tmp_path: Path) -> None:
    chain = str(CHAINS / "field_recorder_battery.toml")
    target = tmp_path / "recorder.svg"
    result = runner.invoke(app, ["plot", chain, "-o", str(target), "-w", "response,levels"])
    assert result.exit_code == 0, result.output
    lines = result.output.strip().splitlines()
    assert [ln.split(":")[0] for ln in lines[::2]] == ["response", "levels"]
    for name in ("response", "levels"):
        assert (tmp_path / f"recorder-{name}.svg").read_text().lstrip().startswith("<?xml")
    again = runner.invoke(app, ["plot", chain, "-o", str(target), "-w", "levels", "-w", "response"])
    assert again.exit_code == 2 and "already exists" in again.output
    pdf = tmp_path / "one.pdf"
    assert runner.invoke(app, ["plot", chain, "-o", str(pdf), "-w", "noise"]).exit_code == 0
    assert pdf.read_bytes()[:5] == b"%PDF-"


@pytest.mark.parametrize(
    "args",
    [
        ["-w", "bode"],
        ["-w", "response", "--node", "nowhere"],
        ["-w", "square", "--square", "-5 Hz"],
        ["-w", "square", "--square", "10 V"],
    ],
)
def test_plot_refuses_bad_options_on_one_line(tmp_path: Path, args: list[str]) -> None:
    chain = str(CHAINS / "busking_amp.toml")
    result = runner.invoke(app, ["plot", chain, "-o", str(tmp_path / "x.png"), *args])
    assert result.exit_code == 2 and len(result.output.strip().splitlines()) == 1
    assert "Traceback" not in result.output and not (tmp_path / "x.png").exists()
