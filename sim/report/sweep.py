"""The sweep a report shows: a store of ``railfault sweep`` read for one scenario.

:func:`read_store` opens the store (:meth:`sim.whatif.store.Store.read`), refuses
one made from another scenario text (the SHA-256 of the text it was made from is
kept in the store) or one without a finished sample, and summarises its records
with the sweep's own :func:`sim.whatif.summary.summarize`, so the report's
numbers are those of ``railfault sweep --json`` on the same store. Nothing is
run again and nothing is written to the store.
"""
from __future__ import annotations

import json
import os
from dataclasses import dataclass

__all__ = ["SweepData", "read_store"]


@dataclass(frozen=True)
class SweepData:
    """A sweep store read for a scenario.

    ``summary`` is the ``railfault-sweep/1`` object; ``records`` every finished
    sample's record by index (:meth:`sim.whatif.store.Store.records`);
    ``settings`` the sweep's settings kept in the store; ``path`` the store.
    """

    path: str
    settings: dict
    records: list
    summary: dict

    @property
    def expected(self) -> int:
        """How many samples the sweep was to run."""
        return int(self.settings["n"])

    @property
    def complete(self) -> bool:
        return len(self.records) >= self.expected


def read_store(path: str, scn) -> SweepData:
    """Read the sweep store at ``path`` for the scenario ``scn``.

    Raises
    ------
    sim.whatif.store.StoreError
        (exit 2) no such file, not a sweep store, made from another scenario
        text, or holding no finished sample.
    """
    from sim.whatif.store import Store, StoreError
    from sim.whatif.summary import summarize

    shown = os.fspath(path)
    st = Store.read(shown)
    st.check_scenario(scn.sha256, f"it is not the sweep of {scn.path}; run railfault "
                                  f"sweep {scn.path} --store FILE.sqlite to make one")
    try:
        settings = json.loads(st.meta()["settings"])
        records = st.records()
    finally:
        st.close()
    if not records:
        raise StoreError(shown, f"this store holds no finished sample yet: run railfault "
                                f"sweep {scn.path} --store {shown} --resume")
    return SweepData(shown, settings, records, summarize(scn, settings, records))
