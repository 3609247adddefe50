"""A registry of kinds that imports each kind's module only when the kind is first asked for.

A check loads the modules of the kinds its chain names, not every kind the program knows:
the mains rectifier, the regulator and the RC and divider supplies (with their rectifier
solver and spread models) stay unloaded for a chain on batteries, and so on. The names are
known without any import, in the registry's order (the order error messages list them in);
iterating over the values (the catalogue of `chainbudget blocks`) loads every kind.
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping, MutableMapping
from importlib import import_module
from typing import Generic, TypeVar

Kind = TypeVar("Kind")


class LazyKinds(MutableMapping[str, Kind], Generic[Kind]):
    """Kind name -> one instance of its class, the class imported on first use.

    ``where`` maps each kind name to ``(module, class name)``; the class's own ``kind``
    attribute must be that name (checked when it is loaded). A kind made elsewhere can be
    set (and deleted) as in a dict, as the tests of a new kind do."""

    def __init__(self, where: Mapping[str, tuple[str, str]]) -> None:
        self._where = dict(where)
        self._loaded: dict[str, Kind] = {}

    def __getitem__(self, name: str) -> Kind:
        found = self._loaded.get(name)
        if found is None:
            module, cls = self._where[name]  # KeyError for an unknown name, as a dict's
            found = getattr(import_module(module), cls)()
            if getattr(found, "kind", None) != name:
                raise RuntimeError(f"{module}.{cls} is kind {found.kind!r}, registered as {name!r}")
            self._loaded[name] = found
        return found

    def __setitem__(self, name: str, kind: Kind) -> None:
        self._loaded[name] = kind
        self._where.setdefault(name, (type(kind).__module__, type(kind).__qualname__))

    def __delitem__(self, name: str) -> None:
        del self._where[name]
        self._loaded.pop(name, None)

    def __iter__(self) -> Iterator[str]:
        return iter(self._where)

    def __len__(self) -> int:
        return len(self._where)

    def __contains__(self, name: object) -> bool:
        return name in self._where
