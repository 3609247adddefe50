"""The small-signal bipolar transistor, stamped into a netlist at its DC bias point.

Shared by the transistor stage kinds (``follower``, ``push_pull``). Every transistor here
has its collector at AC ground (a rail), which is how both kinds use it.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from chainbudget import outputmath as om
from chainbudget.fields import listing, quoted, suggest
from chainbudget.network import GROUND, Netlist, Ref
from chainbudget.parts import Transistor
from chainbudget.spectrum import shot_current_psd

# Below this emitter current a transistor is taken as cut off; the model keeps it at this
# current so the network stays solvable, and the stage's limits report zero swing.
CUTOFF_A = 1e-9


def as_number(value: Any) -> Any:
    """A float for a 0-d result, the array itself for a batch of trials."""
    return float(value) if np.ndim(value) == 0 else np.asarray(value, dtype=float)


@dataclass(frozen=True)
class SmallSignal:
    """Hybrid-pi parameters of one transistor at its bias point (A, S, ohm).

    Attributes
    ----------
    i_e, i_c, i_b : float
        Quiescent emitter, collector and base current, A (I_C = beta I_B, I_E = I_C + I_B).
    g_m : float
        Transconductance I_C / V_T, S.
    r_pi : float
        beta / g_m, ohm.
    r_e : float
        V_T / I_E, ohm (so that r_pi = (beta + 1) r_e exactly).
    r_bb : float
        Base spreading resistance, ohm.
    beta : float
        Current gain.
    """

    i_e: float
    i_c: float
    i_b: float
    g_m: float
    r_pi: float
    r_e: float
    r_bb: float
    beta: float


def small_signal(part: Transistor, i_e: float, temperature_k: float) -> SmallSignal:
    """Hybrid-pi parameters of ``part`` carrying emitter current ``i_e`` (A) at a temperature.

    Notes
    -----
    V_T = kT/q; I_C = beta/(beta + 1) I_E; g_m = I_C/V_T; r_pi = beta/g_m; r_e = V_T/I_E
    (Ebers-Moll small-signal model, Horowitz & Hill, The Art of Electronics, 3rd ed.,
    sec. 2.3.1-2.3.2, from memory). The junction is taken at the chain's ambient
    temperature; the early effect (r_o) and the junction capacitances are left out, which is
    exact enough through the audio band for a follower.
    """
    # Element-wise throughout: beta and the bias current may be arrays over a leading
    # trial axis (chainbudget/spread); plain floats stay floats.
    i_e = as_number(np.maximum(i_e, CUTOFF_A))
    vt = float(om.thermal_voltage(temperature_k))
    beta = part.beta
    i_c = beta / (beta + 1.0) * i_e
    g_m = as_number(om.transconductance(i_c, vt))
    return SmallSignal(
        i_e=i_e,
        i_c=i_c,
        i_b=i_e - i_c,
        g_m=g_m,
        r_pi=as_number(om.r_pi(beta, g_m)),
        r_e=as_number(om.emitter_resistance(i_e, vt)),
        r_bb=part.base_resistance,
        beta=beta,
    )


def stamp_transistor(
    net: Netlist,
    base: str,
    emitter: str,
    ss: SmallSignal,
    *,
    label: str,
    stage: str,
    temperature_k: float,
    noise_bias: SmallSignal | None = None,
) -> Ref:
    """Stamp a transistor with its collector at AC ground between ``base`` and ``emitter``.

    Returns the branch whose current is the transistor's small-signal emitter current
    (flowing out of the emitter terminal into ``emitter``), for limits and rail currents.
    ``noise_bias`` gives the currents of the shot noise when the small-signal model is taken
    at another current than the idle one (an output stage in conduction); default ``ss``.

    Notes
    -----
    Hybrid-pi model (Horowitz & Hill 3rd ed. sec. 2.3, from memory): r_bb' from the base
    terminal to the internal base b'; r_pi from b' to the emitter; a transconductance
    g_m v(b'e) from the collector (AC ground) into the emitter. The netlist has no
    voltage-controlled current source, so g_m is built as its Norton form: a VCVS of gain
    g_m R0 behind R0 into the emitter, with a conductance of -1/R0 from the emitter to ground
    cancelling the VCVS's own source conductance, which leaves exactly g_m v(b'e) (R0 = r_e
    keeps the matrix entries of the order of the others). A 0 V source in the emitter lead
    measures the emitter current.

    Noise (van der Ziel, Noise in Solid State Devices and Circuits, 1986, the hybrid-pi
    noise model, from memory): shot noise 2 q I_B from b' to the emitter, shot noise
    2 q I_C from the collector to the emitter, and the thermal noise 4 k T r_bb' of the
    base spreading resistance. r_pi is a dynamic resistance and carries no thermal noise.
    """
    internal_base = base
    if np.any(np.asarray(ss.r_bb) > 0.0):
        internal_base = f"{label}.b'"
        net.resistor(
            base,
            internal_base,
            ss.r_bb,
            label=f"{label}.rbb",
            stage=stage,
            temperature_k=temperature_k,
        )
    internal_emitter = f"{label}.e'"
    net.resistor(internal_base, internal_emitter, ss.r_pi, label=f"{label}.r_pi")
    source = f"{label}.gm"
    net.vcvs(internal_base, internal_emitter, source, ss.g_m * ss.r_e, label=f"{label}.gm")
    net.resistor(source, internal_emitter, ss.r_e, label=f"{label}.gm.r0")
    net.admittance(internal_emitter, GROUND, -1.0 / ss.r_e)
    current = net.voltage_source(internal_emitter, emitter, label=f"{label}.i_e")
    idle = ss if noise_bias is None else noise_bias
    net.current_noise(
        internal_base,
        internal_emitter,
        shot_current_psd(idle.i_b),
        f"{label}.shot_b",
        stage,
        "transistor",
        "shot",
    )
    net.current_noise(
        internal_emitter,
        GROUND,
        shot_current_psd(idle.i_c),
        f"{label}.shot_c",
        stage,
        "transistor",
        "shot",
    )
    return current


def transistor_problems(
    values: Mapping[str, Any],
    wanted: Sequence[tuple[str, str | None]],
    transistors: Mapping[str, Transistor],
) -> list[tuple[str, str]]:
    """Loader checks of transistor references: (key, message) for each unknown name or
    wrong polarity. ``wanted`` lists (key, polarity or None for either)."""
    found = []
    for key, polarity in wanted:
        name = values.get(key)
        if name is None:
            continue
        part = transistors.get(str(name))
        if part is None:
            found.append(
                (
                    key,
                    f"no transistor named {quoted(name)}"
                    + suggest(str(name), transistors)
                    + "; the transistors are: "
                    + listing(transistors),
                )
            )
        elif polarity is not None and part.polarity != polarity:
            expected = f"a transistor of polarity {polarity}"
            found.append((key, f"{quoted(name)} is {part.polarity}, expected {expected}"))
    return found
