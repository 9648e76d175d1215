"""Power-up inrush of a vehicle's keep-alive capacitor.

A keep-alive is a capacitance ``C`` charged through a resistance ``R`` from the
track voltage ``V``: the current starts at ``V / R`` and decays as
``exp(-t / (R C))`` (first-order RC charging). Its steady draw is separate
(``Vehicle.draw_a``).

Defaults
--------
When a vehicle gives a keep-alive time ``t_keep_alive_s`` but no capacitance,
the capacitance that would run its draw for that time is estimated from a
constant-current discharge between the track voltage and a drop-out voltage of
7 V (from memory: a typical decoder under-voltage level):
``C = draw_a * t_keep_alive_s / (V - 7 V)``. The charging resistance default
of the model (10 ohm) is from memory as well.
"""
from __future__ import annotations

import math

from sim.model import Vehicle

#: Decoder drop-out voltage used to estimate a keep-alive's capacitance (from memory).
V_DROPOUT_V = 7.0


def keep_alive_c_f(vehicle: Vehicle, v_track_v: float) -> float:
    """The keep-alive capacitance: the model's, else estimated (module docstring)."""
    if vehicle.c_keep_alive_f > 0.0:
        return vehicle.c_keep_alive_f
    if vehicle.t_keep_alive_s > 0.0 and vehicle.draw_a > 0.0 and v_track_v > V_DROPOUT_V:
        return vehicle.draw_a * vehicle.t_keep_alive_s / (v_track_v - V_DROPOUT_V)
    return 0.0


def inrush(vehicle: Vehicle, v_track_v: float) -> tuple[float, float]:
    """Peak inrush current and time constant of a vehicle's keep-alive.

    Returns
    -------
    (i_peak_a, tau_s)
        ``V / R`` and ``R C``; ``(0.0, 0.0)`` for a vehicle with no keep-alive.
    """
    c_f = keep_alive_c_f(vehicle, v_track_v)
    if c_f <= 0.0 or vehicle.r_charge_ohm <= 0.0:
        return 0.0, 0.0
    return abs(v_track_v) / vehicle.r_charge_ohm, vehicle.r_charge_ohm * c_f


def time_above_s(i_steady_a: float, i_peak_a: float, tau_s: float, i_level_a: float) -> float:
    """How long ``i_steady + i_peak exp(-t/tau)`` stays above ``i_level``.

    ``tau ln(i_peak / (i_level - i_steady))`` when the peak exceeds the level;
    ``inf`` when the steady draw alone does; ``0`` when the peak never reaches it.
    """
    if i_steady_a >= i_level_a:
        return math.inf
    if i_steady_a + i_peak_a <= i_level_a or tau_s <= 0.0:
        return 0.0
    return tau_s * math.log(i_peak_a / (i_level_a - i_steady_a))


def time_above_sum_s(i_steady_a: float, terms, i_level_a: float) -> float:
    """How long ``i_steady + sum(i_peak_k exp(-t/tau_k))`` stays above ``i_level``.

    The keep-alives of several locomotives charge together, each with its own time
    constant: the sum of their exponentials (superposition of first-order RC
    charging currents), not the largest time constant applied to the sum of the
    peaks (which overstates the time). ``terms`` is ``[(i_peak_a, tau_s)]``. The
    sum decreases in ``t``, so the crossing is the one root of a bracketed
    equation (Brent's method, :func:`scipy.optimize.brentq`, to 1 ns); with one
    term it is :func:`time_above_s`.
    """
    from scipy.optimize import brentq

    terms = [(p, tau) for p, tau in terms if p > 0.0 and tau > 0.0]
    if i_steady_a >= i_level_a:
        return math.inf
    total = sum(p for p, _ in terms)
    if not terms or i_steady_a + total <= i_level_a:
        return 0.0
    if len(terms) == 1:
        return time_above_s(i_steady_a, total, terms[0][1], i_level_a)
    hi = max(tau for _, tau in terms) * math.log(total / (i_level_a - i_steady_a))

    def excess(t_s: float) -> float:
        return i_steady_a + sum(p * math.exp(-t_s / tau) for p, tau in terms) - i_level_a

    if excess(hi) >= 0.0:
        return hi
    return brentq(excess, 0.0, hi, xtol=1e-9)
