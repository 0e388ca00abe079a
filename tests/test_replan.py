"""Re-planning the rest of a night (``plan --start/--done``), ``skyplan next``, cron safety.

The demo night (Hollowmere, Europe/Madrid, 2026-12-18) is used throughout.  Local times
become UTC with the IANA tz database: Europe/Madrid is UTC+01:00 in December (no daylight
saving then), so 23:00 local on 18 December is 22:00Z and 02:30 the next morning is 01:30Z
on the 19th.  Plans are compared with each other (the same inputs, with and without a
start), and every plan document is checked against the schema shipped with the package
(JSON Schema 2020-12, validated with the jsonschema library).
"""

from __future__ import annotations

import datetime as dt
import json
from importlib import resources

import jsonschema
import pytest

from skyplan.cli.app import main
from skyplan.errors import EXIT_BAD_INPUT, EXIT_NOTHING_OBSERVABLE, EXIT_OK

FAST = ["--demo", "--method", "dispatch", "--quiet"]


def run(args, capsys):
    with pytest.raises(SystemExit) as exc:
        main(args)
    out = capsys.readouterr()
    return exc.value.code, out.out, out.err


def plan_json(args, capsys) -> dict:
    code, out, err = run(["plan", *FAST, "--format", "json", *args], capsys)
    assert code == EXIT_OK, err
    return json.loads(out)


@pytest.fixture(scope="module")
def schema() -> dict:
    return json.loads((resources.files("skyplan") / "data" / "plan.schema.json").read_text())


@pytest.fixture(scope="module")
def whole_night(tmp_path_factory) -> dict:
    path = tmp_path_factory.mktemp("whole") / "night.json"
    with pytest.raises(SystemExit) as exc:
        main(["plan", *FAST, "--format", "json", "--out", str(path)])
    assert exc.value.code == EXIT_OK
    return json.loads(path.read_text())


def test_start_and_done_leave_out_the_past_and_the_done(whole_night, schema, tmp_path,
                                                        capsys) -> None:
    first = [o["name"] for o in whole_night["observations"][:2]]
    log = tmp_path / "done.txt"
    log.write_text(f"# done before the cloud\n{first[0]}\n{first[1]}  # twice asked once\n")
    doc = plan_json(["--start", "23:00", "--done", str(log)], capsys)
    jsonschema.validate(doc, schema)
    assert doc["rest_of_night"]["start"] == "2026-12-18T22:00:00Z"  # 23:00 Madrid, UTC+1
    assert doc["observations"], "the rest of the demo night has visits"
    assert all(o["start"] >= "2026-12-18T22:00:00Z" for o in doc["observations"])
    names = {o["name"] for o in doc["observations"]}
    assert not names & set(first)
    reasons = {n["name"]: n["reason"] for n in doc["not_placed"]}
    assert reasons[first[0]] == reasons[first[1]] == "done"
    assert doc["metrics"]["targets"] == len(names) + len(doc["not_placed"])
    had_window = {o["name"] for o in whole_night["observations"]} | {
        n["name"] for n in whole_night["not_placed"]
        if n["reason"] in ("no_room", "too_short", "poor_airmass")}
    passed = {n for n, r in reasons.items() if r == "passed"}
    assert passed and passed <= had_window


def test_repeats_are_counted(tmp_path, capsys) -> None:
    whole = plan_json(["--repeats", "2"], capsys)
    twice = [o["name"] for o in whole["observations"] if o["repeat"] == 2]
    assert len(twice) >= 2
    a, b = twice[:2]
    log = tmp_path / "done.txt"
    log.write_text(f"{a}\n{b}\n{b}\n")
    doc = plan_json(["--repeats", "2", "--done", str(log)], capsys)
    of_a = [o for o in doc["observations"] if o["name"] == a]
    assert [o["repeat"] for o in of_a] == [2], "done once of two: one more, numbered 2"
    assert not [o for o in doc["observations"] if o["name"] == b], "done twice of two"
    done = {d["name"]: d["visits"] for d in doc["rest_of_night"]["done"]}
    assert done == {a: 1, b: 2}
    assert all(o["repeat"] <= 2 for o in doc["observations"])


def test_spacing_counts_from_the_done_visit(whole_night, tmp_path, capsys) -> None:
    o = whole_night["observations"][0]
    log = tmp_path / "done.ndjson"
    log.write_text(json.dumps({"name": o["name"], "start": o["start"], "end": o["end"]}) + "\n")
    doc = plan_json(["--repeats", "2", "--spacing", "60", "--done", str(log)], capsys)
    later = [v for v in doc["observations"] if v["name"] == o["name"]]
    started = dt.datetime.fromisoformat(o["start"].replace("Z", "+00:00"))
    for v in later:
        assert v["repeat"] == 2
        t = dt.datetime.fromisoformat(v["start"].replace("Z", "+00:00"))
        assert t - started >= dt.timedelta(minutes=60)
    for v in doc["observations"]:  # nothing overlaps the visit done
        assert v["end"] <= o["start"] or v["start"] >= o["end"]


def test_done_plan_file_round_trip(whole_night, tmp_path, capsys) -> None:
    marked = json.loads(json.dumps(whole_night))
    for o in marked["observations"][:3]:
        o["done"] = True
    path = tmp_path / "tonight.json"
    path.write_text(json.dumps(marked, indent=2))
    last_end = marked["observations"][2]["end"]
    doc = plan_json(["--start", last_end, "--done", str(path)], capsys)
    gone = {o["name"] for o in marked["observations"][:3]}
    assert not gone & {o["name"] for o in doc["observations"]}
    assert all(o["start"] >= last_end for o in doc["observations"])


def test_start_before_dusk_is_the_whole_night(whole_night, capsys) -> None:
    doc = plan_json(["--start", "2026-12-18T15:00:00+01:00"], capsys)
    assert doc["observations"] == whole_night["observations"]
    assert doc["not_placed"] == whole_night["not_placed"]


def test_clock_times_follow_the_night(capsys) -> None:
    doc = plan_json(["--start", "02:30"], capsys)  # before noon: the next morning
    assert doc["rest_of_night"]["start"] == "2026-12-19T01:30:00Z"
    assert all(o["start"] >= "2026-12-19T01:30:00Z" for o in doc["observations"])
    code, out, err = run(["plan", "--method", "dispatch", "--demo", "--start",
                          "2026-12-18T23:30:00Z", "-f", "json", "--quiet"], capsys)
    assert code == EXIT_OK
    assert json.loads(out)["night"]["date"] == "2026-12-18"


def test_start_after_dawn_is_nothing_observable(capsys) -> None:
    code, out, err = run(["plan", *FAST, "--start", "09:30"], capsys)
    assert code == EXIT_NOTHING_OBSERVABLE
    assert out == "" and err.startswith("skyplan: ") and "Traceback" not in err


def test_exit_3_replaces_yesterdays_file_with_an_empty_plan(schema, tmp_path, capsys) -> None:
    target = tmp_path / "tonight.json"
    target.write_text('{"schema": "skyplan.plan/1", "observations": ["yesterday"]}\n')
    code, out, _ = run(["plan", "--demo", "--min-alt", "89.5", "--method", "dispatch",
                        "--date", "2026-12-18", "-f", "json", "--out", str(target)], capsys)
    assert code == EXIT_NOTHING_OBSERVABLE and out == ""
    doc = json.loads(target.read_text())
    jsonschema.validate(doc, schema)
    assert doc["night"]["date"] == "2026-12-18"
    assert doc["observations"] == [] and doc["metrics"]["placed"] == 0
    assert len(doc["not_placed"]) == doc["metrics"]["targets"] == 40
    assert sorted(p.name for p in tmp_path.iterdir()) == ["tonight.json"]


def test_next_agrees_with_the_plan_from_the_same_moment(tmp_path, capsys) -> None:
    log = tmp_path / "done.ndjson"
    log.write_text('{"name": "Ivy Trail", "start": "2026-12-18T17:57:00Z", '
                   '"end": "2026-12-18T18:18:00Z"}\n{"name": "Moss Ring"}\n')
    for at in ("19:40", "23:00", "03:15", "2026-12-19T06:00:00+01:00"):
        plan = plan_json(["--start", at, "--done", str(log)], capsys)
        code, out, err = run(["next", *FAST, "--at", at, "--done", str(log), "-f", "json"],
                             capsys)
        answer = json.loads(out)
        assert answer["visit"] == plan["observations"][0], at
        assert answer["next_possible"] == plan["observations"][0]["start"]
        assert [t["name"] for t in answer["then"]] == [
            o["name"] for o in plan["observations"][1:4]]
        assert answer["remaining"]["visits"] == len(plan["observations"])
        assert code == (EXIT_OK if answer["status"] == "observe" else EXIT_NOTHING_OBSERVABLE)
        assert answer["why"] and answer["status"] in ("observe", "wait")


def test_next_before_dusk_waits_and_after_dawn_is_over(whole_night, capsys) -> None:
    code, out, _ = run(["next", *FAST, "--at", "15:00", "-f", "json"], capsys)
    answer = json.loads(out)
    assert code == EXIT_NOTHING_OBSERVABLE and answer["status"] == "wait"
    assert answer["visit"] == whole_night["observations"][0]
    assert answer["wait_s"] > 3 * 3600  # 15:00 to after dusk (about 18:56 local)
    code, out, _ = run(["next", *FAST, "--at", "09:00", "-f", "json"], capsys)
    answer = json.loads(out)
    assert code == EXIT_NOTHING_OBSERVABLE
    assert answer["status"] == "over" and answer["visit"] is None
    assert answer["next_possible"] is None
    code, out, _ = run(["next", *FAST, "--at", "23:00"], capsys)
    text = " ".join(out.split())
    assert code == EXIT_OK and "observe now" in text and "Never point unfiltered" in text


def test_same_inputs_same_answers(tmp_path, capsys) -> None:
    log = tmp_path / "done.txt"
    log.write_text("Pike Double\n")
    runs = []
    for _ in range(2):
        doc = plan_json(["--start", "21:10", "--done", str(log)], capsys)
        code, out, _ = run(["next", *FAST, "--at", "21:10", "--done", str(log), "-f", "json"],
                           capsys)
        nxt = json.loads(out)
        doc.pop("generated_at"), nxt.pop("generated_at")
        runs.append((doc, nxt))
    assert runs[0] == runs[1]


@pytest.mark.parametrize(("text", "where"), [
    ('{"name": "Ivy Trail"}\n{"name": "Moss Ring"}\n{"name": \n', ":3"),
    ('{"name": "Ivy Trail"}\n\n{"start": "2026-12-18T20:00:00Z"}\n', ":3, field 'name'"),
    ('{"name": "Ivy Trail", "end": "yesterday"}\n', ":1, field 'end'"),
    ('{"name": "Ivy Trail", "start": "2026-12-10T20:00:00Z"}\n', ":1, field 'start'"),
    ('{"name": "Ivy Trail", "done": "yes"}\n', ":1, field 'done'"),
    ('{"name": "Ivy Trail", "start": "2026-12-18T20:10:00Z", '
     '"end": "2026-12-18T20:00:00Z"}\n', ":1, field 'end'"),
])
def test_bad_done_files_name_file_line_and_field(text, where, tmp_path, capsys) -> None:
    log = tmp_path / "done.ndjson"
    log.write_text(text)
    code, out, err = run(["plan", *FAST, "--done", str(log)], capsys)
    assert code == EXIT_BAD_INPUT and out == ""
    assert err.count("\n") == 1 and "Traceback" not in err
    assert err.startswith(f"skyplan: {log}{where}")


def test_bad_plan_done_file_and_bad_options(whole_night, tmp_path, capsys) -> None:
    marked = json.loads(json.dumps(whole_night))
    marked["observations"][1]["done"] = "yes"
    path = tmp_path / "tonight.json"
    path.write_text(json.dumps(marked, indent=2))
    code, _, err = run(["plan", *FAST, "--done", str(path)], capsys)
    assert code == EXIT_BAD_INPUT
    text = path.read_text().splitlines()
    line = next(k for k, t in enumerate(text, 1) if t.strip() == '"done": "yes"')
    opens = [k for k, t in enumerate(text[:line], 1) if t == "    {"]  # json.dumps indent 2
    assert err.startswith(f"skyplan: {path}:{opens[-1]}, field 'observations[1].done'")
    marked["observations"][1]["done"] = True
    marked["night"]["date"] = "2026-12-17"
    path.write_text(json.dumps(marked, indent=2))
    code, _, err = run(["plan", *FAST, "--done", str(path)], capsys)
    assert code == EXIT_BAD_INPUT and "field 'night.date'" in err
    code, _, err = run(["plan", *FAST, "--done", str(tmp_path / "nothere.txt")], capsys)
    assert code == EXIT_BAD_INPUT and "nothere.txt" in err and "no such file" in err
    code, _, err = run(["plan", *FAST, "--start", "25:99"], capsys)
    assert code == EXIT_BAD_INPUT and err.startswith("skyplan: field '--start'")
    code, _, err = run(["next", *FAST, "--at", "soon"], capsys)
    assert code == EXIT_BAD_INPUT and err.startswith("skyplan: field '--at'")


def test_unknown_done_names_are_notes(tmp_path, capsys) -> None:
    log = tmp_path / "done.txt"
    log.write_text("Ivy Trail\nNo Such Target\n")
    code, out, err = run(["plan", "--demo", "--method", "dispatch", "-f", "json", "--done",
                          str(log)], capsys)
    assert code == EXIT_OK
    assert json.loads(out)["rest_of_night"]["unknown_done"] == ["No Such Target"]
    assert "skyplan: note:" in err and "No Such Target" in err


def test_api_start_done_and_next_visit(capsys) -> None:
    import skyplan

    site = skyplan.site(demo=True)
    night = skyplan.night(site, "2026-12-18")
    programme = skyplan.read_targets(demo=True)
    at = dt.datetime(2026, 12, 18, 23, 0, tzinfo=dt.timezone(dt.timedelta(hours=1)))
    made = skyplan.plan(programme, site, night, method="dispatch", start=at,
                        done=["Cinder Veil"])
    records = made.to_records()
    assert records and all(r["start"] >= "2026-12-18T22:00:00Z" for r in records)
    assert "Cinder Veil" not in {r["name"] for r in records}
    answer = skyplan.next_visit(programme, site, at=at, done=["Cinder Veil"],
                                method="dispatch")
    assert answer.status == "observe" and answer.at == at
    assert answer.to_record()["visit"] == records[0]
    assert answer.next_possible == dt.datetime.fromisoformat(
        records[0]["start"].replace("Z", "+00:00"))
    with pytest.raises(skyplan.InputError, match="start"):
        skyplan.plan(programme, site, night, start=dt.datetime(2026, 12, 18, 23, 0))
    with pytest.raises(skyplan.NothingObservable) as exc:
        skyplan.plan(programme, site, night, method="dispatch",
                     start=dt.datetime(2026, 12, 19, 9, 0, tzinfo=dt.UTC))
    assert len(exc.value.plan) == 0
    assert exc.value.plan.to_document()["night"]["date"] == "2026-12-18"


def test_next_agrees_with_the_optimised_plan_too(capsys) -> None:
    # a generous time limit, so that each solver stage ends by optimality or its node limit
    opts = ["--demo", "--method", "optimal", "--time-limit", "30", "--quiet", "-f", "json"]
    code, out, _ = run(["plan", *opts, "--start", "23:00"], capsys)
    assert code == EXIT_OK
    first = json.loads(out)["observations"][0]
    code, out, _ = run(["next", *opts, "--at", "23:00"], capsys)
    assert json.loads(out)["visit"] == first


@pytest.mark.parametrize("extra", [["--mount", "german-equatorial"], ["--baseline", "20"]])
def test_next_takes_the_mount_and_baseline_as_plan_does(extra, capsys) -> None:
    """``next`` with ``--mount`` or ``--baseline`` answers with the first visit of the plan
    made from the same moment with the same option (its pier side too)."""
    opts = ["--demo", "--quiet", "-f", "json", *extra]
    code, out, _ = run(["plan", *opts, "--start", "23:00"], capsys)
    assert code == EXIT_OK
    first = json.loads(out)["observations"][0]
    code, out, _ = run(["next", *opts, "--at", "23:00"], capsys)
    assert json.loads(out)["visit"] == first
    if "--mount" in extra:
        assert first["pier_side"] in ("east", "west")


def test_now_is_the_current_time(monkeypatch, capsys) -> None:
    from skyplan.inputs import timeinput

    monkeypatch.setattr(timeinput, "_now",
                        lambda: dt.datetime(2026, 12, 18, 22, 0, tzinfo=dt.UTC))
    now = plan_json(["--start", "now"], capsys)
    clock = plan_json(["--start", "23:00"], capsys)  # 22:00Z is 23:00 in Madrid
    assert now["rest_of_night"]["start"] == "2026-12-18T22:00:00Z"
    assert now["observations"] == clock["observations"]
    code, out, _ = run(["next", *FAST, "-f", "json"], capsys)  # --at defaults to now
    assert json.loads(out)["visit"] == clock["observations"][0]


def test_progress_counts_names_against_the_catalogue() -> None:
    import numpy as np

    from skyplan.planning import replan

    names = np.array(["B", "A", "C", "A"], dtype=object)  # a duplicate: the first counts
    rest = replan.progress(names, None, ["A", "Z", "A", "C", "Y", "Z"],
                           [10.0, np.nan, 30.0, 5.0, np.nan, np.nan],
                           [20.0, np.nan, 40.0, 8.0, np.nan, np.nan])
    assert rest.done.tolist() == [0, 2, 1, 0]
    assert rest.unknown == ("Z", "Y")
    assert np.isnan(rest.last_start_unix[0]) and rest.last_start_unix[1] == 30.0
    assert rest.busy_start.tolist() == [5.0, 10.0, 30.0]
    assert rest.busy_end.tolist() == [8.0, 20.0, 40.0]
    merged = replan.progress(names, None, ["A", "B"], [0.0, 5.0], [10.0, 12.0])
    assert merged.busy_start.tolist() == [0.0] and merged.busy_end.tolist() == [12.0]


def test_rest_windows_match_a_brute_force_check() -> None:
    import numpy as np

    from skyplan.engine.intervals import Intervals
    from skyplan.planning import replan

    rng = np.random.default_rng(7)
    rows = np.repeat(np.arange(6), 2)
    start = np.sort(rng.uniform(0, 1000, 12).reshape(6, 2), axis=1)
    s = np.concatenate([start[:, :1], start[:, 1:] + 1000], axis=1).ravel()
    e = s + rng.uniform(50, 600, 12)
    windows = Intervals.build(rows, s, e)
    rest = replan.progress(np.array(list("abcdef"), dtype=object), 400.0,
                           ["b", "d", "e"], [700.0, 1200.0, 1500.0],
                           [760.0, 1300.0, np.nan])
    got = replan.rest_windows(windows, rest, spacing_s=100.0)
    t = np.arange(0.0, 2700.0, 0.5)
    for r in range(6):
        inside = ((t[:, None] > windows.start[windows.rows == r])
                  & (t[:, None] < windows.end[windows.rows == r])).any(axis=1)
        want = inside & (t > 400.0) & ~((t >= 700) & (t <= 760)) & ~((t >= 1200) & (t <= 1300))
        want &= t > {1: 800.0, 3: 1300.0, 4: 1600.0}.get(r, -np.inf)
        have = ((t[:, None] > got.start[got.rows == r])
                & (t[:, None] < got.end[got.rows == r])).any(axis=1)
        assert (have == want).all(), r
    assert replan.rest_windows(windows, None, 100.0) is windows


LAMPS = ("name,ra,dec,priority,exposure_s\n"
         "Early Lamp,02:00:00,+40:00:00,3,600\n"
         "Late Lamp,08:00:00,+30:00:00,3,600\n")
LAMP_SITE = ["--site", "40,-3,600", "--date", "2026-12-18"]


def test_next_says_when_a_later_visit_starts(tmp_path, capsys) -> None:
    # Two targets: at 20:00 Madrid (19:00Z) Early Lamp is up but the plan takes it at its
    # transit, about 21:17; an answer of "observe now" was given for such a visit.
    cat = tmp_path / "two.csv"
    cat.write_text(LAMPS)
    code, out, _ = run(["next", str(cat), *LAMP_SITE, "--at", "20:00", "-f", "json"], capsys)
    answer = json.loads(out)
    start = dt.datetime.fromisoformat(answer["visit"]["start"])
    at = dt.datetime(2026, 12, 18, 19, 0, tzinfo=dt.UTC)
    assert (start - at).total_seconds() > 3600  # the plan waits for the transit
    assert code == EXIT_NOTHING_OBSERVABLE and answer["status"] == "wait"
    assert answer["wait_s"] == pytest.approx((start - at).total_seconds(), abs=1.0)
    assert answer["summary"].startswith("the best next visit starts at 21:1")
    assert "observe now" not in answer["summary"]
    # Early Lamp itself is up now, but nothing else can be observed before its visit
    assert "nothing else can be observed and end before it" in answer["summary"]
    assert answer["meanwhile"] == []
    code, out, _ = run(["next", str(cat), *LAMP_SITE, "--at", "20:00"], capsys)
    text = " ".join(out.split())
    assert code == EXIT_NOTHING_OBSERVABLE and "observe now" not in text and "in 78 min" in text
    code, out, _ = run(["next", str(cat), *LAMP_SITE, "--at", "23:00", "-f", "json"], capsys)
    answer = json.loads(out)
    assert code == EXIT_OK and answer["status"] == "observe"
    assert answer["visit"]["start"] == "2026-12-18T22:00:00Z" and answer["wait_s"] == 0.0


def test_next_lists_what_could_be_observed_before_a_later_visit(tmp_path, capsys) -> None:
    import astropy.units as u
    import numpy as np
    from astropy.coordinates import AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    cat = tmp_path / "three.csv"
    cat.write_text(LAMPS + "Side Lamp,04:00:00,+30:00:00,2,600\n")
    code, out, _ = run(["next", str(cat), *LAMP_SITE, "--at", "20:00", "-f", "json"], capsys)
    answer = json.loads(out)
    assert code == EXIT_NOTHING_OBSERVABLE and answer["status"] == "wait"
    assert answer["visit"]["name"] == "Early Lamp"
    assert "1 other visit could be observed before it" in answer["summary"]
    (early,) = answer["meanwhile"]
    later = next(t for t in answer["then"] if t["name"] == "Side Lamp")
    assert early["name"] == "Side Lamp" and early["planned_start"] == later["start"]
    end = dt.datetime.fromisoformat(early["end"])
    # settle 10 s + setup 60 s + exposure 600 s from 19:00Z, ending before Early Lamp's start
    assert end == dt.datetime(2026, 12, 18, 19, 11, 10, tzinfo=dt.UTC)
    assert end < dt.datetime.fromisoformat(answer["visit"]["start"])
    assert early["planned_airmass_mid"] < early["airmass_mid"]
    # the air mass at mid-exposure (19:06:10Z) against astropy's altitude (no refraction)
    # and the plane-parallel sec z: the site's default model may differ by 1 %
    frame = AltAz(obstime=Time("2026-12-18T19:06:10", scale="utc"),
                  location=EarthLocation.from_geodetic(-3 * u.deg, 40 * u.deg, 600 * u.m))
    alt = SkyCoord(ra=60 * u.deg, dec=30 * u.deg).transform_to(frame).alt.deg
    assert early["airmass_mid"] == pytest.approx(1 / np.sin(np.radians(alt)), rel=0.01)
    code, out, _ = run(["next", str(cat), *LAMP_SITE, "--at", "20:00"], capsys)
    assert "before it Side Lamp, ending 20:11" in " ".join(out.split())
