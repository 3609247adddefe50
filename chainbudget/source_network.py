"""The source at every frequency: its output impedance and the thermal noise of its real part.

``[source]`` gives ``impedance`` (ohm, resistive) and, optionally, ``capacitance`` (a piezo
element) and ``inductance`` (a magnetic pickup), both in series with it. The network then
sees the Thevenin source

    Z_S(f) = R + 1/(j 2 pi f C) + j 2 pi f L

at every frequency of every solve (levels, response, loading, loops and noise).

Notes
-----
A piezo element is, to first order, a voltage source in series with its capacitance
(the series form of the electromechanical equivalent well below its first mechanical
resonance); a magnetic pickup is a voltage source behind its coil's inductance and
winding resistance (its self-capacitance, which makes the resonance, is left out). Both are
textbook equivalent circuits; the values are the user's.

A lossless capacitance or inductance adds no noise of its own: by Nyquist's theorem
(Nyquist, Phys. Rev. 32, 110 (1928)) a passive one-port at temperature T has the open-circuit
noise voltage density 4 k T Re(Z(f)), and Re Z_S = R here. The piezo's noise is therefore
only that of its series resistance; what it does to the noise is make the impedance that a
stage's bias resistor and current noise see frequency dependent (the bias resistor's
4kTR, seen through R || 1/(j 2 pi f C), integrates to kT/C over all frequency: the
equipartition theorem).
"""

from __future__ import annotations

from typing import Any, Protocol

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget import fields as f
from chainbudget import plausible
from chainbudget.loudspeaker import INDUCTANCE
from chainbudget.notation import eng

Complex = NDArray[np.complexfloating[Any, Any]]


def _read_source_inductance(value: object) -> float:
    """An inductance above zero (`chainbudget.loudspeaker.INDUCTANCE`) within the range
    `plausible.SOURCE_INDUCTANCE` holds for a source."""
    return plausible.SOURCE_INDUCTANCE.check(value, INDUCTANCE.read(value), INDUCTANCE.read)


SOURCE_INDUCTANCE = f.FieldKind(INDUCTANCE.unit, _read_source_inductance, INDUCTANCE.write)

#: The reactive parts of ``[source]``, each in series with its ``impedance``.
SOURCE_REACTIVE_FIELDS: tuple[f.Field, ...] = (
    f.Field(
        "capacitance",
        f.CAPACITANCE,
        "in series with the impedance: a capacitive (piezo) source",
        None,
    ),
    f.Field(
        "inductance",
        SOURCE_INDUCTANCE,
        "in series with the impedance: an inductive source (magnetic pickup)",
        None,
    ),
)


class SourceLike(Protocol):
    """What the impedance needs of ``[source]``."""

    @property
    def impedance(self) -> float: ...
    @property
    def capacitance(self) -> float | None: ...
    @property
    def inductance(self) -> float | None: ...


def is_reactive(source: SourceLike) -> bool:
    """True when the source has a series capacitance or inductance."""
    return source.capacitance is not None or source.inductance is not None


def source_impedance(source: SourceLike, frequency: ArrayLike) -> Complex:
    """The source's output impedance on ``frequency`` (Hz, never 0), ohm, complex.

    Notes
    -----
    Series R, C and L: Z = R + 1/(j w C) + j w L, w = 2 pi f (any circuits text, e.g.
    Hayt & Kemmerly, Engineering Circuit Analysis, ch. "Sinusoidal steady-state analysis").
    """
    omega = 2.0 * np.pi * np.asarray(frequency, dtype=float)
    z = np.full(omega.shape, complex(source.impedance))
    if source.capacitance is not None:
        z = z + 1.0 / (1j * omega * source.capacitance)
    if source.inductance is not None:
        z = z + 1j * omega * source.inductance
    return z


def source_resistance(source: SourceLike, frequency: ArrayLike) -> NDArray[np.float64]:
    """Re Z_S on ``frequency``, ohm: what carries the source's thermal noise (Nyquist)."""
    return np.asarray(np.real(source_impedance(source, frequency)), dtype=np.float64)


def describe(resistance: float, capacitance: float | None, inductance: float | None) -> str:
    """A source impedance in words: "470 kohm", "1 kohm + 1 nF", "0 ohm + 3 H"."""
    parts = [eng(resistance, "ohm")]
    if capacitance is not None:
        parts.append(eng(capacitance, "F"))
    if inductance is not None:
        parts.append(eng(inductance, "H"))
    return " + ".join(parts)
