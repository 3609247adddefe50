"""The output end and the op-amps' drive: figures every chain has, whatever its kinds.

Reads the solved chain (`Analysis`) and returns plain numbers: the output power at clipping
and at the nominal level, SPL, damping factor and output-capacitor corner
(`OutputFigures`); each op-amp's peak output current at ``max_level`` (`OpAmpDrive`). What
belongs to one kind (a push-pull stage's heat and the drive it asks for, a follower's
bias) is that kind's own figures, in its module under ``chainbudget/stages/``.

Notes
-----
Output figures, sine into the load: P = V_pk^2 Re(1/Z_L)/2 (`outputmath.sine_power`),
SPL = sensitivity + 10 log10(P/1 W) (`outputmath.spl_at_1m`), damping factor
|Z_L|/|Z_out| (`outputmath.damping_factor`), an output capacitor's corner
1/(2 pi (Z_L + R_out) C) (`outputmath.highpass_corner`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget import outputmath as om
from chainbudget.budget.analysis import Analysis
from chainbudget.budget.dcbias import load_offset
from chainbudget.budget.levels import DB_FLOOR, SQRT2, clip_source_peak
from chainbudget.budget.supplies import low_edge_clip_vpk
from chainbudget.cascade import Cascade
from chainbudget.chainfile import Chain
from chainbudget.loudspeaker import is_reactive, load_impedance
from chainbudget.stages import KINDS
from chainbudget.stages.base import opamp_part


@dataclass(frozen=True)
class OutputFigures:
    """What reaches the load (V peak, W, dB SPL at 1 m, ohm, Hz) at the reference frequency.

    ``clip_*``: the largest clean sine at the load with the volume fully up (if the chain
    has one) and the other controls as set (``clip_power_low_w``: at the band's low edge);
    ``clip_stage`` is the stage that clips first there and so sets the maximum output.
    ``output_stage_clip_*``: what the stage driving the load could give on its own limit.
    """

    stage: str
    load_ohm: float
    clip_vpk: float
    clip_power_w: float
    clip_stage: str | None
    clip_limit: str | None
    output_stage_clip_vpk: float | None
    output_stage_clip_power_w: float | None
    nominal_vpk: float
    nominal_power_w: float
    max_spl_db: float | None
    nominal_spl_db: float | None
    zout_ohm: float
    damping_factor: float
    clip_current_a: float
    output_cap_f: float | None
    output_cap_corner_hz: float | None
    power_stage: bool
    #: Worst-case DC across the load, V (`chainbudget.budget.dcbias.load_offset`).
    offset_v: float | None = None
    #: The clip power for a tone at the band's low edge, with the supplies settled for it
    #: (they have the longest to sag between charges there), W.
    clip_power_low_w: float | None = None


@dataclass(frozen=True)
class OpAmpDrive:
    """An op-amp's peak output current at ``max_level`` against its rating, A.

    ``load_ohm`` is the magnitude of everything it drives (the next stage's input and its
    own feedback network) at the reference frequency.
    """

    stage: str
    opamp: str
    load_ohm: float
    peak_a: float
    worst_a: float
    worst_hz: float
    limit_a: float


def _at_reference(a: ArrayLike) -> float:
    return float(np.abs(np.asarray(a)[..., 0]))


def _source_clip(cas: Cascade, k: int, index: tuple[int, ...] = ()) -> tuple[float, int] | None:
    """Source peak at which stage k reaches its tightest limit, at the reference frequency
    (``index`` picks a point on the control axes), and that limit's index."""
    clip = clip_source_peak(cas, k)
    if clip is None:
        return None
    peak, which = np.asarray(clip[0]), np.asarray(clip[1])
    peak = np.broadcast_to(peak, np.broadcast_shapes(peak.shape, which.shape))
    which = np.broadcast_to(which, peak.shape)
    return float(peak[(*index, 0)]), int(which[(*index, 0)])


def _max_output_cascade(analysis: Analysis) -> tuple[Cascade, tuple[int, ...]]:
    """The cascade with the volume fully up (the last rotation of the volume axis), or the
    nominal one when the chain has no volume control."""
    if analysis.volume_sweep is None:
        return analysis.nominal, ()
    return analysis.volume_sweep, (analysis.volume_rotations.size - 1,)


def _spl(sensitivity_db: float, power_w: float) -> float:
    """SPL at 1 m, floored like every level figure (no power at all reads DB_FLOOR)."""
    return float(floored_spl(sensitivity_db, power_w))


def floored_spl(sensitivity_db: ArrayLike, power_w: ArrayLike) -> NDArray[np.float64]:
    """SPL at 1 m (`outputmath.spl_at_1m`) no lower than DB_FLOOR, element-wise."""
    return np.maximum(om.spl_at_1m(sensitivity_db, power_w), DB_FLOOR)


def load_at_reference(chain: Chain) -> complex | float:
    """The load power and current are worked out into: as it is at the reference frequency
    (a driver's Thiele-Small impedance there, the cable capacitance across it), the nominal
    rating for a plain load."""
    if is_reactive(chain.load):
        return complex(load_impedance(chain.load, [chain.settings.reference])[0])
    return chain.load.impedance


def peak_current(vpk: ArrayLike, z_load: complex | float) -> NDArray[np.float64]:
    """Peak current of a sine of peak ``vpk`` into ``z_load``, V_pk / |Z_L|, A."""
    return np.asarray(np.asarray(vpk, dtype=float) / abs(z_load), dtype=float)


def resistive_cap_corner(
    capacitance_f: ArrayLike, load_ohm: ArrayLike, z_out: ArrayLike
) -> NDArray[np.float64]:
    """-3 dB corner of an output capacitor into a resistive load, Hz, element-wise.

    Parameters
    ----------
    capacitance_f : array_like
        The series output capacitor, F.
    load_ohm : array_like
        The load's resistance, ohm.
    z_out : array_like
        The driving stage's output impedance at the reference frequency, ohm (complex
        allowed: its real part, the output resistance, is what the capacitor works into).

    Returns
    -------
    ndarray
        f_c, Hz, with the arguments' broadcast shape (0-d for scalars, (T,) for trials).

    Notes
    -----
    The capacitor in series with R_L + R_out is a first-order RC high-pass,
    f_c = 1/(2 pi (R_L + R_out) C) (`outputmath.highpass_corner`; Horowitz & Hill 3rd ed.
    sec. 1.7, RC filters, from memory). A reactive load's corner is read off its
    impedance curve instead (`_reactive_corner`).
    """
    r_out = np.real(np.asarray(z_out))
    return om.highpass_corner(capacitance_f, np.asarray(load_ohm, dtype=float) + r_out)


def output_figures(analysis: Analysis) -> OutputFigures:
    """Output power, SPL, damping factor and output-capacitor corner of the chain."""
    chain = analysis.chain
    # power and current into the load at the reference; the damping factor against the
    # nominal rating always (the trade quotes it so)
    z_load = load_at_reference(chain)
    nominal = analysis.nominal
    last = len(chain.stages) - 1
    cas, index = _max_output_cascade(analysis)
    gain_to_load = float(np.abs(np.asarray(cas.v_out[last])[(*index, 0)]))
    clips = [(k, _source_clip(cas, k, index)) for k in range(last + 1)]
    limited = [(k, c) for k, c in clips if c is not None]
    clip_stage = clip_limit = None
    clip_vpk = float("inf")
    output_stage_clip_vpk = None
    if limited:
        k_first, (peak, which) = min(limited, key=lambda item: item[1][0])
        clip_vpk = peak * gain_to_load
        clip_stage = chain.stages[k_first].name
        clip_limit = cas.stages[k_first].built.limits[which].what
        output_stage_clip_vpk = limited[-1][1][0] * gain_to_load
    nominal_vpk = SQRT2 * chain.source.level * _at_reference(nominal.v_out[last])
    clip_power = float(om.sine_power(clip_vpk, z_load))
    nominal_power = float(om.sine_power(nominal_vpk, z_load))
    sensitivity = chain.load.sensitivity
    z_out = complex(np.asarray(nominal.output_impedance[last])[..., 0])
    last_kind = KINDS[chain.stages[last].kind]
    output_cap = last_kind.output_capacitor(chain.stages[last])
    corner = None
    if output_cap is not None and not is_reactive(chain.load):
        corner = float(resistive_cap_corner(output_cap, chain.load.impedance, z_out))
    elif output_cap is not None:
        corner = _reactive_corner(chain, output_cap, z_out)
    low_vpk = low_edge_clip_vpk(analysis)
    return OutputFigures(
        stage=chain.stages[last].name,
        load_ohm=chain.load.impedance,
        clip_vpk=clip_vpk,
        clip_power_w=clip_power,
        clip_stage=clip_stage,
        clip_limit=clip_limit,
        output_stage_clip_vpk=output_stage_clip_vpk,
        output_stage_clip_power_w=None
        if output_stage_clip_vpk is None
        else float(om.sine_power(output_stage_clip_vpk, z_load)),
        nominal_vpk=nominal_vpk,
        nominal_power_w=nominal_power,
        max_spl_db=None if sensitivity is None else _spl(sensitivity, clip_power),
        nominal_spl_db=None if sensitivity is None else _spl(sensitivity, nominal_power),
        zout_ohm=abs(z_out),
        damping_factor=float(om.damping_factor(chain.load.impedance, z_out)),
        clip_current_a=float(peak_current(clip_vpk, z_load)),
        output_cap_f=output_cap,
        output_cap_corner_hz=corner,
        power_stage=last_kind.power_stage,
        offset_v=load_offset(analysis),
        clip_power_low_w=None if low_vpk is None else float(om.sine_power(low_vpk, z_load)),
    )


# Points a decade on the axis the corner of an output capacitor into a reactive load is read
# from, and how far below the band it reaches.
CORNER_POINTS_PER_DECADE = 200
CORNER_DECADES_BELOW_BAND = 2.0


def _reactive_corner(chain: Chain, output_cap: float, z_out: complex) -> float | None:
    """-3 dB corner of an output capacitor into a reactive load, Hz (None: none in reach).

    Notes
    -----
    The divider |Z_L / (Z_L + R_out + 1/(j w C))| of the load, the stage's output resistance
    and the capacitor, relative to its value at the reference frequency, read on a fine log
    axis: the highest frequency below the reference where it is 3 dB down (the first-order
    corner 1/(2 pi (R_L + R_out) C) of a resistive load is the special case).
    """
    low = chain.settings.band[0] / 10.0**CORNER_DECADES_BELOW_BAND
    reference = chain.settings.reference
    points = int(np.log10(reference / low) * CORNER_POINTS_PER_DECADE) + 2
    f = np.geomspace(low, reference, points)
    z = load_impedance(chain.load, f)
    divider = np.abs(z / (z + z_out.real + 1.0 / (2j * np.pi * f * output_cap)))
    down = divider < divider[-1] / np.sqrt(2.0)
    if not down.any():
        return None
    return float(f[np.flatnonzero(down)[-1]])


def voltage_clip_source_peak(cas: Cascade, k: int) -> NDArray[np.float64]:
    """Source peak at which stage k reaches its tightest limit other than a current limit,
    on the cascade's full shape (inf where it has none), or wider where a limit has a
    leading trial axis the cascade has not (a spread rail under a stage with no part
    drawn)."""
    peak = np.full(np.shape(cas.v_out[k]), np.inf)
    with np.errstate(divide="ignore"):
        for limit in cas.stages[k].built.limits:
            if not limit.bounds_current:
                bound = np.asarray(limit.peak) / np.abs(cas.probe(k, limit.probe))
                peak = np.minimum(peak, bound)
    return peak


def asked_current(cascade: Cascade, k: int, label: str, max_peak: float) -> NDArray[np.float64]:
    """The peak output current op-amp ``label`` of stage ``k`` is asked for at the source
    peak ``max_peak`` or at the stage's voltage clip (`voltage_clip_source_peak`: rails,
    slew), whichever is lower, over the cascade's axes."""
    level = np.minimum(max_peak, voltage_clip_source_peak(cascade, k))
    return np.abs(np.broadcast_to(cascade.probe(k, f"{label}.current"), level.shape)) * level


def largest_asked(
    analysis: Analysis, k: int, label: str
) -> tuple[NDArray[np.float64], tuple[int, ...]]:
    """Op-amp ``label`` of stage ``k``: its `asked_current` at ``max_level`` over the swept
    candidate settings and the frequency axis, and where over the band it is largest (the
    index into the band slice of that array: candidate first, where there are several,
    frequency last)."""
    max_peak = SQRT2 * analysis.chain.source.max_level
    asked = asked_current(analysis.swept, k, label, max_peak)
    band = asked[..., analysis.band_slice]
    at = np.unravel_index(int(np.argmax(band)), band.shape)
    return asked, tuple(int(i) for i in at)


def opamp_drives(analysis: Analysis) -> list[OpAmpDrive]:
    """Peak output current of every op-amp at ``max_level``.

    ``peak_a``: at the reference frequency with the controls as set. ``worst_a``: the
    largest over the band and every swept control of the current at ``max_level`` or at the
    stage's voltage clip level (rails, slew), whichever is lower, i.e. the most the op-amp
    is asked to deliver before something else stops the signal.
    """
    chain = analysis.chain
    max_peak = SQRT2 * chain.source.max_level
    found = []
    for k, sol in enumerate(analysis.nominal.stages):
        for label, part in sol.built.opamps:
            per_volt = _at_reference(analysis.nominal.probe(k, f"{label}.current"))
            asked, at = largest_asked(analysis, k, label)
            band = asked[..., analysis.band_slice]
            v_out = _at_reference(analysis.nominal.v_out[k])
            found.append(
                OpAmpDrive(
                    stage=sol.stage.name,
                    opamp=opamp_part(sol.stage, analysis.envs[k]).name,
                    load_ohm=v_out / per_volt if per_volt > 0.0 else float("inf"),
                    peak_a=per_volt * max_peak,
                    worst_a=float(band[at]),
                    worst_hz=float(analysis.frequency[analysis.band_slice][at[-1]]),
                    limit_a=part.output_current,
                )
            )
    return found
