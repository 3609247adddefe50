"""Every finding code the catalogue lists fires where it should, read from the real command.

For each code that no other test asserts as firing, a small chain built so that the code
fires, run through `chainbudget check FILE --format json` (the contract's JSON: `findings[]`
with `severity`, `code`, `stage`, `supply`, `figures`). Each case asserts the code, its
severity and its subject (the stage or the supply), and where the finding carries figures,
one of them against a hand calculation written here, from the circuit the contract's
"Stage topologies" describe. Figures in dB are compared with an absolute tolerance in dB,
the others with a relative tolerance and no absolute floor. Whether a warning or note fires
at all follows the project's own thresholds (the contract's 6 dB, the code's drive margin):
that part restates the project's own thresholds (not an outside check); the figures are the
outside check.

The chains use an op-amp class of our own, near-ideal (open-loop gain 120 dB, GBW 100 GHz;
its 50 ohm open-loop output resistance sits inside the loop, some 1e-4 ohm closed-loop;
where its gain matters the hand formula carries it), and `block`
stages, whose gain, impedances and clip level are given outright. Then a meta-test: every
code in docs/findings.md is quoted by at least one test file on an asserting line.
"""

from __future__ import annotations

import json
import math
import re
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pytest
from typer.testing import CliRunner

from chainbudget.cli import app

ROOT = Path(__file__).resolve().parents[1]
SQRT2 = math.sqrt(2.0)
runner = CliRunner()

# A near-ideal op-amp (a demonstration part, not a real one) on +/-15 V: it swings to
# within 1.5 V of each rail, 13.5 V peak.
HEAD = """
[chain]
title = "finding test"
band = ["20 Hz", "20 kHz"]
reference = "1 kHz"
ambient = "25 degC"
points_per_decade = 10

[opamp.ideal]
gbw = "100 gigahertz"   # the prefix in full: an idealised value kept as meant
slew_rate = "1000 V/us"
open_loop_gain = "120 dB"
output_resistance = "50 ohm"
swing_margin = "1.5 V"
output_current = "{current}"

[[supply]]
name = "plus"
kind = "dc"
voltage = "15 V"

[[supply]]
name = "minus"
kind = "dc"
voltage = "15 V"
"""
SWING_VPK = 13.5


def chain(body: str, *, current: str = "20 mA") -> str:
    return HEAD.format(current=current) + body


def db20(ratio: float) -> float:
    return 20.0 * math.log10(ratio)


def parallel(a: complex, b: complex) -> complex:
    return a * b / (a + b)


def open_loop_gain(f_hz: float) -> complex:
    """The near-ideal op-amp's single-pole open-loop gain A0/(1 + j f A0/GBW) (Franco, Design
    with Operational Amplifiers, 4th ed., sec. 6.1, from memory)."""
    return 1e6 / (1.0 + 1j * f_hz * 1e6 / 100e9)


def bass_boost_gain(f_hz: float, outer: float, pot: float, cap: float) -> complex:
    """Feedback bass stage at full boost (wiper at A, contract "Stage topologies"): the
    summing node sits at A but for the pot's end resistance (1e-6 P at each end, the
    contract's), so the input leg is `outer` + 1e-6 P and the feedback leg the lower pot
    half (P || cap), its end and the output `outer`. Inverting amplifier with finite
    open-loop gain A (Franco sec. 1.3 / 6.1, from memory):
    G = -(Z_f/Z_i) / (1 + (1 + Z_f/Z_i)/A)."""
    end = 1e-6 * pot
    z_half = parallel(pot, 1.0 / (2j * math.pi * f_hz * cap))
    ratio = (outer + end + z_half) / (outer + end)
    return -ratio / (1.0 + (1.0 + ratio) / open_loop_gain(f_hz))


# --- the chains --------------------------------------------------------------------------

BLOCK_OUT = """
[source]
level = "{level}"
max_level = "{max_level}"
impedance = "1 kohm"

[load]
impedance = "9.9 kohm"

[[stage]]
name = "amp"
kind = "block"
gain = 20
input_impedance = "99 kohm"
output_impedance = "100 ohm"
max_output = "10 V"
"""


def block_out_headroom_db(level_vrms: float) -> float:
    """Headroom of the block's node: 10 V peak over the source peak through the source
    divider (1k into 99k), the gain of 20 and the output divider (100 ohm into 9.9k)."""
    at_node = SQRT2 * level_vrms * (99e3 / 100e3) * 20.0 * (9.9e3 / 10e3)
    return db20(10.0 / at_node)


TONE_ALONE = """
[source]
level = "100 mV"
max_level = "1 V"

[load]
impedance = "10 kohm"

[[stage]]
name = "bass"
kind = "tone_bass"
outer = "10k"
pot = "100k"
cap = "10n"
opamp = "ideal"
positive = "plus"
negative = "minus"
"""

# A buffer clipping at 1 V peak ahead of a bass stage of +20.8 dB full boost: the boost
# exceeds the buffer's headroom, while the tone stage's own output stays inside its swing.
BOOST_AFTER_BUFFER = """
[source]
level = "100 mV"
max_level = "500 mV"

[load]
impedance = "10 kohm"

[[stage]]
name = "buffer"
kind = "block"
gain = 1
input_impedance = "1 Mohm"
output_impedance = "0.001 ohm"
max_output = "1 V"

[[stage]]
name = "bass"
kind = "tone_bass"
outer = "10k"
pot = "100k"
cap = "10n"
opamp = "ideal"
positive = "plus"
negative = "minus"
"""

# Behind a linear volume pot: a line block (gain 10, clips at 2 V peak) then an output block
# (gain 4, clips at 12 V peak). As the volume rises the line block clips first.
BEHIND_VOLUME = """
[source]
level = "{level}"
max_level = "1 V"

[load]
impedance = "8 ohm"

[[stage]]
name = "volume"
kind = "volume"
pot = "10k"
taper = "linear"
position = 0.3

[[stage]]
name = "line"
kind = "block"
gain = 10
input_impedance = "10 kohm"
output_impedance = "100 ohm"
max_output = "2 V"

[[stage]]
name = "power"
kind = "block"
gain = 4
input_impedance = "10 kohm"
output_impedance = "0.1 ohm"
max_output = "12 V"
"""
VOLUME_POT, LINE_IN, LINE_OUT, LINE_GAIN = 10e3, 10e3, 100.0, 10.0
POWER_IN, POWER_OUT, POWER_GAIN, LOAD = 10e3, 0.1, 4.0, 8.0


def volume_ratio(x: float) -> float:
    """Linear pot at rotation x, wiper loaded by the line block's input (contract "Stage
    topologies": x P wiper to ground, (1 - x) P wiper to the input)."""
    lower = parallel(x * VOLUME_POT, LINE_IN).real if x > 0.0 else 0.0
    return lower / ((1.0 - x) * VOLUME_POT + lower)


def power_node_per_volt_at_wiper() -> float:
    """Power-block node voltage per volt at the wiper: line gain into the power block's
    input, power gain into the load."""
    line = LINE_GAIN * POWER_IN / (POWER_IN + LINE_OUT)
    return line * POWER_GAIN * LOAD / (LOAD + POWER_OUT)


def clip_order_margin_db() -> float:
    """Volume fully up: the power block's headroom less the line block's. The source and
    volume divider are common to both nodes, so the margin is the line node's clip level
    carried to the power node against the power node's own: 20 log10(12 / (2 g)), g the
    line-node-to-power-node gain."""
    g = POWER_GAIN * LOAD / (LOAD + POWER_OUT)
    return db20(12.0 / (2.0 * g))


def volume_clip_rotation(level_vrms: float) -> float:
    """Smallest rotation at which the nominal level reaches the power block's 12 V peak:
    the root of sqrt(2) V ratio(x) k = 12, found by bisection on the loaded pot law."""
    k = SQRT2 * level_vrms * power_node_per_volt_at_wiper()
    lo, hi = 0.0, 1.0
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        lo, hi = (lo, mid) if volume_ratio(mid) * k >= 12.0 else (mid, hi)
    return hi


# A near-ideal op-amp stage (gain 2) driving a 1k linear volume pot whose wiper feeds a
# 100 ohm block: at full rotation the op-amp sees the pot in parallel with the block.
OPAMP_INTO_LOW_LOAD = """
[source]
level = "100 mV"
max_level = "1 V"

[load]
impedance = "10 kohm"

[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10k"
ground_leg = "10k"
opamp = "ideal"
positive = "plus"
negative = "minus"

[[stage]]
name = "volume"
kind = "volume"
pot = "1k"
taper = "linear"
position = 0.2

[[stage]]
name = "next"
kind = "block"
gain = 1
input_impedance = "100 ohm"
output_impedance = "100 ohm"
"""


def opamp_worst_current_a() -> float:
    """Peak output current at 1 V rms in, gain 2, volume fully up (Kirchhoff's current law
    at the output): into the feedback pair (10k + 10k) and into the pot, whose wiper at the
    top puts the track (with its lower end's 1e-6 P) in parallel with the 100 ohm block,
    behind the upper end's 1e-6 P (the contract's stability resistances). The op-amp as a
    feedback amplifier (Franco sec. 1.3, from memory): closed-loop gain 2/(1 + 2/A), output
    resistance R_o/(1 + A/2), with A = 1e6 through the band's low end where the current is
    greatest."""
    end = 1e-6 * 1e3
    load = parallel(end + parallel(1e3 + end, 100.0), 20e3).real
    v_open = SQRT2 * 1.0 * 2.0 / (1.0 + 2.0 / 1e6)
    return v_open / (load + 50.0 / (1.0 + 1e6 / 2.0))


# An op-amp running from one 9 V battery, run down to 7 V, against a part needing 10 V.
LOW_SUPPLY = """
[source]
level = "10 mV"

[load]
impedance = "10 kohm"

[opamp.wants_ten]
gbw = "1 MHz"
slew_rate = "1 V/us"
min_supply = "10 V"

[[supply]]
name = "battery"
kind = "dc"
voltage = "9 V"
min_voltage = "7 V"

[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "10k"
ground_leg = "10k"
opamp = "wants_ten"
"""

# A push-pull stage of generic power devices (beta 50, V_CE(sat) 1 V, V_BE 0.8 V) on
# +/-15 V into 8 ohm through 0.22 ohm emitter resistors.
PUSH_PULL = """
[[stage]]
name = "out"
kind = "push_pull"
upper = "power_npn"
lower = "power_pnp"
emitter_resistors = "0R22"
quiescent = "40 mA"
theta_jc = "2 K/W"
heatsink = "3 K/W"
{extra}
positive = "plus"
negative = "minus"
"""
PP_LOAD = """
[source]
level = "1 V"
max_level = "2 V"

[load]
impedance = "8 ohm"
"""
PP_CLIP_VPK = (15.0 - 1.0 - 0.8) * 8.0 / 8.22  # Horowitz & Hill 3rd ed. sec. 2.4.1

# The near-ideal op-amp (gain 1 + 12k/2k2) driving the push-pull directly, with 50 mA of
# output current: enough for the output devices' base current, with less than 6 dB spare.
DRIVEN_PUSH_PULL = """
[[stage]]
name = "drive"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "12k"
ground_leg = "2k2"
opamp = "ideal"
positive = "plus"
negative = "minus"
"""


def drive_needed_a() -> float:
    """The driver's peak current with the output stage at its clip level: the output
    devices' base current I_B = I_E/(beta + 1) (Horowitz & Hill 3rd ed. sec. 2.1.1) with
    I_E = V_pk/R_L, plus its own feedback pair (12k + 2k2, the summing node following the
    output) at the driving voltage. The driver sees r_bb' + (beta + 1)(r_e + R_E + R_L)
    (the follower's input impedance, sec. 2.2.3), so that voltage is
    I_E (R_L + R_E + r_e) + I_B r_bb', with r_e = V_T/I_E at 25 degC (sec. 2.3.2) and the
    generic power class's r_bb' of 10 ohm (docs/format.md)."""
    i_e = PP_CLIP_VPK / 8.0
    i_b = i_e / 51.0
    r_e = 1.380649e-23 * 298.15 / 1.602176634e-19 / i_e  # SI 2019 exact k and q
    v_drive = i_e * (8.0 + 0.22 + r_e) + i_b * 10.0
    return i_b + v_drive / (12e3 + 2.2e3)


def class_b_worst_device_w(vcc: float, load: float, phase_deg: float, i_q: float) -> float:
    """Worst continuous-sine dissipation per device of a class-B pair into a load of
    magnitude |Z| and phase phi, plus the idle V_cc I_q. Per device, over a cycle:
    P(V) = V_cc V/(pi |Z|) - V^2 cos(phi)/(4 |Z|) (supply power less the device's share of
    the load power; Boylestad & Nashelsky, class B section, from memory, with the current
    lagging by phi); dP/dV = 0 at V = 2 V_cc/(pi cos phi), where P = V_cc^2/(pi^2 |Z| cos phi)."""
    return vcc**2 / (math.pi**2 * load * math.cos(math.radians(phase_deg))) + vcc * i_q


# --- the table ---------------------------------------------------------------------------


@dataclass(frozen=True)
class Case:
    """A chain, the finding it must raise (code, severity, stage or supply), and one figure
    of that finding against a hand value: within `tolerance` in dB for a figure in dB,
    relative otherwise, absolute where `absolute` says so."""

    text: str
    code: str
    severity: str
    stage: str | None = None
    supply: str | None = None
    figure: str | None = None
    expected: Callable[[], float] | None = None
    tolerance: float = 1e-6
    absolute: bool = False


CASES: dict[str, Case] = {
    "clip-nominal": Case(
        chain(BLOCK_OUT.format(level="1 V", max_level="1 V")),
        "clip-nominal",
        "error",
        stage="amp",
        figure="nominal_headroom_db",
        expected=lambda: block_out_headroom_db(1.0),
        tolerance=1e-6,
    ),
    "clip-max": Case(
        chain(BLOCK_OUT.format(level="100 mV", max_level="1 V")),
        "clip-max",
        "error",
        stage="amp",
        figure="headroom_db",
        expected=lambda: block_out_headroom_db(1.0),
        tolerance=1e-6,
    ),
    "clip-worst-case": Case(
        chain(TONE_ALONE),
        "clip-worst-case",
        "warning",
        stage="bass",
        figure="worst_headroom_db",
        # full boost at the band's low edge, 20 Hz, where the boost is greatest
        expected=lambda: db20(SWING_VPK / (SQRT2 * abs(bass_boost_gain(20.0, 10e3, 100e3, 10e-9)))),
        tolerance=1e-5,
    ),
    "boost-over-headroom": Case(
        chain(BOOST_AFTER_BUFFER),
        "boost-over-headroom",
        "warning",
        stage="bass",
        figure="boost_db",
        expected=lambda: db20(abs(bass_boost_gain(20.0, 10e3, 100e3, 10e-9))),
        tolerance=1e-5,
    ),
    "clip-order": Case(
        chain(BEHIND_VOLUME.format(level="500 mV")),
        "clip-order",
        "warning",
        stage="line",
        figure="margin_db",
        expected=clip_order_margin_db,
        tolerance=1e-6,
    ),
    "volume-clip-rotation": Case(
        chain(BEHIND_VOLUME.format(level="500 mV")),
        "volume-clip-rotation",
        "note",
        stage="volume",
        figure="rotation",
        expected=lambda: volume_clip_rotation(0.5),
        # the rotation is searched on a grid and printed to two decimals
        tolerance=0.005,
        absolute=True,
    ),
    "volume-never-clips": Case(
        chain(BEHIND_VOLUME.format(level="100 mV")),
        "volume-never-clips",
        "note",
        stage="volume",
    ),
    "opamp-current": Case(
        chain(OPAMP_INTO_LOW_LOAD),
        "opamp-current",
        "warning",
        stage="pre",
        figure="worst_a",
        expected=opamp_worst_current_a,
        tolerance=1e-6,
    ),
    "opamp-supply-low": Case(
        HEAD.split("[opamp.ideal]")[0] + LOW_SUPPLY,  # its own battery, not the +/-15 V
        "opamp-supply-low",
        "error",
        stage="pre",
        figure="low_total_v",
        expected=lambda: 7.0,
        tolerance=1e-9,
    ),
    "drive-margin": Case(
        chain(PP_LOAD + DRIVEN_PUSH_PULL + PUSH_PULL.format(extra=""), current="50 mA"),
        "drive-margin",
        "warning",
        stage="drive",
        figure="needed_a",
        expected=drive_needed_a,
        tolerance=1e-6,
    ),
    "reactive-load": Case(
        chain(PP_LOAD + PUSH_PULL.format(extra='load_phase = "30 deg"')),
        "reactive-load",
        "note",
        stage="out",
        figure="device_w",
        expected=lambda: class_b_worst_device_w(15.0, 8.0, 30.0, 0.04),
        tolerance=1e-9,
    ),
    "max-output": Case(
        chain(PP_LOAD + PUSH_PULL.format(extra="")),
        "max-output",
        "note",
        stage="out",
        figure="clip_power_w",
        expected=lambda: PP_CLIP_VPK**2 / (2.0 * 8.0),
        tolerance=1e-9,
    ),
}


def check_json(text: str, tmp_path: Path) -> dict[str, Any]:
    file = tmp_path / "chain.toml"
    file.write_text(text, encoding="utf-8")
    result = runner.invoke(app, ["check", str(file), "--format", "json"])
    assert result.exit_code in (0, 1), result.output
    data: dict[str, Any] = json.loads(result.stdout)
    return data


@pytest.mark.parametrize("name", CASES)
def test_the_finding_fires_with_its_severity_subject_and_figure(name: str, tmp_path: Path) -> None:
    case = CASES[name]
    found = [f for f in check_json(case.text, tmp_path)["findings"] if f["code"] == case.code]
    assert found, f"{case.code} did not fire"
    subject = [f for f in found if f["stage"] == case.stage and f["supply"] == case.supply]
    assert subject, f"{case.code} fired for {[(f['stage'], f['supply']) for f in found]}"
    finding = subject[0]
    assert finding["severity"] == case.severity
    if case.figure is None or case.expected is None:
        return
    got, want = finding["figures"][case.figure], case.expected()
    if case.absolute or case.figure.endswith("_db"):
        assert got == pytest.approx(want, abs=case.tolerance)
    else:
        assert got == pytest.approx(want, rel=case.tolerance, abs=0)


def test_a_tone_boost_that_clips_is_not_also_reported_as_over_the_headroom(tmp_path: Path) -> None:
    """The bass stage alone clips at full boost (clip-worst-case); the rule for the boost
    against the headroom before it then stays quiet for that stage (one cause, one finding)."""
    codes = {(f["code"], f["stage"]) for f in check_json(chain(TONE_ALONE), tmp_path)["findings"]}
    assert ("clip-worst-case", "bass") in codes
    assert ("boost-over-headroom", "bass") not in codes


def test_volume_never_clips_only_when_full_rotation_stays_below_the_clip_level() -> None:
    """The premise of the volume-never-clips case, by hand: at 100 mV and full rotation the
    power block's node peaks below its 12 V, and at 500 mV above it."""
    full = volume_ratio(1.0) * power_node_per_volt_at_wiper() * SQRT2
    assert full * 0.1 < 12.0 < full * 0.5


# --- the catalogue against the tests -------------------------------------------------------


def documented_codes() -> set[str]:
    text = (ROOT / "docs" / "findings.md").read_text(encoding="utf-8")
    return {m.group(1) for m in re.finditer(r"^\| `([a-z0-9-]+)` \|", text, re.MULTILINE)}


def test_every_documented_code_is_asserted_by_some_test() -> None:
    """Each code of docs/findings.md appears quoted in a test file on a line that does not
    only check its absence (a line with `not` on it does not count), or is a case above."""
    codes = documented_codes()
    assert len(codes) > 30
    asserted: set[str] = set(CASES)
    for path in (ROOT / "tests").glob("test_*.py"):
        for line in path.read_text(encoding="utf-8").splitlines():
            if re.search(r"\bnot\b", line):
                continue
            asserted |= {code for code in codes if f'"{code}"' in line}
    assert not codes - asserted, f"documented codes no test asserts: {sorted(codes - asserted)}"
