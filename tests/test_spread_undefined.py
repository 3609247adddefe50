"""A figure the check leaves undefined in some trials: a non-inverting stage whose op-amp
has 20 dB of open-loop gain and a noise gain of 1 + 9k/1.05k = 9.57, so that its loop gain
A0 beta = 10/9.57 sits 0.38 dB above unity at the nominal parts. With 5 % resistors, the
trials whose noise gain 1 + Rf/Rg exceeds A0 have no loop-gain crossing, so no unity-gain
frequency and no phase margin (null in that trial's check JSON). The spread sums the
figure up over the trials that define it and reports the share that do not; that share
is the analytic P(1 + Rf/Rg > A0) for Rf, Rg uniform (numerical integration,
`test_spread._gain_cdf`), within sampling error."""

from __future__ import annotations

import json
import math

from test_spread import NON_INVERTING, _chain, _gain_cdf, _run

from chainbudget.spread.run import run_spread

LOW_GAIN = (
    NON_INVERTING.replace('resistors = "1 %"', 'resistors = "5 %"')
    .replace('ground_leg = "1k"', 'ground_leg = "1.05k"')
    .replace('open_loop_gain = "200 dB"', 'open_loop_gain = "20 dB"')
    .replace('gbw = "100 gigahertz"', 'gbw = "1 MHz"')
)
MARGIN = "nodes.pre.phase_margin_deg"


def test_share_of_trials_without_a_phase_margin_is_the_analytic_one() -> None:
    trials = 4000
    result = run_spread(_chain(LOW_GAIN), trials, 3)
    # P(20 log10(1 + Rf/Rg) > 20 dB): the loop gain A0 Rg/(Rf + Rg) under one
    expected = 1.0 - _gain_cdf(20.0, 9e3, 1.05e3, 0.05)
    assert 0.05 < expected < 0.3
    share = result.undefined[MARGIN]
    assert abs(share - expected) < 4.0 * math.sqrt(expected * (1 - expected) / trials)
    assert result.undefined["nodes.pre.unity_gain_hz"] == share
    # the statistics are over the trials with a margin: finite, the corners around them
    assert result.samples[MARGIN].size == round(trials * (1 - share))
    stats = result.stats[MARGIN]
    assert all(math.isfinite(v) for v in stats.values())
    low, high = result.corners[MARGIN]
    assert low <= stats["min"] <= stats["max"] <= high


def test_the_command_reports_the_undefined_share_without_nan(tmp_path) -> None:  # noqa: ANN001
    chain = tmp_path / "low_gain.toml"
    chain.write_text(LOW_GAIN)
    done = _run("spread", str(chain), "--trials", "400", "--seed", "3", "--format", "json")
    assert done.returncode == 0, done.stderr
    assert done.stderr == ""  # no warning of an invalid value on the way

    def no_nan(word: str) -> float:
        raise AssertionError(f"{word} in the JSON")

    data = json.loads(done.stdout, parse_constant=no_nan)
    assert 0.0 < data["undefined"][MARGIN] < 1.0
    assert set(data["figures"][MARGIN]) == {"p1", "p50", "p99", "min", "max"}
    table = _run("spread", str(chain), "--trials", "400", "--seed", "3")
    assert table.returncode == 0, table.stderr
    assert "undefined in some trials" in table.stdout


def test_corner_steps_take_infinite_and_undefined_values_without_a_warning() -> None:
    """`run._further` (whether a flip carries a figure further): a vertex where the figure
    is undefined (NaN) carries it nowhere; one at an infinite limit (a level of zero, in
    dB) is further than any finite value and no further than itself; no warning."""
    import warnings

    import numpy as np

    from chainbudget.spread.run import _further

    got = np.array([-np.inf, np.nan, 0.5, 2.0])
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        assert _further(got, 1.0, 0).tolist() == [True, False, True, False]
        assert _further(got, -np.inf, 0).tolist() == [False, False, False, False]
        assert _further(got, 1.0, 1).tolist() == [False, False, False, True]
