"""Restart policies after a trip: manual, fixed retries, back-off.

* ``manual``: the output stays off until an operator reset.
* ``retry``: up to ``tries`` restarts (``None``: without end), each ``every_s``
  after the trip.
* ``backoff``: waits ``first_s``, ``first_s * factor``, ... each capped at
  ``cap_s`` (the shape of RFC 6298 section 5, ``RTO_n = min(RTO_0 * 2^n, RTO_max)``,
  and of the truncated exponential back-off of IEEE 802.3 clause 4.2.3.2.5, here
  without randomness), ``tries`` of them (``None``: without end).

A *failed try* is a trip after a restart. After the last failed try the device
gives up and stays off until reset.

When the try counter starts again
---------------------------------
The count of tries resets once the output has stayed up, without tripping, for
longer than ``t_stable_s = max(10 * trip delay, the policy's longest wait)``
(``cap_s`` for back-off, ``every_s`` for retry) since its last restart, and at an
operator reset. The check is made at the next trip, so it needs no timer.
"""
from __future__ import annotations

import itertools
from typing import Iterator, Optional

from sim.model import Restart


def waits(restart: Restart) -> Iterator[float]:
    """The waits (s) before each successive restart try of a policy.

    Examples
    --------
    >>> from sim.model import Restart
    >>> list(itertools.islice(waits(Restart("backoff", first_s=0.5, factor=2, cap_s=10)), 7))
    [0.5, 1.0, 2.0, 4.0, 8.0, 10, 10]
    """
    if restart.policy == "manual":
        return iter(())
    if restart.policy == "retry":
        counts = itertools.count() if restart.tries is None else range(restart.tries)
        return (restart.every_s for _ in counts)
    if restart.policy == "backoff":
        return _backoff(restart)
    raise ValueError(f"unknown restart policy {restart.policy!r}")


def _backoff(restart: Restart) -> Iterator[float]:
    wait = restart.first_s
    n = 0
    while restart.tries is None or n < restart.tries:
        yield min(wait, restart.cap_s)
        if wait < restart.cap_s:
            wait *= restart.factor
        n += 1


def nth_wait_s(restart: Restart, n: int) -> Optional[float]:
    """The wait before try number ``n + 1`` (``n`` from 0), or ``None`` past the last try.

    Closed form of :func:`waits`: ``every_s`` for retry,
    ``min(first_s * factor^n, cap_s)`` for back-off.
    """
    if restart.policy == "manual":
        return None
    if restart.tries is not None and n >= restart.tries:
        return None
    if restart.policy == "retry":
        return restart.every_s
    if restart.policy == "backoff":
        wait = restart.first_s
        for _ in range(n):
            if wait >= restart.cap_s:
                break
            wait *= restart.factor
        return min(wait, restart.cap_s)
    raise ValueError(f"unknown restart policy {restart.policy!r}")


def longest_wait_s(restart: Restart) -> float:
    """The longest wait the policy can ask for (0 for manual)."""
    if restart.policy == "retry":
        return restart.every_s
    if restart.policy == "backoff":
        return restart.cap_s
    return 0.0


class RestartState:
    """Counts tries of a restart policy and says how long to wait after a trip.

    Parameters
    ----------
    restart : sim.model.Restart
    t_trip_delay_s : float
        The trip delay of the protected device (for the stable time).
    """

    def __init__(self, restart: Restart, t_trip_delay_s: float):
        self.restart = restart
        self.t_stable_s = max(10.0 * t_trip_delay_s, longest_wait_s(restart))
        self.tries_used = 0
        self.t_last_restart_s: Optional[float] = None
        self.given_up = False

    def on_trip(self, t_s: float) -> Optional[float]:
        """A trip at ``t_s``: the wait before the next try, or ``None`` to give up / stay off."""
        if (self.t_last_restart_s is not None
                and t_s - self.t_last_restart_s > self.t_stable_s):
            self._start_over()
        wait = nth_wait_s(self.restart, self.tries_used)
        if wait is None:
            self.given_up = self.restart.policy != "manual"
        return wait

    def on_restart(self, t_s: float) -> int:
        """A restart try at ``t_s``; returns its number (1 for the first)."""
        self.tries_used += 1
        self.t_last_restart_s = t_s
        return self.tries_used

    def reset(self) -> None:
        """Operator reset: count from zero again."""
        self._start_over()

    def _start_over(self) -> None:
        self.tries_used = 0
        self.t_last_restart_s = None
        self.given_up = False
