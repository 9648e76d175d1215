"""Mutation fuzzing of scenario files: the generator, and one run of a mutant through the CLI.

A mutant is a bundled or test scenario with one change: a value made tiny, huge, zero,
negative, not a number, of the wrong unit or without one; a key deleted or duplicated;
two names swapped or a reference pointed at a name of another kind; a list made long.
Every choice is drawn from a seeded ``numpy.random.Generator`` passed in (no global
random state), so mutant ``k`` of seed ``s`` is the same on every machine.

:func:`play` runs ``railfault check`` and ``railfault run`` on a mutant in-process,
through the CLI's :func:`sim.cli.main`, each under a wall-clock bound (an interval
timer): a run may end 0, 1 or 2; exit 3 (a defect) or the bound (a hang) is a finding
of the fuzzer.
"""
from __future__ import annotations

import contextlib
import io
import os
import re
import signal
import time
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Optional

import numpy as np
import yaml

ROOT = Path(__file__).resolve().parents[1]

#: The scenarios mutated: bundled ones and the test scenarios (not the bad ones, nor the
#: reproducers of tests/scenarios/input, themselves mutants of the others).
SOURCES = tuple(sorted(ROOT.glob("scenarios/*.yaml"))) + tuple(
    sorted(p for p in ROOT.glob("tests/scenarios/**/*.yaml")
           if "bad" not in p.parts and "input" not in p.parts))

_QTY = re.compile(r"^\s*([+-]?[0-9.]+(?:[eE][+-]?[0-9]+)?)\s*([A-Za-zµΩ/0-9*^]+)\s*$")
#: A unit of each dimension, for "wrong unit" mutations.
_UNITS = ("s", "ms", "us", "A", "mA", "V", "ohm", "mohm", "m", "mm", "mm2", "m/s", "ohm/m",
          "uF", "AWG")


@dataclass(frozen=True)
class Mutant:
    """One mutated scenario: where it came from, what was changed, and its text."""

    index: int
    source: str
    change: str
    text: str


def _leaves(node: Any, path: tuple = ()) -> list[tuple]:
    """Key paths of every scalar value (mapping values and list items)."""
    out = []
    if isinstance(node, dict):
        for k, v in node.items():
            out.extend(_leaves(v, path + (k,)))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            out.extend(_leaves(v, path + (i,)))
    else:
        out.append(path)
    return out


def _containers(node: Any, path: tuple = ()) -> list[tuple]:
    """Key paths of every mapping and list."""
    out = []
    if isinstance(node, (dict, list)):
        out.append(path)
        items = node.items() if isinstance(node, dict) else enumerate(node)
        for k, v in items:
            out.extend(_containers(v, path + (k,)))
    return out


def _get(node: Any, path: tuple) -> Any:
    for p in path:
        node = node[p]
    return node


def _set(node: Any, path: tuple, value: Any) -> None:
    _get(node, path[:-1])[path[-1]] = value


def _names(data: dict) -> list[str]:
    out = []
    for table in ("supplies", "boosters", "breakers", "reversers", "rolling_stock", "trains"):
        if isinstance(data.get(table), dict):
            out.extend(data[table])
    secs = (data.get("track") or {}).get("sections")
    if isinstance(secs, dict):
        out.extend(secs)
    return [str(n) for n in out]


def _pick(rng: np.random.Generator, seq):
    return seq[int(rng.integers(len(seq)))]


def _kind_at(path: tuple):
    """The kind of the format (:mod:`sim.schema`) a key path names, or ``None``."""
    from sim import schema as S

    kind = S.TOP
    for seg in path:
        if isinstance(kind, S.Either):  # the option that has keys or items
            kind = next((k for _t, k in kind.options
                         if isinstance(k, S.Record if isinstance(seg, str) else S.Seq)), None)
        if isinstance(kind, S.Record) and seg in kind.fields:
            kind = kind.fields[seg].kind
        elif isinstance(kind, S.Names):
            kind = kind.item
        elif isinstance(kind, S.Seq) and isinstance(seg, int):
            kind = kind.item
        else:
            return None
    return kind


def _edge(rng: np.random.Generator, kind) -> Optional[tuple[Any, str]]:
    """A value at an edge of a key's declared range (valid: it reaches the engine)."""
    from sim import schema as S

    if isinstance(kind, S.Quantity) and kind.range is not None:
        r = kind.range
        choices = [r.low, r.high] + (["0 " + kind.dim.si] if r.zero else [])
        return _pick(rng, choices), "edge"
    if isinstance(kind, S.Number):
        lo = kind.minimum if kind.minimum is not None and not kind.exclusive_min else None
        hi = kind.maximum if kind.maximum is not None and not kind.exclusive_max else None
        options = [x for x in (lo, hi) if x is not None]
        if options:
            x = _pick(rng, options)
            return (int(x) if kind.integer else float(x)), "edge"
    return None


def _mutate_value(rng: np.random.Generator, value: Any, names: list[str],
                  path: tuple = ()) -> tuple[Any, str]:
    """A mutated scalar and a word for what was done."""
    m = _QTY.match(value) if isinstance(value, str) else None
    num, unit = (m.group(1), m.group(2)) if m else ("1", "s")
    if rng.random() < 0.5:  # a valid extreme half the time: the engine must take it
        kind = _kind_at(path)
        edge = _edge(rng, kind) if kind is not None else None
        if edge is not None:
            return edge
        if m:
            factor = _pick(rng, ("1e-3", "0.1", "0.5", "2", "10", "1e3"))
            return f"{float(num) * float(factor):g} {unit}", f"scale x{factor}"
    how = _pick(rng, ("tiny", "subnormal", "huge", "near-max", "zero", "negative", "nan",
                      "inf", "overflow", "wrong-unit", "no-unit", "big-int", "empty", "name",
                      "long-text", "control"))
    if how == "tiny":
        return f"1e-9 {unit}", how
    if how == "subnormal":
        return f"{_pick(rng, ('1e-320', '5e-324', '1e-400'))} {unit}", how
    if how == "huge":
        return f"{_pick(rng, ('1e9', '1e20', '1e300'))} {unit}", how
    if how == "near-max":
        return f"1.7e308 {unit}", how
    if how == "zero":
        return f"0 {unit}", how
    if how == "negative":
        return f"-{num.lstrip('+-')} {unit}", how
    if how == "nan":
        return f"nan {unit}", how
    if how == "inf":
        return _pick(rng, (f"inf {unit}", ".inf", "-.inf", ".nan")), how
    if how == "overflow":
        return f"1e99999999 {unit}", how
    if how == "wrong-unit":
        return f"{num} {_pick(rng, _UNITS)}", how
    if how == "no-unit":
        return float(num) if re.fullmatch(r"[0-9.eE+-]+", num) and num.count(".") < 2 else 1, how
    if how == "big-int":
        return 10 ** int(rng.integers(10, 400)), how
    if how == "empty":
        return _pick(rng, ("", None, [], {})), how
    if how == "name":
        return (_pick(rng, names) if names else "x") + _pick(rng, ("", " x 1000000000000",
                                                                   " x 0", ".a", ".b")), how
    if how == "long-text":
        return "x" * int(rng.integers(100, 5000)), how
    return "east\x1b[2J\r\nVerdict: PASS\u202e", how


def mutate(data: dict, rng: np.random.Generator) -> str:
    """Apply one mutation to ``data`` in place; return what was done."""
    names = _names(data)
    op = _pick(rng, ("value", "value", "value", "delete", "duplicate", "swap-names",
                     "cross-reference", "long-list", "rename"))
    leaves = [p for p in _leaves(data) if p and p != ("format",)]
    if op == "value" and leaves:
        path = _pick(rng, leaves)
        new, how = _mutate_value(rng, _get(data, path), names, path)
        _set(data, path, new)
        return f"{how} {'.'.join(map(str, path))} = {str(new)[:40]!r}"
    conts = [p for p in _containers(data) if p]
    if op == "delete" and conts:
        path = _pick(rng, conts + leaves)
        parent = _get(data, path[:-1])
        del parent[path[-1]]
        return f"delete {'.'.join(map(str, path))}"
    if op == "duplicate":
        lists = [p for p in conts if isinstance(_get(data, p), list) and _get(data, p)]
        if lists:
            path = _pick(rng, lists)
            lst = _get(data, path)
            lst.append(lst[int(rng.integers(len(lst)))])
            return f"duplicate an item of {'.'.join(map(str, path))}"
    if op == "long-list":
        lists = [p for p in conts if isinstance(_get(data, p), list) and _get(data, p)]
        if lists:
            path = _pick(rng, lists)
            lst = _get(data, path)
            n = int(rng.integers(50, 2000))
            lst.extend([lst[int(rng.integers(len(lst)))] for _ in range(n)])
            return f"long list {'.'.join(map(str, path))} (+{n})"
    if op in ("swap-names", "cross-reference") and len(names) >= 2:
        refs = [p for p in leaves if _get(data, p) in names]
        if refs:
            path = _pick(rng, refs)
            new = _pick(rng, names)
            _set(data, path, new)
            return f"{op} {'.'.join(map(str, path))} -> {new}"
    if op == "rename":
        maps = [p for p in conts if isinstance(_get(data, p), dict) and _get(data, p)]
        if maps:
            path = _pick(rng, maps)
            d = _get(data, path)
            old = _pick(rng, list(d))
            new = _pick(rng, names + ["", "a b", "x.y", "east\n", "n" * 100, "1"])
            value = d.pop(old)
            d[new] = value
            return f"rename {'.'.join(map(str, path + (old,)))} -> {new!r}"
    path = _pick(rng, leaves)
    new, how = _mutate_value(rng, _get(data, path), names, path)
    _set(data, path, new)
    return f"{how} {'.'.join(map(str, path))} = {str(new)[:40]!r}"


def mutants(seed: int, count: int, start: int = 0):
    """Mutants ``start`` .. ``start + count - 1`` of ``seed`` (each drawn from its own
    generator, ``default_rng([seed, k])``, so any one can be made alone)."""
    texts = {p: p.read_text(encoding="utf-8") for p in SOURCES}
    for k in range(start, start + count):
        rng = np.random.default_rng([seed, k])
        src = _pick(rng, SOURCES)
        data = yaml.safe_load(texts[src])
        change = mutate(data, rng)
        if rng.random() < 0.25:  # a second change now and then
            change += "; " + mutate(data, rng)
        text = yaml.safe_dump(data, sort_keys=False, allow_unicode=False, width=100)
        yield Mutant(k, str(src.relative_to(ROOT)), change, text)


# ------------------------------------------------------------------- playing
class Hang(BaseException):
    """A run past its wall-clock bound (a BaseException: the CLI's handlers let it pass)."""


@dataclass
class Outcome:
    """Exit statuses of ``check`` and ``run``, and what a defect or hang printed."""

    codes: dict
    seconds: dict
    hang: Optional[str] = None
    stderr: str = ""

    @property
    def defect(self) -> bool:
        return self.hang is not None or 3 in self.codes.values()


def _alarm(signum, frame):
    raise Hang()


def play(path: str, bound_s: float, commands=("check", "run")) -> Outcome:
    """Run each command on ``path`` through :func:`sim.cli.main`, in-process, under
    ``bound_s`` seconds of wall clock each (``SIGALRM``; the main thread only)."""
    from sim.cli import main

    out = Outcome({}, {})
    old = signal.signal(signal.SIGALRM, _alarm)
    debug = os.environ.get("RAILFAULT_DEBUG")
    os.environ["RAILFAULT_DEBUG"] = "1"  # a defect prints its traceback (to the capture)
    try:
        for cmd in commands:
            err = io.StringIO()
            t0 = time.perf_counter()
            signal.setitimer(signal.ITIMER_REAL, bound_s)
            try:
                with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(err):
                    code = main([cmd, path])
            except Hang:
                out.hang = f"{cmd} ran past {bound_s:g} s"
                code = None
            finally:
                signal.setitimer(signal.ITIMER_REAL, 0)
            out.codes[cmd] = code
            out.seconds[cmd] = time.perf_counter() - t0
            if code == 3 or code is None:
                out.stderr += f"--- {cmd}\n{err.getvalue()}"
    finally:
        signal.signal(signal.SIGALRM, old)
        if debug is None:
            del os.environ["RAILFAULT_DEBUG"]
        else:
            os.environ["RAILFAULT_DEBUG"] = debug
    return out


def classify(stderr: str) -> str:
    """Whose code a defect's traceback ends in: ``"engine"`` (the trust-engine branch's
    modules: the world, the devices, the circuit's network and incremental solver),
    ``"checks"`` (the static and circuit checks) or ``"input"`` (the rest)."""
    frames = re.findall(r'File "[^"]*?/(sim/[^"]+)", line', stderr)
    if not frames:
        return "input"
    last = frames[-1]
    if last.startswith(("sim/world/", "sim/devices/", "sim/circuit/network.py",
                        "sim/circuit/incremental.py", "sim/trace.py", "sim/timebase.py")):
        return "engine"
    if last.startswith(("sim/checks/", "sim/circuit/", "sim/layout.py")):
        return "checks"
    return "input"
