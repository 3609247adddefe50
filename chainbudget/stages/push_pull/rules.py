"""A push-pull stage's findings: the drive it asks of its driver, its heat, DC on the load,
and the hot-parts caution."""

from __future__ import annotations

from chainbudget.finding import Finding
from chainbudget.notation import amps, sig, watts
from chainbudget.stages.push_pull.crossover import Crossover
from chainbudget.stages.push_pull.drive import HandOver, OutputBias, TurnOn
from chainbudget.stages.push_pull.heat import Dissipation
from chainbudget.stages.push_pull.thermal_loop import VBE_TEMPCO_V_PER_K, ThermalBias
from chainbudget.thresholds import (
    DRIVE_MARGIN,
    JUNCTION_MARGIN_K,
    QUIESCENT_CLIMB_FACTOR,
    QUIESCENT_HIGH_FRACTION,
    QUIESCENT_LOW_FRACTION,
)


def drive_rules(h: HandOver) -> list[Finding]:
    """The driver falls short of the base current, or has little to spare (its findings
    name the driver)."""
    figures: dict[str, float | None] = {
        "base_current_a": h.base_current_a,
        "needed_a": h.needed_a,
        "available_a": h.available_a,
        "output_clip_vpk": h.output_clip_vpk,
    }
    if h.shortfall and h.available_a is not None:
        return [
            Finding(
                "error",
                "drive-shortfall",
                h.driver,
                f'runs out of current driving the output stage "{h.stage}": at the output '
                f"stage's clip level of {sig(h.output_clip_vpk, 'V')} peak it would have to "
                f"deliver {amps(h.needed_a)} (the output stage's base current is "
                f"{amps(h.base_current_a)}, I_E/(beta + 1) of the conducting half) but has "
                f"{amps(h.available_a)}, so it clips first, at "
                f"{sig(h.driver_clip_output_vpk or 0.0, 'V')} peak at the output; "
                f"{h.driver_remedy}, or use Darlington output devices",
                {**figures, "driver_clip_output_vpk": h.driver_clip_output_vpk},
            )
        ]
    if (
        h.needed_a is not None
        and h.available_a is not None
        and h.needed_a > DRIVE_MARGIN * h.available_a
    ):
        return [
            Finding(
                "warning",
                "drive-margin",
                h.driver,
                f'drives the output stage "{h.stage}" to its clip level with '
                f"{amps(h.needed_a)} of its {amps(h.available_a)}: less than 6 dB of current "
                f"in hand (the output stage's peak base current is "
                f"{amps(h.base_current_a)}); {h.driver_remedy} for margin",
                figures,
            )
        ]
    return []


def bias_rules(stage: str, b: OutputBias) -> list[Finding]:
    if not b.dc_on_load:
        return []
    return [
        Finding(
            "error",
            "dc-on-load",
            stage,
            "a single-supply output stage without an output capacitor puts half the supply "
            "across the load as DC; add output_cap in series with the load",
            {"bias_v": b.bias_v},
        )
    ]


def heat_rules(d: Dissipation) -> list[Finding]:
    """The junction against its maximum (or a note asking for the thermal path), a reactive
    load's extra heat, and the hot-parts caution."""
    found = _thermal(d)
    if d.load_phase_deg != 0.0:
        found.append(
            Finding(
                "note",
                "reactive-load",
                d.stage,
                f"with the load's phase of {d.load_phase_deg:.0f} deg the worst dissipation "
                f"per device is {watts(d.worst_device_w)} against "
                f"{watts(d.resistive_worst_device_w)} into a resistor of the same "
                "impedance: the devices draw the same supply current while less of the "
                "power reaches the load",
                {"device_w": d.worst_device_w, "resistive_device_w": d.resistive_worst_device_w},
            )
        )
    hot = "" if d.heatsink_degc is None else f" (about {d.heatsink_degc:.0f} degC at worst)"
    where = "their heatsink runs hot" if d.heatsink_k_per_w is not None else "they run hot"
    found.append(
        Finding(
            "caution",
            "hot-output-stage",
            d.stage,
            f"Hot parts: the output devices dissipate up to {sig(d.worst_device_w, 'W')} each and "
            f"{where}{hot}; metal that hot can burn on touch. Mount them where they cannot be "
            "touched or covered, keep air flowing, and check the temperature on the bench "
            "before closing the box.",
            {"device_w": d.worst_device_w, "heatsink_degc": d.heatsink_degc},
        )
    )
    return found


def _thermal(d: Dissipation) -> list[Finding]:
    figures: dict[str, float | None] = {
        "device_w": d.worst_device_w,
        "max_junction_degc": d.max_junction_degc,
    }
    if d.junction_degc is None:
        sink = ""
        if d.max_heatsink_k_per_w is not None:
            sink = (
                f"; a heatsink of at most {sig(d.max_heatsink_k_per_w, 'K/W')} per device keeps "
                f"the junction at {d.max_junction_degc:g} degC"
            )
        return [
            Finding(
                "note",
                "heat-unknown",
                d.stage,
                f"each output device dissipates up to {watts(d.worst_device_w)} (worst sine "
                f"level, {sig(d.worst_vpk, 'V')} peak); give theta_jc and heatsink (or theta_ja) "
                f"to check its junction temperature{sink}",
                figures,
            )
        ]
    figures["junction_degc"] = d.junction_degc
    on_sink = d.heatsink_k_per_w is not None
    if d.max_heatsink_k_per_w is None:
        fix = "mount the devices on a heatsink"
    elif d.max_heatsink_k_per_w < 0.0:
        fix = "no heatsink can keep it there at these rails"
    else:
        fix = (
            f"a heatsink of at most {sig(d.max_heatsink_k_per_w, 'K/W')} keeps it at "
            f"{d.max_junction_degc:g} degC"
        )
    if d.junction_degc > d.max_junction_degc:
        return [
            Finding(
                "error",
                "junction-over",
                d.stage,
                f"output device junction reaches {d.junction_degc:.0f} degC at the worst sine "
                f"level ({watts(d.worst_device_w)} per device, high-line rails), over its "
                f"{d.max_junction_degc:g} degC maximum: {fix}; lowering the rails or the "
                "quiescent current also cools it",
                figures,
            )
        ]
    sink = f"; {fix}" if on_sink or d.max_heatsink_k_per_w is not None else ""
    if d.junction_degc > d.max_junction_degc - JUNCTION_MARGIN_K:
        return [
            Finding(
                "warning",
                "junction-near",
                d.stage,
                f"output device junction reaches {d.junction_degc:.0f} degC at the worst sine "
                f"level ({watts(d.worst_device_w)} per device), within {JUNCTION_MARGIN_K:g} K "
                f"of its {d.max_junction_degc:g} degC maximum{sink}",
                figures,
            )
        ]
    return []


def crossover_rules(c: Crossover) -> list[Finding]:
    """The quiescent current far from Oliver's optimum I_q R_E = V_T (B. M. Oliver,
    "Distortion in complementary-pair class-B amplifiers", Hewlett-Packard Journal, Feb.
    1971): under it the gain dips through crossover, over it the gain rises there."""
    optimum = c.optimum_quiescent_a
    if optimum is None:
        return []
    figures: dict[str, float | None] = {
        "quiescent_a": c.quiescent_a,
        "optimum_quiescent_a": optimum,
        "idle_zout_ohm": c.idle_zout_ohm,
        "zout_ohm": c.zout_ohm,
        "gain_step_db": c.gain_step_db,
    }
    where = " (closed loop)" if c.in_loop else ""
    distortion = "" if c.thd_nominal is None else f"; THD {c.thd_nominal} at the nominal level"
    if c.quiescent_a < QUIESCENT_LOW_FRACTION * optimum:
        return [
            Finding(
                "warning",
                "quiescent-low",
                c.stage,
                f"its quiescent current of {amps(c.quiescent_a)} is "
                f"{c.quiescent_a / optimum:.2g} of the optimum for its emitter resistors, "
                f"I_q R_E = V_T, about {amps(optimum)} (Oliver, HP Journal, Feb. 1971): the "
                f"output impedance is {c.idle_zout_ohm:.3g} ohm at idle against "
                f"{c.zout_ohm:.3g} ohm in conduction{where}, a gain step of "
                f"{c.gain_step_db:+.2f} dB through crossover{distortion}; raise quiescent "
                "towards the optimum (and check the heat again)",
                figures,
            )
        ]
    if c.quiescent_a > QUIESCENT_HIGH_FRACTION * optimum:
        return [
            Finding(
                "note",
                "quiescent-high",
                c.stage,
                f"its quiescent current of {amps(c.quiescent_a)} is "
                f"{c.quiescent_a / optimum:.2g} times the optimum for its emitter resistors, "
                f"I_q R_E = V_T, about {amps(optimum)} (Oliver, HP Journal, Feb. 1971): both "
                "halves conduct over a wide region and the gain rises there "
                f"({c.gain_step_db:+.2f} dB at idle{where}), and the idle heat is higher "
                "than it needs to be",
                figures,
            )
        ]
    return []


def thermal_loop_rules(t: ThermalBias) -> list[Finding]:
    """Thermal runaway of the bias (error, with what stops it), or a quiescent current that
    more than doubles running hot (note)."""
    figures: dict[str, float | None] = {
        "quiescent_a": t.quiescent_a,
        "quiescent_hot_a": t.quiescent_hot_a,
        "spreader_tracking": t.spreader_tracking,
    }
    tempco = abs(VBE_TEMPCO_V_PER_K) * 1e3
    if t.thermal_runaway:
        fixes = []
        extra = max(t.stable_r_ohm - t.pair_r_ohm, 0.0) / 2.0
        fixes.append(
            f"more emitter resistance (each at least {t.emitter_resistor_ohm + extra:.2g} ohm "
            "keeps it stable at any current)"
        )
        if t.stable_tracking is not None:
            fixes.append(
                f"better tracking (the spreader following at least "
                f"{100.0 * t.stable_tracking:.0f} % of the devices' V_BE: mount it on the "
                "heatsink beside them)"
            )
        fixes.append("a smaller heatsink theta")
        return [
            Finding(
                "error",
                "thermal-runaway",
                t.stage,
                f"the quiescent current runs away as the output devices warm: their V_BE falls "
                f"by about {tempco:.0f} mV/K and the bias spreader follows "
                f"{100.0 * t.spreader_tracking:.0f} % of that, so each kelvin asks for more "
                "current, which heats them further, with no stable point below the junction's "
                f"maximum; {', '.join(fixes)}",
                {**figures, "stable_tracking": t.stable_tracking},
            )
        ]
    hot = t.quiescent_hot_a
    if hot is not None and hot > QUIESCENT_CLIMB_FACTOR * t.quiescent_a:
        return [
            Finding(
                "note",
                "quiescent-climbs",
                t.stage,
                f"its quiescent current climbs from {amps(t.quiescent_a)} to {amps(hot)} with "
                f"the heatsink at its running temperature (the junction near "
                f"{t.junction_hot_degc or 0.0:.0f} degC; the spreader follows "
                f"{100.0 * t.spreader_tracking:.0f} % of the output devices' V_BE): set the "
                "quiescent warm, or track the devices more closely (spreader on the heatsink)",
                {**figures, "junction_hot_degc": t.junction_hot_degc},
            )
        ]
    return []


def turn_on_rules(t: TurnOn) -> list[Finding]:
    """The switch-on thump of a single-supply stage's output capacitor (note)."""
    return [
        Finding(
            "note",
            "turn-on-thump",
            t.stage,
            f"at switch-on the mid-point rises to {t.mid_v:.3g} V and the output capacitor "
            f"charges to it through the loudspeaker: up to {amps(t.peak_a)} peak and "
            f"{t.energy_j * 1e3:.3g} mJ stored (as much again spent in the voice coil), a "
            "thump; ramp the bias up slowly (a larger capacitor on the bias divider, a "
            "soft-start), or hold the speaker off with a relay for the first second",
            {"mid_v": t.mid_v, "energy_j": t.energy_j, "peak_a": t.peak_a},
        )
    ]
