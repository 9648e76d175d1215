"""Read a scenario file into plain data with a (line, column) for every key path.

The file is checked as bytes first (size, UTF-8), then composed into a YAML node
tree with PyYAML's *safe* loader and walked here: nothing is ever constructed from
a tag. Only the core tags of YAML (string, integer, float, boolean, null, mapping,
sequence) are accepted; any other tag (``!!python/object/apply:...``, ``!custom``,
``!!binary``, ``!!set``, merge keys ``<<``) is a located problem. Dates and times,
which YAML 1.1 would turn into timestamps, stay text.

Key paths are tuples of mapping keys (``str``) and list indices (``int``); a mapping
entry is located at its key, a list item at the item (lines and columns 1-based).
"""
from __future__ import annotations

import os
import stat
from dataclasses import dataclass, field
from typing import Any, Optional

import yaml

from sim.errors import Problem

__all__ = ["MAX_FILE_BYTES", "MAX_DEPTH", "MAX_NODES", "MAX_EXPANDED_CHARS", "Document", "read_bytes", "decode",
           "parse_text", "dotted"]

#: Largest scenario file read, in bytes (2 MiB = 2 * 1024 * 1024).
MAX_FILE_BYTES = 2 * 1024 * 1024
#: Deepest nesting of mappings and lists accepted.
MAX_DEPTH = 40
#: Most nodes visited (aliases count every time they are expanded).
MAX_NODES = 200_000
#: Most characters of text in all values and keys once aliases are expanded: no more
#: than the largest file holds written out. Without it, one long text used through
#: an alias thousands of times costs what gigabytes of file would (each use is
#: checked, matched and quoted on its own).
MAX_EXPANDED_CHARS = MAX_FILE_BYTES

_CORE = "tag:yaml.org,2002:"
_SCALAR_TAGS = {_CORE + t for t in ("str", "int", "float", "bool", "null", "timestamp")}
_MAP_TAG = _CORE + "map"
_SEQ_TAG = _CORE + "seq"


def dotted(path: tuple) -> str:
    """``("trains", "x", "route", 3)`` -> ``"trains.x.route[3]"``."""
    out = ""
    for p in path:
        if isinstance(p, int):
            out += f"[{p}]"
        else:
            out += ("." if out else "") + str(p)
    return out


@dataclass
class Document:
    """A parsed file: its data, the location of every key path, and the problems."""

    file: str
    data: Any = None
    locations: dict = field(default_factory=dict)
    problems: list = field(default_factory=list)
    #: The key path being checked (for locating an unexpected internal error).
    current: tuple = ()

    def problem(self, path: tuple, message: str, mark: Optional[tuple[int, int]] = None) -> None:
        """Record a problem at ``path`` (located by ``mark`` or by the path's location)."""
        loc = mark if mark is not None else self.locate(path)
        line, col = loc if loc else (None, None)
        self.problems.append(Problem(self.file, dotted(path), message, line, col))

    def locate(self, path: tuple) -> Optional[tuple[int, int]]:
        """The location of ``path``, or of its nearest located ancestor."""
        p = tuple(path)
        while p:
            if p in self.locations:
                return self.locations[p]
            p = p[:-1]
        return self.locations.get((), None)


#: What a path names when it is not a regular file, by ``stat`` file type.
_NOT_A_FILE = ((stat.S_ISDIR, "a directory"), (stat.S_ISFIFO, "a named pipe (FIFO)"),
               (stat.S_ISCHR, "a character device"), (stat.S_ISBLK, "a block device"),
               (stat.S_ISSOCK, "a socket"))


def read_bytes(path: str | os.PathLike, doc: Document) -> Optional[bytes]:
    """The file's bytes, or ``None`` with a problem (missing, unreadable, too large,
    not a regular file).

    The file is opened without blocking and checked on the open descriptor
    (``fstat``) before anything is read: a named pipe, a device or a socket would
    block the reader or never end, so only a regular file is read.
    """
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0) \
        | getattr(os, "O_BINARY", 0)
    try:
        fd = os.open(path, flags)
    except FileNotFoundError:
        doc.problem((), "no such file")
        return None
    except IsADirectoryError:
        doc.problem((), "is a directory, not a scenario file")
        return None
    except OSError as exc:
        doc.problem((), f"cannot read the file: {exc.strerror or exc}")
        return None
    except ValueError:  # a NUL character in the name
        doc.problem((), "not a usable file name (it holds a NUL character)")
        return None
    try:
        info = os.fstat(fd)
        if not stat.S_ISREG(info.st_mode):
            what = next((word for test, word in _NOT_A_FILE if test(info.st_mode)),
                        "not a regular file")
            doc.problem((), f"is {what}, not a regular file: a scenario is read from a "
                            f"file on disk")
            return None
        if info.st_size > MAX_FILE_BYTES:
            doc.problem((), f"the file is {info.st_size} bytes, larger than the limit of "
                            f"{MAX_FILE_BYTES} bytes (2 MiB)")
            return None
        chunks, size = [], 0
        while size <= MAX_FILE_BYTES:
            chunk = os.read(fd, MAX_FILE_BYTES + 1 - size)
            if not chunk:
                break
            chunks.append(chunk)
            size += len(chunk)
        raw = b"".join(chunks)
    except OSError as exc:
        doc.problem((), f"cannot read the file: {exc.strerror or exc}")
        return None
    finally:
        os.close(fd)
    if len(raw) > MAX_FILE_BYTES:
        doc.problem((), f"the file is larger than the limit of {MAX_FILE_BYTES} bytes (2 MiB)")
        return None
    return raw


def decode(raw: bytes, doc: Document) -> Optional[str]:
    """UTF-8 text of ``raw`` (a leading byte-order mark is dropped), or ``None``."""
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = raw.count(b"\n", 0, exc.start) + 1
        col = exc.start - (raw.rfind(b"\n", 0, exc.start) + 1) + 1
        doc.problem((), f"the file is not UTF-8 text: byte 0x{raw[exc.start]:02x} at byte "
                        f"offset {exc.start} cannot be decoded", (line, col))
        return None
    return text[1:] if text.startswith("\ufeff") else text


#: The safe loader (its libyaml build when there is one, for speed): used only to
#: compose and resolve; its constructor is called for core scalars only.
_Loader = getattr(yaml, "CSafeLoader", yaml.SafeLoader)


def parse_text(text: str, doc: Document) -> None:
    """Compose ``text`` and fill ``doc.data`` and ``doc.locations``."""
    if len(text.encode("utf-8", "surrogatepass")) > MAX_FILE_BYTES:
        doc.problem((), f"the text is larger than the limit of {MAX_FILE_BYTES} bytes (2 MiB)")
        return
    try:
        if not _shape_ok(text, doc):
            return
        loader = _Loader(text)
        try:
            node = loader.get_single_node()
        finally:
            loader.dispose()
    except yaml.reader.ReaderError as exc:
        line = text.count("\n", 0, exc.position) + 1
        col = exc.position - (text.rfind("\n", 0, exc.position) + 1) + 1
        code = exc.character if isinstance(exc.character, int) else ord(exc.character)
        doc.problem((), f"not usable YAML: the character U+{code:04X} is not allowed in a "
                        f"YAML file", (line, col))
        return
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        where = (mark.line + 1, mark.column + 1) if mark is not None else None
        what = exc.problem or exc.context or "cannot be read"
        if "nesting depth" in what:  # newer PyYAML scanners stop deep nesting themselves
            doc.problem((), f"nested deeper than {MAX_DEPTH} levels", where)
            return
        extra = f" ({exc.context})" if exc.context and exc.problem else ""
        doc.problem((), f"not valid YAML: {what}{extra}", where)
        return
    except yaml.YAMLError as exc:
        doc.problem((), f"not valid YAML: {exc}")
        return
    if node is None:
        doc.problem((), "the file is empty: a scenario starts with `format: railfault/1`",
                    (1, 1))
        return
    walker = _Walker(doc, loader)
    # the document itself is located at its first value: a key missing at the top
    # level is reported there
    doc.locations[()] = walker._mark(node)
    doc.data = walker.walk(node, (), 0)


def _shape_ok(text: str, doc: Document) -> bool:
    """Stream the parser's events (no recursion, nothing built) and refuse, before the
    composer sees the text: nesting deeper than :data:`MAX_DEPTH` (the composer
    recurses), and more than :data:`MAX_NODES` values or :data:`MAX_EXPANDED_CHARS`
    characters once every alias is expanded.

    The expanded size of each anchored value is known when its last event has
    passed, so an alias adds it in one step: a file of a million aliases is refused
    at the alias that crosses a bound, after reading no further.
    """
    events = _Loader(text)
    try:
        depth = 0
        nodes = chars = aliases = 0
        sizes: dict[str, tuple[int, int]] = {}   # anchor -> expanded (values, characters)
        open_: list[tuple[Optional[str], int, int]] = []   # (anchor, nodes, chars) at start
        while events.check_event():
            ev = events.get_event()
            if isinstance(ev, (yaml.MappingStartEvent, yaml.SequenceStartEvent)):
                depth += 1
                if depth > MAX_DEPTH:
                    mark = ev.start_mark
                    doc.problem((), f"nested deeper than {MAX_DEPTH} levels",
                                (mark.line + 1, mark.column + 1))
                    return False
                open_.append((ev.anchor, nodes, chars))
                nodes += 1
            elif isinstance(ev, (yaml.MappingEndEvent, yaml.SequenceEndEvent)):
                depth -= 1
                anchor, n0, c0 = open_.pop()
                if anchor is not None:
                    sizes[anchor] = (nodes - n0, chars - c0)
            elif isinstance(ev, yaml.ScalarEvent):
                nodes += 1
                chars += len(ev.value)
                if ev.anchor is not None:
                    sizes[ev.anchor] = (1, len(ev.value))
            elif isinstance(ev, yaml.AliasEvent):
                n, c = sizes.get(ev.anchor, (1, 0))  # unknown or still open: the composer says
                aliases += 1
                nodes += n
                chars += c
            else:
                continue
            if nodes > MAX_NODES or chars > MAX_EXPANDED_CHARS:
                mark = ev.start_mark
                what = (f"too many values (more than {MAX_NODES}" if nodes > MAX_NODES else
                        f"too much text (more than {MAX_EXPANDED_CHARS} characters")
                how = " once every alias is expanded): use fewer aliases" if aliases else ")"
                doc.problem((), f"{what}{how}", (mark.line + 1, mark.column + 1))
                return False
        return True
    finally:
        events.dispose()


class _Walker:
    def __init__(self, doc: Document, loader: yaml.SafeLoader):
        self.doc = doc
        self.loader = loader
        self.active: set[int] = set()

    def _mark(self, node) -> tuple[int, int]:
        return node.start_mark.line + 1, node.start_mark.column + 1

    def walk(self, node, path: tuple, depth: int) -> Any:
        if depth > MAX_DEPTH:
            self.doc.problem(path, f"nested deeper than {MAX_DEPTH} levels", self._mark(node))
            return None
        if id(node) in self.active:
            self.doc.problem(path, "an alias refers to a value that contains it", self._mark(node))
            return None
        tag = node.tag
        if isinstance(node, yaml.ScalarNode):
            if tag not in _SCALAR_TAGS:
                return self._bad_tag(node, path)
            return self._scalar(node, path)
        if isinstance(node, yaml.MappingNode):
            if tag != _MAP_TAG:
                return self._bad_tag(node, path)
            self.active.add(id(node))
            try:
                return self._mapping(node, path, depth)
            finally:
                self.active.discard(id(node))
        if isinstance(node, yaml.SequenceNode):
            if tag != _SEQ_TAG:
                return self._bad_tag(node, path)
            self.active.add(id(node))
            try:
                out = []
                for i, item in enumerate(node.value):
                    self.doc.locations.setdefault(path + (i,), self._mark(item))
                    out.append(self.walk(item, path + (i,), depth + 1))
                return out
            finally:
                self.active.discard(id(node))
        self.doc.problem(path, "a YAML value of an unknown kind", self._mark(node))
        return None

    def _bad_tag(self, node, path: tuple) -> None:
        tag = node.tag
        shown = "!!" + tag[len(_CORE):] if tag.startswith(_CORE) else tag
        self.doc.problem(path, f"the tag {shown} is not allowed: only plain YAML values "
                               f"(text, numbers, true/false, null, mappings, lists) are read, "
                               f"and no tag is ever constructed", self._mark(node))
        return None

    def _scalar(self, node, path: tuple) -> Any:
        tag = node.tag
        if tag == _CORE + "str" or tag == _CORE + "timestamp":
            return str(node.value)
        if tag == _CORE + "null":
            return None
        if tag == _CORE + "bool":
            return self.loader.construct_yaml_bool(node)
        if tag == _CORE + "int":
            # a core tag on text that is no number (`!!int abc`), or an integer of more
            # digits than Python converts: mistakes of the file, located
            try:
                return self.loader.construct_yaml_int(node)
            except (ValueError, TypeError):
                self.doc.problem(path, f'"{node.value}" is not an integer', self._mark(node))
                return None
        try:
            return self.loader.construct_yaml_float(node)
        except (ValueError, TypeError):
            self.doc.problem(path, f'"{node.value}" is not a number', self._mark(node))
            return None

    def _mapping(self, node, path: tuple, depth: int) -> dict:
        out: dict = {}
        for key_node, value_node in node.value:
            mark = self._mark(key_node)
            if key_node.tag == _CORE + "merge":
                self.doc.problem(path, "merge keys (<<) are not supported: write the "
                                       "values out", mark)
                continue
            if not isinstance(key_node, yaml.ScalarNode) or key_node.tag not in _SCALAR_TAGS:
                if isinstance(key_node, yaml.ScalarNode):
                    self._bad_tag(key_node, path)
                else:
                    self.doc.problem(path, "a key must be a plain name, not a mapping or "
                                           "a list", mark)
                continue
            key = key_node.value
            if key_node.tag != _CORE + "str":
                # `1: x`, `true: x`, `null: x`: keep the text as written.
                key = str(key)
            sub = path + (key,)
            if key in out:
                first = self.doc.locations.get(sub)
                where = f" (first at line {first[0]})" if first else ""
                self.doc.problem(sub, f"duplicate key '{key}'{where}", mark)
                continue
            self.doc.locations[sub] = mark
            out[key] = self.walk(value_node, sub, depth + 1)
        return out
