"""railfault world: the event engine that plays a scenario.

:func:`run` plays a scenario in a simpy world (:func:`sim.world.engine.run`) and
returns its :class:`sim.trace.Result` diagnosed (:func:`sim.diagnose.diagnose`:
one finding per cause, the headline, the verdict); :func:`sim.world.render.render_text`
prints it for people. Trains in closed form live in :mod:`sim.world.trains`,
the plain fixed-step reference, a test oracle, lives with the tests (``tests/fixedstep.py``).
"""
from typing import Optional

from sim.world.engine import World
from sim.world.engine import run as play

__all__ = ["World", "run", "play"]


def run(scn, until_s: Optional[float] = None, keep_events: bool = False,
        static: Optional[list] = None, **engine_kw):
    """Play a scenario and diagnose the run.

    ``scn``, ``until_s``, ``keep_events`` and any further keyword are those of
    :func:`sim.world.engine.run`; ``static`` is the list of findings of ``railfault check`` for ``scn`` when the
    caller has them (computed otherwise: a run and ``check`` must agree).

    Returns
    -------
    sim.trace.Result
        With ``findings`` one per cause (and what follows from each), ``headline``
        and ``verdict`` (:func:`sim.diagnose.diagnose`).
    """
    from sim.diagnose import diagnose

    result = play(scn, until_s=until_s, keep_events=keep_events, **engine_kw)
    return diagnose(scn, result, static=static)
