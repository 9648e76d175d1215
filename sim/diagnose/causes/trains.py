"""RF-RUN-030: a train longer than the reversing section it runs through.

A train whose outermost conducting axles are further apart than the reversing
zone is long bridges both of its gaps at once: whatever polarity the
controller chooses, one end is a short, every swap moves it to the other end,
and an upstream device trips in the end *(common practice: a reversing section
must be longer than the longest train; domain.md, "Rules of thumb")*. The span
and the zone come from the train-length check
(:func:`sim.checks.train_length.long_trains`); this module ties the run's
failing shorts of that train at that zone's gaps to it. The fix is the length,
not a faster controller.

The run exercises the flaw whenever the train passes through the zone, even
when nothing trips: its front's short at the far gap is swapped, and from then
until its last conducting axle has passed the near gap - ``(span - zone) /
speed`` - whatever conducting groups span the near gap bridge it out of phase.
Lighted cars do so through their lighting resistance: ``V / R`` per rail (``R``
the resistance and two wheel contacts, ``V`` the supply's EMF), too little to
trip anything, ``I² R_light`` in each lamp resistor; a locomotive or a metal
wheel there would be a hard short. The groups, the distance and the resistance
are the train plan's closed-form bridge spans
(:attr:`sim.world.trains.TrainPlan.spans`), measured from where its first group
reaches the far gap. So a run that passes such a train through says so (an
error, as ``railfault check``'s RF-LEN-001 is), with those figures; its
``same_as`` names that static finding.
"""
from __future__ import annotations

from sim.checks.train_length import long_trains
from sim.diagnose.cause import Cause
from sim.diagnose.facts import RunFacts
from sim.diagnose.groups import EpisodeGroup
from sim.diagnose.text import a_text, dur_text, mm_text, t_text
from sim.model import Finding

__all__ = ["find", "trailing_bridges"]

_FAILING = ("tripped", "unresolved", "dropout")


def _zone_joints(facts: RunFacts, zone: set) -> dict:
    """``{joint name: joint}`` of the gapped joints with exactly one end in ``zone``."""
    out = {}
    for j in facts.scn.track.joints:
        ends = {j.ends[0].section in zone, j.ends[1].section in zone}
        if j.gaps != "none" and ends == {True, False}:
            out[j.name] = j
    return out


def trailing_bridges(facts: RunFacts, lt, far: str) -> dict | None:
    """What bridges the zone's other gaps after ``lt.train``'s front reaches gap ``far``.

    Returns ``None`` when the plan has no bridge at ``far``, else a dict:
    ``overhang_m`` (span less zone), ``pass_s`` (the time its last conducting axle
    takes to pass the near gap after the front reached the far one), ``bridged_m``
    and ``bridged_s`` (how far and how long some group bridged a near gap in that
    time), ``kinds`` (the kinds of those groups), ``r_ohm`` (the least resistance
    of a rail path through them: the join and two wheel contacts), ``joints``
    (the near gaps bridged) and ``s_far_m``.
    """
    plan = facts.plans().get(lt.train)
    if plan is None:
        return None
    zone = set(lt.zone)
    joints = _zone_joints(facts, zone)
    if far not in joints:
        return None
    far_idx = joints[far].index
    near_idx = {j.index: n for n, j in joints.items() if n != far}
    spans = plan.spans
    at_far = [sp.s_on_m for sp in spans if sp.joint_index == far_idx]
    if not at_far:
        return None
    s_far = min(at_far)
    s_end = s_far + lt.span_m
    pieces, kinds, rs, names = [], set(), [], {}
    for sp in spans:
        if sp.joint_index not in near_idx:
            continue
        lo, hi = max(sp.s_on_m, s_far), min(sp.s_off_m, s_end)
        if hi <= lo:
            continue
        pieces.append((lo, hi))
        kinds.add(sp.kind)
        rs.append(sp.r_ohm)
        names[near_idx[sp.joint_index]] = None
    pieces.sort()
    bridged, cur_lo, cur_hi = 0.0, None, None
    for lo, hi in pieces:
        if cur_hi is None or lo > cur_hi:
            if cur_hi is not None:
                bridged += cur_hi - cur_lo
            cur_lo, cur_hi = lo, hi
        else:
            cur_hi = max(cur_hi, hi)
    if cur_hi is not None:
        bridged += cur_hi - cur_lo
    v = plan.speed_mps
    return {"overhang_m": lt.short_m, "pass_s": lt.short_m / v if v > 0 else float("inf"),
            "bridged_m": bridged, "bridged_s": bridged / v if v > 0 else float("inf"),
            "kinds": kinds, "r_ohm": min(rs) if rs else None, "joints": tuple(names),
            "s_far_m": s_far, "speed_mps": v}


def _emf_v(facts: RunFacts, device: str) -> float:
    from sim.circuit.faultmap import supply_of

    sup = supply_of(facts.scn, device)
    return facts.scn.supplies[sup].v_emf_v if sup in facts.scn.supplies else 0.0


def _exercised_text(facts: RunFacts, lt, eps: list) -> str:
    """What the run shows of a long train that passed its zone without a failing short."""
    e0 = eps[0]
    tb = trailing_bridges(facts, lt, e0.where)
    when = (f"once, at {t_text(e0.start_s)}" if len(eps) == 1 else
            f"{len(eps)} times, the first at {t_text(e0.start_s)}")
    how = (f"in this run it passed through {when}: {lt.reverser} swapped for its front at "
           f"{e0.where}")
    if tb is None or not tb["joints"]:
        return how
    near = ", ".join(tb["joints"])
    how += (f"; from then until its last conducting axle had passed {near} "
            f"({mm_text(tb['overhang_m'])} at {tb['speed_mps']:.2f} m/s: "
            f"{dur_text(tb['pass_s'])}), ")
    kinds = tb["kinds"]
    if not kinds:
        return how + "no conducting group spanned it"
    r = tb["r_ohm"]
    v = _emf_v(facts, lt.reverser)
    if kinds <= {"lighted"} and r:
        i = v / r
        r_lamp = r - 2.0 * facts.scn.track.r_wheel_contact_ohm
        how += (f"its lighted cars bridged {near}, out of phase after the swap, for "
                f"{dur_text(tb['bridged_s'])}, at {a_text(i)} per rail ({v:g} V over "
                f"{r:.4g} ohm: the lighting resistance and two wheel contacts), "
                f"{i * i * r_lamp:.2f} W in each lighting resistance: too little to trip "
                f"anything, so nothing says so but this; a locomotive or a metal wheel there "
                f"would be a short that no polarity clears")
    else:
        what = ", ".join(sorted(kinds))
        how += (f"its conducting groups ({what}) bridged {near}, out of phase after the swap, "
                f"for {dur_text(tb['bridged_s'])}")
    return how


def find(facts: RunFacts, claimed: set) -> list[Cause]:
    causes = []
    for lt in long_trains(facts.scn, facts.layout):
        zone = set(lt.zone)
        failing, passed = [], []
        for e in facts.episodes:
            if id(e) in claimed or e.kind != "gap" or e.train != lt.train:
                continue
            j = facts.joint(e.where)
            if j is None or not ({j.ends[0].section, j.ends[1].section} & zone):
                continue
            (failing if e.outcome in _FAILING else passed).append(e)
        eps = failing or passed
        if not eps:
            continue
        name = " + ".join(lt.zone)
        vi, vname, ai, pos = lt.first
        vj, wname, aj, pos2 = lt.last
        g = EpisodeGroup(eps[0].where, "gap", eps)
        joints = ", ".join(dict.fromkeys(e.where for e in eps))
        msg = (f"train {lt.train} spans {mm_text(lt.span_m)} between its outermost conducting "
               f"axles ({vname} axle {ai + 1} at {mm_text(pos)} to {wname} axle {aj + 1} at "
               f"{mm_text(pos2)} from the front), longer than reversing section {name} (fed by "
               f"{lt.reverser}), {mm_text(lt.zone_m)}: it bridges both gaps at once, so every "
               f"swap moves the short to the other end; ")
        msg += (f"at {joints}: {g.describe()}" if failing
                else _exercised_text(facts, lt, eps))
        fix = (f"lengthen {name} by more than {mm_text(lt.short_m)} (to more than "
               f"{mm_text(lt.span_m)}), or bring {lt.train}'s conducting span under "
               f"{mm_text(lt.zone_m)}: fewer or closer pickups, or rearrange the consist "
               f"(lighted cars and metal wheels conduct too)")
        acted = tuple(dict.fromkeys(e.acted for e in failing if e.acted))
        where = facts.scn.where("trains", lt.train, "consist")
        causes.append(Cause(
            Finding("error", "RF-RUN-030", where, msg, fix, count=len(eps), first_s=g.first_s,
                    last_s=g.last_s,
                    same_as=facts.static_ref("RF-LEN-001", where, names=lt.zone)),
            f"train {lt.train} ({mm_text(lt.span_m)} between conducting axles) is longer than "
            f"reversing section {name} ({mm_text(lt.zone_m)})",
            episodes=eps, dark=acted))
        claimed.update(id(e) for e in eps)
    return causes
