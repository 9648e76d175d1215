"""The JSON Schema of the format, checked with the general-purpose `jsonschema` package,
and the format reference (scenarios/README.md) checked against the declarations."""
from __future__ import annotations

import copy
import re
from pathlib import Path

import jsonschema
import pytest
import yaml

from sim import schema as S
from sim import units as U
from sim.scenario import loads
from sim.schema import json_schema

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "scenarios" / "cinder-ridge.yaml"
README = ROOT / "scenarios" / "README.md"


@pytest.fixture(scope="module")
def validator():
    schema = json_schema()
    jsonschema.Draft202012Validator.check_schema(schema)   # a valid 2020-12 schema
    return jsonschema.Draft202012Validator(schema)


@pytest.fixture()
def demo_data():
    return yaml.safe_load(DEMO.read_text(encoding="utf-8"))


def _flatten(errors):
    for e in errors:
        yield e
        yield from _flatten(e.context or ())


def _errors(validator, data) -> list[str]:
    """Every error with its path, including the reasons inside anyOf/oneOf."""
    return [f"{'.'.join(map(str, e.absolute_path))}: {e.message}"
            for e in _flatten(validator.iter_errors(data))]


def test_dialect_and_closed_objects():
    schema = json_schema()
    assert schema["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    assert schema["additionalProperties"] is False
    booster = schema["properties"]["boosters"]["additionalProperties"]
    assert booster["additionalProperties"] is False and booster["required"] == ["supply"]


def test_demo_validates(validator, demo_data):
    assert _errors(validator, demo_data) == []


def test_unknown_key_does_not_validate(validator, demo_data):
    demo_data["boosters"]["east"]["output_resistence"] = "0.04 ohm"
    errs = _errors(validator, demo_data)
    assert len(errs) == 1 and "output_resistence" in errs[0]


@pytest.mark.parametrize("mutate, where", [
    (lambda d: d.__setitem__("format", "railfault/2"), "format"),
    (lambda d: d["boosters"]["east"]["trip"].__setitem__("after", "2 A"),
     "boosters.east.trip.after"),
    (lambda d: d["boosters"]["east"].__setitem__("phase", "sideways"), "boosters.east.phase"),
    (lambda d: d["track"]["joints"][0].__setitem__("gaps", "two"), "track.joints.0.gaps"),
    (lambda d: d["track"]["rail"].__setitem__("area", "5 mm"), "track.rail.area"),
    (lambda d: d["breakers"]["loop-cb"]["feed"].__setitem__("wire", "14 gauge"),
     "breakers.loop-cb.feed"),
    (lambda d: d["trains"]["wye-turn"].__setitem__("speed", 0.2), "trains.wye-turn.speed"),
    (lambda d: d.pop("track"), ""),
    (lambda d: d["track"]["sections"].__setitem__("bad name", {"length": "1 m"}),
     "track.sections"),
])
def test_mistakes_do_not_validate(validator, demo_data, mutate, where):
    mutate(demo_data)
    errs = _errors(validator, demo_data)
    assert errs and any(e.startswith(where) for e in errs), errs


def test_schema_and_loader_agree_on_optional_forms(validator):
    from tests.test_scenario_load import MINIMAL

    text = MINIMAL + """\
breakers:
  cb: {feed: {from: east, wire: 0.0083 ohm/m, length: 1 m}, sense: {period: 50 us}}
faults:
  - {at: 1 s, open: {section: main, feeder: 0}}
vary:
  boosters.east.sense.phase: uniform
  breakers.cb.trip.after: {uniform: [0.2 ms, 1 ms]}
samples: 10
"""
    loads(text)
    assert _errors(validator, yaml.safe_load(text)) == []
    both = yaml.safe_load(text)
    both["faults"][0]["short"] = {"section": "main", "at": "1 m"}
    assert _errors(validator, both)            # a fault is a short or an open, not both


@pytest.mark.parametrize("dim", U.DIMENSIONS, ids=lambda d: d.si)
def test_every_listed_spelling_parses_to_its_dimension(dim):
    """The unit spellings offered by the schema are read by the loader as that dimension."""
    assert dim.units
    pattern = re.compile(S.Quantity(dim, None).json()["pattern"])
    for unit in dim.units:
        text = f"1.5 {unit}"
        assert U.parse_quantity(text, dim) > 0
        assert pattern.search(text)
        for other in U.DIMENSIONS:
            if other is not dim:
                with pytest.raises(U.QuantityError):
                    U.parse_quantity(text, other)


def _records(kind, seen=None):
    seen = [] if seen is None else seen
    if isinstance(kind, S.Record):
        if any(kind is r for r in seen):
            return seen
        seen.append(kind)
        for f in kind.fields.values():
            _records(f.kind, seen)
    elif isinstance(kind, (S.Seq, S.Names)):
        _records(kind.item, seen)
    elif isinstance(kind, S.Either):
        for _t, k in kind.options:
            _records(k, seen)
    return seen


def test_readme_documents_every_key_and_default():
    text = README.read_text(encoding="utf-8")
    missing = []
    for rec in _records(S.TOP):
        for key, f in rec.fields.items():
            row = re.search(rf"^\| `{re.escape(key)}` \|.*$", text, re.M)
            if row is None:
                missing.append(f"{rec.what}.{key}")
                continue
            if isinstance(f.default, (str, int, float)) and not isinstance(f.default, bool) \
                    and f.default != "":
                rows = re.findall(rf"^\| `{re.escape(key)}` \|.*$", text, re.M)
                if not any(f"`{f.default}`" in r for r in rows):
                    missing.append(f"{rec.what}.{key} default {f.default}")
            if f.note == "from memory":
                rows = re.findall(rf"^\| `{re.escape(key)}` \|.*$", text, re.M)
                if not any("from memory" in r for r in rows):
                    missing.append(f"{rec.what}.{key}: 'from memory' not marked")
    assert missing == []
    assert "2 MiB" in text


def test_rail_materials_match_the_circuit():
    materials = pytest.importorskip("sim.circuit.materials")
    assert set(S.RAIL_MATERIALS) == set(materials.MATERIALS)


def test_schema_is_a_fresh_copy_each_time():
    a = json_schema()
    b = copy.deepcopy(a)
    a["properties"]["format"]["const"] = "changed"
    assert json_schema() == b


def test_readme_examples_load():
    """Every YAML example in the format reference that starts with a format line loads."""
    text = README.read_text(encoding="utf-8")
    blocks = [b for b in re.findall(r"```yaml\n(.*?)```", text, re.S)
              if b.startswith("format: railfault/1")]
    assert blocks
    for block in blocks:
        assert loads(block, "README.md").format == "railfault/1"
