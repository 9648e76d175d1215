"""Sampled and continuous current sensing: the sample grid and detection instants.

A microcontroller samples its current every ``Ts`` seconds on a grid
``t_k = (k + phase) * Ts`` (``phase`` in ``[0, 1)``). A trip that needs the
current over threshold for ``t_delay_s`` needs ``n = ceil(t_delay_s / Ts)``
consecutive samples over threshold (at least one), so the trip instant is the
first sample at or after the onset plus ``(n - 1)`` periods: it lags the onset
by between ``(n - 1) Ts`` and ``n Ts`` (one period of jitter). With continuous
sensing (``period_s`` ``None``) the trip instant is ``onset + t_delay_s``.

An ADC saturates at its full scale: the reading is ``min(|I|, full_scale_a)``,
so a threshold set above full scale is never reached.

Floating-point grids
--------------------
``0.002 / 0.0001`` is ``20.000000000000004`` in binary floating point; a plain
``ceil`` would ask for 21 samples. Every ``ceil`` and grid lookup here snaps a
value within a relative ``1e-9`` (and an absolute ``1e-9`` of a period) of an
integer to that integer (:func:`ceil_tol`).
"""
from __future__ import annotations

import math
import sys
from typing import Optional

from sim.timebase import T_TOL_S  # noqa: F401  (re-exported: the one time base)

#: Relative tolerance used to snap a ratio to an integer before ``ceil``.
REL_TOL = 1e-9



def ceil_tol(x: float, rel: float = REL_TOL) -> int:
    """``ceil(x)``, but a value within ``rel * max(1, |x|)`` of an integer is that integer.

    Examples
    --------
    >>> ceil_tol(0.002 / 0.0001)
    20
    >>> ceil_tol(20.5)
    21
    """
    r = round(x)
    if abs(x - r) <= rel * max(1.0, abs(x)):
        return int(r)
    return int(math.ceil(x))


def check_observation_time(name: str, t_last_s: float, t_s: float,
                           deadline_s: Optional[float]) -> None:
    """Refuse an input that goes back in time or lands past a pending deadline.

    The device protocol (:mod:`sim.devices.machine`) requires the engine to
    ``advance`` a device to its deadline before observing anything later.
    """
    if t_s < t_last_s - T_TOL_S:
        raise ValueError(f"{name}: time {t_s!r} is before the last time {t_last_s!r}")
    if deadline_s is not None and t_s > deadline_s + T_TOL_S:
        raise ValueError(f"{name}: observation at {t_s!r} s is past its deadline "
                         f"{deadline_s!r} s; advance({deadline_s!r}) first")


def reading_a(i_a: float, full_scale_a: float = math.inf) -> float:
    """What the sensor reads of a current: ``min(|I|, full_scale_a)`` (ADC clamp)."""
    return min(abs(i_a), full_scale_a)


def sample_index_at_or_after(t_s: float, period_s: float, phase: float) -> int:
    """Index ``k`` of the first sample ``(k + phase) * period_s`` at or after ``t_s``.

    An instant within :data:`T_TOL_S` of a sample is that sample. The tolerance is
    absolute in time (not relative to ``k``), so it does not widen as the clock runs.
    """
    x = t_s / period_s - phase
    r = round(x)
    if abs(x - r) <= max(T_TOL_S / period_s, 4.0 * sys.float_info.epsilon * abs(x)):
        return int(r)
    return int(math.ceil(x))


def sample_at_or_after(t_s: float, period_s: float, phase: float) -> float:
    """The first sample instant at or after ``t_s`` on the grid ``(k + phase) * period_s``."""
    return (sample_index_at_or_after(t_s, period_s, phase) + phase) * period_s


def samples_in(t0_s: float, t1_s: float, period_s: float, phase: float) -> int:
    """Number of sample instants in the half-open interval ``[t0_s, t1_s)``."""
    if t1_s <= t0_s:
        return 0
    return max(0, sample_index_at_or_after(t1_s, period_s, phase)
               - sample_index_at_or_after(t0_s, period_s, phase))


def samples_needed(t_delay_s: float, period_s: float) -> int:
    """``n = ceil(t_delay_s / period_s)`` consecutive samples, at least one."""
    return max(1, ceil_tol(t_delay_s / period_s))


def detect_time_s(t_onset_s: float, t_delay_s: float, period_s: Optional[float],
                  phase: float = 0.0) -> float:
    """Instant at which a current over threshold from ``t_onset_s`` on is detected.

    Parameters
    ----------
    t_onset_s : float
        When the current rose over the threshold (and stays over it).
    t_delay_s : float
        The required duration over threshold.
    period_s : float or None
        Sample period; ``None`` for continuous sensing.
    phase : float
        Grid phase in ``[0, 1)``: samples at ``(k + phase) * period_s``.

    Returns
    -------
    float
        Continuous: ``t_onset_s + t_delay_s``. Sampled: the first sample at or
        after the onset plus ``(n - 1)`` periods, ``n = ceil(t_delay_s / period_s)``
        (at least one sample).

    Examples
    --------
    >>> detect_time_s(0.0, 0.002, None)
    0.002
    >>> round(detect_time_s(0.00005, 0.002, 0.0001, 0.0), 12)
    0.002
    """
    if period_s is None:
        return t_onset_s + t_delay_s
    k0 = sample_index_at_or_after(t_onset_s, period_s, phase)
    n = samples_needed(t_delay_s, period_s)
    return (k0 + n - 1 + phase) * period_s
