"""A structure-aware fuzz of chain files: mutated example chains, and how a run of one ends.

The seeds are the example chains (``chains/``) and the test chains (``tests/data/``). A case
is a seed with one to three mutations: a field's value replaced (quantities with right,
wrong, misspelt and miscased units; magnitudes from 1e-300 to 1e300; zero, negative,
non-finite; other TOML types; text with brackets, control characters, very long), a field
scaled by powers of ten, a field removed or an unknown one added, a reference (rail, parent
supply, part) pointed elsewhere or into a loop, and the table structure changed (tables
dropped, stages duplicated, reordered or re-kinded, arrays turned into tables, deep
nesting). To keep a case fast the seeds' frequency grids are thinned to a few points per
decade (a mutation may still set any grid).

`run_case` runs one case in-process (the loader, `compute`, the JSON and table views) with
warnings as errors and a time limit, and names how it ended: ``refused`` (a `ChainError`
with a clear one-line message), ``analysed`` (every figure finite), or the class of
failure (an exception's type name, ``non-finite``, ``unclear-message``, ``hang``).
`run_command` runs the real command on a case in a subprocess.
"""

from __future__ import annotations

import contextlib
import io
import json
import math
import re
import signal
import subprocess
import sys
import tomllib
import warnings
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any
from unittest import mock

import numpy as np
import tomli_w
from hypothesis import strategies as st

ROOT = Path(__file__).resolve().parents[1]
SEED_FILES = sorted([*(ROOT / "chains").glob("*.toml"), *(ROOT / "tests" / "data").glob("*.toml")])
SEEDS: dict[str, dict[str, Any]] = {
    path.stem: tomllib.loads(path.read_text(encoding="utf-8")) for path in SEED_FILES
}
FUZZ_POINTS_PER_DECADE = 4
FILE = "fuzz.toml"
# The longest message a refusal may print: one line that a reader takes in (a list of
# known fields included), never a long echo of what the file holds.
MESSAGE_LIMIT = 600

# --- values -------------------------------------------------------------------------------

NUMBER_TEXTS = st.one_of(
    st.sampled_from(
        [
            "0",
            "-0",
            "-1",
            "1",
            "2.2",
            "4.7",
            "10",
            "100",
            "1e3",
            "1e6",
            "1e9",
            "1e12",
            "1e30",
            "1e300",
            "-1e300",
            "1e-3",
            "1e-9",
            "1e-30",
            "1e-300",
            "5e-324",
            "nan",
            "inf",
            "-inf",
            "1e999",
            ".5",
            "1.",
            "+3",
            "0x10",
            "1_000",
        ]
    ),  # fmt: skip
    st.floats(allow_nan=False, allow_infinity=False).map(repr),
    st.integers(-(10**12), 10**12).map(str),
)
UNIT_TEXTS = st.sampled_from(
    [
        "", "ohm", "ohms", "kohm", "Mohm", "mohm", "MOhm", "kOhm", "KOhm", "Ω", "kΩ", "R",
        "F", "uF", "uf", "µF", "nF", "nf", "pF", "pf", "mF", "mf", "MF",
        "Hz", "kHz", "KHz", "khz", "MHz", "mHz", "MHZ",
        "V", "mV", "MV", "uV", "Vpk", "Vp", "Vpp", "Vp-p", "Vrms", "VAC", "Vac", "dBV", "dBu",
        "dB", "A", "mA", "MA", "ma", "uA", "W", "mW", "V/us", "V/uS", "V/µs", "V/s",
        "nV/rtHz", "nV/√Hz", "nV/sqrtHz", "nV/sqrt(Hz)", "pA/rtHz", "A/rtHz",
        "K/W", "C/W", "degC/W", "°C/W", "degC", "C", "°C", "K", "degF", "%", "Ah", "mAh",
        "s", "us", "m", "furlong", "m/s", "ohm*ohm", "1/0", "**", "(", ")", "[red]", "x",
        "ohm ohm", "dB dB", "kk", "\x00", "\x1b[31m", "\u202e", " ",
    ]
)  # fmt: skip
LETTER_CODES = st.sampled_from(
    ["4k7", "0R22", "470R", "2M2", "2n2", "4n7", "100p", "2u2", "4m7", "k", "4.7k", "4.7k7",
     "1e3k", "R", "0k0", "99G", "1e300k", "4k7 ohm", "2u2 F", "4k7Ω"]
)  # fmt: skip
AWKWARD_TEXTS = st.sampled_from(
    [
        "",
        " ",
        "[/bold]",
        "[red]loud[/red]",
        "[bold",
        "x]",
        "\x1b[2J",
        "tab\there",
        "line\nbreak",
        "cr\rhere",
        "bell\x07",
        "nul\x00",
        "\u202eevil",
        "ünïcödé Ω µ",
        "x" * 5000,
        "[" * 300,
        "${HOME}",
        "%s%s%n",
        "'",
        '"',
        "\\",
        "A",
        "B",
        "C",
        "log",
        "linear",
        "audio",
        "lin",
        "reverse log",
        "10 %",
        "ground",
        "none",
        "true",
    ]
)
TEXTS = st.one_of(AWKWARD_TEXTS, st.text(max_size=40))


@st.composite
def quantity_texts(draw: st.DrawFn) -> str:
    number = draw(NUMBER_TEXTS)
    unit = draw(UNIT_TEXTS)
    gap = draw(st.sampled_from([" ", "", "  "]))
    return f"{number}{gap}{unit}" if unit else number


VALUES: st.SearchStrategy[Any] = st.one_of(
    quantity_texts(),
    quantity_texts(),
    quantity_texts(),
    LETTER_CODES,
    TEXTS,
    st.integers(min_value=-(2**63), max_value=2**63 - 1),
    st.floats(),  # nan and inf included: TOML has them
    st.booleans(),
    st.lists(st.one_of(quantity_texts(), st.integers()), max_size=3),
    st.dictionaries(st.text(max_size=5), st.integers(), max_size=2),
)

_LEADING_NUMBER = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)(.*)$", re.S)


def _scaled(value: Any, exponent: int) -> Any:
    """The value with its number multiplied by 10**exponent (text keeps its unit)."""
    if isinstance(value, bool):
        return value
    if isinstance(value, int | float):
        return value * 10.0**exponent
    if isinstance(value, str):
        match = _LEADING_NUMBER.match(value)
        if match:
            return f"{float(match.group(1)) * 10.0**exponent!r}{match.group(2)}"
    return value


# --- where a mutation lands ----------------------------------------------------------------


def _schema_keys(table: str, body: dict[str, Any]) -> list[str]:
    """The keys a table may hold: the kind's fields (so that absent options get set too)."""
    from chainbudget.chainfile import LOAD_FIELDS, SETTINGS_FIELDS, SOURCE_FIELDS
    from chainbudget.parts import OPAMP_FIELDS, TRANSISTOR_FIELDS
    from chainbudget.stages import KINDS as STAGE_KINDS
    from chainbudget.supplies import KINDS as SUPPLY_KINDS

    schema: tuple[Any, ...] = ()
    if table == "chain":
        schema = SETTINGS_FIELDS
    elif table == "source":
        schema = SOURCE_FIELDS
    elif table == "load":
        schema = LOAD_FIELDS
    elif table == "opamp":
        schema = OPAMP_FIELDS
    elif table == "transistor":
        schema = TRANSISTOR_FIELDS
    kind = body.get("kind")
    if table == "stage" and isinstance(kind, str) and kind in STAGE_KINDS:
        schema = STAGE_KINDS[kind].fields
    elif table == "supply" and isinstance(kind, str) and kind in SUPPLY_KINDS:
        schema = SUPPLY_KINDS[kind].fields
    return sorted({*body, *(field.key for field in schema)})


def _tables(data: dict[str, Any]) -> list[tuple[str, dict[str, Any]]]:
    """Every table of the chain with the name of the table kind it is."""
    found: list[tuple[str, dict[str, Any]]] = []
    for top in ("chain", "source", "load"):
        if isinstance(data.get(top), dict):
            found.append((top, data[top]))
    for top in ("opamp", "transistor"):
        if isinstance(data.get(top), dict):
            found += [(top, body) for body in data[top].values() if isinstance(body, dict)]
    for top in ("stage", "supply"):
        if isinstance(data.get(top), list):
            found += [(top, body) for body in data[top] if isinstance(body, dict)]
    return found


def _names(data: dict[str, Any]) -> list[str]:
    names = ["ground", "nowhere", "", "[x]"]
    for top in ("stage", "supply"):
        if isinstance(data.get(top), list):
            names += [str(b.get("name")) for b in data[top] if isinstance(b, dict)]
    for top in ("opamp", "transistor"):
        if isinstance(data.get(top), dict):
            names += list(data[top])
    names += ["jfet_input", "low_noise_bipolar", "small_npn", "small_pnp", "power_npn"]
    return names


# Units of each field kind's dimension (FieldKind.unit), for values of the right dimension.
TYPED_UNITS: dict[str, list[str]] = {
    "ohm": ["ohm", "kohm", "Mohm", "mohm", "kOhm"],
    "F": ["pF", "nF", "uF", "mF", "F"],
    "Hz": ["Hz", "kHz", "MHz"],
    "V": ["V", "mV", "uV", "kV"],
    "A": ["A", "mA", "uA", "nA"],
    "V/s": ["V/us", "V/s"],
    "V/rtHz": ["nV/rtHz", "uV/rtHz"],
    "A/rtHz": ["pA/rtHz", "nA/rtHz"],
    "K/W": ["K/W"],
    "degC": ["degC", "K", "degF"],
    "Ah": ["Ah", "mAh"],
    "dB": ["dB"],
    "dB or ratio": ["dB", ""],
    "fraction or %": ["%", ""],
    "number": [""],
    "0..1": [""],
    "deg": ["deg"],
    "V rms": ["V", "Vrms", "Vpk", "VAC"],
    "V peak": ["V", "Vpk", "Vpp", "Vrms"],
    "A peak": ["mA", "A", "mApk", "mArms"],
    "level (Vrms, Vpk, Vpp, dBV, dBu)": ["mV", "Vrms", "Vpk", "Vpp", "dBV", "dBu"],
}
# Most draws near the field's usual magnitudes (the analysis runs), the rest far out.
MAGNITUDES = st.one_of(
    st.integers(-1, 1),
    st.integers(-1, 1),
    st.integers(-1, 1),
    st.integers(-6, 6),
    st.integers(-30, 30),
    st.sampled_from([-300, -100, 100, 300]),
)


@st.composite
def typed_texts(draw: st.DrawFn, unit_name: str) -> Any:
    """A value of the field's own kind: a quantity of its dimension at any magnitude
    (sometimes zero or negative), or one of its words, names, flags or bands."""
    mantissa = draw(st.sampled_from([1.0, 2.2, 4.7, 0.5, 9.99, 3.3, 6.8, 1.5, 0.0, -4.7]))
    number = mantissa * 10.0 ** draw(MAGNITUDES) if mantissa else 0.0
    if unit_name == "whole number":
        return draw(st.sampled_from([0, 1, 3, 10, 100, 1000, 10**4, 10**7, -1]))
    if unit_name == "0..1":
        return draw(st.one_of(st.floats(0.0, 1.0), st.sampled_from([0, 1, 0.5, -0.1, 1.1])))
    if unit_name == "true | false":
        return draw(st.booleans())
    if unit_name == "[low, high] Hz":
        low, high = draw(typed_texts("Hz")), draw(typed_texts("Hz"))
        return [low, high]
    if "fraction at mid" in unit_name:
        return draw(st.sampled_from(["log", "linear", "A", "B", "C", "10 %", 0.1, 0.5, 0.99]))
    if " | " in unit_name:
        return draw(st.sampled_from([word.strip('" ') for word in unit_name.split(" | ")]))
    units = TYPED_UNITS.get(unit_name)
    if units is None:
        return draw(VALUES)
    unit = draw(st.sampled_from(units))
    if not unit and unit_name in ("number", "dB or ratio", "fraction or %"):
        return number if draw(st.booleans()) else f"{number!r}"
    return f"{number!r} {unit}"


def _field_units(table: str, body: dict[str, Any]) -> dict[str, str]:
    """Each field of a table and its kind's unit name."""
    from chainbudget.chainfile import LOAD_FIELDS, SETTINGS_FIELDS, SOURCE_FIELDS
    from chainbudget.parts import OPAMP_FIELDS, TRANSISTOR_FIELDS
    from chainbudget.stages import KINDS as STAGE_KINDS
    from chainbudget.supplies import KINDS as SUPPLY_KINDS

    schemas: dict[str, tuple[Any, ...]] = {
        "chain": SETTINGS_FIELDS,
        "source": SOURCE_FIELDS,
        "load": LOAD_FIELDS,
        "opamp": OPAMP_FIELDS,
        "transistor": TRANSISTOR_FIELDS,
    }
    schema = schemas.get(table, ())
    kind = body.get("kind")
    if table == "stage" and isinstance(kind, str) and kind in STAGE_KINDS:
        schema = STAGE_KINDS[kind].fields
    elif table == "supply" and isinstance(kind, str) and kind in SUPPLY_KINDS:
        schema = SUPPLY_KINDS[kind].fields
    return {field.key: field.kind.unit for field in schema}


def _typed_value(draw: st.DrawFn, data: dict[str, Any]) -> str:
    tables = [(t, b) for t, b in _tables(data) if _field_units(t, b)]
    if not tables:
        return "no table"
    table, body = draw(st.sampled_from(tables))
    fields = _field_units(table, body)
    key = draw(st.sampled_from(sorted(fields)))
    if fields[key] == "name":
        body[key] = draw(st.sampled_from(_names(data)))
    else:
        body[key] = draw(typed_texts(fields[key]))
    return f"{table}.{key} = {body[key]!r:.60}"


REFERENCE_KEYS = (
    "positive", "negative", "from", "opamp", "transistor", "upper", "lower", "driver_upper",
    "driver_lower", "kind", "name", "topology", "bias",
)  # fmt: skip

Mutation = Callable[[st.DrawFn, dict[str, Any]], str]


def _set_value(draw: st.DrawFn, data: dict[str, Any]) -> str:
    tables = _tables(data)
    if not tables:
        return "no table"
    table, body = draw(st.sampled_from(tables))
    key = draw(st.sampled_from(_schema_keys(table, body)))
    body[key] = draw(VALUES)
    return f"{table}.{key} = {body[key]!r:.60}"


def _scale_value(draw: st.DrawFn, data: dict[str, Any]) -> str:
    tables = [(t, b) for t, b in _tables(data) if b]
    if not tables:
        return "no table"
    table, body = draw(st.sampled_from(tables))
    key = draw(st.sampled_from(sorted(body)))
    exponent = draw(st.sampled_from([-300, -30, -12, -9, -6, -3, 3, 6, 9, 12, 30, 300]))
    with contextlib.suppress(OverflowError):
        body[key] = _scaled(body[key], exponent)
    return f"{table}.{key} x 1e{exponent}"


def _zero_or_negate(draw: st.DrawFn, data: dict[str, Any]) -> str:
    tables = [(t, b) for t, b in _tables(data) if b]
    if not tables:
        return "no table"
    table, body = draw(st.sampled_from(tables))
    key = draw(st.sampled_from(sorted(body)))
    value = body[key]
    if isinstance(value, str):
        match = _LEADING_NUMBER.match(value)
        if match:
            number = draw(st.sampled_from(["0", "-" + match.group(1).lstrip("+-"), "-0"]))
            body[key] = number + match.group(2)
    elif isinstance(value, int | float) and not isinstance(value, bool):
        body[key] = draw(st.sampled_from([0, -value, 0.0]))
    return f"{table}.{key} -> {body[key]!r:.60}"


def _drop_key(draw: st.DrawFn, data: dict[str, Any]) -> str:
    tables = [(t, b) for t, b in _tables(data) if b]
    if not tables:
        return "no table"
    table, body = draw(st.sampled_from(tables))
    key = draw(st.sampled_from(sorted(body)))
    del body[key]
    return f"{table}.{key} removed"


def _unknown_key(draw: st.DrawFn, data: dict[str, Any]) -> str:
    tables = _tables(data)
    if not tables:
        return "no table"
    table, body = draw(st.sampled_from(tables))
    key = draw(st.sampled_from(["feedbak", "gain2", "[x]", "\x1b", "é", "x" * 300, "pos"]))
    body[key] = draw(VALUES)
    return f"{table} gains {key!r:.40}"


def _reference(draw: st.DrawFn, data: dict[str, Any]) -> str:
    tables = [(t, b) for t, b in _tables(data) if t in ("stage", "supply")]
    if not tables:
        return "no table"
    table, body = draw(st.sampled_from(tables))
    key = draw(st.sampled_from(REFERENCE_KEYS))
    kinds = ["opamp_gain", "tone_bass", "tone_treble", "tone_two_band", "volume", "follower",
             "push_pull", "block", "dc", "rectified", "regulator", "inverting",
             "non-inverting", "resistor", "current"]  # fmt: skip
    body[key] = draw(st.sampled_from(_names(data) + kinds))
    return f"{table}.{key} -> {body[key]!r:.40}"


def _supply_loop(draw: st.DrawFn, data: dict[str, Any]) -> str:
    supplies = [b for b in data.get("supply", []) if isinstance(b, dict)]
    if not supplies:
        return "no supply"
    first = draw(st.sampled_from(supplies))
    second = draw(st.sampled_from(supplies))
    first["from"], second["from"] = second.get("name"), first.get("name")
    first.setdefault("kind", "regulator")
    return f"supplies {first.get('name')!r} and {second.get('name')!r} feed each other"


def _structure(draw: st.DrawFn, data: dict[str, Any]) -> str:
    what = draw(
        st.sampled_from(
            [
                "drop-table", "drop-stage", "duplicate-stage", "rename-duplicate",
                "reverse-stages", "no-stages", "stage-as-table", "supply-as-table",
                "table-as-list", "unknown-table", "rekind-stage", "rekind-supply",
                "drop-supplies", "many-stages", "ppd", "band",
            ]
        )
    )  # fmt: skip
    stages = data.get("stage") if isinstance(data.get("stage"), list) else []
    if what == "drop-table":
        key = draw(st.sampled_from(sorted(data) or ["chain"]))
        data.pop(key, None)
    elif what == "drop-stage" and stages:
        stages.pop(draw(st.integers(0, len(stages) - 1)))
    elif what in ("duplicate-stage", "rename-duplicate") and stages:
        copy = dict(draw(st.sampled_from(stages)))
        if what == "rename-duplicate":
            copy["name"] = f"{copy.get('name')}_copy"
        stages.insert(draw(st.integers(0, len(stages))), copy)
    elif what == "reverse-stages":
        stages.reverse()
    elif what == "no-stages":
        data["stage"] = []
    elif what == "stage-as-table" and stages:
        data["stage"] = stages[0]
    elif what == "supply-as-table" and data.get("supply"):
        data["supply"] = {"name": "x"}
    elif what == "table-as-list":
        key = draw(st.sampled_from(["chain", "source", "load", "opamp", "transistor"]))
        data[key] = [data.get(key, {})]
    elif what == "unknown-table":
        data[draw(st.sampled_from(["stages", "supplies", "Chain", "[x]"]))] = {}
    elif what == "rekind-stage" and stages:
        body = draw(st.sampled_from(stages))
        if isinstance(body, dict):
            body["kind"] = draw(
                st.sampled_from(["opamp_gain", "tone_bass", "volume", "follower", "block"])
            )
    elif what == "rekind-supply" and data.get("supply"):
        body = draw(st.sampled_from(data["supply"]))
        if isinstance(body, dict):
            body["kind"] = draw(st.sampled_from(["dc", "rectified", "regulator"]))
    elif what == "drop-supplies":
        data.pop("supply", None)
    elif what == "many-stages" and stages:
        copy = dict(draw(st.sampled_from(stages)))
        count = draw(st.sampled_from([5, 20]))
        for i in range(count):
            stages.append({**copy, "name": f"many{i}"})
    elif what == "ppd":
        data.setdefault("chain", {})["points_per_decade"] = draw(
            st.sampled_from([1, 2, 1000, 10**6, 10**9, 2**62, 0, -5])
        )
    elif what == "band":
        data.setdefault("chain", {})["band"] = draw(
            st.sampled_from(
                [["1e-300 Hz", "1e300 Hz"], ["1 Hz", "1 GHz"], ["20 Hz", "20 Hz"],
                 ["1 mHz", "100 kHz"], ["20 kHz", "20 Hz"], ["0 Hz", "1 kHz"], [],
                 ["20 Hz"], ["20 Hz", "20 kHz", "40 kHz"], "20 Hz"]
            )
        )  # fmt: skip
    return what


MUTATIONS: tuple[Mutation, ...] = (
    _typed_value, _typed_value, _typed_value, _typed_value, _typed_value, _typed_value,
    _typed_value, _typed_value, _typed_value, _typed_value, _typed_value, _typed_value,
    _set_value, _set_value, _scale_value, _scale_value, _zero_or_negate,
    _drop_key, _unknown_key, _reference, _reference, _supply_loop, _structure, _structure,
)  # fmt: skip


@dataclass(frozen=True)
class Case:
    """One fuzz case: the TOML text and what was done to its seed."""

    seed: str
    steps: tuple[str, ...]
    text: str

    def __repr__(self) -> str:
        return f"Case({self.seed}: {'; '.join(self.steps)})"


def _deep(draw: st.DrawFn) -> str:
    depth = draw(st.sampled_from([50, 500, 5000, 100000]))
    form = draw(st.sampled_from(["array", "inline", "dotted"]))
    if form == "array":
        return "x = " + "[" * depth + "]" * depth + "\n"
    if form == "inline":
        return "x = " + "{a = " * depth + "1" + "}" * depth + "\n"
    return "[" + ".".join(["a"] * depth) + "]\n"


@st.composite
def cases(draw: st.DrawFn) -> Case:
    """A mutated seed chain, as TOML text."""
    seed = draw(st.sampled_from(sorted(SEEDS)))
    data = json.loads(json.dumps(SEEDS[seed]))  # a deep copy
    chain = data.setdefault("chain", {})
    chain["points_per_decade"] = min(
        int(chain.get("points_per_decade", 40)), FUZZ_POINTS_PER_DECADE
    )
    steps = []
    for _ in range(draw(st.sampled_from([1, 1, 1, 1, 2, 3]))):
        mutation = draw(st.sampled_from(MUTATIONS))
        try:
            steps.append(mutation(draw, data))
        except (TypeError, ValueError, KeyError, AttributeError) as exc:  # a mangled table
            steps.append(f"({mutation.__name__} skipped: {type(exc).__name__})")
    try:
        text = tomli_w.dumps(data)
    except (TypeError, ValueError):  # e.g. a dict key tomli-w cannot write
        text = tomli_w.dumps(SEEDS[seed])
        steps.append("(unwritable: seed kept)")
    if draw(st.integers(0, 49)) == 0:
        text = draw(st.sampled_from([text, ""])) + _deep(draw)
        steps.append("deep nesting")
    return Case(seed, tuple(steps), text)


# Each quantity kind's unit as written in full, and its hard range (chainbudget.plausible):
# values between the plausible and the hard range are taken when so written, and the
# analysis must hold up there too.
EXTREME_UNITS: dict[str, tuple[str, float, float]] = {
    "ohm": ("ohm", 1e-9, 1e12),
    "F": ("farad", 1e-18, 1e3),
    "Hz": ("hertz", 1e-6, 1e12),
    "V": ("volt", 1e-9, 1e6),
    "A": ("ampere", 1e-12, 1e5),
    "V peak": ("volt", 1e-9, 1e6),
    "A peak": ("ampere", 1e-12, 1e5),
}
_PREFIX_WORDS = {-12: "pico", -9: "nano", -6: "micro", -3: "milli", 3: "kilo", 6: "mega", 9: "giga"}


@st.composite
def extreme_cases(draw: st.DrawFn) -> Case:
    """A seed with one to three quantities set anywhere in their hard range, written with
    the prefix in full (so that the plausibility check takes them as meant)."""
    seed = draw(st.sampled_from(sorted(SEEDS)))
    data = json.loads(json.dumps(SEEDS[seed]))
    data.setdefault("chain", {})["points_per_decade"] = FUZZ_POINTS_PER_DECADE
    steps = []
    for _ in range(draw(st.integers(1, 3))):
        tables = [(t, b) for t, b in _tables(data) if _field_units(t, b)]
        table, body = draw(st.sampled_from(tables))
        fields = {k: u for k, u in _field_units(table, body).items() if u in EXTREME_UNITS}
        if not fields:
            continue
        key = draw(st.sampled_from(sorted(fields)))
        word, low, high = EXTREME_UNITS[fields[key]]
        value = low * (high / low) ** draw(st.floats(0.0, 1.0))
        power = draw(st.sampled_from(sorted(_PREFIX_WORDS)))
        body[key] = f"{value / 10.0**power:.6g} {_PREFIX_WORDS[power]}{word}"
        steps.append(f"{table}.{key} = {body[key]!r}")
    return Case(seed, tuple(steps), tomli_w.dumps(data))


# --- running a case ------------------------------------------------------------------------


class Hang(Exception):
    """A case that ran past its time limit."""


@contextlib.contextmanager
def time_limit(seconds: float) -> Iterator[None]:
    """Raise `Hang` in the main thread when the block runs longer than ``seconds``."""

    def expire(signum: int, frame: object) -> None:
        raise Hang(f"over {seconds} s")

    previous = signal.signal(signal.SIGALRM, expire)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0.0)
        signal.signal(signal.SIGALRM, previous)


@dataclass(frozen=True)
class Outcome:
    """How a case ended: ``refused``, ``analysed`` or a failure class, with a detail."""

    ending: str
    detail: str = ""

    @property
    def failed(self) -> bool:
        return self.ending not in ("refused", "analysed")


def message_problem(message: str, file: str = FILE) -> str | None:
    """What is wrong with a refusal's message, or None: one printable line naming the file,
    of a length a reader takes in."""
    if "\n" in message or "\r" in message:
        return "more than one line"
    if not all(ch.isprintable() for ch in message):
        return "raw control characters"
    if not message.startswith(f"{file}: "):
        return "does not start with the file"
    if len(message) > MESSAGE_LIMIT:
        return f"{len(message)} characters"
    return None


def non_finite(value: Any, path: str = "") -> list[str]:
    """Paths of the NaN and infinite numbers in plain data (lists, dicts, floats)."""
    if isinstance(value, bool) or value is None or isinstance(value, str | int):
        return []
    if isinstance(value, float | np.floating):
        return [] if math.isfinite(value) else [f"{path} = {value}"]
    if isinstance(value, dict):
        return [p for key, item in value.items() for p in non_finite(item, f"{path}.{key}")]
    if isinstance(value, list | tuple):
        return [p for i, item in enumerate(value) for p in non_finite(item, f"{path}[{i}]")]
    if isinstance(value, np.ndarray):
        return [] if np.all(np.isfinite(value)) else [f"{path}: array with non-finite values"]
    return []


# Figures that are +inf by design where nothing bounds them, shown as null in the JSON:
# the output's clip level, power, current and SPL when no stage of the chain limits its
# swing, and the damping factor of a zero output impedance. Any other non-finite number
# (NaN, -inf, +inf elsewhere) is a failure.
UNBOUNDED_OUTPUT = ("clip_vpk", "clip_power_w", "clip_current_a", "max_spl_db")


def unexplained_non_finite(data: dict[str, Any]) -> list[str]:
    """`non_finite` of the raw JSON data, less the figures unbounded by design."""
    output = data.get("output") or {}
    allowed = set()
    if output.get("clip_stage") is None:
        allowed |= {f".output.{key} = inf" for key in UNBOUNDED_OUTPUT}
    if output.get("zout_ohm") == 0.0:
        allowed.add(".output.damping_factor = inf")
    # A harmonic below the crossover model's floor (an even one of a symmetric pair) is
    # none by design: -inf in the figures, null in the JSON.
    harmonic = re.compile(r"\.output\.thd\[\d+\]\.(open_)?harmonics_db\[\d+\] = -inf$")
    return [path for path in non_finite(data) if path not in allowed and not harmonic.match(path)]


def _raw_json(budget: Any) -> dict[str, Any]:
    """The JSON view's data before non-finite numbers are turned into nulls."""
    from chainbudget.report import json_view

    with mock.patch.object(json_view, "json_ready", lambda value: value):
        return json_view.budget_json(budget, list(budget.findings))


def run_case(text: str, file: str = FILE, seconds: float = 60.0, table: bool = True) -> Outcome:
    """Load, compute and render one case in-process; warnings are errors."""
    from rich.console import Console

    from chainbudget import ChainError
    from chainbudget.budget import compute
    from chainbudget.chainfile import loads_chain
    from chainbudget.report.plain_text import plain_text
    from chainbudget.report.rich_view import print_blocks
    from chainbudget.report.table_view import report_blocks

    with warnings.catch_warnings():
        warnings.simplefilter("error")
        try:
            with time_limit(seconds):
                try:
                    chain = loads_chain(text, file)
                    budget = compute(chain)
                except ChainError as exc:
                    problem = message_problem(str(exc), file)
                    if problem:
                        return Outcome("unclear-message", f"{problem}: {str(exc)!r:.300}")
                    return Outcome("refused", str(exc))
                data = _raw_json(budget)
                bad = unexplained_non_finite(data)
                if bad:
                    return Outcome("non-finite", "; ".join(bad[:4]))
                from chainbudget.report.json_view import json_ready

                json.dumps(json_ready(data), allow_nan=False)  # what the command prints
                if table:
                    # drawn by rich and without it (on a pipe): the same text
                    blocks = report_blocks(budget, list(budget.findings), noise_detail=True)
                    out = io.StringIO()
                    print_blocks(blocks, Console(file=out, width=80, no_color=True))
                    plain = plain_text(blocks, 80)
                    if plain is not None and plain != out.getvalue():
                        return Outcome("plain-text-differs", f"{plain!r:.300}")
        except Hang as exc:
            return Outcome("hang", str(exc))
        except RecursionError as exc:
            return Outcome("RecursionError", str(exc)[:200])
        except Exception as exc:
            return Outcome(type(exc).__name__, f"{str(exc)[:200]}")
    return Outcome("analysed")


def run_command(text: str, directory: Path, timeout: float = 120.0) -> tuple[int, str, str]:
    """Run ``chainbudget check FILE --format json`` on a case; (exit status, out, err)."""
    path = directory / FILE
    path.write_text(text, encoding="utf-8")
    done = subprocess.run(
        [sys.executable, "-m", "chainbudget", "check", str(path), "--format", "json"],
        capture_output=True,
        text=True,
        timeout=timeout,
        cwd=directory,
    )
    return done.returncode, done.stdout, done.stderr


def command_problem(status: int, out: str, err: str, file: str) -> str | None:
    """What is wrong with how the real command ended on a case, or None."""
    if status == 2:
        lines = err.splitlines()
        if len(lines) != 1:
            return f"exit 2 with {len(lines)} lines on stderr: {err[-300:]!r}"
        prefix = "chainbudget: "
        if not lines[0].startswith(prefix):
            return f"exit 2 without the program's prefix: {lines[0]!r:.200}"
        return message_problem(lines[0][len(prefix) :], file)
    if status not in (0, 1):
        return f"exit {status}: {err[-500:]!r}"
    if "Traceback" in err:
        return f"a traceback: {err[-500:]!r}"
    try:
        data = json.loads(out, parse_constant=lambda name: math.nan)
    except json.JSONDecodeError as exc:
        return f"not JSON ({exc})"
    bad = non_finite(data)
    return f"non-finite: {bad[:3]}" if bad else None
