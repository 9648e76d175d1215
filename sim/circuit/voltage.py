"""Rail voltage under load, against NMRA S-9.1 (2020) table 3.

For each feeding device's own district, the locomotives that are in it
together when they draw most, by the trains' schedules
(:func:`sim.checks.draw.peak_draw`), are put, as constant-current loads of
their ``draw_a``, at the point of the district with the largest Thevenin
resistance (the electrically farthest point):
``V = V_oc - I_load R_th`` (Thevenin's theorem; the same equivalents as the
fault map). A constant-current load is the pessimistic choice.

NMRA S-9.1 (2020) table 3, peak track voltage min / nominal / max:
N and smaller 8.5 / 12 / 22 V; HO, S, O 8.5 / 15 / 22 V; large scales
8.5 / 18 / 22 V. The scale comes from a top-level ``scale`` of the scenario
when the model has one; otherwise HO is assumed, and a finding says so.

Finding codes
-------------
RF-VOLT-001 (warning) the lowest rail voltage under load is below the 8.5 V minimum.
RF-VOLT-002 (warning) the no-load rail voltage is above the 22 V maximum.
RF-VOLT-003 (info)    no scale given: HO assumed.
RF-VOLT-004 (info)    the no-load rail voltage is more than 2 V from the nominal.
"""
from __future__ import annotations

from dataclasses import dataclass

from sim.checks.draw import peak_draw
from sim.circuit.faultmap import FaultMap
from sim.model import Finding, Scenario

#: NMRA S-9.1 (2020) table 3: (min, nominal, max) peak track voltage, V.
S91_TABLE3 = {
    "N": (8.5, 12.0, 22.0),
    "HO": (8.5, 15.0, 22.0),
    "LARGE": (8.5, 18.0, 22.0),
}

_SMALL = {"N", "Z", "T", "NN"}
_HO = {"HO", "OO", "S", "O", "TT", "HOn3", "ON30"}
_LARGE = {"G", "LARGE", "1", "F", "7/8"}


def scale_group(scale) -> tuple[str, bool]:
    """``(group, assumed)``: the S-9.1 group of a scale name; HO (assumed) if none."""
    if not scale:
        return "HO", True
    s = str(scale).strip().upper()
    if s in _SMALL:
        return "N", False
    if s in _LARGE:
        return "LARGE", False
    if s in {x.upper() for x in _HO}:
        return "HO", False
    return "HO", True


@dataclass(frozen=True)
class DistrictVoltage:
    """Lowest rail voltage of a district under its trains' load."""

    device: str
    sections: tuple
    trains: tuple
    i_load_a: float
    v_no_load_v: float
    v_min_v: float
    at: tuple


def rail_voltage(scn: Scenario, fm: FaultMap, layout=None) -> list:
    """One :class:`DistrictVoltage` per feeding device (module docstring)."""
    if layout is None:
        from sim.layout import build_layout
        layout = build_layout(scn)
    groups: dict = {}
    for p in fm.points:
        groups.setdefault(p.chain[0], []).append(p)
    out = []
    for dev, pts in groups.items():
        secs = tuple(sorted({p.section for p in pts}))
        pk = peak_draw(scn, layout, secs)
        trains, steady = pk.trains, pk.i_a
        v_nl = max(p.v_oc_v for p in pts)
        worst = min(pts, key=lambda p: p.v_oc_v - steady * p.r_th_ohm)
        out.append(DistrictVoltage(dev, secs, trains, steady, v_nl,
                                   max(0.0, worst.v_oc_v - steady * worst.r_th_ohm),
                                   (worst.section, worst.at_m)))
    return out


def rail_voltage_findings(scn: Scenario, fm: FaultMap, layout=None) -> list:
    """Findings RF-VOLT-001..004 (module docstring)."""
    group, assumed = scale_group(getattr(scn, "scale", None))
    v_min, v_nom, v_max = S91_TABLE3[group]
    findings = []
    results = rail_voltage(scn, fm, layout)
    if assumed and results:
        findings.append(Finding(
            "info", "RF-VOLT-003", "scale",
            f"no scale given: HO assumed for the NMRA S-9.1 track-voltage range "
            f"({v_min:g} / {v_nom:g} / {v_max:g} V min / nominal / max)"))
    for r in results:
        if r.v_min_v < v_min:
            findings.append(Finding(
                "warning", "RF-VOLT-001", r.device,
                f"district {r.device}: with {', '.join(r.trains) or 'its load'} drawing "
                f"{r.i_load_a:.2f} A at {r.at[0]} {r.at[1]:.2f} m the rails fall to "
                f"{r.v_min_v:.2f} V, below the {v_min:g} V minimum of NMRA S-9.1 table 3",
                "add feeders near the far end or use heavier feeder wire"))
        if r.v_no_load_v > v_max:
            findings.append(Finding(
                "warning", "RF-VOLT-002", r.device,
                f"district {r.device}: {r.v_no_load_v:.2f} V on the rails, above the "
                f"{v_max:g} V maximum of NMRA S-9.1 table 3", "lower the supply voltage"))
        if abs(r.v_no_load_v - v_nom) > 2.0:
            findings.append(Finding(
                "info", "RF-VOLT-004", r.device,
                f"district {r.device}: {r.v_no_load_v:.2f} V on the rails against "
                f"{v_nom:g} V nominal for {group} (NMRA S-9.1 table 3)"))
    return findings
