"""Tables of the run and of the checks: episodes, devices, pairs, fault map, windows,
dark time, findings. Raw values as in the JSON results (s, A), words for people."""
from __future__ import annotations

import math

from sim.report.tables import (Column, Table, a2s_text, a_text, dur_text, instant_text,
                               m_text, ms_text, plain)

OUTCOME_WORDS = {"clean": "clean (ended by itself)", "swapped": "swapped (a swap cleared it)",
                 "tripped": "TRIPPED", "dropout": "DROPOUT", "unresolved": "UNRESOLVED"}


def outcome_text(ep) -> str:
    """An episode's outcome in words; a dropout names the supply at its limit."""
    if ep.outcome == "dropout":
        return (f"DROPOUT (boosters dropped out: supply {ep.acted} at its limit)" if ep.acted
                else "DROPOUT (boosters dropped out: their supply at its limit)")
    return OUTCOME_WORDS.get(ep.outcome, plain(ep.outcome))


def _margins_text(m) -> str:
    if not m:
        return "-"
    return ", ".join(f"{d} {ms_text(v, True)}" for d, v in sorted(m.items()))


def _tripped_text(t) -> str:
    if not t:
        return "-"
    return ", ".join(f"{d} at {instant_text(v)}" for d, v in sorted(t.items(),
                                                                  key=lambda kv: kv[1]))


def paths_text(where: str, paths) -> str:
    """Each rail path's peak, named without the episode's place it repeats:
    ``left rail 7.43 A, right rail 7.43 A``."""
    if not paths:
        return "-"
    out = []
    for p, i in sorted(paths.items()):
        name = p[len(where):].strip(" ()") if p.startswith(where) else p
        out.append(f"{name} {a_text(i)}" if name else a_text(i))
    return ", ".join(out)


def episodes_table(result, detailed: set) -> Table:
    """Every episode, with every field of the ``railfault-result/1`` JSON."""
    rows = []
    for k, ep in enumerate(result.episodes):
        rows.append({
            "n": k + 1, "start_s": ep.start_s, "end_s": ep.end_s, "kind": ep.kind,
            "where": ep.where, "train": ep.train, "peak_a": ep.peak_a,
            "paths_a": dict(ep.paths_a), "paths_text": paths_text(ep.where, ep.paths_a),
            "devices": list(ep.devices),
            "outcome": ep.outcome, "outcome_text": outcome_text(ep), "acted": ep.acted,
            "acted_s": ep.acted_s, "tripped": dict(ep.tripped), "margin_s": ep.margin_s,
            "margins": dict(ep.margins), "i2t_a2s": ep.i2t_a2s, "note": ep.note,
            "detail": "yes" if k in detailed else "-"})
    cols = [Column("n", "#", plain, True), Column("start_s", "start", instant_text, True),
            Column("end_s", "end", lambda v: instant_text(v) if v is not None else "still on",
                   True),
            Column("kind", "kind"), Column("where", "where"), Column("train", "train"),
            Column("peak_a", "peak", a_text, True),
            Column("outcome", "outcome", page=False),
            Column("outcome_text", "outcome", csv=False),
            Column("acted", "acted first"), Column("acted_s", "acted at", instant_text, True),
            Column("margin_s", "least margin", lambda v: ms_text(v, True), True),
            Column("i2t_a2s", "let-through I²t", a2s_text, True),
            Column("devices", "carried by (track up)", lambda v: " > ".join(v) or "-"),
            Column("paths_a", "peak per path", page=False),
            Column("paths_text", "peak per path", csv=False),
            Column("tripped", "tripped, dropped out or off", _tripped_text),
            Column("margins", "margin per device", _margins_text),
            Column("note", "note", lambda v: v or "-"),
            Column("detail", "drawn in detail")]
    return Table("episodes", "Short episodes", cols, rows)


#: The columns of the two page views of the episodes table (the CSV has them all).
EPISODE_MAIN = ("n", "start_s", "end_s", "kind", "where", "train", "peak_a", "outcome_text",
                "acted", "acted_s", "margin_s", "i2t_a2s", "detail")
EPISODE_PATHS = ("n", "where", "devices", "paths_text", "tripped", "margins", "note")


def episode_main_view(t: Table) -> Table:
    return t.view(EPISODE_MAIN, t.caption)


def episode_paths_view(t: Table) -> Table:
    """Per episode: the devices that carried it, the peak of each rail path, who tripped,
    the margin against each device, and the engine's note."""
    return t.view(EPISODE_PATHS, "What carried each short, per path and device")


def margins_csv_table(result) -> Table:
    """One row per episode and device margin (the CSV behind the margin arrows)."""
    rows = []
    for k, ep in enumerate(result.episodes):
        for d, m in sorted((ep.margins or {}).items()):
            rows.append({"n": k + 1, "where": ep.where, "device": d,
                         "margin_s": None if m is None or not math.isfinite(m) else float(m)})
    return Table("margins", "Timing margins per episode and device", [
        Column("n", "episode", plain, True), Column("where", "where"),
        Column("device", "device"), Column("margin_s", "margin", lambda v: ms_text(v, True),
                                           True)], rows)


def devices_table(result) -> Table:
    rows = []
    for name, s in sorted(result.devices.items()):
        d = s.as_dict()
        rows.append({"device": name, **d})
    return Table("devices", "What each device did", [
        Column("device", "device"), Column("kind", "kind"),
        Column("trips", "trips", plain, True), Column("swaps", "swaps", plain, True),
        Column("restarts", "restarts", plain, True), Column("dark_s", "dark", dur_text, True),
        Column("peak_a", "peak current", a_text, True),
        Column("max_thermal", "highest thermal level",
               lambda v: f"{v * 100:.1f} % of rated heat" if v is not None else "-", True)],
        rows)


def pairs_table(pairs) -> Table:
    rows = []
    for p in pairs:
        rows.append({"kind": p.kind, "device": p.device, "upstream": p.upstream,
                     "t_device_s": p.t_device_s, "t_upstream_s": p.t_upstream_s,
                     "static_margin_s": p.static_margin_s, "run_margin_s": p.run_margin_s,
                     "episodes": p.n_episodes,
                     "required_s": p.required_s if p.kind == "race" else None,
                     "result": "pass" if p.ok else "fail", "fix": p.fix})
    return Table("coordination", "Coordination pairs", [
        Column("kind", "pair", lambda v: {"race": "reversal race",
                                          "order": "trip order"}.get(v, v)),
        Column("device", "device"), Column("upstream", "must beat"),
        Column("t_device_s", "its time to clear / latest trip", dur_text, True),
        Column("t_upstream_s", "their earliest trip", dur_text, True),
        Column("static_margin_s", "static margin (check)", lambda v: ms_text(v, True), True),
        Column("run_margin_s", "least margin in the run", lambda v: ms_text(v, True), True),
        Column("episodes", "episodes", plain, True),
        Column("required_s", "required", lambda v: ms_text(v) if v is not None
               else "before", True),
        Column("result", "result", lambda v: "✓ pass" if v == "pass" else "✗ FAIL"),
        Column("fix", "smallest change that restores it", lambda v: v or "-")], rows,
        note="Times are from the onset of the short. A reversal race compares the "
             "device's time to clear (latest detection plus swap) with the upstream "
             "device's earliest trip; a trip order compares a nested device's latest trip "
             "on a hard short in its district (a reverser's after its swap, dead time and "
             "reclose) with the earliest trip of the device feeding it. The fixes are "
             "railfault check's: each setting named wins on its own, whatever the sample "
             "phases.")


def weakest_table(check: dict) -> Table:
    """The weakest coin-test short per section and device (the fault-current map's summary)."""
    weakest: dict = {}
    for r in check["fault_current"]:
        key = (r["section"], r["device"])
        cur = weakest.get(key)
        if cur is None or _weak(r) < _weak(cur):
            weakest[key] = r
    rows = [dict(r, result="trips" if r["ok"] else "DOES NOT TRIP")
            for _, r in sorted(weakest.items())]
    return Table("faultmap-weakest", "Weakest coin-test short per section and device", [
        Column("section", "section"), Column("at_m", "at", m_text, True),
        Column("device", "device"),
        Column("prospective_a", "prospective", a_text, True),
        Column("current_a", "with supply limit", a_text, True),
        Column("trip_a", "trip above", a_text, True), Column("result", "result")], rows)


def _weak(r: dict) -> tuple:
    """A miss first, then the least current with the limit, then the least prospective."""
    return (r["ok"], r["current_a"], r["prospective_a"], r["at_m"])


def faultmap_table(check: dict) -> Table:
    rows = [dict(r) for r in check["fault_current"]]
    return Table("faultmap", "Coin test everywhere", [
        Column("section", "section"), Column("at_m", "at", m_text, True),
        Column("device", "device"), Column("prospective_a", "prospective", a_text, True),
        Column("current_a", "with supply limit", a_text, True),
        Column("trip_a", "trip above", a_text, True),
        Column("ok", "trips", lambda v: "trips" if v else "DOES NOT TRIP")], rows)


def windows_table(windows) -> Table:
    rows = []
    for w in windows:
        if w.i_trip_a >= w.top_a:
            verdict = "threshold at or above the weakest short"
        elif w.i_trip_a <= w.i_steady_a:
            verdict = "threshold under the running draw"
        elif w.i_trip_a < w.bottom_a:
            verdict = "inside, under draw plus inrush"
        else:
            verdict = "inside the window"
        rows.append({"device": w.device, "kind": w.kind, "i_steady_a": w.i_steady_a,
                     "i_inrush_peak_a": w.i_inrush_peak_a, "bottom_a": w.bottom_a,
                     "i_trip_a": w.i_trip_a, "top_a": w.top_a,
                     "top_at": f"{w.top_at[0]} at {w.top_at[1]:.2f} m", "result": verdict})
    return Table("windows", "Trip windows", [
        Column("device", "device"), Column("kind", "kind"),
        Column("i_steady_a", "steady draw", a_text, True),
        Column("i_inrush_peak_a", "inrush peak", a_text, True),
        Column("bottom_a", "bottom (draw + inrush)", a_text, True),
        Column("i_trip_a", "trip threshold", a_text, True),
        Column("top_a", "top (weakest short)", a_text, True),
        Column("top_at", "weakest short at"), Column("result", "result")], rows,
        note="The trip threshold must lie above the trains' draw plus their keep-alive inrush "
             "and below the weakest short current anywhere in the district.")


def dark_table(lanes) -> Table:
    rows = [{"district": ln.district, "chain": " > ".join(ln.chain), "dark_s": ln.total_s,
             "spans": len(ln.spans),
             "first_s": ln.spans[0][0] if ln.spans else None,
             "longest_s": max((b - a for a, b in ln.spans), default=None)} for ln in lanes]
    return Table("dark", "Dark time per district", [
        Column("district", "district (feeding device)"), Column("chain", "devices above"),
        Column("dark_s", "dark in total", dur_text, True), Column("spans", "times", plain, True),
        Column("first_s", "first at", instant_text, True),
        Column("longest_s", "longest", dur_text, True)], rows)


def findings_table(check_findings, run_findings) -> Table:
    """Every finding of the check and of the run, as their JSON has it (the CSV)."""
    rows = [dict(f.as_dict(), source=source, count=f.count)
            for source, fs in (("run", run_findings), ("check", check_findings)) for f in fs]
    return Table("findings", "Findings", [
        Column("source", "from"), Column("severity", "severity", lambda v: v.upper()),
        Column("code", "code"), Column("where", "where"), Column("message", "message"),
        Column("fix", "fix"), Column("count", "count", plain, True),
        Column("first_s", "first", instant_text, True),
        Column("last_s", "last", instant_text, True),
        Column("because", "follows from")], rows)
