"""The frozen scenario model: what a validated scenario file becomes.

Every physical value is an SI float whose name carries its unit (``t_delay_s``,
``i_trip_a``, ``r_ohm``, ``length_m``). The loader (:mod:`sim.scenario`) fills
defaults, validates and builds these objects once; nothing downstream edits them.

Mappings are read-only views (:class:`types.MappingProxyType`), sequences are
tuples, and every record is a frozen dataclass, so a model can be shared between
the static checks, the circuit and the event engine without copies.

Key paths
---------
``Scenario.locations`` maps a key path (a tuple such as
``("boosters", "east", "trip", "after")``) to its ``(line, column)`` in the
file, 1-based, so that every finding and error can say where it comes from.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Mapping, Optional

#: Phase/leads/sign values: +1 is "normal" (left rail follows the command
#: signal), -1 "inverted" / "swapped".
NORMAL = +1
INVERTED = -1

EMPTY: Mapping = MappingProxyType({})


def frozen_map(d: Optional[dict]) -> Mapping:
    """Return a read-only view of ``d`` (an empty one for ``None``)."""
    return MappingProxyType(dict(d or {}))


# --------------------------------------------------------------------- wiring
@dataclass(frozen=True)
class Wire:
    """A two-conductor wire run.

    ``length_m`` is one way; the circuit counts both conductors of the pair.
    Either ``awg`` (copper, ASTM B258 diameters) or ``r_per_m_ohm`` (one
    conductor, ohm per metre) sets the resistance; with neither the run is
    negligible (zero ohm).
    """

    length_m: float = 0.0
    awg: Optional[float] = None
    r_per_m_ohm: Optional[float] = None
    temperature_c: float = 20.0


@dataclass(frozen=True)
class Feed:
    """Where a device or section takes its power from, and the wire between."""

    source: str
    wire: Wire = field(default_factory=Wire)


# ----------------------------------------------------------------- protection
@dataclass(frozen=True)
class Sense:
    """How a device samples its current.

    ``period_s`` ``None`` means continuous sensing. ``full_scale_a`` is the ADC
    clamp (``math.inf`` for none). ``phase`` is where in ``[0, 1)`` of a
    sample period the grid starts; ``None`` means "drawn from the scenario seed".
    """

    period_s: Optional[float] = None
    full_scale_a: float = math.inf
    phase: Optional[float] = None


#: Inverse-time curve constants (k, alpha, c) of IEC 60255-151 and IEEE C37.112.
CURVES: Mapping[str, tuple[float, float, float]] = MappingProxyType({
    "iec-standard-inverse": (0.14, 0.02, 0.0),
    "iec-very-inverse": (13.5, 1.0, 0.0),
    "iec-extremely-inverse": (80.0, 2.0, 0.0),
    "iec-long-time-inverse": (120.0, 1.0, 0.0),
    "ieee-moderately-inverse": (0.0515, 0.02, 0.114),
    "ieee-very-inverse": (19.61, 2.0, 0.491),
    "ieee-extremely-inverse": (28.2, 2.0, 0.1217),
})


@dataclass(frozen=True)
class Trip:
    """Overcurrent trip setting.

    Definite time: trips when the current stays above ``i_above_a`` for
    ``t_after_s``. With ``curve`` set (a key of :data:`CURVES`), the delay is
    ``tms * (k / ((I/i_above_a)^alpha - 1) + c)`` (IEC 60255-151), and
    ``t_after_s`` is a lower bound on it.
    """

    i_above_a: float
    t_after_s: float
    curve: Optional[str] = None
    tms: float = 1.0


@dataclass(frozen=True)
class Thermal:
    """Thermal replica, IEC 60255-149: ``tau dθ/dt = (I/I_rated)^2 - θ``.

    ``law`` is ``"square"`` (the standard) or ``"linear"`` (``I/I_rated``).
    """

    i_rated_a: float
    tau_s: float
    law: str = "square"
    trip_at: float = 1.2
    resume_at: float = 0.6


@dataclass(frozen=True)
class Restart:
    """Restart policy after a trip.

    ``manual``: stays off until an ``actions`` reset. ``retry``: ``tries``
    attempts ``every_s`` apart. ``backoff``: waits ``first_s``, multiplied by
    ``factor`` after each failed try, capped at ``cap_s``; ``tries`` ``None``
    means without end.
    """

    policy: str = "manual"
    tries: Optional[int] = None
    every_s: float = 0.5
    first_s: float = 0.5
    factor: float = 2.0
    cap_s: float = 10.0


@dataclass(frozen=True)
class Supply:
    """A power supply: EMF behind an internal resistance, with a current limit.

    ``on_limit`` is ``"constant-current"`` (voltage collapses to hold the
    limit), ``"hiccup"`` (off for ``off_time_s``, then on again) or ``"latch"``
    (off until reset).
    """

    name: str
    v_emf_v: float
    r_ohm: float = 0.05
    i_limit_a: float = math.inf
    on_limit: str = "constant-current"
    t_off_s: float = 1.0
    #: hiccup/latch: the overload must last this long before the output goes
    #: off; meanwhile the supply holds its limit (constant current). 0: at once.
    t_limit_s: float = 0.0


@dataclass(frozen=True)
class Booster:
    """A booster: drives its district from a supply, with its protection.

    ``phase`` is +1 (normal) or -1 (inverted). ``reverse_on_short`` makes the
    booster swap its own output first (taking ``t_swap_s``) and trip only if
    the short stays. ``v_undervoltage_v`` is the supply voltage below which it
    drops out, after it has stayed below it for ``t_undervoltage_s`` (the
    hold-up of the booster's own supply capacitors; 0: at once, the worst case).
    """

    name: str
    supply: str
    r_out_ohm: float = 0.04
    phase: int = NORMAL
    sense: Sense = field(default_factory=Sense)
    trip: Trip = field(default_factory=lambda: Trip(5.0, 0.002))
    thermal: Optional[Thermal] = None
    restart: Restart = field(default_factory=Restart)
    reverse_on_short: bool = False
    sense_reverse_a: Optional[float] = None
    t_sense_reverse_s: float = 0.0
    t_swap_s: float = 0.001
    t_hold_off_s: float = 0.05
    v_undervoltage_v: float = 7.0
    wire: Wire = field(default_factory=Wire)
    t_undervoltage_s: float = 0.0


@dataclass(frozen=True)
class Breaker:
    """An electronic circuit breaker on a sub-district."""

    name: str
    feed: Feed
    r_on_ohm: float = 0.02
    sense: Sense = field(default_factory=Sense)
    trip: Trip = field(default_factory=lambda: Trip(3.0, 0.0005))
    thermal: Optional[Thermal] = None
    restart: Restart = field(default_factory=Restart)


@dataclass(frozen=True)
class Reverser:
    """A reversing controller.

    It senses a short above ``sense_above_a`` lasting ``t_sense_s``, then takes
    ``t_swap_s`` to interrupt it, stays unpowered for ``t_dead_s`` until the
    swapped leads close, and will not swap again within ``t_hold_off_s``. If
    the short stays after a swap it trips by ``trip``.
    """

    name: str
    feed: Feed
    sense_above_a: float
    t_sense_s: float
    t_swap_s: float
    t_dead_s: float = 0.0
    t_hold_off_s: float = 0.05
    r_on_ohm: float = 0.02
    sense: Sense = field(default_factory=Sense)
    trip: Trip = field(default_factory=lambda: Trip(4.0, 0.003))
    restart: Restart = field(default_factory=Restart)

    @property
    def t_clear_s(self) -> float:
        """Time from the onset of a short to its interruption by a swap."""
        return self.t_sense_s + self.t_swap_s


# ---------------------------------------------------------------------- track
@dataclass(frozen=True)
class Rail:
    """Rail conductor: from a material and a cross-section, or a given ohm/m."""

    material: Optional[str] = "nickel-silver"
    area_m2: Optional[float] = 1.9e-6
    r_per_m_ohm: Optional[float] = None


@dataclass(frozen=True)
class Feeder:
    """A feeder pair from the section's device bus to the rails at ``at_m``."""

    at_m: float
    wire: Wire = field(default_factory=Wire)


@dataclass(frozen=True)
class Section:
    """A length of track with ends ``a`` and ``b``.

    ``feed`` names a booster, breaker or reverser (``None``: fed only through
    bonded joints). ``leads`` is the feeders' orientation as built, seen from
    ``a`` to ``b``: +1 (normal: the device's first output terminal on the left
    rail) or -1 (swapped: on the right); ``None`` when the file gives none and
    the tool chooses it (:func:`sim.checks.wiring.section_leads`). When no
    feeders are given the loader puts one at mid-length.
    """

    name: str
    length_m: float
    feed: Optional[str]
    feeders: tuple[Feeder, ...] = ()
    leads: Optional[int] = NORMAL


@dataclass(frozen=True)
class End:
    """One end of a section: ``section`` name and ``end`` ``"a"`` or ``"b"``."""

    section: str
    end: str

    def __str__(self) -> str:  # e.g. "east-main.b"
        return f"{self.section}.{self.end}"


@dataclass(frozen=True)
class Joint:
    """Where two section ends meet.

    ``gaps`` is ``"none"`` (bonded), ``"one"`` (one rail gapped, ``rail`` says
    which, as seen from ``ends[0]`` looking into its section) or ``"both"``.
    ``sign`` is +1 for a straight joint (an ``a`` end with a ``b`` end: left
    meets left) and -1 for a crossed one (left meets right).
    """

    index: int
    ends: tuple[End, End]
    gaps: str = "none"
    rail: str = "left"

    @property
    def sign(self) -> int:
        return +1 if self.ends[0].end != self.ends[1].end else -1

    @property
    def name(self) -> str:
        return f"{self.ends[0]}~{self.ends[1]}"


@dataclass(frozen=True)
class Track:
    """The track: rail conductor, wheel contact, sections and joints."""

    rail: Rail
    r_wheel_contact_ohm: float
    sections: Mapping[str, Section]
    joints: tuple[Joint, ...]
    gap_width_m: float = 0.8e-3
    contact_length_m: float = 1.0e-3


# -------------------------------------------------------------- rolling stock
@dataclass(frozen=True)
class Vehicle:
    """A vehicle type.

    ``axles_m`` are measured from the vehicle's front. ``pickup`` is the tuple
    of axle indices joined electrically (all of them for ``pickup: all``, none
    for an unpowered car). A vehicle with ``draw_a`` > 0 is a load (a
    locomotive); ``r_join_ohm`` is the resistance joining the pickup axles of a
    lighted car. ``metal_wheels``: every axle is a conducting wheelset that
    bridges a one-rail gap while its tread spans the gap.
    ``c_keep_alive_f`` behind ``r_charge_ohm`` is the power-up inrush model.
    """

    name: str
    length_m: float
    axles_m: tuple[float, ...]
    pickup: tuple[int, ...] = ()
    draw_a: float = 0.0
    t_keep_alive_s: float = 0.0
    r_join_ohm: float = 0.0
    metal_wheels: bool = False
    c_keep_alive_f: float = 0.0
    r_charge_ohm: float = 10.0


@dataclass(frozen=True)
class Reversal:
    """A route step: stop, wait ``t_wait_s``, and run back the other way."""

    t_wait_s: float = 0.0


@dataclass(frozen=True)
class Start:
    """Where a train's front stands at the start, and which end it heads to."""

    section: str
    at_m: float
    heading: str  # "a" or "b"


@dataclass(frozen=True)
class Train:
    """A train: its consist (vehicle names, front first) and its route.

    ``route`` is a tuple of section names and :class:`Reversal` steps.
    """

    name: str
    consist: tuple[str, ...]
    start: Start
    route: tuple  # of str | Reversal
    speed_mps: float
    depart_s: float = 0.0
    #: How many times the route after its first section is run; ``route`` holds
    #: the steps laid out already (``laps`` is what the file said).
    laps: int = 1


# ------------------------------------------------------------ faults, actions
@dataclass(frozen=True)
class Fault:
    """A fault at ``at_s``.

    ``kind`` ``"short"``: a resistance ``r_ohm`` across the rails of
    ``section`` at ``at_m`` for ``lasts_s`` (``None``: stays). ``kind``
    ``"open"``: feeder number ``feeder`` (0-based) of ``section`` opens.
    """

    at_s: float
    kind: str
    section: str
    at_m: float = 0.0
    r_ohm: float = 0.0
    lasts_s: Optional[float] = None
    feeder: Optional[int] = None


@dataclass(frozen=True)
class Action:
    """An operator action at ``at_s``: ``kind`` ``"reset"`` of ``device``."""

    at_s: float
    kind: str
    device: str


@dataclass(frozen=True)
class Scenario:
    """A whole validated scenario (see ``scenarios/README.md``)."""

    format: str
    title: str
    seed: int
    duration_s: float
    supplies: Mapping[str, Supply]
    boosters: Mapping[str, Booster]
    breakers: Mapping[str, Breaker]
    reversers: Mapping[str, Reverser]
    track: Track
    rolling_stock: Mapping[str, Vehicle] = field(default_factory=lambda: EMPTY)
    trains: Mapping[str, Train] = field(default_factory=lambda: EMPTY)
    faults: tuple[Fault, ...] = ()
    actions: tuple[Action, ...] = ()
    vary: Mapping[str, object] = field(default_factory=lambda: EMPTY)
    samples: int = 0
    t_margin_required_s: float = 0.0
    #: ``cases:`` named what-if variants, each a whole validated scenario
    #: (:mod:`sim.whatif.cases`); empty in a case itself.
    cases: Mapping[str, "Scenario"] = field(default_factory=lambda: EMPTY)
    path: str = "<memory>"
    sha256: str = ""
    locations: Mapping[tuple, tuple[int, int]] = field(default_factory=lambda: EMPTY)
    #: The model scale named by the file (``"HO"``, ``"N"``, ...; ``sim.schema.SCALES``),
    #: ``None`` when it gives none.
    scale: Optional[str] = None

    # ------------------------------------------------------------- queries
    def device_kind(self, name: str) -> Optional[str]:
        """``"supply"``, ``"booster"``, ``"breaker"``, ``"reverser"`` or ``None``."""
        for kind, table in (("supply", self.supplies), ("booster", self.boosters),
                            ("breaker", self.breakers), ("reverser", self.reversers)):
            if name in table:
                return kind
        return None

    def device(self, name: str):
        """The device record of any kind called ``name``."""
        for table in (self.supplies, self.boosters, self.breakers, self.reversers):
            if name in table:
                return table[name]
        raise KeyError(name)

    def upstream(self, name: str) -> tuple[str, ...]:
        """The feed chain above a device or section, nearest first.

        For a section fed by a reverser on a breaker on a booster:
        ``(reverser, breaker, booster, supply)``.
        """
        chain: list[str] = []
        if name in self.track.sections:
            cur = self.track.sections[name].feed
        else:
            cur = self._feed_of(name)
        while cur is not None and cur not in chain:
            chain.append(cur)
            cur = self._feed_of(cur)
        return tuple(chain)

    def _feed_of(self, device: str) -> Optional[str]:
        if device in self.boosters:
            return self.boosters[device].supply
        if device in self.breakers:
            return self.breakers[device].feed.source
        if device in self.reversers:
            return self.reversers[device].feed.source
        return None

    def booster_of(self, name: str) -> Optional[str]:
        """The booster at the top of the feed chain of a device or section."""
        if name in self.boosters:
            return name
        for dev in self.upstream(name):
            if dev in self.boosters:
                return dev
        return None

    def where(self, *path) -> str:
        """``"key.path (line N)"`` for a key path, as findings print it."""
        text = ".".join(str(p) for p in path)
        loc = self.locations.get(tuple(path))
        return f"{text} (line {loc[0]})" if loc else text


@dataclass(frozen=True)
class Finding:
    """One result of a static check or a run.

    ``code`` is a stable identifier of our own (``RF-POL-001`` ...), ``where``
    names the place (a key path, a section, a joint), ``fix`` the smallest
    change that mends it ("" when none applies).

    A finding of a run may stand for several occurrences of one cause at one
    place: ``count`` of them, the first at ``first_s`` and the last at
    ``last_s`` (seconds of simulated time; ``None`` for a static finding).
    ``because`` names the root-cause finding (``"CODE where"``) that this one
    only follows from ("" when it is a cause of its own). ``same_as`` names a
    finding of ``railfault check`` (``"CODE where"``) that this run finding
    restates: the same cause, seen in the run ("" when none); a reader merging
    the check's and the run's findings shows the two as one.
    """

    severity: str  # "error" | "warning" | "info"
    code: str
    where: str
    message: str
    fix: str = ""
    count: int = 1
    first_s: Optional[float] = None
    last_s: Optional[float] = None
    because: str = ""
    same_as: str = ""

    def as_dict(self) -> dict:
        d = {"severity": self.severity, "code": self.code, "where": self.where,
             "message": self.message}
        if self.fix:
            d["fix"] = self.fix
        if self.count != 1:
            d["count"] = self.count
        if self.first_s is not None:
            d["first_s"] = self.first_s
        if self.last_s is not None:
            d["last_s"] = self.last_s
        if self.because:
            d["because"] = self.because
        if self.same_as:
            d["same_as"] = self.same_as
        return d
