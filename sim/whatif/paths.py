"""Key paths of a scenario file: parse them, find their kind, apply a value to the model.

A key path is written as in the file and in messages: dots between keys and
``[i]`` for a list item (``reversers.loop-ctl.swap_time``,
``track.sections.main.feeders[1].at``, ``faults``). :func:`parse_key_path`
turns it into a tuple (``("reversers", "loop-ctl", "swap_time")``).

:func:`kind_at` walks the format's declarations (:mod:`sim.schema`) along a
path: the kind tells what a value there may be (a time, > 0; an integer >= 1).

:func:`apply` puts a value, already converted to SI like the loader converts
the key (``Scenario.vary`` holds such values), into the frozen model with
:func:`dataclasses.replace` along the path: only the records on the path are
new, everything else is shared with the base model. The map from file keys to
model fields below is the code form of the table "Where the values go" of
``scenarios/README.md``; ``tests/test_whatif_paths.py`` holds it to the loader
for every quantity and number of the bundled scenarios.

:func:`reuse_of` decides, from the varied paths alone, which built parts of
a run a sample may share with the base: the layout graph, and the circuit with
its factorization (only when no varied path changes the network: a timing
setting, a train's speed, a fault's instant).
"""
from __future__ import annotations

import re
from dataclasses import replace
from types import MappingProxyType
from typing import Any, Iterable, Mapping, Optional

from sim import schema as S
from sim.yamlnodes import dotted

__all__ = ["parse_key_path", "kind_at", "apply", "apply_all", "reuse_of", "Reuse",
           "PathError", "dotted"]

_SEGMENT_RE = re.compile(r"([^.\[\]]+)|\[(\d+)\]")


class PathError(ValueError):
    """A key path that does not name a value of the model (the message says why)."""


def parse_key_path(text: str) -> Optional[tuple]:
    """``"a.b[2].c"`` -> ``("a", "b", 2, "c")``; ``None`` when it is not a key path."""
    if not isinstance(text, str):
        return None
    segments: list = []
    pos = 0
    for m in _SEGMENT_RE.finditer(text):
        if m.start() != pos and text[pos:m.start()] != ".":
            return None
        if m.start() != pos and not segments:
            return None
        segments.append(m.group(1) if m.group(1) is not None else int(m.group(2)))
        pos = m.end()
    if pos != len(text) or not segments or not isinstance(segments[0], str):
        return None
    return tuple(segments)


def _record_option(kind: S.Either, datum: Any, seg: Any = None) -> S.Kind:
    """The option of an :class:`~sim.schema.Either` that ``datum`` (or ``seg``) selects."""
    for types, option in kind.options:
        if datum is not None and isinstance(datum, types):
            return option
    for _types, option in kind.options:
        if isinstance(option, S.Record) and (seg is None or seg in option.fields):
            return option
    return kind.options[0][1]


def kind_at(path: tuple, data: Any = None) -> S.Kind:
    """The declared kind of the value at ``path``.

    Parameters
    ----------
    path
        A parsed key path.
    data
        The file's plain data (or ``None``): it chooses between the forms of a
        value that has several (a feed written as a name or as a mapping) and
        bounds list indices; a name under a mapping of names may be new.

    Raises
    ------
    PathError
        The path leaves the format (an unknown key, a list index that does not
        exist, a key under a value that has none).
    """
    kind: S.Kind = S.TOP
    datum = data
    done: tuple = ()
    for seg in path:
        if isinstance(kind, S.Either):
            kind = _record_option(kind, datum, seg)
        if isinstance(kind, S.Record):
            if not isinstance(seg, str) or seg not in kind.fields:
                hint = S.suggest(seg, kind.fields) or \
                    f" (keys here: {', '.join(kind.fields)})"
                raise PathError(f"'{dotted(done + (seg,))}' is not a key of the format{hint}")
            kind = kind.fields[seg].kind
        elif isinstance(kind, S.Names):
            if not isinstance(seg, str) or not S.NAME_RE.match(seg):
                raise PathError(f"'{dotted(done + (seg,))}': '{seg}' is not usable as a name")
            kind = kind.item
        elif isinstance(kind, S.Seq):
            n = len(datum) if isinstance(datum, list) else 0
            if not isinstance(seg, int) or (data is not None and seg >= n):
                raise PathError(f"'{dotted(done + (seg,))}' is not in this file (the list "
                                f"'{dotted(done)}' has {n} item{'s' if n != 1 else ''})")
            kind = kind.item
        else:
            raise PathError(f"'{dotted(done + (seg,))}' goes below '{dotted(done)}', which "
                            f"is {kind.doc or 'a single value'}")
        datum = datum.get(seg) if isinstance(datum, dict) else (
            datum[seg] if isinstance(datum, list) and isinstance(seg, int)
            and seg < len(datum) else None)
        done = done + (seg,)
    if isinstance(kind, S.Either):
        kind = _record_option(kind, datum)
    return kind


# ----------------------------------------------------------- file key -> model
class _Names:
    """A mapping of names to records of ``table`` (``boosters``)."""

    def __init__(self, table: dict):
        self.table = table


class _Seq:
    """A tuple of records of ``table``, or of plain values when ``table`` is ``None``."""

    def __init__(self, table: Optional[dict]):
        self.table = table


class _Flat:
    """A sub-mapping of the file whose keys the model keeps on the record itself."""

    def __init__(self, table: dict):
        self.table = table


_SENSE = {"period": "period_s", "full_scale": "full_scale_a", "phase": "phase"}
_TRIP = {"above": "i_above_a", "after": "t_after_s", "tms": "tms"}
_THERMAL = {"rated": "i_rated_a", "tau": "tau_s", "trip_at": "trip_at", "resume_at": "resume_at"}
_RESTART = {"tries": "tries", "every": "every_s", "first": "first_s", "factor": "factor",
            "cap": "cap_s"}
_PROTECTION = {"sense": ("sense", _SENSE), "trip": ("trip", _TRIP),
               "thermal": ("thermal", _THERMAL), "restart": ("restart", _RESTART)}
_FEED = {"length": "wire.length_m"}
_TABLE = {
    "seed": "seed", "duration": "duration_s", "samples": "samples",
    "require": _Flat({"margin": "t_margin_required_s"}),
    "supplies": _Names({"voltage": "v_emf_v", "resistance": "r_ohm",
                        "current_limit": "i_limit_a", "off_time": "t_off_s",
                        "limit_after": "t_limit_s"}),
    "boosters": _Names({"output_resistance": "r_out_ohm", "undervoltage": "v_undervoltage_v",
                        "undervoltage_after": "t_undervoltage_s",
                        "wire": ("wire", {"length": "length_m"}),
                        "reverse": _Flat({"above": "sense_reverse_a",
                                          "after": "t_sense_reverse_s",
                                          "swap_time": "t_swap_s",
                                          "hold_off": "t_hold_off_s"}),
                        **_PROTECTION}),
    "breakers": _Names({"on_resistance": "r_on_ohm", "feed": ("feed", _FEED), **_PROTECTION}),
    "reversers": _Names({"on_resistance": "r_on_ohm", "feed": ("feed", _FEED),
                         "swap_time": "t_swap_s", "dead_time": "t_dead_s",
                         "hold_off": "t_hold_off_s",
                         "sense": _Flat({"above": "sense_above_a", "after": "t_sense_s",
                                         "period": "sense.period_s",
                                         "full_scale": "sense.full_scale_a",
                                         "phase": "sense.phase"}),
                         "trip": ("trip", _TRIP), "restart": ("restart", _RESTART)}),
    "track": ("track", {
        "wheel_contact": "r_wheel_contact_ohm", "gap_width": "gap_width_m",
        "contact_length": "contact_length_m",
        "rail": ("rail", {"area": "area_m2", "resistance": "r_per_m_ohm"}),
        "sections": ("sections", _Names({
            "length": "length_m",
            "feeders": ("feeders", _Seq({"at": "at_m", "length": "wire.length_m"}))}))}),
    "rolling_stock": _Names({"length": "length_m", "axles": ("axles_m", _Seq(None)),
                             "draw": "draw_a", "keep_alive": "t_keep_alive_s",
                             "resistance": "r_join_ohm", "capacitance": "c_keep_alive_f",
                             "charge_resistance": "r_charge_ohm"}),
    "trains": _Names({"speed": "speed_mps", "depart": "depart_s",
                      "start": ("start", {"at": "at_m"}),
                      "route": ("route", _Seq({"reverse_after": "t_wait_s"}))}),
    "faults": _Seq({"at": "at_s", "resistance": "r_ohm", "lasts": "lasts_s",
                    "short": _Flat({"at": "at_m"}), "open": _Flat({"feeder": "feeder"})}),
    "actions": _Seq({"at": "at_s"}),
}

def _set_attr(obj: Any, attr: str, value: Any, shown: str) -> Any:
    """``replace(obj, a=...)`` for ``attr`` ``"a"`` or a dotted ``"a.b"``."""
    head, _, rest = attr.partition(".")
    if not rest:
        old = getattr(obj, head)
        if isinstance(old, int) and not isinstance(old, bool) and isinstance(value, float) \
                and value == int(value):
            value = int(value)
        return replace(obj, **{head: value})
    sub = getattr(obj, head)
    if sub is None:
        raise PathError(f"'{shown}' is not given in this file")
    return replace(obj, **{head: _set_attr(sub, rest, value, shown)})


def _apply(obj: Any, entry: Any, path: tuple, value: Any, done: tuple) -> Any:
    """The new ``obj`` with ``value`` at ``path`` below it; ``entry`` maps its keys."""
    shown = dotted(done + path[:1])
    if isinstance(entry, _Names):
        name = path[0]
        if not isinstance(obj, Mapping) or name not in obj:
            raise PathError(f"'{shown}' is not in this file")
        if len(path) == 1:
            raise PathError(f"'{shown}' is a whole record, not a value")
        new = _apply(obj[name], entry.table, path[1:], value, done + path[:1])
        return MappingProxyType({**obj, name: new})
    if isinstance(entry, _Seq):
        k = path[0]
        if not isinstance(k, int) or not isinstance(obj, tuple) or k >= len(obj):
            raise PathError(f"'{shown}' is not in this file")
        if entry.table is None:
            if len(path) != 1:
                raise PathError(f"'{dotted(done + path)}' is not a value of the model")
            item = float(value)
        else:
            if len(path) == 1:
                raise PathError(f"'{shown}' is a whole record, not a value")
            item = _apply(obj[k], entry.table, path[1:], value, done + path[:1])
        return obj[:k] + (item,) + obj[k + 1:]
    if isinstance(entry, _Flat):
        return _apply(obj, entry.table, path, value, done)
    # a dict: file keys of the record ``obj``
    key = path[0]
    sub = entry.get(key) if isinstance(key, str) else None
    if sub is None:
        raise PathError(f"'{dotted(done + path)}' is not a value a sample can set")
    if isinstance(sub, str):
        if len(path) != 1:
            raise PathError(f"'{dotted(done + path)}' is not a value of the model")
        return _set_attr(obj, sub, value, shown)
    if isinstance(sub, _Flat):
        return _apply(obj, sub.table, path[1:], value, done + path[:1])
    if isinstance(sub, (_Names, _Seq)):       # a top-level table of the scenario
        return replace(obj, **{key: _apply(getattr(obj, key), sub, path[1:], value,
                                           done + path[:1])})
    attr, table = sub
    held = getattr(obj, attr)
    if held is None:
        raise PathError(f"'{shown}' is not given in this file")
    if len(path) == 1:
        raise PathError(f"'{shown}' is a whole record, not a value")
    return replace(obj, **{attr: _apply(held, table, path[1:], value, done + path[:1])})


def apply(scn, path: tuple, value: Any):
    """A new scenario with ``value`` (SI, converted like the key) at key path ``path``.

    Parameters
    ----------
    scn : sim.model.Scenario
    path : tuple
        A parsed key path naming a quantity or a number (what ``vary`` may name).
    value
        The value in SI units, as the loader converts the key.

    Returns
    -------
    sim.model.Scenario
        Frozen; the records on the path are new, the rest is shared with ``scn``.

    Raises
    ------
    PathError
        The path names nothing a value can be given to (or an optional record
        that this file does not give, such as a thermal replica left out).
    """
    path = tuple(path)
    if len(path) == 4 and path[:2] == ("track", "sections") and path[3] == "length":
        sec = scn.track.sections.get(path[2])
        if sec is not None and sec.feed is not None and \
                ("track", "sections", path[2], "feeders") not in scn.locations:
            raise PathError(f"'{dotted(path)}' also places the section's default feeder (at "
                            f"mid-length); to vary it, give the section's feeders in the file")
    return _apply(scn, _TABLE, path, value, ())


def apply_all(scn, values: Mapping[tuple, Any]):
    """:func:`apply` for every ``{path: value}`` in turn."""
    for path, value in values.items():
        scn = apply(scn, path, value)
    return scn


# ------------------------------------------------------------------ re-use
#: Keys (the last segment of a path, with its record) whose value changes no
#: branch of the circuit: timing settings, thresholds, train motion, loads and
#: faults (loads and shorts are low-rank changes of the circuit, not its base).
_TIMING_LEAVES = {
    "supplies": {"off_time", "limit_after"},
    "boosters": {"undervoltage", "undervoltage_after", "sense", "trip", "thermal", "restart",
                 "reverse"},
    "breakers": {"sense", "trip", "thermal", "restart"},
    "reversers": {"sense", "trip", "restart", "swap_time", "dead_time", "hold_off"},
}
_TIMING_TOP = {"seed", "duration", "samples", "require", "faults", "actions", "rolling_stock"}
_TRACK_TIMING = {"gap_width", "contact_length", "wheel_contact"}


#: Leaves that decide whether a coin-test short trips its device (the trip threshold, the
#: sensing clamp): varying one changes the static findings a run is judged with.
_STATIC_LEAVES = {"above", "full_scale"}


class Reuse:
    """What a sample may share with the base: ``layout``, ``circuit`` and ``static`` (the
    findings of ``railfault check`` a run is judged with: see :func:`reuse_of`)."""

    __slots__ = ("layout", "circuit", "static")

    def __init__(self, layout: bool, circuit: bool, static: bool = False):
        self.layout = layout
        self.circuit = circuit
        self.static = static

    def __repr__(self) -> str:
        return f"Reuse(layout={self.layout}, circuit={self.circuit}, static={self.static})"


def _timing(path: tuple) -> bool:
    """Whether ``path`` leaves the network (the circuit's base) as it is."""
    top = path[0]
    if top in _TIMING_TOP:
        return True
    if top in _TIMING_LEAVES:
        return len(path) >= 3 and path[2] in _TIMING_LEAVES[top]
    if top == "trains":         # trains are loads and bridges: changes of the circuit
        return True
    if top == "track":
        return len(path) == 2 and path[1] in _TRACK_TIMING
    return False


def reuse_of(paths: Iterable[tuple]) -> Reuse:
    """Which built parts the samples varying ``paths`` can share with the base.

    The circuit (and its factorization) is shared only when every varied path is
    a timing setting, a threshold, a train's motion, a vehicle or a fault
    (:data:`_TIMING_LEAVES`); anything else (a resistance, a wire, a section's
    length, a supply's voltage or current limit) builds the circuit anew. The
    layout graph is shared unless a path lies under ``track`` (other than the
    gap width, contact length and wheel contact) or a train's start or route
    sections. The static findings a run is judged with (the shorts ``check`` finds
    are never cleared: :mod:`sim.diagnose.static`) depend on the circuit and on the
    trip thresholds and sensing clamps only: they are shared when the circuit is and
    no ``above`` or ``full_scale`` varies.
    """
    paths = [tuple(p) for p in paths]
    circuit = all(_timing(p) for p in paths)
    static = circuit and not any(p and p[-1] in _STATIC_LEAVES for p in paths)
    layout = all(not (p[0] == "track" and not _timing(p))
                 and not (p[0] == "trains" and len(p) >= 3 and p[2] in ("start", "route")
                          and p[-1] != "reverse_after")
                 for p in paths)
    return Reuse(layout=layout, circuit=circuit, static=static)
