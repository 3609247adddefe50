"""A battery's (``dc`` supply's) figures over a leading trial axis: its internal resistance
and the reservoir across its terminals drawn within their tolerances (chainbudget/spread).

Notes
-----
A Thevenin source, emf E in series with its internal resistance R (Horowitz & Hill, The
Art of Electronics, 3rd ed., ch. 1, from memory). Per trial, through the formulas
`DcSupply.state` and `DcSupply.figures` use (`chainbudget.supplies.dc`: `terminal_v`,
`crest_drop_v`, `trough_v`, `collapses`) with R and the reservoir's C arrays (a reservoir
is drawn only beside a resistance above zero: with R = 0 it holds nothing up):

- the drop at the crest of the heaviest load, ``sag_v``: R times the steady current plus
  the crest of the pulses, less what a ``reservoir`` across the terminals holds up
  (`chainbudget.supplymath.pulsed_sags`, each trial's own time constant R C, both drawn);
- the trough, ``trough_v`` and ``output_min_v``: the low end (``min_voltage``) less that
  drop, no lower than zero: what the supplies and stages below take per trial;
- the mean at nominal voltage and load, ``vout_v`` and ``mean_v``: E - R I_nominal, which
  a filter, divider or regulator below takes as its parent's mean;
- ``resistance_ohm``, the drawn R, and ``reservoir_f``, the drawn C (with a reservoir);
- the rule ``supply-collapse`` as a flag per trial (`chainbudget.spread.flags`): the drop
  takes the whole of the low end under a load.

A battery has no mains ripple: its ripple passed on is none, as the nominal check's, and
its ``ripple_vpp`` is zero whatever R and C. Passed on to a regulator below
(`HighLine`): the means at the high end, E_high - R I under the heaviest and the idle
load, which it dissipates from, and the crest, the high end unloaded (the means are
steady drains, which the reservoir does not change). The crest, the run times (capacity
over the mean drain) and the peak current depend on neither R nor C and keep the nominal
check's values. ``sag_cost_db`` and the ``battery-resistance`` warning need the chain
solved again on a stiff supply per trial: the evaluation does that
(`chainbudget.spread.clip_tone`), taking this spread with R zero as the stiff battery
(whose drawn reservoir then holds nothing up).
The load is the nominal operating point's, or one per trial: a ``load`` whose currents
are (T,) arrays (the tree settled for each trial) gives each trial the figures its own
load gives, the same arithmetic element-wise.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from chainbudget.spread.flags import flag_key
from chainbudget.supplies.base import (
    HighLine,
    RippleSpread,
    Supply,
    SupplyLoad,
    SupplySpread,
    on_trials,
)
from chainbudget.supplies.dc import battery_ends, collapses, crest_drop_v, terminal_v, trough_v


def dc_spread(
    supply: Supply,
    resistance_ohm: ArrayLike,
    load: SupplyLoad,
    reservoir_f: ArrayLike | None = None,
) -> SupplySpread:
    """A battery's figures per trial (module notes) with internal resistance
    ``resistance_ohm`` and reservoir ``reservoir_f`` (each (T,) or one value; None: no
    reservoir) under ``load`` (the nominal one, or one per trial: its currents (T,)): its
    trough (what the rails and stages below take), its mean (passed on with no ripple)
    and the flag of ``supply-collapse``."""
    ends = battery_ends(supply)
    # one trial axis for the parts and the load, whichever of them holds it
    drawn_r, c = on_trials(load, resistance_ohm, reservoir_f)
    assert drawn_r is not None
    r = drawn_r
    drop = crest_drop_v(r, c, load)
    trough = trough_v(ends.low_v, drop)
    mean = terminal_v(ends.nominal_v, r, load.nominal_a)
    figures = {
        "resistance_ohm": r,
        "sag_v": drop,
        "trough_v": trough,
        "output_min_v": trough,
        "vout_v": mean,
        "mean_v": mean,
    }
    if c is not None:
        figures["reservoir_f"] = c
    flags = {flag_key("error", "supply-collapse", supply.name): collapses(ends.low_v, drop, load)}
    # no mains ripple: none passed on, the mean for a filter or regulator below, and the
    # high end for a regulator's heat
    high = HighLine(
        np.asarray(ends.high_v, dtype=float),
        terminal_v(ends.high_v, r, load.heaviest_a),
        terminal_v(ends.high_v, r, load.idle_a),
    )
    ripple = RippleSpread(None, np.zeros_like(r), np.zeros(0, dtype=complex), mean, high)
    return SupplySpread(figures, (), trough, ripple, flags)
