"""The bias's thermal loop: quiescent current against junction temperature, solved as a fixed
point, checked against a brute-force time integration of the heat written here."""

from __future__ import annotations

import math
import tomllib

import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from chainbudget.budget import compute
from chainbudget.chainfile import parse_chain
from chainbudget.stages.push_pull.crossover import HalfLaw
from chainbudget.stages.push_pull.thermal_loop import (
    VBE_TEMPCO_V_PER_K,
    ThermalBias,
    ThermalPath,
    hot_bias,
)

V_T = 0.0257
AMBIENT = 25.0
MAX_JUNCTION = 150.0


def integrate_heat(
    law: HalfLaw, vcc: float, signal_w: float, theta: float, tracking: float
) -> tuple[bool, float]:
    """Each device on its own heatsink of total theta, a lumped heat capacity C: integrate
    C dT/dt = P(I(T)) - (T - T_a)/theta (thermal Ohm's law with a capacity; Horowitz &
    Hill 3rd ed. sec. 9.4, from memory) with scipy's solve_ivp, where at each temperature the
    current solves the bias equation 2 u(I) = (1 - k)|TC| 2 (T - T_a) by root finding
    (brentq), u(I) = m V_T ln(I/I_q) + (I - I_q) R. Returns (ran away past the maximum,
    the current at the end)."""
    heat_capacity = 10.0  # J/K: only sets the time scale

    def current(t_junction: float) -> float:
        need = (1.0 - tracking) * abs(VBE_TEMPCO_V_PER_K) * (t_junction - AMBIENT)

        def f(log_i: float) -> float:
            i = math.exp(log_i)
            return (
                law.junctions * V_T * (log_i - math.log(law.i_q)) + (i - law.i_q) * law.r_ohm - need
            )

        return math.exp(brentq(f, math.log(law.i_q) - 50.0, math.log(law.i_q) + 50.0))

    def rate(_: float, state: list[float]) -> list[float]:
        t_j = state[0]
        power = signal_w + vcc * current(t_j)
        return [(power - (t_j - AMBIENT) / theta) / heat_capacity]

    def too_hot(_: float, state: list[float]) -> float:
        return state[0] - MAX_JUNCTION

    too_hot.terminal = True  # type: ignore[attr-defined]
    end = 200.0 * heat_capacity * theta  # two hundred time constants
    done = solve_ivp(rate, (0.0, end), [AMBIENT], events=too_hot, rtol=1e-10, atol=1e-10)
    ran_away = bool(done.t_events[0].size)
    return ran_away, current(float(done.y[0, -1]))


@pytest.mark.parametrize(
    ("tracking", "theta", "signal_w"),
    [(0.0, 1.5, 5.0), (0.5, 2.0, 3.0), (0.8, 4.0, 1.0)],
)
def test_the_fixed_point_is_where_the_heat_settles(
    tracking: float, theta: float, signal_w: float
) -> None:
    """Stable cases: the model's hot quiescent current is where the integrated heat
    settles; rtol 1e-5."""
    law = HalfLaw(2, 0.3, 0.05)
    path = ThermalPath(theta, 0.0)
    found = hot_bias(
        (law, law), (20.0, 20.0), (signal_w, signal_w), path, tracking, V_T, AMBIENT, MAX_JUNCTION
    )
    ran_away, settled = integrate_heat(law, 20.0, signal_w, theta, tracking)
    assert not ran_away and not found.runaway
    assert found.current_a == pytest.approx(settled, rel=1e-5)


def test_a_fixed_bias_stage_on_a_large_heatsink_theta_runs_away() -> None:
    """Fixed bias (tracking 0), little emitter resistance and 8 K/W each: the integrated
    heat passes the junction's maximum, and the model finds no stable point below it."""
    law = HalfLaw(1, 0.1, 0.05)
    found = hot_bias(
        (law, law), (30.0, 30.0), (0.0, 0.0), ThermalPath(8.0, 0.0), 0.0, V_T, AMBIENT, MAX_JUNCTION
    )
    ran_away, _ = integrate_heat(law, 30.0, 0.0, 8.0, 0.0)
    assert ran_away
    assert found.runaway and found.current_a is None
    # Full tracking on the same heatsink: the spreader cancels the fall, I stays at I_q.
    tracked = hot_bias(
        (law, law), (30.0, 30.0), (0.0, 0.0), ThermalPath(8.0, 0.0), 1.0, V_T, AMBIENT, MAX_JUNCTION
    )
    assert not tracked.runaway and tracked.current_a == pytest.approx(0.05, rel=1e-12)
    # And the sufficient figures it names: with that much resistance it is stable.
    stiff = HalfLaw(1, found.stable_r_ohm / 2.0 + 1e-6, 0.05)
    assert not hot_bias(
        (stiff, stiff), (30.0, 30.0), (0.0, 0.0), ThermalPath(8.0, 0.0), 0.0, V_T, AMBIENT, 1e9
    ).runaway


CHAIN = """
[chain]
ambient = "25 degC"
[source]
level = "0.5 Vrms"
impedance = "0 ohm"
[load]
impedance = "8 ohm"
[[supply]]
name = "plus"
kind = "dc"
voltage = "25 V"
[[supply]]
name = "minus"
kind = "dc"
voltage = "25 V"
[[stage]]
name = "drive"
kind = "block"
gain = 1
input_impedance = "1 Mohm"
output_impedance = "1 ohm"
[[stage]]
name = "output"
kind = "push_pull"
emitter_resistors = "0R1"
quiescent = "50 mA"
theta_jc = "1.5 K/W"
theta_cs = "0.5 K/W"
heatsink = "{heatsink}"
spreader_tracking = {tracking}
positive = "plus"
negative = "minus"
"""


def test_runaway_in_a_chain_is_an_error_with_its_fix() -> None:
    budget = compute(
        parse_chain(tomllib.loads(CHAIN.format(heatsink="6 K/W", tracking=0)), "hot.toml")
    )
    own = budget.node("output").figures(ThermalBias)
    assert isinstance(own, ThermalBias) and own.thermal_runaway
    assert budget.output is not None
    found = [fi for fi in budget.findings if fi.code == "thermal-runaway"]
    assert [(fi.severity, fi.stage) for fi in found] == [("error", "output")]
    assert "more emitter resistance" in found[0].message
    # Tracking 1: the quiescent current stays where it was set, however hot.
    budget = compute(
        parse_chain(tomllib.loads(CHAIN.format(heatsink="6 K/W", tracking=1)), "hot.toml")
    )
    own = budget.node("output").figures(ThermalBias)
    assert isinstance(own, ThermalBias) and not own.thermal_runaway
    assert own.quiescent_hot_a == pytest.approx(0.05, rel=1e-12)
    assert not [fi for fi in budget.findings if fi.code == "thermal-runaway"]
