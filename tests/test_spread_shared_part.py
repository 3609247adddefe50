"""Two stages naming one transistor part are two devices, each with its own beta drawn
(docs/tolerances.md): the busking amp's emitter follower and its output stage's upper
driver both name `driver_npn`. Brute force: four trials, each written into the file with
each stage's transistor a part of its own carrying that stage's drawn beta
(`test_spread.trial_chain`) and checked alone; every spread figure equals the check's."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from test_spread import _json_figure, checked, trial_chain

from chainbudget.budget import compute
from chainbudget.budget.supplies import settle
from chainbudget.chainfile import load_chain
from chainbudget.spread.evaluate import Evaluator
from chainbudget.spread.flags import is_flag
from chainbudget.spread.parts import chain_parts

BUSKING = Path(__file__).resolve().parents[1] / "chains" / "busking_amp.toml"


def test_stages_sharing_a_transistor_part_draw_a_beta_each() -> None:
    chain = load_chain(BUSKING)
    parts, _ = chain_parts(chain)
    shared = [p for p in parts if p.is_beta and chain.stages[p.index].values[p.key] == "driver_npn"]
    assert {p.label for p in shared} == {"buffer.transistor beta", "output.driver_upper beta"}
    evaluate = Evaluator(chain, tuple(parts), compute(chain), settle(chain, "low").voltages)
    positions = np.random.default_rng(5).random((4, len(parts)))
    batched = evaluate(positions)
    index = [parts.index(p) for p in shared]
    # the two devices' betas differ in every trial: a model that took one for both would
    # meet the check of a file that gives each its own in none
    assert np.all(positions[:, index[0]] != positions[:, index[1]])
    for t in range(len(positions)):
        budget, data = checked(trial_chain(chain, parts, evaluate.values(positions[t : t + 1])))
        for path in (p for p in batched if not is_flag(p)):
            want = _json_figure(data, path, budget)
            assert batched[path][t] == pytest.approx(want, rel=1e-9, abs=1e-12), (path, t)
