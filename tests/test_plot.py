"""The headroom picture: its data come from the budget, and the command writes a file."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from chainbudget.budget import compute
from chainbudget.chainfile import load_chain
from chainbudget.cli import app

CHAINS = Path(__file__).resolve().parents[1] / "chains"
runner = CliRunner()


def test_curves_agree_with_the_node_figures() -> None:
    """One source of truth: each curve's worst point is the node's worst headroom (the band
    grid holds it, or the reference beside it to 0.01 dB), and the as-set curve at the
    reference frequency (interpolated on log f) is the node's headroom."""
    budget = compute(load_chain(CHAINS / "desk_speaker_preamp.toml"))
    curves = {c.stage: c for c in budget.curves.nodes}
    f = np.log10(budget.curves.frequency_hz)
    for node in budget.nodes:
        if node.headroom_db is None or node.worst is None:
            assert node.stage not in curves
            continue
        curve = curves[node.stage]
        assert min(curve.worst_db) == pytest.approx(node.worst.headroom_db, abs=0.01)
        at_reference = np.interp(np.log10(budget.reference_hz), f, curve.as_set_db)
        assert at_reference == pytest.approx(node.headroom_db, abs=0.01)


def test_plot_writes_a_png_and_will_not_overwrite(tmp_path: Path) -> None:
    target = tmp_path / "headroom.png"
    chain = str(CHAINS / "busking_amp.toml")
    assert runner.invoke(app, ["plot", chain, "--output", str(target)]).exit_code == 0
    assert target.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # the PNG signature (ISO 15948)
    target.write_bytes(b"mine")
    refused = runner.invoke(app, ["plot", chain, "--output", str(target)])
    assert refused.exit_code == 2 and target.read_bytes() == b"mine"
    assert runner.invoke(app, ["plot", chain, "-o", str(target), "--force"]).exit_code == 0
    assert target.read_bytes()[:4] == b"\x89PNG"


def test_plot_refuses_an_unknown_picture_type(tmp_path: Path) -> None:
    chain = str(CHAINS / "busking_amp.toml")
    result = runner.invoke(app, ["plot", chain, "-o", str(tmp_path / "x.bmp")])
    assert result.exit_code == 2 and not (tmp_path / "x.bmp").exists()
