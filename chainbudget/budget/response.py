"""The chain's transfer at chosen control settings, and what a square wave looks like after it.

`response_settings` picks the settings a designer looks at: the controls as set, each swept
tone pot at its two ends and the volume pot in steps; `chain_response` solves the chain at
all of them at once (the settings are an array axis of one solve) over a frequency grid
that reaches an octave beyond the band each side. `square_wave` sums a square wave's
harmonics through a transfer, the picture a designer compares with the scope.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget.budget.analysis import positions_as_set, solve_chain
from chainbudget.chainfile import Chain
from chainbudget.network import Complex
from chainbudget.spectrum import log_frequency_grid
from chainbudget.stages import KINDS
from chainbudget.stages.base import Environment

# Rotations of a volume pot drawn in the response (its silent end is -inf dB, not drawn).
VOLUME_STEPS = (0.25, 0.5, 0.75, 1.0)
# The response grid reaches this factor beyond each band edge (an octave) ...
BEYOND_BAND = 2.0
# ... with at least this many points per decade (smooth curves at the picture's size).
RESPONSE_POINTS_PER_DECADE = 48
# A square wave's harmonics are summed up to this frequency (well past the band: the
# chain's own roll-off shapes the edges, not the truncation) and at most this harmonic
# number (keeps a 50 Hz square to about two thousand frequencies).
SQUARE_TOP_HZ = 1e6
SQUARE_MAX_HARMONIC = 4095
# Samples per period of the synthesised wave, at least.
SQUARE_SAMPLES = 2048


@dataclass(frozen=True)
class Setting:
    """A setting of the chain's pots: the pots it turns away from their set positions,
    keyed by (stage index, control key), and how the picture names it."""

    label: str
    turned: Mapping[tuple[int, str], float]


def response_settings(chain: Chain, volume: bool = True) -> tuple[Setting, ...]:
    """The controls as set, then each swept pot at its ends (a tone pot: 0 full cut and
    1 full boost) or, for a pot that sets the volume, at `VOLUME_STEPS` (left out without
    ``volume``: a volume step only scales the waveform)."""
    found = [Setting("as set", {})]
    for k, stage in enumerate(chain.stages):
        kind = KINDS[stage.kind]
        for control in kind.controls(stage):
            if not control.sweep:
                continue
            if kind.sets_volume:
                if volume:
                    found += [
                        Setting(f"{control.label}={x:g}", {(k, control.key): x})
                        for x in VOLUME_STEPS
                    ]
                continue
            ends = ("cut", "boost") if kind.shapes_response else ("min", "max")
            found += [
                Setting(f"{control.label}={x:g} ({end})", {(k, control.key): x})
                for x, end in zip((0.0, 1.0), ends, strict=True)
            ]
    return tuple(found)


def response_frequencies(chain: Chain) -> NDArray[np.float64]:
    """The band and an octave beyond each edge, log-spaced, Hz."""
    low, high = chain.settings.band
    density = max(chain.settings.points_per_decade, RESPONSE_POINTS_PER_DECADE)
    return log_frequency_grid(low / BEYOND_BAND, high * BEYOND_BAND, density)


@dataclass(frozen=True)
class Response:
    """The voltage at one node per volt of source open-circuit voltage.

    ``transfer`` has shape (M, F): one row per setting, one column per frequency.
    """

    node: str
    node_index: int
    frequency_hz: NDArray[np.float64]
    settings: tuple[Setting, ...]
    transfer: Complex

    @property
    def magnitude_db(self) -> NDArray[np.float64]:
        with np.errstate(divide="ignore"):
            return np.asarray(20.0 * np.log10(np.abs(self.transfer)), dtype=float)

    @property
    def phase_deg(self) -> NDArray[np.float64]:
        """Phase, unwrapped along frequency, degrees."""
        return np.asarray(np.degrees(np.unwrap(np.angle(self.transfer), axis=-1)), dtype=float)


def chain_response(
    chain: Chain,
    envs: Sequence[Environment],
    node_index: int,
    settings: Sequence[Setting],
    frequency: ArrayLike,
) -> Response:
    """The transfer from the source to the output of stage ``node_index`` at every setting.

    One solve: each pot any setting turns is an array over the settings (shape (M, 1)),
    the others stay as set; the cascade (`chainbudget.cascade`) loads every stage exactly.
    """
    freq = np.asarray(frequency, dtype=float)
    positions: list[dict[str, object]] = [dict(p) for p in positions_as_set(chain.stages)]
    turned = {key for s in settings for key in s.turned}
    for k, key in turned:
        position = positions[k][key]
        column = [s.turned.get((k, key), position) for s in settings]
        positions[k][key] = np.asarray(column, dtype=float)[:, None]
    cascade = solve_chain(chain, tuple(envs), freq, positions)
    transfer = np.broadcast_to(cascade.v_out[node_index], (len(settings), freq.size))
    return Response(
        chain.stages[node_index].name, node_index, freq, tuple(settings), np.array(transfer)
    )


def square_harmonics(
    fundamental_hz: float, top_hz: float = SQUARE_TOP_HZ, most: int = SQUARE_MAX_HARMONIC
) -> NDArray[np.int64]:
    """The odd harmonic numbers of a square wave up to ``top_hz`` (at least the
    fundamental) and at most ``most``."""
    highest = max(1, min(most, int(top_hz // fundamental_hz)))
    return np.arange(1, highest + 1, 2, dtype=np.int64)


def square_wave(
    transfer: ArrayLike,
    harmonics: NDArray[np.int64],
    amplitude: float = 1.0,
    samples: int = SQUARE_SAMPLES,
    smooth: bool = True,
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """One period of a square wave of peak ``amplitude`` after a transfer.

    Parameters
    ----------
    transfer : array, shape (..., N)
        The complex transfer at each of the odd ``harmonics`` of the fundamental.
    harmonics : array of int, shape (N,)
        Odd harmonic numbers 1, 3, 5, ... (`square_harmonics`).
    amplitude : float
        Peak of the square wave (it swings from -amplitude to +amplitude), V.
    samples : int
        Samples per period, at least; rounded up to a power of two above the harmonics.
    smooth : bool
        Weight harmonic n by the Fejer factor 1 - n/(N_max + 2): a generator whose edges
        rise in about one period of the highest harmonic and never overshoot, so any
        overshoot in the picture is the chain's, not the ripple of a truncated series.

    Returns
    -------
    t : ndarray, shape (L,)
        Time as a fraction of the period, 0 <= t < 1 (the rising edge at 0).
    y : ndarray, shape (..., L)
        The output, V.

    Notes
    -----
    The square wave's Fourier series: sq(t) = (4A/pi) sum over odd n of sin(2 pi n t)/n
    (Kreyszig, Advanced Engineering Mathematics, 10th ed., sec. 11.1, from memory); a linear
    network multiplies harmonic n by H(n f0), so y(t) = sum Im(c_n e^{2 pi i n t}) with
    c_n = (4A/(pi n)) H(n f0), evaluated with one inverse real FFT. Partial sums overshoot a
    jump by about 9 % of its size (the Gibbs phenomenon, same section). The Fejer weights
    make the sum the Cesaro mean of the partial sums, a convolution with the Fejer kernel,
    which is never negative, so a flat chain's square stays within +-A (Fejer's theorem;
    Koerner, Fourier Analysis, 1988, ch. 2, from memory).
    """
    h = np.asarray(transfer, dtype=complex)
    n = np.asarray(harmonics, dtype=np.int64)
    length = 1 << int(np.ceil(np.log2(max(samples, 4 * (int(n.max()) + 1)))))
    coefficient = 4.0 * amplitude / (np.pi * n) * h
    if smooth:
        coefficient = coefficient * (1.0 - n / (n.max() + 2.0))
    spectrum = np.zeros((*h.shape[:-1], length // 2 + 1), dtype=complex)
    # irfft gives (1/L)(X_0 + 2 sum Re(X_k e^{2 pi i k m / L})): X_k = (L/2)(-i c_k) makes
    # that sum Im(c_k e^{2 pi i k m / L}).
    spectrum[..., n] = (length / 2.0) * (-1j) * coefficient
    y = np.fft.irfft(spectrum, n=length, axis=-1)
    return np.arange(length) / length, np.asarray(y, dtype=float)
