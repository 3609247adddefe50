"""A rectified supply's findings: collapse, the transformer's rating by its rms current, the
reservoir's ripple current, a large ripple, what the model does not know, and the mains
caution."""

from __future__ import annotations

from typing import Any

import numpy as np
from numpy.typing import NDArray

from chainbudget.finding import Finding
from chainbudget.notation import amps, eng
from chainbudget.supplies.base import SupplyBudget
from chainbudget.supplies.rectified.figures import RectifiedFigures
from chainbudget.thresholds import LARGE_RIPPLE_FRACTION, RMS_PER_DC_AMP, TYPICAL_REGULATION

MAINS_CAUTION = (
    "Mains: this chain has a transformer-fed supply. Mains wiring, fusing, earthing and "
    "insulation are hazardous and are governed by local electrical codes; have that part "
    "built or checked by a licensed practitioner. These figures do not assess safety."
)


def over_rating(current_a: Any, rating_a: float, collapsed: Any) -> NDArray[np.bool_]:
    """Whether an rms current exceeds its rating on a rail that holds its load (the
    transformer's rating, the reservoir's ripple rating), element-wise: the check's rule
    and the spread's trials (`chainbudget.supplies.rectified.spread`)."""
    return np.logical_and(np.asarray(current_a) > rating_a, np.logical_not(collapsed))


def ripple_too_large(trough_v: Any, ripple_vpp: Any, collapsed: Any) -> NDArray[np.bool_]:
    """Whether a working rail's low-line ripple exceeds `LARGE_RIPPLE_FRACTION` of its peak
    (trough + ripple), element-wise as `over_rating`."""
    trough, ripple = np.asarray(trough_v, dtype=float), np.asarray(ripple_vpp, dtype=float)
    crest = trough + ripple
    large = np.logical_and(crest > 0.0, ripple > LARGE_RIPPLE_FRACTION * crest)
    return np.logical_and(large, np.logical_not(collapsed))


def rectified_rules(s: SupplyBudget, own: RectifiedFigures) -> list[Finding]:
    """Every finding about one rail of a rectified supply."""
    found: list[Finding] = []
    if own.transformer_rail:
        found.append(Finding("caution", "mains", None, MAINS_CAUTION))
    found += _collapse(s, own)
    if own.transformer_rail:
        found += _transformer(s, own)
    found += _reservoir(s, own)
    return found


def _collapse(s: SupplyBudget, own: RectifiedFigures) -> list[Finding]:
    if not s.collapsed:
        return []
    ways = []
    if own.reservoir_to_hold_f is not None:
        ways.append(f"a reservoir of at least {eng(own.reservoir_to_hold_f, 'F')}")
    if own.winding_to_hold_ohm is not None:
        ways.append(
            f"a transformer whose winding resistance is under "
            f"{eng(own.winding_to_hold_ohm, 'ohm')} (a larger one)"
        )
    hold = " or ".join(ways) if ways else "a larger transformer, or less load"
    return [
        Finding(
            "error",
            "supply-collapse",
            None,
            f'supply "{s.name}" cannot hold its load at low line: {amps(s.max_load_a)} '
            f"({', '.join(s.stages + s.children) or 'its load'}) empties the reservoir "
            "before the winding refills it, and the rail falls to zero; "
            f"{hold} would hold it at half its peak",
            {
                "max_load_a": s.max_load_a,
                "reservoir_to_hold_f": own.reservoir_to_hold_f,
                "winding_to_hold_ohm": own.winding_to_hold_ohm,
            },
        )
    ]


def _transformer(s: SupplyBudget, own: RectifiedFigures) -> list[Finding]:
    found: list[Finding] = []
    if own.transformer_regulation == 0.0:
        found.append(
            Finding(
                "note",
                "transformer-regulation-unknown",
                None,
                f'supply "{s.name}" has no transformer regulation: its no-load crest is '
                "taken at the rated-load secondary voltage, while small transformers rise "
                f"some {TYPICAL_REGULATION[0]:.0%} to {TYPICAL_REGULATION[1]:.0%} off load "
                "(common practice, no source); give `regulation` so the crest checks "
                "(regulator max_input, op-amp max_supply) see the real figure",
            )
        )
    if not own.winding_known:
        found.append(
            Finding(
                "note",
                "winding-resistance-unknown",
                None,
                f'supply "{s.name}" has no winding resistance: the rail is worked out from an '
                "ideal source at the rated-load secondary voltage, without the drop the "
                "charging pulses make across the winding; give `rated_current` with "
                "`regulation`, or `winding_resistance`",
            )
        )
    rated = own.rated_a
    if rated is not None and over_rating(own.rating_current_a, rated, s.collapsed):
        if own.winding_known:
            ratio = f" ({own.rms_per_dc:.2g} x its dc load)" if own.rms_per_dc else ""
            drawn = f"the charging pulses draw {amps(own.winding_rms_a)} rms from the winding"
        else:
            ratio = " (the rule of thumb: its winding resistance is not known)"
            drawn = (
                f"the charging pulses draw about {amps(own.rating_current_a)} rms from the "
                f"winding, {RMS_PER_DC_AMP:g} x its dc load"
            )
        found.append(
            Finding(
                "warning",
                "transformer-rating",
                None,
                f'supply "{s.name}": {drawn}{ratio} at heaviest load, over its '
                f"{amps(rated)} rating (the dc load is {amps(own.dc_load_a)}); choose a "
                f"transformer rated for at least {amps(own.rating_current_a)}",
                {
                    "winding_rms_a": own.rating_current_a,
                    "rated_current_a": rated,
                    "load_fraction": own.transformer_load_fraction,
                },
            )
        )
    return found


def _reservoir(s: SupplyBudget, own: RectifiedFigures) -> list[Finding]:
    found: list[Finding] = []
    rating = own.reservoir_ripple_rating_a
    if rating is not None and over_rating(own.reservoir_ripple_a, rating, s.collapsed):
        found.append(
            Finding(
                "warning",
                "reservoir-ripple-current",
                None,
                f'supply "{s.name}": the reservoir carries {amps(own.reservoir_ripple_a)} rms '
                f"of ripple current at heaviest load, over its {amps(rating)} rating; it "
                f"will run hot and age early: use one rated for at least "
                f"{amps(own.reservoir_ripple_a)} (or two in parallel sharing it)",
                {"reservoir_ripple_a": own.reservoir_ripple_a, "rating_a": rating},
            )
        )
    ripple = s.ripple_vpp
    if ripple is not None and ripple_too_large(s.trough_v, ripple, s.collapsed):
        found.append(
            Finding(
                "warning",
                "large-ripple",
                None,
                f'supply "{s.name}" ripples {ripple:.3g} V p-p at low line and heaviest '
                f"load, over {LARGE_RIPPLE_FRACTION:.0%} of its peak: every stage on it "
                "loses that much swing and any regulator after it needs the margin; fit "
                "a larger reservoir",
                {"ripple_vpp": ripple},
            )
        )
    return found
