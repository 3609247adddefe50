"""The load at every frequency: a loudspeaker's electrical equivalent, and the capacitance of
its cable and crossover across it.

``[load]`` keeps ``impedance`` as the nominal rating (power, damping factor and heat are
quoted against it, as the trade quotes them); with the Thiele-Small parameters ``re``,
``fs``, ``qes``, ``qms`` (and optionally ``le``) the network sees the driver's impedance at
every frequency instead, and ``capacitance`` hangs across either.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any, Protocol

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget import fields as f
from chainbudget import units

Complex = NDArray[np.complexfloating[Any, Any]]

HENRY = units.Dimension("henry", "an inductance", '"0.5 mH"')


def _read_inductance(value: object) -> float:
    henry = units.parse_quantity(value, HENRY)
    if not henry > 0.0:
        raise units.UnitParseError(value, "an inductance above zero")
    return henry


INDUCTANCE = f.FieldKind("H", _read_inductance, lambda henry: f"{henry!r} H")

#: The Thiele-Small set that describes a driver; ``le`` is optional (0 H).
THIELE_SMALL = ("re", "fs", "qes", "qms")

LOUDSPEAKER_FIELDS: tuple[f.Field, ...] = (
    f.Field(
        "capacitance",
        f.CAPACITANCE,
        "cable and crossover capacitance across the output (stability)",
        None,
    ),
    f.Field("re", f.RESISTANCE, "Thiele-Small: voice-coil DC resistance", None),
    f.Field("le", INDUCTANCE, "Thiele-Small: voice-coil inductance", None),
    f.Field("fs", f.FREQUENCY, "Thiele-Small: free-air resonance", None),
    f.Field("qes", f.RATIO, "Thiele-Small: electrical Q at fs", None),
    f.Field("qms", f.RATIO, "Thiele-Small: mechanical Q at fs", None),
)


class LoadLike(Protocol):
    """What the impedance needs of ``[load]``."""

    @property
    def impedance(self) -> float: ...
    @property
    def capacitance(self) -> float | None: ...
    @property
    def re(self) -> float | None: ...
    @property
    def le(self) -> float | None: ...
    @property
    def fs(self) -> float | None: ...
    @property
    def qes(self) -> float | None: ...
    @property
    def qms(self) -> float | None: ...


def load_problems(values: Mapping[str, Any]) -> list[tuple[str, str]]:
    """(key, message) when the Thiele-Small set is incomplete: ``re``, ``fs``, ``qes`` and
    ``qms`` come together (``le`` only with them)."""
    given = [key for key in (*THIELE_SMALL, "le") if values.get(key) is not None]
    if not given:
        return []
    missing = [key for key in THIELE_SMALL if values.get(key) is None]
    if missing:
        return [
            (
                missing[0],
                "missing required field (a driver's Thiele-Small parameters re, fs, qes and "
                f"qms come together; {', '.join(given)} given)",
            )
        ]
    return []


def driver_impedance(
    frequency: ArrayLike, re: float, le: float, fs: float, qes: float, qms: float
) -> Complex:
    """Electrical impedance of a moving-coil driver in free air, ohm.

    Notes
    -----
    The published electrical equivalent (Small, "Direct-Radiator Loudspeaker System
    Analysis", J. Audio Eng. Soc. 20 (1972) 383; Thiele, "Loudspeakers in Vented Boxes",
    1961/1971): the voice coil R_E + s L_E in series with the motional impedance, a parallel
    R_ES, L_CES, C_MES with R_ES = R_E Q_MS/Q_ES, L_CES = R_E/(2 pi f_S Q_ES) and
    C_MES = Q_ES/(2 pi f_S R_E), which resonate at f_S with Q_MS = 2 pi f_S C_MES R_ES and
    Q_ES = 2 pi f_S C_MES R_E. At f_S the motional branch is R_ES alone, so
    |Z| = R_E (1 + Q_MS/Q_ES) there when L_E = 0.
    """
    s = 2j * np.pi * np.asarray(frequency, dtype=float)  # f > 0: the axes start above DC
    w0 = 2.0 * np.pi * fs
    r_es = re * qms / qes
    l_ces = re / (w0 * qes)
    c_mes = qes / (w0 * re)
    y_motional = 1.0 / r_es + s * c_mes + 1.0 / (s * l_ces)
    return np.asarray(re + s * le + 1.0 / y_motional, dtype=complex)


def load_impedance(load: LoadLike, frequency: ArrayLike) -> Complex:
    """The load's impedance on a frequency axis, ohm: the driver's Thiele-Small impedance if
    given, else the nominal ``impedance`` (resistive), with ``capacitance`` across it."""
    freq = np.asarray(frequency, dtype=float)
    re, fs, qes, qms = load.re, load.fs, load.qes, load.qms
    if re is not None and fs is not None and qes is not None and qms is not None:
        z = driver_impedance(freq, re, load.le or 0.0, fs, qes, qms)
    else:
        z = np.full(freq.shape, complex(load.impedance))
    if load.capacitance is not None:
        z = z / (1.0 + 2j * np.pi * freq * load.capacitance * z)
    return np.asarray(z, dtype=complex)


def is_reactive(load: LoadLike) -> bool:
    """Whether the load is more than the nominal resistor (a driver or a capacitance)."""
    return load.capacitance is not None or load.re is not None
