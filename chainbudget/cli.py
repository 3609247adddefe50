"""The ``chainbudget`` command: thin; it parses arguments, calls the budget, picks a view."""

from __future__ import annotations

import json
import sys
from pathlib import Path
from typing import Annotated, Any

import tomli_w
import typer
from rich import box
from rich.console import Console
from rich.markup import escape
from rich.table import Table
from typer.core import TyperCommand, TyperGroup

from chainbudget import __version__
from chainbudget.blocks import catalogue, default_text, generic_parts
from chainbudget.budget import compute
from chainbudget.chainfile import ChainError, load_chain, one_line
from chainbudget.fields import suggest
from chainbudget.report import noise as noise_view
from chainbudget.report.json_view import budget_json, without_nulls
from chainbudget.report.table_view import render


class _FlagsWithoutType:
    """Help that shows no "<bool>" after a flag: a flag takes no value to type."""

    def get_params(self, ctx: Any) -> list[Any]:
        params: list[Any] = super().get_params(ctx)  # type: ignore[misc]
        for param in params:
            if getattr(param, "is_flag", False) and param.metavar is None:
                param.metavar = ""
        return params


class _Command(_FlagsWithoutType, TyperCommand):
    pass


class _Group(_FlagsWithoutType, TyperGroup):
    pass


app = typer.Typer(
    cls=_Group,
    add_completion=False,
    no_args_is_help=True,
    help="Gain, headroom, noise, drive and supply budgets of small audio amplifier chains.",
)

EXIT_OK, EXIT_ERRORS, EXIT_BAD_INPUT = 0, 1, 2
STARTER = Path(__file__).parent / "templates" / "starter.toml"


def _show_version(wanted: bool) -> None:
    if wanted:
        typer.echo(f"chainbudget {__version__}")
        raise typer.Exit(EXIT_OK)


@app.callback()
def _options(
    version: Annotated[
        bool,
        typer.Option(
            "--version", help="print the version and exit", is_eager=True, callback=_show_version
        ),
    ] = False,
) -> None:
    """Gain, headroom, noise, drive and supply budgets of small audio amplifier chains."""


def _console() -> Console:
    """A console that is plain (no colour, fixed width) when not writing to a terminal."""
    tty = sys.stdout.isatty()
    return Console(no_color=not tty, width=None if tty else 160, soft_wrap=not tty, highlight=False)


def _fail(message: str) -> typer.Exit:
    typer.echo(f"chainbudget: {one_line(message)}", err=True)
    return typer.Exit(EXIT_BAD_INPUT)


def _numeric_failure(exc: BaseException) -> bool:
    """An arithmetic failure of the analysis (the loader refuses every value known to cause
    one; this is the last guard, so that even an unforeseen one is one line, not a
    traceback)."""
    linalg = getattr(sys.modules.get("numpy"), "linalg", None)
    return isinstance(exc, ArithmeticError | MemoryError | RecursionError) or (
        linalg is not None and isinstance(exc, linalg.LinAlgError)
    )


def _analysis_failed(file: Path, exc: BaseException) -> typer.Exit:
    return _fail(
        f"{file}: the analysis cannot be carried through for this chain "
        f"({type(exc).__name__}: {exc}); check its values for one far outside the circuit's "
        "range"
    )


@app.command(cls=_Command)
def check(
    file: Annotated[Path, typer.Argument(help="chain file (TOML)")],
    output_format: Annotated[
        str, typer.Option("--format", "-f", help="table, json or toml")
    ] = "table",
    strict: Annotated[bool, typer.Option(help="exit 1 on warnings too")] = False,
    noise_detail: Annotated[
        bool,
        typer.Option(
            "--noise-detail", help="also list the noise contributors at a few frequencies"
        ),
    ] = False,
) -> None:
    """Work out the budget of a chain and report it with its findings."""
    if output_format not in ("table", "json", "toml"):
        raise _fail(
            f'--format: got "{output_format}", expected table, json or toml'
            + suggest(output_format, ("table", "json", "toml"))
        )
    try:
        chain = load_chain(file)
        budget = compute(chain)
    except ChainError as exc:
        raise _fail(str(exc)) from None
    except Exception as exc:
        if _numeric_failure(exc):
            raise _analysis_failed(file, exc) from None
        raise
    found = list(budget.findings)
    if output_format == "table":
        console = _console()
        render(budget, found, console)
        if noise_detail:
            for table in noise_view.detail_tables(budget):
                console.print(table)
    else:
        data = budget_json(budget, found)
        if output_format == "json":
            typer.echo(json.dumps(data, indent=2))
        else:
            typer.echo(tomli_w.dumps(without_nulls(data)))
    errors = any(fi.severity == "error" for fi in found)
    warnings = any(fi.severity == "warning" for fi in found)
    raise typer.Exit(EXIT_ERRORS if errors or (strict and warnings) else EXIT_OK)


@app.command(cls=_Command)
def blocks(
    kind: Annotated[str | None, typer.Argument(help="a stage or supply kind, or a table")] = None,
) -> None:
    """List the kinds of stage and supply and the fields of each."""
    entries = catalogue()
    console = _console()
    if kind is None:
        table = Table(
            box=box.SIMPLE_HEAD,
            title="Kinds and tables (chainbudget blocks KIND for the fields)",
            title_justify="left",
        )
        for header in ("name", "where", "what"):
            table.add_column(header)
        for e in entries.values():
            table.add_row(escape(e.name), escape(e.table), escape(e.summary))
        console.print(table)
        return
    if kind not in entries:
        raise _fail(
            f'unknown kind "{kind}"' + suggest(kind, entries) + "; known: " + ", ".join(entries)
        )
    e = entries[kind]
    table = Table(
        box=box.SIMPLE_HEAD, title=escape(f"{e.name}  {e.table}: {e.summary}"), title_justify="left"
    )
    for header in ("field", "unit", "default", "meaning"):
        table.add_column(header)
    for fld in e.fields:
        table.add_row(
            *(escape(text) for text in (fld.key, fld.kind.unit, default_text(fld), fld.meaning))
        )
    console.print(table)
    if kind in ("opamp", "transistor"):
        columns, cells = generic_parts(kind)
        shipped = Table(
            box=box.SIMPLE_HEAD,
            title=f"Generic {kind} classes shipped (typical values of a family, not any real part)",
            title_justify="left",
        )
        for column in columns:
            shipped.add_column(escape(column))
        for row in cells:
            shipped.add_row(*(escape(cell) for cell in row))
        console.print(shipped)


@app.command(cls=_Command)
def plot(
    file: Annotated[Path, typer.Argument(help="chain file (TOML)")],
    output: Annotated[
        Path, typer.Option("--output", "-o", help="picture to write (.png, .svg, .pdf)")
    ],
    force: Annotated[bool, typer.Option(help="overwrite an existing picture")] = False,
) -> None:
    """Draw every node's headroom across the band, as set and at the worst setting."""
    if output.suffix.lower() not in (".png", ".svg", ".pdf"):
        raise _fail(f'--output: got "{output}", expected a .png, .svg or .pdf file')
    if output.exists() and not force:
        raise _fail(f"{output}: already exists; pass --force to overwrite it")
    try:
        chain = load_chain(file)
        budget = compute(chain)
    except ChainError as exc:
        raise _fail(str(exc)) from None
    except Exception as exc:
        if _numeric_failure(exc):
            raise _analysis_failed(file, exc) from None
        raise
    from chainbudget.report.plot import plot_headroom  # matplotlib only on this path

    try:
        plot_headroom(budget, output)
    except OSError as exc:
        raise _fail(f"{output}: cannot write ({exc.strerror})") from None
    typer.echo(f"wrote {output}")


@app.command(cls=_Command)
def new(
    file: Annotated[Path, typer.Argument(help="where to write the starter chain")],
    force: Annotated[bool, typer.Option(help="overwrite an existing file")] = False,
) -> None:
    """Write a commented starter chain file."""
    if file.exists() and not force:
        raise _fail(f"{file}: already exists; pass --force to overwrite it")
    try:
        file.write_text(STARTER.read_text(encoding="utf-8"), encoding="utf-8")
    except OSError as exc:
        raise _fail(f"{file}: cannot write ({exc.strerror})") from None
    typer.echo(f"wrote {file}; next: chainbudget check {file}")


def main() -> None:
    """Entry point of the console script."""
    app()
