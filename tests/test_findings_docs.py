"""docs/findings.md lists every finding code the rules can emit, with its severity."""

from __future__ import annotations

import ast
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def emitted_codes() -> set[tuple[str, str]]:
    """(code, severity) of every literal Finding(...) in the package: the generic rules in
    chainbudget/findings/ and each kind's own rules under stages/ and supplies/."""
    found = set()
    for path in (ROOT / "chainbudget").rglob("*.py"):
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.Call) and getattr(node.func, "id", None) == "Finding":
                severity, code = node.args[0], node.args[1]
                if isinstance(code, ast.Constant):
                    level = severity.value if isinstance(severity, ast.Constant) else "?"
                    found.add((str(code.value), str(level)))
    return found


def test_every_finding_code_is_documented_with_its_severity() -> None:
    text = (ROOT / "docs" / "findings.md").read_text(encoding="utf-8")
    rows = {
        line.split("|")[1].strip().strip("`"): line.split("|")[2]
        for line in text.splitlines()
        if line.startswith("| `")
    }
    codes = emitted_codes()
    assert len(codes) > 30
    for code, severity in codes:
        assert code in rows, f"{code} missing from docs/findings.md"
        if severity != "?":
            assert severity in rows[code], f"{code}: docs say {rows[code]!r}, code {severity}"
