"""The docs say what the code does: the field reference is current."""

from __future__ import annotations

from pathlib import Path

from chainbudget.blocks import with_reference

DOCS = Path(__file__).resolve().parents[1] / "docs"


def test_format_reference_lists_every_field_as_the_code_declares_it() -> None:
    text = (DOCS / "format.md").read_text(encoding="utf-8")
    assert text == with_reference(text), "run `python -m chainbudget.blocks` to regenerate"
