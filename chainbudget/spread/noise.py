"""The noise of a batch of trials at every node, through the check's own noise machinery.

Notes
-----
`chainbudget.budget.noise_spectra.noise_spectra` carries every generator to every node
with the parts as arrays: a batch of T trials solves each stage's adjoint network once
for every trial and frequency (matrices (T, F, n, n)), and the spectra come out
(S, K, T, F). The band figures integrate them over the band grid (index 0 of the axis is
the reference) as `chainbudget.budget.noise.noise_budget` does: at every node unweighted,
A-weighted (IEC 61672-1) and ITU-R BS.468 weighted, the density at the reference, SNR the
nominal level at the reference over the rms noise; for the chain the input-referred noise
(the output PSD over |v_out|^2 before integrating) and its EIN re 0.7746 V, the spot
noise figure at the reference (Friis, Proc. IRE 32 (1944) 419), the dynamic range (the
output's sine-equivalent clip over its noise).

The noise budget's detail per trial, from the same spectra: each generator's band noise
at the output and its share of the output noise power, unweighted and A-weighted, for the
generators the nominal check lists (its ten largest, ``noise_sources`` in the check JSON),
and each stage's share (the sum of its generators'; ``noise.stage_shares``). The
spectral detail at single frequencies (``noise.spectrum``) is not spread.

``noise-set-late`` (`chainbudget.findings.noise`) is drawn where a stage after the first
gives more of the output noise power than the first does: per trial a flag
(`chainbudget.spread.flags`) of whether the largest later stage's share exceeds the first
stage's, as the check's rule has it. ``noise-attenuator-before-gain`` and the lift it is
judged by come from `chainbudget.spread.noise_placement`, from the same solved spectra.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget import Budget
from chainbudget.budget.levels import SQRT2, clip_source_peak
from chainbudget.budget.noise_spectra import NoiseSpectra, noise_spectra, unweighted
from chainbudget.cascade import Cascade
from chainbudget.chainfile import Chain
from chainbudget.outputmath import hiss_spl
from chainbudget.spectrum import zero_celsius_k
from chainbudget.spread.flags import as_flag, flag_key, is_flag
from chainbudget.spread.noise_placement import placement_figures
from chainbudget.stages.base import Environment
from chainbudget.units import DBU_REFERENCE_VRMS
from chainbudget.weighting import a_weighting, itu468_weighting

#: The flag of ``noise-set-late`` (see the module notes).
LATE_FLAG = flag_key("note", "noise-set-late", "output")


def _db20(ratio: NDArray[np.float64]) -> NDArray[np.float64]:
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.asarray(20.0 * np.log10(ratio), dtype=float)


def _ratio_db(signal: NDArray[np.float64], noise: NDArray[np.float64]) -> NDArray[np.float64]:
    """20 log10(signal / noise): +inf where a node carries no noise at all (a chain of
    noiseless blocks from a 0 ohm source), a figure the nominal check leaves undefined and
    `output_noise` then drops."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return _db20(signal / noise)


def output_noise(
    chain: Chain,
    envs: tuple[Environment, ...],
    frequency: NDArray[np.float64],
    as_set: Cascade,
    trials: int,
    nominal: Budget | None = None,
) -> dict[str, NDArray[np.float64]]:
    """Every node's ``noise_vrms``, ``noise_a_vrms``, ``noise_468_vrms``,
    ``noise_density_v_rthz``, ``snr_db`` and ``snr_a_db`` per trial, shape (T,), keyed by their
    path in the check JSON; the chain's input-referred noise, EIN, noise figure and
    dynamic range (top-level keys), the flag of ``noise-set-late``, and
    with a loudspeaker sensitivity the hiss SPL at 1 m (``hiss_spl_db``,
    ``hiss_spl_a_db``). With the ``nominal`` check, the contributors' and stages' parts of
    the output noise it lists, the placement lifts and the flags of
    ``noise-attenuator-before-gain`` (module notes).

    ``chain`` holds the drawn parts as (T, 1) arrays, ``as_set`` is its cascade with the
    controls as set on ``frequency`` (the reference, then the band grid). With the
    ``nominal`` check, a figure it leaves undefined (an SNR of a node without noise, an
    input-referred noise where the gain vanishes) is left out.
    """
    spectra = noise_spectra(
        chain,
        envs,
        frequency,
        as_set,
        chain.settings.ambient + zero_celsius_k,
        slice(1, None),
    )
    shape = (trials, frequency.size)
    psd = np.stack([np.broadcast_to(p, shape) for p in spectra.node_psd])  # (K, T, F)
    signal = np.stack([np.broadcast_to(s, shape) for s in spectra.signal])
    flat = spectra.integrate(psd, unweighted)
    weighted = spectra.integrate(psd, a_weighting)
    itu = spectra.integrate(psd, itu468_weighting)
    found: dict[str, NDArray[np.float64]] = {}
    for k, stage in enumerate(chain.stages):
        node = f"nodes.{stage.name}."
        level = chain.source.level * signal[k, :, 0]
        found[node + "noise_vrms"] = np.sqrt(flat[k])
        found[node + "noise_a_vrms"] = np.sqrt(weighted[k])
        found[node + "noise_468_vrms"] = np.sqrt(itu[k])
        found[node + "noise_density_v_rthz"] = np.sqrt(psd[k, :, 0])
        found[node + "snr_db"] = _ratio_db(level, np.sqrt(flat[k]))
        found[node + "snr_a_db"] = _ratio_db(level, np.sqrt(weighted[k]))
    out = f"nodes.{chain.stages[-1].name}."
    found.update(_chain_figures(chain, spectra, psd[-1], signal[-1], as_set, trials))
    found.update(_stage_shares(chain, spectra, trials, nominal))
    if nominal is not None:  # the figures the nominal check leaves undefined (no noise)
        found = {path: v for path, v in found.items() if _defined(nominal, path)}
        snr = found.get(out + "snr_db")
        if snr is not None:
            found.update(placement_figures(chain, spectra, as_set, snr, trials, nominal))
    sensitivity = chain.load.sensitivity
    if sensitivity is not None:  # the hiss at 1 m, as `noise_budget` works it out
        for key, noise in (("hiss_spl_db", "noise_vrms"), ("hiss_spl_a_db", "noise_a_vrms")):
            found[key] = np.asarray(
                hiss_spl(sensitivity, found[out + noise], chain.load.impedance), dtype=float
            )
    return found


def _defined(nominal: Budget, path: str) -> bool:
    """Whether the nominal check gives the figure at ``path`` a value."""
    noise = nominal.noise
    if noise is None:
        return False
    group, *rest = path.split(".")
    if group == "nodes":
        name, key = rest
        node = next(n for n in noise.nodes if n.stage == name)
        field = "density_v_rthz" if key == "noise_density_v_rthz" else key
        return getattr(node, field) is not None
    if is_flag(path) or group in ("noise_sources", "noise"):  # made from its own lists
        return True
    return getattr(noise, path) is not None


def _chain_figures(
    chain: Chain,
    spectra: NoiseSpectra,
    out_psd: NDArray[np.float64],
    gain: NDArray[np.float64],
    as_set: Cascade,
    trials: int,
) -> dict[str, NDArray[np.float64]]:
    """Input-referred noise, EIN, noise figure and dynamic range per trial, as
    `chainbudget.budget.noise.noise_budget` works them out (a figure the check leaves
    undefined for the nominal parts is left out)."""
    found: dict[str, NDArray[np.float64]] = {}
    if np.all(gain[:, spectra.band] > 0.0):
        referred = out_psd / gain**2
        input_vrms = np.sqrt(spectra.integrate(referred, unweighted))
        input_a_vrms = np.sqrt(spectra.integrate(referred, a_weighting))
        found["input_noise_vrms"] = input_vrms
        found["input_noise_a_vrms"] = input_a_vrms
        found["ein_dbu"] = _db20(input_vrms / DBU_REFERENCE_VRMS)
        found["ein_a_dbu"] = _db20(input_a_vrms / DBU_REFERENCE_VRMS)
    if spectra.origins and spectra.origins[0].stage_index == -1:
        source_psd = np.broadcast_to(spectra.contribution[0, -1], out_psd.shape)[:, 0]
        if np.all(source_psd > 0.0):
            found["noise_figure_db"] = 10.0 * np.log10(out_psd[:, 0] / source_psd)
    # the output's sine-equivalent clip with the controls as set (`output_clip_vrms`)
    peaks = [clip_source_peak(as_set, k) for k in range(len(chain.stages))]
    limited = [np.broadcast_to(p[0], (trials, gain.shape[1]))[:, 0] for p in peaks if p]
    if limited:
        clip = np.min(limited, axis=0) * gain[:, 0] / SQRT2
        found["noise.output_clip_vrms"] = clip
        flat = spectra.integrate(out_psd, unweighted)
        weighted = spectra.integrate(out_psd, a_weighting)
        found["dynamic_range_db"] = _ratio_db(clip, np.sqrt(flat))
        found["dynamic_range_a_db"] = _ratio_db(clip, np.sqrt(weighted))
    return found


def _stage_shares(
    chain: Chain, spectra: NoiseSpectra, trials: int, nominal: Budget | None = None
) -> dict[str, NDArray[np.float64]]:
    """Each contributor's and each stage's part of the output noise per trial, as
    `chainbudget.budget.noise.noise_budget` works them out (a generator's band power at
    the output and its share of the total, unweighted and A-weighted; a stage's share the
    sum of its generators'), for the contributors and stages the ``nominal`` check lists
    (``noise_sources.LABEL.noise_vrms``, ``.share``, ``.share_a``;
    ``noise.stage_shares.STAGE.share``, ``.share_a``), and whether ``noise-set-late`` is
    drawn in each trial (module notes)."""
    if not spectra.origins:  # no generator anywhere: no parts, no stage sets the floor
        return {}
    shape = (trials, spectra.frequency.size)
    out = np.stack([np.broadcast_to(c, shape) for c in spectra.contribution[:, -1]])
    flat = spectra.integrate(out, unweighted)  # (S, T)
    weighted = spectra.integrate(out, a_weighting)
    share, share_a = _share(flat), _share(weighted)
    owner = np.array([o.stage_index for o in spectra.origins], dtype=int)
    found: dict[str, NDArray[np.float64]] = {}
    noise = None if nominal is None else nominal.noise
    if noise is not None:
        labels = [o.label for o in spectra.origins]
        for listed in noise.top_contributors:
            if labels.count(listed.label) != 1:  # a label two generators share: no path
                continue
            s = labels.index(listed.label)
            path = f"noise_sources.{listed.label}."
            found[path + "noise_vrms"] = np.sqrt(flat[s])
            found[path + "share"] = share[s]
            found[path + "share_a"] = share_a[s]
        for stage in noise.stage_shares:
            mine = owner == stage.stage_index
            path = f"noise.stage_shares.{stage.stage}."
            found[path + "share"] = share[mine].sum(axis=0)
            found[path + "share_a"] = share_a[mine].sum(axis=0)
    by_stage = {int(i): share[owner == i].sum(axis=0) for i in dict.fromkeys(owner.tolist())}
    later = [s for i, s in by_stage.items() if i > 0]
    if len(chain.stages) >= 2 and later:
        first = by_stage.get(0, np.zeros(trials))
        found[LATE_FLAG] = as_flag(np.max(later, axis=0) > first, trials)
    return found


def _share(power: NDArray[np.float64]) -> NDArray[np.float64]:
    """Each generator's share of the total power per trial (S, T); 0 where there is none."""
    total = power.sum(axis=0)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(total > 0.0, power / total, 0.0)
