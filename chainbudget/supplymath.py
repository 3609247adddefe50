"""Closed-form physics of the power tree: rectified rails, regulators, bleeders, batteries.

Plain SI floats and ndarrays in and out (V, A, ohm, F, Hz, W, h). Element-wise formulas take
array_like and return an ndarray (0-d for scalar input), like :mod:`chainbudget.thermal`.

Safety: a rectified supply starts at the mains. The numbers here are a paper budget, not a
safety assessment; mains wiring, fusing and insulation follow local electrical codes and
licensed practice.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget.eseries import largest_at_most, smallest_at_least

_SQRT2 = float(np.sqrt(2.0))


def _f(x: ArrayLike) -> NDArray[np.float64]:
    return np.asarray(x, dtype=float)


def mains_factors(tolerance_fraction: float) -> tuple[float, float, float]:
    """Low-line, nominal and high-line multipliers for a mains tolerance.

    Parameters
    ----------
    tolerance_fraction : float
        Symmetric mains tolerance as a fraction (0.1 for +/-10 %), ``0 <= t < 1``.

    Returns
    -------
    (low, nominal, high) : tuple of float
        ``(1 - t, 1, 1 + t)``.

    Notes
    -----
    The transformer secondary scales with the primary, so the line extremes scale every
    rectified voltage by these factors. For 230 V public supplies the band is +/-10 %
    (CENELEC harmonisation, IEC 60038).
    """
    t = float(tolerance_fraction)
    if not 0.0 <= t < 1.0:
        raise ValueError(f"mains tolerance must be in [0, 1), got {t}")
    return (1.0 - t, 1.0, 1.0 + t)


def rectified_peak(
    secondary_vrms: ArrayLike,
    mains_factor: ArrayLike,
    bridge_drop_v: ArrayLike,
    regulation_fraction: ArrayLike = 0.0,
    load_fraction: ArrayLike = 1.0,
) -> NDArray[np.float64]:
    """Peak voltage on the reservoir capacitor of a capacitor-input rectifier.

    Parameters
    ----------
    secondary_vrms : array_like
        Transformer secondary, V rms, at nominal mains and rated load.
    mains_factor : array_like
        Line multiplier, e.g. from :func:`mains_factors`.
    bridge_drop_v : array_like
        Total rectifier drop in the conduction path at peak current, V: two diode drops for
        a bridge, one for a half-wave or centre-tapped rectifier.
    regulation_fraction : array_like, optional
        Transformer regulation: rise of the secondary from rated load to no load, as a
        fraction of the rated-load voltage (0.1 = 10 %). Default 0.
    load_fraction : array_like, optional
        Load current as a fraction of the transformer's rated current; 0 = no load,
        1 = rated load (default). Values above 1 extrapolate the same line downwards.

    Returns
    -------
    ndarray
        Peak reservoir voltage, V.

    Notes
    -----
    V_peak = sqrt(2) V_sec k_mains (1 + r (1 - x)) - V_drop, with r the regulation and x
    the load fraction. The sqrt(2) crest factor of a sine and the diode drops are the
    textbook unregulated supply (Horowitz & Hill, The Art of Electronics, 3rd ed.,
    sec. 9.5, from memory). Modelling choice (ours): the secondary voltage is interpolated linearly
    between its no-load value (1 + r) V_sec and its rated-load value V_sec, i.e. the
    transformer is a fixed source resistance; the real rise also depends on the
    conduction angle. The same formula serves half-wave and full-wave rectifiers; only the
    drop differs, and the caller supplies it.
    """
    vsec = _f(secondary_vrms)
    rise = 1.0 + _f(regulation_fraction) * (1.0 - _f(load_fraction))
    return np.asarray(_SQRT2 * vsec * _f(mains_factor) * rise - _f(bridge_drop_v), dtype=float)


def ripple_vpp(
    load_current_a: ArrayLike,
    line_frequency_hz: ArrayLike,
    reservoir_f: ArrayLike,
    half_wave: bool = False,
) -> NDArray[np.float64]:
    """Peak-to-peak ripple on a reservoir capacitor feeding a constant current.

    Parameters
    ----------
    load_current_a : array_like
        Mean load current, A.
    line_frequency_hz : array_like
        Mains frequency, Hz (50 or 60).
    reservoir_f : array_like
        Reservoir capacitance, F.
    half_wave : bool, optional
        True for a half-wave rectifier (one recharge per line cycle). Default full-wave.

    Returns
    -------
    ndarray
        Ripple, V peak-to-peak.

    Notes
    -----
    V_pp = I / (2 f C) full-wave, I / (f C) half-wave: the capacitor discharged at constant
    current for a whole recharge interval (Horowitz & Hill, The Art of Electronics, 3rd
    ed., sec. 9.5.2, from memory). Conservative: the real discharge stops when the rising
    sine meets the capacitor voltage, before the full interval has passed, so the true
    ripple is smaller. Valid while the ripple is small against the peak.
    """
    pulses_per_cycle = 1.0 if half_wave else 2.0
    i = _f(load_current_a)
    return np.asarray(i / (pulses_per_cycle * _f(line_frequency_hz) * _f(reservoir_f)), float)


class RectifiedExtremes(NamedTuple):
    """Worst-case voltages of a capacitor-input rectified rail, V."""

    trough_v: NDArray[np.float64]
    """Lowest instantaneous voltage: low line, full load, bottom of the ripple."""
    crest_v: NDArray[np.float64]
    """Highest voltage: high line, no load (no ripple)."""
    ripple_vpp: NDArray[np.float64]
    """Ripple at the given load current, V peak-to-peak."""


def trough_and_crest(
    secondary_vrms: ArrayLike,
    mains_tolerance: float,
    bridge_drop_v: ArrayLike,
    line_frequency_hz: ArrayLike,
    reservoir_f: ArrayLike,
    load_current_a: ArrayLike,
    regulation_fraction: ArrayLike = 0.0,
    rated_current_a: float | None = None,
    half_wave: bool = False,
) -> RectifiedExtremes:
    """Worst-case low (trough) and high (crest) voltage of a rectified rail.

    Parameters
    ----------
    secondary_vrms : array_like
        Secondary, V rms, at nominal mains and rated load.
    mains_tolerance : float
        Symmetric mains tolerance as a fraction (0.1 = +/-10 %).
    bridge_drop_v : array_like
        Total rectifier drop at peak current, V.
    line_frequency_hz : array_like
        Mains frequency, Hz.
    reservoir_f : array_like
        Reservoir capacitance, F.
    load_current_a : array_like
        Full (worst-case) mean load current on this rail, A.
    regulation_fraction : array_like, optional
        Transformer no-load rise over its rated-load voltage (fraction). Default 0.
    rated_current_a : float, optional
        Transformer rated current, A. Sets the load fraction for the regulation model; when
        omitted the full load is taken as the rated load (load fraction 1).
    half_wave : bool, optional
        Half-wave rectifier (ripple doubles). Default full-wave.

    Returns
    -------
    RectifiedExtremes
        ``trough_v``, ``crest_v`` and ``ripple_vpp``.

    Notes
    -----
    trough = V_peak(low line, full load) - V_pp(full load);
    crest = V_peak(high line, no load), with no ripple since nothing discharges the
    capacitor. V_peak from :func:`rectified_peak`, V_pp from :func:`ripple_vpp`
    (Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 9.5, from memory). The crest
    uses the same diode drop as at full load; a diode passing almost no current drops
    somewhat less, so the true crest is a few tenths of a volt higher than this figure.
    """
    low, _, high = mains_factors(mains_tolerance)
    load = _f(load_current_a)
    load_fraction = load / rated_current_a if rated_current_a is not None else np.ones_like(load)
    ripple = ripple_vpp(load, line_frequency_hz, reservoir_f, half_wave=half_wave)
    trough = (
        rectified_peak(secondary_vrms, low, bridge_drop_v, regulation_fraction, load_fraction)
        - ripple
    )
    crest = rectified_peak(secondary_vrms, high, bridge_drop_v, regulation_fraction, 0.0)
    return RectifiedExtremes(np.asarray(trough, float), crest, ripple)


# Divider naming follows chain-format.md, Vout = Vref (1 + upper/lower) + Iadj * upper:
# ``lower`` is the resistor across the reference (output pin to adjust pin) and ``upper``
# the one from the adjust pin to ground. (Drawn as a divider, "lower" sits at the top.)


def adjustable_output(
    vref: ArrayLike, iadj: ArrayLike, upper: ArrayLike, lower: ArrayLike
) -> NDArray[np.float64]:
    """Output voltage of an adjustable three-terminal regulator set by a divider.

    Parameters
    ----------
    vref : array_like
        Reference held between the output and adjust pins, V.
    iadj : array_like
        Current out of the adjust pin, A.
    upper : array_like
        Adjust-pin-to-ground resistor, ohm (names as in the chain format).
    lower : array_like
        Output-to-adjust-pin resistor, across the reference, ohm.

    Returns
    -------
    ndarray
        Output voltage, V.

    Notes
    -----
    Vout = Vref (1 + upper/lower) + Iadj upper: the reference forces Vref/lower through
    ``lower``; that current plus Iadj flows through ``upper`` to ground, so
    Vout = Vref + upper (Vref/lower + Iadj). The adjustable-regulator equation of
    Horowitz & Hill, The Art of Electronics, 3rd ed., ch. 9 (three-terminal adjustable
    regulators; chapter from memory).
    """
    r_ground = _f(upper)
    return np.asarray(_f(vref) * (1.0 + r_ground / _f(lower)) + _f(iadj) * r_ground, float)


def divider_current(vref: ArrayLike, lower: ArrayLike) -> NDArray[np.float64]:
    """Current through the resistor across the reference (``lower``), A.

    Parameters
    ----------
    vref : array_like
        Reference voltage, V.
    lower : array_like
        Output-to-adjust-pin resistor, ohm.

    Returns
    -------
    ndarray
        Vref / lower, A.

    Notes
    -----
    Ohm's law across the reference. This is the current the divider takes from the output
    (it counts toward a regulator's minimum load); ``upper`` carries it plus Iadj, and
    Iadj comes from the regulator, not the output.
    """
    return np.asarray(_f(vref) / _f(lower), dtype=float)


def bleeder_suggestion(vout: float, shortfall_a: float, series: str = "E24") -> tuple[float, float]:
    """Preferred-value resistor that draws at least a missing minimum-load current.

    Parameters
    ----------
    vout : float
        Rail voltage across the bleeder, V (> 0).
    shortfall_a : float
        Current still needed to reach the regulator's minimum load, A (> 0).
    series : str, optional
        E series for the resistor, default ``"E24"``.

    Returns
    -------
    resistance : float
        Largest series value with vout / R >= shortfall_a, ohm.
    dissipation_w : float
        Power in it, vout**2 / R, W. Choose a part rated well above this (twice is common
        practice, no source).

    Notes
    -----
    Ohm's law: R <= vout / shortfall; the largest such preferred value (IEC 60063) draws
    the least extra current that still meets the minimum load.
    """
    if not (vout > 0.0 and shortfall_a > 0.0):
        raise ValueError(f"need vout > 0 and shortfall > 0, got {vout} V, {shortfall_a} A")
    resistance = largest_at_most(vout / shortfall_a, series)
    return resistance, vout * vout / resistance


def regulator_dissipation(
    vin: ArrayLike, vout: ArrayLike, load_a: ArrayLike, quiescent_a: ArrayLike
) -> NDArray[np.float64]:
    """Power dissipated in a linear series regulator, W.

    Parameters
    ----------
    vin : array_like
        Input voltage, V (mean input for heating; the caller picks the line condition).
    vout : array_like
        Output voltage, V.
    load_a : array_like
        Current delivered from the output, A (including any divider and bleeder).
    quiescent_a : array_like
        Ground-pin current, A, taken from the input and returned to ground.

    Returns
    -------
    ndarray
        (vin - vout) load + vin quiescent, W.

    Notes
    -----
    Power balance of a series pass element: the load current drops vin - vout across it,
    and the quiescent (ground) current flows from input to ground through the whole device
    (Horowitz & Hill, The Art of Electronics, 3rd ed., ch. 9, from memory). For an adjustable
    regulator whose adjust current ends in the divider, not at ground, vin * quiescent
    slightly overstates the loss. Valid in regulation (vin >= vout + dropout).
    """
    vi = _f(vin)
    return np.asarray((vi - _f(vout)) * _f(load_a) + vi * _f(quiescent_a), dtype=float)


def ripple_after_regulator(
    input_ripple_vpp: ArrayLike, rejection_db: ArrayLike
) -> NDArray[np.float64]:
    """Output ripple of a regulator with a given ripple rejection, V p-p.

    Notes
    -----
    V_out,pp = V_in,pp 10**(-PSRR/20): ripple rejection is a ratio of voltages in decibels
    (20 log10, IEC 60027-3 for field quantities). Rejection falls at high frequency; use
    the figure at twice the line frequency.
    """
    return np.asarray(_f(input_ripple_vpp) * 10.0 ** (-_f(rejection_db) / 20.0), dtype=float)


def battery_runtime_h(capacity_ah: ArrayLike, current_a: ArrayLike) -> NDArray[np.float64]:
    """Hours a battery of given capacity lasts at a constant current.

    Parameters
    ----------
    capacity_ah : array_like
        Rated capacity, A h.
    current_a : array_like
        Constant drain, A (>= 0; zero gives ``inf``).

    Returns
    -------
    ndarray
        capacity / current, h.

    Notes
    -----
    t = C / I, the definition of the ampere-hour. Ideal: it ignores the capacity loss at
    high drain (Peukert's law) and at low temperature, so it is optimistic for drains well
    above the rating's own (often the 20-hour) rate.
    """
    cap = _f(capacity_ah)
    cur = _f(current_a)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.asarray(np.divide(cap, cur), dtype=float)


def sag(v: ArrayLike, resistance: ArrayLike, current: ArrayLike) -> NDArray[np.float64]:
    """Terminal voltage of a dc source with internal resistance under load, V.

    Parameters
    ----------
    v : array_like
        Open-circuit (emf) voltage, V.
    resistance : array_like
        Internal (source) resistance, ohm.
    current : array_like
        Current drawn, A.

    Returns
    -------
    ndarray
        v - resistance * current, V (the sagged terminal voltage, not the drop).

    Notes
    -----
    Thevenin equivalent of the source: an ideal emf in series with its internal resistance
    (Horowitz & Hill, The Art of Electronics, 3rd ed., ch. 1, Thevenin's theorem; from
    memory).
    """
    return np.asarray(_f(v) - _f(resistance) * _f(current), dtype=float)


def pulsed_sag(
    resistance_ohm: float,
    capacitance_f: float | None,
    dc_a: float,
    pulse_a: float,
    signal_hz: float | None,
) -> float:
    """Largest drop across a source resistance feeding a steady current and half-wave sine
    pulses, with an optional capacitor across the output, V (`pulsed_sags` of one part).
    """
    return float(pulsed_sags(resistance_ohm, capacitance_f, dc_a, pulse_a, signal_hz))


def pulsed_sags(
    resistance_ohm: ArrayLike,
    capacitance_f: ArrayLike | None,
    dc_a: ArrayLike,
    pulse_a: ArrayLike,
    signal_hz: float | None,
) -> NDArray[np.float64]:
    """Largest drop across a source resistance feeding a steady current and half-wave sine
    pulses, with an optional capacitor across the output, V; the resistance, capacitance
    and the load's currents may be arrays (the spread's trials), element-wise.

    Parameters
    ----------
    resistance_ohm : array_like
        Source resistance R (a battery's internal resistance, a filter's series resistor).
    capacitance_f : array_like or None
        Capacitor from the output to ground (None: none; a value not above zero: none).
    dc_a : array_like
        Steady load current, A.
    pulse_a : array_like
        Peak of the half-wave sine pulses, A (what a class-B output draws from one rail);
        none where not above zero.
    signal_hz : float or None
        Frequency of the pulses, Hz.

    Returns
    -------
    ndarray
        R (I_dc + I_p y_max), the drop at the crest of the pulses, R and C broadcast.

    Notes
    -----
    The output is the source less R times the load current seen through the low-pass
    1/(1 + j omega R C) that the capacitor makes of it: the steady part drops R I_dc, the
    pulses R I_p y, y the periodic response of a first-order low-pass of time constant
    omega_s R C to a half-wave rectified sine (`chainbudget.rectifier.pulse_response`;
    y_max = 1 without a capacitor, the drop at the pulses' crest, falling towards their
    mean 1/pi as the capacitor holds the output up over the signal period). Thevenin and
    the first-order step response of circuit theory.
    """
    r = _f(resistance_ohm)
    dc, pulse = _f(dc_a), _f(pulse_a)
    if signal_hz is None or not np.any(pulse > 0.0):
        return np.asarray(r * (dc + np.maximum(pulse, 0.0)), dtype=float)
    peak: NDArray[np.float64] = np.ones_like(r)
    if capacitance_f is not None:
        c = _f(capacitance_f)
        tau = 2.0 * np.pi * signal_hz * r * c
        from chainbudget.rectifier import pulse_response_peak  # loaded only where used

        # each trial's own peak (one row of the response's grid per time constant)
        found = pulse_response_peak(np.where(c > 0.0, tau, 0.0).reshape(-1)).reshape(tau.shape)
        peak = np.where(c > 0.0, found, 1.0)
    # a trial whose load draws no pulses drops R I_dc alone (its own load's, element-wise)
    return np.asarray(r * (dc + np.where(pulse > 0.0, pulse * peak, 0.0)), dtype=float)


def first_order_lowpass(hz: float, resistance_ohm: float, capacitance_f: float | None) -> complex:
    """Complex gain 1/(1 + j 2 pi f R C) of a series resistor into a shunt capacitor (1 with
    no capacitor): how an RC filter passes ripple at ``hz`` (circuit theory; `lowpass_gains`
    of one part at one frequency)."""
    return complex(lowpass_gains(hz, resistance_ohm, capacitance_f))


def lowpass_gains(
    hz: ArrayLike, resistance_ohm: ArrayLike, capacitance_f: ArrayLike | None
) -> NDArray[np.complex128]:
    """`first_order_lowpass` of arrays that broadcast together (frequencies, the spread's
    trials): 1/(1 + j 2 pi f R C), 1 where there is no capacitor (None, or not above
    zero)."""
    f, r = _f(hz), _f(resistance_ohm)
    if capacitance_f is None:
        return np.ones(np.broadcast_shapes(f.shape, r.shape), dtype=complex)
    c = _f(capacitance_f)
    with np.errstate(divide="ignore", invalid="ignore"):
        gain = 1.0 / (1.0 + 2j * np.pi * f * r * c)
    return np.asarray(np.where(c > 0.0, gain, 1.0 + 0.0j), dtype=complex)


def capacitor_for_attenuation(
    attenuation: float, hz: float, resistance_ohm: float, now_f: float | None, series: str = "E6"
) -> float:
    """The smallest capacitor of an E series that makes a first-order RC low-pass pass
    ``attenuation`` times less at ``hz`` than it does with ``now_f`` (None: no capacitor),
    F.

    Notes
    -----
    |1 + j w R C| = N |1 + j w R C_now| gives C = sqrt(N^2 |1 + j w R C_now|^2 - 1)/(w R)
    (the first-order low-pass, circuit theory); rounded up to the series (IEC 60063).
    """
    w = 2.0 * np.pi * hz
    now = abs(1.0 + 1j * w * resistance_ohm * (now_f or 0.0))
    wanted = max(attenuation * now, 1.0 + 1e-12)
    return smallest_at_least(float(np.sqrt(wanted**2 - 1.0) / (w * resistance_ohm)), series)


def microfarads(farads: float) -> str:
    """A capacitor as a chain file writes it, in microfarads (``"470 uF"``)."""
    return f"{farads * 1e6:.6g} uF"
