"""Where each kind of value lies in the small amplifiers this tool is for: one table.

A value far outside its field's plausible range is almost always a slip of the pen: a
prefix in the wrong case (``"1 mohm"`` read as a milliohm where a megohm was meant,
``"10 MA"`` for 10 mA), a unit dropped or doubled. The loader refuses it with one line that
suggests the likely meaning; a file that means it writes the prefix in full
(``"1 milliohm"``, see `chainbudget.units.is_spelled_out`). Beyond a wider hard range no
value is taken at all: there the arithmetic of the analysis stops meaning anything (a
resistance of 1e-300 ohm, a gain of 1e300).

Every range here is common practice, no source: the span of values met in small audio
amplifiers, their supplies and their loudspeakers, widened by an order of magnitude or more
either way. The hard ranges are the plausible ones widened by several more decades.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

from chainbudget import units
from chainbudget.units import UnitParseError


@dataclass(frozen=True)
class Plausible:
    """The plausible and the hard range of a kind of value (SI magnitudes; the sign rules
    stay with the field kinds: zero and negative values are judged there).

    Parameters
    ----------
    low, high : float
        The plausible range of the magnitude; outside it a value is refused unless its
        prefix is written in full (only for ``dimension`` with a spelled form).
    floor, ceiling : float
        The hard range: outside it a value is refused whatever its spelling.
    text, hard_text : str
        The plausible range as a message shows it ("a current up to 100 A") and the hard
        one ("nothing past 100 kiloampere is taken"): no e-notation, unambiguous prefixes.
    dimension : units.Dimension or None
        The value's dimension where a prefix can be written in full (ohm, farad, hertz,
        volt, ampere); None where it cannot, and then the plausible range is the hard one.
    """

    low: float
    high: float
    text: str
    floor: float
    ceiling: float
    hard_text: str
    dimension: units.Dimension | None = None

    def holds(self, number: float) -> bool:
        return number == 0.0 or self.low <= abs(number) <= self.high

    def check(self, value: object, number: float, read: Callable[[object], float]) -> float:
        """``number`` (read from ``value`` by ``read``) when it is plausible, or meant;
        otherwise a `UnitParseError` suggesting the likely meaning."""
        if self.holds(number):
            return number
        if self.dimension is None:
            raise UnitParseError(value, self.text)
        hint = self._likely(value, read)
        if not self.floor <= abs(number) <= self.ceiling:
            raise UnitParseError(value, f"{self.text}{hint} ({self.hard_text})")
        if units.is_spelled_out(value):
            return number
        keep = units.spelled_out(number, self.dimension)
        raise UnitParseError(
            value, f"{self.text}{hint} (to keep it, write the prefix in full: {keep!r})"
        )

    def _likely(self, value: object, read: Callable[[object], float]) -> str:
        """'; did you mean "1 Mohm"?' when another case of the prefix, or no prefix, gives a
        plausible value; else nothing."""
        for reading in units.case_readings(value):
            try:
                if self.holds(read(reading)):
                    return f"; did you mean {reading!r}?"
            except UnitParseError:
                continue
        return ""


def _range(
    low: float,
    high: float,
    text: str,
    floor: float,
    ceiling: float,
    hard_text: str,
    dimension: units.Dimension | None = None,
) -> Plausible:
    return Plausible(low, high, text, floor, ceiling, hard_text, dimension)


# --- the table -----------------------------------------------------------------------------
# Parts in the signal path and the impedances around them: a milliohm resistor in a
# feedback network, a megohm speaker, are slips.
PART_OHMS = _range(
    0.1, 1e9, "a resistance from 0.1 ohm to 1 gigohm for a part",
    1e-6, 1e12, "nothing outside 1 microhm to 1 teraohm is taken",
    units.OHM,
)  # fmt: skip
# Small resistances that may be zero: emitter resistors, winding, battery and output
# resistances, base stoppers, pot ends.
SMALL_OHMS = _range(
    1e-3, 1e9, "a resistance of zero or from 1 milliohm to 1 gigohm",
    1e-9, 1e12, "nothing outside 1 nanohm to 1 teraohm is taken",
    units.OHM,
)  # fmt: skip
# What feeds the chain: a line output (tens of ohms up) to a piezo (megohms), or zero.
SOURCE_OHMS = _range(
    1.0, 1e9, "a source impedance of zero or from 1 ohm to 1 gigohm",
    1e-9, 1e12, "nothing outside 1 nanohm to 1 teraohm is taken",
    units.OHM,
)  # fmt: skip
# What the chain drives: a loudspeaker (2 to 16 ohm) or a line input (up to a megohm).
LOAD_OHMS = _range(
    1.0, 1e6, "a load from 1 ohm (a loudspeaker) to 1 megohm (a line input)",
    1e-6, 1e12, "nothing outside 1 microhm to 1 teraohm is taken",
    units.OHM,
)  # fmt: skip
CAPACITANCE = _range(
    1e-13, 1.0, "a capacitance from 0.1 pF to 1 F",
    1e-18, 1e3, "nothing outside 1 attofarad to 1 kilofarad is taken",
    units.FARAD,
)  # fmt: skip
# A source's series inductance: a dynamic microphone's coil (millihenries) to a magnetic
# pickup (a few henries; a hot one some 10 H). No spelled-out escape: an inductance outside
# this is no audio source.
SOURCE_INDUCTANCE = _range(
    1e-6, 100.0, "an inductance from 1 uH to 100 H for a source",
    1e-6, 100.0, "nothing outside 1 uH to 100 H is taken",
)  # fmt: skip
# From below the audio band (a subsonic corner) to an op-amp's gain-bandwidth product.
FREQUENCY = _range(
    0.1, 1e9, "a frequency from 0.1 Hz to 1 GHz",
    1e-6, 1e12, "nothing outside 1 microhertz to 1 terahertz is taken",
    units.HERTZ,
)  # fmt: skip
# Rails, references and swings of battery and mains-fed small amplifiers.
VOLTAGE = _range(
    0.0, 1e3, "a voltage up to 1 kV either way",
    0.0, 1e6, "nothing past 1 megavolt is taken",
    units.VOLT,
)  # fmt: skip
# Bias currents of microamps to the amps of an output stage or a transformer.
CURRENT = _range(
    0.0, 100.0, "a current up to 100 A",
    0.0, 1e5, "nothing past 100 kiloampere is taken",
    units.AMPERE,
)  # fmt: skip
# An op-amp's slew rate: a fraction of a volt per microsecond to thousands.
SLEW_RATE = _range(1e3, 1e11, "a slew rate from 1 mV/us to 100 kV/us", 1e3, 1e11, "")
# Input noise of op-amps, transistors and blocks: below 1 nV/rtHz to a few uV/rtHz.
NOISE_VOLTAGE = _range(0.0, 1e-4, "a noise density up to 100 uV/rtHz", 0.0, 1e-4, "")
NOISE_CURRENT = _range(0.0, 1e-6, "a noise density up to 1 uA/rtHz", 0.0, 1e-6, "")
# Junction-to-ambient of a small device in free air is a few hundred K/W.
THERMAL_RESISTANCE = _range(0.0, 1e4, "a thermal resistance up to 10000 K/W", 0.0, 1e4, "")
# A coin cell's tens of mAh to a bank of lead-acid batteries.
CHARGE = _range(1e-4, 1e5, "a capacity from 0.1 mAh to 100000 Ah", 1e-4, 1e5, "")
# Ambient and junction temperatures (degC, a signed value, judged as it is).
TEMPERATURE_DEGC = (-100.0, 400.0)
TEMPERATURE_TEXT = "a temperature from -100 degC to 400 degC"
# Signal levels (rms): from far below any noise floor to past any rail.
LEVEL = _range(
    1e-9, 1e3, "a level from 1 nV to 1 kV rms",
    units.LEVEL_FLOOR_V, units.LEVEL_CEILING_V, "nothing outside 1 picovolt to 1 megavolt is taken",
    units.VOLT,
)  # fmt: skip
# Voltage gains: 200 dB either way is far past any stage (units.MAX_GAIN_RATIO).
GAIN_RATIO = (1.0 / units.MAX_GAIN_RATIO, units.MAX_GAIN_RATIO)
# An op-amp's open-loop gain: above unity (0 dB) and up to 200 dB.
OPEN_LOOP_RATIO = (1.0, units.MAX_GAIN_RATIO)
# Sensitivities, rejections: figures in dB.
DECIBELS = (-200.0, 200.0)
# Fractions (a transformer's regulation): up to ten times.
FRACTION = (0.0, 10.0)
# Plain ratios (a transistor's current gain).
RATIO = (1e-3, 1e7)
# The frequency grid's density (points per decade).
GRID_POINTS_PER_DECADE = (1, 1000)
