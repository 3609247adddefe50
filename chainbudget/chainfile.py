"""Chain files: TOML in, a validated frozen `Chain` out, and back to TOML.

Every user-facing input error is raised here as a `ChainFileError` naming the file, the
table path of the offending value (``stage[2] "bass".feedback``), what was given and what
was expected. Nothing downstream re-validates.
"""

from __future__ import annotations

import tomllib
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, fields, replace
from pathlib import Path
from typing import Any

from chainbudget import fields as f
from chainbudget.fields import suggest
from chainbudget.parts import (
    GENERIC_OPAMPS,
    GENERIC_TRANSISTORS,
    OPAMP_FIELDS,
    TRANSISTOR_FIELDS,
    OpAmp,
    Transistor,
)
from chainbudget.stages import KINDS as STAGE_KINDS
from chainbudget.stages.base import Stage
from chainbudget.supplies import KINDS as SUPPLY_KINDS
from chainbudget.supplies.base import GROUND_SUPPLY, Supply
from chainbudget.units import UnitParseError


class ChainError(Exception):
    """Base of every error chainbudget reports to the user."""


class ChainFileError(ValueError, ChainError):
    """A chain file that cannot be used as written: one line, with file and table path."""

    def __init__(self, file: str, path: str, message: str) -> None:
        where = f"{file}: {path}: " if path else f"{file}: "
        super().__init__(where + message)
        self.file, self.path, self.message = file, path, message


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
    f.Field("impedance", f.RESISTANCE_OR_ZERO, "source output impedance (resistive)", 0.0),
)
LOAD_FIELDS = (
    f.Field("impedance", f.RESISTANCE, "nominal load (loudspeaker) impedance"),
    f.Field("sensitivity", f.DECIBELS, "SPL at 1 m for 1 W (enables SPL figures)", None),
)
TOP_TABLES = ("chain", "source", "load", "opamp", "transistor", "supply", "stage")


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
    """What feeds the first stage: levels as rms V, impedance ohm."""

    level: float
    max_level: float
    impedance: float


@dataclass(frozen=True)
class Load:
    """The loudspeaker: impedance ohm, sensitivity dB SPL at 1 m for 1 W (or None)."""

    impedance: float
    sensitivity: float | None


@dataclass(frozen=True)
class Chain:
    """A whole validated chain file."""

    file: str
    settings: Settings
    source: Source
    load: Load
    opamps: Mapping[str, OpAmp]
    transistors: Mapping[str, Transistor]
    supplies: tuple[Supply, ...]
    stages: tuple[Stage, ...]

    def supply(self, name: str) -> Supply:
        return next(s for s in self.supplies if s.name == name)

    def same_model(self, other: Chain) -> bool:
        """Equal in everything but the file name."""
        return replace(self, file="") == replace(other, file="")


class _Reader:
    """Reads the tables of one file, raising errors that name the file."""

    def __init__(self, file: str) -> None:
        self.file = file

    def error(self, path: str, message: str) -> ChainFileError:
        return ChainFileError(self.file, path, message)

    def table(self, data: object, path: str) -> dict[str, Any]:
        if not isinstance(data, dict):
            raise self.error(path, f"got {data!r}, expected a table")
        return data

    def read(
        self,
        data: Mapping[str, Any],
        schema: Iterable[f.Field],
        path: str,
        skip: Iterable[str] = (),
    ) -> dict[str, Any]:
        """Read ``data`` against ``schema``: unknown keys, missing keys, bad values."""
        schema = tuple(schema)
        known = {field.key for field in schema} | set(skip)
        for key in data:
            if key not in known:
                raise self.error(f"{path}.{key}", "unknown field" + suggest(key, known))
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
            raise self.error(key, f"expected an array of tables [[{key}]]")
        return [self.table(item, f"{key}[{i}]") for i, item in enumerate(items, start=1)]

    def name_and_kind(
        self, item: Mapping[str, Any], path: str, kinds: Iterable[str]
    ) -> tuple[str, str]:
        name = item.get("name")
        if not isinstance(name, str) or not name.strip():
            raise self.error(f"{path}.name", f"got {name!r}, expected a name in quotes")
        kind = item.get("kind")
        labelled = f'{path} "{name}"'
        if not isinstance(kind, str):
            raise self.error(
                f"{labelled}.kind", "missing required field, one of " + ", ".join(kinds)
            )
        if kind not in kinds:
            raise self.error(
                f"{labelled}.kind",
                f'unknown kind "{kind}"' + suggest(kind, kinds) + "; known: " + ", ".join(kinds),
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
        path = f"{table}.{name}"
        found[name] = cls(name=name, **reader.read(reader.table(body, path), schema, path))
    return found


def _settings(reader: _Reader, data: Mapping[str, Any], default_title: str) -> Settings:
    body = reader.table(data.get("chain", {}), "chain")
    values = reader.read(body, SETTINGS_FIELDS, "chain")
    lo, hi = values["band"]
    if not lo <= values["reference"] <= hi:
        raise reader.error(
            "chain.reference",
            f"got {values['reference']:g} Hz, expected a frequency within the band "
            f"({lo:g} to {hi:g} Hz)",
        )
    return Settings(**{**values, "title": values["title"] or default_title})


def _supplies(reader: _Reader, data: Mapping[str, Any]) -> tuple[Supply, ...]:
    found: list[Supply] = []
    for index, item in enumerate(reader.named_list(data, "supply"), start=1):
        name, kind = reader.name_and_kind(item, f"supply[{index}]", SUPPLY_KINDS)
        path = f'supply[{index}] "{name}"'
        spec = SUPPLY_KINDS[kind]
        schema = spec.fields
        if spec.needs_parent:
            schema = (f.Field("from", f.NAME, "the supply this one is fed from"), *schema)
        values = reader.read(item, schema, path, skip=("name", "kind"))
        for key in spec.missing(values):
            raise reader.error(f"{path}.{key}", _missing(schema, key))
        for key, message in spec.problems(values):
            raise reader.error(f"{path}.{key}", message)
        supply = Supply(index, name, kind, values)
        defined = [rail for s in found for rail in SUPPLY_KINDS[s.kind].rails(s)]
        for rail in spec.rails(supply):
            if rail == GROUND_SUPPLY or rail in defined:
                raise reader.error(f"{path}.name", f'"{rail}" is already defined')
        found.append(supply)
    # a split supply defines more than one rail; each names its supply
    owner = {rail: s for s in found for rail in SUPPLY_KINDS[s.kind].rails(s)}
    names = list(owner)
    for supply in found:
        parent = supply.parent
        if parent is not None and parent not in names:
            raise reader.error(
                f"{supply.path}.from", f'no supply named "{parent}"' + suggest(parent, names)
            )
    for supply in found:  # a cycle would make the power tree unsolvable
        seen, here = {supply.name}, supply.parent
        while here is not None:
            if owner[here].name in seen:
                raise reader.error(
                    f"{supply.path}.from",
                    "the supplies feed each other in a loop; a supply tree must end at a source",
                )
            seen.add(owner[here].name)
            here = owner[here].parent
    return tuple(found)


def _stages(
    reader: _Reader,
    data: Mapping[str, Any],
    supplies: tuple[Supply, ...],
    opamps: Mapping[str, OpAmp],
    transistors: Mapping[str, Transistor],
) -> tuple[Stage, ...]:
    found: list[Stage] = []
    rail_names = [rail for s in supplies for rail in SUPPLY_KINDS[s.kind].rails(s)]
    items = reader.named_list(data, "stage")
    if not items:
        raise reader.error("stage", "a chain needs at least one [[stage]]")
    for index, item in enumerate(items, start=1):
        name, kind = reader.name_and_kind(item, f"stage[{index}]", STAGE_KINDS)
        path = f'stage[{index}] "{name}"'
        spec = STAGE_KINDS[kind]
        values = reader.read(item, spec.fields, path, skip=("name", "kind"))
        for key in spec.missing(values):
            raise reader.error(f"{path}.{key}", _missing(spec.fields, key, " for this topology"))
        if any(s.name == name for s in found):
            raise reader.error(f"{path}.name", f'"{name}" names an earlier stage too')
        if "opamp" in values and values["opamp"] not in opamps:
            raise reader.error(
                f"{path}.opamp",
                f'no op-amp named "{values["opamp"]}"' + suggest(values["opamp"], opamps),
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
                        f'no supply named "{wanted}"'
                        + suggest(wanted, [*rail_names, GROUND_SUPPLY]),
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
            raise reader.error(key, "unknown table" + suggest(key, TOP_TABLES))
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
    opamps = _parts(reader, data, "opamp", OPAMP_FIELDS, OpAmp, GENERIC_OPAMPS)
    transistors = _parts(
        reader, data, "transistor", TRANSISTOR_FIELDS, Transistor, GENERIC_TRANSISTORS
    )
    supplies = _supplies(reader, data)
    stages = _stages(reader, data, supplies, opamps, transistors)
    return Chain(
        file=file,
        settings=settings,
        source=Source(**source_values),
        load=Load(**load_values),
        opamps=opamps,
        transistors=transistors,
        supplies=supplies,
        stages=stages,
    )


def load_chain(path: str | Path) -> Chain:
    """Read and validate a chain file.

    Raises
    ------
    ChainFileError
        When the file is missing, is not TOML, or does not describe a valid chain.
    """
    file = str(path)
    try:
        text = Path(path).read_text(encoding="utf-8")
    except OSError as exc:
        raise ChainFileError(file, "", f"cannot read the file ({exc.strerror})") from None
    except UnicodeDecodeError:
        raise ChainFileError(file, "", "not a UTF-8 text file") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ChainFileError(file, "", f"not valid TOML: {exc}") from None
    return parse_chain(data, file)


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
            }
            for sp in chain.supplies
        ]
    data["stage"] = [
        {"name": st.name, "kind": st.kind, **_written(st.values, STAGE_KINDS[st.kind].fields)}
        for st in chain.stages
    ]
    return data
