"""An RC filter's and a divider's figures over a leading trial axis: their own resistors
and capacitor drawn within their tolerances, their parent's trough, ripple and mean per
trial where the parent is spread (chainbudget/spread).

Notes
-----
Both kinds are one circuit seen from its output (Thevenin): a source k V_parent behind a
resistance R with a capacitor C to ground. An ``rc_filter`` is k = 1, R its resistor; a
``divider`` k = lower/(upper + lower), R = upper || lower, C across the lower leg. Per
trial, as `RcFilter.state` and `Divider.state` work out the nominal parts:

- the ripple at each harmonic f of the parent's times k/(1 + j 2 pi f R C) (the
  first-order low-pass of circuit theory; Horowitz & Hill, The Art of Electronics, 3rd ed.,
  sec. 1.7), its peak-to-peak the parent's times k |1/(1 + j 2 pi f_1 R C)| at the
  fundamental f_1;
- the trough: k times the parent's trough with its ripple smoothed about its mean
  (`smoothed_troughs`), less the drop of the load's crest through R with C holding the
  output up (`chainbudget.supplymath.pulsed_sags`, each trial's own time constant);
- the mean at nominal line and load: k V_parent,mean - R I_nominal (Ohm's law), both
  ``vout_v`` and ``mean_v`` (one quantity in the check JSON: the headline output of a
  filter or divider is its mean);
- at high line (`HighLine`, passed on to a regulator below): the crest k V_parent,crest
  (no load, no drop), ``crest_v`` and ``output_max_v``, and the means under the heaviest
  and the idle load, k V_parent - R I;
- the trough again as ``output_min_v``, as the check JSON carries it;
- the kind's own figures from R and C (corner 1/(2 pi R C), the attenuation at f_1, the
  resistor's drop and dissipation, the divider's ratio, source resistance and standing
  current V_parent,mean/(upper + lower));
- an ``rc_filter``'s rule ``supply-collapse`` as a flag per trial
  (`chainbudget.spread.flags`), as `RcFilter.state` decides it: the trough before it is
  clipped at zero is none under a load at all, or the parent's trough is none (a
  collapsed parent: its own trough clipped at zero).

The load is the nominal operating point's, or one per trial: a ``load`` whose currents
are (T,) arrays (the tree settled for each trial) gives each trial the figures its own
load gives (the drops R I, the means and the crest's drop of that trial's currents);
everything is element-wise arithmetic on (T,) arrays.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget.spread.flags import flag_key
from chainbudget.supplies.base import (
    HighLine,
    RippleSpread,
    SupplyLoad,
    SupplySpread,
    on_trials,
)
from chainbudget.supplymath import lowpass_gains, pulsed_sags

Figures = dict[str, NDArray[np.float64]]


def smoothed_troughs(trough_v: ArrayLike, ripple_vpp: ArrayLike, gain: ArrayLike) -> NDArray[Any]:
    """A parent's low-line trough with its peak-to-peak ripple passed at ``gain`` (0..1)
    about its mean, V, element-wise (the spread's trials).

    Notes
    -----
    The parent's low-line mean is taken as trough + ripple/2 (its ripple treated as its
    fundamental, a sine about the mean: an approximation on the safe side for the sawtooth
    of a reservoir, whose fundamental is a little smaller than half its peak-to-peak).
    """
    trough, ripple = np.asarray(trough_v, dtype=float), np.asarray(ripple_vpp, dtype=float)
    return np.asarray(trough + 0.5 * ripple * (1.0 - np.asarray(gain, dtype=float)), dtype=float)


@dataclass(frozen=True)
class Filtered:
    """What the Thevenin filter makes of its parent per trial: the gain's magnitude at the
    ripple's fundamental (1 without mains ripple), the ripple passed on (peak-to-peak,
    spectrum and mean), the trough before it is clipped at zero and the crest's drop, V."""

    fundamental: NDArray[np.float64]
    ripple: RippleSpread
    trough_v: NDArray[np.float64]
    crest_drop_v: NDArray[np.float64]


def filtered(
    ratio: ArrayLike,
    resistance_ohm: ArrayLike,
    capacitance_f: ArrayLike | None,
    load: SupplyLoad,
    parent_low_v: ArrayLike,
    parent: RippleSpread,
) -> Filtered:
    """The output of a source ``ratio`` times the parent behind ``resistance_ohm`` with
    ``capacitance_f`` to ground (module notes), per trial. The arithmetic is the nominal
    check's (`RcFilter.state`, `Divider.state`) term for term."""
    k = np.asarray(ratio, dtype=float)
    r = np.asarray(resistance_ohm, dtype=float)
    c = None if capacitance_f is None else np.asarray(capacitance_f, dtype=float)
    fundamental = np.ones_like(r)
    if parent.ripple_hz is not None:
        fundamental = np.abs(k * lowpass_gains(parent.ripple_hz, r, c)) / k
    # each harmonic through the trial's own network: (T, K) against the parent's (T, K) or (K,)
    passed = k[..., None] * lowpass_gains(
        parent.frequency, r[..., None], None if c is None else c[..., None]
    )
    harmonics = np.asarray(parent.harmonics_vpk * passed, dtype=complex)
    vpp = None if parent.vpp is None else k * parent.vpp * fundamental
    mean = None
    if parent.mean_v is not None:
        mean = np.maximum(k * parent.mean_v - r * load.nominal_a, 0.0)
    high = None
    if parent.high is not None:
        high = HighLine(
            k * parent.high.crest_v,
            np.maximum(k * parent.high.heavy_v - r * load.heaviest_a, 0.0),
            np.maximum(k * parent.high.idle_v - r * load.idle_a, 0.0),
        )
    crest_drop = pulsed_sags(r, c, load.heaviest_dc_a, load.heaviest_pulse_a, load.signal_hz)
    parent_vpp = 0.0 if parent.vpp is None else parent.vpp
    smoothed = smoothed_troughs(parent_low_v, parent_vpp, fundamental)
    return Filtered(
        fundamental,
        RippleSpread(parent.ripple_hz, vpp, harmonics, mean, high),
        k * smoothed - crest_drop,
        crest_drop,
    )


def _common(out: Filtered) -> Figures:
    """The figures both kinds share: the trough (what their stages and a bias point take),
    the mean (``vout_v``, ``mean_v``), the crest and the ripple's peak-to-peak."""
    trough = np.maximum(out.trough_v, 0.0)
    figures: Figures = {"trough_v": trough, "output_min_v": trough}
    if out.ripple.mean_v is not None:
        figures["vout_v"] = out.ripple.mean_v
        figures["mean_v"] = out.ripple.mean_v
    if out.ripple.high is not None:
        figures["crest_v"] = out.ripple.high.crest_v
        figures["output_max_v"] = out.ripple.high.crest_v
    if out.ripple.vpp is not None:
        figures["ripple_vpp"] = out.ripple.vpp
    return figures


def _attenuation(out: Filtered, figures: Figures) -> None:
    """The ripple's attenuation at its fundamental, dB, where the parent has mains ripple
    (the check's figure is null otherwise)."""
    if out.ripple.ripple_hz is not None:
        figures["ripple_attenuation_db"] = -20.0 * np.log10(out.fundamental)


def rc_filter_spread(
    name: str,
    resistance_ohm: ArrayLike,
    capacitance_f: ArrayLike,
    load: SupplyLoad,
    parent_low_v: ArrayLike,
    parent: RippleSpread,
) -> SupplySpread:
    """An ``rc_filter``'s figures per trial (`RcFilterFigures` and its state's): the
    trough, mean and ripple, ``drop_v`` (R I_heaviest), ``crest_drop_v``, ``corner_hz``,
    ``ripple_attenuation_db`` and ``resistor_w`` (R I_heaviest^2), under ``load`` (the
    nominal one, or one per trial), and the flag of ``supply-collapse`` at ``name``."""
    r, c = on_trials(load, resistance_ohm, capacitance_f)
    assert r is not None and c is not None
    out = filtered(1.0, r, c, load, parent_low_v, parent)
    figures = _common(out)
    figures["drop_v"] = r * load.heaviest_a
    figures["crest_drop_v"] = out.crest_drop_v
    figures["corner_hz"] = 1.0 / (2.0 * math.pi * r * c)
    _attenuation(out, figures)
    figures["resistor_w"] = r * load.heaviest_a**2
    collapsed = ((out.trough_v <= 0.0) & (np.asarray(load.heaviest_a) > 0.0)) | (
        np.asarray(parent_low_v) <= 0.0
    )
    flags = {flag_key("error", "supply-collapse", name): np.asarray(collapsed, dtype=bool)}
    return SupplySpread(figures, (), figures["trough_v"], out.ripple, flags)


def divider_spread(
    upper_ohm: ArrayLike,
    lower_ohm: ArrayLike,
    capacitance_f: ArrayLike | None,
    load: SupplyLoad,
    parent_low_v: ArrayLike,
    parent: RippleSpread,
) -> SupplySpread:
    """A ``divider``'s figures per trial (`DividerFigures` and its state's): the trough (the
    bias point a stage naming it takes), mean and ripple, ``ratio``, ``thevenin_ohm``,
    ``standing_a`` (the parent's mean over upper + lower), ``corner_hz`` (with a
    capacitor) and ``ripple_attenuation_db``, under ``load`` (the nominal one, or one per
    trial)."""
    upper, lower, capacitance_f = on_trials(load, upper_ohm, lower_ohm, capacitance_f)
    assert upper is not None and lower is not None
    ratio = lower / (upper + lower)
    thevenin = upper * lower / (upper + lower)
    out = filtered(ratio, thevenin, capacitance_f, load, parent_low_v, parent)
    figures = _common(out)
    figures["ratio"] = ratio
    figures["thevenin_ohm"] = thevenin
    if parent.mean_v is not None:
        figures["standing_a"] = np.asarray(parent.mean_v, dtype=float) / (upper + lower)
    if capacitance_f is not None:
        figures["corner_hz"] = 1.0 / (2.0 * math.pi * thevenin * np.asarray(capacitance_f))
    _attenuation(out, figures)
    return SupplySpread(figures, (), figures["trough_v"], out.ripple)
