"""A small linear-network solver: modified nodal analysis vectorised over frequency.

A `Netlist` is built for one frequency vector. Element values may carry leading batch axes
(pot positions of swept controls, later Monte Carlo trials) and always broadcast against a
trailing frequency axis, so the stamped matrix has shape ``batch + (F, N, N)`` and is solved
with one batched solve (`chainbudget.sparse_lu`).

Notes
-----
Modified nodal analysis: Ho, Ruehli & Brennan, "The modified nodal approach to network
analysis", IEEE Trans. Circuits and Systems CAS-22 (1975) 504-509. Node voltages and the
currents of voltage-defined branches are the unknowns; an admittance y between nodes a, b
stamps +y at (a,a), (b,b) and -y at (a,b), (b,a); a voltage-controlled voltage source adds
one row and one column.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator, Mapping, Sequence
from contextlib import contextmanager
from contextvars import ContextVar
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from chainbudget import ChainError, sparse_lu
from chainbudget.sparse_lu import Pattern
from chainbudget.spectrum import thermal_current_psd

GROUND = "0"
# Each pot end carries this fraction of the track as a series resistance so the matrix never
# goes singular at the stops (chain-format contract, "Stage topologies").
POT_END_FRACTION = 1e-6
# A leak of 1000 Tohm from every node to ground gives a floating node (an op-amp input behind
# a capacitor, say) a defined solution without disturbing any real impedance level. Kept this
# small because each stage's netlist leaks its own port nodes, so the cascade counts the leak
# twice at every node between stages (1e-12 S there moved a 3 kohm node by 2e-9).
GMIN = 1e-15
# An ideal (zero-ohm) source output gets this much series resistance: a voltage source
# straight onto a two-port's output port meets the port's own test source there, and the
# short-circuit parameters `two_port` solves for would not exist (a singular matrix). Much
# smaller values make probes such as an op-amp's output current (g1 V1 + g2 V2 with g2 ~
# loop gain / R_o) cancel badly; 1 mohm keeps them to ~1e-5 and shifts a gain into 8 ohm
# by 1e-4 (0.001 dB).
SOURCE_FLOOR_OHM = 1e-3

Complex = NDArray[np.complexfloating[Any, Any]]


class SingularNetwork(ValueError, ChainError):
    """A network whose equations have no single solution (a node both cut off and driven,
    two ideal sources in a loop): an input error of the chain, which the budget reports with
    the stage it was solving."""


#: Whether a batched solve looks for repeated rows along its leading axis (`shared_rows`).
_SHARED_ROWS: ContextVar[bool] = ContextVar("shared_rows", default=False)


@contextmanager
def shared_rows() -> Iterator[None]:
    """Within it (in this thread), a netlist whose element values repeat along the leading
    batch axis is assembled and solved once for each distinct row, every row that repeats
    one taking its solution.

    The spread's corner rows are vertices that differ from one another in a part or two:
    a stage none of those parts touch has the same element values in every row. A matrix
    is a function of its element values alone, and each matrix is solved alone whatever
    batch it sits in, so the solutions are the same bits as those of the whole batch. Rows
    are told apart by the exact bytes of every element value (`Netlist.distinct_rows`).
    """
    token = _SHARED_ROWS.set(True)
    try:
        yield
    finally:
        _SHARED_ROWS.reset(token)


def _as_is(x: Complex) -> Complex:
    return x


@dataclass(frozen=True)
class Stamped:
    """An assembled MNA matrix, entry by entry (`sparse_lu.Entries`: entry (i, j) of every
    matrix of the batch one array of shape ``batch``, only the nonzero ones), with its
    sparsity pattern."""

    entries: dict[tuple[int, int], Complex]
    pattern: Pattern
    batch: tuple[int, ...]

    def batch_major(self) -> Complex:
        """The matrices as ``batch + (N, N)``."""
        n = self.pattern.nonzero.shape[0]
        return np.moveaxis(sparse_lu.dense(self.entries, n, self.batch), (0, 1), (-2, -1))

    def transposed(self) -> Stamped:
        swapped = {(c, r): value for (r, c), value in self.entries.items()}
        return Stamped(swapped, self.pattern.transposed(), self.batch)

    def solve(self, b: Complex) -> Complex:
        """x of A x = b for each matrix (`chainbudget.sparse_lu`), ``b`` of shape
        ``(N, K)`` or ``batch + (N, K)``; a singular matrix reported as
        `SingularNetwork`."""
        try:
            return sparse_lu.solve(self.entries, self.pattern, self.batch, b)
        except np.linalg.LinAlgError:
            raise SingularNetwork(
                "its network has no single solution (a node shorted or cut off, most likely "
                "by a value far outside its range)"
            ) from None


def _on_points(size: int, at: NDArray[np.intp] | None) -> Any:
    """A function giving an element value at the frequency indices ``at`` (a value on the
    frequency axis of ``size`` points; one constant over it, as it is)."""

    def pick(value: Any) -> Any:
        if at is None or np.ndim(value) == 0 or np.shape(value)[-1] != size:
            return value
        return np.asarray(value)[..., at]

    return pick


@dataclass(frozen=True)
class Ref:
    """An unknown of the MNA system: a node voltage or a branch current, by name.

    Names are resolved to indices only when the matrix is assembled, so a netlist may grow
    after a reference was taken.
    """

    what: str  # "node" or "branch"
    name: str


def node_ref(name: str) -> Ref:
    return Ref("node", name)


def branch_ref(label: str) -> Ref:
    return Ref("branch", label)


@dataclass(frozen=True)
class NoiseSource:
    """One uncorrelated noise generator inside a netlist.

    Attributes
    ----------
    label : str
        Unique name, e.g. ``"pre.feedback"``.
    stage, part, kind : str
        Where it sits and what it is (``"thermal"``, ``"e_n"``, ``"i_n"``, ``"shot"``).
    psd : ndarray
        One-sided power spectral density on the netlist's frequency axis, V^2/Hz for a
        voltage generator or A^2/Hz for a current generator; shape ``(F,)``.
    rhs : tuple of (Ref, ndarray)
        Where a unit generator enters the right-hand side of the MNA system (the KCL row of
        a node or the equation of a branch), with its coefficient.
    """

    label: str
    stage: str
    part: str
    kind: str
    psd: NDArray[np.float64]
    rhs: tuple[tuple[Ref, Complex], ...]


@dataclass(frozen=True)
class RippleSource:
    """One way supply ripple enters a netlist (the hum budget's injections).

    Attributes
    ----------
    label : str
        Unique name, e.g. ``"pre.opamp.psrr+"``.
    stage : str
        The stage it belongs to.
    path : str
        What carries the ripple in, for the report (``"V+ pin (PSRR)"``, ``"bias"``).
    rail : str
        The stage's rail it comes from, by role: ``"positive"``, ``"negative"`` or
        ``"bias"`` (the supply its ``bias`` names); the hum budget resolves the role to a
        supply, and drops a source whose role names none (ground, an ideal bias point).
    polarity : float
        +1 or -1: the factor on the rail's ripple as its supply reports it (a magnitude's
        ripple; a resistor to a negative rail sees it inverted, a PSRR source does not).
    rhs : tuple of (Ref, ndarray)
        Where one volt of the rail's ripple enters the right-hand side of the MNA system,
        with its coefficient on the frequency axis (a current into a node, or a voltage in a
        branch's equation).
    """

    label: str
    stage: str
    path: str
    rail: str
    polarity: float
    rhs: tuple[tuple[Ref, Complex], ...]


@dataclass
class _Stamp:
    rows: tuple[int, ...]
    cols: tuple[int, ...]
    signs: tuple[float, ...]
    value: Complex


@dataclass
class Netlist:
    """A linear network on a fixed frequency vector, built element by element.

    Parameters
    ----------
    frequency : array_like
        Frequencies, Hz, shape ``(F,)``.
    points : array of int, optional
        Where on the frequency axis `solve` is needed (ascending indices, the first 0):
        the matrix is assembled and solved there only, and every other point takes the
        solution at index 0 (a placeholder the caller masks out; the spread's held
        settings, `chainbudget.spread.settings`). None: every point.
    """

    frequency: NDArray[np.float64]
    points: NDArray[np.intp] | None = None
    nodes: dict[str, int] = field(default_factory=dict)
    branches: dict[str, int] = field(default_factory=dict)
    noise: list[NoiseSource] = field(default_factory=list)
    ripple: list[RippleSource] = field(default_factory=list)
    _stamps: list[_Stamp] = field(default_factory=list)
    _branch_stamps: list[tuple[str, list[tuple[str, float]], list[tuple[str, Complex]]]] = field(
        default_factory=list
    )

    def __post_init__(self) -> None:
        self.frequency = np.asarray(self.frequency, dtype=float)

    @property
    def s(self) -> Complex:
        """Complex frequency j*2*pi*f, shape ``(F,)``."""
        return 2j * np.pi * self.frequency

    # --- topology -------------------------------------------------------------------
    def node(self, name: str) -> int:
        """Index of a node, created on first use; ground is -1."""
        if name == GROUND:
            return -1
        return self.nodes.setdefault(name, len(self.nodes))

    @property
    def size(self) -> int:
        return len(self.nodes) + len(self.branches)

    def index(self, ref: Ref) -> int:
        """Position of an unknown in the assembled system (-1 for ground)."""
        if ref.what == "node":
            return -1 if ref.name == GROUND else self.nodes[ref.name]
        return len(self.nodes) + self.branches[ref.name]

    # --- elements -------------------------------------------------------------------
    def admittance(self, a: str, b: str, y: ArrayLike) -> None:
        """An admittance ``y`` (S, broadcastable to ``batch + (F,)``) between nodes a, b."""
        i, j = self.node(a), self.node(b)
        self._stamps.append(
            _Stamp((i, j, i, j), (i, j, j, i), (1.0, 1.0, -1.0, -1.0), np.asarray(y, complex))
        )

    def admittances_at(self, node: str) -> list[tuple[str, Any]]:
        """Every admittance stamped between ``node`` and another node or ground, as (the
        name at its other end, its value), in the order stamped (a leak from a node to
        itself, stamped with both ends there, adds nothing and is left out)."""
        at = self.nodes[node]
        names = {index: name for name, index in self.nodes.items()}
        found = []
        for stamp in self._stamps:  # every stamp is an admittance (`admittance`)
            i, j = stamp.rows[0], stamp.rows[1]
            if at not in (i, j) or i == j:
                continue
            other = j if i == at else i
            found.append((GROUND if other < 0 else names[other], stamp.value))
        return found

    def resistor(
        self,
        a: str,
        b: str,
        resistance: ArrayLike,
        *,
        label: str,
        stage: str = "",
        temperature_k: float | None = None,
    ) -> None:
        """A resistor; with ``temperature_k`` it also carries its thermal noise 4kT/R.

        Notes
        -----
        Johnson-Nyquist noise as a parallel current generator of density 4kT/R (A^2/Hz):
        Johnson, Phys. Rev. 32, 97 (1928); Nyquist, Phys. Rev. 32, 110 (1928).
        """
        r = np.asarray(resistance, dtype=float)
        self.admittance(a, b, 1.0 / r)
        if temperature_k is not None:
            psd = thermal_current_psd(r, temperature_k)
            self.current_noise(a, b, psd, label, stage, label, "thermal")

    def capacitor(self, a: str, b: str, capacitance: ArrayLike) -> None:
        """A capacitor, admittance s*C."""
        self.admittance(a, b, self.s * np.asarray(capacitance, dtype=float))

    def inductor(self, a: str, b: str, inductance: ArrayLike) -> None:
        """An inductor, admittance 1/(s*L) (the axes never include DC)."""
        self.admittance(a, b, 1.0 / (self.s * np.asarray(inductance, dtype=float)))

    def pot(
        self,
        upper: str,
        lower: str,
        wiper: str,
        track: float,
        fraction: ArrayLike,
        *,
        label: str,
        stage: str = "",
        temperature_k: float | None = None,
        end_resistance: float = 0.0,
    ) -> None:
        """A potentiometer: ``fraction*track`` from wiper to lower end, the rest to upper.

        ``fraction`` is the wiper-to-lower resistance fraction after the taper (0..1); each
        half carries ``POT_END_FRACTION*track`` plus ``end_resistance`` in series.
        """
        x = np.asarray(fraction, dtype=float)
        end = POT_END_FRACTION * track + end_resistance
        self.resistor(
            wiper,
            lower,
            x * track + end,
            label=f"{label}.lower",
            stage=stage,
            temperature_k=temperature_k,
        )
        self.resistor(
            upper,
            wiper,
            (1.0 - x) * track + end,
            label=f"{label}.upper",
            stage=stage,
            temperature_k=temperature_k,
        )

    def vcvs(self, plus: str, minus: str, out: str, gain: ArrayLike, *, label: str) -> Ref:
        """A voltage-controlled voltage source ``v(out) = gain * (v(plus) - v(minus))``.

        Returns the reference of its branch: its equation is where a noise voltage at the
        control input enters (multiplied by ``gain``), its current (flowing from ``out``
        into the source, the negative of what it delivers) the unknown.
        """
        self._new_branch(label)
        g = np.asarray(gain, dtype=complex)
        for name in (plus, minus, out):
            self.node(name)
        self._branch_stamps.append((label, [(out, 1.0)], [(plus, -g), (minus, g)]))
        return branch_ref(label)

    def voltage_source(self, plus: str, minus: str, *, label: str) -> Ref:
        """An independent voltage source (value set on the right-hand side)."""
        self._new_branch(label)
        self.node(plus)
        self.node(minus)
        self._branch_stamps.append((label, [(plus, 1.0), (minus, -1.0)], []))
        return branch_ref(label)

    def _new_branch(self, label: str) -> None:
        if label in self.branches:
            raise ValueError(f"branch {label!r} is already in the netlist")
        self.branches[label] = len(self.branches)

    def opamp(
        self,
        plus: str,
        minus: str,
        out: str,
        *,
        open_loop_gain: float,
        gbw: float,
        output_resistance: float,
        label: str,
        second_pole: float | None = None,
    ) -> Ref:
        """An op-amp: dominant-pole open-loop gain (with an optional second pole) behind an
        output resistance.

        Returns its branch reference (see `vcvs`); its input voltage noise enters there.

        Notes
        -----
        A(s) = A0 / (1 + s/w_p) / (1 + s/w_2) with w_p = 2 pi GBW / A0, so |A| falls
        through 1 near GBW (the dominant-pole model: Franco, Design with Operational
        Amplifiers and Analog Integrated Circuits, 4th ed., sec. 6.1), and w_2 = 2 pi f_2 the
        second pole, where one is given (Franco, sec. 8.1, the two-pole open-loop response,
        from memory). The output is an ideal source A(s)(v+ - v-) in series with the
        open-loop output resistance R_o. The branch current of the source (named ``label``)
        is minus the op-amp's output current. R_o = 0 is stamped as ``SOURCE_FLOOR_OHM``.
        """
        gain = self.open_loop_gain(open_loop_gain, gbw, second_pole)
        internal = f"{label}.internal"
        branch = self.vcvs(plus, minus, internal, gain, label=label)
        self.resistor(internal, out, max(output_resistance, SOURCE_FLOOR_OHM), label=f"{label}.ro")
        return branch

    def open_loop_gain(self, a0: float, gbw: float, second_pole: float | None = None) -> Complex:
        """A(s) = A0 / (1 + s A0 / (2 pi GBW)) / (1 + s / (2 pi f_2)) on this netlist's
        frequency axis (no second factor when ``second_pole`` is None)."""
        gain = a0 / (1.0 + self.s * a0 / (2.0 * np.pi * gbw))
        if second_pole is None:
            return gain
        return gain / (1.0 + self.s / (2.0 * np.pi * second_pole))

    # --- noise generators -------------------------------------------------------------
    def current_noise(
        self,
        a: str,
        b: str,
        psd: ArrayLike,
        label: str,
        stage: str,
        part: str,
        kind: str,
    ) -> None:
        """A noise current generator (A^2/Hz) between nodes a and b."""
        rhs = tuple(
            (node_ref(name), np.asarray(sign, complex))
            for name, sign in ((a, 1.0), (b, -1.0))
            if name != GROUND
        )
        self.noise.append(NoiseSource(label, stage, part, kind, self._density(psd), rhs))

    def voltage_noise_at(
        self,
        branch: Ref,
        coefficient: ArrayLike,
        psd: ArrayLike,
        label: str,
        stage: str,
        part: str,
        kind: str,
    ) -> None:
        """A noise voltage entering the equation of ``branch`` with ``coefficient`` (V^2/Hz)."""
        rhs = ((branch, np.asarray(coefficient, complex)),)
        self.noise.append(NoiseSource(label, stage, part, kind, self._density(psd), rhs))

    # --- ripple injections (the hum budget) ------------------------------------------------
    def ripple_current(
        self,
        node: str,
        coefficient: ArrayLike,
        *,
        rail: str,
        label: str,
        stage: str,
        path: str,
        polarity: float = 1.0,
    ) -> None:
        """Ripple entering ``node`` as a current of ``coefficient`` A per volt of the rail's
        ripple (a resistor R to a rippling rail: its Norton form, 1/R, beside the resistor
        stamped to ground)."""
        if node == GROUND:
            return
        rhs = ((node_ref(node), self._on_axis(coefficient)),)
        self.ripple.append(RippleSource(label, stage, path, rail, polarity, rhs))

    def ripple_voltage_at(
        self,
        branch: Ref,
        coefficient: ArrayLike,
        *,
        rail: str,
        label: str,
        stage: str,
        path: str,
        polarity: float = 1.0,
    ) -> None:
        """Ripple entering the equation of ``branch`` with ``coefficient`` per volt of the
        rail's ripple (an input-referred source at an op-amp's + input: its open-loop gain
        times the rejection's factor)."""
        rhs = ((branch, self._on_axis(coefficient)),)
        self.ripple.append(RippleSource(label, stage, path, rail, polarity, rhs))

    def _on_axis(self, value: ArrayLike) -> Complex:
        array = np.asarray(value, complex)
        return np.broadcast_to(array, np.broadcast_shapes(array.shape, self.frequency.shape))

    def ripple_transfers(self, nodes: list[str]) -> tuple[Complex, Complex]:
        """Every ripple source's transfer to each of ``nodes``, and the source branch's.

        Returns ``(to_nodes, from_source)``: ``to_nodes`` with shape ``batch + (F, J, R)``,
        the voltage at node j per volt of ripple on source r's rail; ``from_source`` with
        shape ``batch + (F, J)``, the voltage at node j per volt of a voltage source named
        ``source`` where the netlist has one (zeros otherwise).

        Notes
        -----
        One batched solve M X = B with a right-hand side per ripple source (and one for the
        signal source), frequency an array axis: superposition, each source alone with the
        others (and the signal source) at zero (Ho, Ruehli & Brennan, IEEE Trans. CAS-22
        (1975) 504).
        """
        stamped = self.stamped()  # every row: the sources' coefficients may differ per row
        count = len(self.ripple)
        b = np.zeros((*stamped.batch, self.size, count + 1), dtype=complex)
        for r, source in enumerate(self.ripple):
            for ref, coefficient in source.rhs:
                index = self.index(ref)
                if index >= 0:
                    b[..., index, r] += coefficient
        if "source" in self.branches:
            b[..., self.index(branch_ref("source")), count] = 1.0
        x = stamped.solve(b)
        rows = [self.nodes[name] for name in nodes]
        picked = x[..., rows, :]
        return picked[..., :count], picked[..., count]

    def _density(self, psd: ArrayLike) -> NDArray[np.float64]:
        density = np.asarray(psd, float)
        return np.broadcast_to(density, np.broadcast_shapes(density.shape, self.frequency.shape))

    # --- assembly and solution ------------------------------------------------------
    def _values(self, at: NDArray[np.intp] | None) -> tuple[list[Any], tuple[int, ...]]:
        """Every element value in the order `matrix` stamps them (at the points ``at``),
        and the shape ``batch + (F,)`` they broadcast to."""
        f_shape = self.frequency.shape
        pick = _on_points(f_shape[-1], at)
        values = [pick(value) for value in self._element_values()]
        if at is not None:
            f_shape = (len(at),)
        return values, np.broadcast_shapes(f_shape, *(np.shape(v) for v in values))

    def _element_values(self) -> list[Any]:
        """Every element value in the order `matrix` stamps them: the stamps', then the
        branches' coefficients."""
        values = [st.value for st in self._stamps]
        values += [c for _, _, coefficients in self._branch_stamps for _, c in coefficients]
        return values

    def flat_over_frequency(self) -> bool:
        """Whether no element value has the frequency axis (each one a constant, or one
        value per row of the batch): the matrix is then the same at every point."""
        return all(np.ndim(v) == 0 or np.shape(v)[-1] == 1 for v in self._element_values())

    def distinct_rows(
        self, at: NDArray[np.intp] | None = None
    ) -> tuple[NDArray[np.intp], NDArray[np.intp]] | None:
        """Within `shared_rows`, where the batch has a leading axis beside the frequency
        axis: the first of each distinct row along it (the rows whose every element value
        is the same, byte for byte) and each row's distinct one; else None (every row is
        assembled and solved)."""
        if not _SHARED_ROWS.get():  # before the values are gathered: the Monte Carlo's case
            return None
        values, shape = self._values(at)
        if len(shape) < 2 or shape[0] < 2:
            return None
        rows = shape[0]
        own = [  # the values that vary along the leading axis (a broadcast one repeats)
            np.ascontiguousarray(v).reshape(rows, -1).view(np.uint8)
            for v in values
            if np.ndim(v) == len(shape) and np.shape(v)[0] == rows
        ]
        if not own:
            return np.zeros(1, dtype=np.intp), np.zeros(rows, dtype=np.intp)
        keys = np.ascontiguousarray(np.concatenate(own, axis=1))
        _, first, inverse = np.unique(
            keys.view(np.dtype((np.void, keys.shape[1])))[:, 0],
            return_index=True,
            return_inverse=True,
        )
        return first.astype(np.intp), inverse.reshape(-1).astype(np.intp)

    def _assembled(
        self, without_controls_of: str | None = None, at: NDArray[np.intp] | None = None
    ) -> tuple[Stamped, Callable[[Complex], Complex]]:
        """`stamped`, with each distinct row only where `distinct_rows` finds repeats, and
        the function that puts a solution of it back on every row."""
        distinct = self.distinct_rows(at)
        if distinct is None or distinct[0].size == distinct[1].size:
            return self.stamped(without_controls_of, at), _as_is
        first, inverse = distinct
        return self.stamped(without_controls_of, at, rows=first), lambda x: x[inverse]

    def matrix(
        self,
        without_controls_of: str | None = None,
        at: NDArray[np.intp] | None = None,
        rows: NDArray[np.intp] | None = None,
    ) -> Complex:
        """The stamped MNA matrix, shape ``batch + (F, N, N)``; ``without_controls_of``
        leaves that controlled source's controls out (`return_ratio`); ``at`` assembles it
        at those indices of the frequency axis only (``batch + (len(at), N, N)``); ``rows``
        at those rows of the batch's leading axis only (`distinct_rows`)."""
        return self.stamped(without_controls_of, at, rows).batch_major()

    def stamped(
        self,
        without_controls_of: str | None = None,
        at: NDArray[np.intp] | None = None,
        rows: NDArray[np.intp] | None = None,
    ) -> Stamped:
        """`matrix` as it is assembled, entry by entry, with its sparsity pattern."""
        values, shape = self._values(at)
        # a value that is one number for the whole batch is summed into the constant part;
        # an array is added into its entry (decided on the whole batch, so that its rows
        # alone are stamped with the same arithmetic, bit for bit)
        constant = [np.size(v) == 1 for v in values]
        if rows is not None:
            values = [
                np.asarray(v)[rows] if np.ndim(v) == len(shape) and np.shape(v)[0] > 1 else v
                for v in values
            ]
            shape = (len(rows), *shape[1:])
        n = self.size
        fixed = np.zeros((n, n), dtype=complex)
        diagonal = np.arange(len(self.nodes))
        fixed[diagonal, diagonal] += GMIN
        # Held entry by entry, each one contiguous array over the batch (an MNA matrix is
        # mostly zeros: only the others exist), the form `sparse_lu` works in. Each array
        # value is added into its entry in place (no temporary per stamp); the constant
        # parts are summed apart and added last, an entry that is constant alone as a
        # broadcast view of its one value.
        m: dict[tuple[int, int], Complex] = {}
        written = np.zeros((n, n), dtype=bool)

        def add(r: int, c: int, sign: float, value: Any, is_constant: bool) -> None:
            if is_constant:
                fixed[r, c] += sign * np.asarray(value).reshape(())
                return
            entry = m.get((r, c))
            if entry is None:
                entry = m[r, c] = np.zeros(shape, dtype=complex)
            if sign == 1.0:
                np.add(entry, value, out=entry)
            elif sign == -1.0:
                np.subtract(entry, value, out=entry)
            else:
                entry += sign * np.asarray(value)
            written[r, c] = True

        stamp_values = iter(zip(values, constant, strict=True))
        for st in self._stamps:
            value, is_constant = next(stamp_values)
            for r, c, sign in zip(st.rows, st.cols, st.signs, strict=True):
                if r >= 0 and c >= 0:
                    add(r, c, sign, value, is_constant)
        for label, controls, coefficients in self._branch_stamps:
            k = self.index(branch_ref(label))
            for name, sign in controls:
                if name != GROUND:
                    fixed[self.nodes[name], k] += sign
                    fixed[k, self.nodes[name]] += sign
            picked = [(name, *next(stamp_values)) for name, _ in coefficients]
            if label == without_controls_of:
                continue
            for name, coefficient, is_constant in picked:
                if name != GROUND:
                    add(k, self.nodes[name], 1.0, coefficient, is_constant)
        for r, c in zip(*np.nonzero(fixed), strict=True):
            if written[r, c]:
                m[r, c] += fixed[r, c]
            else:
                m[r, c] = np.broadcast_to(fixed[r, c], shape)
        # a branch's incidence entries are exactly +-1 in every matrix (`sparse_lu` pivots
        # on them)
        unit = ~written & (np.abs(fixed) == 1.0)
        return Stamped(m, Pattern(written | (fixed != 0), unit, len(self.nodes)), shape)

    def solve(self, rhs: ArrayLike) -> Complex:
        """Solve the network for right-hand sides ``rhs`` of shape ``(..., N, K)``; with
        ``points``, at those frequencies only, every other point holding the solution at
        the axis' first. A network none of whose element values varies with frequency
        (no capacitor, no op-amp roll-off: `flat_over_frequency`) has the same matrix at
        every point: it is solved at the first alone, and that solution stands at every
        point (a read-only broadcast view; the same bits as solving each point, since each
        matrix is solved alone)."""
        b = np.asarray(rhs, dtype=complex)
        on_rows: Callable[[Complex], Complex] = _as_is
        at = self.points
        size = self.frequency.shape[-1]
        flat = b.ndim == 2 and size > 1 and self.flat_over_frequency()
        if flat:
            at = np.zeros(1, dtype=np.intp) if self.points is None else self.points[:1]
        if b.ndim > 2:  # a right-hand side per row: every row assembled and solved
            stamped = self.stamped(at=at)
        else:
            stamped, on_rows = self._assembled(at=at)
        x = on_rows(stamped.solve(b))
        if flat:
            return np.broadcast_to(x, (*x.shape[:-3], size, *x.shape[-2:]))
        if self.points is None:
            return x
        spread = np.zeros(self.frequency.shape[-1], dtype=np.intp)
        spread[self.points] = np.arange(len(self.points))
        return np.take(x, spread, axis=-3)

    def return_ratio(self, label: str) -> Complex:
        """Bode's return ratio of the controlled source ``label`` (a `vcvs` or `opamp`).

        Returns T with shape ``batch + (F,)``.

        Notes
        -----
        The source's equation is v(out) = sum_i g_i v(c_i) (its controls). Replace it by an
        independent unit source, v(out) = 1, solve the network with every independent
        source at zero (the netlist holds none: its terminations are admittances), and the
        value the source's controls return is R = sum_i g_i v(c_i); the return ratio is
        T = -R (Bode, Network Analysis and Feedback Amplifier Design, 1945, ch. 4; the same
        as Middlebrook's double injection at an ideal source, from memory). For an op-amp
        A(s)(v+ - v-) in a negative-feedback loop, T = A beta at low frequency, and the
        closed-loop figures are their open-loop values over (1 + T).
        """
        stamped, on_rows = self._assembled(without_controls_of=label)
        k = self.index(branch_ref(label))
        controls = next(c for name, _, c in self._branch_stamps if name == label)
        e = np.zeros((self.size, 1), dtype=complex)
        e[k] = 1.0
        x = on_rows(stamped.solve(e)[..., 0])
        # The branch row holds v(out) + sum_i c_i v(c_i) with c_i = -g_i (see `vcvs`), so
        # the returned value is R = -sum_i c_i v(c_i) and T = sum_i c_i v(c_i).
        returned = np.zeros(x.shape[:-1], dtype=complex)
        for node_name, coefficient in controls:
            if node_name != GROUND:
                returned = returned + coefficient * x[..., self.nodes[node_name]]
        return returned

    def adjoint_transfer(self, output_node: str) -> tuple[Complex, list[Complex]]:
        """Transfer from every noise generator to the voltage at ``output_node``.

        Returns the adjoint vector and, per generator in ``self.noise``, its complex
        transfer (V/V or V/A) with shape ``batch + (F,)``.

        Notes
        -----
        The adjoint (transpose) method: with M x = b, the output v_o = e_o^T x =
        (M^-T e_o)^T b, so one solve of M^T z = e_o per frequency gives z, and the transfer
        of any generator entering as b is z^T b (Director & Rohrer, "The generalized adjoint
        network and network sensitivities", IEEE Trans. Circuit Theory CT-16 (1969) 318).
        """
        return self.adjoint_transfers([output_node])[0]

    def adjoint_transfers(self, output_nodes: Sequence[str]) -> list[tuple[Complex, list[Complex]]]:
        """`adjoint_transfer` to each of several nodes from one assembly of the matrix and
        one solve with a right-hand side per node (the same adjoint method)."""
        stamped, on_rows = self._assembled()
        e = np.zeros((self.size, len(output_nodes)), dtype=complex)
        for j, node in enumerate(output_nodes):
            e[self.nodes[node], j] = 1.0
        solved = on_rows(stamped.transposed().solve(e))
        found = []
        for j in range(len(output_nodes)):
            z = solved[..., j]
            transfers = [
                sum(
                    (z[..., self.index(ref)] * coefficient for ref, coefficient in source.rhs),
                    np.zeros(z.shape[:-1], complex),
                )
                for source in self.noise
            ]
            found.append((z, transfers))
        return found


@dataclass(frozen=True)
class TwoPort:
    """Chain (ABCD) parameters of a two-port, plus linear probes of internal quantities.

    ``[V1, I1] = [[a, b], [c, d]] @ [V2, I2_out]`` with ``I2_out`` the current leaving port 2
    into the load. Each probe is a pair ``(g1, g2)``: the quantity equals ``g1*V1 + g2*V2``.
    All arrays have shape ``batch + (F,)``.
    """

    a: Complex
    b: Complex
    c: Complex
    d: Complex
    probes: dict[str, tuple[Complex, Complex]]

    def voltage_ratio(self, load_admittance: ArrayLike) -> Complex:
        """V2/V1 with a load admittance at port 2: 1 / (A + B*Y_L)."""
        return 1.0 / (self.a + self.b * np.asarray(load_admittance))

    def input_admittance(self, load_admittance: ArrayLike) -> Complex:
        """Y_in = (C + D*Y_L) / (A + B*Y_L)."""
        y = np.asarray(load_admittance)
        return (self.c + self.d * y) / (self.a + self.b * y)

    def output_impedance(self, source_impedance: ArrayLike) -> Complex:
        """Z_out = (D*Z_S + B) / (C*Z_S + A)."""
        z = np.asarray(source_impedance)
        return (self.d * z + self.b) / (self.c * z + self.a)


def two_port(net: Netlist, port_in: str, port_out: str, probes: Mapping[str, Ref]) -> TwoPort:
    """Chain parameters of ``net`` between ``port_in``/ground and ``port_out``/ground.

    Both ports are driven by voltage sources; the two solutions give the short-circuit
    admittance parameters, converted to chain parameters. ``probes`` maps names to unknowns
    (node voltages or branch currents) to report as linear functions of V1, V2. The
    netlist gains the two port sources.

    Notes
    -----
    Y to ABCD (with I2 into port 2): A = -y22/y21, B = -1/y21, C = -det(Y)/y21,
    D = -y11/y21 (Pozar, Microwave Engineering, 4th ed., Table 4.2).
    """
    k1 = net.index(net.voltage_source(port_in, GROUND, label="port.in"))
    k2 = net.index(net.voltage_source(port_out, GROUND, label="port.out"))
    rhs = np.zeros((net.size, 2))
    rhs[k1, 0] = 1.0
    rhs[k2, 1] = 1.0
    x = net.solve(rhs)
    points = x.shape[-3]
    # a network the same at every frequency (`Netlist.solve`): its parameters worked out
    # at one point and stood at every other, as read-only views (the same bits)
    flat = points > 1 and x.strides[-3] == 0
    if flat:
        x = x[..., :1, :, :]

    def on_axis(value: Complex) -> Complex:
        return np.broadcast_to(value, (*value.shape[:-1], points)) if flat else value

    # The branch current of a source flows from its + terminal through the source, i.e.
    # out of the network node; the current into the network is its negative.
    y11, y12 = -x[..., k1, 0], -x[..., k1, 1]
    y21, y22 = -x[..., k2, 0], -x[..., k2, 1]
    det = y11 * y22 - y12 * y21
    found = {}
    for name, ref in probes.items():
        index = net.index(ref)
        found[name] = (on_axis(x[..., index, 0]), on_axis(x[..., index, 1]))
    return TwoPort(
        a=on_axis(-y22 / y21),
        b=on_axis(-1.0 / y21),
        c=on_axis(-det / y21),
        d=on_axis(-y11 / y21),
        probes=found,
    )
