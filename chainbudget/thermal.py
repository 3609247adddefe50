"""Steady-state junction temperature through a chain of thermal resistances."""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray


def junction_temperature(
    power_w: ArrayLike, theta_k_per_w: ArrayLike, ambient_degc: float
) -> NDArray[np.float64]:
    """Junction temperature of a device dissipating ``power_w``.

    Parameters
    ----------
    power_w : array_like
        Dissipated power, W.
    theta_k_per_w : array_like
        Total junction-to-ambient thermal resistance, K/W (theta_jc + theta_cs + theta_sa,
        or theta_ja).
    ambient_degc : float
        Ambient temperature, degC.

    Returns
    -------
    ndarray
        Junction temperature, degC.

    Notes
    -----
    T_j = T_a + P * sum(theta): the thermal Ohm's law of any power-electronics text
    (e.g. Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 9.4).
    """
    return np.asarray(ambient_degc + np.asarray(power_w) * np.asarray(theta_k_per_w), float)


def largest_sink_theta(
    power_w: float, theta_inner_k_per_w: float, ambient_degc: float, max_junction_degc: float
) -> float:
    """Largest heatsink-to-ambient resistance that keeps the junction at its maximum, K/W.

    Notes
    -----
    Solving T_j = T_a + P (theta_inner + theta_sa) for theta_sa with T_j = T_j,max;
    theta_inner = theta_jc + theta_cs. Returns ``inf`` when nothing is dissipated and a
    negative number when no heatsink can keep the junction cool enough.
    """
    if power_w <= 0.0:
        return float("inf")
    return (max_junction_degc - ambient_degc) / power_w - theta_inner_k_per_w
