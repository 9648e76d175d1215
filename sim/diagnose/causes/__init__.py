"""The specific causes of a run's trouble, one module each.

Each module has ``find(facts, claimed) -> list[Cause]``: it looks at the
episodes no earlier cause has claimed (``claimed`` holds their ``id``), adds
those it explains to ``claimed`` and returns one :class:`sim.diagnose.cause.Cause`
per cause. :data:`SPECIFIC` is the order they run in, the most specific first:
a root cause claims what follows from it before a broader rule sees it.

========  ===========  ====================================================
module    codes        cause
========  ===========  ====================================================
bonded    RF-RUN-032   bonded joint out of phase: a dead short across a district
trains    RF-RUN-030   a train longer than its reversing section
phasing   RF-RUN-031   a gap out of phase between fixed-polarity districts
backfeed  RF-RUN-035   a short fed back through a train bridging a district gap
supply    RF-RUN-033   a supply at its current limit takes its boosters down
inrush    RF-RUN-034   keep-alive inrush keeps a device from restarting
race      RF-RUN-036   a reversing controller too slow for the upstream trip
          RF-RUN-037   a reversing controller that never senses the short
          RF-RUN-038   two reversing controllers fighting at one gap
faults    RF-RUN-039   a short cleared by a device further up than the nearest
          RF-RUN-041   a long let-through (I²t) of a fault or overload
========  ===========  ====================================================
"""
from sim.diagnose.causes import backfeed, bonded, faults, inrush, phasing, race, supply, trains

#: The specific causes, most specific first.
SPECIFIC = (bonded.find, trains.find, phasing.find, backfeed.find, supply.find, inrush.find,
            race.find, faults.find)

__all__ = ["SPECIFIC"]
