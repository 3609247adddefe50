"""The ``chainbudget`` command: thin; it parses arguments, calls the budget, picks a view.

Each command imports what it uses when it runs: ``--help`` and ``blocks`` start without
the analysis, the findings, the views and pint, and ``check`` without matplotlib
(docs/performance.md; tests/test_start_path.py).
"""

from __future__ import annotations

import gc
import json
import sys
from pathlib import Path
from typing import TYPE_CHECKING, Annotated, Any

import typer

from chainbudget import __version__
from chainbudget.chainfile import ChainError, load_chain, one_line
from chainbudget.cli_coercion import PlainValuesCommand, PlainValuesGroup
from chainbudget.fields import suggest

if TYPE_CHECKING:
    from rich.console import Console

    from chainbudget.budget import Budget


class _FlagsWithoutType:
    """Help that shows no "<bool>" after a flag: a flag takes no value to type."""

    def get_params(self, ctx: Any) -> list[Any]:
        params: list[Any] = super().get_params(ctx)  # type: ignore[misc]
        for param in params:
            if getattr(param, "is_flag", False) and param.metavar is None:
                param.metavar = ""
        return params


class _Command(_FlagsWithoutType, PlainValuesCommand):
    pass


class _Group(_FlagsWithoutType, PlainValuesGroup):
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
    """A console as wide as the terminal (``COLUMNS`` when not a terminal; 80 by default),
    in colour on a terminal unless ``NO_COLOR`` is set, plain otherwise."""
    from rich.console import Console

    tty = sys.stdout.isatty()
    return Console(no_color=None if tty else True, highlight=False)


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


CHECK_FORMATS = ("table", "json", "toml", "html")


@app.command(cls=_Command)
def check(
    file: Annotated[Path, typer.Argument(help="chain file (TOML)")],
    output_format: Annotated[
        str, typer.Option("--format", "-f", help="table, json, toml or html")
    ] = "table",
    strict: Annotated[bool, typer.Option(help="exit 1 on warnings too")] = False,
    noise_detail: Annotated[
        bool,
        typer.Option(
            "--noise-detail", help="also list the noise contributors at a few frequencies"
        ),
    ] = False,
    brief: Annotated[
        bool, typer.Option("--brief", help="the verdict and the findings only, no tables")
    ] = False,
    output: Annotated[
        Path | None,
        typer.Option("--output", "-o", help="write the report to this file (default: stdout)"),
    ] = None,
    force: Annotated[bool, typer.Option(help="overwrite an existing --output file")] = False,
) -> None:
    """Work out the budget of a chain and report it with its findings."""
    from chainbudget.budget import compute

    if output_format not in CHECK_FORMATS:
        raise _fail(
            f'--format: got "{output_format}", expected table, json, toml or html'
            + suggest(output_format, CHECK_FORMATS)
        )
    if output is not None and output.exists() and not force:
        raise _fail(f"{output}: already exists; pass --force to overwrite it")
    try:
        chain = load_chain(file)
        if output_format == "html":
            # matplotlib and the pictures load only on this path.
            from chainbudget.report.html_view import html_page
            from chainbudget.report.pictures import NAMES, draw, picture_inputs

            inputs = picture_inputs(chain)
            budget = inputs.budget
            text = html_page(budget, [draw(name, inputs) for name in NAMES])
        else:
            budget = compute(chain)
            text = _report_text(budget, output_format, noise_detail, brief, output is None)
    except ChainError as exc:
        raise _fail(str(exc)) from None
    except Exception as exc:
        if _numeric_failure(exc):
            raise _analysis_failed(file, exc) from None
        raise
    if output is None:
        if text:
            typer.echo(text, nl=not text.endswith("\n"))
    else:
        try:
            output.write_text(text, encoding="utf-8")
        except OSError as exc:
            raise _fail(f"{output}: cannot write ({exc.strerror})") from None
        typer.echo(f"wrote {output}", err=True)
    found = budget.findings
    errors = any(fi.severity == "error" for fi in found)
    warnings = any(fi.severity == "warning" for fi in found)
    raise typer.Exit(EXIT_ERRORS if errors or (strict and warnings) else EXIT_OK)


def _report_text(
    budget: Budget, output_format: str, noise_detail: bool, brief: bool, to_stdout: bool
) -> str:
    """The table, JSON or TOML report as text (the table with a terminal's styles when
    ``to_stdout``, drawn without rich; "" where rich printed it itself,
    chainbudget/report/terminal.py)."""
    found = list(budget.findings)
    if output_format == "table":
        from chainbudget.report.table_view import report_blocks
        from chainbudget.report.terminal import shown

        return shown(report_blocks(budget, found, brief, noise_detail), to_stdout)
    from chainbudget.report.json_view import budget_json, without_nulls

    data = budget_json(budget, found)
    if output_format == "json":
        return json.dumps(data, indent=2)
    import tomli_w

    return tomli_w.dumps(without_nulls(data))


@app.command(cls=_Command)
def blocks(
    kind: Annotated[str | None, typer.Argument(help="a stage or supply kind, or a table")] = None,
) -> None:
    """List the kinds of stage and supply and the fields of each."""
    from rich import box
    from rich.markup import escape
    from rich.table import Table

    from chainbudget.blocks import catalogue, default_text, generic_parts

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
    if e.table in ("[[stage]]", "[[supply]]"):
        from chainbudget.tolerance import tolerance_note

        note = tolerance_note(e.fields)
        if note is not None:
            console.print(escape(note))
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
        Path,
        typer.Option(
            "--output",
            "-o",
            help="picture to write (.png, .svg, .pdf); with several pictures, each goes to "
            "NAME-PICTURE.EXT",
        ),
    ],
    what: Annotated[
        list[str] | None,
        typer.Option(
            "--what",
            "-w",
            help="response, square, levels, noise, headroom or all (repeat or comma-separate)",
        ),
    ] = None,
    node: Annotated[
        str | None, typer.Option(help="stage whose output the response and square show")
    ] = None,
    phase: Annotated[bool, typer.Option(help="add the phase to the response")] = False,
    square: Annotated[
        list[str] | None,
        typer.Option("--square", help='square-wave frequency ("1 kHz"), repeatable'),
    ] = None,
    force: Annotated[bool, typer.Option(help="overwrite existing pictures")] = False,
) -> None:
    """Draw the chain: its response, a square wave through it, its levels, noise, headroom."""
    # matplotlib and the pictures load only on this path.
    from chainbudget.report.pictures import (
        NAMES,
        SQUARE_HZ,
        PictureOptions,
        draw,
        picture_inputs,
    )
    from chainbudget.report.pictures.style import save

    fmt = output.suffix.lower().lstrip(".")
    if fmt not in ("png", "svg", "pdf"):
        raise _fail(f'--output: got "{output}", expected a .png, .svg or .pdf file')
    names = _picture_names(what or ["headroom"], NAMES)
    targets = (
        {names[0]: output}
        if len(names) == 1
        else {name: output.with_name(f"{output.stem}-{name}{output.suffix}") for name in names}
    )
    for target in targets.values():
        if target.exists() and not force:
            raise _fail(f"{target}: already exists; pass --force to overwrite it")
    square_hz = tuple(_frequency("--square", text) for text in square) if square else None
    try:
        chain = load_chain(file)
    except ChainError as exc:
        raise _fail(str(exc)) from None
    stages = [st.name for st in chain.stages]
    if node is not None and node not in stages:
        raise _fail(f'--node: no stage named "{node}"{suggest(node, stages)}')
    try:
        inputs = picture_inputs(chain)
    except ChainError as exc:
        raise _fail(str(exc)) from None
    except Exception as exc:
        if _numeric_failure(exc):
            raise _analysis_failed(file, exc) from None
        raise
    options = PictureOptions(node=node, phase=phase, square_hz=square_hz or SQUARE_HZ)
    for name, target in targets.items():
        picture = draw(name, inputs, options)
        try:
            save(picture.figure, target, fmt, name)
        except OSError as exc:
            raise _fail(f"{target}: cannot write ({exc.strerror})") from None
        typer.echo(picture.summary)
        typer.echo(f"wrote {target}")


def _picture_names(asked: list[str], known: tuple[str, ...]) -> list[str]:
    """The pictures asked for, in the order asked, each once; ``all`` is every one."""
    names: list[str] = []
    for item in asked:
        for name in (part.strip() for part in item.split(",")):
            if name == "all":
                names += [n for n in known if n not in names]
            elif name in known:
                names += [] if name in names else [name]
            else:
                raise _fail(
                    f'--what: got "{name}", expected one of {", ".join(known)} or all'
                    + suggest(name, known)
                )
    return names


def _frequency(option: str, text: str) -> float:
    """A frequency given on the command line: a number of hertz or a value with its unit."""
    from chainbudget import units

    try:
        value = float(text)
    except ValueError:
        try:
            value = units.parse_quantity(text, units.HERTZ)
        except units.UnitParseError as exc:
            raise _fail(f"{option}: {exc}") from None
    if not 0.0 < value < float("inf"):
        raise _fail(f'{option}: got "{text}", expected a frequency above zero')
    return value


@app.command(cls=_Command)
def sweep(
    file: Annotated[Path, typer.Argument(help="chain file (TOML)")],
    control: Annotated[
        str | None,
        typer.Option("--control", help="a pot to turn from 0 to 1: STAGE.CONTROL"),
    ] = None,
    value: Annotated[
        str | None,
        typer.Option("--value", help="a part value to step: STAGE.FIELD (with --from, --to)"),
    ] = None,
    start: Annotated[
        str | None, typer.Option("--from", help='first value, with its unit ("4k7")')
    ] = None,
    stop: Annotated[str | None, typer.Option("--to", help="last value, with its unit")] = None,
    steps: Annotated[int, typer.Option(help="number of steps, ends included")] = 11,
    spacing: Annotated[
        str, typer.Option(help="linear or log spacing of a part value's steps")
    ] = "linear",
    output_format: Annotated[
        str, typer.Option("--format", "-f", help="table, csv or json")
    ] = "table",
) -> None:
    """Step one pot or part value and tabulate the key figures at each step."""
    if output_format not in ("table", "csv", "json"):
        raise _fail(
            f'--format: got "{output_format}", expected table, csv or json'
            + suggest(output_format, ("table", "csv", "json"))
        )
    if spacing not in ("linear", "log"):
        raise _fail(f'--spacing: got "{spacing}", expected linear or log')
    if (control is None) == (value is None):
        raise _fail("give one of --control STAGE.CONTROL or --value STAGE.FIELD")
    if value is not None and (start is None or stop is None):
        raise _fail("--value needs --from and --to")
    if control is not None and (start is not None or stop is not None):
        raise _fail("--from and --to go with --value; a pot is turned from 0 to 1")
    # The sweep's modules load only on this path.
    from chainbudget.budget.sweep import stepped_control, stepped_value, sweep_rows
    from chainbudget.report.sweep_view import SweepInfo, sweep_table, sweep_text
    from chainbudget.stages import KINDS

    try:
        chain = load_chain(file)
        if control is not None:
            stepped = stepped_control(chain, control, steps)
        else:
            assert value is not None and start is not None and stop is not None
            stepped = stepped_value(chain, value, start, stop, steps, spacing)
    except ChainError as exc:
        raise _fail(str(exc)) from None
    stage = chain.stages[stepped.stage_index]
    unit = next(fld.kind.unit for fld in KINDS[stage.kind].fields if fld.key == stepped.key)
    info = SweepInfo(
        chain.settings.title,
        chain.file,
        f"{stage.name}.{stepped.key}",
        stepped.control,
        "" if stepped.control or unit not in ("ohm", "F") else unit,
    )
    rows = sweep_rows(chain, stepped)
    if output_format == "table":
        from chainbudget.report.terminal import shown

        text = shown([sweep_table(info, rows)])
        if text:
            typer.echo(text, nl=False)
    else:
        typer.echo(sweep_text(info, rows, output_format), nl=output_format == "json")


@app.command(cls=_Command)
def spread(
    file: Annotated[Path, typer.Argument(help="chain file (TOML)")],
    trials: Annotated[int, typer.Option(help="Monte Carlo trials")] = 10_000,
    seed: Annotated[int, typer.Option(help="random seed (same seed, same trials)")] = 1,
    output_format: Annotated[str, typer.Option("--format", "-f", help="table or json")] = "table",
    plot: Annotated[
        Path | None, typer.Option("--plot", help="histograms of the key figures (png/svg/pdf)")
    ] = None,
    force: Annotated[bool, typer.Option(help="overwrite an existing --plot file")] = False,
) -> None:
    """Every figure over the parts' tolerances: Monte Carlo, corners, yield, sensitivity."""
    from chainbudget.spread.command import spread_command  # loads only on this path

    try:
        text = spread_command(file, trials, seed, output_format, plot, force)
    except ChainError as exc:
        raise _fail(str(exc)) from None
    except Exception as exc:
        if _numeric_failure(exc):
            raise _analysis_failed(file, exc) from None
        raise
    if text is not None:
        typer.echo(text)


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
    # What the imports so far made (typer, numpy, the loader and its tables) lives as long
    # as the process: frozen, the cyclic collector stops scanning it at every collection the
    # command's own imports and work set off (a tenth of a check's time, docs/performance.md).
    gc.freeze()
    # A command runs for about a second and frees what it made at exit: collecting the
    # young generation every 700 allocations (the default) costs a tenth of a check's time
    # in collections that find next to nothing. A generation-0 threshold of 50,000 keeps
    # the collector for what is made in long runs (peak memory measured unchanged on the
    # largest checks and a 10,000-trial spread, docs/performance.md).
    gc.set_threshold(50_000, 20, 100)
    app()
