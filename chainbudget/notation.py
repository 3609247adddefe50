"""Engineering notation for figures in tables and messages (prefixes, dB, dashes for none)."""

from __future__ import annotations

import math
from collections.abc import Mapping

_PREFIXES = (
    (1e12, "T"),
    (1e9, "G"),
    (1e6, "M"),
    (1e3, "k"),
    (1.0, ""),
    (1e-3, "m"),
    (1e-6, "u"),
    (1e-9, "n"),
    (1e-12, "p"),
)
DASH = "-"


#: Prefixed units spelled out where the short forms differ by case alone: "mohm" and
#: "Mohm" are a factor of 10^9 apart and one misread letter away, so a milliohm and a
#: megohm are written in full (reports stay plain ASCII, for every terminal and log).
_SPELLED = {("m", "ohm"): "milliohm", ("M", "ohm"): "megohm", ("G", "ohm"): "gigohm"}


def eng(value: float | None, unit: str, digits: int = 3) -> str:
    """``4700.0, "ohm"`` -> ``"4.7 kohm"``, ``0.05, "ohm"`` -> ``"50 milliohm"``; None or
    non-finite -> a dash."""
    if value is None or not math.isfinite(value):
        return DASH
    if value == 0.0:
        return f"0 {unit}"
    magnitude = abs(value)
    if magnitude >= 1e13:  # an open circuit in all but name (a node left to the 1e-15 S leak)
        return f"> 10 T{unit}"
    scale, prefix = next(((s, p) for s, p in _PREFIXES if magnitude >= s * 0.9995), (1e-12, "p"))
    return f"{value / scale:.{digits}g} {_SPELLED.get((prefix, unit), prefix + unit)}"


def decibels(value: float | None, signed: bool = True) -> str:
    """A dB figure to one decimal, or a dash."""
    if value is None or not math.isfinite(value):
        return DASH
    if abs(value) < 0.05:
        value = 0.0  # no "-0.0" for a flat stage
    return f"{value:+.1f}" if signed and value != 0.0 else f"{value:.1f}"


def amps(value: float | None) -> str:
    """A current with its prefix (``"4.3 mA"``), or a dash."""
    return eng(value, "A")


def ohms(value: float | None) -> str:
    """A resistance with its prefix (``"4.7 kohm"``, ``"2.2 megohm"``), or a dash."""
    return eng(value, "ohm")


def watts(value: float | None) -> str:
    """A power with its prefix (``"88 mW"``), or a dash."""
    return eng(value, "W")


def hertz(value: float | None) -> str:
    """A frequency with its prefix (``"16 kHz"``), or a dash."""
    return eng(value, "Hz")


def figure_text(value: object, unit: str) -> str:
    """A kind's figure as a table shows it: engineering notation in its unit, whole degrees
    Celsius, a fraction as a percentage, yes/no for a flag, a dash for none."""
    if value is None:
        return DASH
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int | float):
        number = float(value)
        if not math.isfinite(number):
            return DASH
        if unit == "degC":
            return f"{number:.0f} degC"
        if unit == "%":
            return f"{number:.0%}"
        if unit in ("K/W", "h", "Ah", "deg", "dB"):
            return f"{number:.3g} {unit}"
        return eng(number, unit)
    return str(value)


def settings_text(controls: Mapping[tuple[str, str], float], separator: str = ", ") -> str:
    """Control settings as the file names them: ``tone.bass_position=1, volume.position=0.5``."""
    return separator.join(f"{stage}.{key}={value:g}" for (stage, key), value in controls.items())


def sig(value: float | None, unit: str = "", digits: int = 3) -> str:
    """A figure to ``digits`` significant digits in plain decimals (``"1290 uF"`` never
    ``"1.29e+03 uF"``): from 0.001 up to a million as it is, beyond that in engineering
    notation; None or non-finite -> a dash."""
    if value is None or not math.isfinite(value):
        return DASH
    if value == 0.0:
        return f"0 {unit}".rstrip()
    magnitude = math.floor(math.log10(abs(value)))
    if not -3 <= magnitude < 6:
        return eng(value, unit, digits)
    decimals = max(digits - 1 - magnitude, 0)
    text = f"{round(value, digits - 1 - magnitude):.{decimals}f}"
    if "." in text:  # as %g does: no trailing zeros
        text = text.rstrip("0").rstrip(".")
    return f"{text} {unit}".rstrip()
