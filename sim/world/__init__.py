"""railfault world: the event engine that plays a scenario.

:func:`run` (from :mod:`sim.world.engine`) plays a scenario in a simpy world
and returns a :class:`sim.trace.Result`; :func:`sim.world.render.render_text`
prints it for people. Trains in closed form live in :mod:`sim.world.trains`,
the plain fixed-step reference used by the tests in :mod:`sim.world.fixedstep`.
"""
from sim.world.engine import World, run

__all__ = ["World", "run"]
