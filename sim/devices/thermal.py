"""Thermal replica (thermal overload protection), IEC 60255-149.

The replica is a first-order heat balance

    tau * dθ/dt = x(I) - θ,   x = (I / I_rated)^2   (square law, the standard)
                              x =  I / I_rated      (linear law, a cheaper variant)

so ``θ = 1`` is the steady state at rated current. Under a constant current it
moves in closed form, ``θ(t) = x + (θ0 - x) exp(-t / tau)``, and reaches a level
``θ1`` after ``t = tau * ln((x - θ0) / (x - θ1))`` -- with ``θ0 = 0`` the cold
curve and ``θ0 = (Ip / Ir)^2`` the hot curve of IEC 60255-149,
``t = tau ln((I^2 - Ip^2) / (I^2 - (k IB)^2))``.

A replica trips when θ reaches ``trip_at`` and, after a thermal trip, lets the
output close again once θ has cooled to ``resume_at``.
"""
from __future__ import annotations

import math
from typing import Optional

from sim.model import Thermal


def drive(i_a: float, setting: Thermal) -> float:
    """The steady-state level ``x`` the replica tends to at current ``i_a``."""
    ratio = abs(i_a) / setting.i_rated_a
    if setting.law == "square":
        return ratio * ratio
    if setting.law == "linear":
        return ratio
    raise ValueError(f"unknown thermal law {setting.law!r}")


def theta_at(theta0: float, i_a: float, dt_s: float, setting: Thermal) -> float:
    """θ after ``dt_s`` at a constant current ``i_a``, from ``theta0``.

    ``x + (theta0 - x) * exp(-dt_s / tau)`` (solution of the IEC 60255-149 balance).
    """
    x = drive(i_a, setting)
    if dt_s <= 0.0:
        return theta0
    return x + (theta0 - x) * math.exp(-dt_s / setting.tau_s)


def time_to_level_s(theta0: float, theta1: float, i_a: float, setting: Thermal) -> float:
    """Time for θ to go from ``theta0`` to ``theta1`` at a constant ``i_a``.

    ``tau * ln((x - theta0) / (x - theta1))``; 0 when already there, ``inf``
    when the level is never reached (it lies beyond the steady state ``x``).
    """
    x = drive(i_a, setting)
    if theta1 >= theta0:  # heating
        if theta0 >= theta1:
            return 0.0
        if x <= theta1:
            return math.inf
    else:  # cooling
        if x >= theta1:
            return math.inf
    return setting.tau_s * math.log((x - theta0) / (x - theta1))


def trip_time_s(i_a: float, theta0: float, setting: Thermal) -> float:
    """Thermal trip time at a constant ``i_a`` from ``theta0`` (IEC 60255-149).

    ``tau * ln((x - theta0) / (x - trip_at))``; 0 if ``theta0 >= trip_at``,
    ``inf`` if ``x <= trip_at`` (the current never trips).

    Examples
    --------
    Cold curve, square law, 1.25 x rated, trip at 1.2, tau 30 s:

    >>> from sim.model import Thermal
    >>> round(trip_time_s(1.25, 0.0, Thermal(1.0, 30.0)), 2)
    43.83
    """
    if theta0 >= setting.trip_at:
        return 0.0
    return time_to_level_s(theta0, setting.trip_at, i_a, setting)


def cool_time_s(theta0: float, setting: Thermal, i_a: float = 0.0) -> float:
    """Time to cool from ``theta0`` to ``resume_at`` at a constant ``i_a`` (0 by default).

    ``tau * ln((theta0 - x) / (resume_at - x))``; 0 if already at or below,
    ``inf`` if the current keeps θ above ``resume_at``.
    """
    if theta0 <= setting.resume_at:
        return 0.0
    return time_to_level_s(theta0, setting.resume_at, i_a, setting)


class ThermalReplica:
    """A replica's state: θ at the last update and the current since then.

    Parameters
    ----------
    setting : sim.model.Thermal
    theta0 : float
        Initial θ (0: cold).
    t0_s : float
        Time of the initial state.
    """

    def __init__(self, setting: Thermal, theta0: float = 0.0, t0_s: float = 0.0):
        if not (setting.i_rated_a > 0.0 and setting.tau_s > 0.0):
            raise ValueError("a thermal replica needs a positive rated current and tau")
        if not setting.resume_at < setting.trip_at:
            raise ValueError("a thermal replica must resume below its trip level")
        self.setting = setting
        self.theta = theta0
        self.t_s = t0_s
        self.i_a = 0.0
        self.theta_max = theta0

    def theta_now(self, t_s: float) -> float:
        """θ at ``t_s`` (at or after the last update), without changing state."""
        return theta_at(self.theta, self.i_a, t_s - self.t_s, self.setting)

    def update(self, t_s: float, i_a: float) -> None:
        """Bring θ to ``t_s`` under the old current, then hold ``i_a`` from ``t_s`` on."""
        if t_s > self.t_s:
            self.theta = self.theta_now(t_s)
            self.t_s = t_s
        self.i_a = abs(i_a)
        self.theta_max = max(self.theta_max, self.theta)

    def set_theta(self, theta: float) -> None:
        """Snap θ to a level reached exactly (at a trip or resume instant)."""
        self.theta = theta
        self.theta_max = max(self.theta_max, theta)

    def trip_deadline_s(self) -> Optional[float]:
        """Instant θ reaches ``trip_at`` under the present current, or ``None``."""
        dt = trip_time_s(self.i_a, self.theta, self.setting)
        return None if math.isinf(dt) else self.t_s + dt

    def resume_deadline_s(self) -> Optional[float]:
        """Instant θ cools to ``resume_at`` under the present current, or ``None``."""
        dt = cool_time_s(self.theta, self.setting, self.i_a)
        return None if math.isinf(dt) else self.t_s + dt
