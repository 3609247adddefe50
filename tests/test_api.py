"""The public Python API: ``import chainbudget as cb`` (docs/api.md).

Outside checks: the non-inverting amplifier's gain 1 + Rf/Rg (Horowitz & Hill, The Art of
Electronics, 3rd ed., sec. 4.2, section number from memory) and the negative-feedback gain
A / (1 + A beta) with the single-pole open-loop gain A(f) = A0 / (1 + j f A0 / GBW)
(Horowitz & Hill 3rd ed. sec. 2.5 and 4.9, section numbers from memory). The light import
and the command's one-line errors are driven in a subprocess, where an import or a
traceback is seen as a user would see it.
"""

from __future__ import annotations

import html
import json
import math
import pickle
import re
import subprocess
import sys
import tomllib
from dataclasses import FrozenInstanceError
from pathlib import Path

import pytest
import tomli_w

import chainbudget as cb
from chainbudget import budget as budget_module
from chainbudget.chainfile import ChainFileError, ChainPathError, chain_to_dict, parse_chain
from chainbudget.fields import FrozenMapping
from chainbudget.findings import findings as findings_function
from chainbudget.units import OHM, UnitParseError, parse_quantity

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((ROOT / "chains").glob("*.toml"))
TEST_CHAINS = sorted((ROOT / "tests" / "data").glob("*.toml"))
BUSKING = ROOT / "chains" / "busking_amp.toml"
HEAVY = ("numpy", "scipy", "pint", "rich", "typer", "matplotlib", "tomli_w")

# A small valid chain: one battery, one inverting op-amp stage, a volume pot.
SMALL = """
[chain]
title = "Bench check"

[source]
level = "-10 dBV"

[load]
impedance = "8 ohm"

[[supply]]
name = "battery"
kind = "dc"
voltage = "9 V"

[[stage]]
name = "gain"
kind = "opamp_gain"
topology = "inverting"
feedback = "47k"
input = "10k"

[[stage]]
name = "level"
kind = "volume"
pot = "10k"
position = 0.5
"""


def _run(code: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=False, cwd=ROOT
    )


# --- the package: names, light import -------------------------------------------------------


def test_import_chainbudget_alone_stays_light() -> None:
    """``import chainbudget`` (which every command runs first) loads none of the heavy
    libraries; reading ``cb.ChainError`` and ``cb.__version__`` does not either."""
    code = (
        "import sys, chainbudget as cb; cb.ChainError; cb.__version__; "
        f"print(sorted(m for m in {HEAVY!r} if m in sys.modules))"
    )
    done = _run(code)
    assert done.returncode == 0, done.stderr
    assert done.stdout.strip() == "[]"


def test_the_light_import_check_sees_a_heavy_import() -> None:
    """Guard for the test above: the same probe does see numpy once a budget name is
    used."""
    done = _run("import sys, chainbudget as cb; cb.compute; print('numpy' in sys.modules)")
    assert done.returncode == 0, done.stderr
    assert done.stdout.strip() == "True"


def test_every_public_name_resolves() -> None:
    from chainbudget.budget import Budget, compute
    from chainbudget.chainfile import Chain, load_chain, loads_chain
    from chainbudget.finding import Finding

    assert cb.load is load_chain and cb.loads is loads_chain
    assert cb.compute is compute
    assert cb.Chain is Chain and cb.Budget is Budget and cb.Finding is Finding
    assert issubclass(cb.ChainError, Exception)
    assert set(cb.__all__) == {
        "load",
        "loads",
        "compute",
        "Chain",
        "Budget",
        "Finding",
        "ChainError",
        "__version__",
    }
    assert set(cb.__all__) <= set(dir(cb))
    for name in cb.__all__:
        assert getattr(cb, name) is not None
    with pytest.raises(AttributeError, match="no attribute 'nonesuch'"):
        _ = cb.nonesuch  # type: ignore[attr-defined]


def test_version_is_the_installed_version() -> None:
    from importlib.metadata import version

    assert cb.__version__ == version("chainbudget")


def test_compute_and_findings_pass_through() -> None:
    chain = cb.load(BUSKING)
    budget = cb.compute(chain)
    assert isinstance(budget, cb.Budget)
    assert budget == budget_module.compute(chain)
    found = budget.findings
    assert list(found) == findings_function(budget)
    assert all(isinstance(item, cb.Finding) for item in found)


# --- load and loads ---------------------------------------------------------------------------


@pytest.mark.parametrize("path", EXAMPLES + TEST_CHAINS, ids=lambda p: p.stem)
def test_load_and_loads_give_equal_chains(path: Path) -> None:
    text = path.read_text(encoding="utf-8")
    loaded = cb.load(path)
    assert cb.loads(text, name=str(path)) == loaded
    from_text = cb.loads(text)
    assert from_text.file == "<text>"
    assert from_text.same_model(loaded)
    assert hash(cb.loads(text, name=str(path))) == hash(loaded)


def test_loads_without_a_title_takes_the_name() -> None:
    chain = cb.loads(SMALL.replace('title = "Bench check"\n', ""), name="bench.toml")
    assert chain.settings.title == "bench"


# --- errors are types -------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("old", "new", "path"),
    [
        ('feedback = "47k"', 'feedback = "47 V"', 'stage[1] "gain".feedback'),
        ('kind = "volume"', 'kind = "volum"', 'stage[2] "level".kind'),
        ('pot = "10k"\n', "", 'stage[2] "level".pot'),
        ('voltage = "9 V"', 'voltage = "9 Vx"', 'supply[1] "battery".voltage'),
    ],
    ids=["bad-unit", "unknown-kind", "missing-field", "unknown-unit"],
)
def test_input_errors_through_loads(old: str, new: str, path: str) -> None:
    """Each input error is a ChainError and a ValueError, one line naming the file name
    and the table path."""
    assert SMALL.count(old) == 1
    with pytest.raises(cb.ChainError) as info:
        cb.loads(SMALL.replace(old, new), name="bench.toml")
    error = info.value
    assert isinstance(error, ValueError) and isinstance(error, ChainFileError)
    message = str(error)
    assert "\n" not in message
    assert message.startswith(f"bench.toml: {path}: ")
    assert error.path == path  # type: ignore[attr-defined]


def test_bad_toml_through_loads() -> None:
    """Text that is not TOML: one line naming the file name and tomllib's line."""
    with pytest.raises(cb.ChainError) as info:
        cb.loads("[[stage]\nname = 1\n", name="typed.toml")
    message = str(info.value)
    assert isinstance(info.value, ValueError)
    assert "\n" not in message
    assert message.startswith("typed.toml: not valid TOML")
    assert "line 1" in message


def test_messages_name_the_default_name() -> None:
    with pytest.raises(cb.ChainError, match=r"^<text>: load: missing required table"):
        cb.loads(SMALL.replace('[load]\nimpedance = "8 ohm"\n', ""))


def test_unit_parse_error_is_a_chain_error_and_a_value_error() -> None:
    with pytest.raises(cb.ChainError) as info:
        parse_quantity("10 V", OHM)
    assert isinstance(info.value, UnitParseError) and isinstance(info.value, ValueError)


def test_the_command_still_reports_one_line_and_exit_two(tmp_path: Path) -> None:
    """The real command (a subprocess, so that a traceback would show): a bad unit is one
    line on stderr naming the file and the table path, exit status 2."""
    path = tmp_path / "bad.toml"
    path.write_text(SMALL.replace('feedback = "47k"', 'feedback = "47 V"'), encoding="utf-8")
    done = subprocess.run(
        [sys.executable, "-m", "chainbudget", "check", str(path)],
        capture_output=True,
        text=True,
        check=False,
    )
    assert done.returncode == 2
    assert "Traceback" not in done.stderr
    lines = done.stderr.strip().splitlines()
    assert lines == [f'chainbudget: {path}: stage[1] "gain".feedback: ' + lines[0].split(": ")[-1]]
    assert "expected a resistance" in lines[0]


# --- immutable, hashable chains ----------------------------------------------------------------


def test_stage_and_supply_values_are_read_only() -> None:
    chain = cb.loads(SMALL)
    stage, supply = chain.stages[0], chain.supplies[0]
    assert isinstance(stage.values, FrozenMapping) and isinstance(supply.values, FrozenMapping)
    with pytest.raises(TypeError):
        stage.values["feedback"] = 1.0  # type: ignore[index]
    with pytest.raises(AttributeError):
        stage.values.update(feedback=1.0)  # type: ignore[attr-defined]
    with pytest.raises(AttributeError):
        stage.values._items = {}  # type: ignore[attr-defined,misc]
    with pytest.raises(FrozenInstanceError):
        stage.values = {}  # type: ignore[misc]
    # Reading as before: [], .get, iteration, len, in, number().
    assert stage.values["feedback"] == 47e3
    assert stage.values.get("feedback_cap") is None and stage.values.get("nope", 7) == 7
    assert list(stage.values)[:2] == ["topology", "feedback"]
    assert "input" in stage.values and len(stage.values) == len(dict(stage.values))
    assert stage.number("input") == 10e3
    assert supply.values["voltage"] == 9.0


def test_parts_libraries_are_read_only() -> None:
    chain = cb.loads(SMALL)
    assert isinstance(chain.opamps, FrozenMapping)
    assert isinstance(chain.transistors, FrozenMapping)
    with pytest.raises(TypeError):
        chain.opamps["mine"] = chain.opamps["jfet_input"]  # type: ignore[index]
    with pytest.raises(FrozenInstanceError):
        chain.opamps["jfet_input"].gbw = 1.0  # type: ignore[misc]


def test_frozen_mapping_compares_and_hashes_by_value() -> None:
    a = FrozenMapping({"x": 1.0, "y": "z"})
    b = FrozenMapping([("y", "z"), ("x", 1.0)])
    assert a == b and hash(a) == hash(b)
    assert a == {"x": 1.0, "y": "z"} and a != {"x": 2.0, "y": "z"}
    assert a != FrozenMapping({"x": 1.0})
    assert len({a, b, FrozenMapping({"x": 2.0})}) == 2
    assert pickle.loads(pickle.dumps(a)) == a
    assert repr(a) == "FrozenMapping({'x': 1.0, 'y': 'z'})"


@pytest.mark.parametrize("path", EXAMPLES + TEST_CHAINS, ids=lambda p: p.stem)
def test_chains_hash_and_compare_by_value(path: Path) -> None:
    one, two = cb.load(path), cb.load(path)
    assert one is not two and one == two and hash(one) == hash(two)
    assert len({one, two}) == 1
    changed = one.replace("source.level", f"{one.source.level * 0.5!r} V")
    assert changed != one and changed.same_model(one) is False
    assert len({one, changed}) == 2


def test_a_chain_pickles() -> None:
    chain = cb.load(BUSKING)
    assert pickle.loads(pickle.dumps(chain)) == chain


# --- replace and with_values ---------------------------------------------------------------------


def _node(budget: cb.Budget, stage: str) -> object:
    return next(node for node in budget.nodes if node.stage == stage)


def test_replace_feedback_sets_the_non_inverting_gain() -> None:
    """``pre`` of the busking amp is non-inverting (Rg = 10 kohm, Cf = 100 pF, a generic
    op-amp of A0 = 1e5 and GBW = 10 MHz). After ``replace("pre.feedback", "22k")`` the
    computed stage gain is the textbook gain at the reference frequency."""
    chain = cb.load(BUSKING)
    pre = next(s for s in chain.stages if s.name == "pre")
    assert pre.values["topology"] == "non-inverting"
    rg, cf = pre.number("ground_leg"), pre.number("feedback_cap")
    part = chain.opamps[str(pre.values["opamp"])]
    f = chain.settings.reference
    for text, rf in (("4k7", 4.7e3), ("22k", 22e3), ("100k", 100e3)):
        budget = cb.compute(chain.replace("pre.feedback", text))
        gain = 10.0 ** (_node(budget, "pre").gain_db / 20.0)  # type: ignore[attr-defined]
        # Ideal op-amp: 1 + Rf/Rg. The finite loop gain lowers it by about
        # (1 + Rf/Rg) / |A(f)| relative, and Cf by about (2 pi f Rf Cf)^2 / 2.
        a_f = part.open_loop_gain / (1.0 + 1j * f * part.open_loop_gain / part.gbw)
        ideal = 1.0 + rf / rg
        allowance = 2.0 * (ideal / abs(a_f) + (2.0 * math.pi * f * rf * cf) ** 2 / 2.0)
        assert gain == pytest.approx(ideal, rel=allowance, abs=0.0)
        # With both: G = A / (1 + A beta), beta = Rg / (Rg + Zf), Zf = Rf || Cf.
        zf = rf / (1.0 + 2j * math.pi * f * rf * cf)
        beta = rg / (rg + zf)
        assert gain == pytest.approx(abs(a_f / (1.0 + a_f * beta)), rel=1e-5, abs=0.0)
        assert 20.0 * math.log10(gain) == pytest.approx(
            20.0 * math.log10(ideal), abs=20.0 * math.log10(1.0 + allowance)
        )
    # The replaced value is what the stage now holds; the original is unchanged.
    assert chain.replace("pre.feedback", "22k").stages[0].values["feedback"] == 22e3
    assert pre.values["feedback"] == 4.7e3


def test_replace_returns_a_new_chain_equal_elsewhere() -> None:
    chain = cb.load(BUSKING)
    new = chain.replace("pre.feedback", "22k")
    assert new is not chain and new.file == chain.file
    assert new.stages[1:] == chain.stages[1:]
    assert new.supplies == chain.supplies and new.opamps == chain.opamps
    assert new.settings == chain.settings and new.source == chain.source


@pytest.mark.parametrize("path", EXAMPLES + TEST_CHAINS, ids=lambda p: p.stem)
def test_no_change_gives_an_equal_chain(path: Path) -> None:
    """``with_values({})`` writes the chain out and reads it back: equal, bit for bit."""
    chain = cb.load(path)
    assert chain.with_values({}) == chain


def test_replace_then_round_trip_is_equal() -> None:
    new = cb.load(BUSKING).replace("pre.feedback", "22k")
    text = tomli_w.dumps(chain_to_dict(new))
    assert parse_chain(tomllib.loads(text), new.file) == new


def test_with_values_changes_several_at_once() -> None:
    chain = cb.load(BUSKING)
    new = chain.with_values({"pre.feedback": "22k", "volume.position": 0.3})
    assert new.stages[0].values["feedback"] == 22e3
    volume = next(s for s in new.stages if s.name == "volume")
    assert volume.values["position"] == 0.3
    assert new == chain.replace("pre.feedback", "22k").replace("volume.position", 0.3)


def test_replace_reaches_every_table() -> None:
    chain = cb.load(BUSKING)
    assert chain.replace("source.level", "-6 dBV").source.level == pytest.approx(
        10.0 ** (-6.0 / 20.0), rel=1e-12
    )
    assert chain.replace("load.impedance", "8 ohm").load.impedance == 8.0
    assert chain.replace("chain.reference", "2 kHz").settings.reference == 2000.0
    assert chain.replace("chain.title", "Louder").settings.title == "Louder"
    assert chain.replace("bat_plus.voltage", "13 V").supplies[0].values["voltage"] == 13.0
    assert chain.replace("supply.bat_plus.voltage", "13 V").supplies[0].values["voltage"] == 13.0
    assert chain.replace("stage.pre.feedback", "22k").stages[0].values["feedback"] == 22e3
    assert chain.replace("pre.bias_resistor", "47k").stages[0].values["bias_resistor"] == 47e3


def test_replace_a_part() -> None:
    """A shipped generic class is written out whole when changed: the changed class keeps
    every other figure, and the other classes stay as shipped."""
    chain = cb.load(BUSKING)
    name = str(chain.stages[0].values["opamp"])
    new = chain.replace(f"opamp.{name}.gbw", "1 MHz")
    assert new.opamps[name].gbw == 1e6
    assert new.opamps[name].slew_rate == chain.opamps[name].slew_rate
    assert {k: v for k, v in new.opamps.items() if k != name} == {
        k: v for k, v in chain.opamps.items() if k != name
    }
    assert new.replace("transistor.small_npn.beta", 100).transistors["small_npn"].beta == 100.0


def test_replace_with_none_returns_to_the_default() -> None:
    chain = cb.load(BUSKING)
    assert chain.stages[0].values["feedback_cap"] == 100e-12
    assert chain.replace("pre.feedback_cap", None).stages[0].values["feedback_cap"] is None


def test_a_bad_value_is_the_loaders_error() -> None:
    chain = cb.load(BUSKING)
    with pytest.raises(ChainFileError) as info:
        chain.replace("pre.feedback", "22 V")
    assert isinstance(info.value, cb.ChainError) and isinstance(info.value, ValueError)
    assert info.value.path == 'stage[1] "pre".feedback'
    assert str(info.value).startswith(f"{BUSKING}: stage[1] \"pre\".feedback: got '22 V'")
    with pytest.raises(cb.ChainError, match=r"bare number has no unit"):
        chain.replace("pre.feedback", 22000)
    with pytest.raises(cb.ChainError, match=r"pot position from 0 to 1"):
        chain.replace("volume.position", 1.5)


def test_an_unknown_stage_lists_the_names() -> None:
    chain = cb.load(BUSKING)
    with pytest.raises(ChainPathError) as info:
        chain.replace("pr.feedback", "22k")
    message = str(info.value)
    assert isinstance(info.value, cb.ChainError) and isinstance(info.value, ValueError)
    assert "\n" not in message and info.value.path == "pr.feedback"
    assert 'no stage, supply or table named "pr" (did you mean "pre"?)' in message
    assert "stages: pre, tone, volume, driver, buffer, output" in message
    assert "supplies: bat_plus, bat_minus" in message


def test_an_unknown_field_lists_the_fields() -> None:
    chain = cb.load(BUSKING)
    with pytest.raises(ChainPathError) as info:
        chain.replace("pre.feedbak", "22k")
    message = str(info.value)
    assert 'stage[1] "pre" (opamp_gain) has no field "feedbak" (did you mean "feedback"?)' in (
        message
    )
    assert "its fields: name, kind, topology, feedback, ground_leg" in message
    with pytest.raises(ChainPathError, match=r'\[source\] has no field "impedence"'):
        chain.replace("source.impedence", "1k")


def test_an_unknown_part_lists_the_parts() -> None:
    chain = cb.load(BUSKING)
    with pytest.raises(ChainPathError, match=r'no op-amp named "jfet_inptu" \(did you mean'):
        chain.replace("opamp.jfet_inptu.gbw", "1 MHz")
    with pytest.raises(ChainPathError, match=r"there are: .*small_npn"):
        chain.replace("transistor.tiny.beta", 100)


@pytest.mark.parametrize("path", ["feedback", "pre.", ".feedback", ""])
def test_a_path_without_a_table_or_a_field(path: str) -> None:
    with pytest.raises(ChainPathError, match="expected a stage or supply name"):
        cb.load(BUSKING).replace(path, "22k")


def test_a_name_shared_by_a_stage_and_a_supply_needs_the_long_form() -> None:
    chain = cb.loads(SMALL.replace('name = "level"', 'name = "battery"'))
    with pytest.raises(ChainPathError, match=r'write "stage.battery.pot" or "supply.battery.pot"'):
        chain.replace("battery.pot", "22k")
    assert chain.replace("stage.battery.pot", "22k").stages[1].values["pot"] == 22e3
    assert chain.replace("supply.battery.voltage", "12 V").supplies[0].values["voltage"] == 12.0


def test_a_stage_name_with_a_dot() -> None:
    """The field is what follows the last dot; a stage may be named ``level.main``."""
    chain = cb.loads(SMALL.replace('name = "level"', 'name = "level.main"'))
    assert chain.replace("level.main.pot", "22k").stages[1].values["pot"] == 22e3


def test_the_derived_chain_still_checks_its_references() -> None:
    """Renaming a supply that a stage names is refused as the loader refuses it."""
    chain = cb.loads(SMALL.replace('input = "10k"', 'input = "10k"\npositive = "battery"'))
    with pytest.raises(ChainFileError, match=r'stage\[1\] "gain".positive: no supply named'):
        chain.replace("battery.name", "cell")


# --- reprs ---------------------------------------------------------------------------------------


@pytest.mark.parametrize("path", EXAMPLES + TEST_CHAINS, ids=lambda p: p.stem)
def test_reprs_are_short(path: Path) -> None:
    chain = cb.load(path)
    text = repr(chain)
    assert len(text) <= 300 and "\n" not in text
    # a long title is clipped to keep the repr short
    assert text.startswith(f"<Chain {chain.settings.title[:20]!r}"[:-1])
    assert chain.stages[0].name in text
    parts = (*chain.opamps.values(), *chain.transistors.values())
    for item in (*chain.stages, *chain.supplies, *parts):
        assert len(repr(item)) <= 200 and "\n" not in repr(item)
        assert repr(item).startswith(f"<{type(item).__name__} ")


def test_repr_says_what_the_chain_is() -> None:
    text = repr(cb.load(BUSKING))
    # the file as given, its last 37 characters after "..." past 40 (wherever the checkout is)
    where = str(BUSKING) if len(str(BUSKING)) <= 40 else "..." + str(BUSKING)[-37:]
    assert text.startswith(f"<Chain 'Busking amp' {where}: 6 stages (pre opamp_gain, tone ")
    assert text.endswith("2 supplies (bat_plus dc, bat_minus dc)>")
    assert repr(cb.load(BUSKING).stages[0]).startswith(
        "<Stage stage[1] \"pre\" opamp_gain: topology='non-inverting' feedback=4700 "
    )


def test_repr_of_a_large_chain_stays_short() -> None:
    """Forty stages with long names, a long title and a long file name (their pots held
    out of the worst-case search, which takes at most 32)."""
    stages = "".join(
        f'[[stage]]\nname = "{"volume_control_number_" * 3}{i}"\nkind = "volume"\npot = "10k"\n'
        "sweep = false\n"
        for i in range(40)
    )
    head = SMALL[: SMALL.index("[[stage]]")].replace("Bench check", "A very long title " * 12)
    chain = cb.loads(head + stages, name="/some/deep/folder/" * 8 + "chain.toml")
    text = repr(chain)
    assert len(text) <= 300
    assert "+" in text and "more" in text


def test_html_repr_lists_and_escapes() -> None:
    title = 'Amp <script>alert("x")</script> & co'
    text = SMALL.replace('"Bench check"', tomli_w.dumps({"t": title})[4:].strip())
    text = text.replace('name = "level"', 'name = "lev<el>"')
    chain = cb.loads(text, name="a&b.toml")
    page = chain._repr_html_()
    assert "<script>" not in page and "lev<el>" not in page and "a&b" not in page
    assert html.escape(title) in page and "lev&lt;el&gt;" in page and "a&amp;b.toml" in page
    assert re.search(r"<td>stage 1</td><td>gain</td><td>opamp_gain</td>", page)
    assert re.search(r"<td>supply 1</td><td>battery</td><td>dc</td>", page)
    assert page.count("<tr>") == 1 + len(chain.stages) + len(chain.supplies)


# --- docs/api.md says what the code does ----------------------------------------------------------

API_DOC = ROOT / "docs" / "api.md"


def _blocks(language: str) -> list[str]:
    text = API_DOC.read_text(encoding="utf-8")
    return re.findall(rf"```{language}\n(.*?)```", text, flags=re.S)


def test_the_worked_example_runs(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(ROOT)
    exec(_blocks("python")[0], {})


def test_the_path_examples_run(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(ROOT)
    space = {"cb": cb, "chain": cb.load("chains/busking_amp.toml")}
    exec(_blocks("python")[1], space)
    assert set(space["sweep"]) == {0.2, 0.5, 0.8}
    assert space["trial"].stages[0].values["feedback"] == 22e3


def test_the_error_example_prints_what_it_says(capsys: pytest.CaptureFixture[str]) -> None:
    block = _blocks("python")[2]
    exec(block, {"cb": cb})
    said = " ".join(line.split("# ", 1)[1].strip() for line in block.splitlines() if "# " in line)
    assert capsys.readouterr().out.strip() == said


def test_the_repr_shown_is_the_repr(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(ROOT)
    (shown,) = _blocks("text")
    assert shown.strip() == repr(cb.load("chains/busking_amp.toml"))


def test_the_worked_example_figures_hold(monkeypatch: pytest.MonkeyPatch) -> None:
    """The figures the example's comments and prose quote, read from the node list."""
    monkeypatch.chdir(ROOT)
    chain = cb.load("chains/busking_amp.toml")
    for change, gain_db, headroom_db in ((None, 3.3, 12.7), ("22k", 10.1, 6.0)):
        budget = cb.compute(chain if change is None else chain.replace("pre.feedback", change))
        pre = _node(budget, "pre")
        assert round(pre.gain_db, 1) == gain_db  # type: ignore[attr-defined]
        assert round(pre.headroom_db, 1) == headroom_db  # type: ignore[attr-defined]
    codes = {(item.code, item.stage) for item in budget.findings}
    assert ("clip-worst-case", "tone") in codes
    assert {("thin-headroom", s) for s in ("driver", "buffer", "output")} <= codes


def test_a_table_entry_with_its_own_repr_keeps_it() -> None:
    """Stage and Supply get the compact repr from TableEntry although they are declared as
    dataclasses; a kind of entry that writes its own repr keeps its own."""
    from dataclasses import dataclass

    from chainbudget.fields import TableEntry

    @dataclass(frozen=True)
    class Own(TableEntry):
        table = "own"

        def __repr__(self) -> str:
            return "mine"

    @dataclass(frozen=True)
    class Plain(TableEntry):
        table = "plain"

    assert repr(Own(1, "a", "k", {})) == "mine"
    assert repr(Plain(1, "a", "k", {"x": 1.5})) == '<Plain plain[1] "a" k: x=1.5>'


def test_a_node_read_from_python_equals_the_command_json() -> None:
    """The figure a notebook reads is the one the command prints (one Budget field)."""
    budget = cb.compute(cb.load(BUSKING))
    done = subprocess.run(
        [sys.executable, "-m", "chainbudget", "check", str(BUSKING), "--format", "json"],
        capture_output=True,
        text=True,
        check=False,
    )
    assert done.returncode in (0, 1), done.stderr
    data = json.loads(done.stdout)
    for node in data["nodes"]:
        mine = budget.node(node["stage"])
        assert mine.headroom_db == node["headroom_db"]
        assert mine.gain_db == node["gain_db"]
    assert len(repr(budget)) < 200
