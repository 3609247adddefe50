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

from chainbudget.spectrum import boltzmann_k, elementary_charge

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
    elementary charge (`chainbudget.spectrum`).
    """
    return _real(boltzmann_k * _real(temperature_k) / elementary_charge)


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
