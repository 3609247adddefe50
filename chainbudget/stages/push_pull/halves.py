"""The two halves of a push-pull pair: their devices, rails and room to swing, and the half
the small-signal model takes (the one of lower current gain, at its conduction current)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from chainbudget.parts import Transistor
from chainbudget.stages.base import Environment, Stage
from chainbudget.stages.hybrid_pi import SmallSignal, as_number, small_signal


@dataclass(frozen=True)
class Half:
    """One half of the pair: its devices and its room to swing, V.

    Attributes
    ----------
    side : str
        ``"upper"`` (NPN, to the positive rail) or ``"lower"`` (PNP, to the negative).
    output, driver : Transistor, Transistor or None
        The output device and its Darlington driver, if any.
    rail_v : float
        The rail's distance from the output's bias point, V (V_cc of this half).
    drop_v : float
        What the drive loses to the rail at full swing, V: the larger of V_CE(sat) of the
        driven transistor plus every V_BE down to the emitter resistor, and the output
        device's own V_CE(sat).
    """

    side: str
    output: Transistor
    driver: Transistor | None
    rail_v: float
    drop_v: float

    @property
    def swing_v(self) -> float:
        """Peak the emitters may reach from the bias point, V (never below 0)."""
        return as_number(np.maximum(self.rail_v - self.drop_v, 0.0))  # over any trial axis

    @property
    def beta_total(self) -> float:
        """Current gain from the drive to the output, (beta + 1)(beta_d + 1) - 1."""
        gain = self.output.beta + 1.0
        if self.driver is not None:
            gain *= self.driver.beta + 1.0
        return gain - 1.0


def halves(stage: Stage, env: Environment) -> tuple[Half, Half]:
    """The upper and lower halves of a push-pull stage at its rails.

    Notes
    -----
    Peak swing of each half V_rail - V_CE(sat) - V_BE(drivers), less I_pk R_E at the load
    (Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 2.4.1, from memory); the limit
    sits on the emitter node, before R_E, so the I_pk R_E share comes out of the network
    with the real load. The base drive is taken to reach within one V_CE(sat) of the rail
    (that of the driven transistor: the driver in a Darlington). V_rail is measured from the
    output's bias point: +/-V on split rails, V_s/2 on a single supply with an output
    capacitor (Boylestad & Nashelsky, class B section, from memory).
    """
    rails = env.rails
    assert rails is not None, "a push-pull stage always has rails (the loader sees to it)"
    found = []
    for side, room in (("upper", rails.up), ("lower", rails.down)):
        output = env.transistors[str(stage.values[side])]
        driver_name = stage.values.get(f"driver_{side}")
        driver = None if driver_name is None else env.transistors[str(driver_name)]
        driven = output if driver is None else driver
        vbe = output.vbe + (0.0 if driver is None else driver.vbe)
        drop = max(driven.vce_sat + vbe, output.vce_sat)
        found.append(Half(side, output, driver, room, drop))
    return found[0], found[1]


def modelled_half(stage: Stage, env: Environment) -> Half:
    """The half whose small-signal model stands for the stage: the one of lower current gain
    (the harder one to drive), the upper one on a tie."""
    upper, lower = halves(stage, env)
    return lower if lower.beta_total < upper.beta_total else upper


@dataclass(frozen=True)
class PushPullModel:
    """Hybrid-pi parameters of the modelled half: in conduction (output device at
    ``conduction_a``, driver at its base current) and at idle (I_q, for the shot noise)."""

    half: Half
    conduction_a: float
    output: SmallSignal
    driver: SmallSignal | None
    idle_output: SmallSignal
    idle_driver: SmallSignal | None


def conduction_current(stage: Stage, env: Environment) -> float:
    """Emitter current of the conducting half at which its small-signal model is taken, A.

    Notes
    -----
    The peak current at the stage's own clip level into the chain's load,
    I_pk = V_swing/(R_E + R_L) (from the swing equation of `halves`), and never below the
    quiescent current; I_q alone when the load is not known.
    """
    i_q = stage.number("quiescent")
    if env.load_impedance is None:
        return i_q
    upper, lower = halves(stage, env)
    swing = np.minimum(upper.swing_v, lower.swing_v)
    # element-wise: R_E may vary over a leading trial axis (chainbudget/spread)
    peak = swing / (stage.number("emitter_resistors") + env.load_impedance)
    return as_number(np.maximum(i_q, peak))


def push_pull_model(stage: Stage, env: Environment) -> PushPullModel:
    """Hybrid-pi parameters of the modelled half, in conduction and at idle.

    With the devices' betas over a leading trial axis (chainbudget/spread) the half of
    lower gain differs from trial to trial: both halves' models are worked out and each
    parameter taken from the weaker half of each trial (``half`` is then the upper one,
    for its structure; both halves must have a driver or neither).
    """
    upper, lower = halves(stage, env)
    weaker_lower = np.asarray(lower.beta_total < upper.beta_total)
    if weaker_lower.ndim == 0 or (upper.driver is None) != (lower.driver is None):
        return _half_model(stage, env, modelled_half(stage, env))
    of_upper, of_lower = _half_model(stage, env, upper), _half_model(stage, env, lower)

    def pick(a: SmallSignal | None, b: SmallSignal | None) -> SmallSignal | None:
        if a is None or b is None:
            return None
        return SmallSignal(
            *(
                as_number(np.where(weaker_lower, getattr(b, k), getattr(a, k)))
                for k in SmallSignal.__dataclass_fields__
            )
        )

    output, idle_output = (
        pick(of_upper.output, of_lower.output),
        pick(of_upper.idle_output, of_lower.idle_output),
    )
    assert output is not None and idle_output is not None
    return PushPullModel(
        upper,
        of_upper.conduction_a,
        output,
        pick(of_upper.driver, of_lower.driver),
        idle_output,
        pick(of_upper.idle_driver, of_lower.idle_driver),
    )


def _half_model(stage: Stage, env: Environment, half: Half) -> PushPullModel:
    """The hybrid-pi parameters of ``half``, in conduction and at idle."""
    t = env.temperature_k
    conduction = conduction_current(stage, env)
    output = small_signal(half.output, conduction, t)
    idle_output = small_signal(half.output, stage.number("quiescent"), t)
    driver = idle_driver = None
    if half.driver is not None:
        driver = small_signal(half.driver, output.i_b, t)
        idle_driver = small_signal(half.driver, idle_output.i_b, t)
    return PushPullModel(half, conduction, output, driver, idle_output, idle_driver)


@dataclass(frozen=True)
class IdleHalf:
    """Hybrid-pi parameters of one half at idle: the output device at I_q, its driver (if
    any) at the output device's base current."""

    output: SmallSignal
    driver: SmallSignal | None


def idle_models(stage: Stage, env: Environment) -> tuple[IdleHalf, IdleHalf]:
    """Both halves at the quiescent current (the crossover region, where both conduct)."""
    i_q, t = stage.number("quiescent"), env.temperature_k
    found = []
    for half in halves(stage, env):
        output = small_signal(half.output, i_q, t)
        driver = None if half.driver is None else small_signal(half.driver, output.i_b, t)
        found.append(IdleHalf(output, driver))
    return found[0], found[1]
