"""Findings about the supplies: regulation, minimum load, heat, input limits, run time."""

from __future__ import annotations

from dataclasses import replace

from chainbudget.budget import Budget
from chainbudget.budget.supplies import SupplyFigures
from chainbudget.findings.base import JUNCTION_MARGIN_K, Finding
from chainbudget.notation import amps

# A capacitor-input rectifier draws its charge in short peaks, so the transformer's rms
# current is well above the dc load: about 1.8x for a bridge (common practice, no source;
# from memory). A dc load above rated/1.8 overheats the winding though the dc figure fits.
RMS_PER_DC_AMP = 1.8
# Ripple at which the constant-current ripple figure stops being a close estimate (it
# overstates the ripple more and more as the trough falls towards zero): a fifth of the
# peak (our threshold; the approximation needs V_pp << V_pk).
LARGE_RIPPLE_FRACTION = 0.2
# A dropout margin under this is in regulation on paper only: the part's dropout, the
# mains and the diodes all spread (our design allowance, not from a source).
THIN_DROPOUT_MARGIN_V = 0.5


def _regulator(s: SupplyFigures, ambient_degc: float) -> list[Finding]:
    found: list[Finding] = []
    if s.in_regulation is False and s.dropout_margin_v is not None:
        d = s.dropout_suggestion
        ways = ""
        if d is not None and d.secondary_needed_vrms is not None:
            ways = f': a secondary of at least {d.secondary_needed_vrms:.3g} V rms on "{d.parent}"'
            if d.reservoir_needed_f is not None:
                ways += f", or a reservoir of at least {d.reservoir_needed_f * 1e6:.3g} uF"
        found.append(
            Finding(
                "error",
                "regulator-dropout",
                None,
                f'regulator "{s.name}" drops out of regulation on the ripple troughs at low '
                f"line and heaviest load: its input falls to {s.input_min_v:.3g} V, "
                f"{-s.dropout_margin_v:.2g} V short of the {s.vout_v:.3g} V output plus "
                f"{s.dropout_v:.3g} V dropout; raise the input to at least "
                f"{(d.input_needed_v if d else 0.0):.3g} V{ways}, or use a lower-dropout type",
                {
                    "input_min_v": s.input_min_v or 0.0,
                    "dropout_margin_v": s.dropout_margin_v,
                    **({"input_needed_v": d.input_needed_v} if d else {}),
                },
            )
        )
    elif s.dropout_margin_v is not None and s.dropout_margin_v < THIN_DROPOUT_MARGIN_V:
        found.append(
            Finding(
                "warning",
                "regulator-dropout-margin",
                None,
                f'regulator "{s.name}" stays in regulation at low line and heaviest load with '
                f"only {s.dropout_margin_v:.2g} V to spare (input trough {s.input_min_v:.3g} V); "
                f"allow at least {THIN_DROPOUT_MARGIN_V:g} V: raise the input by "
                f"{THIN_DROPOUT_MARGIN_V - s.dropout_margin_v:.2g} V or use a lower-dropout type",
                {"dropout_margin_v": s.dropout_margin_v},
            )
        )
    if s.min_load_margin_a is not None and s.min_load_a is not None:
        b = s.bleeder_suggestion
        if b is not None:
            found.append(
                Finding(
                    "warning",
                    "regulator-min-load",
                    None,
                    f'regulator "{s.name}" delivers only {amps(s.idle_load_a)} at idle (divider '
                    f"{amps(s.divider_a or 0.0)} included) against its minimum load of "
                    f"{amps(s.min_load_a)}: below it the output can drift up out of "
                    f'regulation; add a bleeder = "{b.resistance_ohm:g} ohm" ({b.series}) '
                    f"across the output: it draws {amps(b.current_a)} and dissipates "
                    f"{b.power_w * 1e3:.3g} mW (use a part rated for twice that)",
                    {
                        "idle_load_a": s.idle_load_a,
                        "min_load_a": s.min_load_a,
                        "min_load_margin_a": s.min_load_margin_a,
                        "bleeder_ohm": b.resistance_ohm,
                        "bleeder_w": b.power_w,
                    },
                )
            )
    if s.junction_degc is not None and s.max_junction_degc is not None:
        if s.junction_degc > s.max_junction_degc:
            fix = "a heatsink"
            if s.heatsink_allowed_k_per_w is not None and s.heatsink_allowed_k_per_w > 0.0:
                fix = f"a heatsink (with interface) of at most {s.heatsink_allowed_k_per_w:.3g} K/W"
            elif s.theta_allowed_k_per_w is not None:
                fix = (
                    f"a heatsink bringing junction-to-ambient to at most "
                    f"{s.theta_allowed_k_per_w:.3g} K/W"
                )
            found.append(
                Finding(
                    "error",
                    "regulator-junction",
                    None,
                    f'regulator "{s.name}" dissipates {s.dissipation_w or 0.0:.3g} W at high line '
                    f"and heaviest load: its junction reaches {s.junction_degc:.0f} degC at "
                    f"{ambient_degc:g} degC ambient, over its {s.max_junction_degc:.0f} degC "
                    f"maximum; fit {fix}, or lower its input voltage",
                    {
                        "dissipation_w": s.dissipation_w or 0.0,
                        "junction_degc": s.junction_degc,
                        "max_junction_degc": s.max_junction_degc,
                    },
                )
            )
        elif s.junction_degc > s.max_junction_degc - JUNCTION_MARGIN_K:
            found.append(
                Finding(
                    "warning",
                    "regulator-junction-near",
                    None,
                    f'regulator "{s.name}" runs its junction at {s.junction_degc:.0f} degC at high '
                    f"line and heaviest load, within {JUNCTION_MARGIN_K:g} K of its "
                    f"{s.max_junction_degc:.0f} degC maximum; a larger heatsink or a lower "
                    "input voltage buys life and margin for a hot day",
                    {"junction_degc": s.junction_degc, "max_junction_degc": s.max_junction_degc},
                )
            )
    elif s.theta_k_per_w is None and (s.dissipation_w or 0.0) > 0.0:
        found.append(
            Finding(
                "note",
                "regulator-no-thermal",
                None,
                f'regulator "{s.name}" dissipates {s.dissipation_w or 0.0:.3g} W at high line and '
                "heaviest load; give theta_ja (or theta_jc and heatsink) to check its junction",
                {"dissipation_w": s.dissipation_w or 0.0},
            )
        )
    if s.max_input_v is not None and s.input_max_v is not None and s.input_max_v > s.max_input_v:
        found.append(
            Finding(
                "error",
                "regulator-max-input",
                None,
                f'regulator "{s.name}" sees {s.input_max_v:.3g} V at its input at high line and '
                f"no load, over its {s.max_input_v:.3g} V maximum; lower the input (a smaller "
                "secondary) or use a higher-voltage type",
                {"input_max_v": s.input_max_v, "max_input_v": s.max_input_v},
            )
        )
    dv = s.divider_suggestion
    error = 0.0 if dv is None else (s.vout_v - dv.target_v) / dv.target_v
    if dv is not None and abs(dv.error_fraction) < abs(error):  # only a better pair is news
        found.append(
            Finding(
                "note",
                "regulator-divider",
                None,
                f'regulator "{s.name}": the divider sets {s.vout_v:.4g} V against the '
                f"{dv.target_v:.4g} V target ({error:+.2%}); the best {dv.series} pair with no "
                f'larger a lower resistor is upper = "{dv.upper_ohm:g} ohm", '
                f'lower = "{dv.lower_ohm:g} ohm", giving {dv.vout_v:.4g} V '
                f"({dv.error_fraction:+.2%})",
                {
                    "target_v": dv.target_v,
                    "upper_ohm": dv.upper_ohm,
                    "lower_ohm": dv.lower_ohm,
                    "vout_v": dv.vout_v,
                    "error_fraction": dv.error_fraction,
                },
            )
        )
    return found


# Off-load rise of small mains transformers (common practice, no source).
TYPICAL_REGULATION = (0.10, 0.25)


def _rectified(s: SupplyFigures) -> list[Finding]:
    found: list[Finding] = []
    if s.transformer_regulation == 0.0:
        found.append(
            Finding(
                "note",
                "transformer-regulation-unknown",
                None,
                f'supply "{s.name}" has no transformer regulation: its no-load crest is taken at '
                "the rated-load secondary voltage, while small transformers rise some "
                f"{TYPICAL_REGULATION[0]:.0%} to {TYPICAL_REGULATION[1]:.0%} off load (common "
                "practice, no source); give `regulation` so the crest checks (regulator "
                "max_input, op-amp max_supply) see the real figure",
            )
        )
    fraction = s.transformer_load_fraction
    if fraction is not None and fraction * RMS_PER_DC_AMP > 1.0:
        found.append(
            Finding(
                "warning",
                "transformer-rating",
                None,
                f'supply "{s.name}" draws {s.max_load_a:.3g} A dc at heaviest load, '
                f"{fraction:.0%} of the transformer's rated current; a capacitor-input "
                f"rectifier's rms winding current is about {RMS_PER_DC_AMP:g}x its dc load, so "
                f"choose a transformer rated for at least {s.max_load_a * RMS_PER_DC_AMP:.3g} A",
                {"load_fraction": fraction},
            )
        )
    peak = s.output_min_v + (s.ripple_vpp or 0.0)
    if s.ripple_vpp is not None and peak > 0.0 and s.ripple_vpp > LARGE_RIPPLE_FRACTION * peak:
        found.append(
            Finding(
                "warning",
                "large-ripple",
                None,
                f'supply "{s.name}" ripples {s.ripple_vpp:.3g} V p-p at heaviest load, over '
                f"{LARGE_RIPPLE_FRACTION:.0%} of its peak: the trough figure is rough (the "
                "constant-current estimate overstates the ripple); fit a larger reservoir",
                {"ripple_vpp": s.ripple_vpp},
            )
        )
    return found


def _battery(s: SupplyFigures) -> list[Finding]:
    if s.capacity_ah is None:
        return []
    idle, nominal = s.runtime_idle_h, s.runtime_nominal_h
    if idle is None or nominal is None:
        return []
    return [
        Finding(
            "note",
            "battery-runtime",
            None,
            f'battery "{s.name}" ({s.capacity_ah:g} Ah) lasts about {idle:.3g} h at idle and '
            f"{nominal:.3g} h at the nominal level ({amps(s.idle_load_a)} and "
            f"{amps(s.nominal_load_a)}); ideal figures: high drain and cold shorten them",
            {"runtime_idle_h": idle, "runtime_nominal_h": nominal},
        )
    ]


def rules(budget: Budget) -> list[Finding]:
    """Regulation, minimum load, junction, input limits, transformer rating, run time."""
    found: list[Finding] = []
    for s in budget.supplies:
        if s.kind == "regulator":
            these = _regulator(s, budget.ambient_degc)
        elif s.kind == "rectified":
            these = _rectified(s)
        else:
            these = _battery(s)
        found += [replace(fi, supply=s.name) for fi in these]
    return found
