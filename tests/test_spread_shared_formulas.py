"""The spread's figures whose formula it shares with the check, per trial, against the
outside world: the source figures (`source.input_impedance_ohm`, `loss_db`,
`worst_loss_db`, `worst_loss_hz`, `chainbudget.budget.source_loading`) against the divider
of a piezo's capacitance and a drawn input resistance worked out by hand, and the output
capacitor's corner (`output.output_cap_corner_hz`, `chainbudget.budget.power.
resistive_cap_corner`) against the network's response there. Agreeing with the check
alone would not catch a wrong shared formula."""

from __future__ import annotations

import math
import tomllib

import numpy as np
import pytest
from test_power_budget import STRONG_FOLLOWER, drive_chain
from test_spread import trial_changes

from chainbudget.budget import compute
from chainbudget.budget.analysis import analyse
from chainbudget.budget.supplies import settle
from chainbudget.cascade import cascade, solve_stage
from chainbudget.chainfile import parse_chain
from chainbudget.network import GMIN
from chainbudget.spread.evaluate import Evaluator
from chainbudget.spread.parts import chain_parts

# A 1 nF piezo with 1 kohm in series (its noise keeps the noise figures finite) into a
# block whose 1 Mohm input is drawn within 10 %.
PIEZO_INTO_DRAWN_INPUT = """
[chain]
band = ["20 Hz", "20 kHz"]
reference = "1 kHz"
points_per_decade = 200
[source]
level = "100 mV"
max_level = "1 V"
impedance = "1 kohm"
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
tolerance = { input_impedance = "10 %" }
"""


def test_source_figures_of_each_trial_are_the_divider_of_c_and_the_drawn_input() -> None:
    """Per trial, with R the drawn input resistance, R_s = 1 kohm and C = 1 nF: Y_in =
    1/R plus the network's leak conductance at the input node, one GMIN here (found by
    the solve on this chain: 1e-15 S, 1e-9 of Y_in, which rtol 1e-9 would not hide),
    |Z_in| = 1/Y_in, V_in/V_s = Z_in/(Z_in + R_s + 1/(j w C)) (the voltage divider, a
    first-order RC high-pass; any circuits text), its
    dB at the 1 kHz reference and at the band's worst point, the 20 Hz low edge (where a
    high-pass takes most), rtol 1e-9."""
    chain = parse_chain(tomllib.loads(PIEZO_INTO_DRAWN_INPUT), "trial.toml")
    parts, _ = chain_parts(chain)
    evaluate = Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)
    positions = np.random.default_rng(3).random((5, len(parts)))
    got = evaluate(positions)
    (drawn,) = (
        np.reshape(v, (-1,))
        for p, v in zip(parts, evaluate.values(positions), strict=True)
        if p.key == "input_impedance"
    )
    assert np.ptp(drawn) > 0.0
    y_in = 1.0 / drawn + GMIN
    capacitance, r_s = 1e-9, 1e3
    z_in = 1.0 / y_in

    def loss_db(f: float) -> np.ndarray:
        z_s = r_s + 1.0 / (2j * math.pi * f * capacitance)
        return 20.0 * np.log10(np.abs(z_in / (z_in + z_s)))

    np.testing.assert_allclose(got["source.input_impedance_ohm"], z_in, rtol=1e-9)
    np.testing.assert_allclose(got["source.loss_db"], loss_db(1e3), rtol=1e-9)
    np.testing.assert_allclose(got["source.worst_loss_db"], loss_db(20.0), rtol=1e-9)
    np.testing.assert_allclose(got["source.worst_loss_hz"], 20.0, rtol=1e-12)


def test_output_cap_corner_of_each_trial_is_where_its_bass_is_3_db_down() -> None:
    """A follower with a 470 uF output capacitor, drawn within 20 %, into 8 ohm: at each
    trial's ``output.output_cap_corner_hz`` the last stage's network response (that
    trial's parts written into the chain, the stage solved on its own into the load) is
    1/sqrt(2) of its value at 100 kHz, the first-order high-pass corner (Horowitz & Hill
    sec. 1.7.1, from memory), rtol 2e-3 as the check's own test of the corner."""
    chain = drive_chain(
        STRONG_FOLLOWER, output_cap="470u", negative="ground", tolerance={"output_cap": "20 %"}
    )
    parts, _ = chain_parts(chain)
    evaluate = Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)
    positions = np.random.default_rng(4).random((4, len(parts)))
    corners = evaluate(positions)["output.output_cap_corner_hz"]
    assert np.ptp(corners) > 1.0
    values = evaluate.values(positions)
    for t, corner in enumerate(corners):
        trial = chain.with_values(trial_changes(chain, parts, [v[t : t + 1] for v in values]))
        analysis = analyse(trial)
        frequency = np.array([corner, 1e5])
        solved = cascade(
            [solve_stage(trial.stages[-1], analysis.envs[-1], frequency, {})], 1.0, 8.0
        )
        response = np.abs(solved.v_out[0])
        assert response[0] / response[1] == pytest.approx(1.0 / np.sqrt(2.0), rel=2e-3, abs=0)
