"""The output noise and SNR of a batch of trials, through the check's own noise machinery.

Notes
-----
`chainbudget.budget.noise_spectra.noise_spectra` carries every generator to every node
with the parts as arrays: a batch of T trials solves each stage's adjoint network once
for every trial and frequency (matrices (T, F, n, n)), and the spectra come out
(S, K, T, F). The band figures integrate them over the band grid (index 0 of the axis is
the reference) as `chainbudget.budget.noise.noise_budget` does: unweighted and
A-weighted (IEC 61672-1), SNR the nominal level at the reference over the rms noise.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget.noise_spectra import noise_spectra, unweighted
from chainbudget.cascade import Cascade
from chainbudget.chainfile import Chain
from chainbudget.outputmath import hiss_spl
from chainbudget.spectrum import zero_celsius_k
from chainbudget.stages.base import Environment
from chainbudget.weighting import a_weighting


def output_noise(
    chain: Chain,
    envs: tuple[Environment, ...],
    frequency: NDArray[np.float64],
    as_set: Cascade,
    trials: int,
) -> dict[str, NDArray[np.float64]]:
    """The output node's ``noise_vrms``, ``noise_a_vrms``, ``snr_db`` and ``snr_a_db``
    per trial, shape (T,), keyed by their path in the check JSON, and with a loudspeaker
    sensitivity the hiss SPL at 1 m (``hiss_spl_db``, ``hiss_spl_a_db``).

    ``chain`` holds the drawn parts as (T, 1) arrays, ``as_set`` is its cascade with the
    controls as set on ``frequency`` (the reference, then the band grid).
    """
    spectra = noise_spectra(
        chain,
        envs,
        frequency,
        as_set,
        chain.settings.ambient + zero_celsius_k,
        slice(1, None),
    )
    psd = np.broadcast_to(spectra.node_psd[-1], (trials, frequency.size))
    flat = spectra.integrate(psd, unweighted)
    weighted = spectra.integrate(psd, a_weighting)
    level = chain.source.level * np.broadcast_to(spectra.signal[-1], psd.shape)[:, 0]
    node = f"nodes.{chain.stages[-1].name}."
    found = {node + "noise_vrms": np.sqrt(flat), node + "noise_a_vrms": np.sqrt(weighted)}
    with np.errstate(divide="ignore"):
        found[node + "snr_db"] = 20.0 * np.log10(level / found[node + "noise_vrms"])
        found[node + "snr_a_db"] = 20.0 * np.log10(level / found[node + "noise_a_vrms"])
    sensitivity = chain.load.sensitivity
    if sensitivity is not None:  # the hiss at 1 m, as `noise_budget` works it out
        for key, noise in (("hiss_spl_db", "noise_vrms"), ("hiss_spl_a_db", "noise_a_vrms")):
            found[key] = np.asarray(
                hiss_spl(sensitivity, found[node + noise], chain.load.impedance), dtype=float
            )
    return found
