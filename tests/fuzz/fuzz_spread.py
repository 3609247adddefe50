"""The fuzz of `spread` on mutated chains, by hand (each case takes seconds: its corners and
sensitivities are solved whatever the trial count).

    .venv/bin/python tests/fuzz/fuzz_spread.py --cases 100 [--trials 3] [--keep DIR]

Draws mutated example chains (tests/fuzzkit.py), keeps those the check analyses, and runs
the whole spread on each (`run_spread`, a few trials, warnings as errors, a time limit),
then its JSON with NaN refused. A case ends ``analysed``, ``refused`` (a one-line
`ChainError` or `SpreadError`) or failed (any other exception, or a refusal over several
lines); the failing cases' TOML goes to ``--keep`` for replay and the run exits 1. Not
collected by pytest (``--ignore=tests/fuzz``).
"""

from __future__ import annotations

import argparse
import json
import sys
import tempfile
import traceback
import warnings
from collections import Counter
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

import fuzzkit  # noqa: E402
from hypothesis import HealthCheck, Phase, given, settings  # noqa: E402

from chainbudget import ChainError  # noqa: E402
from chainbudget.budget import compute  # noqa: E402
from chainbudget.chainfile import loads_chain  # noqa: E402
from chainbudget.spread.run import SpreadError, run_spread  # noqa: E402
from chainbudget.spread.view import spread_json  # noqa: E402


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cases", type=int, default=100)
    parser.add_argument("--trials", type=int, default=3)
    parser.add_argument("--seconds", type=float, default=300.0)
    parser.add_argument("--keep", type=Path, default=Path(tempfile.mkdtemp(prefix="spreadfuzz-")))
    args = parser.parse_args()
    endings: Counter[str] = Counter()
    failures: list[tuple[str, str, str]] = []

    @settings(
        max_examples=args.cases,
        deadline=None,
        database=None,
        phases=[Phase.generate],
        suppress_health_check=list(HealthCheck),
    )
    @given(fuzzkit.cases())
    def one(case: fuzzkit.Case) -> None:
        with warnings.catch_warnings():
            warnings.simplefilter("error")
            try:
                chain = loads_chain(case.text, fuzzkit.FILE)
                compute(chain)
            except Exception:  # the check's own fuzz judges these (fuzz_chains.py)
                endings["not analysed by the check"] += 1
                return
            try:
                with fuzzkit.time_limit(args.seconds):
                    result = run_spread(chain, args.trials, 1)
                    json.dumps(spread_json(result, "fuzz", fuzzkit.FILE), allow_nan=False)
                endings["analysed"] += 1
            except (ChainError, SpreadError) as exc:
                if "\n" in str(exc):
                    failures.append(("refusal over several lines", str(exc)[:300], case.text))
                endings["refused"] += 1
            except fuzzkit.Hang as exc:
                failures.append(("hang", str(exc), case.text))
            except Exception as exc:
                failures.append((type(exc).__name__, traceback.format_exc()[-1200:], case.text))

    one()
    args.keep.mkdir(parents=True, exist_ok=True)
    for i, (kind, detail, text) in enumerate(failures):
        kept = args.keep / f"spread_case_{i}.toml"
        kept.write_text(text, encoding="utf-8")
        print(f"--- {kind}: {kept}\n{detail}")
    print(dict(endings), f"failed: {len(failures)}")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
