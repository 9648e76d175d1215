"""The scenario format, declared once: keys, kinds, defaults; and its JSON Schema.

Every key of a ``railfault/1`` file is declared here as a :class:`Field` of a
:class:`Record` with a :class:`Kind` (a quantity of a dimension, a number, a
choice, a reference to a name, ...) and a default written as it would be in the
file. The loader (:mod:`sim.scenario`) converts and checks a file against these
declarations, collecting every problem; :func:`json_schema` turns the same
declarations into a JSON Schema (draft 2020-12) for editors.

The JSON Schema is the shape of the format (key names, enumerations, quantity
spellings by dimension); the loader is the authority (it also checks ranges,
references and feed cycles, and reads any unit the SI prefixes allow).
"""
from __future__ import annotations

import difflib
import math
import re
from dataclasses import dataclass, field
from typing import Any, Callable, Optional

from sim import units as U
from sim.units import describe
from sim.model import CURVES
from sim.units import QuantityError

__all__ = ["json_schema", "Kind", "Quantity", "Number", "Choice", "Flag", "Text", "Ref",
           "Gauge", "Seq", "Record", "Names", "Either", "Field", "REQUIRED", "INVALID",
           "NAME_RE", "TOP", "Context", "suggest", "either_or", "describe", "RAIL_MATERIALS"]

SCHEMA_DIALECT = "https://json-schema.org/draft/2020-12/schema"

#: Names of devices, sections, vehicles and trains: no dots or spaces, since they
#: appear in key paths (``boosters.east.trip.after``) and joint ends (``east-main.b``).
NAME_RE = re.compile(r"^[A-Za-z0-9_][A-Za-z0-9_-]*$")
NAME_PATTERN = NAME_RE.pattern

#: Rail materials the circuit knows a resistivity for (the keys of
#: sim.circuit.materials.MATERIALS; a test keeps the two lists equal).
RAIL_MATERIALS = ("nickel-silver", "nickel-silver-c75200", "brass", "steel", "copper")


class _Sentinel:
    def __init__(self, name: str):
        self.name = name

    def __repr__(self) -> str:
        return self.name


REQUIRED = _Sentinel("REQUIRED")
INVALID = _Sentinel("INVALID")


def either_or(words, last: str = "or") -> str:
    """``("a", "b", "c")`` -> ``"a, b or c"``."""
    words = list(words)
    return words[0] if len(words) == 1 else f"{', '.join(words[:-1])} {last} {words[-1]}"


def suggest(word: str, choices) -> str:
    """``"; did you mean 'supply'?"`` for a near miss, else ``""``."""
    close = difflib.get_close_matches(str(word), [str(c) for c in choices], n=1, cutoff=0.6)
    return f"; did you mean '{close[0]}'?" if close else ""


class Context:
    """What a conversion reports to: problems, and the references to resolve later.

    ``problem(path, message)`` is supplied by the loader (it locates the path).
    """

    def __init__(self, problem: Callable[[tuple, str], None]):
        self.problem = problem
        self.refs: list[tuple[tuple, str, tuple[str, ...]]] = []
        self.names: list[tuple[str, str, tuple]] = []  # (name, kind, path)


# ---------------------------------------------------------------------- kinds
class Kind:
    """A kind of value: converts a YAML value, and describes itself."""

    #: Words for the format reference ("a time, > 0").
    doc: str = ""

    def convert(self, cx: Context, value: Any, path: tuple) -> Any:
        raise TypeError(f"{type(self).__name__} cannot convert")  # only subclasses are used

    def json(self) -> dict:
        return {}


@dataclass
class Quantity(Kind):
    """A physical quantity of ``dim``; ``low`` is ``"positive"``, ``"nonneg"`` or ``None``."""

    dim: U.Dimension
    low: Optional[str] = "positive"

    @property
    def doc(self) -> str:  # type: ignore[override]
        bound = {"positive": ", > 0", "nonneg": ", >= 0 (0 allowed)", None: ""}[self.low]
        return f"{self.dim.name} ({self.dim.si}){bound}"

    def convert(self, cx, value, path):
        try:
            x = U.parse_quantity(value, self.dim)
        except QuantityError as exc:
            cx.problem(path, str(exc))
            return INVALID
        if self.low == "positive" and x <= 0:
            word = "zero" if x == 0 else "negative"
            cx.problem(path, f"must be greater than 0 {self.dim.si}, got {describe(value)} "
                             f"({word})")
            return INVALID
        if self.low == "nonneg" and x < 0:
            cx.problem(path, f"must not be negative, got {describe(value)}")
            return INVALID
        return x

    def json(self) -> dict:
        alts = "|".join(re.escape(u) for u in sorted(self.dim.units, key=len, reverse=True))
        sign = "" if self.low else "[+-]?"
        num = rf"{sign}(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?"
        return {"type": "string", "pattern": rf"^\s*{num}\s*({alts})\s*$",
                "description": self.doc}


@dataclass
class Number(Kind):
    """A dimensionless number (a bare YAML number, or its text)."""

    integer: bool = False
    minimum: Optional[float] = None
    maximum: Optional[float] = None
    exclusive_min: bool = False
    exclusive_max: bool = False

    @property
    def doc(self) -> str:  # type: ignore[override]
        parts = ["an integer" if self.integer else "a number"]
        if self.minimum is not None:
            parts.append(f"{'>' if self.exclusive_min else '>='} {self.minimum:g}")
        if self.maximum is not None:
            parts.append(f"{'<' if self.exclusive_max else '<='} {self.maximum:g}")
        return ", ".join(parts)

    def convert(self, cx, value, path):
        what = "an integer" if self.integer else "a number"
        if isinstance(value, bool) or not isinstance(value, (int, float, str)):
            cx.problem(path, f"expected {what}, got {describe(value)}")
            return INVALID
        if isinstance(value, str):
            try:
                x = U.parse_quantity(value, U.DIMENSIONLESS)
            except QuantityError:
                cx.problem(path, f"expected {what} (without a unit), got {describe(value)}")
                return INVALID
        else:
            x = float(value)
        if not math.isfinite(x):
            cx.problem(path, f"expected a finite number, got {describe(value)}")
            return INVALID
        if self.integer:
            if x != int(x):
                cx.problem(path, f"expected an integer, got {describe(value)}")
                return INVALID
            x = int(x)
        lo, hi = self.minimum, self.maximum
        if lo is not None and (x < lo or (self.exclusive_min and x == lo)):
            cx.problem(path, f"must be {'greater than' if self.exclusive_min else 'at least'} "
                             f"{lo:g}, got {describe(value)}")
            return INVALID
        if hi is not None and (x > hi or (self.exclusive_max and x == hi)):
            cx.problem(path, f"must be {'less than' if self.exclusive_max else 'at most'} "
                             f"{hi:g}, got {describe(value)}")
            return INVALID
        return x

    def json(self) -> dict:
        out: dict = {"type": "integer" if self.integer else "number"}
        if self.minimum is not None:
            out["exclusiveMinimum" if self.exclusive_min else "minimum"] = self.minimum
        if self.maximum is not None:
            out["exclusiveMaximum" if self.exclusive_max else "maximum"] = self.maximum
        out["description"] = self.doc
        return out


@dataclass
class Choice(Kind):
    """One of a fixed set of words."""

    values: tuple[str, ...]

    @property
    def doc(self) -> str:  # type: ignore[override]
        return "one of " + ", ".join(self.values)

    def convert(self, cx, value, path):
        if isinstance(value, str) and value in self.values:
            return value
        shown = describe(value)
        if isinstance(value, bool):
            shown += " (YAML reads yes/no/on/off as true/false: quote the word)"
        cx.problem(path, f"expected one of {', '.join(self.values)}; got {shown}"
                         f"{suggest(value, self.values) if isinstance(value, str) else ''}")
        return INVALID

    def json(self) -> dict:
        return {"enum": list(self.values)}


class Flag(Kind):
    """``true`` or ``false``."""

    doc = "true or false"

    def convert(self, cx, value, path):
        if isinstance(value, bool):
            return value
        cx.problem(path, f"expected true or false, got {describe(value)}")
        return INVALID

    def json(self) -> dict:
        return {"type": "boolean"}


@dataclass
class Text(Kind):
    """Free text (a title, a consist entry, a joint end)."""

    pattern: Optional[str] = None
    what: str = "a text"

    @property
    def doc(self) -> str:  # type: ignore[override]
        return self.what

    def convert(self, cx, value, path):
        if isinstance(value, bool) or value is None or isinstance(value, (dict, list)):
            cx.problem(path, f"expected {self.what}, got {describe(value)}")
            return INVALID
        text = str(value)
        if self.pattern and not re.match(self.pattern, text):
            cx.problem(path, f"expected {self.what}, got {describe(value)}")
            return INVALID
        return text

    def json(self) -> dict:
        out: dict = {"type": "string"}
        if self.pattern:
            out["pattern"] = self.pattern
        return out


@dataclass
class Ref(Kind):
    """The name of something defined elsewhere in the file (resolved by the loader)."""

    kinds: tuple[str, ...]

    @property
    def doc(self) -> str:  # type: ignore[override]
        return "the name of a " + either_or(self.kinds)

    def convert(self, cx, value, path):
        if not isinstance(value, str) or not value:
            cx.problem(path, f"expected {self.doc}, got {describe(value)}")
            return INVALID
        cx.refs.append((path, value, self.kinds))
        return value

    def json(self) -> dict:
        return {"type": "string", "pattern": NAME_PATTERN, "description": self.doc}


_RPL = Quantity(U.RESISTANCE_PER_LENGTH)


class Gauge(Kind):
    """A wire: a gauge ``"14 AWG"`` (copper, ASTM B258) or a resistance per metre of
    one conductor (``"0.0083 ohm/m"``). Converts to ``("awg", n)`` or ``("r_per_m", x)``."""

    doc = 'a wire gauge "<n> AWG" (0000 .. 40, or 1/0 .. 4/0) or one conductor\'s ohm/m'

    def convert(self, cx, value, path):
        if U.is_awg(value):
            try:
                return ("awg", U.parse_awg(value))
            except QuantityError as exc:
                cx.problem(path, str(exc))
                return INVALID
        if isinstance(value, str) and "AWG" not in value.upper():
            try:
                x = U.parse_quantity(value, U.RESISTANCE_PER_LENGTH)
            except QuantityError:
                pass
            else:
                if x > 0:
                    return ("r_per_m", x)
                cx.problem(path, f"must be greater than 0 ohm/m, got {describe(value)}")
                return INVALID
        try:
            U.parse_awg(value)
        except QuantityError as exc:
            cx.problem(path, f'{exc}, or a resistance per metre like "0.008 ohm/m"')
        return INVALID

    def json(self) -> dict:
        return {"anyOf": [{"type": "string", "pattern": r"^\s*(\d{1,4}|[1-4]/0)\s*[Aa][Ww][Gg]\s*$"},
                          _RPL.json()], "description": self.doc}


@dataclass
class Seq(Kind):
    """A list of ``item``; ``min_items``/``max_items`` bound its length."""

    item: Kind
    min_items: int = 0
    max_items: Optional[int] = None
    what: str = "a list"

    @property
    def doc(self) -> str:  # type: ignore[override]
        if isinstance(self.item, Record):
            return f"a list of {self.item.what} mappings"
        return f"a list of {self.item.doc}" if self.item.doc else "a list"

    def convert(self, cx, value, path):
        if not isinstance(value, list):
            cx.problem(path, f"expected {self.what}, got {describe(value)}")
            return INVALID
        n = len(value)
        if n < self.min_items or (self.max_items is not None and n > self.max_items):
            if self.max_items == self.min_items:
                want = f"exactly {self.min_items}"
            elif self.max_items is None:
                want = f"at least {self.min_items}"
            else:
                want = f"{self.min_items} to {self.max_items}"
            cx.problem(path, f"expected {want} items, got {n}")
            return INVALID
        return [self.item.convert(cx, v, path + (i,)) for i, v in enumerate(value)]

    def json(self) -> dict:
        out: dict = {"type": "array", "items": self.item.json(), "minItems": self.min_items}
        if self.max_items is not None:
            out["maxItems"] = self.max_items
        return out


@dataclass
class Field:
    """A key of a record: its kind, its default (as written in a file, or
    :data:`REQUIRED`, or ``None`` for "absent"), and its meaning for the reference."""

    kind: Kind
    default: Any = None
    doc: str = ""
    note: str = ""  # e.g. "from memory"


@dataclass
class Record(Kind):
    """A mapping with a fixed set of keys.

    ``check(cx, out, path, raw)`` adds the rules between keys. Converts to a ``dict``
    holding every key (defaults filled, ``None`` for absent optional keys,
    :data:`INVALID` where the value was wrong).
    """

    what: str
    fields: dict[str, Field]
    check: Optional[Callable] = None
    json_extra: dict = field(default_factory=dict)

    @property
    def doc(self) -> str:  # type: ignore[override]
        return f"a mapping ({self.what})"

    def convert(self, cx, value, path):
        if not isinstance(value, dict):
            cx.problem(path, f"expected a mapping ({self.what}), got {describe(value)}")
            return INVALID
        out: dict = {}
        for key in value:
            if key not in self.fields:
                hint = suggest(key, self.fields)
                if not hint:
                    hint = f" (allowed here: {', '.join(self.fields)})"
                cx.problem(path + (key,), f"unknown key '{key}'{hint}")
        for key, f in self.fields.items():
            given = value.get(key)
            if given is None:
                if f.default is REQUIRED:
                    what = "has no value" if key in value else "is missing"
                    cx.problem(path if key not in value else path + (key,),
                               f"required key '{key}' {what} ({f.kind.doc})")
                    out[key] = INVALID
                elif f.default is None:
                    out[key] = None
                else:
                    out[key] = f.kind.convert(cx, f.default, path + (key,))
            else:
                out[key] = f.kind.convert(cx, given, path + (key,))
        if self.check is not None:
            self.check(cx, out, path, value)
        return out

    def json(self) -> dict:
        props = {}
        for key, f in self.fields.items():
            sub = dict(f.kind.json())
            if f.doc:
                sub.setdefault("description", f.doc)
            if f.default is not REQUIRED:
                sub = {"anyOf": [sub, {"type": "null"}]} if "anyOf" not in sub else {
                    **sub, "anyOf": sub["anyOf"] + [{"type": "null"}]}
            props[key] = sub
        out = {"type": "object", "properties": props, "additionalProperties": False,
               "description": self.what}
        req = [k for k, f in self.fields.items() if f.default is REQUIRED]
        if req:
            out["required"] = req
        out.update(self.json_extra)
        return out


@dataclass
class Names(Kind):
    """A mapping of names to records (``boosters: {east: {...}}``)."""

    item: Record
    kind_name: str
    min_items: int = 0

    @property
    def plural(self) -> str:
        w = self.item.what
        return w[:-1] + "ies" if w.endswith("y") else w + "s"

    @property
    def doc(self) -> str:  # type: ignore[override]
        return f"a mapping of names to {self.plural}"

    def convert(self, cx, value, path):
        if not isinstance(value, dict):
            cx.problem(path, f"expected a mapping of names to {self.plural}, got "
                             f"{describe(value)}")
            return INVALID
        if len(value) < self.min_items:
            cx.problem(path, f"expected at least {self.min_items} {self.item.what}, got none")
            return INVALID
        out = {}
        for name, v in value.items():
            if not NAME_RE.match(name):
                cx.problem(path + (name,), f"'{name}' is not usable as a name: use letters, "
                                           f"digits, '-' and '_' (no spaces or dots)")
                continue
            cx.names.append((name, self.kind_name, path + (name,)))
            out[name] = self.item.convert(cx, v, path + (name,))
        return out

    def json(self) -> dict:
        return {"type": "object", "propertyNames": {"pattern": NAME_PATTERN},
                "additionalProperties": self.item.json(), "minProperties": self.min_items}


@dataclass
class Either(Kind):
    """One of several kinds, chosen by the YAML type of the value."""

    options: tuple[tuple[tuple[type, ...], Kind], ...]
    what: str

    @property
    def doc(self) -> str:  # type: ignore[override]
        return self.what

    def convert(self, cx, value, path):
        for types, kind in self.options:
            if isinstance(value, types) and not (isinstance(value, bool) and bool not in types):
                return kind.convert(cx, value, path)
        cx.problem(path, f"expected {self.what}, got {describe(value)}")
        return INVALID

    def json(self) -> dict:
        return {"anyOf": [k.json() for _, k in self.options], "description": self.what}


class VaryMap(Kind):
    """``vary``: key paths to samplers; the loader resolves and checks each entry."""

    doc = "a mapping of key paths to samplers"

    def convert(self, cx, value, path):
        if not isinstance(value, dict):
            cx.problem(path, f"expected a mapping of key paths to samplers, got "
                             f"{describe(value)}")
            return INVALID
        return dict(value)

    def json(self) -> dict:
        pair = {"type": "array", "minItems": 2, "maxItems": 2,
                "items": {"type": ["string", "number"]}}
        sampler = {"anyOf": [
            {"const": "uniform"},
            {"type": "object", "properties": {"uniform": pair}, "required": ["uniform"],
             "additionalProperties": False},
            {"type": "object", "properties": {"normal": pair}, "required": ["normal"],
             "additionalProperties": False},
            {"type": "object", "properties": {"triangular": {
                "type": "array", "minItems": 3, "maxItems": 3,
                "items": {"type": ["string", "number"]}}}, "required": ["triangular"],
             "additionalProperties": False},
            {"type": "object", "properties": {"choice": {"type": "array", "minItems": 1,
                                                         "items": {"type": ["string", "number"]}}},
             "required": ["choice"], "additionalProperties": False},
            {"type": "array", "minItems": 1, "items": {"type": ["string", "number"]}},
        ]}
        return {"type": "object",
                "propertyNames": {"pattern": r"^[A-Za-z0-9_-]+(\.[A-Za-z0-9_-]+|\[\d+\])+$"},
                "additionalProperties": sampler}


class CaseMap(Kind):
    """``cases``: names to mappings of key paths to values; :mod:`sim.whatif.cases`
    resolves each key path and converts each value like the key it replaces."""

    doc = "a mapping of case names to {key path: value}"

    def convert(self, cx, value, path):
        if not isinstance(value, dict):
            cx.problem(path, f"expected a mapping of case names to mappings of key paths "
                             f"to values, got {describe(value)}")
            return INVALID
        for name, spec in value.items():
            if not isinstance(name, str) or not NAME_RE.match(name):
                cx.problem(path + (name,), f"'{name}' is not usable as a case name: use "
                                           f"letters, digits, '-' and '_'")
            elif not isinstance(spec, dict) or not spec:
                cx.problem(path + (name,), f"a case maps key paths to new values, e.g. "
                                           f"{{reversers.x.swap_time: 8 ms}}; got "
                                           f"{describe(spec)}")
        return dict(value)

    def json(self) -> dict:
        return {"type": "object", "propertyNames": {"pattern": NAME_PATTERN},
                "additionalProperties": {
                    "type": "object", "minProperties": 1,
                    "propertyNames": {"pattern": r"^[A-Za-z0-9_-]+(\.[A-Za-z0-9_-]+|\[\d+\])*$"}}}


# ------------------------------------------------------------ record checks
def _exactly(cx, raw, path, keys: tuple[str, ...], what: str) -> Optional[str]:
    given = [k for k in keys if raw.get(k) is not None]
    if len(given) != 1:
        cx.problem(path, f"{what}: give exactly one of {', '.join(keys)}"
                         + (f" (got {', '.join(given)})" if given else ""))
        return None
    return given[0]


def _check_thermal(cx, out, path, raw):
    t, r = out.get("trip_at"), out.get("resume_at")
    if isinstance(t, float) and isinstance(r, float) and not r < t:
        cx.problem(path + ("resume_at",), f"must be below trip_at ({t:g}), got {r:g}")


_POLICY_KEYS = {"manual": set(), "retry": {"tries", "every"},
                "backoff": {"first", "factor", "cap", "tries"}}


def _check_restart(cx, out, path, raw):
    policy = out.get("policy")
    if policy not in _POLICY_KEYS:
        return
    allowed = _POLICY_KEYS[policy]
    for key in raw:
        if key != "policy" and key in RESTART.fields and key not in allowed:
            uses = ", ".join(sorted(allowed)) if allowed else "no other keys"
            cx.problem(path + (key,), f"'{key}' does not apply to policy {policy} "
                                      f"(it uses {uses})")
    first, cap = out.get("first"), out.get("cap")
    if policy == "backoff" and isinstance(first, float) and isinstance(cap, float) \
            and cap < first:
        cx.problem(path + ("cap",), f"must not be below first ({first:g} s), got {cap:g} s")


def _check_wire_run(cx, out, path, raw):
    if raw.get("length") is not None and raw.get("wire") is None:
        cx.problem(path + ("length",), "a run length needs a wire too (e.g. wire: 14 AWG)")
    if raw.get("wire") is not None and raw.get("length") is None:
        cx.problem(path + ("wire",), "a wire needs the length of the run (e.g. length: 3 m)")


def _check_rail(cx, out, path, raw):
    if raw.get("resistance") is not None and (raw.get("material") is not None
                                              or raw.get("area") is not None):
        cx.problem(path, "give either resistance (ohm/m), or material and area, not both")


def _check_joint(cx, out, path, raw):
    if raw.get("rail") is not None and out.get("gaps") in ("none", "both"):
        cx.problem(path + ("rail",), f"'rail' applies only to gaps: one (this joint has "
                                     f"gaps: {out['gaps']})")


def _check_fault(cx, out, path, raw):
    kind = _exactly(cx, raw, path, ("short", "open"), "a fault")
    if kind == "open":
        for key in ("resistance", "lasts"):
            if raw.get(key) is not None:
                cx.problem(path + (key,), f"'{key}' applies only to a short")


def _check_reverse(cx, out, path, raw):
    if raw.get("reverse") is not None and out.get("reverse_on_short") is False:
        cx.problem(path + ("reverse",), "reverse settings apply only with "
                                        "reverse_on_short: true")


# ------------------------------------------------------------ the format
def _q(dim, low="positive"):
    return Quantity(dim, low)


def _sense_fields() -> dict[str, Field]:
    return {
        "period": Field(_q(U.TIME), None, "sample period of the current sensing; absent: "
                                          "continuous sensing"),
        "full_scale": Field(_q(U.CURRENT), None, "current at which the sensing clamps (ADC "
                                                 "full scale); absent: no clamp"),
        "phase": Field(Number(minimum=0.0, maximum=1.0, exclusive_max=True), None,
                       "where in [0, 1) of a period the sample grid starts; absent: drawn "
                       "from the seed"),
    }


SENSE = Record("current sensing", _sense_fields())
REVERSER_SENSE = Record("reversing detection and sensing", {
    "above": Field(_q(U.CURRENT), REQUIRED, "current that counts as the short of a "
                                             "polarity mismatch"),
    "after": Field(_q(U.TIME, "nonneg"), REQUIRED, "how long it must last before the swap "
                                                   "starts"),
    **_sense_fields(),
})
TRIP = Record("trip setting", {
    "above": Field(_q(U.CURRENT), REQUIRED, "trip threshold"),
    "after": Field(_q(U.TIME, "nonneg"), REQUIRED, "trip delay (with a curve: its lower "
                                                   "bound)"),
    "curve": Field(Choice(tuple(CURVES)), None, "inverse-time curve (IEC 60255-151 / IEEE "
                                                "C37.112); absent: definite time"),
    "tms": Field(Number(minimum=0.0, exclusive_min=True), 1, "time multiplier of the curve"),
})
THERMAL = Record("thermal replica", {
    "rated": Field(_q(U.CURRENT), REQUIRED, "rated current (theta = 1 in steady state)"),
    "tau": Field(_q(U.TIME), REQUIRED, "thermal time constant"),
    "law": Field(Choice(("square", "linear")), "square", "heating by (I/rated)^2 (IEC "
                                                          "60255-149) or I/rated"),
    "trip_at": Field(Number(minimum=0.0, exclusive_min=True), 1.2, "trip level of theta"),
    "resume_at": Field(Number(minimum=0.0), 0.6, "level theta must cool to before resuming"),
}, check=_check_thermal)
RESTART = Record("restart policy", {
    "policy": Field(Choice(("manual", "retry", "backoff")), "manual",
                    "manual: stays off until a reset; retry: fixed interval; backoff: "
                    "growing interval"),
    "tries": Field(Number(integer=True, minimum=1), None, "number of tries (retry, backoff); "
                                                          "absent: without end"),
    "every": Field(_q(U.TIME), "0.5 s", "interval between tries (retry)"),
    "first": Field(_q(U.TIME), "0.5 s", "first wait (backoff)"),
    "factor": Field(Number(minimum=1.0), 2, "wait multiplier after each failed try (backoff)"),
    "cap": Field(_q(U.TIME), "10 s", "longest wait (backoff)"),
}, check=_check_restart)
WIRE = Gauge()
WIRE_RUN = Record("wire run", {
    "wire": Field(WIRE, None, "wire gauge, or ohm/m of one conductor"),
    "length": Field(_q(U.LENGTH, "nonneg"), None, "one-way length (both conductors count)"),
}, check=_check_wire_run)
FEED_MAP = Record("feed with its wire", {
    "from": Field(Ref(("booster", "breaker", "reverser")), REQUIRED, "the feeding device"),
    "wire": Field(WIRE, None, "wire gauge, or ohm/m of one conductor"),
    "length": Field(_q(U.LENGTH, "nonneg"), None, "one-way length of the run"),
}, check=_check_wire_run)
FEED = Either((((str,), Ref(("booster", "breaker", "reverser"))), ((dict,), FEED_MAP)),
              "a device name, or {from, wire, length}")

SUPPLY = Record("supply", {
    "voltage": Field(_q(U.VOLTAGE), REQUIRED, "open-circuit voltage (EMF)"),
    "resistance": Field(_q(U.RESISTANCE, "nonneg"), "0.05 ohm", "internal resistance",
                        "an assumption"),
    "current_limit": Field(_q(U.CURRENT), None, "current limit; absent: none"),
    "on_limit": Field(Choice(("constant-current", "hiccup", "latch")), "constant-current",
                      "what the supply does at its limit"),
    "off_time": Field(_q(U.TIME), "1 s", "off time of a hiccup"),
    "limit_after": Field(_q(U.TIME, "nonneg"), "0 s", "hiccup, latch: how long an overload "
                                                      "must last before the output goes off "
                                                      "(it holds its limit meanwhile); 0: at "
                                                      "once"),
})
REVERSE = Record("self-reversing settings", {
    "above": Field(_q(U.CURRENT), None, "current that starts a reversal; absent: the trip "
                                        "threshold"),
    "after": Field(_q(U.TIME, "nonneg"), "0 s", "how long it must last"),
    "swap_time": Field(_q(U.TIME, "nonneg"), "1 ms", "detection to output swapped",
                       "from memory"),
    "hold_off": Field(_q(U.TIME, "nonneg"), "50 ms", "no second reversal sooner",
                      "from memory"),
})
BOOSTER = Record("booster", {
    "supply": Field(Ref(("supply",)), REQUIRED, "the supply it draws from"),
    "output_resistance": Field(_q(U.RESISTANCE, "nonneg"), "0.04 ohm", "output resistance",
                               "an assumption"),
    "phase": Field(Choice(("normal", "inverted")), "normal",
                   "output polarity against the command signal"),
    "sense": Field(SENSE, None, "current sensing; absent: continuous"),
    "trip": Field(TRIP, {"above": "5 A", "after": "2 ms"}, "short-circuit trip",
                  "from memory: a typical HO setting; give your device's"),
    "thermal": Field(THERMAL, None, "thermal overload; absent: none"),
    "restart": Field(RESTART, {"policy": "manual"}, "restart after a trip"),
    "reverse_on_short": Field(Flag(), False, "swap its own output on a short before tripping"),
    "reverse": Field(REVERSE, None, "settings of reverse_on_short"),
    "undervoltage": Field(_q(U.VOLTAGE, "nonneg"), "7 V", "supply voltage below which it "
                                                          "drops out", "from memory"),
    "undervoltage_after": Field(_q(U.TIME, "nonneg"), "0 s", "how long the supply must stay "
                                "under `undervoltage` before it drops out (hold-up of its "
                                "supply capacitors); 0 s is the worst case"),
    "wire": Field(WIRE_RUN, None, "the run from the supply; absent: negligible"),
}, check=_check_reverse)
BREAKER = Record("breaker", {
    "feed": Field(FEED, REQUIRED, "the booster, breaker or reverser it takes power from"),
    "on_resistance": Field(_q(U.RESISTANCE, "nonneg"), "0.02 ohm", "resistance when closed",
                           "an assumption"),
    "sense": Field(SENSE, None, "current sensing; absent: continuous"),
    "trip": Field(TRIP, {"above": "3 A", "after": "0.5 ms"}, "short-circuit trip",
                  "from memory: a typical setting; give your device's"),
    "thermal": Field(THERMAL, None, "thermal overload; absent: none"),
    "restart": Field(RESTART, {"policy": "manual"}, "restart after a trip"),
})
REVERSER = Record("reverser", {
    "feed": Field(FEED, REQUIRED, "the booster, breaker or reverser it takes power from"),
    "sense": Field(REVERSER_SENSE, REQUIRED, "short detection: above, after (and sampling)"),
    "swap_time": Field(_q(U.TIME, "nonneg"), REQUIRED, "detection to short interrupted"),
    "dead_time": Field(_q(U.TIME, "nonneg"), "0 s", "unpowered time until the swapped leads "
                                                    "close"),
    "hold_off": Field(_q(U.TIME, "nonneg"), "50 ms", "no second swap sooner",
                      "from memory"),
    "on_resistance": Field(_q(U.RESISTANCE, "nonneg"), "0.02 ohm", "resistance when closed",
                           "an assumption"),
    "trip": Field(TRIP, {"above": "4 A", "after": "3 ms"}, "trip when a swap does not clear "
                                                            "the short",
                  "from memory: a typical setting; give your device's"),
    "restart": Field(RESTART, {"policy": "manual"}, "restart after a trip"),
})
RAIL = Record("rail conductor", {
    "material": Field(Choice(RAIL_MATERIALS), None, "rail alloy (with area); default "
                                                    "nickel-silver"),
    "area": Field(_q(U.AREA), None, "cross-section of one rail; default 1.9 mm2",
                  "from memory"),
    "resistance": Field(_q(U.RESISTANCE_PER_LENGTH), None, "resistance of one rail per "
                                                           "metre, instead of material+area"),
}, check=_check_rail)
FEEDER = Record("feeder", {
    "at": Field(_q(U.LENGTH, "nonneg"), REQUIRED, "distance from the section's a end"),
    "wire": Field(WIRE, None, "feeder wire; absent: negligible"),
    "length": Field(_q(U.LENGTH, "nonneg"), None, "one-way length of the feeder"),
}, check=_check_wire_run)
SECTION = Record("section", {
    "length": Field(_q(U.LENGTH), REQUIRED, "length from end a to end b"),
    "feed": Field(Ref(("booster", "breaker", "reverser")), None,
                  "feeding device; absent or null: fed through bonded joints"),
    "feeders": Field(Seq(FEEDER, min_items=1, what="a list of feeders"), None,
                     "feeder pairs; absent: one at mid-length, negligible wire"),
    "leads": Field(Choice(("normal", "swapped")), "normal", "swapped: a mis-wired section"),
})
JOINT = Record("joint", {
    "ends": Field(Seq(Text(r"^[A-Za-z0-9_][A-Za-z0-9_-]*\.[ab]$", "a section end like "
                                                                 "'east-main.b'"),
                      2, 2, "a list of two section ends"), REQUIRED,
                  "the two section ends that meet"),
    "gaps": Field(Choice(("none", "one", "both")), "none", "insulated rails at the joint"),
    "rail": Field(Choice(("left", "right")), None, "with gaps: one, the gapped rail as seen "
                                                   "from ends[0] into its section; default "
                                                   "left"),
}, check=_check_joint)
VEHICLE = Record("vehicle", {
    "length": Field(_q(U.LENGTH), REQUIRED, "length over couplers"),
    "axles": Field(Seq(_q(U.LENGTH, "nonneg"), 1, what="a list of axle positions"),
                   REQUIRED, "axle positions from the vehicle's front"),
    "pickup": Field(Either((((str,), Choice(("all", "none"))),
                            ((list,), Seq(Number(integer=True, minimum=0)))),
                           "all, none, or a list of axle indices"), "none",
                    "axles joined electrically (pickup)"),
    "draw": Field(_q(U.CURRENT, "nonneg"), "0 A", "running current (a locomotive)"),
    "keep_alive": Field(_q(U.TIME, "nonneg"), "0 s", "how long it runs on without power"),
    "resistance": Field(_q(U.RESISTANCE, "nonneg"), "0 ohm", "resistance joining the pickup "
                                                             "axles (lighting)"),
    "wheels": Field(Choice(("insulated", "metal")), "insulated", "metal: every wheelset "
                                                                 "bridges a one-rail gap"),
    "capacitance": Field(_q(U.CAPACITANCE, "nonneg"), "0 F", "keep-alive capacitor"),
    "charge_resistance": Field(_q(U.RESISTANCE), "10 ohm", "resistance in series with the "
                                                           "capacitor", "from memory"),
})
START = Record("start position", {
    "section": Field(Ref(("section",)), REQUIRED, "section of the train's front"),
    "at": Field(_q(U.LENGTH, "nonneg"), REQUIRED, "front's distance from the a end"),
    "heading": Field(Choice(("a", "b")), REQUIRED, "the end the train heads to"),
})
REVERSAL = Record("reversal", {
    "reverse_after": Field(_q(U.TIME, "nonneg"), REQUIRED, "stop, wait this long, run back"),
})
TRAIN = Record("train", {
    "consist": Field(Seq(Text(r"^\s*[A-Za-z0-9_][A-Za-z0-9_-]*(\s+x\s+\d+)?\s*$",
                              "a vehicle name, or 'name x N'"), 1, what="a list of vehicles"),
                     REQUIRED, "vehicles, front first; 'hopper x 12' repeats"),
    "start": Field(START, REQUIRED, "where the front stands at the start"),
    "route": Field(Seq(Either((((str,), Ref(("section",))), ((dict,), REVERSAL)),
                              "a section name or {reverse_after: time}"), 1,
                       what="a list of sections"), REQUIRED,
                   "sections in order, with reversals"),
    "speed": Field(_q(U.SPEED), REQUIRED, "running speed"),
    "depart": Field(_q(U.TIME, "nonneg"), "0 s", "departure time"),
})
FAULT = Record("fault", {
    "at": Field(_q(U.TIME, "nonneg"), REQUIRED, "when it happens"),
    "short": Field(Record("short position", {
        "section": Field(Ref(("section",)), REQUIRED, "section of the short"),
        "at": Field(_q(U.LENGTH, "nonneg"), REQUIRED, "distance from the a end"),
    }), None, "a short across the rails"),
    "open": Field(Record("open feeder", {
        "section": Field(Ref(("section",)), REQUIRED, "section of the feeder"),
        "feeder": Field(Number(integer=True, minimum=0), REQUIRED, "feeder index, 0-based"),
    }), None, "a feeder coming loose"),
    "resistance": Field(_q(U.RESISTANCE), None, "resistance of the short; default 0.01 ohm",
                        "an assumption: a coin across the rails"),
    "lasts": Field(_q(U.TIME), None, "how long the short lasts; absent: stays"),
}, check=_check_fault, json_extra={"oneOf": [{"required": ["short"]}, {"required": ["open"]}]})
ACTION = Record("action", {
    "at": Field(_q(U.TIME, "nonneg"), REQUIRED, "when"),
    "reset": Field(Ref(("supply", "booster", "breaker", "reverser")), REQUIRED,
                   "the device an operator resets"),
})
REQUIRE = Record("requirements", {
    "margin": Field(_q(U.TIME, "nonneg"), "0 s", "smallest acceptable timing margin of a "
                                                 "reversal"),
})
TRACK = Record("track", {
    "rail": Field(RAIL, {}, "rail conductor; default nickel-silver, 1.9 mm2"),
    "wheel_contact": Field(_q(U.RESISTANCE, "nonneg"), "0.05 ohm",
                           "contact resistance of one wheel on a rail", "an assumption"),
    "gap_width": Field(_q(U.LENGTH), "0.8 mm", "width of an insulated gap", "from memory"),
    "contact_length": Field(_q(U.LENGTH), "1 mm", "length of a wheel tread's contact",
                            "from memory"),
    "sections": Field(Names(SECTION, "section", 1), REQUIRED, "the sections"),
    "joints": Field(Seq(JOINT, what="a list of joints"), [], "where section ends meet"),
})
TOP = Record("scenario", {
    "format": Field(Text(what="the format name"), REQUIRED, "must be railfault/1"),
    "title": Field(Text(), "", "a title for reports"),
    "seed": Field(Number(integer=True, minimum=0), 0, "seed of all randomness"),
    "duration": Field(_q(U.TIME), REQUIRED, "simulated time"),
    "require": Field(REQUIRE, {}, "pass/fail requirements"),
    "supplies": Field(Names(SUPPLY, "supply", 1), REQUIRED,
                      "power supplies"),
    "boosters": Field(Names(BOOSTER, "booster", 1), REQUIRED, "boosters"),
    "breakers": Field(Names(BREAKER, "breaker"), {}, "electronic circuit breakers"),
    "reversers": Field(Names(REVERSER, "reverser"), {}, "reversing controllers"),
    "track": Field(TRACK, REQUIRED, "the track"),
    "rolling_stock": Field(Names(VEHICLE, "vehicle"), {}, "vehicle types"),
    "trains": Field(Names(TRAIN, "train"), {}, "trains"),
    "faults": Field(Seq(FAULT, what="a list of faults"), [], "faults"),
    "actions": Field(Seq(ACTION, what="a list of actions"), [], "operator actions"),
    "vary": Field(VaryMap(), {}, "what a sweep samples"),
    "samples": Field(Number(integer=True, minimum=0), 0, "number of sweep samples"),
    "cases": Field(CaseMap(), {}, "named what-if variants (railfault compare)"),
})


def json_schema() -> dict:
    """The JSON Schema (draft 2020-12) of a ``railfault/1`` scenario file.

    Returns
    -------
    dict
        A schema with every key, enumeration and quantity spelling (by dimension),
        and ``additionalProperties: false`` everywhere, for editors to validate and
        complete files. The loader checks more (ranges, references, feed cycles).
    """
    out = TOP.json()
    out["properties"]["format"] = {"const": "railfault/1",
                                   "description": "the format and its version"}
    return {"$schema": SCHEMA_DIALECT,
            "$id": "https://railfault.invalid/schema/railfault-1.json",
            "title": "railfault scenario, format railfault/1", **out}
