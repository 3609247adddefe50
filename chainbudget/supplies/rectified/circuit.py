"""The transformer and rectifier of a ``rectified`` supply, solved cycle by cycle at its
mains corners.

Notes
-----
The transformer is its open-circuit secondary in series with its winding resistance R_s
(referred to the secondary). ``secondary`` is the rms voltage at nominal mains and rated
load, ``regulation`` r the rise from rated load to no load as a fraction of it, so the open
circuit is (1 + r) V_sec and, at the rated (resistive) current I_r, R_s I_r = r V_sec:
R_s = r V_sec / I_r when ``winding_resistance`` is not given (the usual definition of a
transformer's regulation, common practice, no source). Without R_s
(no ``rated_current``, no ``winding_resistance``) the source is taken as ideal at its
rated-load voltage V_sec under any load (the safe side) and at (1 + r) V_sec unloaded. Each
mains corner scales the open circuit by 1 - t, 1, 1 + t (``mains_tolerance`` t).

Each rail is then the circuit of `chainbudget.rectifier` under its load as a waveform, in
one batch over the corners a budget needs: low line and heaviest load (the trough, over
`chainbudget.rectifier.PHASES` relative phases of signal and mains: the worst; the ripple
and the currents the largest over them, `largest_over_phases`), high line and heaviest
load (heat, and the winding's and reservoir's currents), nominal line and
load (the mean), high line and idle, and nominal line with the nominal load's mean as a
steady current (the mains ripple's spectrum, the seed of the hum budget). The crest is the
open circuit at high line less the diode drop: no load, no current.

A centre-tapped (``split``) supply is two such rails, the positive one and ``.neg``, each
charged from its half of the winding through one diode per half cycle; each half carries
one rail's charging pulses on one half cycle and the other's on the next, so its rms
current is sqrt((I_+^2 + I_-^2)/2) of the two rails' charging currents (their pulses fall
in different halves at any instant; the primary's share of the resistance, which would
couple them, is lumped into each half's R_s).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from chainbudget import rectifier
from chainbudget.roots import bracketed_root
from chainbudget.supplies.base import Supply, SupplyLoad
from chainbudget.supplymath import mains_factors

SQRT2 = math.sqrt(2.0)
# Rectifier drop at the peak of the charging current when the file gives none: about 0.9 V
# per silicon diode at the few-amp peaks of a capacitor-input rectifier, two in a bridge's
# conduction path, one in a half-wave or centre-tapped rectifier (common practice, no
# source).
DIODE_DROP_V = 0.9
NEGATIVE_SUFFIX = ".neg"


@dataclass(frozen=True)
class Transformer:
    """A ``rectified`` supply's source and rectifier (SI units)."""

    secondary_vrms: float
    regulation: float
    rated_a: float | None
    winding_ohm: float
    #: R_s derived from regulation and rating (it scales with the secondary then).
    derived: bool
    #: R_s is known (given or derived): the source is the open circuit behind it.
    winding_known: bool
    tolerance: float
    line_hz: float
    drop_v: float
    reservoir_f: float
    half_wave: bool
    split: bool

    @property
    def open_vrms(self) -> float:
        """Open-circuit secondary at nominal mains, V rms."""
        return self.secondary_vrms * (1.0 + self.regulation)

    def source_peak(self, line: float, loaded: bool) -> float:
        """Peak of the source behind R_s at a line factor, V (the rated-load voltage under
        load when R_s is not known)."""
        vrms = self.open_vrms if self.winding_known or not loaded else self.secondary_vrms
        return SQRT2 * vrms * line

    @property
    def lines(self) -> tuple[float, float, float]:
        return mains_factors(self.tolerance)

    @property
    def crest_v(self) -> float:
        """High line, no load: the open-circuit peak less the diode drop, V."""
        return max(self.source_peak(self.lines[2], loaded=False) - self.drop_v, 0.0)

    @property
    def ripple_hz(self) -> float:
        return self.line_hz if self.half_wave else 2.0 * self.line_hz

    def with_secondary(self, vrms: float) -> Transformer:
        """The same design with another secondary (and, when derived, the R_s that the same
        regulation and rating give it)."""
        winding = self.winding_ohm * vrms / self.secondary_vrms if self.derived else None
        return dataclasses.replace(
            self,
            secondary_vrms=vrms,
            winding_ohm=self.winding_ohm if winding is None else winding,
        )


def transformer(supply: Supply) -> Transformer:
    """The transformer and rectifier a ``rectified`` table describes."""
    values = supply.values
    secondary = supply.number("secondary")
    regulation = supply.number("regulation")
    rated = supply.optional("rated_current")
    given = supply.optional("winding_resistance")
    derived = given is None and rated is not None and regulation > 0.0
    winding = given
    if winding is None:
        winding = regulation * secondary / rated if rated is not None and derived else 0.0
    half_wave, split = bool(values["half_wave"]), bool(values.get("split", False))
    drop = supply.optional("bridge_drop")
    if drop is None:
        drop = DIODE_DROP_V if half_wave or split else 2.0 * DIODE_DROP_V
    return Transformer(
        secondary_vrms=secondary,
        regulation=regulation,
        rated_a=rated,
        winding_ohm=float(winding or 0.0),
        derived=derived,
        winding_known=given is not None or derived,
        tolerance=supply.number("mains_tolerance"),
        line_hz=supply.number("line_frequency"),
        drop_v=drop,
        reservoir_f=supply.number("reservoir"),
        half_wave=half_wave,
        split=split,
    )


@dataclass(frozen=True)
class Currents:
    """The winding's, diodes' and reservoir's currents of a rail at one corner (A, deg):
    floats in the check, (T,) arrays over the spread's trials
    (`chainbudget.supplies.rectified.spread`)."""

    winding_rms_a: Any
    diode_peak_a: Any
    reservoir_ripple_a: Any
    conduction_deg: Any


def largest_over_phases(
    winding_rms_a: Any, diode_peak_a: Any, reservoir_ripple_a: Any, conduction_deg: Any
) -> Currents:
    """A rail's currents at one corner from their values at each relative phase of signal
    and mains (the last axis: (P,) in the check, (T, P) over the spread's trials): each the
    largest over the phases. Signal and mains are not synchronised, so the parts meet
    every phase in turn and each current's largest is a stress they take; and each is a
    maximum of smooth curves of the parts, so it moves with them continuously (read at
    the phase of the lowest trough instead, it jumped where two phases' troughs tie: a
    guitar amplifier's conduction angle by 4 % between two trials a part apart)."""
    return Currents(
        *(
            np.max(np.asarray(values, dtype=float), axis=-1)
            for values in (winding_rms_a, diode_peak_a, reservoir_ripple_a, conduction_deg)
        )
    )


@dataclass(frozen=True)
class RailSolution:
    """One rail at its corners (V, A)."""

    trough_v: float
    ripple_vpp: float
    collapsed: bool
    nominal_v: float
    high_heavy_v: float
    high_idle_v: float
    crest_v: float
    low_line: Currents
    high_line: Currents
    harmonics_vpk: tuple[complex, ...]
    ripple_hz: float
    #: The signal frequency the pulses were taken at (commensurate with the mains).
    signal_hz: float | None


def _signal(loads: Mapping[str, SupplyLoad]) -> float | None:
    return next((ld.signal_hz for ld in loads.values() if ld.signal_hz is not None), None)


def solve_rails(tr: Transformer, loads: Mapping[str, SupplyLoad]) -> dict[str, RailSolution]:
    """Every rail of the supply at its corners under its load (see the module notes)."""
    low, nominal, high = tr.lines
    signal = _signal(loads)
    pulsed = signal is not None and any(ld.heaviest_pulse_a > 0.0 for ld in loads.values())
    phases = rectifier.PHASES if pulsed else 1
    cycles = 1
    if pulsed and signal is not None:
        cycles = max(rectifier.commensurate(signal, tr.ripple_hz)[1], 1)
    offsets = [2.0 * math.pi * j / (phases * cycles) for j in range(phases)]
    peak: list[float] = []
    dc: list[float] = []
    pulse: list[float] = []
    phase: list[float] = []

    def row(line: float, loaded: bool, steady: float, crest: float, at: float) -> None:
        peak.append(tr.source_peak(line, loaded))
        dc.append(steady)
        pulse.append(crest)
        phase.append(at)

    for load in loads.values():
        heavy = load.heaviest_a > 0.0
        for line in (low, high):
            for at in offsets:
                row(line, heavy, load.heaviest_dc_a, load.heaviest_pulse_a, at)
        row(nominal, load.nominal_a > 0.0, load.nominal_dc_a, load.nominal_pulse_a, 0.0)
        row(high, load.idle_a > 0.0, load.idle_a, 0.0, 0.0)
        row(nominal, load.nominal_a > 0.0, load.nominal_a, 0.0, 0.0)
    solved = rectifier.solve_cached(
        tuple(peak),
        tr.drop_v,
        tr.winding_ohm,
        tr.reservoir_f,
        tr.line_hz,
        tuple(dc),
        tuple(pulse),
        signal if pulsed else None,
        tuple(phase),
        tr.half_wave,
    )
    found: dict[str, RailSolution] = {}
    width = 2 * phases + 3
    for k, rail in enumerate(loads):
        base = k * width
        lows = slice(base, base + phases)
        worst = base + int(np.argmin(solved.trough_v[lows]))
        high_worst = worst + phases

        def currents(rows: slice) -> Currents:
            """The largest over the phases of the rows (`largest_over_phases`)."""
            found = largest_over_phases(
                solved.winding_rms_a[rows],
                solved.diode_peak_a[rows],
                solved.reservoir_ripple_a[rows],
                solved.conduction_deg[rows],
            )
            return Currents(*(float(v) for v in dataclasses.astuple(found)))

        hum = base + 2 * phases + 2
        found[rail] = RailSolution(
            trough_v=max(float(solved.trough_v[worst]), 0.0),
            # the largest over the phases (continuous in the parts, as the currents)
            ripple_vpp=float(np.max(solved.ripple_vpp[lows])),
            collapsed=bool(solved.collapsed[lows].any()),
            nominal_v=max(float(solved.mean_v[base + 2 * phases]), 0.0),
            high_heavy_v=max(float(solved.mean_v[high_worst]), 0.0),
            high_idle_v=max(float(solved.mean_v[base + 2 * phases + 1]), 0.0),
            crest_v=tr.crest_v,
            low_line=currents(lows),
            high_line=currents(slice(base + phases, base + 2 * phases)),
            harmonics_vpk=tuple(complex(v) for v in solved.harmonics_vpk[hum]),
            ripple_hz=solved.ripple_hz,
            signal_hz=solved.signal_hz,
        )
    return found


def trough(tr: Transformer, load: SupplyLoad) -> float:
    """Low-line trough of one rail under ``load``, V (0 when it collapses)."""
    return solve_rails(tr, {"rail": load})["rail"].trough_v


def secondary_for_trough(tr: Transformer, load: SupplyLoad, target_v: float) -> float | None:
    """Secondary (V rms, nominal mains, rated load) whose low-line trough under the same
    load is ``target_v`` (the regulation and rating kept), by root finding on the solved
    rectifier (Brent's method; the trough rises with the secondary)."""
    here = tr.secondary_vrms

    def miss(vrms: float) -> float:
        return trough(tr.with_secondary(vrms), load) - target_v

    lo, hi = here, here
    if miss(here) > 0.0:
        while miss(lo) > 0.0:
            lo *= 0.5
            if lo < 1e-3:
                return None
    else:
        while miss(hi) <= 0.0:
            hi *= 2.0
            if hi > 1e5:
                return None
    return float(bracketed_root(miss, lo, hi, xtol=1e-12, rtol=1e-13))


def reservoir_for_trough(tr: Transformer, load: SupplyLoad, target_v: float) -> float | None:
    """Smallest reservoir (F) whose low-line trough under the same load reaches
    ``target_v``, or None when none would (Brent's method in log C; the trough rises with
    C towards the peak the winding's drop leaves)."""

    def miss(log_c: float) -> float:
        return trough(dataclasses.replace(tr, reservoir_f=math.exp(log_c)), load) - target_v

    lo = math.log(tr.reservoir_f)
    hi = lo
    if miss(lo) >= 0.0:
        while miss(lo) >= 0.0 and lo > math.log(1e-9):
            lo -= math.log(2.0)
    else:
        for _ in range(24):
            hi += math.log(2.0)
            if miss(hi) >= 0.0:
                break
        else:
            return None
    if miss(lo) >= 0.0:
        return math.exp(lo)
    return float(math.exp(bracketed_root(miss, lo, hi, xtol=1e-13, rtol=1e-13)))


def winding_for_trough(tr: Transformer, load: SupplyLoad, target_v: float) -> float | None:
    """Largest winding resistance (ohm) whose low-line trough under the same load reaches
    ``target_v`` with the reservoir as it is, or None when not even an ideal winding would
    (Brent's method; the trough falls as R_s grows)."""
    ideal = dataclasses.replace(tr, winding_ohm=0.0, derived=False)
    if trough(ideal, load) < target_v:
        return None

    def miss(r: float) -> float:
        return trough(dataclasses.replace(tr, winding_ohm=r, derived=False), load) - target_v

    hi = max(tr.winding_ohm, 1e-3)
    while miss(hi) >= 0.0:
        hi *= 2.0
        if hi > 1e6:
            return hi
    return float(bracketed_root(miss, 0.0, hi, xtol=1e-12, rtol=1e-12))
