"""Quantities with units: text such as ``"2.5 ms"`` to SI floats, once, at load.

Unit names, prefixes and conversion factors are those of the SI (The International
System of Units, SI brochure, 9th edition, BIPM 2019), as implemented by the
general-purpose units library `pint`. Wire gauges (``"14 AWG"``) are read here as
a gauge number; turning a gauge into a resistance is the circuit's job (ASTM B258).

The grammar accepted for a quantity is deliberately narrow: a decimal number,
optional white space, and a unit expression made of unit names, ``*``, ``/``,
``^`` or ``**`` and small integer powers. ``mm2`` means ``mm^2`` (the way wire and
rail cross-sections are usually written). No arithmetic on the number is
evaluated, so a scenario file cannot make the loader compute something large.

Examples
--------
>>> parse_quantity("0.1 ms", TIME)
0.0001
>>> parse_quantity("1.9 mm2", AREA)
1.9e-06
>>> parse_awg("14 AWG")
14.0
"""
from __future__ import annotations

import math
import re
from dataclasses import dataclass
from decimal import Context, Decimal, InvalidOperation
from functools import lru_cache
from typing import Optional

__all__ = [
    "Dimension", "QuantityError", "DIMENSIONS", "TIME", "CURRENT", "VOLTAGE", "RESISTANCE",
    "LENGTH", "AREA", "SPEED", "RESISTANCE_PER_LENGTH", "CAPACITANCE", "DIMENSIONLESS",
    "registry", "describe", "parse_quantity", "parse_awg", "is_awg", "AWG_MIN", "AWG_MAX",
    "MAX_QUANTITY_CHARS", "dimension_of", "clip", "MAX_SHOWN_CHARS",
]

#: Longest quantity text accepted (characters).
MAX_QUANTITY_CHARS = 64

#: Thickest and thinnest gauges accepted: 0000 (written "0000 AWG" or "4/0 AWG") is
#: gauge -3, and 40 AWG is the thinnest (ASTM B258 tabulates 0000 to 56; layouts
#: use far less).
AWG_MIN = -3
AWG_MAX = 40


class QuantityError(ValueError):
    """A quantity text that cannot be read, or has the wrong dimension.

    The message is written for the user and completes "<key path>: ...".
    """


@dataclass(frozen=True)
class Dimension:
    """A physical dimension expected of a value.

    ``name`` is the word used in messages ("a time"), ``si`` the SI unit every value
    is converted to, ``exponents`` the powers of the SI base dimensions, ``units``
    common spellings (used for the JSON Schema patterns and the format reference).
    """

    name: str
    si: str
    exponents: tuple[tuple[str, int], ...]
    units: tuple[str, ...]

    @property
    def label(self) -> str:
        """``"a time (s)"``: how messages name what was expected."""
        return f"{self.name} ({self.si})" if self.si else self.name


def _dims(**powers: int) -> tuple[tuple[str, int], ...]:
    return tuple(sorted((f"[{k}]", v) for k, v in powers.items() if v))


TIME = Dimension("a time", "s", _dims(time=1), ("s", "ms", "us", "µs", "ns", "min", "h"))
CURRENT = Dimension("a current", "A", _dims(current=1), ("A", "mA", "uA", "µA", "kA"))
VOLTAGE = Dimension("a voltage", "V", _dims(mass=1, length=2, time=-3, current=-1),
                    ("V", "mV", "kV"))
RESISTANCE = Dimension("a resistance", "ohm", _dims(mass=1, length=2, time=-3, current=-2),
                       ("ohm", "mohm", "kohm", "Mohm", "Ω", "mΩ", "kΩ", "MΩ"))
LENGTH = Dimension("a length", "m", _dims(length=1), ("m", "mm", "cm", "km", "um", "µm",
                                                      "in", "ft"))
AREA = Dimension("an area", "m2", _dims(length=2), ("mm2", "m2", "cm2", "mm^2", "m^2",
                                                    "cm^2", "mm**2", "m**2", "cm**2"))
SPEED = Dimension("a speed", "m/s", _dims(length=1, time=-1),
                  ("m/s", "mm/s", "cm/s", "km/h", "ft/s", "in/s"))
RESISTANCE_PER_LENGTH = Dimension(
    "a resistance per length", "ohm/m", _dims(mass=1, length=1, time=-3, current=-2),
    ("ohm/m", "mohm/m", "ohm/km", "ohm/ft", "mΩ/m", "Ω/m", "Ω/km"))
CAPACITANCE = Dimension("a capacitance", "F", _dims(mass=-1, length=-2, time=4, current=2),
                        ("F", "mF", "uF", "µF", "nF", "pF"))
DIMENSIONLESS = Dimension("a number", "", (), ())

DIMENSIONS: tuple[Dimension, ...] = (TIME, CURRENT, VOLTAGE, RESISTANCE, LENGTH, AREA, SPEED,
                                     RESISTANCE_PER_LENGTH, CAPACITANCE)

#: Decimal arithmetic for the one product number x unit factor: no trap, so an
#: exponent too large or too small for any float gives an infinity or a zero
#: (handled by ``_to_float``), never an exception.
_EXACT = Context(prec=28, traps=[])

_NUMBER = r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?"
_QUANTITY_RE = re.compile(rf"\s*(?P<num>{_NUMBER})\s*(?P<unit>[^\s0-9+.-].*?)?\s*", re.S)
#: A unit expression: unit names, each with an optional small power (``^2``, ``**-1``,
#: or ``2``/``3`` written directly after the name), joined by ``*``, ``/`` or ``·``.
#: Nothing else reaches the units library, whose parser is for trusted text.
_UNIT_NAME = r"[A-Za-zµμΩ°_]+"
_UNIT_POWER = r"(?:(?:\^|\*\*)-?[1-9]|[23])?"
_UNIT_CHARS_RE = re.compile(rf"^{_UNIT_NAME}{_UNIT_POWER}(?:\s*[*/·]\s*{_UNIT_NAME}{_UNIT_POWER})*\Z")
#: ``mm2`` -> ``mm**2``: a unit name directly followed by the power 2 or 3.
_POWER_RE = re.compile(r"(?<=[A-Za-zµμΩ])([23])(?![\d.])")
_AWG_RE = re.compile(r"\s*(?P<g>[0-9]{1,4}|[1-4]/0)\s*AWG\s*", re.I)


@lru_cache(maxsize=1)
def registry():
    """The units registry, created on first use (a pure lookup table, not random state)."""
    import pint

    return pint.UnitRegistry(autoconvert_offset_to_baseunit=True)


@lru_cache(maxsize=512)
def _unit_info(unit_text: str) -> tuple[Decimal, tuple[tuple[str, int], ...], str]:
    """(SI factor, dimension exponents, canonical name) of a unit expression."""
    ureg = registry()
    units = ureg.parse_units(unit_text)
    base = ureg.Quantity(1.0, units).to_base_units()
    dims = tuple(sorted((str(k), int(v)) for k, v in base.dimensionality.items() if v))
    return Decimal(repr(float(base.magnitude))), dims, f"{units:~}"


@lru_cache(maxsize=1)
def _unit_errors() -> type:
    """The units library's own error for a unit it cannot read (the base of all its errors).

    Only expressions of the narrow grammar of ``_UNIT_CHARS_RE`` reach the library;
    any other exception it raises on them is a defect to see, not bad input.
    """
    import pint

    return pint.errors.PintError


def _normalise_unit(unit_text: str) -> str:
    text = unit_text.strip().replace("·", "*").replace("^", "**")
    return _POWER_RE.sub(r"**\1", text)


#: Spelled-out units that the units library misreads or does not know, and what was
#: meant ("amps" reads as attometres per second there).
_SPELLED = {"amp": "A", "amps": "A", "milliamps": "mA", "milliamp": "mA"}


def _suggest_unit(unit_text: str, dim: Dimension, lower: bool = True) -> Optional[str]:
    """A unit of dimension ``dim`` that ``unit_text`` probably means: a spelled-out name
    (:data:`_SPELLED`) or, with ``lower`` (for a unit the library does not know), the
    same letters in lower case (``Ohm`` -> ``ohm``), if that is a unit of ``dim``; else
    ``None``. (A known unit of another dimension is not lower-cased: ``mA`` is not a
    misspelt ``ma``.)"""
    low = unit_text.strip().lower()
    for cand in (_SPELLED.get(low), low if lower else None):
        if not cand or cand == unit_text or not _UNIT_CHARS_RE.fullmatch(cand):
            continue
        try:
            _f, exponents, _n = _unit_info(_normalise_unit(cand))
        except _unit_errors():
            continue
        if exponents == dim.exponents:
            return cand
    return None


def dimension_of(exponents: tuple[tuple[str, int], ...]) -> Optional[Dimension]:
    """The known :class:`Dimension` with these base exponents, if any."""
    for dim in DIMENSIONS:
        if dim.exponents == exponents:
            return dim
    return DIMENSIONLESS if not exponents else None


#: Longest piece of a file's text that a message repeats (longer text is cut, with
#: its length said): a message must stay a line, whatever the file holds.
MAX_SHOWN_CHARS = 60


def clip(text: str, limit: int = MAX_SHOWN_CHARS) -> str:
    """``text``, or its first ``limit`` characters and how long it was."""
    if len(text) <= limit:
        return text
    return f"{text[:limit]}... ({len(text)} characters)"


def describe(value: object) -> str:
    """How a message shows a value the file gave (``"2 A"``, ``a mapping``, ``true``).

    Text is quoted and cut to :data:`MAX_SHOWN_CHARS` characters (:func:`clip`);
    control characters are left to the printer's escaping (:mod:`sim.textfmt`).
    """
    if isinstance(value, str):
        return f'"{clip(value)}"'
    if value is None:
        return "nothing (null)"
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)):
        return clip(repr(value)) if not isinstance(value, int) or value.bit_length() < 8000 \
            else f"an integer of {value.bit_length()} bits"
    if isinstance(value, dict):
        return "a mapping"
    if isinstance(value, list):
        return "a list"
    return type(value).__name__


def parse_quantity(value: object, dim: Dimension) -> float:
    """Convert a quantity to an SI float of dimension ``dim``.

    Parameters
    ----------
    value
        The YAML value: a string ``"<number> <unit>"``; a bare number only when
        ``dim`` is :data:`DIMENSIONLESS`.
    dim
        The expected dimension.

    Returns
    -------
    float
        The value in the SI unit ``dim.si`` (SI brochure, BIPM: prefixes are exact
        powers of ten; the product is rounded once, from decimal).

    Raises
    ------
    QuantityError
        With a message such as ``expected a time (s), got "2 A"``.
    """
    got = describe(value)
    if isinstance(value, bool) or value is None or isinstance(value, (dict, list)):
        raise QuantityError(f"expected {dim.label}, got {got}")
    if isinstance(value, (int, float)):
        if dim is DIMENSIONLESS:
            try:
                return _finite(float(value), dim, got)
            except OverflowError:  # an integer beyond any float
                raise QuantityError(f"expected {dim.label}, got {got}: not a finite value") \
                    from None
        hint = f'"{clip(str(value), 12)} {dim.si}"'
        raise QuantityError(f"expected {dim.label}, got {got}: write the unit, e.g. {hint}")
    if not isinstance(value, str):
        raise QuantityError(f"expected {dim.label}, got {got}")
    text = value.strip()
    if len(text) > MAX_QUANTITY_CHARS:
        raise QuantityError(f"expected {dim.label}, got a text of {len(text)} characters "
                            f"(at most {MAX_QUANTITY_CHARS})")
    m = _QUANTITY_RE.fullmatch(text)
    if not m:
        if _AWG_RE.fullmatch(text):
            raise QuantityError(f"expected {dim.label}, got {got} (a wire gauge)")
        raise QuantityError(f"expected {dim.label}, got {got}: not a number with a unit")
    try:
        number = Decimal(m.group("num"))
    except InvalidOperation:  # pragma: no cover - the regex admits only decimals
        raise QuantityError(f"expected {dim.label}, got {got}: not a number") from None
    unit_text = m.group("unit")
    if not unit_text:
        if dim is DIMENSIONLESS:
            return _finite(_to_float(number, number), dim, got)
        raise QuantityError(f"expected {dim.label}, got {got}: the unit is missing, "
                            f'e.g. "{m.group("num")} {dim.si}"')
    if _AWG_RE.fullmatch(text):
        raise QuantityError(f"expected {dim.label}, got {got} (a wire gauge)")
    if not _UNIT_CHARS_RE.fullmatch(unit_text):
        raise QuantityError(f"expected {dim.label}, got {got}: cannot read the unit "
                            f'"{unit_text}"')
    try:
        factor, exponents, _name = _unit_info(_normalise_unit(unit_text))
    except _unit_errors():  # an unknown name, or names that do not combine
        sug = _suggest_unit(unit_text, dim)
        hint = f'; did you mean "{m.group("num")} {sug}"?' if sug else ""
        raise QuantityError(f"expected {dim.label}, got {got}: unknown unit "
                            f'"{unit_text}"{hint}') from None
    if exponents != dim.exponents:
        found = dimension_of(exponents)
        what = f" ({found.name})" if found is not None and found is not DIMENSIONLESS else ""
        sug = _suggest_unit(unit_text, dim, lower=False)
        if sug:
            read = f"reads as {found.name}" if what else "reads as another quantity"
            raise QuantityError(
                f"expected {dim.label}, got {got}: \"{unit_text}\" {read}, not as "
                f"{dim.name}; did you mean \"{m.group('num')} {sug}\"?")
        raise QuantityError(f"expected {dim.label}, got {got}{what}")
    return _finite(_to_float(_EXACT.multiply(number, factor), number), dim, got)


def _to_float(x: Decimal, written: Decimal) -> float:
    """``x`` as a float; a value written non-zero never becomes 0.

    A value too small for a float (``1e-400 s``) becomes the smallest positive
    float of its sign, so that range checks refuse it as too small instead of
    reading it as zero; one too large becomes an infinity (refused as not finite).
    """
    f = float(x)
    if f == 0.0 and written != 0:
        return math.copysign(math.ulp(0.0), float(Decimal(1).copy_sign(written)))
    return f


def _finite(x: float, dim: Dimension, got: str) -> float:
    if not math.isfinite(x):
        raise QuantityError(f"expected {dim.label}, got {got}: not a finite value")
    return x


def is_awg(value: object) -> bool:
    """Whether ``value`` is written as a wire gauge (``"14 AWG"``, ``"1/0 AWG"``)."""
    return isinstance(value, str) and _AWG_RE.fullmatch(value) is not None


def parse_awg(value: object) -> float:
    """The gauge number of ``"<n> AWG"``.

    ``"0"`` .. ``"40"`` are gauges 0 to 40; ``"00"``, ``"000"``, ``"0000"`` (also
    written ``"2/0"``, ``"3/0"``, ``"4/0"``) are gauges -1, -2, -3, the convention of
    the ASTM B258 diameter formula ``d = 0.127 mm * 92^((36 - n)/39)``.

    Raises
    ------
    QuantityError
        For anything else, or a gauge outside 0000 .. 40.
    """
    got = describe(value)
    m = _AWG_RE.fullmatch(value) if isinstance(value, str) else None
    if m is None:
        raise QuantityError(f'expected a wire gauge (e.g. "14 AWG"), got {got}')
    g = m.group("g")
    if "/" in g:
        n = 1 - int(g.split("/")[0])
    elif len(g) > 1 and set(g) == {"0"}:
        n = 1 - len(g)
    elif len(g) > 1 and g.startswith("0"):
        raise QuantityError(f'expected a wire gauge (e.g. "14 AWG"), got {got}')
    else:
        n = int(g)
    if not AWG_MIN <= n <= AWG_MAX:
        raise QuantityError(f"expected a wire gauge from 0000 to {AWG_MAX} AWG, got {got}")
    return float(n)
