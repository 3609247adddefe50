"""Noise transfer in the network core: the adjoint method and the noise of passive networks."""

from __future__ import annotations

import tomllib

import numpy as np
import pytest
from scipy.constants import k as BOLTZMANN

from chainbudget.budget.analysis import environments
from chainbudget.chainfile import parse_chain
from chainbudget.network import Netlist
from chainbudget.spectrum import log_frequency_grid
from chainbudget.stages import KINDS

T_300K = 300.0
FREQUENCY = log_frequency_grid(20.0, 20_000.0, 10)

# Two op-amp stages with every kind of generator: resistor and pot-half thermal noise,
# e_n with a 1/f corner, i_n at both inputs (chain values are demonstration choices).
STAGES_TOML = """
[chain]
ambient = "26.85 degC"
[source]
level = "100 mV"
impedance = "1 kohm"
[load]
impedance = "10 kohm"
[[supply]]
name = "rail"
kind = "dc"
voltage = "15 V"
[[stage]]
name = "pre"
kind = "opamp_gain"
topology = "non-inverting"
feedback = "9k"
ground_leg = "1k"
feedback_cap = "1n"
opamp = "low_noise_bipolar"
[[stage]]
name = "tone"
kind = "tone_two_band"
bass_outer = "10k"
bass_pot = "100k"
bass_cap = "33n"
bass_position = 0.7
treble_pot = "100k"
treble_cap = "2n2"
treble_position = 0.3
opamp = "jfet_input"
"""


def _stage_netlist(index: int) -> tuple[Netlist, str]:
    chain = parse_chain(tomllib.loads(STAGES_TOML), "stages.toml")
    stage = chain.stages[index]
    env = environments(chain)[index]
    net = Netlist(FREQUENCY)
    positions = {c.key: c.position for c in KINDS[stage.kind].controls(stage)}
    KINDS[stage.kind].build(net, stage, env, "in", "out", positions)
    net.resistor("in", "0", 1e3, label="drive")  # a noiseless source impedance
    net.resistor("out", "0", 1e4, label="load")
    return net, "out"


@pytest.mark.parametrize("index", [0, 1], ids=["opamp_gain", "tone_two_band"])
def test_adjoint_transfers_equal_solving_each_source_on_its_own(index: int) -> None:
    """One adjoint solve per frequency (Director & Rohrer, IEEE Trans. Circuit Theory CT-16
    (1969) 318) against a direct solve M x = b for every generator separately
    (numpy.linalg.solve as the reference). rtol 1e-7: the op-amp rows (open-loop gain 1e5)
    and the 1 Tohm leaks make the matrix ill-conditioned, so two solve orders agree to
    a few parts in 1e9, not to machine precision."""
    net, out = _stage_netlist(index)
    assert len(net.noise) >= 5
    _, adjoint = net.adjoint_transfer(out)
    m = net.matrix()
    for source, h_adjoint in zip(net.noise, adjoint, strict=True):
        b = np.zeros((FREQUENCY.size, net.size), dtype=complex)
        for ref, coefficient in source.rhs:
            b[:, net.index(ref)] += coefficient
        x = np.linalg.solve(m, b[..., None])[..., 0]
        h_direct = x[:, net.nodes[out]]
        np.testing.assert_allclose(h_adjoint, h_direct, rtol=1e-7, atol=0.0)
        assert np.all(np.abs(h_direct) > 0.0), source.label


def test_noise_of_a_passive_rc_network_is_4kt_re_z() -> None:
    """Nyquist's theorem for a one-port (Nyquist, Phys. Rev. 32, 110 (1928)): the open-circuit
    noise of a passive network at temperature T is 4kT Re Z(f). Network: R1 from a to
    ground, R2 in series with C from a to ground; rtol 1e-6 (the 1 Tohm leaks)."""
    r1, r2, c = 10e3, 4.7e3, 100e-9
    net = Netlist(FREQUENCY)
    net.resistor("a", "0", r1, label="r1", temperature_k=T_300K)
    net.resistor("a", "b", r2, label="r2", temperature_k=T_300K)
    net.capacitor("b", "0", c)
    _, transfers = net.adjoint_transfer("a")
    psd = sum(src.psd * np.abs(h) ** 2 for src, h in zip(net.noise, transfers, strict=True))
    z_branch = r2 + 1.0 / (2j * np.pi * FREQUENCY * c)
    z = r1 * z_branch / (r1 + z_branch)
    np.testing.assert_allclose(psd, 4.0 * BOLTZMANN * T_300K * z.real, rtol=1e-6)


def test_pot_halves_in_parallel_give_the_noise_of_their_parallel_resistance() -> None:
    """A pot from a grounded source to ground, wiper open: 4kT (xP || (1-x)P) at the wiper
    (Nyquist, as above; the pot's tiny end resistances included); rtol 1e-9."""
    track, x = 50e3, 0.3
    net = Netlist(FREQUENCY)
    net.pot("top", "0", "w", track, x, label="pot", temperature_k=T_300K)
    net.resistor("top", "0", 1e-3, label="short")  # the upper end held at AC ground
    _, transfers = net.adjoint_transfer("w")
    psd = sum(src.psd * np.abs(h) ** 2 for src, h in zip(net.noise, transfers, strict=True))
    end = 1e-6 * track
    lower, upper = x * track + end, (1 - x) * track + end + 1e-3
    expected = 4.0 * BOLTZMANN * T_300K * lower * upper / (lower + upper)
    np.testing.assert_allclose(psd, expected, rtol=1e-6)
    labels = sorted(src.label for src in net.noise)
    assert labels == ["pot.lower", "pot.upper"]
