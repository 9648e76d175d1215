"""Operate times of overcurrent trip settings: definite time and inverse time.

Inverse-time characteristics of IEC 60255-151 and IEEE C37.112:
``t = TMS * (k / ((I / Is)^alpha - 1) + c)`` with the constants of
:data:`sim.model.CURVES`. A definite-time setting operates after ``t_after_s``
whenever the current is over ``i_above_a``.
"""
from __future__ import annotations

import math

from sim.model import CURVES, Trip


def curve_time_s(multiple: float, curve: str, tms: float = 1.0) -> float:
    """The bare inverse-time characteristic at ``multiple = I / Is``.

    ``tms * (k / (multiple^alpha - 1) + c)`` (IEC 60255-151 / IEEE C37.112);
    ``inf`` at or below the setting (``multiple <= 1``).

    Examples
    --------
    >>> round(curve_time_s(10.0, "iec-very-inverse"), 3)
    1.5
    """
    k, alpha, c = CURVES[curve]
    if multiple <= 1.0:
        return math.inf
    return tms * (k / (multiple ** alpha - 1.0) + c)


def inverse_time_s(i_a: float, trip: Trip) -> float:
    """Operate time of a trip setting at a steady current ``i_a``.

    Parameters
    ----------
    i_a : float
        Current (its magnitude is used), as the trip unit reads it.
    trip : sim.model.Trip
        ``curve`` ``None``: definite time ``t_after_s``. Otherwise the
        IEC 60255-151 / IEEE C37.112 curve, with ``t_after_s`` as a lower bound
        (a definite minimum time, as the model specifies).

    Returns
    -------
    float
        Seconds; ``inf`` when ``|i_a|`` is not above ``trip.i_above_a``.
    """
    i = abs(i_a)
    if not i > trip.i_above_a:
        return math.inf
    if trip.curve is None:
        return trip.t_after_s
    return max(trip.t_after_s, curve_time_s(i / trip.i_above_a, trip.curve, trip.tms))
