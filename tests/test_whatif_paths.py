"""Key paths applied to the frozen model (sim.whatif.paths) against the loader itself.

The reference for every check here is the loader (sim.scenario): a value put into
the model with ``dataclasses.replace`` along a key path must give the very model the
loader builds from the file with that key changed (written as a case, which runs the
loader's whole pipeline). And a circuit re-used through ``Circuit.rewind`` must give
the very result of a new one (the engine's own output is the reference).
"""
from __future__ import annotations

import glob
import json
from dataclasses import fields

import pytest
import yaml

from sim import schema as S
from sim.scenario import load, loads
from sim.whatif.paths import PathError, apply, kind_at, parse_key_path, reuse_of

SCENARIOS = sorted(glob.glob("scenarios/*.yaml") + glob.glob("tests/scenarios/run/*.yaml")
                   + glob.glob("tests/scenarios/whatif/*.yaml"))

#: Model fields that say where a model came from, not what it is.
_ORIGIN = {"path", "sha256", "locations", "cases"}


def _same(a, b) -> bool:
    return all(getattr(a, f.name) == getattr(b, f.name) for f in fields(a)
               if f.name not in _ORIGIN)


def _leaves(data, path=()):
    if isinstance(data, dict):
        for k, v in data.items():
            yield from _leaves(v, path + (k,))
    elif isinstance(data, list):
        for i, v in enumerate(data):
            yield from _leaves(v, path + (i,))
    else:
        yield path, data


def _dotted(path):
    out = ""
    for p in path:
        out += f"[{p}]" if isinstance(p, int) else ("." if out else "") + p
    return out


def _numeric_paths(text):
    data = yaml.safe_load(text)
    for path, raw in _leaves({k: v for k, v in data.items()
                              if k not in ("vary", "cases", "format", "title", "samples")}):
        if "pickup" in path:          # axle indices: not a quantity a sample sets
            continue
        try:
            kind = kind_at(path, data)
        except PathError:
            continue
        if isinstance(kind, (S.Quantity, S.Number)):
            yield path, kind, raw


def _new_value(kind, raw):
    """A changed value of the key in SI, and its text as a file would hold it."""
    x = kind.convert(S.Context(lambda *a: None), raw, ())
    if isinstance(kind, S.Number):
        if kind.integer:
            y = int(x) + 1
        else:
            y = 0.37 if kind.maximum is not None else x * 0.9 + (0.5 if x == 0 else 0.0)
        return y, y
    y = x * 0.9 if x != 0 else 1e-3
    return y, f"{y!r} {kind.dim.si}"


@pytest.mark.parametrize("file", SCENARIOS)
def test_apply_matches_the_loader_for_every_quantity(file):
    text = open(file, encoding="utf-8").read()
    if "\ncases:" in text:         # the probe is a case of its own: drop the file's cases
        data = yaml.safe_load(text)
        data.pop("cases")
        text = yaml.safe_dump(data, sort_keys=False)
    base = loads(text, file)
    tried = refused = 0
    for path, kind, raw in _numeric_paths(text):
        value, written = _new_value(kind, raw)
        case_text = text + f"\ncases:\n  probe: {{{json.dumps(_dotted(path))}: " \
                           f"{json.dumps(written)}}}\n"
        try:
            by_loader = loads(case_text, file).cases["probe"]
        except Exception:       # the changed value breaks a rule between keys: not a probe
            refused += 1
            continue
        try:
            by_apply = apply(base, path, value)
        except PathError as exc:  # refused with a reason: only the default feeder's section
            assert "default feeder" in str(exc), f"{file}: {_dotted(path)}: {exc}"
            continue
        tried += 1
        assert _same(by_apply, by_loader), f"{file}: {_dotted(path)}"
    assert tried >= 5 and refused <= tried // 4, (tried, refused)


def test_apply_shares_what_it_does_not_change():
    scn = load("scenarios/balloon-relay.yaml")
    new = apply(scn, ("reversers", "loop-ctl", "swap_time"), 0.0005)
    assert new.reversers["loop-ctl"].t_swap_s == 0.0005
    assert scn.reversers["loop-ctl"].t_swap_s == 0.006        # the base is untouched
    assert new.track is scn.track and new.boosters is scn.boosters
    assert new.reversers["loop-ctl"].trip is scn.reversers["loop-ctl"].trip


def test_apply_refuses_what_the_file_does_not_give():
    scn = load("scenarios/balloon-relay.yaml")
    with pytest.raises(PathError, match="not given"):
        apply(scn, ("boosters", "main-bst", "thermal", "tau"), 10.0)
    with pytest.raises(PathError, match="not in this file"):
        apply(scn, ("boosters", "nowhere", "trip", "after"), 0.001)


def test_parse_key_path():
    assert parse_key_path("track.sections.main.feeders[1].at") == \
        ("track", "sections", "main", "feeders", 1, "at")
    assert parse_key_path("faults") == ("faults",)
    assert parse_key_path("faults[0]") == ("faults", 0)
    for bad in ("", ".a", "a..b", "a[x]", "[0].a", "a]"):
        assert parse_key_path(bad) is None, bad


def test_reuse_follows_the_varied_paths():
    timing = [("reversers", "r", "swap_time"), ("boosters", "b", "trip", "after"),
              ("trains", "t", "speed"), ("faults", 0, "at"), ("track", "gap_width")]
    r = reuse_of(timing)
    assert r.circuit and r.layout
    r = reuse_of(timing + [("supplies", "p", "resistance")])
    assert not r.circuit and r.layout
    r = reuse_of([("track", "sections", "main", "length")])
    assert not r.circuit and not r.layout
    r = reuse_of([("trains", "t", "start", "at")])
    assert r.circuit and not r.layout


@pytest.mark.parametrize("file", sorted(glob.glob("scenarios/*.yaml")
                                        + glob.glob("tests/scenarios/run/*.yaml")))
def test_rewound_circuit_gives_the_result_of_a_new_one(file):
    """A circuit re-used through Circuit.rewind, after runs that switched it, solves like a
    new one: the whole result JSON is equal (reference: a run on a new circuit)."""
    from sim.circuit import build_circuit
    from sim.layout import build_layout
    from sim.world import World, play

    scn = load(file)
    reference = json.dumps(play(scn).as_dict())      # the engine's result, before diagnosis
    layout = build_layout(scn)
    circuit = build_circuit(scn, layout)
    for _ in range(3):
        circuit.rewind()
        assert json.dumps(World(scn, layout=layout, circuit=circuit).run().as_dict()) == reference
