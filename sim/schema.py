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
from functools import lru_cache
from typing import Any, Callable, Optional

from sim import units as U
from sim.units import clip, describe
from sim.model import CURVES
from sim.units import QuantityError
from sim.timebase import T_MIN_S

__all__ = ["json_schema", "Kind", "Quantity", "Number", "Choice", "Flag", "Text", "Ref",
           "Gauge", "Seq", "Record", "Names", "Either", "Field", "REQUIRED", "INVALID",
           "NAME_RE", "TOP", "Context", "suggest", "either_or", "describe", "RAIL_MATERIALS"]

SCHEMA_DIALECT = "https://json-schema.org/draft/2020-12/schema"

#: Names of devices, sections, vehicles and trains: no dots or spaces, since they
#: appear in key paths (``boosters.east.trip.after``) and joint ends (``east-main.b``).
#: Anchored with ``\Z``: ``$`` would also match before a trailing newline, and a
#: name ``"east\n"`` would pass.
NAME_RE = re.compile(r"^[A-Za-z0-9_][A-Za-z0-9_-]*\Z")
#: The same rule in the JSON Schema's dialect (ECMA-262: ``$`` is the end of the text).
NAME_PATTERN = r"^[A-Za-z0-9_][A-Za-z0-9_-]*$"

#: Rail materials the circuit knows a resistivity for (the keys of
#: sim.circuit.materials.MATERIALS; a test keeps the two lists equal).
RAIL_MATERIALS = ("nickel-silver", "nickel-silver-c75200", "brass", "steel", "copper")


class _Sentinel:
    def __init__(self, name: str):
        self.name = name

    def __repr__(self) -> str:
        return self.name


#: The largest integer that converts to a (finite) float.
_FLOAT_INT_MAX = int(1.7976931348623157e308)

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


@dataclass(frozen=True)
class Range:
    """The plausible values of a quantity for the trade, declared once with the reason.

    ``low`` and ``high`` are written as in a file (``"1 us"``, ``"1 h"``): the
    smallest accepted non-zero magnitude and the largest; ``zero`` says whether 0
    is accepted too (an ideal part, no delay). ``why`` is the reason for the
    bounds, shown in messages and in the format reference; figures in it that
    nobody here has read in print are marked *from memory*, trade custom *common
    practice*. A value outside the range is refused with the range in the message.
    """

    dim: U.Dimension
    low: str
    high: str
    zero: bool = False
    why: str = ""

    @property
    def lo(self) -> float:
        """``low`` in the SI unit of the dimension."""
        return _si(self.low, self.dim)

    @property
    def hi(self) -> float:
        """``high`` in the SI unit of the dimension."""
        return _si(self.high, self.dim)

    @property
    def span(self) -> str:
        """``"0 or 1 us to 1 h"``: how the format reference and messages show it."""
        zero = "0 or " if self.zero else ""
        return f"{zero}{self.low} to {self.high}"

    def with_zero(self, zero: bool) -> "Range":
        return Range(self.dim, self.low, self.high, zero, self.why)

    @property
    def resolution_bound(self) -> bool:
        """Whether the low bound is the engine's time resolution (:data:`T_MIN_S`)."""
        return self.dim is U.TIME and self.lo <= T_MIN_S


@lru_cache(maxsize=None)
def _si(text: str, dim: U.Dimension) -> float:
    return U.parse_quantity(text, dim)


@dataclass
class Quantity(Kind):
    """A physical quantity of ``dim`` within ``range`` (a :class:`Range`).

    ``range`` may also be ``"positive"`` or ``"nonneg"``: the default range of the
    dimension (:data:`DEFAULT_RANGES`), without or with 0; ``None`` accepts any
    finite value of either sign (a sampler's mean is checked by its key's range).
    """

    dim: U.Dimension
    range: Any = "positive"

    def __post_init__(self) -> None:
        if isinstance(self.range, str):
            self.range = DEFAULT_RANGES[self.dim.si].with_zero(self.range == "nonneg")

    @property
    def doc(self) -> str:  # type: ignore[override]
        span = f", {self.range.span}" if self.range is not None else ""
        return f"{self.dim.name} ({self.dim.si}){span}"

    def convert(self, cx, value, path):
        try:
            x = U.parse_quantity(value, self.dim)
        except QuantityError as exc:
            cx.problem(path, str(exc))
            return INVALID
        message = self.refusal(x, value)
        if message:
            cx.problem(path, message)
            return INVALID
        return x

    def refusal(self, x: float, value: Any) -> str:
        """Why ``x`` (read from ``value``) is outside the range; ``""`` when it is not."""
        r = self.range
        if r is None:
            return ""
        got = describe(value)
        if x < 0 or (x == 0 and not r.zero):
            word = "zero" if x == 0 else "negative"
            if r.zero:
                return f"must not be negative, got {got}; the range is {r.span}"
            return f"must be greater than 0 {self.dim.si}, got {got} ({word}); the range is " \
                   f"{r.span}"
        if x == 0:
            return ""
        if x < r.lo:
            zero = " (or 0 s for none)" if r.zero else ""
            if r.resolution_bound:
                return (f"{got} is shorter than the engine resolves: the smallest accepted "
                        f"interval is {r.low}{zero} (instants are kept on a 1 ns grid, and an "
                        f"interval must span {T_MIN_S / 1e-9:.0f} steps of it)")
            return f"must be at least {r.low}{' (or 0)' if r.zero else ''}, got {got}: " \
                   f"the range is {r.span} ({r.why})"
        if x > r.hi:
            return f"must be at most {r.high}, got {got}: the range is {r.span} ({r.why})"
        return ""

    def json(self) -> dict:
        alts = "|".join(re.escape(u) for u in sorted(self.dim.units, key=len, reverse=True))
        sign = "" if self.range is not None else "[+-]?"
        num = rf"{sign}(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?"
        out = {"type": "string", "pattern": rf"^\s*{num}\s*({alts})\s*$",
               "description": self.doc}
        if self.range is not None:
            r = self.range
            out["x-range"] = {"unit": self.dim.si, "min": r.lo, "max": r.hi,
                              "zero": r.zero, "why": r.why}
        return out


@dataclass
class Number(Kind):
    """A dimensionless number (a bare YAML number, or its text)."""

    integer: bool = False
    minimum: Optional[float] = None
    maximum: Optional[float] = None
    exclusive_min: bool = False
    exclusive_max: bool = False
    #: Why the bounds are where they are (shown in messages and the reference).
    why: str = ""

    @property
    def doc(self) -> str:  # type: ignore[override]
        parts = ["an integer" if self.integer else "a number"]
        if self.minimum is not None:
            parts.append(f"{'>' if self.exclusive_min else '>='} {self._shown(self.minimum)}")
        if self.maximum is not None:
            parts.append(f"{'<' if self.exclusive_max else '<='} {self._shown(self.maximum)}")
        return ", ".join(parts)

    def _shown(self, x: float) -> str:
        return f"{int(x):,}" if self.integer else f"{x:g}"

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
        elif isinstance(value, int):
            x = value  # exact, however large: compared with the bounds as an integer
        else:
            x = float(value)
        if isinstance(x, float) and not math.isfinite(x):
            cx.problem(path, f"expected a finite number, got {describe(value)}")
            return INVALID
        if self.integer:
            if x != int(x):
                cx.problem(path, f"expected an integer, got {describe(value)}")
                return INVALID
            x = int(x)
        lo, hi = self.minimum, self.maximum
        why = f" ({self.why})" if self.why else ""
        if lo is not None and (x < lo or (self.exclusive_min and x == lo)):
            cx.problem(path, f"must be {'greater than' if self.exclusive_min else 'at least'} "
                             f"{self._shown(lo)}, got {describe(value)}{why}")
            return INVALID
        if hi is not None and (x > hi or (self.exclusive_max and x == hi)):
            cx.problem(path, f"must be {'less than' if self.exclusive_max else 'at most'} "
                             f"{self._shown(hi)}, got {describe(value)}{why}")
            return INVALID
        if not self.integer and isinstance(x, int):
            if abs(x) > _FLOAT_INT_MAX:
                cx.problem(path, f"expected a finite number, got {describe(value)}")
                return INVALID
            x = float(x)
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
        if self.pattern and not re.fullmatch(self.pattern, text):
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


class Gauge(Kind):
    """A wire: a gauge ``"14 AWG"`` (copper, ASTM B258) or a resistance per metre of
    one conductor (``"0.0083 ohm/m"``, within :data:`RANGE_R_PER_M`). Converts to
    ``("awg", n)`` or ``("r_per_m", x)``."""

    @property
    def doc(self) -> str:  # type: ignore[override]
        return (f'a wire gauge "<n> AWG" (0000 .. 40, or 1/0 .. 4/0) or one conductor\'s '
                f'ohm/m, {RANGE_R_PER_M.span}')

    @staticmethod
    def per_metre() -> "Quantity":
        return Quantity(U.RESISTANCE_PER_LENGTH, RANGE_R_PER_M)

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
                message = self.per_metre().refusal(x, value)
                if not message:
                    return ("r_per_m", x)
                cx.problem(path, message)
                return INVALID
        try:
            U.parse_awg(value)
        except QuantityError as exc:
            cx.problem(path, f'{exc}, or a resistance per metre like "0.008 ohm/m"')
        return INVALID

    def json(self) -> dict:
        return {"anyOf": [{"type": "string", "pattern": r"^\s*(\d{1,4}|[1-4]/0)\s*[Aa][Ww][Gg]\s*$"},
                          self.per_metre().json()], "description": self.doc}


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
                cx.problem(path + (key,), f"unknown key '{clip(str(key))}'{hint}")
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
            if not isinstance(name, str) or not NAME_RE.match(name):
                cx.problem(path + (name,), f"'{clip(str(name))}' is not usable as a name: use "
                                           f"letters, digits, '-' and '_' (no spaces or dots)")
                continue
            if len(name) > MAX_NAME_CHARS:
                cx.problem(path + (name,), f"'{clip(name)}' is too long for a name: at most "
                                           f"{MAX_NAME_CHARS} characters "
                                           f"({COUNT_REASONS['characters in a name'][1]})")
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


# ------------------------------------------------------------ plausible ranges
# Every quantity of the format has a range for the trade: the layouts of model
# railways, run on a table or in a garden. The bounds keep a file to values a layout
# can have, and the engine to numbers it resolves; each says why. Times below
# T_MIN_S (1 us) are refused for the engine's sake, not the trade's: instants are
# kept on a 1 ns grid (sim.timebase) and an interval must span many steps of it.
_ENGINE = "the engine resolves intervals down to 1 us"
#: A run: up to a day. An operating session lasts hours (common practice).
RANGE_RUN = Range(U.TIME, "1 us", "24 h", why=f"{_ENGINE}; a run covers at most a day, "
                  "an operating session lasts hours")
#: An instant within a run (a fault, an action, a departure, a wait).
RANGE_INSTANT = Range(U.TIME, "1 us", "24 h", zero=True,
                      why=f"{_ENGINE}; a run lasts at most a day")
#: Delays of protection and reversing: trip, detection, swap, dead time, hold-off.
RANGE_DELAY = Range(U.TIME, "1 us", "1 h", why=f"{_ENGINE}; a device that waits an hour "
                    "does not protect anything on a layout")
#: Waits of restart policies and a supply's off time.
RANGE_WAIT = Range(U.TIME, "1 us", "1 h", why=f"{_ENGINE}; an automatic restart waits "
                   "seconds to minutes, an hour is no longer automatic")
#: Sample period of a sensing circuit.
RANGE_PERIOD = Range(U.TIME, "1 us", "1 s", why=f"{_ENGINE}; short detectors sample every "
                     "few microseconds to milliseconds (from memory), a second is no "
                     "short detection")
#: Thermal time constant (IEC 60255-149 replica).
RANGE_TAU = Range(U.TIME, "1 us", "10 h", why=f"{_ENGINE}; wires and transformers heat "
                  "with time constants of seconds to about an hour (from memory)")
#: How long a locomotive runs on its keep-alive.
RANGE_KEEP_ALIVE = Range(U.TIME, "1 us", "10 min", zero=True,
                         why=f"{_ENGINE}; keep-alive capacitors carry a decoder for "
                             "seconds, large ones for about a minute (from memory)")
#: Thresholds: trip, detection, rated, full-scale and limit currents.
RANGE_THRESHOLD = Range(U.CURRENT, "1 mA", "1 kA",
                        why="layout boosters and breakers trip at about 1 to 20 A and "
                            "reversers detect from tens of mA (from memory); 1 kA is a "
                            "setting meant never to trip")
#: A vehicle's running current.
RANGE_DRAW = Range(U.CURRENT, "1 mA", "100 A", zero=True,
                   why="a locomotive draws tens of mA to a few A, a large-scale one with "
                       "sound and smoke several A (from memory)")
#: Supply voltage (the EMF) and the booster's undervoltage level.
RANGE_VOLTAGE = Range(U.VOLTAGE, "1 V", "120 V",
                      why="track power is 8.5 to 22 V peak (NMRA S-9.1 table 3); 120 V DC "
                          "is the top of the extra-low-voltage band (IEC 60449, from "
                          "memory): above it a supply is mains equipment, not track power")
#: Resistances that may be ideal: supply, booster output, on-resistance, wheel contact.
RANGE_R_SOURCE = Range(U.RESISTANCE, "0.1 mohm", "1 kohm", zero=True,
                       why="below 0.1 mohm a part differs from ideal (write 0) only by "
                           "rounding beside rails of tens of mohm; above 1 kohm a source "
                           "or contact passes milliamperes, no power")
#: A vehicle's lighting resistance, the resistance of a short or a leak, a charge
#: resistor.
RANGE_R_LOAD = Range(U.RESISTANCE, "0.1 mohm", "1 Mohm",
                     why="below 0.1 mohm is ideal (rounding beside rails of tens of mohm); "
                         "above 1 Mohm the current is microamperes, no load or fault any "
                         "device here sees")
#: Resistance per metre of a rail or of one wire conductor.
RANGE_R_PER_M = Range(U.RESISTANCE_PER_LENGTH, "0.1 mohm/m", "10 ohm/m",
                      why="0000 AWG copper is 0.16 mohm/m and 40 AWG 3.4 ohm/m (ASTM B258 "
                          "diameters, IEC 60028 copper); no rail conducts better than the "
                          "first")
#: Cross-section of one rail.
RANGE_AREA = Range(U.AREA, "0.1 mm2", "200 mm2",
                   why="model rail profiles from the smallest scales to garden railways "
                       "are a fraction of a mm2 to tens of mm2 (from memory)")
#: Length of a section.
RANGE_SECTION = Range(U.LENGTH, "1 cm", "1 km",
                      why="an isolated frog or a stub is a few cm; a garden or club block "
                          "is tens to hundreds of metres")
#: Positions along a section or vehicle, and wire runs.
RANGE_POSITION = Range(U.LENGTH, "1 um", "1 km", zero=True,
                       why="positions lie within a section (at most 1 km); below 1 um no "
                           "model is built")
#: Length of a vehicle over its couplers.
RANGE_VEHICLE = Range(U.LENGTH, "1 cm", "5 m",
                      why="from a few cm (the smallest scales) to about a metre for a "
                          "garden-railway car (from memory)")
#: Gap width and wheel contact length.
RANGE_GAP = Range(U.LENGTH, "10 um", "10 mm",
                  why="a saw cut or an insulated joiner is a fraction of a mm to a few mm "
                      "wide, a tread's contact patch about as long (from memory)")
#: Running speed.
RANGE_SPEED = Range(U.SPEED, "1 mm/s", "10 m/s",
                    why="model trains run from a crawl of a few mm/s to a few m/s in the "
                        "garden (from memory)")
#: Keep-alive capacitance.
RANGE_CAPACITANCE = Range(U.CAPACITANCE, "1 nF", "100 F", zero=True,
                          why="keep-alive capacitors run from hundreds of uF to "
                              "supercapacitors of a few F (from memory)")

#: Model scales the format knows, and the group of NMRA S-9.1 (2020) table 3 whose
#: peak track-voltage range applies (min / nominal / max): "N and smaller"
#: 8.5 / 12 / 22 V; "HO, S, O" 8.5 / 15 / 22 V; "large" 8.5 / 18 / 22 V. OO (4 mm
#: scale on HO track) takes HO's range; G is a large scale.
SCALES: dict[str, str] = {"Z": "N", "N": "N", "HO": "HO", "OO": "HO", "S": "HO", "O": "HO",
                          "G": "large", "large": "large"}

#: The range of a quantity declared without one (``_q(U.TIME)``), per SI unit: the
#: widest of its dimension above, so that every quantity of the format has a range.
DEFAULT_RANGES: dict[str, Range] = {
    "s": RANGE_RUN, "A": RANGE_THRESHOLD, "V": RANGE_VOLTAGE, "ohm": RANGE_R_LOAD,
    "m": RANGE_POSITION.with_zero(False), "m2": RANGE_AREA, "m/s": RANGE_SPEED,
    "ohm/m": RANGE_R_PER_M, "F": RANGE_CAPACITANCE.with_zero(False),
}

#: Bounds on counts, each with its reason (checked by the loader, sim.scenario).
#: Vehicles in one train: the longest model trains run to a few hundred cars.
MAX_VEHICLES_PER_TRAIN = 1_000
#: Vehicles in all the trains of a file.
MAX_VEHICLES_PER_FILE = 10_000
#: Laps of one train's route (``laps``): a session of hours at a lap a minute.
MAX_LAPS = 1_000
#: Route steps of one train once its laps are laid out, and of all trains.
MAX_ROUTE_STEPS_PER_TRAIN = 10_000
MAX_ROUTE_STEPS_PER_FILE = 100_000
#: Axles of one vehicle (an articulated locomotive has about 20).
MAX_AXLES = 64
#: Track of all sections together, m: large club layouts have a few km.
MAX_TRACK_M = 100_000.0
#: Longest name (of a device, section, vehicle or train): names head table columns.
MAX_NAME_CHARS = 64
#: Why each count is bounded, for messages and the format reference.
COUNT_REASONS = {
    "vehicles per train": (MAX_VEHICLES_PER_TRAIN, "the longest model trains run to a "
                           "few hundred cars"),
    "vehicles in all trains": (MAX_VEHICLES_PER_FILE, "a club session runs tens of trains"),
    "laps": (MAX_LAPS, "a session of hours at a lap a minute"),
    "route steps per train (laps laid out)": (MAX_ROUTE_STEPS_PER_TRAIN, "a lap of tens "
                                              "of sections, hundreds of laps"),
    "route steps in all trains": (MAX_ROUTE_STEPS_PER_FILE, "tens of trains"),
    "axles per vehicle": (MAX_AXLES, "an articulated locomotive has about 20"),
    "track length of all sections": (MAX_TRACK_M, "large club layouts have a few km of "
                                     "track (from memory)"),
    "characters in a name": (MAX_NAME_CHARS, "names head the columns of tables"),
}


# ------------------------------------------------------------ the format
def _q(dim, low="positive"):
    return Quantity(dim, low)


#: A delay that may be 0 (no delay).
DELAY0 = RANGE_DELAY.with_zero(True)


def _sense_fields() -> dict[str, Field]:
    return {
        "period": Field(_q(U.TIME, RANGE_PERIOD), None, "sample period of the current sensing; absent: "
                                          "continuous sensing"),
        "full_scale": Field(_q(U.CURRENT, RANGE_THRESHOLD), None, "current at which the sensing clamps (ADC "
                                                 "full scale); absent: no clamp"),
        "phase": Field(Number(minimum=0.0, maximum=1.0, exclusive_max=True), None,
                       "where in [0, 1) of a period the sample grid starts; absent: drawn "
                       "from the seed"),
    }


SENSE = Record("current sensing", _sense_fields())
REVERSER_SENSE = Record("reversing detection and sensing", {
    "above": Field(_q(U.CURRENT, RANGE_THRESHOLD), REQUIRED, "current that counts as the short of a "
                                             "polarity mismatch"),
    "after": Field(_q(U.TIME, DELAY0), REQUIRED, "how long it must last before the swap "
                                                   "starts"),
    **_sense_fields(),
})
TRIP = Record("trip setting", {
    "above": Field(_q(U.CURRENT, RANGE_THRESHOLD), REQUIRED, "trip threshold"),
    "after": Field(_q(U.TIME, DELAY0), REQUIRED, "trip delay (with a curve: its lower "
                                                   "bound)"),
    "curve": Field(Choice(tuple(CURVES)), None, "inverse-time curve (IEC 60255-151 / IEEE "
                                                "C37.112); absent: definite time"),
    "tms": Field(Number(minimum=0.01, maximum=100.0, why="relays offer time multipliers of about 0.05 to 1 (from memory); below 0.01 the curve is no delay"), 1, "time multiplier of the curve"),
})
THERMAL = Record("thermal replica", {
    "rated": Field(_q(U.CURRENT, RANGE_THRESHOLD), REQUIRED, "rated current (theta = 1 in steady state)"),
    "tau": Field(_q(U.TIME, RANGE_TAU), REQUIRED, "thermal time constant"),
    "law": Field(Choice(("square", "linear")), "square", "heating by (I/rated)^2 (IEC "
                                                          "60255-149) or I/rated"),
    "trip_at": Field(Number(minimum=0.0, maximum=100.0, exclusive_min=True, why="theta is (I/rated)^2 in steady state: 100 is ten times the rated current for ever"), 1.2, "trip level of theta"),
    "resume_at": Field(Number(minimum=0.0, maximum=100.0, why="below trip_at, itself at most 100"), 0.6, "level theta must cool to before resuming"),
}, check=_check_thermal)
RESTART = Record("restart policy", {
    "policy": Field(Choice(("manual", "retry", "backoff")), "manual",
                    "manual: stays off until a reset; retry: fixed interval; backoff: "
                    "growing interval"),
    "tries": Field(Number(integer=True, minimum=1, maximum=10_000, why="leave tries out for a policy that tries without end"), None, "number of tries (retry, backoff); "
                                                          "absent: without end"),
    "every": Field(_q(U.TIME, RANGE_WAIT), "0.5 s", "interval between tries (retry)"),
    "first": Field(_q(U.TIME, RANGE_WAIT), "0.5 s", "first wait (backoff)"),
    "factor": Field(Number(minimum=1.0, maximum=100.0, why="a back-off doubles its wait (RFC 6298 section 5); cap bounds the wait anyway"), 2, "wait multiplier after each failed try (backoff)"),
    "cap": Field(_q(U.TIME, RANGE_WAIT), "10 s", "longest wait (backoff)"),
}, check=_check_restart)
WIRE = Gauge()
WIRE_RUN = Record("wire run", {
    "wire": Field(WIRE, None, "wire gauge, or ohm/m of one conductor"),
    "length": Field(_q(U.LENGTH, RANGE_POSITION), None, "one-way length (both conductors count)"),
}, check=_check_wire_run)
FEED_MAP = Record("feed with its wire", {
    "from": Field(Ref(("booster", "breaker", "reverser")), REQUIRED, "the feeding device"),
    "wire": Field(WIRE, None, "wire gauge, or ohm/m of one conductor"),
    "length": Field(_q(U.LENGTH, RANGE_POSITION), None, "one-way length of the run"),
}, check=_check_wire_run)
FEED = Either((((str,), Ref(("booster", "breaker", "reverser"))), ((dict,), FEED_MAP)),
              "a device name, or {from, wire, length}")

SUPPLY = Record("supply", {
    "voltage": Field(_q(U.VOLTAGE, RANGE_VOLTAGE), REQUIRED, "open-circuit voltage (EMF)"),
    "resistance": Field(_q(U.RESISTANCE, RANGE_R_SOURCE), "0.05 ohm", "internal resistance",
                        "an assumption"),
    "current_limit": Field(_q(U.CURRENT, RANGE_THRESHOLD), None, "current limit; absent: none"),
    "on_limit": Field(Choice(("constant-current", "hiccup", "latch")), "constant-current",
                      "what the supply does at its limit"),
    "off_time": Field(_q(U.TIME, RANGE_WAIT), "1 s", "off time of a hiccup"),
    "limit_after": Field(_q(U.TIME, DELAY0), "0 s", "hiccup, latch: how long an overload "
                                                      "must last before the output goes off "
                                                      "(it holds its limit meanwhile); 0: at "
                                                      "once"),
})
REVERSE = Record("self-reversing settings", {
    "above": Field(_q(U.CURRENT, RANGE_THRESHOLD), None, "current that starts a reversal; absent: the trip "
                                        "threshold"),
    "after": Field(_q(U.TIME, DELAY0), "0 s", "how long it must last"),
    "swap_time": Field(_q(U.TIME, DELAY0), "1 ms", "detection to output swapped",
                       "from memory"),
    "hold_off": Field(_q(U.TIME, DELAY0), "50 ms", "no second reversal sooner",
                      "from memory"),
})
BOOSTER = Record("booster", {
    "supply": Field(Ref(("supply",)), REQUIRED, "the supply it draws from"),
    "output_resistance": Field(_q(U.RESISTANCE, RANGE_R_SOURCE), "0.04 ohm", "output resistance",
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
    "undervoltage": Field(_q(U.VOLTAGE, RANGE_VOLTAGE.with_zero(True)), "7 V", "supply voltage below which it "
                                                          "drops out", "from memory"),
    "undervoltage_after": Field(_q(U.TIME, DELAY0), "0 s", "how long the supply must stay "
                                "under `undervoltage` before it drops out (hold-up of its "
                                "supply capacitors); 0 s is the worst case"),
    "wire": Field(WIRE_RUN, None, "the run from the supply; absent: negligible"),
}, check=_check_reverse)
BREAKER = Record("breaker", {
    "feed": Field(FEED, REQUIRED, "the booster, breaker or reverser it takes power from"),
    "on_resistance": Field(_q(U.RESISTANCE, RANGE_R_SOURCE), "0.02 ohm", "resistance when closed",
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
    "swap_time": Field(_q(U.TIME, DELAY0), REQUIRED, "detection to short interrupted"),
    "dead_time": Field(_q(U.TIME, DELAY0), "0 s", "unpowered time until the swapped leads "
                                                    "close"),
    "hold_off": Field(_q(U.TIME, DELAY0), "50 ms", "no second swap sooner",
                      "from memory"),
    "on_resistance": Field(_q(U.RESISTANCE, RANGE_R_SOURCE), "0.02 ohm", "resistance when closed",
                           "an assumption"),
    "trip": Field(TRIP, {"above": "4 A", "after": "3 ms"}, "trip when a swap does not clear "
                                                            "the short",
                  "from memory: a typical setting; give your device's"),
    "restart": Field(RESTART, {"policy": "manual"}, "restart after a trip"),
})
RAIL = Record("rail conductor", {
    "material": Field(Choice(RAIL_MATERIALS), None, "rail alloy (with area); default "
                                                    "nickel-silver"),
    "area": Field(_q(U.AREA, RANGE_AREA), None, "cross-section of one rail; default 1.9 mm2",
                  "from memory"),
    "resistance": Field(_q(U.RESISTANCE_PER_LENGTH, RANGE_R_PER_M), None, "resistance of one rail per "
                                                           "metre, instead of material+area"),
}, check=_check_rail)
FEEDER = Record("feeder", {
    "at": Field(_q(U.LENGTH, RANGE_POSITION), REQUIRED, "distance from the section's a end"),
    "wire": Field(WIRE, None, "feeder wire; absent: negligible"),
    "length": Field(_q(U.LENGTH, RANGE_POSITION), None, "one-way length of the feeder"),
}, check=_check_wire_run)
SECTION = Record("section", {
    "length": Field(_q(U.LENGTH, RANGE_SECTION), REQUIRED, "length from end a to end b"),
    "feed": Field(Ref(("booster", "breaker", "reverser")), None,
                  "feeding device; absent or null: fed through bonded joints"),
    "feeders": Field(Seq(FEEDER, min_items=1, what="a list of feeders"), None,
                     "feeder pairs; absent: one at mid-length, negligible wire"),
    "leads": Field(Choice(("normal", "swapped")), None,
                   "feeders as built, seen from a to b: normal puts the device's first output "
                   "terminal on the left rail, swapped on the right; absent: the tool chooses "
                   "the orientation that puts every bonded joint in phase (wiring sheet)"),
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
    "length": Field(_q(U.LENGTH, RANGE_VEHICLE), REQUIRED, "length over couplers"),
    "axles": Field(Seq(_q(U.LENGTH, RANGE_POSITION), 1, MAX_AXLES, what="a list of axle positions"),
                   REQUIRED, "axle positions from the vehicle's front"),
    "pickup": Field(Either((((str,), Choice(("all", "none"))),
                            ((list,), Seq(Number(integer=True, minimum=0)))),
                           "all, none, or a list of axle indices"), "none",
                    "axles joined electrically (pickup)"),
    "draw": Field(_q(U.CURRENT, RANGE_DRAW), "0 A", "running current (a locomotive)"),
    "keep_alive": Field(_q(U.TIME, RANGE_KEEP_ALIVE), "0 s", "how long it runs on without power"),
    "resistance": Field(_q(U.RESISTANCE, RANGE_R_LOAD.with_zero(True)), "0 ohm", "resistance joining the pickup "
                                                             "axles (lighting)"),
    "wheels": Field(Choice(("insulated", "metal")), "insulated", "metal: every wheelset "
                                                                 "bridges a one-rail gap"),
    "capacitance": Field(_q(U.CAPACITANCE, RANGE_CAPACITANCE), "0 F", "keep-alive capacitor"),
    "charge_resistance": Field(_q(U.RESISTANCE, RANGE_R_LOAD), "10 ohm", "resistance in series with the "
                                                           "capacitor", "from memory"),
})
START = Record("start position", {
    "section": Field(Ref(("section",)), REQUIRED, "section of the train's front"),
    "at": Field(_q(U.LENGTH, RANGE_POSITION), REQUIRED, "front's distance from the a end"),
    "heading": Field(Choice(("a", "b")), REQUIRED, "the end the train heads to"),
})
REVERSAL = Record("reversal", {
    "reverse_after": Field(_q(U.TIME, RANGE_INSTANT), REQUIRED, "stop, wait this long, run back"),
})
TRAIN = Record("train", {
    "consist": Field(Seq(Text(r"^\s*[A-Za-z0-9_][A-Za-z0-9_-]*(\s+x\s+[0-9]+)?\s*$",
                              "a vehicle name, or 'name x N'"), 1, what="a list of vehicles"),
                     REQUIRED, "vehicles, front first; 'hopper x 12' repeats"),
    "start": Field(START, REQUIRED, "where the front stands at the start"),
    "route": Field(Seq(Either((((str,), Ref(("section",))), ((dict,), REVERSAL)),
                              "a section name or {reverse_after: time}"), 1,
                       what="a list of sections"), REQUIRED,
                   "sections in order, with reversals"),
    "speed": Field(_q(U.SPEED, RANGE_SPEED), REQUIRED, "running speed"),
    "depart": Field(_q(U.TIME, RANGE_INSTANT), "0 s", "departure time"),
    "laps": Field(Number(integer=True, minimum=1, maximum=MAX_LAPS,
                         why=COUNT_REASONS["laps"][1]), 1,
                  "times the route after its first section is run: the steps after the "
                  "first are one lap, repeated"),
})
FAULT = Record("fault", {
    "at": Field(_q(U.TIME, RANGE_INSTANT), REQUIRED, "when it happens"),
    "short": Field(Record("short position", {
        "section": Field(Ref(("section",)), REQUIRED, "section of the short"),
        "at": Field(_q(U.LENGTH, RANGE_POSITION), REQUIRED, "distance from the a end"),
    }), None, "a short across the rails"),
    "open": Field(Record("open feeder", {
        "section": Field(Ref(("section",)), REQUIRED, "section of the feeder"),
        "feeder": Field(Number(integer=True, minimum=0), REQUIRED, "feeder index, 0-based"),
    }), None, "a feeder coming loose"),
    "resistance": Field(_q(U.RESISTANCE, RANGE_R_LOAD), None, "resistance of the short; default 0.01 ohm",
                        "an assumption: a coin across the rails"),
    "lasts": Field(_q(U.TIME, RANGE_RUN), None, "how long the short lasts; absent: stays"),
}, check=_check_fault, json_extra={"oneOf": [{"required": ["short"]}, {"required": ["open"]}]})
ACTION = Record("action", {
    "at": Field(_q(U.TIME, RANGE_INSTANT), REQUIRED, "when"),
    "reset": Field(Ref(("supply", "booster", "breaker", "reverser")), REQUIRED,
                   "the device an operator resets"),
})
REQUIRE = Record("requirements", {
    "margin": Field(_q(U.TIME, DELAY0), "0 s", "smallest acceptable timing margin of a "
                                                 "reversal"),
})
TRACK = Record("track", {
    "rail": Field(RAIL, {}, "rail conductor; default nickel-silver, 1.9 mm2"),
    "wheel_contact": Field(_q(U.RESISTANCE, RANGE_R_SOURCE), "0.05 ohm",
                           "contact resistance of one wheel on a rail", "an assumption"),
    "gap_width": Field(_q(U.LENGTH, RANGE_GAP), "0.8 mm", "width of an insulated gap", "from memory"),
    "contact_length": Field(_q(U.LENGTH, RANGE_GAP), "1 mm", "length of a wheel tread's contact",
                            "from memory"),
    "sections": Field(Names(SECTION, "section", 1), REQUIRED, "the sections"),
    "joints": Field(Seq(JOINT, what="a list of joints"), [], "where section ends meet"),
})
TOP = Record("scenario", {
    "format": Field(Text(what="the format name"), REQUIRED, "must be railfault/1"),
    "title": Field(Text(), "", "a title for reports"),
    "seed": Field(Number(integer=True, minimum=0, maximum=2**53, why="the largest integer a JSON reader keeps exactly is 2^53"), 0, "seed of all randomness"),
    "duration": Field(_q(U.TIME, RANGE_RUN), REQUIRED, "simulated time"),
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
    "scale": Field(Choice(tuple(SCALES)), None, "model scale: sets the NMRA S-9.1 "
                   "track-voltage range; absent: HO's range, with a note"),
    "vary": Field(VaryMap(), {}, "what a sweep samples"),
    "samples": Field(Number(integer=True, minimum=0, maximum=1_000_000, why="a million runs is more than a sweep can use"), 0, "number of sweep samples"),
    "cases": Field(CaseMap(), {}, "named what-if variants (railfault compare)"),
})


# ------------------------------------------------------------ the reference
#: The sections of the format reference (scenarios/README.md) and the record each
#: one's table shows, in the order the reference lists them.
REFERENCE_SECTIONS: tuple[tuple[str, Record], ...] = (
    ("Top level", TOP), ("`require`", REQUIRE), ("`supplies.NAME`", SUPPLY),
    ("`boosters.NAME`", BOOSTER), ("`sense`", SENSE), ("`trip`", TRIP),
    ("`thermal`", THERMAL), ("`restart`", RESTART), ("`boosters.NAME.reverse`", REVERSE),
    ("`boosters.NAME.wire`", WIRE_RUN), ("`breakers.NAME`", BREAKER), ("`feed`", FEED_MAP),
    ("`reversers.NAME`", REVERSER), ("`reversers.NAME.sense`", REVERSER_SENSE),
    ("`track`", TRACK), ("`track.rail`", RAIL), ("`track.sections.NAME`", SECTION),
    ("`track.sections.NAME.feeders[i]`", FEEDER), ("`track.joints[i]`", JOINT),
    ("`rolling_stock.NAME`", VEHICLE), ("`trains.NAME`", TRAIN),
    ("`trains.NAME.start`", START), ("`trains.NAME.route[i]`", REVERSAL),
    ("`faults[i]`", FAULT), ("`faults[i].short`", FAULT.fields["short"].kind),
    ("`faults[i].open`", FAULT.fields["open"].kind), ("`actions[i]`", ACTION),
)


def _default_text(f: Field) -> str:
    d = f.default
    if d is REQUIRED:
        return "**required**"
    if d is None:
        text = "absent"
    elif isinstance(d, bool):
        text = f"`{'true' if d else 'false'}`"
    elif isinstance(d, dict):
        text = "`{" + ", ".join(f"{k}: {v}" for k, v in d.items()) + "}`"
    elif isinstance(d, list):
        text = "`[" + ", ".join(map(str, d)) + "]`"
    elif d == "":
        text = '`""`'
    else:
        text = f"`{d}`"
    return f"{text} ({f.note})" if f.note else text


def reference_table(record: Record) -> str:
    """The format reference's table of ``record``: key, value (with its range), default,
    meaning; scenarios/README.md shows these tables (a test holds them equal)."""
    rows = ["| key | value | default | meaning |", "|---|---|---|---|"]
    for key, f in record.fields.items():
        rows.append(f"| `{key}` | {f.kind.doc} | {_default_text(f)} | {f.doc} |")
    return "\n".join(rows)


def _all_ranges() -> list[tuple[str, Range]]:
    return [(name, value) for name, value in globals().items()
            if name.startswith("RANGE_") and isinstance(value, Range)]


def _keys_with(r: Range) -> list[str]:
    """The keys of the format whose values take range ``r`` (with or without 0)."""
    out: list[str] = []
    for heading, rec in REFERENCE_SECTIONS:
        prefix = "" if rec is TOP else heading.strip("`") + "."
        for key, f in rec.fields.items():
            kind = f.kind.item if isinstance(f.kind, Seq) else f.kind
            kinds = [kind.per_metre()] if isinstance(kind, Gauge) else [kind]
            for k in kinds:
                if isinstance(k, Quantity) and k.range is not None \
                        and k.range.with_zero(r.zero) == r:
                    out.append(prefix + key)
    return out


def range_table() -> str:
    """The plausible ranges of the format, the keys that take each, and why (for the
    format reference)."""
    rows = ["| values | keys | why |", "|---|---|---|"]
    for _name, r in _all_ranges():
        keys = ", ".join(f"`{k}`" for k in _keys_with(r))
        rows.append(f"| {r.dim.name} ({r.dim.si}), {r.span} | {keys} | {r.why} |")
    return "\n".join(rows)


def count_table() -> str:
    """The bounds on counts, each with its reason (for the reference)."""
    rows = ["| count | at most | why |", "|---|---|---|"]
    for what, (bound, why) in COUNT_REASONS.items():
        shown = f"{bound / 1e3:g} km" if what.startswith("track length") else f"{bound:,}"
        rows.append(f"| {what} | {shown} | {why} |")
    return "\n".join(rows)


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
