"""The one time base of a run: the resolution instants are kept to, in one place.

Every instant the engine schedules, every device machine observes and every
interval the loader accepts is measured against these constants, so that two
instants the engine treats as one are one for the machines too, and a value
too small to resolve is refused at load instead of making time run backwards.

:data:`T_DIGITS` decimal places of a second (1 ns) is the grid instants are
rounded to; :data:`T_TOL_S` the absolute tolerance below which two instants are
the same instant.
"""
from __future__ import annotations

#: Decimal places of the instants events are scheduled at (1 ns): two deadlines
#: that differ by float rounding only (0.75 + 0.003 and 0.75 + 0.0005 + 0.0025)
#: land on one instant and meet the tie-break, not an accident of rounding.
T_DIGITS = 9

#: Instants closer than this (s) are the same instant.
T_TOL_S = 1e-9


def snap_s(t_s: float) -> float:
    """``t_s`` on the 1 ns grid of the run (:data:`T_DIGITS` decimal places)."""
    return round(t_s, T_DIGITS)


#: Smallest non-zero time interval a scenario may give (retry and back-off waits,
#: a supply's off time, thermal time constants, sample periods, delays): a
#: thousand steps of the 1 ns grid, so that sums of such intervals stay exact to
#: the grid. Zero stays allowed where the format allows it.
T_MIN_S = 1e-6
