"""The ``cases:`` key: named what-if variants of a scenario, each checked like a file.

A case maps key paths (``reversers.loop-ctl.swap_time``, ``faults``,
``trains.night-freight``) to the values that replace them, written as in the
file. :func:`build_cases` puts each case's values into a copy of the file's
plain data at their paths (creating an optional mapping that the file left
out, or a new name under a mapping of names: a train the base does not run)
and runs the loader's whole pipeline on it, so that every value is checked and
converted like the key it replaces and the file's cross-checks (references,
positions, the ``vary`` paths) hold for the variant too.

Problems are located in the case: a problem inside a replaced value is reported
at ``cases.NAME.KEY...`` with the line of the case's value; a problem elsewhere
that the case causes (a route naming a section the case removed) is reported at
its own place, its message starting with ``in case 'NAME':``.

Finding codes: none (a bad case is a :class:`sim.errors.ScenarioError`, exit 2).
"""
from __future__ import annotations

import copy
from types import MappingProxyType
from typing import Any, Callable, Mapping, Optional

from sim.errors import Problem, ScenarioError
from sim.whatif.paths import PathError, dotted, kind_at, parse_key_path
from sim.yamlnodes import Document

__all__ = ["build_cases"]

#: Top-level keys a case may not replace.
_FIXED = ("format", "cases")


def _join(key: str, rest: tuple) -> str:
    """``"faults"`` and ``(0, "at")`` -> ``"faults[0].at"``."""
    if not rest:
        return key
    tail = dotted(rest)
    return key + (tail if isinstance(rest[0], int) else "." + tail)


class _CaseDocument(Document):
    """The document of one case: locations moved into the case, problems relocated."""

    def __init__(self, base: Document, name: str, targets: list[tuple[tuple, str]],
                 created: dict):
        super().__init__(base.file)
        self.name = name
        self.targets = targets
        self.created = created          # a mapping the case made -> the case's key
        locs = dict(base.locations)
        for target, _key in targets:
            for p in [p for p in locs if p[:len(target)] == target]:
                del locs[p]
        for target, key in targets:
            head = ("cases", name, key)
            for p, loc in base.locations.items():
                if p[:3] == head:
                    locs[target + p[3:]] = loc
        self.locations = locs

    def problem(self, path: tuple, message: str, mark: Optional[tuple[int, int]] = None) -> None:
        path = tuple(path)
        loc = mark if mark is not None else self.locate(path)
        line, col = loc if loc else (None, None)
        for target, key in self.targets:
            if path[:len(target)] == target:
                shown = f"cases.{self.name}.{_join(key, path[len(target):])}"
                self.problems.append(Problem(self.file, shown, message, line, col))
                return
        if path in self.created:
            key = self.created[path]
            loc = self.locations.get(("cases", self.name, key))
            line, col = loc if loc else (line, col)
            self.problems.append(Problem(self.file, f"cases.{self.name}.{key}",
                                         f"{message} (in '{dotted(path)}', which this case "
                                         f"adds)", line, col))
            return
        self.problems.append(Problem(self.file, dotted(path),
                                     f"in case '{self.name}': {message}", line, col))


def _put(data: dict, path: tuple, value: Any, created: list) -> Optional[str]:
    """Set ``value`` at ``path`` in ``data``, making missing mappings (their paths go to
    ``created``); an error text or ``None``."""
    cur: Any = data
    for i, seg in enumerate(path[:-1]):
        if isinstance(cur, dict):
            nxt = cur.get(seg)
            if nxt is None:
                nxt = cur[seg] = {}
                created.append(path[:i + 1])
        elif isinstance(cur, list) and isinstance(seg, int) and seg < len(cur):
            nxt = cur[seg]
        else:
            return f"'{dotted(path[:i + 1])}' is not in this file"
        cur = nxt
    last = path[-1]
    if isinstance(cur, dict) and isinstance(last, str):
        cur[last] = value
    elif isinstance(cur, list) and isinstance(last, int) and last < len(cur):
        cur[last] = value
    else:
        return f"'{dotted(path)}' is not in this file"
    return None


def build_cases(doc: Document, data: dict,
                pipeline: Callable[[dict, Document], Any]) -> Mapping[str, Any]:
    """Every case of ``data["cases"]`` as a whole validated scenario.

    Parameters
    ----------
    doc
        The file's document (its locations; its problems are not touched).
    data
        The file's plain data; ``data["cases"]`` has passed
        :class:`sim.schema.CaseMap` (names, non-empty mappings).
    pipeline
        ``pipeline(data, document) -> Scenario``: the loader's conversion, checks
        and build, raising :class:`~sim.errors.ScenarioError` with the problems
        it put in ``document``.

    Returns
    -------
    Mapping[str, sim.model.Scenario]
        Read-only, in the file's order; each case has no cases of its own.

    Raises
    ------
    ScenarioError
        Every problem of every case, located as the module docstring says.
    """
    base = {k: v for k, v in data.items() if k != "cases"}
    problems: list[Problem] = []
    out: dict[str, Any] = {}
    for name, spec in data["cases"].items():
        bad = Document(doc.file, locations=doc.locations)
        merged = copy.deepcopy(base)
        targets: list[tuple[tuple, str]] = []
        created: dict = {}
        for key, value in spec.items():
            at = ("cases", name, key)
            path = parse_key_path(key)
            if path is None:
                bad.problem(at, f"'{key}' is not a key path like reversers.x.swap_time, "
                                f"track.sections.main.feeders[0].at or faults")
                continue
            if path[0] in _FIXED:
                bad.problem(at, f"a case cannot change '{path[0]}'")
                continue
            clash = [k for t, k in targets if t[:len(path)] == path or path[:len(t)] == t]
            if clash:
                bad.problem(at, f"'{key}' overlaps '{clash[0]}' of the same case: give one "
                                f"of them")
                continue
            try:
                kind_at(path, base)
            except PathError as exc:
                bad.problem(at, str(exc))
                continue
            made: list = []
            err = _put(merged, path, copy.deepcopy(value), made)
            if err:
                bad.problem(at, err)
                continue
            targets.append((path, key))
            created.update((p, key) for p in made if p not in created)
        problems.extend(bad.problems)
        sub = _CaseDocument(doc, name, targets, created)
        try:
            scn = pipeline(merged, sub)
        except ScenarioError:
            problems.extend(sub.problems)
            continue
        if not bad.problems:
            out[name] = scn
    if problems:
        raise ScenarioError(sorted(problems, key=lambda p: (p.line is None, p.line or 0,
                                                            p.column or 0)))
    return MappingProxyType(out)
