"""What the diagnosis keeps of a run besides its episodes and event counts.

The engine's event summary (:class:`sim.trace.EventSummary`) keeps a count and
the first and last instant per device and event kind, which is what a long
run can afford; two things the diagnosis needs are lost in it, and the run
keeps them here instead, bounded, at a cost of a few operations per output
change and per train stopping or going on:

* **Where and how long trains stood.** A train that loses its power stops
  once its keep-alive has run out and goes on when power returns (the
  ``stop`` and ``go`` events). :meth:`RunLog.train` keeps each stand: the
  train, from when to when (``None``: to the end of the run), the gaps its
  wheels bridged and the sections its locomotives stood in, and the devices
  of their feed chains that were open when it stopped (why it had no power).
  At most :data:`MAX_STANDS` stands that have ended are kept, besides the
  one a train may be standing in now; past that the shortest are dropped and
  counted (``dropped``), so the longest are kept.
* **The dark time of each district.** A device's own dark time
  (``DeviceSummary.dark_s``) is the time its output was off. Its district -
  the track it feeds - is without power whenever that device *or any device
  above it* is off: the union of their dark spans. :meth:`RunLog.output`
  follows every device's output and adds up, per device, the time at least
  one device of its chain (itself and every device above it,
  :meth:`sim.model.Scenario.upstream`) was off: ``district_dark_s``. This
  is the figure "a district dark for N s" means; a breaker that stays closed
  while the booster above it is off has a dark district all the same.

The engine calls :meth:`output` wherever it keeps its own dark time and
:meth:`train` when a train stops or goes on; :meth:`finish` at the end of the
run. The log is read by :mod:`sim.diagnose` (``Result.log``) and is not part of
the result JSON; the figures it gives reach the JSON through the findings.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional

__all__ = ["RunLog", "Stand", "MAX_STANDS", "stand_place"]

#: Stands kept per run (the longest are kept when there are more).
MAX_STANDS = 2000


@dataclass
class Stand:
    """A train standing still without power from ``t_stop_s`` to ``t_go_s``.

    ``t_go_s`` is ``None`` when it still stood at the end of the run
    (:attr:`duration_s` then runs to the end given to :meth:`RunLog.finish`).
    ``gaps`` are the joints its wheels bridged, ``sections`` those its
    locomotives stood in, ``chain`` the devices feeding them (nearest first),
    ``dark`` those of them that were open when it stopped and ``dark_end``
    those open at the end of the run (for a train that stood to the end).
    """

    train: str
    t_stop_s: float
    t_go_s: Optional[float] = None
    gaps: tuple = ()
    sections: tuple = ()
    dark: tuple = ()
    chain: tuple = ()
    dark_end: tuple = ()
    t_end_s: Optional[float] = field(default=None, repr=False)

    @property
    def to_end(self) -> bool:
        """Whether it still stood at the end of the run."""
        return self.t_go_s is None

    @property
    def duration_s(self) -> float:
        end = self.t_go_s if self.t_go_s is not None else self.t_end_s
        return max(0.0, (end if end is not None else self.t_stop_s) - self.t_stop_s)


def stand_place(world, train: str) -> dict:
    """``{"gaps", "sections", "chain", "dark"}`` of a train of ``world`` as it stands now.

    Read from the train's bridges on now and its locomotives' load points (their
    sections and feed chains), and the world's device outputs. A train record
    without them (another engine) gives empty tuples.
    """
    run = getattr(world, "train_runs", {}).get(train)
    if run is None:
        return {"gaps": (), "sections": (), "chain": (), "dark": ()}
    joints = world.scn.track.joints
    gaps = tuple(dict.fromkeys(joints[b.joint_index].name
                               for b in getattr(run, "bridges", {}).values()
                               if 0 <= getattr(b, "joint_index", -1) < len(joints)))
    sections: dict = {}
    feed: dict = {}
    for section, chain in getattr(run, "loads", {}).values():
        sections[section] = None
        feed.update(dict.fromkeys(chain))
    dark = tuple(d for d in feed if not world.output_closed(d))
    return {"gaps": gaps, "sections": tuple(sections), "chain": tuple(feed), "dark": dark}


class RunLog:
    """Stands of trains and district dark time of one run (module docstring).

    Parameters
    ----------
    chains : dict
        ``{device: (device, every device above it, nearest first)}`` for every
        device and supply of the scenario.
    max_stands : int
        The most stands kept (:data:`MAX_STANDS`).
    """

    __slots__ = ("_below", "_state", "_off", "_since", "_dark", "stands", "_open",
                 "dropped", "max_stands", "t_end_s")

    def __init__(self, chains: dict, max_stands: int = MAX_STANDS):
        below: dict = {d: [] for d in chains}
        for d, chain in chains.items():
            for u in chain:
                below.setdefault(u, []).append(d)
        self._below = {u: tuple(ds) for u, ds in below.items()}
        self._state: dict = {}             # device -> its output conducts
        self._off = {d: 0 for d in chains}  # devices of d's chain that are off
        self._since: dict = {}             # device -> instant its district went dark
        self._dark = {d: 0.0 for d in chains}
        self.stands: list[Stand] = []
        self._open: dict = {}              # train -> its open Stand
        self.dropped = 0
        self.max_stands = int(max_stands)
        self.t_end_s: Optional[float] = None

    @classmethod
    def of(cls, scn, max_stands: int = MAX_STANDS) -> "RunLog":
        """The log for every device and supply of ``scn``."""
        names = (list(scn.supplies) + list(scn.boosters) + list(scn.breakers)
                 + list(scn.reversers))
        return cls({d: (d,) + tuple(scn.upstream(d)) for d in names}, max_stands)

    # ----------------------------------------------------------- outputs
    def output(self, device: str, t_s: float, conducting: bool) -> None:
        """``device``'s output conducts (or not) from ``t_s`` on (repeats are ignored)."""
        conducting = bool(conducting)
        if self._state.get(device, True) == conducting:
            return
        self._state[device] = conducting
        off, since, dark = self._off, self._since, self._dark
        for d in self._below.get(device, ()):
            n = off.get(d, 0)
            if conducting:
                n -= 1
                if n == 0 and d in since:
                    dark[d] = dark.get(d, 0.0) + (t_s - since.pop(d))
            else:
                if n == 0:
                    since[d] = t_s
                n += 1
            off[d] = n

    def district_dark_s(self, device: str, t_end_s: Optional[float] = None) -> float:
        """Time ``device``'s district had no power (it or a device above it off), up to
        ``t_end_s`` (default: the end given to :meth:`finish`) for a span still open."""
        end = self.t_end_s if t_end_s is None else t_end_s
        total = self._dark.get(device, 0.0)
        since = self._since.get(device)
        if since is not None and end is not None:
            total += max(0.0, end - since)
        return total

    # ------------------------------------------------------------ trains
    def train(self, t_s: float, train: str, event: str, place: Optional[dict] = None) -> None:
        """A train stopped (``event == "stop"``, ``place`` as :func:`stand_place` gives
        it) or went on (``"go"``) at ``t_s``."""
        if event == "stop":
            if train in self._open:
                return
            p = place or {}
            st = Stand(train, t_s, None, tuple(p.get("gaps", ())), tuple(p.get("sections", ())),
                       tuple(p.get("dark", ())), tuple(p.get("chain", ())))
            self._open[train] = st
            self.stands.append(st)
        elif event == "go":
            st = self._open.pop(train, None)
            if st is not None:
                st.t_go_s = t_s
                if len(self.stands) > self.max_stands:
                    self._drop_shortest()

    def _drop_shortest(self) -> None:
        """Drop the shortest stand that has ended (open stands, at most one per train,
        are kept: the longest stands are never the ones dropped)."""
        closed = [k for k, s in enumerate(self.stands) if s.t_go_s is not None]
        if closed:
            k = min(closed, key=lambda k: (self.stands[k].t_go_s - self.stands[k].t_stop_s, k))
            del self.stands[k]
            self.dropped += 1

    def finish(self, t_end_s: float) -> None:
        """The run ended at ``t_end_s``: open stands and dark districts last until then."""
        self.t_end_s = t_end_s
        for st in self.stands:
            st.t_end_s = t_end_s
            if st.t_go_s is None:
                st.dark_end = tuple(d for d in st.chain if not self._state.get(d, True))
