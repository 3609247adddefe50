"""Chain files: TOML in, a validated frozen `Chain` out, and back to TOML.

Every user-facing input error is raised here as a `ChainFileError` naming the file, the
table path of the offending value (``stage[2] "bass".feedback``), what was given and what
was expected. Nothing downstream re-validates. A `Chain` is a value: frozen, hashable,
compared by value; `Chain.replace` and `Chain.with_values` derive a changed chain through
the same validation.
"""

from __future__ import annotations

import html
import math
import os
import stat
import tomllib
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, fields, replace
from pathlib import Path
from typing import Any

from chainbudget import ChainError  # the base; importable from here as before
from chainbudget import fields as f
from chainbudget.fields import listing, quoted, suggest
from chainbudget.loops import loop_problems, sections
from chainbudget.loudspeaker import LOUDSPEAKER_FIELDS, load_problems
from chainbudget.parts import (
    GENERIC_OPAMPS,
    GENERIC_TRANSISTORS,
    OPAMP_FIELDS,
    TRANSISTOR_FIELDS,
    OpAmp,
    Transistor,
)
from chainbudget.source_network import SOURCE_REACTIVE_FIELDS
from chainbudget.stages import KINDS as STAGE_KINDS
from chainbudget.stages.base import Stage
from chainbudget.supplies import KINDS as SUPPLY_KINDS
from chainbudget.supplies.base import GROUND_SUPPLY, Supply
from chainbudget.tolerance import CLASSES as TOLERANCE_CLASSES
from chainbudget.tolerance import (
    Bound,
    Tolerances,
    read_bound,
    read_class_defaults,
    toleranced_fields,
    write_bound,
)
from chainbudget.units import UnitParseError, shown


class ChainFileError(ValueError, ChainError):
    """A chain file that cannot be used as written: one line, with file and table path."""

    def __init__(self, file: str, path: str, message: str) -> None:
        where = f"{file}: {path}: " if path else f"{file}: "
        super().__init__(one_line(where + message))
        self.file, self.path, self.message = file, path, message


def one_line(text: str) -> str:
    """A message as one printable line: every character that does not print (line breaks,
    terminal escapes, direction overrides, unassigned code points) written as its Python
    escape, never echoed raw."""
    if text.isprintable():
        return text
    return "".join(ch if ch.isprintable() else repr(ch)[1:-1] for ch in text)


class ChainPathError(ChainFileError):
    """A dotted path given to `Chain.replace` or `Chain.with_values` that names no field of
    the chain; ``path`` is the dotted path as given."""


SETTINGS_FIELDS = (
    f.Field("title", f.NAME, "what the chain is (default: the file name)", None),
    f.Field("band", f.BAND, "noise integration and worst-case search band", (20.0, 20000.0)),
    f.Field("reference", f.FREQUENCY, "frequency of the nominal figures", 1000.0),
    f.Field("ambient", f.TEMPERATURE, "ambient temperature (noise, heat)", 25.0),
    f.Field("points_per_decade", f.COUNT, "frequency grid density", 40),
)
SOURCE_FIELDS = (
    f.Field("level", f.LEVEL, "nominal programme level (sine-equivalent)"),
    f.Field("max_level", f.LEVEL, "hottest level the input must take (default: level)", None),
    f.Field("impedance", f.SOURCE_IMPEDANCE, "source output impedance (resistive)", 0.0),
    *SOURCE_REACTIVE_FIELDS,
)
LOAD_FIELDS = (
    f.Field("impedance", f.LOAD_IMPEDANCE, "nominal load (loudspeaker) impedance"),
    f.Field("sensitivity", f.DECIBELS, "SPL at 1 m for 1 W (enables SPL figures)", None),
    *LOUDSPEAKER_FIELDS,
)
TOP_TABLES = ("chain", "source", "load", "opamp", "transistor", "supply", "stage", "tolerances")
# Size limits (docs/format.md): the work and memory of a check grow with its frequencies,
# its stages and its swept pots; past these a file is refused in one line, not run out of
# memory. The worst-case search grows polynomially with the pots (budget/search.py) except
# inside a loop section, whose network is solved over every combination of its own pots.
# The default grid is 121 points in 20 Hz to 20 kHz.
MAX_BAND_POINTS = 1000
MAX_STAGES = 64
MAX_SWEPT_POTS = 32
MAX_LOOP_SWEPT_POTS = 2
# A chain file is a page or two of text; past this it is something else (a log, an image, a
# device such as /dev/zero), read no further.
MAX_FILE_BYTES = 2**20


@dataclass(frozen=True)
class Settings:
    """The ``[chain]`` table: title, band (Hz), reference (Hz), ambient (degC), grid."""

    title: str
    band: tuple[float, float]
    reference: float
    ambient: float
    points_per_decade: int


@dataclass(frozen=True)
class Source:
    """What feeds the first stage: levels as rms V (open circuit), impedance ohm; optionally
    a series capacitance (F) and inductance (H), which make it
    `chainbudget.source_network.source_impedance` at every frequency."""

    level: float
    max_level: float
    impedance: float
    capacitance: float | None = None
    inductance: float | None = None


@dataclass(frozen=True)
class Load:
    """The loudspeaker: nominal impedance ohm, sensitivity dB SPL at 1 m for 1 W (or None);
    optionally the capacitance across it (F) and its Thiele-Small parameters (ohm, H, Hz),
    which make it `chainbudget.loudspeaker.load_impedance` at every frequency."""

    impedance: float
    sensitivity: float | None
    capacitance: float | None = None
    re: float | None = None
    le: float | None = None
    fs: float | None = None
    qes: float | None = None
    qms: float | None = None


@dataclass(frozen=True)
class Chain:
    """A whole validated chain file: immutable, hashable, equal to another by value.

    ``opamps`` and ``transistors`` (the generic classes and the file's own parts, by name)
    and each stage's and supply's ``values`` are read-only mappings.
    """

    file: str
    settings: Settings
    source: Source
    load: Load
    opamps: Mapping[str, OpAmp]
    transistors: Mapping[str, Transistor]
    supplies: tuple[Supply, ...]
    stages: tuple[Stage, ...]
    #: The parts' tolerances: ``[tolerances]`` and each table's ``tolerance`` overrides.
    tolerances: Tolerances = Tolerances()

    def __post_init__(self) -> None:
        object.__setattr__(self, "opamps", f.frozen(self.opamps))
        object.__setattr__(self, "transistors", f.frozen(self.transistors))

    def supply(self, name: str) -> Supply:
        return next(s for s in self.supplies if s.name == name)

    def same_model(self, other: Chain) -> bool:
        """Equal in everything but the file name."""
        return replace(self, file="") == replace(other, file="")

    def replace(self, path: str, value: object) -> Chain:
        """A new chain with one value changed, validated as the loader validates a file.

        Parameters
        ----------
        path : str
            Where the value sits: a stage or supply name then the field (``"pre.feedback"``,
            ``"raw.reservoir"``), ``"chain.<field>"``, ``"source.<field>"``,
            ``"load.<field>"``, ``"opamp.<name>.<field>"`` or ``"transistor.<name>.<field>"``;
            ``"stage.<name>.<field>"`` and ``"supply.<name>.<field>"`` where a stage and a
            supply share a name.
        value : str, int, float, bool or list
            As it would be written in the file (``"22k"``, ``0.3``, ``true``); None takes
            the field back to its default.

        Raises
        ------
        ChainPathError
            When ``path`` names no field; the message lists the names there are.
        ChainFileError
            When the value is not one the field takes, as loading a file would report it.
        """
        return self.with_values({path: value})

    def with_values(self, changes: Mapping[str, object]) -> Chain:
        """A new chain with several values changed at once (paths as in `replace`, each
        naming the chain as it is now), validated as the loader validates a file."""
        data = chain_to_dict(self)
        for path, value in changes.items():
            _change(self, data, path, value)
        return parse_chain(data, self.file)

    def __repr__(self) -> str:
        title = _clip(self.settings.title, 44)
        where = _clip(self.file, 40, keep_end=True)
        stages = _listing([f"{s.name} {s.kind}" for s in self.stages], 110)
        supplies = _listing([f"{s.name} {s.kind}" for s in self.supplies], 36)
        return (
            f"<Chain {title!r} {where}: {_count(self.stages, 'stage')} ({stages}), "
            f"{_count(self.supplies, 'supply', 'supplies')}"
            + (f" ({supplies})>" if self.supplies else ">")
        )

    def _repr_html_(self) -> str:
        """A small HTML table of the stages and the supplies, for notebooks."""

        def row(*cells: object, header: bool = False) -> str:
            tag = "th" if header else "td"
            return "".join(
                ["<tr>", *(f"<{tag}>{html.escape(str(c))}</{tag}>" for c in cells), "</tr>"]
            )

        caption = (
            f"<b>{html.escape(self.settings.title)}</b> ({html.escape(self.file)}): "
            f"{_count(self.stages, 'stage')}, {_count(self.supplies, 'supply', 'supplies')}"
        )
        lines = ["<table>", f"<caption>{caption}</caption>"]
        lines.append(row("", "name", "kind", "values", header=True))
        lines += [
            row(f"stage {s.index}", s.name, s.kind, f.brief(s.values.items(), 80))
            for s in self.stages
        ]
        lines += [
            row(f"supply {s.index}", s.name, s.kind, f.brief(s.values.items(), 80))
            for s in self.supplies
        ]
        lines.append("</table>")
        return "\n".join(lines)


def _clip(text: str, limit: int, keep_end: bool = False) -> str:
    """``text`` cut to ``limit`` characters with an ellipsis where it was cut."""
    if len(text) <= limit:
        return text
    return "..." + text[-(limit - 3) :] if keep_end else text[: limit - 3] + "..."


def _listing(items: list[str], limit: int) -> str:
    """Comma-separated items, cut after about ``limit`` characters with a count left."""
    text = ""
    for count, item in enumerate(items):
        item = _clip(item, limit // 2)
        if text and len(text) + len(item) > limit:
            return f"{text}, +{len(items) - count} more"
        text = f"{text}, {item}" if text else item
    return text


def _count(items: tuple[object, ...], one: str, many: str = "") -> str:
    return f"{len(items)} {one if len(items) == 1 else many or one + 's'}"


class _Reader:
    """Reads the tables of one file, raising errors that name the file."""

    def __init__(self, file: str) -> None:
        self.file = file

    def error(self, path: str, message: str) -> ChainFileError:
        return ChainFileError(self.file, path, message)

    def table(self, data: object, path: str) -> dict[str, Any]:
        if not isinstance(data, dict):
            raise self.error(path, f"got {shown(data)}, expected a table")
        return data

    def read(
        self,
        data: Mapping[str, Any],
        schema: Iterable[f.Field],
        path: str,
        skip: Iterable[str] = (),
        after: Iterable[str] = (),
    ) -> dict[str, Any]:
        """Read ``data`` against ``schema``: unknown keys, missing keys, bad values.
        ``skip`` and ``after`` are keys read elsewhere (listed before and after the
        schema's in an unknown field's message)."""
        schema = tuple(schema)
        known = [*skip, *(field.key for field in schema), *after]
        for key in data:
            if key not in known:
                raise self.error(
                    f"{path}.{quoted(key)[1:-1]}",
                    "unknown field" + suggest(key, known) + "; its fields: " + listing(known),
                )
        values: dict[str, Any] = {}
        for field in schema:
            if field.key not in data:
                if field.required:
                    raise self.error(
                        f"{path}.{field.key}",
                        f"missing required field ({field.meaning}, {field.kind.unit})",
                    )
                values[field.key] = field.default
                continue
            try:
                values[field.key] = field.kind.read(data[field.key])
            except UnitParseError as exc:
                raise self.error(f"{path}.{field.key}", str(exc)) from None
        return values

    def named_list(self, data: Mapping[str, Any], key: str) -> list[dict[str, Any]]:
        items = data.get(key, [])
        if not isinstance(items, list):
            raise self.error(key, f"got {shown(items)}, expected an array of tables [[{key}]]")
        return [self.table(item, f"{key}[{i}]") for i, item in enumerate(items, start=1)]

    def name_and_kind(
        self, item: Mapping[str, Any], path: str, kinds: Iterable[str]
    ) -> tuple[str, str]:
        if "name" not in item:
            raise self.error(f"{path}.name", "missing required field (a name in quotes)")
        try:
            name = f.NAME.read(item["name"])
        except UnitParseError as exc:
            raise self.error(f"{path}.name", str(exc)) from None
        kind = item.get("kind")
        labelled = f"{path} {quoted(name)}"
        if "kind" not in item:
            raise self.error(
                f"{labelled}.kind", "missing required field, one of " + ", ".join(kinds)
            )
        if not isinstance(kind, str):
            raise self.error(
                f"{labelled}.kind", f"got {shown(kind)}, expected one of " + ", ".join(kinds)
            )
        if kind not in kinds:
            raise self.error(
                f"{labelled}.kind",
                f"unknown kind {quoted(kind)}"
                + suggest(kind, kinds)
                + "; known: "
                + ", ".join(kinds),
            )
        return name, kind


def _missing(schema: Iterable[f.Field], key: str, tail: str = "") -> str:
    """The message for a conditionally required field: what it is and its unit."""
    field = next(field for field in schema if field.key == key)
    return f"missing required field{tail} ({field.meaning}, {field.kind.unit})"


def _parts(
    reader: _Reader,
    data: Mapping[str, Any],
    table: str,
    schema: tuple[f.Field, ...],
    cls: type[OpAmp] | type[Transistor],
    generic: Mapping[str, Any],
) -> dict[str, Any]:
    found = dict(generic)
    for name, body in reader.table(data.get(table, {}), table).items():
        path = f"{table}.{quoted(name)[1:-1]}"
        try:
            f.NAME.read(name)
        except UnitParseError as exc:
            raise reader.error(path, "a part's name: " + str(exc)) from None
        found[name] = cls(name=name, **reader.read(reader.table(body, path), schema, path))
    return found


def _settings(reader: _Reader, data: Mapping[str, Any], default_title: str) -> Settings:
    body = reader.table(data.get("chain", {}), "chain")
    values = reader.read(body, SETTINGS_FIELDS, "chain")
    lo, hi = values["band"]
    points = values["points_per_decade"] * math.log10(hi / lo)
    if points > MAX_BAND_POINTS:
        raise reader.error(
            "chain.points_per_decade",
            f"got {values['points_per_decade']} points per decade over {math.log10(hi / lo):.3g} "
            f"decades ({points:.0f} points), expected at most {MAX_BAND_POINTS} points in the "
            "band: fewer points per decade or a narrower band",
        )
    if not lo <= values["reference"] <= hi:
        raise reader.error(
            "chain.reference",
            f"got {values['reference']:g} Hz, expected a frequency within the band "
            f"({lo:g} to {hi:g} Hz)",
        )
    return Settings(**{**values, "title": values["title"] or default_title})


def _entry_tolerances(
    reader: _Reader,
    item: Mapping[str, Any],
    schema: Iterable[f.Field],
    path: str,
    owner: tuple[str, str],
) -> list[tuple[tuple[str, str], str, Bound]]:
    """A stage's or supply's ``tolerance = { field = "1 %" }``: each key a field of its kind
    that takes a tolerance (chainbudget/tolerance.py), each value a bound of its class."""
    if "tolerance" not in item:
        return []
    table = reader.table(item["tolerance"], f"{path}.tolerance")
    takes = toleranced_fields(schema)
    found: list[tuple[tuple[str, str], str, Bound]] = []
    for key, value in table.items():
        where = f"{path}.tolerance.{quoted(key)[1:-1]}"
        if key not in takes:
            raise reader.error(
                where,
                "no field of this kind that takes a tolerance"
                + suggest(key, takes)
                + ("; those that do: " + listing(takes) if takes else "; it has none"),
            )
        try:
            found.append((owner, key, read_bound(value, takes[key])))
        except UnitParseError as exc:
            raise reader.error(where, str(exc)) from None
    return found


def _tolerances(
    reader: _Reader,
    data: Mapping[str, Any],
    overrides: list[tuple[tuple[str, str], str, Bound]],
) -> Tolerances:
    """The ``[tolerances]`` table's class defaults with the tables' own overrides."""
    body = reader.table(data.get("tolerances", {}), "tolerances")
    try:
        fractions, beta = read_class_defaults(body)
    except KeyError as exc:
        key = str(exc.args[0])
        raise reader.error(
            f"tolerances.{quoted(key)[1:-1]}",
            "unknown part class"
            + suggest(key, TOLERANCE_CLASSES)
            + "; the classes: "
            + ", ".join(TOLERANCE_CLASSES),
        ) from None
    except UnitParseError as exc:
        key = next(k for k, v in body.items() if v is exc.given)
        raise reader.error(f"tolerances.{quoted(key)[1:-1]}", str(exc)) from None
    return Tolerances(fractions, beta, tuple(overrides))


def _supplies(
    reader: _Reader,
    data: Mapping[str, Any],
    overrides: list[tuple[tuple[str, str], str, Bound]],
) -> tuple[Supply, ...]:
    found: list[Supply] = []
    for index, item in enumerate(reader.named_list(data, "supply"), start=1):
        name, kind = reader.name_and_kind(item, f"supply[{index}]", SUPPLY_KINDS)
        path = f"supply[{index}] {quoted(name)}"
        spec = SUPPLY_KINDS[kind]
        schema = spec.fields
        if spec.needs_parent:
            schema = (f.Field("from", f.NAME, "the supply this one is fed from"), *schema)
        values = reader.read(item, schema, path, skip=("name", "kind"), after=("tolerance",))
        overrides.extend(_entry_tolerances(reader, item, schema, path, ("supply", name)))
        for key in spec.missing(values):
            raise reader.error(f"{path}.{key}", _missing(schema, key))
        for key, message in spec.problems(values):
            raise reader.error(f"{path}.{key}", message)
        supply = Supply(index, name, kind, values)
        defined = [rail for s in found for rail in SUPPLY_KINDS[s.kind].rails(s)]
        for rail in spec.rails(supply):
            if rail == GROUND_SUPPLY or rail in defined:
                raise reader.error(f"{path}.name", f"{quoted(rail)} is already defined")
        found.append(supply)
    # a split supply defines more than one rail; each names its supply
    owner = {rail: s for s in found for rail in SUPPLY_KINDS[s.kind].rails(s)}
    names = list(owner)
    for supply in found:
        parent = supply.parent
        if parent is not None and parent not in names:
            raise reader.error(
                f"{_path(supply)}.from",
                f"no supply named {quoted(parent)}"
                + suggest(parent, names)
                + "; the supplies are: "
                + listing(names),
            )
    for supply in found:  # a cycle would make the power tree unsolvable
        chain, here = [supply.name], supply.parent
        while here is not None:
            if owner[here].name in chain:
                loop = chain[chain.index(owner[here].name) :] + [owner[here].name]
                raise reader.error(
                    f"{_path(supply)}.from",
                    "the supplies feed each other in a loop ("
                    + " <- ".join(quoted(name, 30) for name in loop)
                    + "); a supply tree must end at a source",
                )
            chain.append(owner[here].name)
            here = owner[here].parent
    return tuple(found)


def _path(entry: Stage | Supply) -> str:
    """An entry's table path as messages show it (its name quoted safely)."""
    return f"{entry.table}[{entry.index}] {quoted(entry.name)}"


def _stages(
    reader: _Reader,
    data: Mapping[str, Any],
    supplies: tuple[Supply, ...],
    opamps: Mapping[str, OpAmp],
    transistors: Mapping[str, Transistor],
    overrides: list[tuple[tuple[str, str], str, Bound]],
) -> tuple[Stage, ...]:
    found: list[Stage] = []
    rail_names = [rail for s in supplies for rail in SUPPLY_KINDS[s.kind].rails(s)]
    items = reader.named_list(data, "stage")
    if not items:
        raise reader.error("stage", "a chain needs at least one [[stage]]")
    if len(items) > MAX_STAGES:
        raise reader.error(
            f"stage[{MAX_STAGES + 1}]", f"got {len(items)} stages, expected at most {MAX_STAGES}"
        )
    for index, item in enumerate(items, start=1):
        name, kind = reader.name_and_kind(item, f"stage[{index}]", STAGE_KINDS)
        path = f"stage[{index}] {quoted(name)}"
        spec = STAGE_KINDS[kind]
        values = reader.read(item, spec.fields, path, skip=("name", "kind"), after=("tolerance",))
        overrides.extend(_entry_tolerances(reader, item, spec.fields, path, ("stage", name)))
        for key in spec.missing(values):
            raise reader.error(f"{path}.{key}", _missing(spec.fields, key, " for this topology"))
        if any(s.name == name for s in found):
            raise reader.error(f"{path}.name", f"{quoted(name)} names an earlier stage too")
        if "opamp" in values and values["opamp"] not in opamps:
            raise reader.error(
                f"{path}.opamp",
                f"no op-amp named {quoted(values['opamp'])}"
                + suggest(values["opamp"], opamps)
                + "; the op-amps are: "
                + listing(opamps),
            )
        for key, message in spec.part_problems(values, transistors):
            raise reader.error(f"{path}.{key}", message)
        if "positive" in values:
            if values["positive"] is None and spec.needs_rail(values):
                if len(supplies) != 1:
                    why = "more than one supply; name the rail" if supplies else "no [[supply]]"
                    raise reader.error(
                        f"{path}.positive", f"missing required field (the chain has {why})"
                    )
                values["positive"] = supplies[0].name
            for rail in ("positive", "negative"):
                wanted = values[rail]
                if wanted is not None and wanted != GROUND_SUPPLY and wanted not in rail_names:
                    raise reader.error(
                        f"{path}.{rail}",
                        f"no supply named {quoted(wanted)}"
                        + suggest(wanted, [*rail_names, GROUND_SUPPLY])
                        + "; the supplies are: "
                        + listing([*rail_names, GROUND_SUPPLY]),
                    )
        stage = Stage(index, name, kind, values)
        bias = spec.bias_supply(stage)
        if bias is not None and bias not in rail_names:
            raise reader.error(
                f"{path}.bias",
                f'got "{bias}", expected a voltage or the name of a supply'
                + suggest(bias, rail_names),
            )
        found.append(stage)
    return tuple(found)


def _swept_pots(reader: _Reader, stages: tuple[Stage, ...]) -> None:
    """Refuse more swept pots than the worst-case search holds: MAX_SWEPT_POTS in the
    chain, MAX_LOOP_SWEPT_POTS inside one loop section (`chainbudget.loops.sections`; the
    loader has checked the loops)."""
    swept = [
        (k, stage, control.key)
        for k, stage in enumerate(stages)
        for control in STAGE_KINDS[stage.kind].controls(stage)
        if control.sweep
    ]
    if len(swept) > MAX_SWEPT_POTS:
        _k, stage, key = swept[MAX_SWEPT_POTS]
        raise reader.error(
            f"{_path(stage)}.sweep",
            f"{len(swept)} pots are swept in the worst-case search, expected at most "
            f"{MAX_SWEPT_POTS}: set sweep = false on the stages whose pots are set once "
            f"(this is the {MAX_SWEPT_POTS + 1}th, {key})",
        )
    for section in sections(stages):
        inside = [(stage, key) for k, stage, key in swept if k in section]
        if len(inside) > MAX_LOOP_SWEPT_POTS:
            stage, key = inside[MAX_LOOP_SWEPT_POTS]
            head = stages[section.first].name
            raise reader.error(
                f"{_path(stage)}.sweep",
                f"{len(inside)} pots are swept inside the feedback_from loop of "
                f"{quoted(head)}, expected at most {MAX_LOOP_SWEPT_POTS} (a loop is searched "
                f"as one network over every combination of its pots): set sweep = false on "
                f"the others (this is the {MAX_LOOP_SWEPT_POTS + 1}th, {key})",
            )


def parse_chain(data: Mapping[str, Any], file: str) -> Chain:
    """Validate a decoded chain file into a `Chain`.

    Raises
    ------
    ChainFileError
        For the first problem found, with its table path.
    """
    reader = _Reader(file)
    for key in data:
        if key not in TOP_TABLES:
            raise reader.error(
                quoted(key)[1:-1],
                "unknown table"
                + suggest(key, TOP_TABLES)
                + "; the tables: "
                + ", ".join(TOP_TABLES),
            )
    settings = _settings(reader, data, Path(file).stem)
    if "source" not in data:
        raise reader.error("source", "missing required table [source]")
    source_values = reader.read(reader.table(data["source"], "source"), SOURCE_FIELDS, "source")
    if source_values["max_level"] is None:
        source_values["max_level"] = source_values["level"]
    if source_values["max_level"] < source_values["level"]:
        raise reader.error(
            "source.max_level",
            f"got {source_values['max_level']:.4g} Vrms, expected at least the nominal level "
            f"({source_values['level']:.4g} Vrms)",
        )
    if "load" not in data:
        raise reader.error("load", "missing required table [load]")
    load_values = reader.read(reader.table(data["load"], "load"), LOAD_FIELDS, "load")
    for key, message in load_problems(load_values):
        raise reader.error(f"load.{key}", message)
    opamps = _parts(reader, data, "opamp", OPAMP_FIELDS, OpAmp, GENERIC_OPAMPS)
    transistors = _parts(
        reader, data, "transistor", TRANSISTOR_FIELDS, Transistor, GENERIC_TRANSISTORS
    )
    overrides: list[tuple[tuple[str, str], str, Bound]] = []
    supplies = _supplies(reader, data, overrides)
    stages = _stages(reader, data, supplies, opamps, transistors, overrides)
    for index, key, message in loop_problems(stages):
        raise reader.error(f"{stages[index].path}.{key}", message)
    _swept_pots(reader, stages)
    return Chain(
        file=file,
        settings=settings,
        source=Source(**source_values),
        load=Load(**load_values),
        opamps=opamps,
        transistors=transistors,
        supplies=supplies,
        stages=stages,
        tolerances=_tolerances(reader, data, overrides),
    )


def loads_chain(text: str, name: str = "<text>") -> Chain:
    """Validate a chain given as TOML text; error messages name ``name`` as the file.

    Raises
    ------
    ChainFileError
        When the text is not TOML or does not describe a valid chain.
    """
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ChainFileError(name, "", f"not valid TOML: {exc}") from None
    except RecursionError:
        raise ChainFileError(name, "", "not a chain file: its tables nest too deeply") from None
    return parse_chain(data, name)


def _read_head(path: str | Path) -> bytes:
    """At most MAX_FILE_BYTES + 1 bytes of a file; a named pipe with no writer reads as
    empty instead of waiting for one forever."""
    flags = os.O_RDONLY
    if stat.S_ISFIFO(os.stat(path).st_mode):
        flags |= os.O_NONBLOCK
    descriptor = os.open(path, flags)
    os.set_blocking(descriptor, True)
    with open(descriptor, "rb") as stream:
        return stream.read(MAX_FILE_BYTES + 1)


def load_chain(path: str | Path) -> Chain:
    """Read and validate a chain file.

    Raises
    ------
    ChainFileError
        When the file is missing, is not TOML, or does not describe a valid chain.
    """
    file = str(path)
    try:
        raw = _read_head(path)
    except OSError as exc:
        raise ChainFileError(file, "", f"cannot read the file ({exc.strerror})") from None
    if len(raw) > MAX_FILE_BYTES:
        raise ChainFileError(
            file, "", f"over {MAX_FILE_BYTES // 2**20} MiB: too large to be a chain file"
        )
    if b"\x00" in raw:
        raise ChainFileError(file, "", "a binary file, not a chain file (TOML text)")
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise ChainFileError(file, "", "not a UTF-8 text file") from None
    return loads_chain(text, file)


# --- writing back ---------------------------------------------------------------------------


def _written(values: Mapping[str, Any], schema: Iterable[f.Field]) -> dict[str, Any]:
    # None (an unset option) and "" (an empty description) are left out: reading the
    # table back fills in the same default, whereas an empty name would not read at all.
    return {
        field.key: field.kind.write(values[field.key])
        for field in schema
        if values.get(field.key) is not None and values.get(field.key) != ""
    }


def _part_tables(
    parts: Mapping[str, OpAmp | Transistor],
    generic: Mapping[str, Any],
    schema: tuple[f.Field, ...],
) -> dict[str, Any]:
    return {
        name: _written({k.name: getattr(part, k.name) for k in fields(part)}, schema)
        for name, part in parts.items()
        if generic.get(name) != part
    }


def chain_to_dict(chain: Chain) -> dict[str, Any]:
    """The chain as plain TOML data (for tomli-w) that `parse_chain` reads back equal."""
    s = chain.settings
    data: dict[str, Any] = {
        "chain": {
            "title": s.title,
            "band": f.BAND.write(s.band),
            "reference": f.FREQUENCY.write(s.reference),
            "ambient": f.TEMPERATURE.write(s.ambient),
            "points_per_decade": s.points_per_decade,
        },
        "source": _written(vars(chain.source), SOURCE_FIELDS),
        "load": _written(vars(chain.load), LOAD_FIELDS),
    }
    opamps = _part_tables(chain.opamps, GENERIC_OPAMPS, OPAMP_FIELDS)
    transistors = _part_tables(chain.transistors, GENERIC_TRANSISTORS, TRANSISTOR_FIELDS)
    if opamps:
        data["opamp"] = opamps
    if transistors:
        data["transistor"] = transistors
    if chain.supplies:
        data["supply"] = [
            {
                "name": sp.name,
                "kind": sp.kind,
                **({"from": sp.parent} if sp.parent is not None else {}),
                **_written(sp.values, SUPPLY_KINDS[sp.kind].fields),
                **_written_tolerances(chain.tolerances, ("supply", sp.name)),
            }
            for sp in chain.supplies
        ]
    data["stage"] = [
        {
            "name": st.name,
            "kind": st.kind,
            **_written(st.values, STAGE_KINDS[st.kind].fields),
            **_written_tolerances(chain.tolerances, ("stage", st.name)),
        }
        for st in chain.stages
    ]
    if not chain.tolerances.is_default():
        tol = chain.tolerances
        data["tolerances"] = {
            **{k: write_bound(v) for k, v in tol.fractions.items()},
            "beta": write_bound(tol.beta),
        }
    return data


def _written_tolerances(tolerances: Tolerances, owner: tuple[str, str]) -> dict[str, Any]:
    """A table's own ``tolerance`` overrides as the file holds them (none: no key)."""
    own = {key: write_bound(bound) for who, key, bound in tolerances.overrides if who == owner}
    return {"tolerance": own} if own else {}


# --- deriving a changed chain ---------------------------------------------------------------

_TOP_SCHEMAS = {"chain": SETTINGS_FIELDS, "source": SOURCE_FIELDS, "load": LOAD_FIELDS}
_PATH_FORMS = (
    "a stage or supply name, chain, source, load, opamp.NAME or transistor.NAME, "
    'then a field, such as "pre.feedback"'
)


def _entry_keys(entry: Stage | Supply) -> tuple[str, ...]:
    """The keys of a stage's or supply's table, as the loader reads them."""
    if isinstance(entry, Stage):
        schema = STAGE_KINDS[entry.kind].fields
        parent: tuple[str, ...] = ()
    else:
        spec = SUPPLY_KINDS[entry.kind]
        schema, parent = spec.fields, ("from",) if spec.needs_parent else ()
    return ("name", "kind", *parent, *(field.key for field in schema))


def _tables(chain: Chain, owner: str) -> set[tuple[str, str]]:
    """Every table ``owner`` (the dotted path without its field) can name:
    ``(table, name)`` pairs, name empty for the top-level tables."""
    found: set[tuple[str, str]] = set()
    if owner in _TOP_SCHEMAS:
        found.add((owner, ""))
    for table, names in (
        ("opamp", chain.opamps),
        ("transistor", chain.transistors),
        ("stage", [s.name for s in chain.stages]),
        ("supply", [s.name for s in chain.supplies]),
    ):
        prefix = f"{table}."
        if owner.startswith(prefix) and owner[len(prefix) :] in names:
            found.add((table, owner[len(prefix) :]))
    found |= {("stage", s.name) for s in chain.stages if s.name == owner}
    found |= {("supply", s.name) for s in chain.supplies if s.name == owner}
    return found


def _unknown_owner(chain: Chain, path: str, owner: str) -> ChainPathError:
    stages = [s.name for s in chain.stages]
    supplies = [s.name for s in chain.supplies]
    table, _, name = owner.partition(".")
    if table in ("opamp", "transistor") and name:
        parts = chain.opamps if table == "opamp" else chain.transistors
        what = "op-amp" if table == "opamp" else "transistor"
        return ChainPathError(
            chain.file,
            path,
            f'no {what} named "{name}"' + suggest(name, parts) + "; there are: " + ", ".join(parts),
        )
    return ChainPathError(
        chain.file,
        path,
        f'no stage, supply or table named "{owner}"'
        + suggest(owner, [*stages, *supplies, *_TOP_SCHEMAS])
        + f"; stages: {', '.join(stages)}; supplies: {', '.join(supplies) or 'none'}; "
        "tables: chain, source, load, opamp.NAME, transistor.NAME",
    )


def _change(chain: Chain, data: dict[str, Any], path: str, value: object) -> None:
    """Write ``value`` into ``data`` (the chain as `chain_to_dict` gives it) at ``path``;
    None removes the key, so that the loader fills in its default."""
    owner, _, key = path.rpartition(".") if isinstance(path, str) else ("", "", "")
    if not owner or not key:
        raise ChainPathError(chain.file, str(path), f"expected {_PATH_FORMS}")
    targets = _tables(chain, owner)
    if not targets:
        raise _unknown_owner(chain, path, owner)
    if len(targets) > 1:
        forms = " or ".join(sorted(f'"{table}.{name}.{key}"' for table, name in targets))
        raise ChainPathError(
            chain.file, path, f'"{owner}" names more than one table; write {forms}'
        )
    ((table, name),) = targets
    body: dict[str, Any]
    if table in _TOP_SCHEMAS:
        where, keys = f"[{table}]", tuple(field.key for field in _TOP_SCHEMAS[table])
        body = data.setdefault(table, {})
    elif table in ("opamp", "transistor"):
        part = (chain.opamps if table == "opamp" else chain.transistors)[name]
        schema = OPAMP_FIELDS if table == "opamp" else TRANSISTOR_FIELDS
        where, keys = f"[{table}.{name}]", tuple(field.key for field in schema)
        # A shipped class unchanged by the file is not written back; write it out whole
        # so that the changed table still holds every required field.
        parts = data.setdefault(table, {})
        body = parts.setdefault(
            name, _written({k.name: getattr(part, k.name) for k in fields(part)}, schema)
        )
    else:
        entries: tuple[Stage | Supply, ...] = chain.stages if table == "stage" else chain.supplies
        entry = next(e for e in entries if e.name == name)
        where, keys = f"{entry.path} ({entry.kind})", _entry_keys(entry)
        body = data[table][entry.index - 1]
    if key not in keys:
        raise ChainPathError(
            chain.file,
            path,
            f'{where} has no field "{key}"'
            + suggest(key, keys)
            + "; its fields: "
            + ", ".join(keys),
        )
    if value is None:
        body.pop(key, None)
    else:
        body[key] = value
