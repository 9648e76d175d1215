"""Load a scenario file: YAML -> defaults -> validation -> the frozen model.

The steps, each collecting every problem it finds (a file with ten mistakes
reports ten):

1. bytes: the file exists, is at most 2 MiB (:data:`sim.yamlnodes.MAX_FILE_BYTES`)
   and is UTF-8 (:mod:`sim.yamlnodes`);
2. YAML: composed safely, only core tags, no duplicate keys, a (line, column) for
   every key path (:mod:`sim.yamlnodes`);
3. ``format: railfault/1``; then every key against the declared format, quantities
   converted to SI floats once, defaults filled (:mod:`sim.schema`, :mod:`sim.units`);
4. the file as a whole: names unique across the file, references resolved, no feed
   cycle, positions within their section or vehicle, ``vary`` key paths;
5. the frozen :class:`sim.model.Scenario`.

A mistake of the file leaves :func:`load` and :func:`loads` as a
:class:`sim.errors.ScenarioError` (every problem located); any other exception is a
defect of railfault and is not dressed as one (the CLI exits 3 for it).
"""
from __future__ import annotations

import hashlib
import os
import re
from types import MappingProxyType
from typing import Any, Optional

from sim import model as M
from sim import schema as S
from sim.errors import Problem, ScenarioError
from sim.units import clip
from sim.yamlnodes import MAX_FILE_BYTES, Document, decode, dotted, parse_text, read_bytes

__all__ = ["load", "loads", "FORMAT", "DEFAULT_SHORT_R_OHM"]

#: The one format this version reads.
FORMAT = "railfault/1"
#: Resistance of a short when the file gives none: a coin across the rails
#: (an assumption, the same figure as the fault map's coin test).
DEFAULT_SHORT_R_OHM = 0.01

_DEVICE_KINDS = ("booster", "breaker", "reverser")
_PLURAL = {"supply": "supplies", "booster": "boosters", "breaker": "breakers",
           "reverser": "reversers", "section": "sections", "vehicle": "vehicles",
           "train": "trains"}
_CONSIST_RE = re.compile(r"\s*(?P<name>[A-Za-z0-9_][A-Za-z0-9_-]*)(?:\s+x\s+(?P<n>[0-9]+))?\s*")
_SEGMENT_RE = re.compile(r"([^.\[\]]+)|\[([0-9]{1,9})\]")


# ------------------------------------------------------------------ public API
def load(path: str | os.PathLike) -> M.Scenario:
    """Read and validate the scenario file at ``path``.

    Parameters
    ----------
    path
        A ``railfault/1`` YAML file of at most 2 MiB, UTF-8.

    Returns
    -------
    sim.model.Scenario
        Frozen, with SI floats, ``path``, ``sha256`` of the file's bytes and the
        ``locations`` of every key path.

    Raises
    ------
    sim.errors.ScenarioError
        Holding every problem found, each with the file, key path, line and column.
    """
    file = os.fspath(path) if isinstance(path, (str, os.PathLike)) else str(path)
    doc = Document(str(file))
    try:
        raw = read_bytes(file, doc)
        if raw is None:
            raise ScenarioError(doc.problems)
        text = decode(raw, doc)
        if text is None:
            raise ScenarioError(doc.problems)
        return _load_text(doc, text, hashlib.sha256(raw).hexdigest())
    except ScenarioError:
        raise
    except Exception as exc:  # a defect of ours: it stays one (exit 3), with where it was
        _note(doc, exc)
        raise


def loads(text: str, path: str = "<string>") -> M.Scenario:
    """Validate a scenario given as text (``path`` names it in messages).

    The ``sha256`` is that of the text encoded as UTF-8. Raises
    :class:`sim.errors.ScenarioError` like :func:`load`.
    """
    doc = Document(str(path))
    try:
        if not isinstance(text, str):
            doc.problem((), f"expected the scenario as text, got {type(text).__name__}")
            raise ScenarioError(doc.problems)
        try:
            raw = text.encode("utf-8")
        except UnicodeEncodeError as exc:
            doc.problem((), f"the text cannot be encoded as UTF-8 at character {exc.start}")
            raise ScenarioError(doc.problems) from None
        if len(raw) > MAX_FILE_BYTES:
            doc.problem((), f"the text is {len(raw)} bytes, larger than the limit of "
                            f"{MAX_FILE_BYTES} bytes (2 MiB)")
            raise ScenarioError(doc.problems)
        if text.startswith("\ufeff"):
            text = text[1:]
        return _load_text(doc, text, hashlib.sha256(raw).hexdigest())
    except ScenarioError:
        raise
    except Exception as exc:  # a defect of ours: it stays one (exit 3), with where it was
        _note(doc, exc)
        raise


# -------------------------------------------------------------------- helpers
def _note(doc: Document, exc: BaseException) -> None:
    """Add where the loader was to an unexpected exception (for the defect report).

    The exception is not turned into a :class:`ScenarioError`: a crash of the loader
    is a defect of railfault, not a mistake of the file, and the CLI says so (exit 3).
    """
    where = doc.current
    loc = doc.locate(where) if where else None
    at = f" at {dotted(where)}" if where else ""
    line = f" (line {loc[0]})" if loc else ""
    exc.add_note(f"railfault: while loading {doc.file}{at}{line}")


def _ok(*values: Any) -> bool:
    return all(v is not S.INVALID and v is not None for v in values)


def _sorted(problems: list[Problem]) -> list[Problem]:
    return sorted(problems, key=lambda p: (p.line is None, p.line or 0, p.column or 0))


def _load_text(doc: Document, text: str, sha: str) -> M.Scenario:
    parse_text(text, doc)
    if doc.problems:
        raise ScenarioError(_sorted(doc.problems))
    data = doc.data
    if not isinstance(data, dict):
        doc.problem((), f"a scenario is a mapping of keys starting with `format: {FORMAT}`, "
                        f"got {S.describe(data)}", (1, 1))
        raise ScenarioError(doc.problems)
    fmt = data.get("format")
    if fmt is None:
        doc.problem((), f"required key 'format' is missing: a scenario file starts with "
                        f"`format: {FORMAT}`", (1, 1))
        raise ScenarioError(doc.problems)
    if fmt != FORMAT:
        doc.problem(("format",), f"unsupported format {S.describe(fmt)}: this version of "
                                 f"railfault reads `format: {FORMAT}` only")
        raise ScenarioError(doc.problems)
    try:
        scn = _pipeline(doc, data, sha)
    except ScenarioError as exc:
        raise ScenarioError(_sorted(list(exc.problems) + _case_problems(doc, data, sha,
                                                                  exc.problems))) from None
    if data.get("cases"):
        from dataclasses import replace
        from sim.whatif.cases import build_cases

        scn = replace(scn, cases=build_cases(doc, data, lambda d, sub: _pipeline(sub, d, sha)))
    return scn


def _case_problems(doc: Document, data: dict, sha: str, base: list) -> list:
    """The problems of the ``cases`` when the rest of the file has some too, so that one
    run of the loader reports them all; a base problem that a case repeats (``in case
    'NAME': ...`` at the same place) is left out. None when the ``cases`` block itself
    is malformed (the base problems say so)."""
    cases = data.get("cases")
    if not isinstance(cases, dict) or not all(isinstance(v, dict) for v in cases.values()) \
            or any(p.path == "cases" or p.path.startswith("cases.") for p in base):
        return []
    from sim.whatif.cases import build_cases

    seen = {(p.path, p.message) for p in base}
    try:
        build_cases(doc, data, lambda d, sub: _pipeline(sub, d, sha))
    except ScenarioError as exc:
        out = []
        for p in exc.problems:
            msg = p.message
            if msg.startswith("in case '") and "': " in msg:
                msg = msg.split("': ", 1)[1]
            if (p.path, msg) not in seen and p not in out:
                out.append(p)
        return out
    return []


def _pipeline(doc: Document, data: dict, sha: str) -> M.Scenario:
    """Convert, check and build ``data`` (problems go to ``doc``; raises if any)."""
    cx = S.Context(lambda path, message: doc.problem(path, message))
    conv = S.TOP.convert(cx, data, ())
    checker = _Checker(doc, cx, conv)
    checker.run()
    if doc.problems:
        raise ScenarioError(_sorted(doc.problems))
    return _Builder(doc, conv, checker).build(sha)


# ------------------------------------------------------------- whole-file checks
class _Checker:
    """Rules that look across the file: names, references, cycles, positions."""

    def __init__(self, doc: Document, cx: S.Context, conv: dict):
        self.doc = doc
        self.cx = cx
        self.conv = conv
        self.names: dict[str, tuple[str, tuple]] = {}
        self.feeders: dict[str, list] = {}
        self.vary: dict[str, Any] = {}

    def problem(self, path: tuple, message: str) -> None:
        self.doc.problem(path, message)

    def table(self, key: str) -> dict:
        v = self.conv.get(key)
        return v if isinstance(v, dict) else {}

    def sections(self) -> dict:
        track = self.conv.get("track")
        if isinstance(track, dict) and isinstance(track.get("sections"), dict):
            return track["sections"]
        return {}

    def run(self) -> None:
        steps = (self.unique_names, self.references, self.feed_cycles, self.section_rules,
                 self.joint_rules, self.vehicle_rules, self.train_rules, self.fault_rules,
                 self.vary_rules)
        for step in steps:
            self.doc.current = ()
            step()

    # names ------------------------------------------------------------
    def unique_names(self) -> None:
        for name, kind, path in self.cx.names:
            if name in self.names:
                first_kind, first_path = self.names[name]
                loc = self.doc.locations.get(first_path)
                where = f" at line {loc[0]}" if loc else ""
                self.problem(path, f"the name '{name}' is already used by the {first_kind}"
                                   f"{where}: names are unique across the file (devices, "
                                   f"sections, vehicles and trains)")
            else:
                self.names[name] = (kind, path)

    def resolve(self, path: tuple, name: str, kinds: tuple[str, ...]) -> bool:
        """Whether ``name`` is defined as one of ``kinds``; a problem otherwise."""
        self.doc.current = path
        found = self.names.get(name)
        want = S.either_or(kinds)
        if found is None:
            pool = [n for n, (k, _) in self.names.items() if k in kinds]
            hint = S.suggest(name, pool)
            if not hint:
                listing = ", ".join(pool[:8]) + (", ..." if len(pool) > 8 else "")
                plural = S.either_or([_PLURAL[k] for k in kinds], "and")
                hint = f" ({plural} of this file: {listing})" if pool else \
                    f" (this file defines no {S.either_or([_PLURAL[k] for k in kinds])})"
            self.problem(path, f"'{name}' is not defined: expected the name of a {want}{hint}")
            return False
        if found[0] not in kinds:
            self.problem(path, f"'{name}' is a {found[0]}, expected a {want}")
            return False
        return True

    def references(self) -> None:
        for path, name, kinds in self.cx.refs:
            self.resolve(path, name, kinds)

    # feed chain -------------------------------------------------------
    def _feed_source(self, rec: Any) -> Optional[str]:
        if not isinstance(rec, dict):
            return None
        feed = rec.get("feed")
        if isinstance(feed, str):
            return feed
        if isinstance(feed, dict) and isinstance(feed.get("from"), str):
            return feed["from"]
        return None

    def feed_cycles(self) -> None:
        fed_by: dict[str, str] = {}
        where: dict[str, tuple] = {}
        for key in ("breakers", "reversers"):
            for name, rec in self.table(key).items():
                src = self._feed_source(rec)
                if src is not None and self.names.get(src, ("",))[0] in ("breaker", "reverser"):
                    fed_by[name] = src
                    feed = rec.get("feed")
                    where[name] = (key, name, "feed") + (("from",) if isinstance(feed, dict)
                                                         else ())
        reported: set[str] = set()
        for start in fed_by:
            seen: list[str] = []
            cur: Optional[str] = start
            while cur is not None and cur not in seen:
                seen.append(cur)
                cur = fed_by.get(cur)
            if cur is None or cur in reported:
                continue
            cycle = seen[seen.index(cur):]
            reported.update(cycle)
            text = ", ".join(f"'{a}' is fed by '{fed_by[a]}'" for a in cycle)
            chain = " <- ".join(cycle + [cycle[0]])
            self.problem(where[cycle[0]], f"feed cycle {chain}: {text}; a feed chain must "
                                          f"end at a booster")

    # sections -----------------------------------------------------------
    def section_rules(self) -> None:
        base = ("track", "sections")
        lengths = [sec.get("length") for sec in self.sections().values() if isinstance(sec, dict)]
        total_m = sum(x for x in lengths if _ok(x))
        bound_m, why = S.COUNT_REASONS["track length of all sections"]
        if total_m > bound_m:
            self.problem(base, f"the sections add up to {total_m / 1e3:g} km of track: at most "
                               f"{bound_m / 1e3:g} km ({why})")
        for name, sec in self.sections().items():
            if not isinstance(sec, dict):
                continue
            length = sec.get("length")
            feeders = sec.get("feeders")
            if feeders is None:
                if sec.get("feed") is None:
                    self.feeders[name] = []
                elif _ok(length):
                    self.feeders[name] = [{"at": length / 2.0, "wire": None, "length": None}]
                continue
            if not isinstance(feeders, list):
                continue
            if sec.get("feed") is None:
                self.problem(base + (name, "feeders"), "feeders need a feed: this section "
                                                       "has none (it is powered only through "
                                                       "bonded joints)")
            self.feeders[name] = feeders
            for i, fd in enumerate(feeders):
                if isinstance(fd, dict) and _ok(fd.get("at"), length) and fd["at"] > length:
                    self.problem(base + (name, "feeders", i, "at"),
                                 f"at {fd['at']:g} m is beyond the section's length of "
                                 f"{length:g} m")

    def _end(self, path: tuple, text: Any) -> Optional[tuple[str, str]]:
        if not isinstance(text, str) or "." not in text:
            return None
        sec, end = text.rsplit(".", 1)
        if sec not in self.names:
            pool = list(self.sections())
            hint = S.suggest(sec, pool)
            self.problem(path, f"'{sec}' in '{text}' is not a section of this file{hint}")
            return None
        if self.names[sec][0] != "section":
            self.problem(path, f"'{sec}' in '{text}' is a {self.names[sec][0]}, not a section")
            return None
        return sec, end

    def joint_rules(self) -> None:
        track = self.conv.get("track")
        joints = track.get("joints") if isinstance(track, dict) else None
        if not isinstance(joints, list):
            return
        seen: dict[frozenset, int] = {}
        for i, j in enumerate(joints):
            if not isinstance(j, dict) or not isinstance(j.get("ends"), list):
                continue
            path = ("track", "joints", i, "ends")
            ends = [self._end(path + (k,), e) for k, e in enumerate(j["ends"])]
            if None in ends:
                continue
            if ends[0] == ends[1]:
                self.problem(path, f"a joint joins two different ends, got "
                                   f"'{ends[0][0]}.{ends[0][1]}' twice")
                continue
            key = frozenset(ends)
            if key in seen:
                self.problem(path, f"the same joint is already listed as "
                                   f"track.joints[{seen[key]}]")
            else:
                seen[key] = i

    # rolling stock and trains ---------------------------------------------
    def vehicle_rules(self) -> None:
        for name, v in self.table("rolling_stock").items():
            if not isinstance(v, dict):
                continue
            path = ("rolling_stock", name)
            length, axles = v.get("length"), v.get("axles")
            if isinstance(axles, list):
                good = [a for a in axles if _ok(a)]
                for i, a in enumerate(axles):
                    if _ok(a, length) and a > length:
                        self.problem(path + ("axles", i), f"axle at {a * 1e3:g} mm is beyond "
                                                          f"the vehicle's length of "
                                                          f"{length * 1e3:g} mm")
                if len(good) == len(axles) and any(b <= a for a, b in zip(good, good[1:])):
                    self.problem(path + ("axles",), "axle positions must increase from the "
                                                    "vehicle's front")
            pickup = v.get("pickup")
            if isinstance(pickup, list) and isinstance(axles, list):
                for i, k in enumerate(pickup):
                    if isinstance(k, int) and k >= len(axles):
                        self.problem(path + ("pickup", i), f"axle index {k} does not exist: "
                                                           f"this vehicle has {len(axles)} "
                                                           f"axles (0 to {len(axles) - 1})")
                ints = [k for k in pickup if isinstance(k, int)]
                if len(set(ints)) != len(ints):
                    self.problem(path + ("pickup",), "an axle index is listed twice")
            no_pickup = pickup == "none" or pickup == []
            draw = v.get("draw")
            if no_pickup and _ok(draw) and draw > 0:
                self.problem(path + ("draw",), "a vehicle that draws current needs pickup "
                                               "(pickup: all, or a list of axles)")

    def train_rules(self) -> None:
        secs = self.sections()
        in_file = steps_in_file = 0
        for name, t in self.table("trains").items():
            if not isinstance(t, dict):
                continue
            path = ("trains", name)
            in_file += self.consist_rules(path, t.get("consist"))
            steps_in_file += self.lap_rules(path, t.get("route"), t.get("laps"))
            start = t.get("start")
            if isinstance(start, dict):
                self.within_section(path + ("start", "at"), secs, start)
        self.at_most(("trains",), in_file, "vehicles in all trains")
        self.at_most(("trains",), steps_in_file, "route steps in all trains")

    def at_most(self, path: tuple, n: int, what: str) -> bool:
        """A problem when a count is above its bound (:data:`sim.schema.COUNT_REASONS`)."""
        bound, why = S.COUNT_REASONS[what]
        if n > bound:
            self.problem(path, f"{n} {what}: at most {bound} ({why})")
            return False
        return True

    def consist_rules(self, path: tuple, consist: Any) -> int:
        """Check a consist's entries and count; returns its number of vehicles."""
        if not isinstance(consist, list):
            return 0
        total = 0
        bound, why = S.COUNT_REASONS["vehicles per train"]
        for i, item in enumerate(consist):
            m = _CONSIST_RE.fullmatch(item) if isinstance(item, str) else None
            if m is None:
                continue
            text = m.group("n") or "1"
            n = int(text) if len(text) <= 12 else 10 ** 12  # no long int parsing
            if n < 1:
                self.problem(path + ("consist", i), f"'{item}': the count must be at least 1")
            elif n > bound:
                self.problem(path + ("consist", i), f"'{clip(item)}': at most {bound} "
                                                    f"vehicles in a train ({why})")
                return bound + 1
            total += n
            self.resolve(path + ("consist", i), m.group("name"), ("vehicle",))
        self.at_most(path + ("consist",), total, "vehicles per train")
        return total

    def lap_rules(self, path: tuple, route: Any, laps: Any) -> int:
        """Check ``laps`` against the route; returns the route steps once laid out."""
        if not isinstance(route, list) or not _ok(laps):
            return 0
        if laps > 1 and len(route) < 2:
            self.problem(path + ("laps",), f"laps: {laps} needs a route of the start section "
                                           f"and at least one more step (a lap is the route "
                                           f"after its first section)")
            return 0
        steps = 1 + (len(route) - 1) * laps
        where = path + (("laps",) if laps > 1 else ("route",))
        self.at_most(where, steps, "route steps per train (laps laid out)")
        return steps

    def within_section(self, path: tuple, secs: dict, place: dict) -> None:
        """A place ``{section, at}`` must lie within its section's length."""
        sec = secs.get(place.get("section"))
        at = place.get("at")
        if isinstance(sec, dict) and _ok(sec.get("length"), at) and at > sec["length"]:
            self.problem(path, f"at {at:g} m is beyond the length of section "
                               f"'{place['section']}' ({sec['length']:g} m)")

    # faults -------------------------------------------------------------
    def fault_rules(self) -> None:
        secs = self.sections()
        duration = self.conv.get("duration")
        faults = self.conv.get("faults")
        if not isinstance(faults, list):
            return
        for i, f in enumerate(faults):
            if not isinstance(f, dict):
                continue
            path = ("faults", i)
            if _ok(f.get("at"), duration) and f["at"] > duration:
                self.problem(path + ("at",), f"at {f['at']:g} s is after the end of the run "
                                             f"(duration {duration:g} s)")
            short, opened = f.get("short"), f.get("open")
            if isinstance(short, dict):
                self.within_section(path + ("short", "at"), secs, short)
            if isinstance(opened, dict):
                name, k = opened.get("section"), opened.get("feeder")
                fds = self.feeders.get(name) if isinstance(name, str) else None
                if isinstance(fds, list) and isinstance(k, int) and k >= len(fds):
                    self.problem(path + ("open", "feeder"), f"feeder {k} does not exist: "
                                                            f"section '{name}' has {len(fds)} "
                                                            f"feeder(s), numbered from 0")

    # vary ---------------------------------------------------------------
    def _target(self, key: str) -> tuple[Optional[S.Kind], tuple, str]:
        """The kind a vary key path names, its path tuple, or an error text."""
        segments: list = []
        pos = 0
        for m in _SEGMENT_RE.finditer(key):
            if m.start() != pos and key[pos:m.start()] != ".":
                return None, (), "not a key path like boosters.east.trip.after"
            segments.append(m.group(1) if m.group(1) is not None else int(m.group(2)))
            pos = m.end()
        if pos != len(key) or not segments:
            return None, (), "not a key path like boosters.east.trip.after"
        kind: S.Kind = S.TOP
        datum: Any = self.conv
        done: tuple = ()
        for seg in segments:
            if isinstance(kind, S.Either):
                kind = _either_option(kind, datum)
            if isinstance(kind, S.Record) and isinstance(seg, str) and seg in kind.fields:
                kind = kind.fields[seg].kind
                datum = datum.get(seg) if isinstance(datum, dict) else None
            elif isinstance(kind, S.Names) and isinstance(seg, str) and isinstance(datum, dict) \
                    and seg in datum:
                kind, datum = kind.item, datum[seg]
            elif isinstance(kind, S.Seq) and isinstance(seg, int) and isinstance(datum, list) \
                    and seg < len(datum):
                kind, datum = kind.item, datum[seg]
            else:
                shown = dotted(done + (seg,))
                if isinstance(kind, S.Record):
                    hint = S.suggest(seg, kind.fields)
                elif isinstance(kind, S.Names) and isinstance(datum, dict):
                    hint = S.suggest(seg, datum)
                else:
                    hint = ""
                return None, (), f"'{shown}' is not in this file{hint}"
            done = done + (seg,)
        if isinstance(kind, S.Either):
            kind = _either_option(kind, datum)
        if not isinstance(kind, (S.Quantity, S.Number)):
            return None, done, f"'{key}' is {kind.doc or 'not a quantity'}; vary samples " \
                               f"quantities and numbers only"
        return kind, done, ""

    def vary_rules(self) -> None:
        vary = self.conv.get("vary")
        if not isinstance(vary, dict):
            return
        for key, spec in vary.items():
            path = ("vary", key)
            self.doc.current = path
            kind, target, err = self._target(str(key))
            if kind is None:
                self.problem(path, f"vary: {err}")
                continue
            sampled = self._sampler(path, target, kind, spec)
            if sampled is not None:
                self.vary[str(key)] = sampled

    def _sampler(self, path: tuple, target: tuple, kind: S.Kind, spec: Any):
        unit = kind.dim.si if isinstance(kind, S.Quantity) else ""
        # a normal's mean lies in the key's range, its spread in the same range's bounds
        free = kind
        spread = S.Quantity(kind.dim, kind.range.with_zero(False)) \
            if isinstance(kind, S.Quantity) else S.Number(minimum=0.0, exclusive_min=True)

        def out(sampler: str, values) -> dict:
            return MappingProxyType({"path": target, "sampler": sampler,
                                     "values": tuple(values), "unit": unit})

        if spec == "uniform":
            if target[-2:] == ("sense", "phase"):
                return out("uniform", (0.0, 1.0))
            self.problem(path, "the word 'uniform' alone samples a sense phase; for other "
                               "quantities write {uniform: [low, high]}")
            return None
        n_before = len(self.doc.problems)
        if isinstance(spec, list):
            if not spec:
                self.problem(path, "a list of values must not be empty")
                return None
            vals = [kind.convert(self.cx, v, path + (i,)) for i, v in enumerate(spec)]
            return out("grid", vals) if len(self.doc.problems) == n_before else None
        if not isinstance(spec, dict) or len(spec) != 1:
            self.problem(path, f"expected a sampler: {{uniform: [low, high]}}, {{normal: "
                               f"[mean, sd]}}, {{triangular: [low, mode, high]}}, "
                               f"{{choice: [...]}} or a list of values; got "
                               f"{S.describe(spec)}")
            return None
        (name, args), = spec.items()
        sub = path + (name,)
        names = ("uniform", "normal", "triangular", "choice")
        if name not in names:
            self.problem(sub, f"unknown sampler '{name}' ({', '.join(names)})"
                              f"{S.suggest(name, names)}")
            return None
        n_args = {"uniform": 2, "normal": 2, "triangular": 3}.get(name)
        if not isinstance(args, list) or not args or (n_args and len(args) != n_args):
            want = "a list of values" if n_args is None else \
                ("a list of two values" if n_args == 2 else "a list of three values "
                                                             "[low, mode, high]")
            self.problem(sub, f"{name} takes {want}, got {S.describe(args)}")
            return None
        if name == "choice":
            vals = [kind.convert(self.cx, v, sub + (i,)) for i, v in enumerate(args)]
        elif name in ("uniform", "triangular"):
            vals = [kind.convert(self.cx, v, sub + (i,)) for i, v in enumerate(args)]
            if len(self.doc.problems) == n_before and not vals[0] < vals[-1]:
                self.problem(sub, f"{name} [low, ..., high] needs low below high")
            elif len(self.doc.problems) == n_before and name == "triangular" \
                    and not vals[0] <= vals[1] <= vals[2]:
                self.problem(sub, "triangular [low, mode, high] needs the mode between low "
                                  "and high")
        else:
            vals = [free.convert(self.cx, args[0], sub + (0,)),
                    spread.convert(self.cx, args[1], sub + (1,))]
        return out(name, vals) if len(self.doc.problems) == n_before else None


def lay_out_laps(route: tuple, laps: int) -> tuple:
    """A route run ``laps`` times: its first step (the start section), then the steps
    after it, ``laps`` times over.

    >>> lay_out_laps(("a", "b", "c", "a"), 2)
    ('a', 'b', 'c', 'a', 'b', 'c', 'a')
    """
    return route[:1] + route[1:] * laps


def lap_step(i: int, n: int) -> int:
    """The step of an ``n``-step written route that step ``i`` of its laid-out laps repeats."""
    return i if i < n else (i - 1) % (n - 1) + 1


def _either_option(kind: S.Either, datum: Any) -> S.Kind:
    for types, option in kind.options:
        if isinstance(datum, types):
            return option
    for _types, option in kind.options:
        if isinstance(option, S.Record):
            return option
    return kind.options[0][1]


# -------------------------------------------------------------- model building
class _Builder:
    """Converted, checked data -> the frozen :class:`sim.model.Scenario`."""

    def __init__(self, doc: Document, conv: dict, checker: _Checker):
        self.doc = doc
        self.c = conv
        self.checker = checker

    @staticmethod
    def wire(run: Optional[dict]) -> M.Wire:
        if not run or run.get("wire") is None:
            return M.Wire()
        kind, value = run["wire"]
        length = run.get("length") or 0.0
        if kind == "awg":
            return M.Wire(length_m=length, awg=value)
        return M.Wire(length_m=length, r_per_m_ohm=value)

    def feed(self, f: Any) -> M.Feed:
        if isinstance(f, str):
            return M.Feed(f)
        return M.Feed(f["from"], self.wire(f))

    @staticmethod
    def sense(s: Optional[dict]) -> M.Sense:
        if not s:
            return M.Sense()
        fs = s.get("full_scale")
        return M.Sense(period_s=s.get("period"), full_scale_a=fs if fs is not None else
                       float("inf"), phase=s.get("phase"))

    @staticmethod
    def trip(t: dict) -> M.Trip:
        return M.Trip(i_above_a=t["above"], t_after_s=t["after"], curve=t.get("curve"),
                      tms=float(t["tms"]))

    @staticmethod
    def thermal(t: Optional[dict]) -> Optional[M.Thermal]:
        if not t:
            return None
        return M.Thermal(i_rated_a=t["rated"], tau_s=t["tau"], law=t["law"],
                         trip_at=float(t["trip_at"]), resume_at=float(t["resume_at"]))

    @staticmethod
    def restart(r: dict) -> M.Restart:
        return M.Restart(policy=r["policy"], tries=r.get("tries"), every_s=r["every"],
                         first_s=r["first"], factor=float(r["factor"]), cap_s=r["cap"])

    def supplies(self) -> dict:
        out = {}
        for name, s in self.c["supplies"].items():
            lim = s.get("current_limit")
            out[name] = M.Supply(name=name, v_emf_v=s["voltage"], r_ohm=s["resistance"],
                                 i_limit_a=lim if lim is not None else float("inf"),
                                 on_limit=s["on_limit"], t_off_s=s["off_time"],
                                 t_limit_s=s["limit_after"])
        return out

    def boosters(self) -> dict:
        out = {}
        for name, b in self.c["boosters"].items():
            rev = b.get("reverse") or {}
            extra = {}
            if rev:
                extra = dict(sense_reverse_a=rev.get("above"), t_sense_reverse_s=rev["after"],
                             t_swap_s=rev["swap_time"], t_hold_off_s=rev["hold_off"])
            else:
                default = S.REVERSE.convert(S.Context(lambda *a: None), {}, ())
                extra = dict(sense_reverse_a=None, t_sense_reverse_s=default["after"],
                             t_swap_s=default["swap_time"], t_hold_off_s=default["hold_off"])
            out[name] = M.Booster(
                name=name, supply=b["supply"], r_out_ohm=b["output_resistance"],
                phase=M.NORMAL if b["phase"] == "normal" else M.INVERTED,
                sense=self.sense(b.get("sense")), trip=self.trip(b["trip"]),
                thermal=self.thermal(b.get("thermal")), restart=self.restart(b["restart"]),
                reverse_on_short=bool(b["reverse_on_short"]),
                v_undervoltage_v=b["undervoltage"], wire=self.wire(b.get("wire")),
                t_undervoltage_s=b["undervoltage_after"], **extra)
        return out

    def breakers(self) -> dict:
        return {name: M.Breaker(name=name, feed=self.feed(b["feed"]),
                                r_on_ohm=b["on_resistance"], sense=self.sense(b.get("sense")),
                                trip=self.trip(b["trip"]),
                                thermal=self.thermal(b.get("thermal")),
                                restart=self.restart(b["restart"]))
                for name, b in self.c["breakers"].items()}

    def reversers(self) -> dict:
        out = {}
        for name, r in self.c["reversers"].items():
            s = r["sense"]
            out[name] = M.Reverser(
                name=name, feed=self.feed(r["feed"]), sense_above_a=s["above"],
                t_sense_s=s["after"], t_swap_s=r["swap_time"], t_dead_s=r["dead_time"],
                t_hold_off_s=r["hold_off"], r_on_ohm=r["on_resistance"], sense=self.sense(s),
                trip=self.trip(r["trip"]), restart=self.restart(r["restart"]))
        return out

    def track(self) -> M.Track:
        t = self.c["track"]
        rail = t["rail"]
        if rail.get("resistance") is not None:
            rail_m = M.Rail(material=None, area_m2=None, r_per_m_ohm=rail["resistance"])
        else:
            rail_m = M.Rail(material=rail.get("material") or "nickel-silver",
                            area_m2=rail.get("area") if rail.get("area") is not None
                            else 1.9e-6)
        sections = {}
        for name, s in t["sections"].items():
            feeders = tuple(M.Feeder(at_m=f["at"], wire=self.wire(f))
                            for f in self.checker.feeders.get(name, ()))
            sections[name] = M.Section(name=name, length_m=s["length"], feed=s.get("feed"),
                                       feeders=feeders,
                                       leads=None if s["leads"] is None else
                                       M.NORMAL if s["leads"] == "normal" else M.INVERTED)
        joints = []
        for i, j in enumerate(t["joints"]):
            ends = tuple(M.End(*e.rsplit(".", 1)) for e in j["ends"])
            joints.append(M.Joint(index=i, ends=ends, gaps=j["gaps"],
                                  rail=j.get("rail") or "left"))
        return M.Track(rail=rail_m, r_wheel_contact_ohm=t["wheel_contact"],
                       sections=MappingProxyType(sections), joints=tuple(joints),
                       gap_width_m=t["gap_width"], contact_length_m=t["contact_length"])

    def vehicles(self) -> dict:
        out = {}
        for name, v in self.c["rolling_stock"].items():
            axles = tuple(v["axles"])
            pickup = v["pickup"]
            if pickup == "all":
                pick = tuple(range(len(axles)))
            elif pickup == "none":
                pick = ()
            else:
                pick = tuple(sorted(int(k) for k in pickup))
            out[name] = M.Vehicle(name=name, length_m=v["length"], axles_m=axles, pickup=pick,
                                  draw_a=v["draw"], t_keep_alive_s=v["keep_alive"],
                                  r_join_ohm=v["resistance"],
                                  metal_wheels=v["wheels"] == "metal",
                                  c_keep_alive_f=v["capacitance"],
                                  r_charge_ohm=v["charge_resistance"])
        return out

    def trains(self) -> dict:
        out = {}
        for name, t in self.c["trains"].items():
            consist: list[str] = []
            for item in t["consist"]:
                m = _CONSIST_RE.fullmatch(item)
                consist.extend([m.group("name")] * int(m.group("n") or 1))
            written = tuple(step if isinstance(step, str) else
                            M.Reversal(t_wait_s=step["reverse_after"]) for step in t["route"])
            laps = int(t["laps"])
            st = t["start"]
            out[name] = M.Train(name=name, consist=tuple(consist),
                                start=M.Start(st["section"], st["at"], st["heading"]),
                                route=lay_out_laps(written, laps), speed_mps=t["speed"],
                                depart_s=t["depart"], laps=laps)
        return out

    def locations(self) -> dict:
        """Every key path's location; a laid-out lap's steps at the steps they repeat."""
        locs = dict(self.doc.locations)
        for name, t in self.c["trains"].items():
            n, laps = len(t["route"]), int(t["laps"])
            for i in range(n, 1 + (n - 1) * laps):
                written = locs.get(("trains", name, "route", lap_step(i, n)))
                if written is not None:
                    locs[("trains", name, "route", i)] = written
        return locs

    def faults(self) -> tuple:
        out = []
        for f in self.c["faults"]:
            if f.get("short") is not None:
                r = f.get("resistance")
                out.append(M.Fault(at_s=f["at"], kind="short", section=f["short"]["section"],
                                   at_m=f["short"]["at"],
                                   r_ohm=r if r is not None else DEFAULT_SHORT_R_OHM,
                                   lasts_s=f.get("lasts")))
            else:
                out.append(M.Fault(at_s=f["at"], kind="open", section=f["open"]["section"],
                                   feeder=int(f["open"]["feeder"])))
        return tuple(out)

    def build(self, sha: str) -> M.Scenario:
        c = self.c
        return M.Scenario(
            format=c["format"], title=c["title"], seed=int(c["seed"]),
            duration_s=c["duration"],
            supplies=MappingProxyType(self.supplies()),
            boosters=MappingProxyType(self.boosters()),
            breakers=MappingProxyType(self.breakers()),
            reversers=MappingProxyType(self.reversers()),
            track=self.track(),
            rolling_stock=MappingProxyType(self.vehicles()),
            trains=MappingProxyType(self.trains()),
            faults=self.faults(),
            actions=tuple(M.Action(at_s=a["at"], kind="reset", device=a["reset"])
                          for a in c["actions"]),
            vary=MappingProxyType(dict(self.checker.vary)),
            samples=int(c["samples"]),
            t_margin_required_s=c["require"]["margin"],
            path=self.doc.file, sha256=sha,
            locations=MappingProxyType(self.locations()), scale=c["scale"])

