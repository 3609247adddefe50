"""Closed-form physics of the power end: emitter follower and class-B/AB output stage.

Plain SI floats or numpy arrays in and out (V, A, ohm, W, F, Hz, K, dB); every function
broadcasts over its arguments and returns an ndarray (0-d for scalar input). Impedances may
be complex where a docstring says so (a frequency axis of load impedances, for instance).

Sources, cited from memory (chapter/section numbers as remembered, check before quoting):

- Horowitz & Hill, *The Art of Electronics*, 3rd ed., ch. 2: sec. 2.2.3-2.2.5 (emitter
  follower: impedances, biasing, swing), sec. 2.3.1-2.3.2 (Ebers-Moll, r_e = V_T/I_C),
  sec. 2.4.1-2.4.2 (push-pull output stages, Darlington connection).
- Boylestad & Nashelsky, *Electronic Devices and Circuit Theory*, chapter "Power
  Amplifiers", section "Class B amplifier operation/circuits" (input power, output power,
  efficiency, transistor dissipation, maximum dissipation).
"""

from __future__ import annotations

from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import constants

FloatArray = NDArray[np.float64]
#: Real or complex result (impedances).
ZArray = NDArray[Any]

_ONE_WATT = 1.0  # reference power of a loudspeaker sensitivity rating, W


def _real(x: ArrayLike) -> FloatArray:
    return np.asarray(x, dtype=float)


# --------------------------------------------------------------------------------------
# Small-signal transistor quantities
# --------------------------------------------------------------------------------------


def thermal_voltage(temperature_k: ArrayLike) -> FloatArray:
    """Thermal voltage of a p-n junction.

    Parameters
    ----------
    temperature_k : array_like
        Junction temperature, K.

    Returns
    -------
    ndarray
        V_T, V (25.85 mV at 300 K).

    Notes
    -----
    V_T = k T / q with the exact SI (2019) values of the Boltzmann constant and the
    elementary charge from ``scipy.constants``.
    """
    return _real(constants.k * _real(temperature_k) / constants.e)


def transconductance(ic: ArrayLike, vt: ArrayLike) -> FloatArray:
    """Transconductance of a bipolar transistor at collector current ``ic``.

    Parameters
    ----------
    ic : array_like
        Quiescent collector current, A.
    vt : array_like
        Thermal voltage, V.

    Returns
    -------
    ndarray
        g_m, S.

    Notes
    -----
    g_m = I_C / V_T, from the Ebers-Moll exponential (Horowitz & Hill 3rd ed. sec. 2.3.1,
    from memory).
    """
    return _real(_real(ic) / _real(vt))


def emitter_resistance(ie: ArrayLike, vt: ArrayLike) -> FloatArray:
    """Intrinsic small-signal emitter resistance r_e.

    Parameters
    ----------
    ie : array_like
        Quiescent emitter current, A.
    vt : array_like
        Thermal voltage, V.

    Returns
    -------
    ndarray
        r_e, ohm (about 25 ohm at 1 mA).

    Notes
    -----
    r_e = V_T / I_E (Horowitz & Hill 3rd ed. sec. 2.3.2, "r_e = 25 ohm / I_C in mA",
    from memory). Using I_E rather than I_C makes r_pi = (beta + 1) r_e exact.
    """
    return _real(_real(vt) / _real(ie))


def r_pi(beta: ArrayLike, gm: ArrayLike) -> FloatArray:
    """Base-emitter small-signal resistance of the hybrid-pi model.

    Parameters
    ----------
    beta : array_like
        Small-signal current gain h_fe, dimensionless.
    gm : array_like
        Transconductance, S.

    Returns
    -------
    ndarray
        r_pi, ohm.

    Notes
    -----
    r_pi = beta / g_m (hybrid-pi model; Horowitz & Hill 3rd ed. sec. 2.3, from memory).
    """
    return _real(_real(beta) / _real(gm))


def parallel(*z: ArrayLike) -> ZArray:
    """Impedances in parallel.

    Parameters
    ----------
    *z : array_like
        Two or more impedances, ohm, real or complex, broadcast against each other.
        ``0`` is a short and ``inf`` an open circuit.

    Returns
    -------
    ndarray
        The parallel combination, ohm (complex if any input is complex).

    Notes
    -----
    Z = 1 / sum(1 / Z_k). A zero impedance anywhere gives exactly 0; all-open gives inf.
    """
    if len(z) < 2:
        raise TypeError("parallel() needs at least two impedances")
    stacked = np.broadcast_arrays(*(np.asarray(zk) for zk in z))
    zs = np.stack(stacked)
    if not np.iscomplexobj(zs):
        zs = zs.astype(float)
    shorted = np.any(zs == 0, axis=0)
    open_ = np.isinf(zs)
    safe = np.where((zs == 0) | open_, 1.0, zs)
    admittance = np.sum(np.where(open_ | (zs == 0), 0.0, 1.0 / safe), axis=0)
    no_path = admittance == 0
    result = 1.0 / np.where(no_path, 1.0, admittance)
    result = np.where(no_path, np.inf, result)
    return np.asarray(np.where(shorted, 0.0, result))


# --------------------------------------------------------------------------------------
# Emitter follower: small signal
# --------------------------------------------------------------------------------------


def follower_input_impedance(beta: ArrayLike, re: ArrayLike, z_emitter_load: ArrayLike) -> ZArray:
    """Impedance looking into the base of an emitter follower.

    Parameters
    ----------
    beta : array_like
        Small-signal current gain, dimensionless.
    re : array_like
        Intrinsic emitter resistance r_e, ohm (see :func:`emitter_resistance`).
    z_emitter_load : array_like
        Total impedance from emitter to AC ground, ohm, real or complex: the emitter
        resistor (or current source) in parallel with the load, ``parallel(r_e_bias, z_l)``.

    Returns
    -------
    ndarray
        Z_in at the base, ohm (bias divider and base resistor not included).

    Notes
    -----
    Z_in = (beta + 1) (r_e + Z_E), Z_E = R_E || Z_L (Horowitz & Hill 3rd ed. sec. 2.2.3,
    "impedance looking into the base is (beta + 1) times the emitter load", with r_e added
    per sec. 2.3.2; from memory). Exact for the hybrid-pi model with r_pi = (beta + 1) r_e,
    ignoring r_o and capacitances.
    """
    return np.asarray((_real(beta) + 1.0) * (np.asarray(re) + np.asarray(z_emitter_load)))


def follower_output_impedance(
    beta: ArrayLike, re: ArrayLike, z_source: ArrayLike, rbb: ArrayLike = 0.0
) -> ZArray:
    """Impedance looking back into the emitter of a follower.

    Parameters
    ----------
    beta : array_like
        Small-signal current gain, dimensionless.
    re : array_like
        Intrinsic emitter resistance r_e, ohm.
    z_source : array_like
        Impedance driving the base (source in parallel with the bias network, plus any
        base stopper resistor), ohm, real or complex.
    rbb : array_like, optional
        Base spreading resistance r_bb', ohm. Default 0.

    Returns
    -------
    ndarray
        Z_out at the emitter, ohm (the emitter bias resistor not in parallel).

    Notes
    -----
    Z_out = r_e + (Z_s + r_bb') / (beta + 1) (Horowitz & Hill 3rd ed. sec. 2.2.3, "the
    source impedance divided by beta + 1", with r_e from sec. 2.3.2; from memory).
    """
    return np.asarray(
        np.asarray(re) + (np.asarray(z_source) + np.asarray(rbb)) / (_real(beta) + 1.0)
    )


def follower_voltage_gain(re: ArrayLike, z_emitter_load: ArrayLike) -> ZArray:
    """Voltage gain from base to emitter of a follower.

    Parameters
    ----------
    re : array_like
        Intrinsic emitter resistance r_e, ohm.
    z_emitter_load : array_like
        Total emitter-to-AC-ground impedance R_E || Z_L, ohm, real or complex.

    Returns
    -------
    ndarray
        v_e / v_b, dimensionless (just under 1).

    Notes
    -----
    A = Z_E / (r_e + Z_E): r_e in series with the emitter load forms a divider
    (Horowitz & Hill 3rd ed. sec. 2.3.2, from memory).
    """
    ze = np.asarray(z_emitter_load)
    return np.asarray(ze / (np.asarray(re) + ze))


# --------------------------------------------------------------------------------------
# Emitter follower: DC bias and swing
# --------------------------------------------------------------------------------------


def follower_bias_resistor(
    v_pos: ArrayLike, v_neg: ArrayLike, v_base: ArrayLike, vbe: ArrayLike, r_emitter: ArrayLike
) -> FloatArray:
    """Quiescent emitter current of a follower biased by an emitter resistor.

    Parameters
    ----------
    v_pos : array_like
        Collector (positive) rail, V.
    v_neg : array_like
        Rail the emitter resistor returns to, V.
    v_base : array_like
        Quiescent base voltage, V.
    vbe : array_like
        Base-emitter drop, V.
    r_emitter : array_like
        Emitter resistor R_E, ohm.

    Returns
    -------
    ndarray
        I_E, A. 0 where the base sits too low for the junction to conduct (cut off).

    Notes
    -----
    V_E = V_B - V_BE and I_E = (V_E - V_neg) / R_E (Horowitz & Hill 3rd ed. sec. 2.2.5,
    from memory). V_E is capped at ``v_pos``: a base driven above the collector rail
    saturates the transistor and the emitter cannot follow (idealised: V_CE(sat) and the
    resulting base current are ignored).
    """
    v_e = np.minimum(_real(v_base) - _real(vbe), _real(v_pos))
    return _real(np.maximum((v_e - _real(v_neg)) / _real(r_emitter), 0.0))


def follower_positive_swing(
    v_pos: ArrayLike, vce_sat: ArrayLike, v_emitter: ArrayLike
) -> FloatArray:
    """Peak upward swing of a follower's emitter before the transistor saturates.

    Parameters
    ----------
    v_pos : array_like
        Collector rail, V.
    vce_sat : array_like
        Collector-emitter saturation voltage, V.
    v_emitter : array_like
        Quiescent emitter voltage, V.

    Returns
    -------
    ndarray
        Peak positive swing, V, never below 0.

    Notes
    -----
    V_pk+ = V+ - V_CE(sat) - V_E (Horowitz & Hill 3rd ed. sec. 2.2.3, from memory). The
    stage driving the base must also reach V_E + V_pk+ + V_BE; that is its own limit.
    """
    return _real(np.maximum(_real(v_pos) - _real(vce_sat) - _real(v_emitter), 0.0))


def follower_negative_swing_resistor(
    i_e: ArrayLike,
    r_emitter: ArrayLike,
    z_load: ArrayLike,
    v_emitter: ArrayLike,
    v_neg: ArrayLike,
) -> FloatArray:
    """Peak downward swing of a resistor-biased follower before it cuts off.

    Parameters
    ----------
    i_e : array_like
        Quiescent emitter current, A.
    r_emitter : array_like
        Emitter resistor R_E, ohm.
    z_load : array_like
        Load impedance at the emitter, ohm, real or complex; AC-coupled, or DC-coupled
        with its return at the quiescent emitter voltage.
    v_emitter : array_like
        Quiescent emitter voltage, V.
    v_neg : array_like
        Rail R_E returns to, V.

    Returns
    -------
    ndarray
        Peak negative swing, V: min(I_E |R_E || Z_L|, V_E - V_neg), never below 0.

    Notes
    -----
    On the downswing the transistor turns off once the current the emitter node must sink
    through R_E and the load reaches I_E, so V_pk- = I_E (R_E || R_L) (Horowitz & Hill
    3rd ed. sec. 2.2.3-2.2.5, the follower's asymmetric clipping, from memory). For a sine
    into a complex Z_L the emitter current is I_E + v (1/R_E + 1/Z_L), whose sinusoidal
    part has amplitude V_pk / |R_E || Z_L|, so the magnitude makes the same statement
    exact. The emitter also cannot go below the rail R_E returns to; with a passive load
    this cap never binds, it is kept for safety.
    """
    divider = np.abs(parallel(r_emitter, z_load))
    swing = np.minimum(_real(i_e) * divider, _real(v_emitter) - _real(v_neg))
    return _real(np.maximum(swing, 0.0))


def follower_negative_swing_current(
    i_bias: ArrayLike,
    z_load: ArrayLike,
    v_emitter: ArrayLike,
    v_neg: ArrayLike,
    v_compliance: ArrayLike = 0.0,
) -> FloatArray:
    """Peak downward swing of a follower biased by a current sink.

    Parameters
    ----------
    i_bias : array_like
        Current of the emitter current sink, A.
    z_load : array_like
        Load impedance at the emitter, ohm, real or complex; AC-coupled, or DC-coupled
        with its return at the quiescent emitter voltage.
    v_emitter : array_like
        Quiescent emitter voltage, V.
    v_neg : array_like
        Rail the current sink returns to, V.
    v_compliance : array_like, optional
        Least voltage the sink needs across itself to keep regulating, V. Default 0.

    Returns
    -------
    ndarray
        Peak negative swing, V: min(I_bias |Z_L|, V_E - V_neg - V_compliance), never
        below 0.

    Notes
    -----
    With an ideal current sink only the load takes the signal current, so the transistor
    cuts off when the load draws the whole I_bias: V_pk- = I_bias |Z_L| (Horowitz & Hill
    3rd ed. sec. 2.2.3, current-source-biased follower, from memory). Below
    V_neg + V_compliance the sink stops regulating, hence the cap.
    """
    swing = np.minimum(
        _real(i_bias) * np.abs(np.asarray(z_load)),
        _real(v_emitter) - _real(v_neg) - _real(v_compliance),
    )
    return _real(np.maximum(swing, 0.0))


# --------------------------------------------------------------------------------------
# Class-AB push-pull stage: swing and drive
# --------------------------------------------------------------------------------------


def single_supply_equivalent_rail(v_supply: ArrayLike) -> FloatArray:
    """Equivalent split-rail voltage of a single-supply stage with an output capacitor.

    Parameters
    ----------
    v_supply : array_like
        Total supply voltage V_s, V.

    Returns
    -------
    ndarray
        V_cc = V_s / 2, V: the rail voltage measured from the output's bias point.

    Notes
    -----
    The output sits at V_s / 2 and the coupling capacitor holds that voltage, so the upper
    device works from V_s / 2 above the load and the lower device from V_s / 2 below it on
    alternate half-cycles: the stage is a split-supply stage with V_cc = V_s / 2 for swing,
    supply power and dissipation (Boylestad & Nashelsky, class B section, single-supply
    push-pull, from memory). Only the upper half-cycle draws from the supply; the lower
    half-cycle is fed by the capacitor.
    """
    return _real(_real(v_supply) / 2.0)


def push_pull_swing(
    v_rail: ArrayLike,
    vce_sat: ArrayLike,
    vbe_drivers: ArrayLike,
    i_peak: ArrayLike,
    r_emitter: ArrayLike,
) -> FloatArray:
    """Peak output swing of one half of a push-pull stage at a given peak current.

    Parameters
    ----------
    v_rail : array_like
        Rail voltage measured from the output's bias point, V (each rail of a split
        supply; half the total for a single supply, :func:`single_supply_equivalent_rail`).
    vce_sat : array_like
        Saturation voltage of whatever pulls the bases towards the rail (driver stage or
        its current source), V.
    vbe_drivers : array_like
        Total base-emitter drop from the driving node to the emitter resistor, V: one
        V_BE for a plain pair, two for a Darlington.
    i_peak : array_like
        Peak output current, A.
    r_emitter : array_like
        Emitter resistor of the conducting device, ohm.

    Returns
    -------
    ndarray
        Peak output voltage, V, never below 0.

    Notes
    -----
    V_pk = V_rail - V_CE(sat) - V_BE(drivers) - I_pk R_E (Horowitz & Hill 3rd ed.
    sec. 2.4.1, push-pull output stages, from memory). Evaluate each half against its own
    rail and take the smaller for an asymmetric stage.
    """
    swing = _real(v_rail) - _real(vce_sat) - _real(vbe_drivers) - _real(i_peak) * _real(r_emitter)
    return _real(np.maximum(swing, 0.0))


def push_pull_clip_vpk(
    v_rail: ArrayLike,
    vce_sat: ArrayLike,
    vbe_drivers: ArrayLike,
    r_emitter: ArrayLike,
    z_load: ArrayLike,
) -> FloatArray:
    """Peak output voltage at which a push-pull stage clips into a load.

    Parameters
    ----------
    v_rail : array_like
        Rail voltage measured from the output's bias point, V.
    vce_sat : array_like
        Saturation voltage of the base drive towards the rail, V.
    vbe_drivers : array_like
        Total base-emitter drop to the emitter resistor, V.
    r_emitter : array_like
        Emitter resistor of the conducting device, ohm.
    z_load : array_like
        Load impedance, ohm, real or complex.

    Returns
    -------
    ndarray
        Clipping peak output voltage, V, never below 0.

    Notes
    -----
    With I_pk = V / Z_L, :func:`push_pull_swing` becomes V = A - (V / Z_L) R_E with
    A = V_rail - V_CE(sat) - V_BE(drivers), so V = A Z_L / (Z_L + R_E): the emitter
    resistor and the load divide the available swing. For a sine into a complex Z_L the
    voltage behind R_E is the phasor V (1 + R_E / Z_L), whose amplitude must equal A, so
    V = A |Z_L| / |Z_L + R_E|; for a real load both forms agree. (Derived here from the
    swing equation of Horowitz & Hill 3rd ed. sec. 2.4.1, from memory.)
    """
    available = np.maximum(_real(v_rail) - _real(vce_sat) - _real(vbe_drivers), 0.0)
    z = np.asarray(z_load)
    return _real(available * np.abs(z) / np.abs(z + _real(r_emitter)))


def push_pull_input_impedance(
    beta_out: ArrayLike,
    beta_driver: ArrayLike | None,
    r_emitter: ArrayLike,
    z_load: ArrayLike,
) -> ZArray:
    """Impedance looking into the bases of a push-pull stage (conducting half).

    Parameters
    ----------
    beta_out : array_like
        Current gain of the output device, dimensionless.
    beta_driver : array_like or None
        Current gain of the Darlington driver, or ``None`` for a plain pair.
    r_emitter : array_like
        Emitter resistor of the conducting device, ohm.
    z_load : array_like
        Load impedance, ohm, real or complex.

    Returns
    -------
    ndarray
        Z_in, ohm.

    Notes
    -----
    Z_in = (beta + 1) (R_E + Z_L), times (beta_d + 1) again for a Darlington (Horowitz &
    Hill 3rd ed. sec. 2.4.1-2.4.2: a follower's input impedance, and the Darlington's
    beta approximately beta_1 beta_2; from memory). The devices' own r_e (a fraction of an
    ohm at output currents) and the bias network in parallel with the bases are ignored.
    """
    z_in = (_real(beta_out) + 1.0) * (_real(r_emitter) + np.asarray(z_load))
    if beta_driver is not None:
        z_in = z_in * (_real(beta_driver) + 1.0)
    return np.asarray(z_in)


def peak_base_current(i_peak: ArrayLike, beta_total: ArrayLike) -> FloatArray:
    """Peak current the driver must supply into the output stage's base.

    Parameters
    ----------
    i_peak : array_like
        Peak output current, A.
    beta_total : array_like
        Overall current gain (beta_1 beta_2 for a Darlington), dimensionless.

    Returns
    -------
    ndarray
        Peak base current, A.

    Notes
    -----
    I_B = I_pk / beta (Horowitz & Hill 3rd ed. sec. 2.1.1, from memory).
    """
    return _real(_real(i_peak) / _real(beta_total))


# --------------------------------------------------------------------------------------
# Output figures
# --------------------------------------------------------------------------------------


def sine_power(vpk: ArrayLike, z_load: ArrayLike) -> FloatArray:
    """Average power of a sine delivered into a load.

    Parameters
    ----------
    vpk : array_like
        Peak voltage across the load, V.
    z_load : array_like
        Load impedance, ohm, real or complex.

    Returns
    -------
    ndarray
        Average (real) power, W.

    Notes
    -----
    P = V_pk^2 Re(1 / Z_L) / 2 = V_pk^2 cos(phi) / (2 |Z_L|); for a resistive load this is
    V_pk^2 / (2 R_L) (Boylestad & Nashelsky, class B section, P_o = V_L(p)^2 / (2 R_L),
    from memory).
    """
    vp = _real(vpk)
    return _real(vp * vp * np.real(1.0 / np.asarray(z_load)) / 2.0)


def spl_at_1m(sensitivity_db: ArrayLike, power_w: ArrayLike) -> FloatArray:
    """Sound pressure level at 1 m for a given electrical power.

    Parameters
    ----------
    sensitivity_db : array_like
        Loudspeaker sensitivity, dB SPL for 1 W at 1 m.
    power_w : array_like
        Electrical power into the speaker, W.

    Returns
    -------
    ndarray
        SPL at 1 m, dB (-inf for zero power).

    Notes
    -----
    SPL = sensitivity + 10 log10(P / 1 W): the speaker treated as linear (common practice,
    no source; ignores power compression). Caution: sustained levels above about 85 dB(A)
    damage hearing; follow local occupational-noise rules.
    """
    with np.errstate(divide="ignore"):
        return _real(_real(sensitivity_db) + 10.0 * np.log10(_real(power_w) / _ONE_WATT))


def hiss_spl(sensitivity_db: ArrayLike, v_noise_rms: ArrayLike, z_load: ArrayLike) -> FloatArray:
    """Sound pressure level at 1 m of the amplifier's output noise.

    Parameters
    ----------
    sensitivity_db : array_like
        Loudspeaker sensitivity, dB SPL for 1 W at 1 m.
    v_noise_rms : array_like
        Noise voltage across the speaker, V rms (weighted or not, as the caller chooses).
    z_load : array_like
        Speaker impedance, ohm, real or complex.

    Returns
    -------
    ndarray
        Noise SPL at 1 m, dB.

    Notes
    -----
    SPL = sensitivity + 20 log10(V_n / sqrt(1 W * Z_L)) for a resistive load: the noise
    power V_n^2 / Z_L relative to 1 W (common practice, no source). For a complex Z_L the
    power V_n^2 Re(1 / Z_L) is used, the same thing written through :func:`spl_at_1m`.
    """
    vn = _real(v_noise_rms)
    power = vn * vn * np.real(1.0 / np.asarray(z_load))
    return spl_at_1m(sensitivity_db, power)


def damping_factor(z_load: ArrayLike, z_out: ArrayLike) -> FloatArray:
    """Damping factor of an amplifier driving a load.

    Parameters
    ----------
    z_load : array_like
        Nominal load impedance, ohm, real or complex.
    z_out : array_like
        Amplifier output impedance (including series wiring if wanted), ohm, real or
        complex.

    Returns
    -------
    ndarray
        |Z_L| / |Z_out|, dimensionless (inf for a zero output impedance).

    Notes
    -----
    DF = |Z_L| / |Z_out| (common practice, no source).
    """
    with np.errstate(divide="ignore"):
        return _real(np.abs(np.asarray(z_load)) / np.abs(np.asarray(z_out)))


def highpass_corner(c: ArrayLike, r: ArrayLike) -> FloatArray:
    """-3 dB corner of a first-order RC high-pass (e.g. output capacitor into the load).

    Parameters
    ----------
    c : array_like
        Series capacitance, F.
    r : array_like
        Resistance it works into, ohm (load plus source resistance).

    Returns
    -------
    ndarray
        Corner frequency, Hz.

    Notes
    -----
    f_c = 1 / (2 pi R C) (Horowitz & Hill 3rd ed. sec. 1.7, RC filters, from memory).
    """
    return _real(1.0 / (2.0 * np.pi * _real(r) * _real(c)))


# --------------------------------------------------------------------------------------
# Class B / AB supply power and dissipation (split rails +/- V_cc)
# --------------------------------------------------------------------------------------


def class_b_rail_average_current(vpk: ArrayLike, z_load: ArrayLike) -> FloatArray:
    """Average current drawn from EACH rail of a split-supply class-B stage by a sine.

    Parameters
    ----------
    vpk : array_like
        Peak output voltage, V.
    z_load : array_like
        Load impedance, ohm, real or complex.

    Returns
    -------
    ndarray
        Average current from one rail, A. The two rails together supply twice this;
        a single-supply stage with an output capacitor draws exactly this from its
        one supply.

    Notes
    -----
    Each rail delivers half-sine pulses of peak I_pk = V_pk / |Z_L| on its half-cycle, whose
    average over a full period is I_pk / pi (Boylestad & Nashelsky, class B section:
    I_dc = (2 / pi) I_pk for both halves together, from memory). The phase of the load
    does not change the conduction of each device for half the current's cycle.
    """
    return _real(_real(vpk) / (np.pi * np.abs(np.asarray(z_load))))


def class_b_supply_power(vcc: ArrayLike, vpk: ArrayLike, z_load: ArrayLike) -> FloatArray:
    """Total DC power drawn from both rails of a class-B stage by a sine.

    Parameters
    ----------
    vcc : array_like
        Each rail's voltage from the output's bias point, V (V_s / 2 for a single supply).
    vpk : array_like
        Peak output voltage, V.
    z_load : array_like
        Load impedance, ohm, real or complex.

    Returns
    -------
    ndarray
        P_dc, W.

    Notes
    -----
    P_dc = 2 V_cc V_pk / (pi |Z_L|) (Boylestad & Nashelsky, class B section,
    P_i = V_CC (2 / pi) I_pk, from memory); see :func:`class_b_rail_average_current`.
    """
    return _real(2.0 * _real(vcc) * class_b_rail_average_current(vpk, z_load))


def class_b_total_dissipation(
    vcc: ArrayLike, vpk: ArrayLike, z_load: ArrayLike, i_quiescent: ArrayLike = 0.0
) -> FloatArray:
    """Dissipation of both output devices of a class-B/AB stage driven by a sine.

    Parameters
    ----------
    vcc : array_like
        Each rail's voltage from the output's bias point, V.
    vpk : array_like
        Peak output voltage, V.
    z_load : array_like
        Load impedance, ohm, real or complex (reactive loads: see Notes).
    i_quiescent : array_like, optional
        Class-AB idle current through the pair, A. Default 0 (class B).

    Returns
    -------
    ndarray
        Total device dissipation, W (emitter resistors' share included, a few percent).

    Notes
    -----
    P_2Q = P_dc - P_o + 2 V_cc I_q with P_dc from :func:`class_b_supply_power` and P_o from
    :func:`sine_power` (Boylestad & Nashelsky, class B section, P_2Q = P_i - P_o, from
    memory). For a load of phase phi, P_o = V_pk^2 cos(phi) / (2 |Z_L|) while P_dc depends
    only on |Z_L|, so a reactive load dissipates more in the devices at the same swing.
    The idle term counts the full quiescent current at every level, a slight overestimate
    for class AB (one device's idle current falls as the other's rises).
    """
    return _real(
        class_b_supply_power(vcc, vpk, z_load)
        - sine_power(vpk, z_load)
        + 2.0 * _real(vcc) * _real(i_quiescent)
    )


def class_b_device_dissipation(
    vcc: ArrayLike, vpk: ArrayLike, z_load: ArrayLike, i_quiescent: ArrayLike = 0.0
) -> FloatArray:
    """Dissipation of one output device of a symmetric class-B/AB stage.

    Parameters
    ----------
    vcc, vpk, z_load, i_quiescent : array_like
        As :func:`class_b_total_dissipation`.

    Returns
    -------
    ndarray
        Per-device dissipation, W: half the total.

    Notes
    -----
    P_Q = P_2Q / 2 by symmetry (Boylestad & Nashelsky, class B section, from memory). Use
    this with :func:`chainbudget.thermal.junction_temperature`.
    """
    return _real(class_b_total_dissipation(vcc, vpk, z_load, i_quiescent) / 2.0)


def class_b_efficiency(vcc: ArrayLike, vpk: ArrayLike) -> FloatArray:
    """Efficiency of a class-B stage into a resistive load.

    Parameters
    ----------
    vcc : array_like
        Each rail's voltage from the output's bias point, V.
    vpk : array_like
        Peak output voltage, V.

    Returns
    -------
    ndarray
        P_o / P_dc, dimensionless (pi / 4 = 78.5 % at V_pk = V_cc).

    Notes
    -----
    eta = (pi / 4) V_pk / V_cc (Boylestad & Nashelsky, class B section, from memory).
    Idle current not included.
    """
    return _real(np.pi * _real(vpk) / (4.0 * _real(vcc)))


def class_b_worst_vpk(vcc: ArrayLike, phase_rad: ArrayLike = 0.0) -> FloatArray:
    """Peak output voltage at which a class-B stage dissipates most.

    Parameters
    ----------
    vcc : array_like
        Each rail's voltage from the output's bias point, V.
    phase_rad : array_like, optional
        Load phase angle phi, rad (0 for a resistor). Default 0.

    Returns
    -------
    ndarray
        V_pk of maximum dissipation, V: 2 V_cc / pi for a resistive load.

    Notes
    -----
    dP_2Q/dV_pk = 2 V_cc / (pi |Z|) - V_pk cos(phi) / |Z| = 0 gives
    V_pk = 2 V_cc / (pi cos(phi)) (Boylestad & Nashelsky, class B section, V_L = 0.636 V_CC
    for a resistor, from memory; the phase generalisation derived here). When that exceeds
    V_cc (cos(phi) < 2 / pi, phi > 50.5 deg) the dissipation rises all the way to full
    swing, and V_cc is returned. If the stage clips below this value, the worst case is at
    the clip level instead; the caller takes the smaller.
    """
    v = _real(vcc)
    cos_phi = np.cos(_real(phase_rad))
    threshold = 2.0 / np.pi
    safe_cos = np.where(cos_phi > threshold, cos_phi, 1.0)
    return _real(np.where(cos_phi > threshold, 2.0 * v / (np.pi * safe_cos), v))


def class_b_worst_dissipation(
    vcc: ArrayLike, z_load: ArrayLike, i_quiescent: ArrayLike = 0.0
) -> FloatArray:
    """Largest total dissipation of both devices of a class-B/AB stage over all sine levels.

    Parameters
    ----------
    vcc : array_like
        Each rail's voltage from the output's bias point, V.
    z_load : array_like
        Load impedance, ohm, real or complex.
    i_quiescent : array_like, optional
        Idle current, A. Default 0.

    Returns
    -------
    ndarray
        Maximum P_2Q, W: 2 V_cc^2 / (pi^2 R_L) for a resistive class-B stage.

    Notes
    -----
    P_2Q(max) = 2 V_cc^2 / (pi^2 R_L) at V_pk = 2 V_cc / pi (Boylestad & Nashelsky,
    class B section, from memory); for a complex load evaluated at
    :func:`class_b_worst_vpk` with the load's phase.
    """
    z = np.asarray(z_load)
    vpk = class_b_worst_vpk(vcc, np.angle(z))
    return class_b_total_dissipation(vcc, vpk, z, i_quiescent)


def class_b_reactive_dissipation(
    vcc: ArrayLike,
    vpk: ArrayLike,
    z_magnitude: ArrayLike,
    phase_rad: ArrayLike,
    i_quiescent: ArrayLike = 0.0,
) -> FloatArray:
    """Total device dissipation of a class-B/AB stage into a load of given phase angle.

    Parameters
    ----------
    vcc : array_like
        Each rail's voltage from the output's bias point, V.
    vpk : array_like
        Peak output voltage, V.
    z_magnitude : array_like
        Load impedance magnitude |Z_L|, ohm.
    phase_rad : array_like
        Load phase angle phi, rad (current lags voltage by phi; +/- pi/2 at most).
    i_quiescent : array_like, optional
        Idle current, A. Default 0.

    Returns
    -------
    ndarray
        Average total device dissipation, W.

    Notes
    -----
    P_2Q = 2 V_cc V_pk / (pi |Z|) - V_pk^2 cos(phi) / (2 |Z|) + 2 V_cc I_q: each device
    conducts for half the current's cycle whatever the phase, so P_dc is unchanged while
    the power reaching the load falls with cos(phi) (derived from the Boylestad & Nashelsky
    class B analysis with the load current shifted by phi). Averages only: the
    instantaneous peak dissipation into a reactive load is higher and is a safe operating
    area question this does not answer.
    """
    z = _real(z_magnitude) * np.exp(1j * _real(phase_rad))
    return class_b_total_dissipation(vcc, vpk, z, i_quiescent)
