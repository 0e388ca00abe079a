"""``skyplan plan`` end to end: the schema it promises, determinism, cron behaviour.

The schedules' validity itself (no overlaps, windows kept, slews) is tested against brute
force in test_scheduling.py; here the whole command is checked: the JSON validates against
the schema shipped with the package (JSON Schema 2020-12, checked with the jsonschema
library), every observation lies inside the night and keeps the limits at start, middle
and end, two runs give the same bytes apart from ``generated_at``, and the exit statuses are
the documented ones.
"""

from __future__ import annotations

import json
from importlib import resources
from pathlib import Path

import jsonschema
import pytest

from skyplan.cli.app import main
from skyplan.errors import EXIT_BAD_INPUT, EXIT_NOTHING_OBSERVABLE


def run(args, capsys):
    with pytest.raises(SystemExit) as exc:
        main(args)
    out = capsys.readouterr()
    return exc.value.code, out.out, out.err


@pytest.fixture(scope="module")
def schema() -> dict:
    return json.loads((resources.files("skyplan") / "data" / "plan.schema.json").read_text())


@pytest.fixture(scope="module")
def demo_plan(tmp_path_factory) -> tuple[dict, bytes]:
    path = tmp_path_factory.mktemp("plan") / "tonight.json"
    with pytest.raises(SystemExit) as exc:
        main(["plan", "--demo", "--format", "json", "--out", str(path), "--quiet"])
    assert exc.value.code == 0
    raw = path.read_bytes()
    return json.loads(raw), raw


def test_json_validates_against_the_shipped_schema(demo_plan, schema) -> None:
    doc, _ = demo_plan
    jsonschema.Draft202012Validator.check_schema(schema)
    jsonschema.validate(doc, schema)
    assert doc["schema"] == "skyplan.plan/2.2"
    assert doc["observations"], "the demo night has observable targets"


def test_observations_keep_the_limits(demo_plan) -> None:
    doc, _ = demo_plan
    lim = doc["limits"]
    obs = doc["observations"]
    ends = [o["end"] for o in obs]
    starts = [o["start"] for o in obs]
    assert all(a <= b for a, b in zip(ends[:-1], starts[1:])), "visits never overlap"
    for o in obs:
        for key in ("alt_start_deg", "alt_mid_deg", "alt_end_deg"):
            assert o[key] >= lim["min_alt_deg"] - 1e-6
        assert o["airmass_mid"] <= lim["max_airmass"] + 1e-6
        assert lim["ha_range_h"][0] - 1e-6 <= o["hour_angle_mid_h"] <= lim["ha_range_h"][1] + 1e-6
        assert o["moon_distance_deg"] >= lim["moon_gap_deg"] - 1e-6
        assert doc["night"]["dusk"]["nautical"] <= o["start"] <= doc["night"]["dawn"]["nautical"]
    names = {o["name"] for o in obs}
    left = {n["name"] for n in doc["not_placed"]}
    assert not names & left
    assert doc["metrics"]["placed"] == len(names)
    assert doc["metrics"]["targets"] == len(names) + len(left)  # nothing dropped silently


def test_same_inputs_same_bytes_apart_from_generated_at(demo_plan, tmp_path) -> None:
    _, first = demo_plan
    again = tmp_path / "again.json"
    with pytest.raises(SystemExit):
        main(["plan", "--demo", "--format", "json", "--out", str(again), "--quiet"])
    a, b = json.loads(first), json.loads(again.read_bytes())
    a.pop("generated_at"), b.pop("generated_at")
    assert a == b


def test_ndjson_and_csv(capsys) -> None:
    code, out, _ = run(["plan", "--demo", "--format", "ndjson", "--method", "dispatch"], capsys)
    assert code == 0
    lines = [json.loads(line) for line in out.splitlines()]
    assert lines and [o["seq"] for o in lines] == list(range(1, len(lines) + 1))
    code, out, _ = run(["plan", "--demo", "--format", "csv", "--method", "dispatch"], capsys)
    assert code == 0
    header = out.splitlines()[0].split(",")
    assert header[:3] == ["seq", "name", "repeat"] and len(out.splitlines()) == len(lines) + 1


def test_table_has_safety_note_and_reasons(capsys) -> None:
    code, out, _ = run(["plan", "--demo"], capsys)
    assert code == 0
    assert "Never point unfiltered optics" in out
    assert "never rises above the horizon here" in out  # Corrie Galaxy at Dec −73°
    assert "too close to the Sun" in out
    assert "@" in out  # each visit marked on its timeline


def test_nothing_observable_has_its_own_status(tmp_path, capsys) -> None:
    cat = tmp_path / "south.csv"
    cat.write_text("name,ra,dec\nDeep South,06:00:00,-80:00:00\n")  # never rises at +38°
    code, out, err = run(["plan", str(cat), "--demo", "--format", "json"], capsys)
    assert code == EXIT_NOTHING_OBSERVABLE
    assert err.startswith("skyplan:") and "Traceback" not in err and out == ""


def test_out_replaces_the_old_file_only_when_done(tmp_path, capsys) -> None:
    target = tmp_path / "tonight.json"
    target.write_text("previous plan\n")
    code, _, _ = run(["plan", "--demo", "--format", "json", "--out", str(target),
                      "--slew-rate", "nonsense"], capsys)
    assert code == EXIT_BAD_INPUT
    assert target.read_text() == "previous plan\n"
    assert [p.name for p in Path(tmp_path).iterdir()] == ["tonight.json"]


def test_near_sun_targets_need_the_override(tmp_path, capsys) -> None:
    # Gannet Star sits about 25° from the Sun on the demo night (site sun_gap 30°)
    code, out, _ = run(["plan", "--demo", "--format", "json", "--dark", "none",
                        "--method", "dispatch"], capsys)
    assert code == 0
    doc = json.loads(out)
    assert "Gannet Star" not in {o["name"] for o in doc["observations"]}
    assert {"name": "Gannet Star", "reason": "near_sun"}.items() <= next(
        n for n in doc["not_placed"] if n["name"] == "Gannet Star").items()
