"""Hostile and broken chain files, a few hundred of them: one clear line or a clean analysis.

The cases are the structure-aware fuzz of tests/fuzzkit.py (mutated example chains). Each is
run in-process: it must end as a refusal (a `ChainError` of one printable line starting with
the file) or a completed analysis whose JSON holds no NaN or infinite figure (the output's
clip figures excepted where nothing limits the swing: they are unbounded by design and
print as null), with numpy's warnings as errors and a time limit. A handful go through the
real command in a subprocess (exit 2 with one line on stderr, or exit 0/1 with JSON).
The long run of 10,000 cases and more is tests/fuzz/fuzz_chains.py, by hand.

The table view is left out here: it prints the file's text as rich markup, which the report
views are to escape (see test_cli.py's strict xfail); the long run counts it.
"""

from __future__ import annotations

from pathlib import Path

import fuzzkit
from hypothesis import HealthCheck, given, settings

FAST = settings(
    max_examples=300,
    deadline=None,
    derandomize=True,
    database=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)


@FAST
@given(fuzzkit.cases())
def test_a_mutated_chain_is_refused_in_one_line_or_analysed(case: fuzzkit.Case) -> None:
    outcome = fuzzkit.run_case(case.text, seconds=120.0, table=False)
    assert not outcome.failed, f"{outcome.ending}: {outcome.detail}"


@settings(
    max_examples=6,
    deadline=None,
    derandomize=True,
    database=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture],
)
@given(fuzzkit.cases())
def test_the_real_command_on_mutated_chains(tmp_path: Path, case: fuzzkit.Case) -> None:
    """Exit 2 with one line on stderr naming the file, or exit 0/1 with JSON."""
    status, out, err = fuzzkit.run_command(case.text, tmp_path)
    problem = fuzzkit.command_problem(status, out, err, str(tmp_path / fuzzkit.FILE))
    assert problem is None, problem


@settings(
    max_examples=60,
    deadline=None,
    derandomize=True,
    database=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)
@given(fuzzkit.extreme_cases())
def test_values_anywhere_in_their_hard_range(case: fuzzkit.Case) -> None:
    """Values past the plausible range but written as meant (prefix in full), up to the
    hard limits: the analysis holds up, or the chain is refused in one line."""
    outcome = fuzzkit.run_case(case.text, seconds=120.0, table=False)
    assert not outcome.failed, f"{outcome.ending}: {outcome.detail}"


def test_the_seeds_analyse_cleanly() -> None:
    """Every seed, thinned as the fuzz thins it, is a clean analysis (so that a mutation,
    not the seed, is what each case tries)."""
    import tomli_w

    for name, data in fuzzkit.SEEDS.items():
        thinned = {**data, "chain": {**data.get("chain", {}), "points_per_decade": 4}}
        outcome = fuzzkit.run_case(tomli_w.dumps(thinned), table=False)
        assert outcome.ending == "analysed", f"{name}: {outcome.ending} {outcome.detail}"
