"""Per trial, what an attenuating stage ahead of the main gain costs in output SNR: the
check's placement note (``noise-attenuator-before-gain``) over the trial axis, from the
noise the batch has already solved.

Notes
-----
`chainbudget.budget.noise_placement.placement_costs` moves a volume or tone stage (not in
a loop) to just after the main gain (the later section, not the last, with the most
voltage gain at the reference, if over `MAIN_GAIN_MIN_DB`) and solves the moved chain's
noise again; the note is drawn where the output SNR at the nominal level would rise by
more than `chainbudget.thresholds.PLACEMENT_LIFT_DB`.

Here nothing is solved again. Moving a stage changes no section's own network, only the
terminations each section meets, so:

- the moved chain's terminations and its signal at the output are the cascade's two-port
  algebra on the sections' chain parameters (Z_out = (D Z_S + B)/(C Z_S + A) forward,
  Y_in = (C + D Y_L)/(A + B Y_L) backward, V2/V1 = 1/(A + B Y_L); Pozar, Microwave
  Engineering, 4th ed., sec. 4.4), as `chainbudget.cascade.cascade` joins them;
- each generator's voltage at its section's output under the moved terminations follows
  from its two port transfers as solved (`chainbudget.budget.noise_spectra.UnitNoise.
  out_under`: the noisy two-port as a noiseless one with a series e and shunt i at its
  input), then reaches the output through the loaded voltage ratios of the sections after;
- the source's thermal noise reaches the output as the signal does.

The main gain is chosen per trial (the drawn parts may change which later section has
the most gain); a candidate is worked out only where some trial chooses it. The lift is a
figure (``noise.placement.STAGE.lift_db``, the check JSON's) for each stage the nominal
check lists; in a trial whose largest later gain falls to `MAIN_GAIN_MIN_DB` or under,
the check of that build lists no placement, the figure stays the lift of moving the
stage after that section, and the note is not drawn.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget import Budget
from chainbudget.budget.noise_placement import MAIN_GAIN_MIN_DB
from chainbudget.budget.noise_spectra import NoiseSpectra, UnitNoise, unweighted
from chainbudget.cascade import Cascade
from chainbudget.chainfile import Chain
from chainbudget.loops import Section
from chainbudget.network import Complex, TwoPort
from chainbudget.spread.flags import as_flag, flag_key
from chainbudget.stages import KINDS
from chainbudget.thresholds import PLACEMENT_LIFT_DB

#: The code whose flag this module works out per trial.
CODE = "noise-attenuator-before-gain"


def _db20(ratio: NDArray[np.float64]) -> NDArray[np.float64]:
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.asarray(20.0 * np.log10(ratio), dtype=float)


def placement_figures(
    chain: Chain,
    spectra: NoiseSpectra,
    as_set: Cascade,
    snr_db: NDArray[np.float64],
    trials: int,
    nominal: Budget,
) -> dict[str, NDArray[np.float64]]:
    """The lift of each stage the nominal check's placement lists
    (``noise.placement.STAGE.lift_db``) and the flag of ``noise-attenuator-before-gain``
    of every stage that may draw it, per trial, shape (T,).

    ``snr_db`` is the output's SNR at the nominal level per trial (as built); ``spectra``
    the batch's noise with its units' port transfers, ``as_set`` its cascade.
    """
    stages = chain.stages
    n = len(stages)
    units = as_set.sections or tuple(Section(k, k) for k in range(n))
    ports = as_set.section_ports or tuple(as_set.stages[u.first].two_port for u in units)
    shape = (trials, spectra.frequency.size)
    gain = {
        unit: _db20(_at(np.abs(as_set.v_out[unit.last] / as_set.v_in[unit.first]), shape)[:, 0])
        for unit in units
    }
    listed = {p.stage for p in nominal.noise.placement} if nominal.noise else set()
    found: dict[str, NDArray[np.float64]] = {}
    for v, stage in enumerate(stages):
        if not KINDS[stage.kind].attenuates or as_set.section(v).is_loop:
            continue
        after = [u for u in units if u.first > v and u.last < n - 1]
        if not after:
            continue
        gains = np.stack([gain[u] for u in after])  # (U, T)
        choice = np.argmax(gains, axis=0)  # the first of equal gains, as the check's max
        lift = np.full(trials, np.nan)
        for c in np.unique(choice):
            moved = _moved_snr_db(chain, spectra, as_set, units, ports, v, after[c], shape)
            lift = np.where(choice == c, moved - snr_db, lift)
        main_gain = np.max(gains, axis=0)
        with np.errstate(invalid="ignore"):
            drawn = (main_gain > MAIN_GAIN_MIN_DB) & np.isfinite(lift) & (lift > PLACEMENT_LIFT_DB)
        found[flag_key("note", CODE, stage.name)] = as_flag(drawn, trials)
        if stage.name in listed:
            found[f"noise.placement.{stage.name}.lift_db"] = lift
    return found


def _at(array: Complex | NDArray[np.float64], shape: tuple[int, int]) -> NDArray[np.float64]:
    return np.broadcast_to(np.asarray(array), shape)


def _moved_snr_db(
    chain: Chain,
    spectra: NoiseSpectra,
    as_set: Cascade,
    units: Sequence[Section],
    ports: Sequence[TwoPort],
    v: int,
    main: Section,
    shape: tuple[int, int],
) -> NDArray[np.float64]:
    """The output SNR per trial with stage ``v`` moved to just after the section ``main``
    (module notes)."""
    moved_stage = next(u for u in units if u.first == v)
    order = [u for u in units if u.last < v]
    order += [u for u in units if v < u.first <= main.last] + [moved_stage]
    order += [u for u in units if u.first > main.last]
    port_of = dict(zip(units, ports, strict=True))
    moved_ports = [port_of[u] for u in order]
    # the terminations of the moved cascade: loads backward from the load, sources forward
    loads: list[Complex] = [np.asarray(0j)] * len(order)
    y: Complex = np.asarray(as_set.load_admittance[-1])
    for p in range(len(order) - 1, -1, -1):
        loads[p] = y
        y = moved_ports[p].input_admittance(y)
    sources: list[Complex] = []
    z: Complex = np.asarray(as_set.source_impedance[0])
    for port in moved_ports:
        sources.append(z)
        z = port.output_impedance(z)
    ratios = [port.voltage_ratio(load) for port, load in zip(moved_ports, loads, strict=True)]
    # each section's voltage ratio to the output: the product of the ratios after it
    onward: list[Complex] = [np.asarray(1.0 + 0j)] * len(order)
    for p in range(len(order) - 2, -1, -1):
        onward[p] = onward[p + 1] * ratios[p + 1]
    signal = np.abs(_at(onward[0] * ratios[0] / (1.0 + sources[0] * y), shape))
    psd = np.zeros(shape)
    if spectra.source_psd is not None:
        psd = psd + spectra.source_psd * signal**2
    solved: dict[Section, UnitNoise] = {u.section: u for u in spectra.units}
    for p, unit in enumerate(order):
        noise = solved.get(unit)
        if noise is None:
            continue
        at_out = noise.out_under(moved_ports[p], sources[p], loads[p]) * onward[p]
        psd = psd + np.sum(noise.psd * np.abs(at_out) ** 2, axis=0)
    total = spectra.integrate(psd, unweighted)
    with np.errstate(divide="ignore", invalid="ignore"):
        return _db20(chain.source.level * signal[:, 0] / np.sqrt(total))
