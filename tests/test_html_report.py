"""The report page: one self-contained HTML file, checked with a parser, and in a real browser
where one is installed."""

from __future__ import annotations

import html
import json
import re
import shutil
import subprocess
import sys
from html.parser import HTMLParser
from pathlib import Path

import pytest
from typer.testing import CliRunner

from chainbudget.cli import app

CHAINS = Path(__file__).resolve().parents[1] / "chains"
runner = CliRunner()

# Elements that never have an end tag (HTML Living Standard, "void elements").
VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source",
        "track", "wbr"}  # fmt: skip


class PageParser(HTMLParser):
    """Checks that every element is closed in order and records what the page holds."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.open: list[str] = []
        self.problems: list[str] = []
        self.counts: dict[str, int] = {}
        self.ids: list[str] = []
        self.fetches: list[str] = []
        self.text: list[str] = []
        self.captions: list[str] = []
        self._in_caption = False
        self.svg_labels: list[str] = []
        self.doctype = False

    def handle_decl(self, decl: str) -> None:
        self.doctype = self.doctype or decl.lower() == "doctype html"

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.counts[tag] = self.counts.get(tag, 0) + 1
        values = dict(attrs)
        if "id" in values and values["id"] is not None:
            self.ids.append(values["id"])
        for name, value in attrs:
            # Anything the browser would fetch: a source, a stylesheet, an external reference.
            if name in ("src", "srcset", "data", "action", "formaction") or (
                name.endswith("href") and value is not None and not value.startswith("#")
            ):
                self.fetches.append(f"{tag} {name}={value}")
        if tag == "svg":
            self.svg_labels.append(values.get("aria-label") or "")
        if tag == "caption":
            self._in_caption = True
            self.captions.append("")
        if tag not in VOID:
            self.open.append(tag)

    def handle_startendtag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        # <path ... /> inside SVG: opened and closed at once.
        self.counts[tag] = self.counts.get(tag, 0) + 1
        values = dict(attrs)
        if "id" in values and values["id"] is not None:
            self.ids.append(values["id"])
        for name, value in attrs:
            if name.endswith("href") and value is not None and not value.startswith("#"):
                self.fetches.append(f"{tag} {name}={value}")

    def handle_endtag(self, tag: str) -> None:
        if tag == "caption":
            self._in_caption = False
        if tag in VOID:
            return
        if not self.open or self.open[-1] != tag:
            self.problems.append(f"</{tag}> closes <{self.open[-1] if self.open else None}>")
            return
        self.open.pop()

    def handle_data(self, data: str) -> None:
        self.text.append(data)
        if self._in_caption:
            self.captions[-1] += data


@pytest.fixture(scope="module")
def page(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, str, dict[str, object]]:
    """The report page of the busking amp (cautions, a power stage, every table), and the
    JSON report of the same chain."""
    target = tmp_path_factory.mktemp("html") / "build.html"
    chain = str(CHAINS / "busking_amp.toml")
    done = runner.invoke(app, ["check", chain, "--format", "html", "-o", str(target)])
    report = json.loads(runner.invoke(app, ["check", chain, "--format", "json"]).output)
    assert done.exit_code == (1 if any(f["severity"] == "error" for f in report["findings"]) else 0)
    return target, target.read_text(encoding="utf-8"), report


def parsed(text: str) -> PageParser:
    parser = PageParser()
    parser.feed(text)
    parser.close()
    return parser


def test_the_page_is_well_formed_and_self_contained(page: tuple[Path, str, dict]) -> None:
    _, text, _ = page
    parser = parsed(text)
    assert parser.doctype
    assert parser.problems == [] and parser.open == []
    for tag in ("html", "head", "body", "title", "h1", "main"):
        assert parser.counts.get(tag) == 1, tag
    head = text[: text.index("</head>")]
    assert head.count("<style>") == 1  # the page's own CSS, inline (each SVG adds its own)
    assert "script" not in parser.counts and "iframe" not in parser.counts
    assert "link" not in parser.counts and "img" not in parser.counts
    assert parser.fetches == []
    assert re.search(r"url\((?!#)", text) is None and "@import" not in text  # url(#id): inline
    assert len(parser.ids) == len(set(parser.ids)), "an id used twice (inline SVGs share one page)"


def test_the_page_holds_the_verdict_findings_tables_and_pictures(
    page: tuple[Path, str, dict],
) -> None:
    _, text, report = page
    parser = parsed(text)
    words = " ".join(parser.text)
    assert "Works" in words or "Does not work" in words
    for finding in report["findings"]:
        assert finding["code"] in words or finding["severity"] == "caution"
        assert finding["message"] in words
    captions = " | ".join(parser.captions)
    for title in ("Levels at the reference", "Headroom of max_level", "Nodes: impedances",
                  "Noise over", "Largest noise sources", "Supplies", "Findings"):  # fmt: skip
        assert title in captions, title
    for node in report["nodes"]:
        assert node["stage"] in words
    assert parser.counts.get("svg") == 5 and parser.counts.get("figure") == 5
    for label, name in zip(
        parser.svg_labels, ("response", "square", "levels", "noise", "headroom"), strict=True
    ):
        assert label.startswith(f"{name}: ")
    assert html.escape("A-weighted") in text or "A-weighted" in words


def test_check_will_not_overwrite_without_force(tmp_path: Path) -> None:
    chain = str(CHAINS / "desk_speaker_preamp.toml")
    target = tmp_path / "build.html"
    target.write_text("mine", encoding="utf-8")
    refused = runner.invoke(app, ["check", chain, "-f", "html", "-o", str(target)])
    assert refused.exit_code == 2 and target.read_text(encoding="utf-8") == "mine"
    forced = runner.invoke(app, ["check", chain, "-f", "html", "-o", str(target), "--force"])
    assert forced.exit_code in (0, 1) and target.read_text(encoding="utf-8").startswith("<!DOCTYPE")


def test_check_writes_json_to_a_file_as_it_prints_it(tmp_path: Path) -> None:
    chain = str(CHAINS / "desk_speaker_preamp.toml")
    target = tmp_path / "report.json"
    printed = runner.invoke(app, ["check", chain, "-f", "json"]).output
    assert runner.invoke(app, ["check", chain, "-f", "json", "-o", str(target)]).exit_code in (0, 1)
    assert json.loads(target.read_text(encoding="utf-8")) == json.loads(printed)
    table = tmp_path / "report.txt"
    assert runner.invoke(app, ["check", chain, "-o", str(table)]).exit_code in (0, 1)
    assert "Levels at the reference" in table.read_text(encoding="utf-8")


def test_check_without_html_never_loads_matplotlib(tmp_path: Path) -> None:
    """The whole table and JSON paths run without matplotlib (architecture guide)."""
    code = (
        "import sys; from chainbudget.cli import app\n"
        f"for fmt in ('table', 'json'):\n"
        f"    try: app(['check', {str(CHAINS / 'busking_amp.toml')!r}, '-f', fmt, '-o', "
        f"{str(tmp_path / 'out')!r} + fmt])\n"
        "    except SystemExit: pass\n"
        "assert 'matplotlib' not in sys.modules, 'matplotlib loaded'\n"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=False)
    assert done.returncode == 0, done.stderr


def _browser() -> str | None:
    return shutil.which("chromium") or shutil.which("chromium-browser")


@pytest.mark.skipif(
    _browser() is None,
    reason="no headless Chromium on this machine (chromium or chromium-browser on PATH); "
    "the tests do not install one",
)
def test_a_real_browser_renders_the_page(page: tuple[Path, str, dict], tmp_path: Path) -> None:
    """Headless Chromium renders the page to a PNG that is not blank: dark pixels (text and
    curves) on the white page."""
    from matplotlib import image

    source, _, _ = page
    shot = tmp_path / "page.png"
    browser = _browser()
    assert browser is not None
    subprocess.run(
        [
            browser,
            "--headless",
            "--disable-gpu",
            "--no-sandbox",
            "--hide-scrollbars",
            "--window-size=1200,6000",
            f"--screenshot={shot}",
            source.resolve().as_uri(),
        ],
        capture_output=True,
        timeout=120,
        check=True,
    )
    pixels = image.imread(shot)
    dark = (pixels[..., :3].mean(axis=-1) < 0.5).mean()
    assert 0.005 < dark < 0.5


def test_every_inline_picture_is_well_formed_and_its_references_resolve(
    page: tuple[Path, str, dict],
) -> None:
    """Each inline SVG parses as XML, and every url(#id) and href="#id" in it names an id of
    the same picture (the ids are prefixed per picture so that five pictures share a page)."""
    from xml.etree import ElementTree

    _, text, _ = page
    chunks = re.findall(r"<svg .*?</svg>", text, flags=re.DOTALL)
    assert len(chunks) == 5
    for chunk in chunks:
        root = ElementTree.fromstring(chunk)
        ids = {el.get("id") for el in root.iter() if el.get("id")}
        wanted = set(re.findall(r"url\(#([^)]+)\)", chunk)) | set(
            re.findall(r'href="#([^"]+)"', chunk)
        )
        assert wanted and wanted <= ids, sorted(wanted - ids)[:5]
