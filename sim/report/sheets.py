"""The sheets a club files: settings, wiring, gaps, and the assumptions behind them.

* **Settings sheet**: every supply, booster, breaker and reverser with every
  setting the simulation used (defaults filled in), one table per kind.
* **Wiring sheet**: the ``wiring`` rows of ``railfault check`` (per section and
  feeder: the device, where along the section, which output terminal goes to
  which rail, as built or chosen by the tool), with each feeder's wire from the
  file.
* **Gap list**: every joint with an insulated gap, the districts on both sides
  and whether it is a reversing section's gap.
* **Assumptions**: every default the scenario left to the loader whose source
  is marked in the format declaration (``sim.schema``: *from memory* or *an
  assumption*), and the fixed figures of the models themselves, with their
  source words.
"""
from __future__ import annotations

import math

from sim.report.tables import (Column, Table, a_text, m_text, ms_text, ohm_text, plain,
                               t_text, v_text)


def _fin(x):
    return x if (x is not None and math.isfinite(x)) else None


def _wire_text(wire) -> str:
    if wire is None or (wire.awg is None and wire.r_per_m_ohm is None):
        return "negligible"
    if wire.awg is not None:
        g = wire.awg
        return f"{int(g) if float(g).is_integer() else g} AWG"
    return f"{wire.r_per_m_ohm:g} ohm/m"


def _restart_text(r) -> str:
    if r.policy == "manual":
        return "manual (off until reset)"
    tries = f"{r.tries} tries" if r.tries else "without end"
    if r.policy == "retry":
        return f"retry every {t_text(r.every_s)}, {tries}"
    return (f"back-off {t_text(r.first_s)} x{r.factor:g} up to {t_text(r.cap_s)}, {tries}")


def _trip_cols() -> list:
    return [Column("trip_above_a", "trip above", a_text, True),
            Column("trip_after_s", "trip after", t_text, True),
            Column("trip_curve", "curve"), Column("trip_tms", "TMS", plain, True),
            Column("sense_period_s", "sample period", t_text, True),
            Column("sense_full_scale_a", "full scale", a_text, True),
            Column("sense_phase", "grid phase")]


def _trip_row(dev) -> dict:
    return {"trip_above_a": dev.trip.i_above_a, "trip_after_s": dev.trip.t_after_s,
            "trip_curve": dev.trip.curve or "definite time",
            "trip_tms": dev.trip.tms if dev.trip.curve else None,
            "sense_period_s": dev.sense.period_s,
            "sense_full_scale_a": _fin(dev.sense.full_scale_a),
            "sense_phase": ("continuous" if dev.sense.period_s is None else
                            f"{dev.sense.phase:g}" if dev.sense.phase is not None
                            else "drawn from the seed")}


def _thermal_cols() -> list:
    return [Column("thermal_rated_a", "thermal rated", a_text, True),
            Column("thermal_tau_s", "tau", t_text, True),
            Column("thermal_law", "law"),
            Column("thermal_trip_at", "trips at θ", plain, True),
            Column("thermal_resume_at", "resumes at θ", plain, True)]


def _thermal_row(th) -> dict:
    if th is None:
        return {"thermal_law": "none"}
    return {"thermal_rated_a": th.i_rated_a, "thermal_tau_s": th.tau_s, "thermal_law": th.law,
            "thermal_trip_at": th.trip_at, "thermal_resume_at": th.resume_at}


def settings_tables(scn, layout) -> list[Table]:
    """One settings table per kind of device (only the kinds the scenario has)."""
    fed: dict[str, list] = {}
    for s in scn.track.sections:
        d = layout.district(s)
        if d is not None:
            fed.setdefault(d, []).append(s)
    out = []
    rows = []
    for n, s in scn.supplies.items():
        rows.append({"device": n, "voltage_v": s.v_emf_v, "resistance_ohm": s.r_ohm,
                     "current_limit_a": _fin(s.i_limit_a),
                     "on_limit": s.on_limit if math.isfinite(s.i_limit_a) else "no limit",
                     "off_time_s": s.t_off_s if s.on_limit == "hiccup" else None,
                     "limit_after_s": s.t_limit_s if s.on_limit != "constant-current" else None,
                     "feeds": ", ".join(b for b, bo in scn.boosters.items() if bo.supply == n)})
    out.append(Table("settings-supplies", "Supplies", [
        Column("device", "supply"), Column("voltage_v", "EMF", v_text, True),
        Column("resistance_ohm", "internal resistance", ohm_text, True),
        Column("current_limit_a", "current limit", a_text, True),
        Column("on_limit", "at its limit"), Column("off_time_s", "hiccup off time", t_text, True),
        Column("limit_after_s", "off after", t_text, True), Column("feeds", "boosters")], rows))
    rows = []
    for n, b in scn.boosters.items():
        r = {"device": n, "supply": b.supply, "wire": _wire_text(b.wire),
             "output_resistance_ohm": b.r_out_ohm,
             "phase": "normal" if b.phase > 0 else "inverted",
             "restart": _restart_text(b.restart),
             "reverse_on_short": b.reverse_on_short,
             "reverse_above_a": (b.sense_reverse_a if b.sense_reverse_a is not None
                                 else b.trip.i_above_a) if b.reverse_on_short else None,
             "reverse_after_s": b.t_sense_reverse_s if b.reverse_on_short else None,
             "swap_time_s": b.t_swap_s if b.reverse_on_short else None,
             "hold_off_s": b.t_hold_off_s if b.reverse_on_short else None,
             "undervoltage_v": b.v_undervoltage_v, "undervoltage_after_s": b.t_undervoltage_s,
             "sections": ", ".join(fed.get(n, []))}
        r.update(_trip_row(b))
        r.update(_thermal_row(b.thermal))
        rows.append(r)
    out.append(Table("settings-boosters", "Boosters", [
        Column("device", "booster"), Column("supply", "supply"), Column("wire", "wire"),
        Column("output_resistance_ohm", "output resistance", ohm_text, True),
        Column("phase", "phase")] + _trip_cols() + _thermal_cols() + [
        Column("restart", "restart"), Column("reverse_on_short", "reverses itself"),
        Column("reverse_above_a", "reverses above", a_text, True),
        Column("reverse_after_s", "reverse after", t_text, True),
        Column("swap_time_s", "swap time", t_text, True),
        Column("hold_off_s", "hold-off", t_text, True),
        Column("undervoltage_v", "drops out under", v_text, True),
        Column("undervoltage_after_s", "drop-out delay", t_text, True),
        Column("sections", "sections fed")], rows))
    if scn.breakers:
        rows = []
        for n, b in scn.breakers.items():
            r = {"device": n, "feed": b.feed.source, "wire": _wire_text(b.feed.wire),
                 "wire_length_m": b.feed.wire.length_m or None,
                 "on_resistance_ohm": b.r_on_ohm, "restart": _restart_text(b.restart),
                 "sections": ", ".join(fed.get(n, []))}
            r.update(_trip_row(b))
            r.update(_thermal_row(b.thermal))
            rows.append(r)
        out.append(Table("settings-breakers", "Breakers", [
            Column("device", "breaker"), Column("feed", "fed from"), Column("wire", "wire"),
            Column("wire_length_m", "run", m_text, True),
            Column("on_resistance_ohm", "on resistance", ohm_text, True)] + _trip_cols()
            + _thermal_cols() + [Column("restart", "restart"),
                                 Column("sections", "sections fed")], rows))
    if scn.reversers:
        rows = []
        for n, v in scn.reversers.items():
            r = {"device": n, "feed": v.feed.source, "wire": _wire_text(v.feed.wire),
                 "wire_length_m": v.feed.wire.length_m or None,
                 "sense_above_a": v.sense_above_a, "sense_after_s": v.t_sense_s,
                 "swap_time_s": v.t_swap_s, "dead_time_s": v.t_dead_s,
                 "hold_off_s": v.t_hold_off_s, "on_resistance_ohm": v.r_on_ohm,
                 "restart": _restart_text(v.restart), "sections": ", ".join(fed.get(n, []))}
            r.update(_trip_row(v))
            rows.append(r)
        out.append(Table("settings-reversers", "Reversers", [
            Column("device", "reverser"), Column("feed", "fed from"), Column("wire", "wire"),
            Column("wire_length_m", "run", m_text, True),
            Column("sense_above_a", "senses above", a_text, True),
            Column("sense_after_s", "sense delay", t_text, True),
            Column("swap_time_s", "swap time", t_text, True),
            Column("dead_time_s", "dead time", t_text, True),
            Column("hold_off_s", "hold-off", t_text, True),
            Column("on_resistance_ohm", "on resistance", ohm_text, True)] + _trip_cols() + [
            Column("restart", "restart"), Column("sections", "sections fed")], rows))
    return out


def wiring_table(scn, rows) -> Table:
    """The wiring sheet: the ``wiring`` rows of ``railfault check``, one per feeder, with
    the terminal that goes to each rail and the feeder's wire from the file."""
    from sim.checks.wiring import RAILS, TERMINALS

    out = []
    count: dict = {}
    for r in rows:
        k = count[r["section"]] = count.get(r["section"], 0) + 1
        feeders = scn.track.sections[r["section"]].feeders
        if k <= len(feeders):
            w = feeders[k - 1].wire
            wire = _wire_text(w) + (f", {m_text(w.length_m)}" if w.length_m else "")
        else:
            wire = "none given: one feeder assumed at mid-length"
        rails = RAILS[r["leads"]]
        out.append(dict(r, feeder=k, wire=wire, out1=rails[0], out2=rails[1],
                        origin="chosen by railfault" if r["chosen"] else "as built (file)"))
    return Table("wiring", "Wiring sheet (from railfault check)", [
        Column("section", "section"), Column("feeder", "feeder", plain, True),
        Column("device", "device"), Column("at_m", "at (from end a)", m_text, True),
        Column("wire", "wire", csv=False),
        Column("out1", f"{TERMINALS[0]} goes to"), Column("out2", f"{TERMINALS[1]} goes to"),
        Column("leads", "leads"), Column("chosen", "chosen", page=False),
        Column("origin", "orientation", csv=False)], out,
        note="Rails are named as seen from the section's a end towards its b end. 'Chosen' "
             "means the file gives no leads for the section and railfault wired it so that "
             "its joints meet in phase (the check, the fault map and the run all use it): "
             "wire it that way, or write the leads into the file.")


def gap_table(scn, layout) -> Table:
    """Every joint with an insulated gap, and the districts on both sides."""
    from sim.report.tcc import is_reversing

    rows = []
    for j in scn.track.joints:
        if j.gaps == "none":
            continue
        a, b = j.ends[0].section, j.ends[1].section
        da, db = layout.district(a), layout.district(b)
        rev = [d for d in (da, db) if d and is_reversing(scn, d)]
        rows.append({"joint": j.name, "gaps": j.gaps,
                     "rail": j.rail if j.gaps == "one" else "both rails",
                     "crossed": "crossed" if j.sign < 0 else "straight",
                     "district_a": da or "unfed", "district_b": db or "unfed",
                     "reversing": ", ".join(rev) or "-"})
    return Table("gaps", "Gap list", [
        Column("joint", "joint"), Column("gaps", "gapped"), Column("rail", "rail"),
        Column("crossed", "rails meet"), Column("district_a", "district of the first end"),
        Column("district_b", "district of the second end"),
        Column("reversing", "reversing section of")], rows)


def _default_text(value) -> str:
    if isinstance(value, dict):
        return "{" + ", ".join(f"{k}: {_default_text(v)}" for k, v in value.items()) + "}"
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(_default_text(v) for v in value) + "]"
    return str(value)


def defaults_used(scn) -> list[dict]:
    """Every default with a marked source that the scenario left to the loader."""
    from sim.schema import REQUIRED, TOP, Names, Record, Seq

    rows: list[dict] = []
    loc = scn.locations

    def walk(kind, path):
        if isinstance(kind, Record):
            for key, f in kind.fields.items():
                p = path + (key,)
                if p in loc:
                    walk(f.kind, p)
                    continue
                if f.note and f.default is not REQUIRED:
                    value = (_default_text(f.default) if f.default is not None
                             else f.doc.split("default ")[-1] if "default " in f.doc
                             else "absent")
                    rows.append({"key": ".".join(str(x) for x in p), "value": value,
                                 "source": f.note, "meaning": f.doc})
                elif isinstance(f.kind, Record) and isinstance(f.default, dict):
                    walk(f.kind, p)
        elif isinstance(kind, Names):
            for k in loc:
                if len(k) == len(path) + 1 and k[:len(path)] == path:
                    walk(kind.item, k)
        elif isinstance(kind, Seq) and isinstance(kind.item, Record):
            for k in loc:
                if len(k) == len(path) + 1 and k[:len(path)] == path and isinstance(k[-1], int):
                    walk(kind.item, k)

    walk(TOP, ())
    return rows


def model_assumptions() -> list[dict]:
    """The fixed figures of the models, each from the one place that holds it."""
    from sim.circuit.faultmap import R_COIN_OHM
    from sim.circuit.windows import RATING_SHARE
    from sim.devices.booster import UV_RETURN_DELAY_S, UV_RETURN_FACTOR
    from sim.world.engine import POWER_FRACTION
    from sim.world.episodes import I_FLOOR_A

    return [
        {"key": "coin test", "value": ohm_text(R_COIN_OHM), "source": "common practice",
         "meaning": "resistance of the coin laid across the rails in the fault-current map"},
        {"key": "booster undervoltage return",
         "value": f"{UV_RETURN_FACTOR:g} x the drop-out voltage for "
                  f"{ms_text(UV_RETURN_DELAY_S)}",
         "source": "from memory (a design choice, not a published value)",
         "meaning": "when a booster that dropped out on undervoltage closes again"},
        {"key": "short threshold floor", "value": a_text(I_FLOOR_A), "source": "an assumption",
         "meaning": "a short path counts as a short only above the lowest sense or trip "
                    "threshold upstream, and at least this"},
        {"key": "train power", "value": f"{100 * POWER_FRACTION:.0f} % of nominal voltage",
         "source": "an assumption", "meaning": "a train runs while its rails carry at "
                                               "least this"},
        {"key": "continuous rating share", "value": f"{100 * RATING_SHARE:.0f} %",
         "source": "common practice", "meaning": "largest continuous rating as a share of "
                                                 "the weakest short current"},
        {"key": "keep-alive inrush", "value": "peak V/R for RC",
         "source": "an assumption (a rectangular pulse carrying the capacitor's charge CV)",
         "meaning": "how the charging of keep-alive capacitors at a restart is modelled"},
        {"key": "hot thermal curve", "value": "θ = 1", "source": "a choice of this report",
         "meaning": "the hot curve of the time-current charts starts from running at the "
                    "rated current"},
    ]


def _mark_memory(source: str) -> str:
    """A source in words, with *from memory* set apart (upper case)."""
    return source.replace("from memory", "FROM MEMORY")


def assumptions_table(scn) -> Table:
    rows = [dict(r, kind="default of the format") for r in defaults_used(scn)]
    rows += [dict(r, kind="figure of the model") for r in model_assumptions()]
    return Table("assumptions", "Assumptions and defaults used", [
        Column("kind", "kind"), Column("key", "what"), Column("value", "value"),
        Column("source", "source", _mark_memory), Column("meaning", "meaning")], rows,
        note="Values marked 'from memory' are typical figures nobody here has checked in "
             "print; give your own device's figures.")
