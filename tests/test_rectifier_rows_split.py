"""A rectifier grid's rows solved in two halves, the second in a forked child
(`chainbudget.supplies.rectified.spread._rows_solved`), against one `rectifier.solve`
of every row: each row is a circuit of its own, so every figure of every row is the same
to round-off (1e-12 relative), in the rows' order; the conduction angle to 1e-9 and each
ripple harmonic to 1e-9 of its row's largest (the conduction's ends are roots found to
1e-10 rad, `rectifier._ROOT_XTOL`, and the harmonics' quadratures run between them:
they moved by up to 3.4e-11 relative and 7.6e-12 of the largest between the two ways
here). The rows: a 50 Hz bridge with a
range of reservoirs, loads and phases of a 40 Hz pulsed load (a tone at a band's low
edge, the grid's costliest case); invented values, a scenario of our own."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from chainbudget import rectifier
from chainbudget.supplies.rectified import spread as rectified_spread
from chainbudget.supplies.rectified.circuit import Transformer

ROWS = 24


def test_rows_in_two_halves_are_the_rows_of_one_solve(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(rectified_spread, "SPLIT_ROWS", 8)  # split these rows too
    rng = np.random.default_rng(3)
    peak = rng.uniform(24.0, 30.0, ROWS)
    capacitance = rng.uniform(2e-3, 1e-2, ROWS)
    dc = rng.uniform(0.05, 0.4, ROWS)
    pulse = rng.uniform(0.0, 1.5, ROWS)
    phase = rng.uniform(0.0, 2.0 * np.pi, ROWS)
    tr = Transformer(
        secondary_vrms=18.0,
        regulation=0.1,
        rated_a=2.0,
        winding_ohm=0.8,
        derived=False,
        winding_known=True,
        tolerance=0.1,
        line_hz=50.0,
        drop_v=1.4,
        reservoir_f=4.7e-3,
        half_wave=False,
        split=False,
    )
    split = rectified_spread._rows_solved(tr, 40.0, peak, capacitance, dc, pulse, phase)
    whole = rectifier.solve(
        peak, 1.4, 0.8, capacitance, 50.0, dc, pulse, 40.0, phase, half_wave=False
    )
    for field in dataclasses.fields(whole):
        ours, theirs = getattr(split, field.name), getattr(whole, field.name)
        if isinstance(theirs, np.ndarray):
            assert ours.shape == theirs.shape, field.name
            if theirs.dtype == bool:
                np.testing.assert_array_equal(ours, theirs, err_msg=field.name)
                continue
            if field.name == "harmonics_vpk":  # each within 1e-9 of its row's largest
                scale = np.abs(theirs).max(axis=1, keepdims=True)
                assert np.all(np.abs(ours - theirs) <= 1e-9 * scale), field.name
                continue
            rtol = 1e-9 if field.name == "conduction_deg" else 1e-12
            np.testing.assert_allclose(ours, theirs, rtol=rtol, atol=0, err_msg=field.name)
        else:
            assert ours == theirs, field.name
