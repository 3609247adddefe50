"""The noise budget: the hiss at every node, which part sets it, and how it reads at the end.

Three modules: `chainbudget.budget.noise_spectra` carries every generator to every node,
this one turns the spectra into figures, `chainbudget.budget.noise_placement` weighs moving
an attenuator after the main gain.

Every noise generator of the chain (resistor and pot-half thermal noise, op-amp e_n and i_n,
a block's input-referred density, the source impedance's own thermal noise) is carried to
every node as a power spectral density on the analysis frequency axis; the budget then
integrates those spectra over the band, unweighted and weighted, and ranks the generators.

Notes
-----
How every generator reaches every node (uncorrelated PSDs adding, one adjoint solve per
stage or loop section and frequency, carried forward and backward through the cascade) is
in the notes of `chainbudget.budget.noise_spectra`.

The source's thermal noise 4 k T Re(Z_S) (Johnson, Phys. Rev. 32, 97 (1928); Nyquist,
Phys. Rev. 32, 110 (1928)) is in series with the source voltage, so it reaches node j as the
signal does: |v_out,j| per volt (a piezo's or a pickup's reactance adds none:
`chainbudget.source_network`). It is the reference of the noise figure
NF = 10 log10(S_out / S_out,source) (Friis, Proc. IRE 32 (1944) 419; spot noise figure at one
frequency).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from chainbudget import outputmath as om
from chainbudget.budget.analysis import Analysis
from chainbudget.budget.levels import SQRT2, clip_source_peak
from chainbudget.budget.noise_placement import PlacementCost, placement_costs
from chainbudget.budget.noise_spectra import (
    SOURCE_STAGE,
    NoiseOrigin,
    NoiseSpectra,
    noise_spectra,
    unweighted,
)
from chainbudget.chainfile import Chain
from chainbudget.source_network import source_resistance
from chainbudget.units import DBU_REFERENCE_VRMS
from chainbudget.weighting import a_weighting, itu468_weighting

# Contributors listed at the output (the issue asks for the ten largest).
TOP_CONTRIBUTORS = 10
# Contributors listed per frequency in the spectral detail.
DETAIL_CONTRIBUTORS = 5
# Frequencies of the spectral detail besides the reference (nearest band grid points), Hz.
DETAIL_FREQUENCIES_HZ = (100.0, 10_000.0)


# --- figures ---------------------------------------------------------------------------------


@dataclass(frozen=True)
class NodeNoise:
    """Noise figures at one stage's output node (controls as set, over the band).

    ``snr_db`` is the nominal level at the reference over the unweighted noise;
    ``density_v_rthz`` the noise density at the reference frequency; ``set_by`` the
    stage (or ``"source"``) giving the largest share of the unweighted noise power here,
    ``set_by_index`` its position (-1: the source).
    """

    stage: str
    noise_vrms: float
    noise_a_vrms: float
    noise_468_vrms: float
    density_v_rthz: float
    snr_db: float | None
    snr_a_db: float | None
    set_by: str
    set_by_index: int


@dataclass(frozen=True)
class Contributor:
    """One generator's part of the output noise: rms over the band and shares of the power."""

    label: str
    stage: str
    stage_index: int
    part: str
    kind: str
    noise_vrms: float
    share: float
    share_a: float


@dataclass(frozen=True)
class StageShare:
    """A stage's (or the source's, index -1) share of the output noise power, unweighted and
    A-weighted."""

    stage: str
    stage_index: int
    share: float
    share_a: float


@dataclass(frozen=True)
class SpotContributor:
    """A generator's density at the output at one frequency and its share of the PSD there."""

    label: str
    stage: str
    part: str
    kind: str
    density_v_rthz: float
    share: float


@dataclass(frozen=True)
class SpotNoise:
    """The output noise density at one frequency and its largest contributors."""

    frequency_hz: float
    density_v_rthz: float
    input_density_v_rthz: float | None
    contributors: tuple[SpotContributor, ...]


@dataclass(frozen=True)
class NoiseBudget:
    """Every noise figure of a chain (SI units, dB where named; None where undefined).

    ``source_resistance_ohm`` is Re Z_S at the reference, the part of the source impedance
    that is noisy and the reference of ``noise_figure_db`` (None when it is zero: a purely
    reactive source has no noise of its own to compare with).
    """

    nodes: tuple[NodeNoise, ...]
    source_resistance_ohm: float
    input_noise_vrms: float | None
    input_noise_a_vrms: float | None
    ein_dbu: float | None
    ein_a_dbu: float | None
    noise_figure_db: float | None
    noise_figure_hz: float
    output_clip_vrms: float | None
    dynamic_range_db: float | None
    dynamic_range_a_db: float | None
    hiss_spl_db: float | None
    hiss_spl_a_db: float | None
    contributors: tuple[Contributor, ...]
    stage_shares: tuple[StageShare, ...]
    spectrum: tuple[SpotNoise, ...]
    placement: tuple[PlacementCost, ...]

    @property
    def output(self) -> NodeNoise:
        return self.nodes[-1]

    @property
    def top_contributors(self) -> tuple[Contributor, ...]:
        return self.contributors[:TOP_CONTRIBUTORS]


def _db20(ratio: float) -> float | None:
    return 20.0 * math.log10(ratio) if ratio > 0.0 and math.isfinite(ratio) else None


def _finite(value: float) -> float | None:
    return value if math.isfinite(value) else None


def _shares(power: NDArray[np.float64], total: float) -> NDArray[np.float64]:
    return power / total if total > 0.0 else np.zeros_like(power)


def output_clip_vrms(analysis: Analysis) -> float | None:
    """Sine-equivalent rms output at which the first stage reaches its limit (reference).

    The tightest source peak over every limited stage (`clip_source_peak`) times the chain
    gain to the output, over sqrt(2); None when no stage declares a limit.
    """
    nominal = analysis.nominal
    peaks = []
    for k in range(len(nominal.stages)):
        clip = clip_source_peak(nominal, k)
        if clip is not None:
            peaks.append(float(np.broadcast_to(clip[0], nominal.v_out[k].shape)[0]))
    if not peaks:
        return None
    return min(peaks) * float(abs(nominal.v_out[-1][0])) / SQRT2


def _node_figures(spectra: NoiseSpectra, chain: Chain) -> list[NodeNoise]:
    psd = spectra.node_psd
    flat = spectra.integrate(psd, unweighted)
    a = spectra.integrate(psd, a_weighting)
    itu = spectra.integrate(psd, itu468_weighting)
    per_source = spectra.integrate(spectra.contribution, unweighted)  # (S, K)
    names = {-1: SOURCE_STAGE, **{k: st.name for k, st in enumerate(chain.stages)}}
    owner = np.array([o.stage_index for o in spectra.origins], dtype=int)
    nodes = []
    for k, stage in enumerate(chain.stages):
        level = chain.source.level * float(spectra.signal[k, 0])
        by_stage = {i: float(per_source[owner == i, k].sum()) for i in names}
        set_by = max(by_stage, key=lambda i: by_stage[i])
        nodes.append(
            NodeNoise(
                stage=stage.name,
                noise_vrms=float(np.sqrt(flat[k])),
                noise_a_vrms=float(np.sqrt(a[k])),
                noise_468_vrms=float(np.sqrt(itu[k])),
                density_v_rthz=float(np.sqrt(psd[k, 0])),
                snr_db=_db20(level / math.sqrt(flat[k])) if flat[k] > 0 else None,
                snr_a_db=_db20(level / math.sqrt(a[k])) if a[k] > 0 else None,
                set_by=names[set_by],
                set_by_index=set_by,
            )
        )
    return nodes


def _contributors(spectra: NoiseSpectra) -> tuple[list[Contributor], list[StageShare]]:
    out = spectra.contribution[:, -1, :]
    flat = spectra.integrate(out, unweighted)
    a = spectra.integrate(out, a_weighting)
    share, share_a = _shares(flat, float(flat.sum())), _shares(a, float(a.sum()))
    ranked = sorted(range(len(spectra.origins)), key=lambda s: -flat[s])
    contributors = [
        Contributor(
            o.label,
            o.stage,
            o.stage_index,
            o.part,
            o.kind,
            float(np.sqrt(flat[s])),
            float(share[s]),
            float(share_a[s]),
        )
        for s in ranked
        for o in (spectra.origins[s],)
    ]
    owners = {o.stage_index: o.stage for o in spectra.origins}
    owner = np.array([o.stage_index for o in spectra.origins], dtype=int)
    stage_shares = [
        StageShare(
            name, index, float(share[owner == index].sum()), float(share_a[owner == index].sum())
        )
        for index, name in sorted(owners.items())
    ]
    return contributors, stage_shares


def _spot(spectra: NoiseSpectra, index: int) -> SpotNoise:
    out = spectra.contribution[:, -1, index]
    total = float(out.sum())
    gain = float(spectra.signal[-1, index])
    ranked = np.argsort(-out)[:DETAIL_CONTRIBUTORS]
    return SpotNoise(
        frequency_hz=float(spectra.frequency[index]),
        density_v_rthz=math.sqrt(total),
        input_density_v_rthz=math.sqrt(total) / gain if gain > 0.0 else None,
        contributors=tuple(
            SpotContributor(
                o.label,
                o.stage,
                o.part,
                o.kind,
                float(np.sqrt(out[s])),
                float(out[s] / total) if total > 0.0 else 0.0,
            )
            for s in ranked
            for o in (spectra.origins[s],)
        ),
    )


def detail_indices(frequency: NDArray[np.float64], band: slice) -> list[int]:
    """Indices of the spectral detail: the reference, and the band grid points nearest to
    `DETAIL_FREQUENCIES_HZ` that lie inside the band, in ascending frequency."""
    grid = frequency[band]
    start = band.start or 0
    chosen = {0}
    for wanted in DETAIL_FREQUENCIES_HZ:
        if grid[0] <= wanted <= grid[-1]:
            chosen.add(start + int(np.argmin(np.abs(np.log(grid / wanted)))))
    unique = {float(frequency[i]): i for i in sorted(chosen)}
    return [unique[f] for f in sorted(unique)]


def noise_budget(analysis: Analysis) -> NoiseBudget:
    """The noise budget of a solved chain (controls as set).

    Notes
    -----
    Band figures integrate the PSD over the band grid with `spectrum.integrate_psd`
    (composite Simpson in ln f), unweighted, A-weighted (IEC 61672-1 Annex E, 0 dB at
    1 kHz) and ITU-R BS.468 weighted (rms-reading, not the standard's quasi-peak meter).
    Input-referred noise divides the output PSD by |v_out|^2 of the whole chain at each
    frequency before integrating; the equivalent input noise in dBu is that rms re
    sqrt(0.6) V. Dynamic range: the output's sine-equivalent clip level over its noise.
    Hiss at the loudspeaker: L = sensitivity + 20 log10(V_noise / sqrt(1 W * Z_load)), the
    SPL at 1 m of a power V^2/Z_load given the SPL for 1 W (inverse-square free field at
    1 m, the definition of sensitivity).
    """
    chain = analysis.chain
    spectra = noise_spectra(
        chain,
        analysis.envs,
        analysis.frequency,
        analysis.nominal,
        analysis.temperature_k,
        analysis.band_slice,
    )
    nodes = _node_figures(spectra, chain)
    output = nodes[-1]
    out_psd = spectra.node_psd[-1]
    gain_sq = spectra.signal[-1] ** 2
    with np.errstate(divide="ignore", invalid="ignore"):
        referred = out_psd / gain_sq
    input_sq = float(spectra.integrate(referred, unweighted))
    input_a_sq = float(spectra.integrate(referred, a_weighting))
    input_noise = _finite(math.sqrt(input_sq)) if np.all(gain_sq[spectra.band] > 0) else None
    input_noise_a = _finite(math.sqrt(input_a_sq)) if input_noise is not None else None

    noise_figure = None
    if spectra.origins and spectra.origins[0].stage_index == -1:
        source_psd = float(spectra.contribution[0, -1, 0])
        if source_psd > 0.0:
            noise_figure = 10.0 * math.log10(float(out_psd[0]) / source_psd)

    clip = output_clip_vrms(analysis)
    sensitivity = chain.load.sensitivity

    def spl(noise_vrms: float) -> float | None:
        if sensitivity is None or noise_vrms <= 0.0:
            return None
        return float(om.hiss_spl(sensitivity, noise_vrms, chain.load.impedance))

    def ratio_db(signal: float | None, noise: float) -> float | None:
        return None if signal is None or noise <= 0.0 else _db20(signal / noise)

    contributors, stage_shares = _contributors(spectra)
    return NoiseBudget(
        nodes=tuple(nodes),
        source_resistance_ohm=float(source_resistance(chain.source, analysis.frequency[:1])[0]),
        input_noise_vrms=input_noise,
        input_noise_a_vrms=input_noise_a,
        ein_dbu=None if input_noise is None else _db20(input_noise / DBU_REFERENCE_VRMS),
        ein_a_dbu=None if input_noise_a is None else _db20(input_noise_a / DBU_REFERENCE_VRMS),
        noise_figure_db=noise_figure,
        noise_figure_hz=float(analysis.frequency[0]),
        output_clip_vrms=clip,
        dynamic_range_db=ratio_db(clip, output.noise_vrms),
        dynamic_range_a_db=ratio_db(clip, output.noise_a_vrms),
        hiss_spl_db=spl(output.noise_vrms),
        hiss_spl_a_db=spl(output.noise_a_vrms),
        contributors=tuple(contributors),
        stage_shares=tuple(stage_shares),
        spectrum=tuple(_spot(spectra, i) for i in detail_indices(spectra.frequency, spectra.band)),
        placement=tuple(placement_costs(analysis, spectra)),
    )


__all__ = [
    "SOURCE_STAGE",
    "NodeNoise",
    "NoiseBudget",
    "NoiseOrigin",
    "NoiseSpectra",
    "PlacementCost",
    "noise_budget",
    "noise_spectra",
]
