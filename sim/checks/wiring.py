"""The wiring sheet: how each section's feeders go to its device, rail by rail.

Rails are named as seen travelling from a section's ``a`` end towards its ``b``
end (``domain.md``). ``leads: normal`` puts the device's first output terminal
on the left rail and its second on the right; ``swapped`` the other way round
(``scenario-format.md``). A section whose file gives ``leads`` is listed as
built; for one that gives none the tool chooses:

* a fixed-phase section (fed from a booster that does not reverse, through no
  reversing controller) gets the orientation :func:`sim.checks.phasing.solve_phases`
  finds with the signed 2-colouring of the track (the one that finds reversing
  loops): every bonded joint, and where the track allows every gapped one, meets
  in phase; among equal choices the fewest ``swapped``;
* a reversing section (fed by a reversing controller, or by a booster that
  reverses its own output) changes polarity anyway: it gets the orientation
  that, with its controller not swapped, meets the most of its fixed-phase
  neighbours in phase (``normal`` on a tie);
* any other fed section (its feed chain reaches no booster) is ``normal``.

The circuit is built with these orientations (:func:`sim.circuit.build.build_topology`),
so the checks, the fault map and the run all see the layout wired as the sheet says.

The JSON field of ``railfault check`` is ``wiring: [{section, device, at_m,
leads: normal|swapped, chosen: true|false}]``, one row per feeder (a section
without feeders has one at mid-length), ``chosen`` true when the tool picked
the orientation because the file gave none.
"""
from __future__ import annotations

from sim.checks.phasing import section_phases, solve_phases
from sim.checks.polarity import reversing_sections
from sim.model import Scenario

__all__ = ["section_leads", "wiring_rows", "TERMINALS", "RAILS"]

#: The device's output terminals, in the order ``leads: normal`` puts them on the
#: left and right rails.
TERMINALS = ("out 1", "out 2")
#: The rails the two :data:`TERMINALS` go to, for each value of ``leads`` (rails as
#: seen from the section's ``a`` end towards its ``b`` end).
RAILS = {"normal": ("left rail", "right rail"), "swapped": ("right rail", "left rail")}


def section_leads(scn: Scenario, layout) -> dict[str, tuple[int, bool]]:
    """``{section: (leads, chosen)}`` for every section with a feed (module docstring).

    ``leads`` is +1 (normal) or -1 (swapped); ``chosen`` is True when the file
    gives none. Cached in ``layout.cache``.
    """
    key = "section_leads"
    if key in layout.cache:
        return layout.cache[key]
    sol = solve_phases(scn, layout)
    rev = reversing_sections(scn, layout)
    secs = scn.track.sections
    phases = None
    out: dict[str, tuple[int, bool]] = {}
    for s, sec in secs.items():
        if sec.feed is None:
            continue
        if sec.leads is not None:
            out[s] = (sec.leads, False)
        elif s in sol.leads:
            out[s] = (sol.leads[s], True)
        elif s in rev:
            if phases is None:
                phases = section_phases(scn, layout)
            b = scn.booster_of(s)
            bph = scn.boosters[b].phase if b is not None else 1
            vote = 0
            for nb in layout.neighbours(s):
                if nb.section in phases:
                    vote += nb.joint.sign * phases[nb.section] * bph
            out[s] = (-1 if vote < 0 else 1, True)
        else:
            out[s] = (1, True)
    layout.cache[key] = out
    return out


def wiring_rows(scn: Scenario, layout) -> list[dict]:
    """The ``wiring`` rows of ``railfault check``: one per feeder of every fed section."""
    leads = section_leads(scn, layout)
    rows = []
    for s, sec in scn.track.sections.items():
        if s not in leads:
            continue
        v, chosen = leads[s]
        ats = [f.at_m for f in sec.feeders] or [sec.length_m / 2.0]
        for at in ats:
            rows.append({"section": s, "device": sec.feed, "at_m": round(at, 6),
                         "leads": "normal" if v > 0 else "swapped", "chosen": chosen})
    return rows
