"""The figures of every example chain, held against the JSON taken before the house moved.

`tests/data/before_house/*.json` is the output of ``chainbudget check FILE --format json``
for each chain in ``chains/`` and ``tests/data/`` before the kinds took over their own
figures. A move of code must not move a figure: every number held there must come out the
same (rtol 1e-9, no absolute floor: noise figures are near 1e-6 V and densities far
smaller). A key that held null or an empty list may disappear (a kind's figure no longer printed for
another kind); a key that held a figure may not. Finding codes, severities and subjects
are held too; their wording may improve, and findings of rules added since may join them.
Chains added since have no figures held.

Changed on purpose since, each by a commit that says why: the ``thin-headroom`` warning on
``opamp_into_push_pull``'s driver is gone (the ``drive-shortfall`` error names its cause);
the kitchen radio's ``divider_suggestion`` is null (a pair worse than the file's own is no
suggestion); the busking amp's and the mains practice amp's DC-coupled buffers are built
at the operating point the DC check finds (the base at the driver's 0.71 V, not at a
base_bias of 0 V): each emitter sits near 0 V instead of -0.71 V, so the buffer's clip
level, headroom and dissipation and the driver's clip behind it moved;
``violin_piezo_preamp``'s piezo is a 1 nF capacitance with 1 kohm of loss in
series instead of a 470 kohm resistor (a reactive source's noise is 4kT Re Z_S): its noise
figures, noise sources and ``noise_set_by`` ("buffer", no longer "source") moved, and its
levels by about 1e-9 relative (a different source impedance against the buffer's floating
input). The rectifier's quadrature panels end where a pulse of the load does (a kink a
panel straddled before): the kitchen radio's and the mains practice amp's rectified
figures moved toward a direct integration's, by up to 3e-5 relative (the practice amp's
reservoir ripple current; `tests/test_rectifier.py` holds them to it within 2e-6). Their
currents and ripple are the largest over the relative phases of signal and mains, no
longer read at the phase of the lowest trough: by up to 2e-5 relative (the kitchen
radio's diode peak).
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest

from chainbudget.chainfile import load_chain
from chainbudget.report.json_view import report_json

ROOT = Path(__file__).resolve().parents[1]
HELD = ROOT / "tests" / "data" / "before_house"
# Every chain that has held figures (a chain added since has none to hold; a held chain may
# not disappear).
CHAINS = sorted(
    path
    for path in [*(ROOT / "chains").glob("*.toml"), *(ROOT / "tests" / "data").glob("*.toml")]
    if (HELD / f"{path.stem}.json").exists()
)
RTOL = 1e-9
# Parts of the old JSON that are prose, not figures.
PROSE = {"message", "cautions", "file"}


def _compare(held: Any, now: Any, path: str, problems: list[str]) -> None:
    if isinstance(held, dict):
        if not isinstance(now, dict):
            problems.append(f"{path}: was an object, now {now!r}")
            return
        for key, value in held.items():
            if key in PROSE:
                continue
            if key not in now:
                if value not in (None, []):
                    problems.append(f"{path}.{key}: held {value!r}, now missing")
                continue
            _compare(value, now[key], f"{path}.{key}", problems)
    elif isinstance(held, list):
        if not isinstance(now, list) or len(now) != len(held):
            problems.append(f"{path}: held {len(held)} items, now {now!r:.200}")
            return
        for i, (a, b) in enumerate(zip(held, now, strict=True)):
            _compare(a, b, f"{path}[{i}]", problems)
    elif isinstance(held, bool) or held is None or isinstance(held, str):
        if held != now:
            problems.append(f"{path}: held {held!r}, now {now!r}")
    elif isinstance(held, int | float):
        if not isinstance(now, int | float) or isinstance(now, bool):
            problems.append(f"{path}: held {held!r}, now {now!r}")
        elif now != pytest.approx(held, rel=RTOL, abs=0.0):
            problems.append(f"{path}: held {held!r}, now {now!r}")


def _findings(data: dict[str, Any]) -> list[dict[str, Any]]:
    """Findings other than cautions, in a fixed order (their order within a severity may
    follow the chain now)."""
    kept = [f for f in data["findings"] if f["severity"] != "caution"]
    return sorted(
        kept, key=lambda f: (f["severity"], f["code"], f["stage"] or "", f["supply"] or "")
    )


def _key(finding: dict[str, Any]) -> tuple[str, str, str, str]:
    return (finding["severity"], finding["code"], finding["stage"] or "", finding["supply"] or "")


def test_every_held_chain_is_still_there() -> None:
    assert len(CHAINS) == len(list(HELD.glob("*.json")))


@pytest.mark.parametrize("path", CHAINS, ids=lambda p: p.stem)
def test_every_figure_of_the_examples_is_held(path: Path) -> None:
    """Every held figure and finding is still there; new keys and new findings (a rule
    added since, such as the output stage's bias) are welcome."""
    held = json.loads((HELD / f"{path.stem}.json").read_text())
    now = json.loads(json.dumps(report_json(load_chain(path))))
    problems: list[str] = []
    _compare({k: v for k, v in held.items() if k != "findings"}, now, "", problems)
    held_findings = _findings(held)
    kept = {_key(f) for f in held_findings}
    now_findings = [f for f in _findings(now) if _key(f) in kept]
    _compare(held_findings, now_findings, "findings", problems)
    assert not problems, "\n".join(problems[:20])
