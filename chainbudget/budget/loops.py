"""Op-amp loops in the solved chain: return ratios on any frequency axis, and the chain at
its output stage's idle point.

Every op-amp has a loop: its own feedback network, or a loop section round later stages
(`chainbudget.loops`). The return ratio of its controlled source is worked out on the
section's network terminated as the chain terminates it (the source impedance of everything
before the section, the admittance of everything after it, or an impedance given in its
place), solved again on whatever axis is asked (the loop margins need frequencies far above
the audio band).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from numpy.typing import NDArray

from chainbudget.budget.analysis import positions_as_set, solve_chain
from chainbudget.cascade import Cascade, solve_cascade, stamp_section
from chainbudget.chainfile import Chain
from chainbudget.loopmath import stability_axis
from chainbudget.loops import Section, section_of, sections
from chainbudget.loudspeaker import load_impedance
from chainbudget.network import GROUND, Complex, Netlist
from chainbudget.source_network import source_impedance
from chainbudget.stages import KINDS
from chainbudget.stages.base import Environment, opamp_part

# A source impedance below this (an ideal driver) is stamped as this much (ohm), as the
# noise budget does: 1/Z_S must stay finite.
SOURCE_FLOOR_OHM = 1e-9


class LoopSolver:
    """The chain's loops, solved on demand (each axis once) with every control as set."""

    def __init__(self, chain: Chain, envs: Sequence[Environment], reference_hz: float) -> None:
        self.chain = chain
        self.envs = tuple(envs)
        self.reference_hz = reference_hz
        self.sections = sections(chain.stages)
        self._cascades: dict[bytes, Cascade] = {}
        self._idle: Cascade | None = None

    def section(self, index: int) -> Section:
        return section_of(self.sections, index)

    def cascade_on(self, frequency: NDArray[np.float64]) -> Cascade:
        """The chain solved on ``frequency`` with its controls as set (cached per axis)."""
        key = np.asarray(frequency, dtype=float).tobytes()
        if key not in self._cascades:
            positions = positions_as_set(self.chain.stages)
            self._cascades[key] = solve_chain(self.chain, self.envs, frequency, positions)
        return self._cascades[key]

    def idle(self) -> Cascade:
        """The chain at the reference frequency with every stage at its idle point
        (`Environment.idle`: an output pair with both halves conducting)."""
        if self._idle is None:
            frequency = np.array([self.reference_hz])
            self._idle = solve_cascade(
                self.chain.stages,
                self.envs,
                frequency,
                positions_as_set(self.chain.stages),
                source_impedance(self.chain.source, frequency),
                load_impedance(self.chain.load, frequency),
                idle=True,
            )
        return self._idle

    def stability_axis(self) -> NDArray[np.float64]:
        """From the reference frequency to a hundred times the fastest op-amp (Hz)."""
        parts = [
            opamp_part(stage, env)
            for stage, env in zip(self.chain.stages, self.envs, strict=True)
            if KINDS[stage.kind].uses_opamp
        ]
        fastest = max([max(op.gbw, op.second_pole or 0.0) for op in parts] or [0.0])
        return stability_axis(self.reference_hz, fastest)

    def return_ratio(
        self,
        index: int,
        frequency: NDArray[np.float64],
        load_z: Complex | None = None,
    ) -> Complex | None:
        """Bode's return ratio of stage ``index``'s (first) op-amp, in its section terminated
        as the chain terminates it, on ``frequency``; with ``load_z`` (shape ``(..., F)``)
        that impedance hangs on the section's output in place of everything after it.
        None for a stage without an op-amp.

        Notes
        -----
        `chainbudget.network.Netlist.return_ratio` on the section's network, with the
        source impedance Z_S of everything before the section from its input to ground and
        the load admittance Y_L of everything after it from its output to ground, both on
        the same axis (the chain solved there): the loop as built, the loudspeaker and its
        cable capacitance included.
        """
        section = self.section(index)
        cas = self.cascade_on(frequency)
        net = Netlist(frequency)
        stages = self.chain.stages
        positions = positions_as_set(stages)
        builts = stamp_section(net, stages, self.envs, positions, section, "in", "out")
        opamps = builts[index - section.first].opamps
        if not opamps:
            return None
        z_s = np.asarray(cas.source_impedance[section.first], dtype=complex)
        z_s = np.where(np.abs(z_s) < SOURCE_FLOOR_OHM, SOURCE_FLOOR_OHM, z_s)
        net.admittance("in", GROUND, 1.0 / z_s)
        if load_z is None:
            net.admittance("out", GROUND, cas.load_admittance[section.last])
        else:
            net.admittance("out", GROUND, 1.0 / np.asarray(load_z, dtype=complex))
        return net.return_ratio(opamps[0][0])
