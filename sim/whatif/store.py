"""The sweep store: one SQLite file per sweep, resumable after a kill at any moment.

Layout (format ``railfault-sweep-store/1``)::

    meta(key TEXT PRIMARY KEY, value TEXT)      -- written once, when the store is made:
        format, scenario_path, scenario_sha256, scenario_text, settings (JSON)
    samples(idx INTEGER PRIMARY KEY,            -- one row per finished sample
            inputs TEXT, verdict TEXT, gaps TEXT, trips TEXT, dark_s TEXT, invalid TEXT,
            crossed TEXT)

``inputs``, ``gaps``, ``trips``, ``dark_s`` and ``crossed`` are JSON (``gaps``: per
gap the least margin in s, whether a race was lost or failed, and the episode
count; ``crossed``: the gaps a train crossed, with a short or not). A store made
before ``crossed`` existed gets the column (empty) when it is opened to resume,
and is read without it.
Floats are written by Python's ``json`` (the shortest text that reads back to
the same float), so a summary made from the store equals one made in memory.

Durability: the database runs in write-ahead-log mode (``PRAGMA
journal_mode=WAL``) and each batch of finished samples is written in one
transaction. A process killed at any moment (SIGKILL) leaves either the whole
batch or none of it (SQLite's atomic commit, https://sqlite.org/atomiccommit.html,
https://sqlite.org/wal.html); ``synchronous=NORMAL`` keeps that guarantee for a
killed process (only a power loss may drop the last batches, never corrupt the
file). ``--resume`` runs the indices that have no row; the primary key makes a
second row of an index impossible.

A store made from another scenario text (another SHA-256), or with other sweep
settings (seed, design, samples, the ``vary`` block), is refused with a message
that says which. :meth:`Store.read` opens an existing store only to read it
(the report's sweep section), refusing a file that is not a store.
"""
from __future__ import annotations

import json
import os
import pathlib
import sqlite3
from typing import Iterable, Optional

from sim.errors import Problem, ScenarioError

__all__ = ["STORE_FORMAT", "Store", "StoreError"]

STORE_FORMAT = "railfault-sweep-store/1"

_SCHEMA = """
CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS samples (
    idx INTEGER PRIMARY KEY,
    inputs TEXT NOT NULL,
    verdict TEXT,
    gaps TEXT,
    trips TEXT,
    dark_s TEXT,
    invalid TEXT,
    crossed TEXT
);
"""


def _columns(conn: sqlite3.Connection) -> set:
    return {r[1] for r in conn.execute("PRAGMA table_info(samples)")}


class StoreError(ScenarioError):
    """A store that cannot be used for this sweep (exit 2); the message says why."""

    def __init__(self, path: str, message: str):
        super().__init__([Problem(str(path), "", message)])


def _dumps(x) -> str:
    return json.dumps(x, separators=(",", ":"), allow_nan=False)


class Store:
    """An open sweep store. Use :meth:`open`."""

    def __init__(self, path: str, conn: sqlite3.Connection):
        self.path = path
        self.conn = conn

    # ------------------------------------------------------------- opening
    @classmethod
    def open(cls, path: str, scenario_text: str, scenario_sha256: str, scenario_path: str,
             settings: dict, resume: bool) -> "Store":
        """Open or make the store for this sweep.

        Raises
        ------
        StoreError
            Not a store; made from another scenario text or other settings; or
            holding samples already while ``resume`` is false.
        """
        path = os.fspath(path)
        existed = os.path.exists(path) and os.path.getsize(path) > 0
        try:
            conn = sqlite3.connect(path, timeout=30.0, isolation_level=None)
            conn.execute("PRAGMA journal_mode=WAL")
            conn.execute("PRAGMA synchronous=NORMAL")
            tables = {r[0] for r in conn.execute(
                "SELECT name FROM sqlite_master WHERE type='table'")}
        except sqlite3.DatabaseError as exc:
            raise StoreError(path, f"not a railfault sweep store (SQLite: {exc})") from None
        if existed and tables and tables != {"meta", "samples"}:
            conn.close()
            raise StoreError(path, "not a railfault sweep store (other tables)")
        conn.executescript(_SCHEMA)
        if "crossed" not in _columns(conn):            # a store of an older release
            conn.execute("ALTER TABLE samples ADD COLUMN crossed TEXT")
        store = cls(path, conn)
        meta = store.meta()
        if not meta:
            with conn:
                conn.execute("BEGIN IMMEDIATE")
                conn.executemany("INSERT INTO meta(key, value) VALUES (?, ?)", [
                    ("format", STORE_FORMAT), ("scenario_path", scenario_path),
                    ("scenario_sha256", scenario_sha256), ("scenario_text", scenario_text),
                    ("settings", _dumps(settings))])
            return store
        store._check(meta, scenario_sha256, settings, resume)
        return store

    @classmethod
    def read(cls, path: str) -> "Store":
        """Open a store that ``railfault sweep`` made, to read it (``railfault report
        --sweep``): never made here, nothing written to it.

        Raises
        ------
        StoreError
            No such file, or not a railfault sweep store.
        """
        path = os.fspath(path)
        if not os.path.isfile(path):
            raise StoreError(path, "no such sweep store (make one with: railfault sweep "
                                   "FILE --store FILE.sqlite)")
        uri = pathlib.Path(path).resolve().as_uri() + "?mode=rw"
        try:
            conn = sqlite3.connect(uri, uri=True, timeout=30.0, isolation_level=None)
            tables = {r[0] for r in conn.execute(
                "SELECT name FROM sqlite_master WHERE type='table'")}
        except sqlite3.DatabaseError as exc:
            raise StoreError(path, f"not a railfault sweep store (SQLite: {exc})") from None
        store = cls(path, conn)
        if tables != {"meta", "samples"}:
            store.close()
            raise StoreError(path, "not a railfault sweep store (its tables are not a "
                                   "store's)")
        store._check_format(store.meta())
        return store

    def _check_format(self, meta: dict) -> None:
        if meta.get("format") != STORE_FORMAT:
            self.close()
            raise StoreError(self.path, f"not a railfault sweep store (format "
                                        f"{meta.get('format')!r})")

    def check_scenario(self, sha: str, remedy: str) -> None:
        """Refuse (close and raise :class:`StoreError`) a store made from another
        scenario text than the one whose SHA-256 is ``sha``; ``remedy`` ends the
        message (what the user can do)."""
        meta = self.meta()
        if meta.get("scenario_sha256") != sha:
            self.close()
            raise StoreError(self.path, f"this store was made from another scenario text "
                                        f"({meta.get('scenario_path')}, SHA-256 "
                                        f"{str(meta.get('scenario_sha256'))[:12]}...; this "
                                        f"file's is {sha[:12]}...): {remedy}")

    def _check(self, meta: dict, sha: str, settings: dict, resume: bool) -> None:
        self._check_format(meta)
        self.check_scenario(sha, "give another --store, or remove this one to start again")
        old = json.loads(meta.get("settings", "{}"))
        if old != json.loads(_dumps(settings)):
            diff = sorted(k for k in set(old) | set(settings) if old.get(k) != settings.get(k))
            self.close()
            raise StoreError(self.path, f"this store was made with other sweep settings "
                                        f"({', '.join(diff)} differ): give another --store, "
                                        f"or the same settings to resume")
        n = self.count()
        if n and not resume:
            self.close()
            raise StoreError(self.path, f"this store already holds {n} samples of this sweep: "
                                        f"add --resume to run the rest, or give another "
                                        f"--store")

    # ------------------------------------------------------------- reading
    def meta(self) -> dict:
        return dict(self.conn.execute("SELECT key, value FROM meta"))

    def count(self) -> int:
        return int(self.conn.execute("SELECT COUNT(*) FROM samples").fetchone()[0])

    def done(self) -> set[int]:
        """The sample indices that have a row."""
        return {r[0] for r in self.conn.execute("SELECT idx FROM samples")}

    def records(self) -> list[dict]:
        """Every row as a sample record, by index."""
        out = []
        crossed_col = "crossed" if "crossed" in _columns(self.conn) else "NULL"
        for idx, inputs, verdict, gaps, trips, dark, invalid, crossed in self.conn.execute(
                f"SELECT idx, inputs, verdict, gaps, trips, dark_s, invalid, {crossed_col} "
                f"FROM samples ORDER BY idx"):
            rec = {"i": idx, "inputs": json.loads(inputs)}
            if invalid is not None:
                rec["invalid"] = invalid
            else:
                rec.update(verdict=verdict, gaps=json.loads(gaps), trips=json.loads(trips),
                           dark_s=json.loads(dark))
                if crossed is not None:
                    rec["crossed"] = json.loads(crossed)
            out.append(rec)
        return out

    def integrity(self) -> str:
        """``PRAGMA integrity_check``: ``"ok"`` for a sound file."""
        return str(self.conn.execute("PRAGMA integrity_check").fetchone()[0])

    # ------------------------------------------------------------- writing
    def write(self, records: Iterable[dict]) -> None:
        """Write a batch of sample records in one transaction."""
        rows = []
        for r in records:
            if "invalid" in r:
                rows.append((r["i"], _dumps(r["inputs"]), None, None, None, None, r["invalid"],
                             None))
            else:
                rows.append((r["i"], _dumps(r["inputs"]), r["verdict"], _dumps(r["gaps"]),
                             _dumps(r["trips"]), _dumps(r["dark_s"]), None,
                             _dumps(r["crossed"]) if "crossed" in r else None))
        with self.conn:
            self.conn.execute("BEGIN IMMEDIATE")
            self.conn.executemany("INSERT INTO samples(idx, inputs, verdict, gaps, trips, "
                                  "dark_s, invalid, crossed) VALUES (?, ?, ?, ?, ?, ?, ?, ?)",
                                  rows)

    def close(self) -> None:
        self.conn.close()

    def __enter__(self) -> "Store":
        return self

    def __exit__(self, *exc) -> Optional[bool]:
        self.close()
        return None
