"""Tests for chainbudget.chainfile: validation errors of the contract, and writing back.

Reference: the chain-format contract (/work/shared/design/chain-format.md, "Values"): every
bad input is one line naming the file, the table path (``stage[2] "bass".feedback``), what
was given and what was expected. The writer is checked by reading its output back with
tomllib after tomli-w (the two reference TOML libraries of the stack).
"""

from __future__ import annotations

import math
import subprocess
import sys
import tomllib
from dataclasses import replace
from pathlib import Path

import pytest
import tomli_w
from hypothesis import given
from hypothesis import strategies as st

from chainbudget import fields as f
from chainbudget.chainfile import (
    MAX_LOOP_SWEPT_POTS,
    MAX_STAGES,
    MAX_SWEPT_POTS,
    ChainError,
    ChainFileError,
    chain_to_dict,
    load_chain,
    parse_chain,
)

DATA = Path(__file__).resolve().parent / "data"
FIXTURE = DATA / "every_kind.toml"
EXAMPLES = sorted((Path(__file__).resolve().parents[1] / "chains").glob("*.toml"))


def _error(tmp_path: Path, old: str, new: str) -> ChainFileError:
    """Load the fixture with ``old`` replaced by ``new``; return the error it raises."""
    text = FIXTURE.read_text(encoding="utf-8")
    assert text.count(old) == 1, f"fixture no longer holds {old!r} once"
    path = tmp_path / "broken.toml"
    path.write_text(text.replace(old, new), encoding="utf-8")
    with pytest.raises(ChainFileError) as info:
        load_chain(path)
    error = info.value
    message = str(error)
    assert "\n" not in message, "the contract wants one line"
    assert message.startswith(f"{path}: "), "the message names the file first"
    assert isinstance(error, ValueError) and isinstance(error, ChainError)
    return error


def test_the_fixture_loads() -> None:
    """The fixture is valid: seven stages of every core kind, values read into SI."""
    chain = load_chain(FIXTURE)
    assert [s.kind for s in chain.stages] == [
        "opamp_gain",
        "opamp_gain",
        "tone_bass",
        "tone_treble",
        "tone_two_band",
        "volume",
        "block",
    ]
    pre = chain.stages[0]
    assert pre.values["feedback"] == pytest.approx(22e3, rel=1e-12, abs=0)
    assert pre.values["ground_leg"] == pytest.approx(2.2e3, rel=1e-12, abs=0)
    assert chain.source.impedance == pytest.approx(2.2e3, rel=1e-12, abs=0)
    # +4 dBu = 1.2277 V rms (common practice); ambient stays in degC.
    assert chain.source.max_level == pytest.approx(1.2276530, rel=1e-6, abs=0)
    assert chain.settings.ambient == pytest.approx(30.0, abs=1e-12)
    assert chain.opamps["quiet"].noise_current == pytest.approx(0.7e-12, rel=1e-12, abs=0)
    # A stage that names no op-amp gets the default generic class.
    assert chain.stages[1].values["opamp"] == "jfet_input"


# --- every error class of the contract -----------------------------------------------------


def test_wrong_dimension(tmp_path: Path) -> None:
    """``feedback = "10 V"``: a voltage where a resistance is expected."""
    error = _error(tmp_path, 'feedback = "10 kohm"', 'feedback = "10 V"')
    assert error.path == 'stage[2] "gain".feedback'
    assert "got '10 V', expected a resistance" in str(error)


def test_bare_number_where_a_unit_is_required(tmp_path: Path) -> None:
    """``feedback = 10000``: a number with no unit."""
    error = _error(tmp_path, 'feedback = "10 kohm"', "feedback = 10000")
    assert error.path == 'stage[2] "gain".feedback'
    assert "got 10000, expected a resistance" in str(error)
    assert "no unit" in str(error)


@pytest.mark.parametrize("value", ['"-10 kohm"', '"0 ohm"', '"0R"'])
def test_negative_or_zero_resistance(tmp_path: Path, value: str) -> None:
    """A resistance must be above zero."""
    error = _error(tmp_path, 'feedback = "10 kohm"', f"feedback = {value}")
    assert error.path == 'stage[2] "gain".feedback'
    assert f"got {value.strip(chr(34))!r}" in str(error)
    assert "a resistance above zero" in str(error)


@pytest.mark.parametrize("value", ["1.5", "-0.1"])
def test_pot_position_outside_zero_to_one(tmp_path: Path, value: str) -> None:
    """A pot position runs from 0 to 1."""
    error = _error(tmp_path, "position = 0.7\n", f"position = {value}\n")
    assert error.path == 'stage[3] "bass".position'
    assert f"got {value}, expected a pot position from 0 to 1" in str(error)


def test_unknown_field_with_a_suggestion(tmp_path: Path) -> None:
    """A mistyped key is named, with the nearest known key."""
    error = _error(tmp_path, 'feedback_cap = "100p"', 'feedbak_cap = "100p"')
    assert error.path == 'stage[2] "gain".feedbak_cap'
    assert 'unknown field (did you mean "feedback_cap"?)' in str(error)


def test_unknown_kind_with_a_suggestion(tmp_path: Path) -> None:
    """A mistyped kind is named, with the nearest kind and the list of kinds."""
    error = _error(tmp_path, 'kind = "tone_bass"', 'kind = "tone_bas"')
    assert error.path == 'stage[3] "bass".kind'
    message = str(error)
    assert 'unknown kind "tone_bas" (did you mean "tone_bass"?)' in message
    assert "known: " in message and "volume" in message


def test_unknown_table_with_a_suggestion(tmp_path: Path) -> None:
    """A mistyped top-level table is named too."""
    error = _error(tmp_path, "[source]", "[sorce]")
    assert error.path == "sorce"
    assert 'did you mean "source"?' in str(error)


def test_missing_required_field(tmp_path: Path) -> None:
    """A required field left out: named, with what it holds and its unit."""
    error = _error(tmp_path, 'pot = "10k"\n', "")
    assert error.path == 'stage[6] "vol".pot'
    assert "missing required field (track resistance, ohm)" in str(error)


def test_missing_field_the_topology_requires(tmp_path: Path) -> None:
    """``ground_leg`` is required only for the non-inverting form; the message says what it
    is and its unit."""
    error = _error(tmp_path, 'ground_leg = "2k2"\n', "")
    assert error.path == 'stage[1] "pre".ground_leg'
    assert "missing required field for this topology" in str(error)
    assert "ohm" in str(error)


def test_missing_required_table(tmp_path: Path) -> None:
    """No ``[load]`` table."""
    error = _error(tmp_path, '[load]\nimpedance = "8 ohm"\nsensitivity = "87 dB"\n', "")
    assert error.path == "load"
    assert "missing required table [load]" in str(error)


@pytest.mark.parametrize("rail", ["positive", "negative"])
def test_reference_to_an_undefined_rail(tmp_path: Path, rail: str) -> None:
    """A rail must name a ``[[supply]]`` (or ``ground``)."""
    old = 'feedback_cap = "100p"\npositive = "plus"\nnegative = "minus"'
    new = old.replace(f'{rail} = "plus"', f'{rail} = "plsu"').replace(
        f'{rail} = "minus"', f'{rail} = "minsu"'
    )
    error = _error(tmp_path, old, new)
    assert error.path == f'stage[2] "gain".{rail}'
    assert 'no supply named "' in str(error)
    assert "did you mean" in str(error)


def test_reference_to_an_undefined_opamp(tmp_path: Path) -> None:
    """An ``opamp`` must name a generic class or an ``[opamp.NAME]`` table."""
    error = _error(
        tmp_path,
        'bias_resistor = "100k"\nopamp = "quiet"',
        'bias_resistor = "100k"\nopamp = "quite"',
    )
    assert error.path == 'stage[1] "pre".opamp'
    assert 'no op-amp named "quite" (did you mean "quiet"?)' in str(error)


def test_op_amp_stage_in_a_chain_without_supplies(tmp_path: Path) -> None:
    """With no ``[[supply]]`` an op-amp stage cannot find its rail; the message says so
    (it once claimed there was more than one supply)."""
    text = FIXTURE.read_text(encoding="utf-8")
    head = text[: text.index("[[supply]]")]
    body = (
        '[[stage]]\nname = "g"\nkind = "opamp_gain"\ntopology = "inverting"\n'
        'feedback = "10k"\ninput = "10k"\n'
    )
    path = tmp_path / "nosupply.toml"
    path.write_text(head + body, encoding="utf-8")
    with pytest.raises(ChainFileError, match=r"no \[\[supply\]\]") as info:
        load_chain(path)
    assert info.value.path == 'stage[1] "g".positive'


def test_bad_toml(tmp_path: Path) -> None:
    """A file that is not TOML: one line with tomllib's position of the fault."""
    error = _error(tmp_path, '[[stage]]\nname = "amp"', '[[stage]\nname = "amp"')
    assert error.path == ""
    assert "not valid TOML" in str(error)
    assert "line" in str(error)


def test_missing_file(tmp_path: Path) -> None:
    """A path that does not exist."""
    path = tmp_path / "absent.toml"
    with pytest.raises(ChainFileError, match="cannot read the file") as info:
        load_chain(path)
    assert str(info.value).startswith(f"{path}: ")
    assert "\n" not in str(info.value)


def test_decimal_letter_code_in_a_file(tmp_path: Path) -> None:
    """Regression: ``"4.7k"`` once escaped as a bare ValueError (a traceback) instead of
    reading as 4.7 kohm."""
    text = FIXTURE.read_text(encoding="utf-8").replace('input = "4k7"', 'input = "4.7k"')
    path = tmp_path / "decimal.toml"
    path.write_text(text, encoding="utf-8")
    assert load_chain(path).stages[1].values["input"] == pytest.approx(4.7e3, rel=1e-12, abs=0)


@pytest.mark.parametrize(
    ("old", "new", "path"),
    [
        ('gain = "26 dB"', 'gain = "1e6 dB"', 'stage[7] "amp".gain'),
        ('ambient = "30 degC"', 'ambient = "-300 degC"', "chain.ambient"),
        ("taper = 0.15", "taper = nan", 'stage[6] "vol".taper'),
        (
            'output_impedance = "0.05 ohm"',
            'output_impedance = "1 (ohm"',
            'stage[7] "amp".output_impedance',
        ),
    ],
)
def test_values_that_once_escaped_as_tracebacks(
    tmp_path: Path, old: str, new: str, path: str
) -> None:
    """Regression: overflowing dB figures, temperatures below 0 K, TOML's nan and unit text
    that trips pint's own parser are each one line, not a traceback."""
    assert _error(tmp_path, old, new).path == path


# --- writing back --------------------------------------------------------------------------


def _round_trip(chain_path: Path) -> None:
    chain = load_chain(chain_path)
    text = tomli_w.dumps(chain_to_dict(chain))
    again = parse_chain(tomllib.loads(text), "written.toml")
    assert again.same_model(chain)


def test_fixture_round_trips_through_tomli_w() -> None:
    """chain_to_dict + tomli_w.dumps reloads to an equal model (including a user op-amp
    table without a description, which once wrote ``description = ""`` that did not
    read back)."""
    _round_trip(FIXTURE)


@pytest.mark.parametrize("example", EXAMPLES, ids=lambda p: p.stem)
def test_example_chains_round_trip_through_tomli_w(example: Path) -> None:
    """Every shipped example writes back to an equal model."""
    _round_trip(example)


def test_same_model_sees_a_changed_value() -> None:
    """Guard for the round-trip checks: a model with one value changed is not the same."""
    chain = load_chain(FIXTURE)
    stage = chain.stages[1]
    changed = replace(stage, values={**stage.values, "feedback": 10001.0})
    other = replace(chain, stages=(chain.stages[0], changed, *chain.stages[2:]))
    assert not other.same_model(chain)
    assert replace(chain, file="elsewhere.toml").same_model(chain)


_FINITE = {"allow_nan": False, "allow_infinity": False}


@given(st.floats(min_value=1e-6, max_value=1e12, **_FINITE))
def test_resistance_writes_back_exactly(value: float) -> None:
    """Property: RESISTANCE.read(RESISTANCE.write(x)) == x bit for bit (repr keeps every
    digit; pint's ohm-to-ohm conversion is exact)."""
    assert f.RESISTANCE.read(f.RESISTANCE.write(value)) == value


# Each positive quantity kind and the hard range of its values (chainbudget.plausible):
# inside it every value is taken, written outside the plausible range with its prefix in
# full so that it is still taken as meant.
_HARD_RANGES = [
    (f.CAPACITANCE, 1e-18, 1e3),
    (f.FREQUENCY, 1e-6, 1e12),
    (f.SLEW_RATE, 1e3, 1e11),
    (f.NOISE_VOLTAGE, 1e-15, 1e-4),
    (f.NOISE_CURRENT, 1e-18, 1e-6),
    (f.LEVEL, 1e-12, 1e6),
    (f.RESISTANCE_OR_ZERO, 1e-9, 1e12),
    (f.POSITIVE_CURRENT, 1e-12, 1e5),
    (f.PEAK_VOLTAGE, 1e-12, 1e6),
    (f.PEAK_CURRENT, 1e-12, 1e5),
    (f.VOLTAGE, -1e6, 1e6),
]


@given(st.sampled_from(_HARD_RANGES), st.floats(0.0, 1.0))
def test_positive_quantities_write_back_exactly(
    kind_range: tuple[f.FieldKind, float, float], where: float
) -> None:
    """Property: every quantity kind reads back what it wrote, bit for bit, anywhere in its
    hard range (log-spaced draws; linear for a signed kind)."""
    kind, low, high = kind_range
    if low < 0.0:
        value = low + where * (high - low)
    else:
        value = low * (high / low) ** where
    value = min(max(value, low), high)
    assert kind.read(kind.write(value)) == value


@given(st.floats(min_value=-100.0, max_value=400.0, **_FINITE))
def test_temperature_writes_back_exactly(value: float) -> None:
    """Property: degC (an offset unit) reads back what it wrote."""
    assert math.isclose(f.TEMPERATURE.read(f.TEMPERATURE.write(value)), value, rel_tol=0.0)


def test_a_block_with_zero_gain_is_refused(tmp_path: Path) -> None:
    """A gain of zero would make every later node silent and every ratio undefined."""
    error = _error(tmp_path, 'gain = "26 dB"', "gain = 0")
    assert error.path.endswith(".gain") and "other than zero" in error.message


def test_a_block_drawing_current_must_land_on_a_rail(tmp_path: Path) -> None:
    """With two supplies, a block that draws current must say which one it draws from."""
    error = _error(tmp_path, 'max_output = "12 V"', 'max_output = "12 V"\nsupply_current = "0.2 A"')
    assert error.path.endswith(".positive")


@pytest.mark.parametrize(
    ("extra", "key"),
    [
        ('voltage = "15 V"\nmin_voltage = "16 V"', "min_voltage"),
        ('voltage = "15 V"\nmax_voltage = "14 V"', "max_voltage"),
        ('voltage = "15 V"\nmin_voltage = "-12 V"', "min_voltage"),
        ('voltage = "0 V"', "voltage"),
    ],
)
def test_dc_supply_ends_must_bracket_its_voltage(tmp_path: Path, extra: str, key: str) -> None:
    error = _error(
        tmp_path,
        'name = "minus"\nkind = "dc"\nvoltage = "15 V"',
        f'name = "minus"\nkind = "dc"\n{extra}',
    )
    assert error.path == f'supply[2] "minus".{key}'


def test_reference_frequency_outside_the_band_is_refused(tmp_path: Path) -> None:
    """The nominal figures are taken at the reference and the worst case over the band: a
    reference outside the band would mix the two."""
    error = _error(tmp_path, 'reference = "1 kHz"', 'reference = "50 kHz"')
    assert error.path == "chain.reference"


def test_max_level_below_the_nominal_level_is_refused(tmp_path: Path) -> None:
    error = _error(tmp_path, 'max_level = "+4 dBu"', 'max_level = "-60 dBV"')
    assert error.path == "source.max_level"


# --- messages that say what was given and what was expected --------------------------------


def test_unknown_field_lists_the_known_fields(tmp_path: Path) -> None:
    """ "unknown field" names the fields the table takes, not only the nearest one."""
    message = str(_error(tmp_path, 'feedback_cap = "100p"', 'feedbak_cap = "100p"'))
    assert "its fields: name, kind, topology, feedback, ground_leg, input" in message


def test_no_supply_named_lists_the_supplies(tmp_path: Path) -> None:
    """ "no supply named X" names the supplies there are, ground included."""
    old = 'feedback_cap = "100p"\npositive = "plus"'
    message = str(_error(tmp_path, old, 'feedback_cap = "100p"\npositive = "xyzzy"'))
    assert 'no supply named "xyzzy"; the supplies are: plus, minus, ground' in message


def test_a_supply_loop_names_the_supplies_in_it() -> None:
    """Supplies that feed each other: the message walks the loop by name."""
    text = (DATA / "every_kind.toml").read_text(encoding="utf-8")
    loop = (
        '[[supply]]\nname = "a"\nkind = "regulator"\nfrom = "b"\noutput = "12 V"\n\n'
        '[[supply]]\nname = "b"\nkind = "regulator"\nfrom = "a"\noutput = "12 V"\n\n'
    )
    with pytest.raises(ChainFileError) as info:
        parse_chain(tomllib.loads(text.replace("[[supply]]", loop + "[[supply]]", 1)), "x.toml")
    assert info.value.path == 'supply[1] "a".from'
    assert 'in a loop ("a" <- "b" <- "a")' in info.value.message


@pytest.mark.parametrize(
    "name", ["amp\x1b[31m", "two\nlines", "bell\x07", "\u202eevil", "tab\tname"]
)
def test_control_characters_in_a_name_are_refused_and_escaped(tmp_path: Path, name: str) -> None:
    """A name holding control characters (terminal escapes, line breaks, direction
    overrides) is refused; the message shows them escaped, never raw, on one line."""
    escaped = tomli_w.dumps({"name": name}).split("=", 1)[1].strip()
    error = _error(tmp_path, 'name = "pre"', f"name = {escaped}")
    message = str(error)
    assert message.isprintable()
    assert "without control characters" in message


def test_control_characters_in_an_unknown_key_are_escaped(tmp_path: Path) -> None:
    """An unknown key is echoed in the table path, escaped."""
    message = str(_error(tmp_path, 'feedback_cap = "100p"', '"feed\\u001bback" = "100p"'))
    assert message.isprintable() and "feed\\x1bback" in message


def test_a_long_value_is_cut_in_the_message(tmp_path: Path) -> None:
    """A value of thousands of characters is echoed cut short: the line stays readable."""
    error = _error(tmp_path, 'feedback = "10 kohm"', f'feedback = "{"9" * 5000} ohm"')
    assert len(str(error)) < 400


def test_deeply_nested_values_are_one_line(tmp_path: Path) -> None:
    """Deep TOML nesting (tomllib recursion, or a deep array as a value) is one line."""
    path = tmp_path / "deep.toml"
    path.write_text("x = " + "[" * 100_000 + "]" * 100_000 + "\n", encoding="utf-8")
    with pytest.raises(ChainFileError, match="nest too deeply"):
        load_chain(path)
    error = _error(tmp_path, "position = 0.7\n", "position = " + "[" * 300 + "]" * 300 + "\n")
    assert len(str(error)) < 400


# --- files that are not chain files ---------------------------------------------------------


def _load_error(path: Path) -> str:
    with pytest.raises(ChainFileError) as info:
        load_chain(path)
    message = str(info.value)
    assert message.startswith(f"{path}: ") and "\n" not in message
    return message


def test_a_directory(tmp_path: Path) -> None:
    assert "cannot read the file" in _load_error(tmp_path)


def test_an_unreadable_file(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """A file the user may not read (simulated: the tests may run as root, whom file modes
    do not stop) is one line with the system's reason."""
    import os

    path = tmp_path / "locked.toml"
    path.write_text("[chain]\n", encoding="utf-8")
    real_open = os.open

    def refusing_open(file: object, *args: object, **kwargs: object) -> int:
        if str(file) == str(path):
            raise PermissionError(13, "Permission denied", str(path))
        return real_open(file, *args, **kwargs)  # type: ignore[arg-type]

    monkeypatch.setattr(os, "open", refusing_open)
    assert "cannot read the file (Permission denied)" in _load_error(path)


def test_a_binary_file(tmp_path: Path) -> None:
    path = tmp_path / "image.toml"
    path.write_bytes(bytes(range(256)) * 4)
    assert "binary file" in _load_error(path)


def test_a_file_that_is_not_utf8(tmp_path: Path) -> None:
    path = tmp_path / "latin.toml"
    path.write_bytes('title = "caf\xe9"\n'.encode("latin-1"))
    assert "not a UTF-8 text file" in _load_error(path)


def test_a_ten_megabyte_file_is_not_read_through(tmp_path: Path) -> None:
    """A 10 MB file is refused after its first MiB (a chain file is a page of text)."""
    path = tmp_path / "huge.toml"
    path.write_text("# padding\n" * 1_048_576, encoding="utf-8")
    assert "too large to be a chain file" in _load_error(path)


def test_too_many_swept_pots(tmp_path: Path) -> None:
    """More swept pots than the worst-case search holds: one line naming the first one
    past the limit and the way out (sweep = false)."""
    text = FIXTURE.read_text(encoding="utf-8")
    extra = "".join(
        f'\n[[stage]]\nname = "trim{i}"\nkind = "volume"\npot = "10k"\nposition = 0.5\n'
        for i in range(MAX_SWEPT_POTS)
    )
    path = tmp_path / "many.toml"
    path.write_text(text + extra, encoding="utf-8")
    with pytest.raises(ChainFileError, match=r"expected at most 32: set sweep = false") as info:
        load_chain(path)
    assert info.value.path.endswith(".sweep")
    # Run as a command: one line on stderr, exit status 2, no traceback.
    done = subprocess.run(
        [sys.executable, "-m", "chainbudget", "check", str(path)], capture_output=True, text=True
    )
    assert done.returncode == 2 and done.stdout == ""
    assert done.stderr.count("\n") == 1 and "expected at most 32" in done.stderr


def test_too_many_stages(tmp_path: Path) -> None:
    """More stages than MAX_STAGES: one line at the first stage past the limit."""
    text = FIXTURE.read_text(encoding="utf-8")
    extra = "".join(
        f'\n[[stage]]\nname = "buf{i}"\nkind = "block"\ngain = 1\n' for i in range(MAX_STAGES)
    )
    path = tmp_path / "long.toml"
    path.write_text(text + extra, encoding="utf-8")
    with pytest.raises(ChainFileError, match=r"expected at most 64") as info:
        load_chain(path)
    assert info.value.path == "stage[65]"


def test_too_many_swept_pots_inside_one_loop(tmp_path: Path) -> None:
    """A loop section is searched over every combination of its own pots: more than
    MAX_LOOP_SWEPT_POTS inside one loop is refused at the pot past the limit."""
    text = FIXTURE.read_text(encoding="utf-8")
    pots = "".join(
        f'\n[[stage]]\nname = "in{i}"\nkind = "volume"\npot = "10k"\nposition = 0.5\n'
        for i in range(MAX_LOOP_SWEPT_POTS + 1)
    )
    loop = (
        '\n[[stage]]\nname = "head"\nkind = "opamp_gain"\ntopology = "non-inverting"\n'
        'feedback = "10k"\nground_leg = "10k"\nfeedback_from = "tail"\nopamp = "jfet_input"\n'
        'positive = "plus"\nnegative = "minus"\n'
        + pots
        + '\n[[stage]]\nname = "tail"\nkind = "block"\ngain = 1\n'
        + 'input_impedance = "100k"\noutput_impedance = "10 ohm"\n'
    )
    path = tmp_path / "loop.toml"
    path.write_text(text + loop, encoding="utf-8")
    with pytest.raises(ChainFileError, match=r"inside the feedback_from loop") as info:
        load_chain(path)
    assert (
        info.value.path == f'stage[{text.count("[[stage]]") + 2 + MAX_LOOP_SWEPT_POTS}] "in2".sweep'
    )


def test_too_dense_a_frequency_grid(tmp_path: Path) -> None:
    """points_per_decade times the band's decades past the grid's limit: refused."""
    error = _error(tmp_path, "points_per_decade = 12", "points_per_decade = 500")
    assert error.path == "chain.points_per_decade"
    assert "1500 points" in error.message


def test_a_named_pipe_with_no_writer_does_not_hang(tmp_path: Path) -> None:
    """A FIFO nobody writes to reads as an empty file (one line: no [source]) instead of
    waiting forever; run in a subprocess with a time limit so that a hang fails the test."""
    import os
    import subprocess
    import sys

    fifo = tmp_path / "pipe.toml"
    os.mkfifo(fifo)
    done = subprocess.run(
        [sys.executable, "-m", "chainbudget", "check", str(fifo)],
        capture_output=True,
        text=True,
        timeout=60,
        check=False,
    )
    assert done.returncode == 2
    assert done.stderr.strip() == f"chainbudget: {fifo}: source: missing required table [source]"
