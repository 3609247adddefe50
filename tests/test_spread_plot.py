"""The spread's histogram picture (`chainbudget.spread.plot`): its axes read in the
trade's engineering notation."""

from __future__ import annotations

import pytest


def test_histogram_ticks_read_in_engineering_notation(
    monkeypatch: pytest.MonkeyPatch, tmp_path
) -> None:  # noqa: ANN001
    """A power of some 1.2 mW reads on its panel's axis as 1.2m, not 0.0012 (a panel's
    long labels of small values ran into each other), with a handful of ticks."""
    from test_spread import NON_INVERTING, _chain

    from chainbudget.report.pictures import style
    from chainbudget.spread import plot
    from chainbudget.spread.run import run_spread

    drawn = []
    monkeypatch.setattr(style, "save", lambda figure, *args: drawn.append(figure))
    result = run_spread(_chain(NON_INVERTING), 300, 1)
    paths = plot.draw_histograms(result, tmp_path / "h.png", "png")
    figure = drawn[0]
    figure.canvas.draw()
    for axes, path in zip(figure.axes, paths, strict=True):
        labels = [t.get_text() for t in axes.get_xticklabels() if t.get_text()]
        assert 2 <= len(labels) <= 7, path
        assert not any(label.startswith(("0.000", "-0.000")) for label in labels), (path, labels)
    power = figure.axes[paths.index("output.nominal_power_w")]
    assert all(t.get_text().endswith("m") for t in power.get_xticklabels() if t.get_text())
