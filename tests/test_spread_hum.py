"""The spread of the hum, the noise at every node and the op-amp loops: brute force, one
trial at a time through the real check, and closed forms of a textbook stage."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from test_spread import _chain, _json_figure, _si

from chainbudget.chainfile import Chain

ROOT = Path(__file__).resolve().parents[1]

# The kitchen radio with its reservoir held exact: the spread holds each rail's ripple
# spectrum at the nominal check's (docs/tolerances.md), so a brute force that draws the
# reservoir would move the ripple the spread holds.
KITCHEN = (ROOT / "chains" / "kitchen_radio_mains.toml").read_text()
# The regulator's parts held too: a drawn output moves its bleeder's and the stages'
# currents, and with them the raw rail's load and ripple, which the spread (settling the
# power tree once, for the nominal parts) holds.
KITCHEN_HELD_RIPPLE = KITCHEN.replace(
    'reservoir = "2200 uF"', 'reservoir = "2200 uF"\ntolerance = { reservoir = "0 %" }', 1
).replace(
    'bleeder = "5k6"',
    'bleeder = "5k6"\n'
    'tolerance = { reference = "0 %", upper = "0 %", lower = "0 %", bleeder = "0 %" }',
    1,
)

FAMILIES = ("hum", "nodes", "loop", "noise", "input_noise", "ein", "noise_figure", "dynamic")


def _evaluator(chain: Chain):  # noqa: ANN202
    from chainbudget.budget import compute
    from chainbudget.budget.supplies import settle
    from chainbudget.spread.evaluate import Evaluator
    from chainbudget.spread.parts import chain_parts

    parts, _ = chain_parts(chain)
    return parts, Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)


def _changes(chain: Chain, parts, values) -> dict[str, object]:  # noqa: ANN001
    changes: dict[str, object] = {}
    for part, value in zip(parts, values, strict=True):
        if part.is_beta:
            name = chain.stages[part.index].values[part.key]
            changes[f"transistor.{name}.beta"] = float(value[0])
        elif part.part_class == "references":
            changes[f"{part.table}.{part.owner}.{part.key}"] = f"{float(value[0])!r} V"
        else:
            changes[f"{part.table}.{part.owner}.{part.key}"] = f"{float(value[0])!r} {_si(part)}"
    return changes


def _in_db(path: str) -> bool:
    """Noise and hum (tiny voltages) are compared in dB."""
    key = path.rsplit(".", 1)[-1]
    return key.endswith("_vrms") or key.endswith("_rthz")


def test_hum_noise_and_loops_of_each_trial_equal_the_check_of_that_trial() -> None:
    """Brute force, one sample at a time: each of four trials of the kitchen radio written
    into the file (`Chain.with_values`, regulator and op-amp stages' parts drawn) and checked
    on its own gives the batched hum (every node, the output unweighted and A-weighted, the
    input-referred hum, hum over noise, hum at 1 m), the noise at every node, the
    input-referred noise and EIN, the noise figure, dynamic range, each stage's share of
    the output noise and the op-amp loops' gain, unity-gain frequency and phase margin:
    rtol 1e-9 (noise and hum compared in dB, 1e-8 dB)."""
    from chainbudget.budget import compute
    from chainbudget.report.json_view import budget_json

    chain = _chain(KITCHEN_HELD_RIPPLE)
    parts, evaluate = _evaluator(chain)
    positions = np.random.default_rng(14).random((4, len(parts)))
    batched = evaluate(positions)
    wanted = [
        p
        for p in batched
        if p.startswith(("hum.", "noise.", "input_noise", "ein", "noise_figure", "dynamic"))
        or p.endswith(("hum_vrms", "noise_vrms", "noise_a_vrms", "noise_468_vrms"))
        or p.endswith(("noise_density_v_rthz", "snr_db", "snr_a_db"))
        or p.endswith(("loop_gain_db", "unity_gain_hz", "phase_margin_deg"))
    ]
    for key in ("hum.output_vrms", "hum.output_a_vrms", "hum.hum_to_noise_db", "hum.spl_a_db"):
        assert key in wanted
    assert "nodes.pre.hum_vrms" in wanted and "nodes.pre.noise_vrms" in wanted
    assert "nodes.tone.phase_margin_deg" in wanted and "ein_a_dbu" in wanted
    for path in wanted:  # the parts move every one of them
        assert np.ptp(batched[path]) > 0.0, path
    for t in range(len(positions)):
        values = evaluate.values(positions[t : t + 1])
        edited = chain.with_values(_changes(chain, parts, values))
        budget = compute(edited)
        data = json.loads(json.dumps(budget_json(budget, list(budget.findings))))
        held_ripple = _hum_on_nominal_ripple(edited, evaluate.nominal, budget)
        for path in wanted:
            held = _json_figure(data, path)
            if _is_hum(path):
                # the check of the trial, its hum summed from the nominal check's ripple
                exact = held_ripple[path]
                got, want = _db(path, batched[path][t]), _db(path, exact)
                assert got == pytest.approx(want, rel=0, abs=1e-8), (path, t)
                # the whole check of the trial: its rails' ripple moves with the loads
                assert batched[path][t] == pytest.approx(held, rel=1e-3), (path, t)
            elif _in_db(path):
                got, want = 20 * math.log10(batched[path][t]), 20 * math.log10(held)
                assert got == pytest.approx(want, rel=0, abs=1e-8), (path, t)
            else:
                assert batched[path][t] == pytest.approx(held, rel=1e-9, abs=1e-12), (path, t)


def _is_hum(path: str) -> bool:
    return path.startswith("hum.") or path.endswith(".hum_vrms")


def _db(path: str, value: float) -> float:
    """A figure in dB: a level as it is, a voltage as 20 log10 of it."""
    return float(value) if path.endswith("_db") else 20 * math.log10(value)


def _hum_on_nominal_ripple(chain: Chain, nominal, budget) -> dict[str, float]:  # noqa: ANN001
    """The check's hum budget of one trial (`chainbudget.budget.hum.hum_budget`, the chain
    solved alone at its scalar parts) on the nominal check's rail ripple, keyed as the
    spread keys it."""
    from chainbudget.budget.hum import hum_budget
    from chainbudget.budget.supplies import loaded_analysis

    noise = budget.noise.output.noise_a_vrms
    hum, _ = hum_budget(loaded_analysis(chain, corner="low"), nominal.supplies, noise)
    found = {
        "hum.output_vrms": hum.output_vrms,
        "hum.output_a_vrms": hum.output_a_vrms,
        "hum.input_vrms": hum.input_vrms,
        "hum.input_a_vrms": hum.input_a_vrms,
        "hum.hum_to_noise_db": hum.hum_to_noise_db,
        "hum.spl_db": hum.spl_db,
        "hum.spl_a_db": hum.spl_a_db,
    }
    for stage, vrms in zip(chain.stages, hum.node_vrms, strict=True):
        found[f"nodes.{stage.name}.hum_vrms"] = vrms
    return found
