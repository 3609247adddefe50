"""``rectified``: mains transformer, rectifier and reservoir capacitor (an unregulated rail).

Safety: this supply starts at the mains. Its figures are a paper budget, not a safety
assessment; mains wiring, fusing, earthing and insulation follow local electrical codes and
licensed practice.
"""

from __future__ import annotations

from dataclasses import dataclass

from chainbudget import fields as f
from chainbudget.finding import Finding
from chainbudget.kindfigures import KindFigures, figure
from chainbudget.notation import sig
from chainbudget.supplies.base import (
    Supply,
    SupplyBudget,
    SupplyContext,
    SupplyKind,
    SupplyLoad,
    SupplyState,
    TroughRemedy,
)
from chainbudget.supplymath import mains_factors, rectified_peak, ripple_vpp
from chainbudget.thresholds import LARGE_RIPPLE_FRACTION, RMS_PER_DC_AMP, TYPICAL_REGULATION
from chainbudget.units import UnitParseError, parse_fraction, parse_level

# Rectifier drop at the peak of the charging current when the file gives none: about 0.9 V
# per silicon diode at the few-amp peaks of a capacitor-input rectifier, two in a bridge's
# conduction path, one in a half-wave rectifier (common practice, no source).
DIODE_DROP_V = 0.9
SQRT2 = 2.0**0.5


def _read_tolerance(value: object) -> float:
    number = parse_fraction(value)
    if not 0.0 <= number < 1.0:
        raise UnitParseError(
            value, 'a mains tolerance from 0 up to (not including) 100 %, e.g. "10 %"'
        )
    return number


TOLERANCE = f.FieldKind("fraction or %", _read_tolerance, float)
# The secondary is an rms voltage: "15 V" and "15 Vrms" are the same, "21.2 Vpk" too.
SECONDARY = f.FieldKind("V rms", parse_level, lambda v: f"{v!r} Vrms")


MAINS_CAUTION = (
    "Mains: this chain has a transformer-fed supply. Mains wiring, fusing, earthing and "
    "insulation are hazardous and are governed by local electrical codes; have that part "
    "built or checked by a licensed practitioner. These figures do not assess safety."
)


@dataclass(frozen=True)
class RectifiedFigures(KindFigures):
    """The transformer's share of the load (fraction of its rated current, dc) and its
    regulation (no-load rise, fraction)."""

    title = "rectifier"

    transformer_regulation: float = figure("transformer regulation", "%")
    transformer_load_fraction: float | None = figure("transformer load (dc)", "%", default=None)


class Rectified(SupplyKind):
    """Capacitor-input rectifier from a mains transformer.

    Notes
    -----
    Peak on the reservoir: V_pk = sqrt(2) V_sec k (1 + r (1 - x)) - V_drop, k the line factor
    (1 - t, 1, 1 + t for a tolerance t), r the transformer regulation, x the load fraction
    I / I_rated (x = 1 under any load when no ``rated_current`` is given, 0 unloaded), see
    :func:`chainbudget.supplymath.rectified_peak`. Ripple V_pp = I / (2 f C) full-wave,
    I / (f C) half-wave: the capacitor discharging at constant current for the whole
    recharge interval, which overstates the true ripple (the conservative side), see
    :func:`chainbudget.supplymath.ripple_vpp` (Horowitz & Hill, The Art of Electronics,
    3rd ed., sec. 9.5, from memory).

    The output state: trough = V_pk(low line, heaviest load) - V_pp(heaviest load), the
    instantaneous minimum; crest = V_pk(high line, no load); every mean voltage is
    V_pk - V_pp / 2 (the mid-point of a sawtooth ripple). A stage fed from this rail sees the
    trough at the ``low`` corner, the nominal mean at ``nominal``, the crest at ``high``.
    """

    kind = "rectified"
    summary = "mains transformer, rectifier and reservoir capacitor (unregulated)"
    from_mains = True
    fields = (
        f.Field("secondary", SECONDARY, "secondary, V rms at nominal mains, rated load"),
        f.Field("mains_tolerance", TOLERANCE, "mains tolerance either way (low/high line)", 0.1),
        f.Field("line_frequency", f.FREQUENCY, "mains frequency (50 Hz: the larger ripple)", 50.0),
        f.Field(
            "bridge_drop",
            f.VOLTAGE_OR_ZERO,
            "rectifier drop at peak current (default 1.8 V bridge, 0.9 V half-wave)",
            None,
        ),
        f.Field("reservoir", f.CAPACITANCE, "reservoir capacitor"),
        f.Field("regulation", f.FRACTION, "transformer no-load rise over rated-load voltage", 0.0),
        f.Field(
            "rated_current", f.POSITIVE_CURRENT, "transformer rated current (load fraction)", None
        ),
        f.Field("half_wave", f.FLAG, "half-wave rectifier (one recharge per mains cycle)", False),
    )

    # --- the model's pieces, also used by the suggestions --------------------------------

    def drop(self, supply: Supply) -> float:
        """Rectifier drop, V (the file's, else the default for the rectifier form)."""
        given = supply.optional("bridge_drop")
        if given is not None:
            return given
        return DIODE_DROP_V if supply.values["half_wave"] else 2.0 * DIODE_DROP_V

    def load_fraction(self, supply: Supply, current_a: float) -> float:
        """Load as a fraction of the transformer's rating (1 under load when none is given)."""
        rated = supply.optional("rated_current")
        if rated is not None:
            return current_a / rated
        return 1.0 if current_a > 0.0 else 0.0

    def peak(self, supply: Supply, line_factor: float, current_a: float) -> float:
        """Reservoir peak at a line factor and mean load current, V."""
        return float(
            rectified_peak(
                supply.number("secondary"),
                line_factor,
                self.drop(supply),
                supply.number("regulation"),
                self.load_fraction(supply, current_a),
            )
        )

    def ripple(self, supply: Supply, current_a: float) -> float:
        """Ripple at a mean load current, V peak-to-peak."""
        return float(
            ripple_vpp(
                current_a,
                supply.number("line_frequency"),
                supply.number("reservoir"),
                half_wave=bool(supply.values["half_wave"]),
            )
        )

    def line_factors(self, supply: Supply) -> tuple[float, float, float]:
        return mains_factors(supply.number("mains_tolerance"))

    # --- SupplyKind -----------------------------------------------------------------------

    def state(self, supply: Supply, parent: SupplyState | None, load: SupplyLoad) -> SupplyState:
        low, nominal, high = self.line_factors(supply)
        heavy, idle = load.heaviest_a, load.idle_a

        def mean(line: float, current: float) -> float:
            return max(self.peak(supply, line, current) - self.ripple(supply, current) / 2.0, 0.0)

        return SupplyState(
            trough_v=max(self.peak(supply, low, heavy) - self.ripple(supply, heavy), 0.0),
            nominal_v=mean(nominal, load.nominal_a),
            crest_v=max(self.peak(supply, high, 0.0), 0.0),
            high_heavy_v=mean(high, heavy),
            high_idle_v=mean(high, idle),
            ripple_vpp=self.ripple(supply, heavy),
        )

    def figures(self, context: SupplyContext) -> RectifiedFigures:
        rated = context.supply.optional("rated_current")
        return RectifiedFigures(
            transformer_regulation=context.supply.number("regulation"),
            transformer_load_fraction=None if rated is None else context.load.heaviest_a / rated,
        )

    def rules(self, supply: SupplyBudget, ambient_degc: float) -> list[Finding]:
        """Unknown regulation, transformer rating, a ripple too large for its estimate, and
        the mains caution."""
        own = supply.own
        assert isinstance(own, RectifiedFigures)
        found: list[Finding] = [Finding("caution", "mains", None, MAINS_CAUTION)]
        if own.transformer_regulation == 0.0:
            found.append(
                Finding(
                    "note",
                    "transformer-regulation-unknown",
                    None,
                    f'supply "{supply.name}" has no transformer regulation: its no-load crest is '
                    "taken at the rated-load secondary voltage, while small transformers rise "
                    f"some {TYPICAL_REGULATION[0]:.0%} to {TYPICAL_REGULATION[1]:.0%} off load "
                    "(common practice, no source); give `regulation` so the crest checks "
                    "(regulator max_input, op-amp max_supply) see the real figure",
                )
            )
        fraction = own.transformer_load_fraction
        if fraction is not None and fraction * RMS_PER_DC_AMP > 1.0:
            found.append(
                Finding(
                    "warning",
                    "transformer-rating",
                    None,
                    f'supply "{supply.name}" draws {sig(supply.max_load_a, "A")} dc at heaviest '
                    "load, "
                    f"{fraction:.0%} of the transformer's rated current; a capacitor-input "
                    f"rectifier's rms winding current is about {RMS_PER_DC_AMP:g}x its dc load, "
                    "so choose a transformer rated for at least "
                    f"{sig(supply.max_load_a * RMS_PER_DC_AMP, 'A')}",
                    {"load_fraction": fraction},
                )
            )
        ripple = supply.ripple_vpp
        peak = supply.output_min_v + (ripple or 0.0)
        if ripple is not None and peak > 0.0 and ripple > LARGE_RIPPLE_FRACTION * peak:
            found.append(
                Finding(
                    "warning",
                    "large-ripple",
                    None,
                    f'supply "{supply.name}" ripples {sig(ripple, "V")} p-p at heaviest load, over '
                    f"{LARGE_RIPPLE_FRACTION:.0%} of its peak: the trough figure is rough (the "
                    "constant-current estimate overstates the ripple); fit a larger reservoir",
                    {"ripple_vpp": ripple},
                )
            )
        return found

    def trough_remedy(self, supply: Supply, trough_v: float, heaviest_a: float) -> TroughRemedy:
        return TroughRemedy(
            self.secondary_for_trough(supply, trough_v, heaviest_a),
            self.reservoir_for_trough(supply, trough_v, heaviest_a),
        )

    # --- what it would take to raise the trough --------------------------------------------

    def secondary_for_trough(self, supply: Supply, trough_v: float, heaviest_a: float) -> float:
        """Secondary (V rms, nominal mains, rated load) whose low-line trough is ``trough_v``.

        Notes
        -----
        The trough is linear in V_sec: sqrt(2) V_sec k_low (1 + r (1 - x)) - V_drop - V_pp;
        solved for V_sec with the same load (same x and V_pp).
        """
        low = self.line_factors(supply)[0]
        rise = 1.0 + supply.number("regulation") * (1.0 - self.load_fraction(supply, heaviest_a))
        needed = trough_v + self.drop(supply) + self.ripple(supply, heaviest_a)
        return needed / (SQRT2 * low * rise)

    def reservoir_for_trough(
        self, supply: Supply, trough_v: float, heaviest_a: float
    ) -> float | None:
        """Reservoir (F) whose ripple keeps the low-line trough at ``trough_v``, or None when
        even no ripple would not (the peak itself is too low).

        Notes
        -----
        V_pp allowed = V_pk(low line) - trough; C = I / (n f V_pp), n = 2 full-wave, 1
        half-wave (the ripple formula solved for C).
        """
        allowed = self.peak(supply, self.line_factors(supply)[0], heaviest_a) - trough_v
        if allowed <= 0.0:
            return None
        pulses = 1.0 if supply.values["half_wave"] else 2.0
        return heaviest_a / (pulses * supply.number("line_frequency") * allowed)
