"""Command-line values read without pydantic.

typer (0.2x) checks every command-line value with a pydantic ``TypeAdapter``, built when the
command runs; importing pydantic and building the adapters costs a start-up about as much as
numpy's import (docs/performance.md). The values of this command line are paths, short
strings, flags and counts, so `PlainValuesCommand` and `PlainValuesGroup` give each such
parameter a coercion that does what typer's own does for what a command line gives it
(``Path(text)`` then typer's own path checks; the text itself for a ``str``; a flag's bool
as it is; ASCII digits as the ``int`` they spell) and hand anything else to typer's own
coercion.

It leans on two things typer does not promise (a parameter's ``_runtime_param`` slot, which
typer fills lazily, and ``typer._param_types.coerce_cli_path``); if either is missing the
parameters are left as typer made them, which is slower and otherwise the same.
``tests/test_start_path.py`` holds the command line's answers the same either way.
"""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

import typer.core

# A whole number as a command line writes it most: ASCII digits alone (anything else, a
# sign, a space, "1e3", goes to typer's own coercion and its messages).
_DIGITS = re.compile(r"[0-9]+")


class PlainValue:
    """typer's coercion of one ``str``, ``Path``, ``bool`` or ``int`` parameter, for what
    the command line gives it."""

    def __init__(self, annotation: type, parameter_info: Any, descriptor: Any) -> None:
        self.annotation = annotation
        self.parameter_info = parameter_info
        self.descriptor = descriptor
        self._typer_own: Any = None

    def coerce(self, value: Any, param: Any, ctx: Any) -> Any:
        """What typer's ``RuntimeParam.coerce`` returns for ``value``."""
        if value is None:
            return () if param.multiple or param.nargs == -1 else None
        if self.annotation is bool and isinstance(value, bool):
            return value
        if isinstance(value, str) and not (param.multiple or param.nargs == -1):
            if self.annotation is str:
                return value
            if self.annotation is int and _DIGITS.fullmatch(value):
                return int(value)
            if self.annotation is Path:
                from typer._param_types import coerce_cli_path

                return coerce_cli_path(
                    Path(value), self.parameter_info, path_type=Path, param=param, ctx=ctx
                )
        return self._typer(value, param, ctx)

    def _typer(self, value: Any, param: Any, ctx: Any) -> Any:
        """typer's own coercion, pydantic and all, for anything else."""
        if self._typer_own is None:
            from typer._coercion import build_runtime_param

            self._typer_own = build_runtime_param(self.descriptor)
        return self._typer_own.coerce(value, param=param, ctx=ctx)


def _typer_offers_the_hooks() -> bool:
    try:
        from typer._coercion import build_runtime_param  # noqa: F401
        from typer._param_types import coerce_cli_path  # noqa: F401
    except ImportError:
        return False
    return True


def _give_plain_values(params: list[Any]) -> None:
    """Fill the coercion slot of each ``str``, ``Path``, ``bool`` and ``int`` parameter that
    typer has left empty."""
    if not _typer_offers_the_hooks():
        return
    for param in params:
        descriptor = getattr(param, "type_descriptor", None)
        if descriptor is None or getattr(param, "_runtime_param", "absent") is not None:
            continue  # not the typer this was written for: leave the parameter alone
        if descriptor.annotation in (str, Path, bool, int) and descriptor.file_annotation is None:
            param._runtime_param = PlainValue(
                descriptor.annotation, descriptor.parameter_info, descriptor
            )


class PlainValuesCommand(typer.core.TyperCommand):
    """A typer command whose parameters read the command line without pydantic."""

    def __init__(self, *args: Any, **kwargs: Any) -> None:
        super().__init__(*args, **kwargs)
        _give_plain_values(self.params)

    def get_params(self, ctx: Any) -> list[Any]:
        params: list[Any] = super().get_params(ctx)  # with the --help option typer adds
        _give_plain_values(params)
        return params


class PlainValuesGroup(typer.core.TyperGroup):
    """The group of commands, its own options (``--help``) read without pydantic."""

    def __init__(self, *args: Any, **kwargs: Any) -> None:
        super().__init__(*args, **kwargs)
        _give_plain_values(self.params)

    def get_params(self, ctx: Any) -> list[Any]:
        params: list[Any] = super().get_params(ctx)
        _give_plain_values(params)
        return params
