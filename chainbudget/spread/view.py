"""Views of a spread: the tables (80 columns) and the JSON (contract keys)."""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

from chainbudget.notation import eng
from chainbudget.report.layout import Drawn, line
from chainbudget.report.tables import add_row, new_table
from chainbudget.spread.run import SpreadResult

# Sensitivity rows shown per figure in the table (the JSON has every share of 1 % or more).
TOP_PARTS = 3
# A figure whose trials stay within this fraction of its size (or 1e-12 absolute) is not
# moved by the tolerances: it is left out of the table (kept in the JSON).
STILL_RTOL = 1e-9


#: A figure path's unit suffix and the unit it stands for (the check JSON's key suffixes).
_UNITS = (
    ("_db", "dB"),
    ("_dbu", "dBu"),
    ("_v_rthz", "V/rtHz"),
    ("_degc", "degC"),
    ("_deg", "deg"),
    ("_vrms", "Vrms"),
    ("_vpk", "Vpk"),
    ("_vpp", "Vpp"),
    ("_v", "V"),
    ("_a", "A"),
    ("_ohm", "ohm"),
    ("_k_per_w", "K/W"),  # before ``_w``, which it ends with
    ("_w", "W"),
    ("_hz", "Hz"),
    ("_f", "F"),
    ("_percent", "%"),
)


#: The keys of a listed entry of the check JSON (``hum.by_path.STAGE.PATH.vrms``,
#: ``supplies.NAME.ripple_harmonics.HZ.vpk``) that are a unit alone, and the figure each
#: stands for in the table.
_ENTRY_KEYS = {"vrms": "hum", "a_vrms": "hum a", "vpk": "ripple"}

#: The noise budget's shares (``noise_sources.LABEL.share``, ``noise.stage_shares.NAME.
#: share_a``): fractions of the output noise power, shown in per cent.
_SHARES = (".share", ".share_a")


def is_share(path: str) -> bool:
    """Whether a figure is a share of the output noise power (a fraction, no unit)."""
    return path.startswith(("noise_sources.", "noise.stage_shares.")) and path.endswith(_SHARES)


def _unit(path: str) -> str:
    """A figure path's unit from its suffix (``_db``, ``_v``, ``_vrms``...) or, for a
    listed entry's key that is a unit alone, from that key (``vrms``); a share of the
    noise power has none (``share_a`` is A-weighted, not amperes)."""
    if is_share(path):
        return ""
    key = path.rsplit(".", 1)[-1]
    for suffix, unit in _UNITS:
        if path.endswith(suffix) or key == suffix[1:]:
            return unit
    return ""


def shown(path: str, value: float) -> str:
    unit = _unit(path)
    if unit in _PLAIN_UNITS:
        return f"{value:+.2f} {unit}" if abs(value) < 1e3 else f"{value:.4g} {unit}"
    return eng(value, unit)


_PREFIX = {-12: "p", -9: "n", -6: "u", -3: "m", 0: "", 3: "k", 6: "M", 9: "G"}
#: Units shown without an SI prefix: levels in decibels, angles and temperatures.
_PLAIN_UNITS = frozenset({"dB", "dBu", "deg", "degC"})


def scaled(path: str, typical: float) -> tuple[float, str]:
    """The scale and unit a row's numbers are shown in (engineering prefix of ``typical``;
    a share of the noise power in per cent; a pure number, a divider's ratio or a damping
    factor, as it is)."""
    if is_share(path):
        return 0.01, "%"
    unit = _unit(path)
    if unit in _PLAIN_UNITS or not unit or typical == 0.0 or not math.isfinite(typical):
        return 1.0, unit
    exponent = max(-12, min(9, 3 * math.floor(math.log10(abs(typical)) / 3)))
    return 10.0**exponent, _PREFIX[exponent] + unit


def is_harmonic(path: str) -> bool:
    """A harmonic of THD (``output.thd_LEVEL_harmonic_N_db``): nineteen a level, in the JSON
    only (the table and the pictures show THD itself, which sums them)."""
    return path.startswith("output.thd_") and "_harmonic_" in path


def moving(result: SpreadResult) -> list[str]:
    """Figures the tolerances move (their trials are not all the same)."""
    found = []
    for path, stats in result.stats.items():
        size = max(abs(stats["min"]), abs(stats["max"]))
        if stats["max"] - stats["min"] > max(STILL_RTOL * size, 1e-12):
            found.append(path)
    return found


def _short(path: str) -> str:
    return path.removeprefix("nodes.").removeprefix("supplies.")


def _bare(path: str) -> str:
    """A figure's path without its unit suffix (the unit has its own column)."""
    short = _short(path)
    if is_share(path):
        return short
    for suffix, _ in _UNITS:
        if short.endswith(suffix):
            return short.removesuffix(suffix)
    return short


#: The noise budget's figures of a stage or a generator: the group their path starts
#: with and the words the table names each of their keys with.
_NOISE_PARTS = {
    "noise.stage_shares.": {"share": "stage noise share", "share_a": "stage noise share a"},
    "noise.placement.": {"lift_db": "snr lift if moved"},
    "noise_sources.": {
        "noise_vrms": "noise at output",
        "share": "noise share",
        "share_a": "noise share a",
    },
}


def _place_and_figure(path: str) -> tuple[str, str]:
    """Where a figure belongs (``nodes.pre``, ``supplies.raw``...) and its own name without
    the unit suffix, words spaced (``nominal headroom``); the noise budget's figures of a
    stage or a generator at that stage or generator (``volume``, ``makeup.feedback``)."""
    for group, names in _NOISE_PARTS.items():
        if path.startswith(group):
            place, _, key = path.removeprefix(group).rpartition(".")
            return place, names.get(key, key.replace("_", " "))
    listed = _listed_entry(path)
    if listed is not None:
        return listed
    place, _, key = _bare(path).rpartition(".")
    entry_key = path.rsplit(".", 1)[-1]
    if entry_key in _ENTRY_KEYS:  # a listed entry's own key: the place is all before it
        place, key = _short(path).rpartition(".")[0], _ENTRY_KEYS[entry_key]
    group = path.split(".", 1)[0]
    if group == "supplies":
        where = f"supply {place}"  # a supply may share a stage's name
    else:
        # a chain-wide figure (``ein_dbu``) is the chain's; the others name their place,
        # the output pair's heat (``output.dissipation.KEY``) in words
        where = {"": "chain", "output.dissipation": "output heat"}.get(place, place)
    return where, key.replace("_", " ")


def _listed_entry(path: str) -> tuple[str, str] | None:
    """A listed entry of the check JSON at its owner, named in words: a rail's ripple at
    one harmonic (``supplies.NAME.ripple_harmonics.HZ.vpk``: ``supply NAME``, ``ripple
    100 Hz``), the hum by path (``hum.by_path.STAGE.PATH.vrms``: ``STAGE``, ``hum via
    PATH``), by root supply (``hum.by_rail.NAME.vrms``) and by harmonic
    (``hum.harmonics.HZ.vrms``); None for any other figure. A harmonic's key writes a
    decimal point ``_`` (`chainbudget.spread.hum.harmonic_key`)."""
    entry, _, key = path.rpartition(".")
    if key not in _ENTRY_KEYS:
        return None
    figure = _ENTRY_KEYS[key]
    if path.startswith("supplies.") and ".ripple_harmonics." in entry:
        name, _, hz = entry.removeprefix("supplies.").rpartition(".ripple_harmonics.")
        return f"supply {name}", f"{figure} {hz.replace('_', '.')} Hz"
    if entry.startswith("hum.by_path."):
        stage, _, via = entry.removeprefix("hum.by_path.").partition(".")
        return stage, f"{figure} via {via}"
    if entry.startswith("hum.by_rail."):
        return f"supply {entry.removeprefix('hum.by_rail.')}", f"{figure} from it"
    if entry.startswith("hum.harmonics."):
        hz = entry.removeprefix("hum.harmonics.")
        return "hum", f"{figure} {hz.replace('_', '.')} Hz"
    return None


def _number(unit: str, value: float) -> str:
    """A figure as the table shows it: dB to two decimals, others to four digits (three
    below 0.01, a share of a few parts per million of the noise in per cent, so that no
    number is wider than its column: ``0.000966``). A pure number of 10,000 or more (a
    damping factor: no unit to take a prefix) is written out to its four digits
    (``149100``), from a hundred million up in three with an exponent (``1.49e+09``): at most
    eight characters, so that a column never folds a number at 80 columns."""
    if unit in ("dB", "dBu"):
        return f"{value:+.2f}"
    if 0.0 < abs(value) < 0.01:
        return f"{value:.3g}"
    if 1e4 <= abs(value) < 1e8:
        return f"{float(f'{value:.4g}'):.0f}"
    if abs(value) >= 1e8:
        return f"{value:.2e}"
    return f"{value:.4g}"


def _in_chain_order(paths: list[str], places: Sequence[str]) -> list[str]:
    """Figure paths grouped by place in the chain's order (``places``: path prefixes such
    as ``nodes.pre.``), each place's figures as they came; others after them."""

    def rank(path: str) -> int:
        return next((i for i, p in enumerate(places) if path.startswith(p)), len(places))

    return sorted(paths, key=rank)  # stable: a place's figures keep their order


def spread_tables(result: SpreadResult, title: str, places: Sequence[str] = ()) -> list[Drawn]:
    """Figures, yield, sensitivities, threshold crossings and what is not spread; figures
    grouped by place in the order of ``places`` (path prefixes, the chain's order)."""
    parts: list[Drawn] = []
    head = line(
        f"{title}: {result.trials} trials, seed {result.seed}, "
        f"{len(result.parts)} parts drawn"
        + (f", {len(result.held)} held at nominal" if result.held else "")
    )
    parts.append(head)
    figures = new_table(
        "Spread over the parts' tolerances (low, high: the corner worst case)",
        "at",
        "figure",
        "unit",
        "p1",
        "p50",
        "p99",
        "low",
        "high",
        left=("figure", "unit"),
    )
    still = _in_chain_order([p for p in moving(result) if not is_harmonic(p)], places)
    last_place = None
    for path in still:
        s = result.stats[path]
        lo, hi = result.corners[path]
        scale, unit = scaled(path, s["p50"])
        place, figure = _place_and_figure(path)
        add_row(
            figures,
            place if place != last_place else "",
            figure,
            unit,
            *(_number(unit, v / scale) for v in (s["p1"], s["p50"], s["p99"], lo, hi)),
        )
        last_place = place
    parts.append(figures)
    yields = new_table(
        f"Yield: {result.yield_all:.1%} of trials with no error finding",
        "finding",
        "severity",
        "trials without it",
    )
    for code, share in result.yield_by_code.items():
        add_row(yields, code, result.severities[code], f"{share:.1%}")
    parts.append(yields)
    sens = new_table("What moves each figure (share of its variance)", "figure", "part", "share")
    for path in still:
        rows = [x for x in result.sensitivity if x.figure == path][:TOP_PARTS]
        for i, row in enumerate(rows):
            add_row(sens, _short(path) if i == 0 else "", row.part, f"{row.share:.0%}")
    parts.append(sens)
    if result.crossings:
        cross = new_table(
            "Figures whose spread crosses a finding's limit",
            "figure",
            "limit",
            "trials",
            "part, now",
            "inside with",
        )
        for c in result.crossings:
            t = c.threshold
            add_row(
                cross,
                f"{_bare(t.path)}\n{t.code}",
                shown(t.path, t.limit),
                f"{c.share_failing:.1%}",
                f"{c.part}\n{c.tolerance}",
                c.tolerance_needed if c.tolerance_needed is not None else "none alone",
            )
        parts.append(cross)
    notes = []
    harmonics = sum(1 for p in result.stats if is_harmonic(p))
    if harmonics:
        notes.append(
            f"the harmonics of THD at each level ({harmonics} figures, "
            "output.thd_LEVEL_harmonic_N_db) are in the JSON"
        )
    if result.held:
        notes.append(
            "held at nominal: " + "; ".join(f"{h.label} ({h.reason})" for h in result.held)
        )
    if result.undefined:
        # the harmonics are JSON-only figures, undefined where their level's THD is
        listed = [
            f"{p} in {share:.1%}" for p, share in result.undefined.items() if not is_harmonic(p)
        ]
        unlisted = sum(1 for p in result.undefined if is_harmonic(p))
        if unlisted:
            listed.append(f"{unlisted} harmonics (in the JSON)")
        notes.append(
            "undefined in some trials (null in their check; the figures above are over "
            "the others): " + "; ".join(listed)
        )
    skipped = result.codes_not_spread()
    if skipped:
        notes.append(
            "the nominal check also finds " + ", ".join(skipped) + ": not evaluated per trial "
            "(docs/tolerances.md lists what the spread covers)"
        )
    notes.append(
        "corners: the extreme over the bounds (from the sensitivities' signs, confirmed by "
        "flipping each part); 'inside with': the part's tolerance that keeps the corner "
        "inside the limit, from the linear sensitivity ('none alone': no tolerance of that "
        "part does)"
    )
    parts += [line(n) for n in notes]
    parts += [line(f"CAUTION: {c}") for c in result.cautions]
    return parts


def _finite(value: float) -> float | None:
    return value if math.isfinite(value) else None


def spread_json(result: SpreadResult, title: str, file: str) -> dict[str, Any]:
    """The contract's keys (trials, seed, figures, yield, yield_by_code, corners,
    sensitivity) and what the spread drew and held."""
    return {
        "title": title,
        "file": file,
        "trials": result.trials,
        "seed": result.seed,
        "figures": {
            path: {k: _finite(v) for k, v in stats.items()} for path, stats in result.stats.items()
        },
        "nominal": {path: _finite(v) for path, v in result.nominal.items()},
        "yield": result.yield_all,
        "yield_by_code": dict(result.yield_by_code),
        "corners": {
            path: {"low": _finite(lo), "high": _finite(hi)}
            for path, (lo, hi) in result.corners.items()
        },
        "sensitivity": [
            {"figure": s.figure, "part": s.part, "share": s.share} for s in result.sensitivity
        ],
        "crossings": [
            {
                "figure": c.threshold.path,
                "code": c.threshold.code,
                "severity": c.threshold.severity,
                "limit": c.threshold.limit,
                "nominal": _finite(c.nominal),
                "corner": _finite(c.corner),
                "share_failing": c.share_failing,
                "part": c.part,
                "tolerance": c.tolerance,
                "tolerance_needed": c.tolerance_needed,
            }
            for c in result.crossings
        ],
        "parts": [
            {
                "part": p.label,
                "class": p.part_class,
                "low": p.low,
                "high": p.high,
                "tolerance": p.tolerance_text,
            }
            for p in result.parts
        ],
        "held": [{"part": h.label, "reason": h.reason} for h in result.held],
        "codes_not_spread": result.codes_not_spread(),
        "undefined": dict(result.undefined),
    }
