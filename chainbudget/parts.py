"""Op-amp and transistor part models, and the generic classes shipped with the tool.

The shipped classes carry representative typical values for a family of devices. None is a
brand or a part number; a designer who knows the device they will fit should describe it in
the chain file's ``[opamp.NAME]`` or ``[transistor.NAME]`` table.
"""

from __future__ import annotations

from dataclasses import dataclass, fields, replace

from chainbudget import fields as f

OPAMP_FIELDS: tuple[f.Field, ...] = (
    f.Field("gbw", f.FREQUENCY, "gain-bandwidth product"),
    f.Field("slew_rate", f.SLEW_RATE, "output slew rate"),
    f.Field("noise_voltage", f.NOISE_VOLTAGE, "input voltage noise density (white)", 0.0),
    f.Field("noise_current", f.NOISE_CURRENT, "input current noise density, each input", 0.0),
    f.Field("noise_corner", f.FREQUENCY, "1/f corner of the voltage noise", None),
    f.Field("open_loop_gain", f.OPEN_LOOP_GAIN, "DC open-loop voltage gain", 10.0**5),
    f.Field("second_pole", f.FREQUENCY, "second pole of the open-loop gain (none: one pole)", None),
    f.Field("output_resistance", f.RESISTANCE_OR_ZERO, "open-loop output resistance", 50.0),
    f.Field("swing_margin", f.VOLTAGE_OR_ZERO, "how close the output swings to a rail", 1.5),
    f.Field("output_current", f.PEAK_CURRENT, "usable peak output current", 0.02),
    f.Field("supply_current", f.CURRENT, "quiescent current per section", 0.002),
    f.Field("offset_voltage", f.VOLTAGE_OR_ZERO, "input offset voltage (magnitude)", 1e-3),
    f.Field("bias_current", f.CURRENT, "input bias current, each input (magnitude)", 100e-9),
    f.Field("psrr", f.DECIBELS, "supply rejection at low frequency, each rail pin", 80.0),
    f.Field("psrr_corner", f.FREQUENCY, "where the supply rejection starts to fall", 100.0),
    f.Field("min_supply", f.POSITIVE_VOLTAGE, "least total supply, rail to rail", None),
    f.Field("max_supply", f.POSITIVE_VOLTAGE, "greatest total supply, rail to rail", None),
    f.Field("description", f.NAME, "what the class stands for", ""),
)

TRANSISTOR_FIELDS: tuple[f.Field, ...] = (
    f.Field("polarity", f.choice("npn", "pnp"), "device polarity"),
    f.Field("beta", f.RATIO, "current gain h_FE at the working current"),
    f.Field("vbe", f.POSITIVE_VOLTAGE, "base-emitter voltage in conduction", 0.65),
    f.Field("vce_sat", f.VOLTAGE_OR_ZERO, "collector-emitter saturation voltage", 0.2),
    f.Field("base_resistance", f.RESISTANCE_OR_ZERO, "base spreading resistance rbb'", 100.0),
    f.Field("description", f.NAME, "what the class stands for", ""),
)


def _part_repr(part: OpAmp | Transistor) -> str:
    """A part's repr on one short line: its name and its figures (SI), description left out."""
    pairs = [
        (field.name, getattr(part, field.name))
        for field in fields(part)
        if field.name not in ("name", "description")
    ]
    return f"<{type(part).__name__} {part.name!r}: {f.brief(pairs)}>"


@dataclass(frozen=True, kw_only=True, repr=False)
class OpAmp:
    """An op-amp section (SI units: Hz, V/s, V/rtHz, A/rtHz, ohm, V, A).

    ``second_pole`` (Hz, None for a single-pole part) is the open-loop gain's second pole;
    ``offset_voltage`` and ``bias_current`` are magnitudes (typical figures): their sign
    is unknown, so the DC figures take the worst of both. The defaults of a part described
    in a chain file without them (1 mV, 100 nA) are those of a general-purpose bipolar
    op-amp, from memory (common practice, no source). ``psrr`` (dB) is the power-supply
    rejection at low frequency, the same for each rail pin, and ``psrr_corner`` (Hz) where
    it starts to fall at 20 dB/decade; a part described without them gets 80 dB and
    100 Hz, typical values of a general-purpose op-amp quoted from memory.
    """

    name: str
    gbw: float
    slew_rate: float
    noise_voltage: float = 0.0
    noise_current: float = 0.0
    noise_corner: float | None = None
    open_loop_gain: float = 10.0**5
    second_pole: float | None = None
    output_resistance: float = 50.0
    swing_margin: float = 1.5
    output_current: float = 0.02
    supply_current: float = 0.002
    offset_voltage: float = 1e-3
    bias_current: float = 100e-9
    psrr: float = 80.0
    psrr_corner: float = 100.0
    min_supply: float | None = None
    max_supply: float | None = None
    description: str = ""

    def __repr__(self) -> str:
        return _part_repr(self)


@dataclass(frozen=True, kw_only=True, repr=False)
class Transistor:
    """A bipolar transistor (SI units: V, ohm)."""

    name: str
    polarity: str
    beta: float
    vbe: float = 0.65
    vce_sat: float = 0.2
    base_resistance: float = 100.0
    description: str = ""

    def __repr__(self) -> str:
        return _part_repr(self)


_GENERIC = "Generic class with representative typical values, not any real part."

# Representative values for each family, set from general experience of the families
# (common practice, no source; offset voltage and bias current are typical figures of each
# family quoted from memory); they are demonstration defaults, not a datasheet. None has a
# second pole: each is taken as compensated to a single pole. The supply rejection (psrr at
# low frequency, falling from psrr_corner at 20 dB/decade) is a typical value of each
# family quoted from memory, not a datasheet figure.
GENERIC_OPAMPS: dict[str, OpAmp] = {
    op.name: op
    for op in (
        OpAmp(
            name="jfet_input",
            gbw=3e6,
            slew_rate=10e6,
            noise_voltage=18e-9,
            noise_current=0.01e-12,
            noise_corner=100.0,
            open_loop_gain=10.0 ** (100 / 20),
            output_resistance=100.0,
            swing_margin=1.5,
            output_current=0.02,
            supply_current=0.0015,
            offset_voltage=3e-3,
            bias_current=30e-12,
            psrr=86.0,
            psrr_corner=30.0,
            min_supply=10.0,
            max_supply=36.0,
            description="JFET-input general-purpose op-amp. " + _GENERIC,
        ),
        OpAmp(
            name="low_noise_bipolar",
            gbw=10e6,
            slew_rate=7e6,
            noise_voltage=4.5e-9,
            noise_current=0.7e-12,
            noise_corner=10.0,
            open_loop_gain=10.0 ** (100 / 20),
            output_resistance=50.0,
            swing_margin=1.5,
            output_current=0.025,
            supply_current=0.005,
            offset_voltage=0.5e-3,
            bias_current=200e-9,
            psrr=100.0,
            psrr_corner=100.0,
            min_supply=10.0,
            max_supply=36.0,
            description="Low-noise bipolar audio op-amp. " + _GENERIC,
        ),
        OpAmp(
            name="legacy_bipolar",
            gbw=1e6,
            slew_rate=0.5e6,
            noise_voltage=20e-9,
            noise_current=0.5e-12,
            noise_corner=200.0,
            open_loop_gain=10.0 ** (100 / 20),
            output_resistance=75.0,
            swing_margin=2.0,
            output_current=0.02,
            supply_current=0.0017,
            offset_voltage=1e-3,
            bias_current=80e-9,
            psrr=90.0,
            psrr_corner=10.0,
            min_supply=10.0,
            max_supply=36.0,
            description="Early general-purpose bipolar op-amp. " + _GENERIC,
        ),
        OpAmp(
            name="cmos_rail_to_rail",
            gbw=1e6,
            slew_rate=0.6e6,
            noise_voltage=30e-9,
            noise_current=0.001e-12,
            noise_corner=300.0,
            open_loop_gain=10.0 ** (100 / 20),
            output_resistance=200.0,
            swing_margin=0.1,
            output_current=0.01,
            supply_current=0.0001,
            offset_voltage=1e-3,
            bias_current=1e-12,
            psrr=80.0,
            psrr_corner=1000.0,
            min_supply=2.7,
            max_supply=6.0,
            description="Low-voltage CMOS rail-to-rail op-amp. " + _GENERIC,
        ),
    )
}


def _complementary_pair(
    family: str, what: str, beta: float, vbe: float, vce_sat: float, base_resistance: float
) -> tuple[Transistor, Transistor]:
    """An NPN class and its PNP complement with the same typical figures."""
    npn = Transistor(
        name=f"{family}_npn",
        polarity="npn",
        beta=beta,
        vbe=vbe,
        vce_sat=vce_sat,
        base_resistance=base_resistance,
        description=f"{what} NPN. {_GENERIC}",
    )
    pnp = replace(npn, name=f"{family}_pnp", polarity="pnp", description=f"{what} PNP. {_GENERIC}")
    return npn, pnp


GENERIC_TRANSISTORS: dict[str, Transistor] = {
    t.name: t
    for t in (
        *_complementary_pair("small", "Small-signal", 200.0, 0.65, 0.2, 100.0),
        *_complementary_pair("driver", "Medium-power driver", 100.0, 0.7, 0.3, 50.0),
        *_complementary_pair("power", "Output-stage power", 50.0, 0.8, 1.0, 10.0),
    )
}

DEFAULT_OPAMP = "jfet_input"
