"""The episodes table and the wiring sheet hold the JSON results' fields.

Check values: the ``railfault-result/1`` episodes (``devices``, ``tripped``,
``i2t_a2s``, ``paths_a``, ``note``, ``acted``) and the ``railfault-check/1``
``wiring`` rows (scenarios/README.md, "Results"), with hand derivations from
the files' headers written beside the values.
"""
from __future__ import annotations

import csv
import io
import json
from pathlib import Path

from markupsafe import escape

from sim.report.output import files_of
from sim.report.page import glue_units
from tests.report_helpers import report_of

ROOT = Path(__file__).resolve().parent.parent
RUN = ROOT / "tests" / "scenarios" / "run"


def _rows(table) -> list[dict]:
    return list(csv.DictReader(io.StringIO(table.csv_text())))


def _f(text):
    return None if text == "" else float(text)


def _dict(text):
    return json.loads(text) if text else {}


def test_a_dropout_names_its_supply_and_every_field_is_the_jsons():
    # stop-on-bridge.yaml (header): the supply psu at its 5 A limit browns east out,
    # twenty dropout episodes, each with psu as the device that acted.
    rep = report_of(str(RUN / "stop-on-bridge.yaml"))
    res = rep.result.as_dict()
    eps = res["episodes"]
    assert len(eps) == 20 and {e["outcome"] for e in eps} == {"dropout"}
    assert {e["acted"] for e in eps} == {"psu"}
    rows = _rows(rep.episodes)
    assert len(rows) == len(eps)
    for row, ep in zip(rows, eps):
        assert row["outcome"] == "dropout" and row["acted"] == "psu"
        assert _f(row["i2t_a2s"]) == ep["i2t_a2s"] and _f(row["peak_a"]) == ep["peak_a"]
        assert row["devices"] == " ".join(ep["devices"])
        assert _dict(row["tripped"]) == ep["tripped"]
        assert _dict(row["paths_a"]) == ep["paths_a"]
        assert _dict(row["margins"]) == ep["margins"]
        assert "east" in ep["tripped"]                       # east dropped out
    page = files_of(rep)["index.html"]
    assert "DROPOUT (boosters dropped out: supply psu at its limit)" in page
    # the paths view: the devices from the track up and each rail path's peak
    view = rep.episode_paths.text_rows()[0]
    assert view[2] == " > ".join(eps[0]["devices"])
    assert view[3].count(" A") == len(eps[0]["paths_a"])


def test_the_engines_note_is_shown_where_set():
    # auto-fight.yaml (header): the engine's guard holds auto after 8 output changes;
    # the episode is unresolved, with the guard's note.
    rep = report_of(str(RUN / "auto-fight.yaml"))
    res = rep.result.as_dict()
    noted = [e for e in res["episodes"] if e.get("note")]
    assert noted
    page = files_of(rep)["index.html"]
    for e in noted:
        assert str(escape(glue_units(e["note"]))) in page
    rows = _rows(rep.episodes)
    assert [r["note"] for r in rows] == [e.get("note", "") for e in res["episodes"]]


def test_wiring_sheet_is_the_checks_rows_terminal_by_terminal():
    # wiring-loop.yaml: three sections without leads (chosen by railfault) and one as
    # built; leads normal puts out 1 on the left rail (scenarios/README.md, wiring[]).
    path = ROOT / "tests" / "scenarios" / "checks" / "wiring-loop.yaml"
    rep = report_of(str(path))
    want = rep.check["wiring"]
    assert sum(w["chosen"] for w in want) == 3 and len(want) == 4
    rows = _rows(rep.wiring)
    assert len(rows) == len(want)
    for row, w in zip(rows, want):
        assert (row["section"], row["device"], row["leads"]) == (w["section"], w["device"],
                                                                  w["leads"])
        assert float(row["at_m"]) == w["at_m"] and row["chosen"] == str(w["chosen"]).lower()
        left, right = ("out1", "out2") if w["leads"] == "normal" else ("out2", "out1")
        assert row[left] == "left rail" and row[right] == "right rail"
    text = rep.wiring.text_rows()
    assert [t[-1] for t in text] == ["chosen by railfault" if w["chosen"] else
                                     "as built (file)" for w in want]
