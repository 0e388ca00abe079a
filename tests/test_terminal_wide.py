"""The windows, plan and next tables fitted to the terminal width (render/windowview.py,
render/planview.py): no cell cut with '…', no line longer than the width, no trailing
spaces, the timeline strip as fine as the room allows and its legend saying so."""

from __future__ import annotations

import json
import re
import zoneinfo

import numpy as np
import pytest

from skyplan import notices
from skyplan.cli import app
from skyplan.engine.ephemeris import configure_astropy_offline
from skyplan.engine.timeline import BLOCKED, DOWN, LIGHT, PLANNED, USABLE
from skyplan.render import windowview

configure_astropy_offline()

NIGHT = ("-d", "2026-06-20")
COMMANDS = {
    "windows": ("windows", "--demo", *NIGHT),
    "plan": ("plan", "--demo", "--method", "dispatch", *NIGHT),
    "next": ("next", "--demo", *NIGHT, "--at", "2026-06-20T23:00+02:00"),
}


def run(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    notices.take()
    with pytest.raises(SystemExit) as exc:
        app.main(list(argv))
    out, err = capsys.readouterr()
    return int(exc.value.code or 0), out, err


def fitted(out: str, width: int) -> None:
    lines = out.splitlines()
    assert "…" not in out
    assert max(len(line) for line in lines) <= width, max(lines, key=len)
    assert all(line == line.rstrip() for line in lines)


@pytest.mark.parametrize("name", COMMANDS)
@pytest.mark.parametrize("width", [80, 100, 120])
def test_fits_the_width(name, width, capsys, monkeypatch) -> None:
    monkeypatch.setenv("COLUMNS", str(width))
    code, out, _ = run(capsys, *COMMANDS[name])
    assert code == 0
    fitted(out, width)


@pytest.mark.parametrize("name", COMMANDS)
def test_piped_without_columns_is_100(name, capsys, monkeypatch) -> None:
    monkeypatch.delenv("COLUMNS", raising=False)
    code, out, _ = run(capsys, *COMMANDS[name])
    assert code == 0
    fitted(out, 100)


def test_rows_stay_on_one_line_and_wide_shows_everything(capsys, monkeypatch) -> None:
    monkeypatch.setenv("COLUMNS", "120")
    _, out, _ = run(capsys, *COMMANDS["windows"])
    rows = [line for line in out.splitlines() if re.match(r"^[A-Z][a-z]+ [A-Z][a-z]+ +\S", line)]
    assert len(rows) == 40  # the demo catalogue's 40 targets, one line each
    _, wide, _ = run(capsys, *COMMANDS["windows"], "--wide")
    header = wide.splitlines()[2].split()
    for column in ("target", "rise", "set", "windows", "best", "lost", "timeline"):
        assert column in header
    assert "left out" not in wide and "one character ≈ 11 min" in wide


def test_plan_keeps_name_times_altitude_airmass(capsys, monkeypatch) -> None:
    monkeypatch.setenv("COLUMNS", "80")
    _, out, _ = run(capsys, *COMMANDS["plan"])
    header = out.splitlines()[2].split()
    assert header[:4] == ["#", "start", "UTC", "target"] or header[:3] == ["#", "start",
                                                                          "target"]
    assert "alt" in header and "airmass" in header
    first = next(line for line in out.splitlines() if line.startswith(" 1 "))
    assert re.search(r" 1  \d\d:\d\d .* \d+° .* \d\.\d\d", first)
    _, wide, _ = run(capsys, *COMMANDS["plan"], "--wide")
    assert "@" in wide and "left out" not in wide


def test_strip_legend_follows_the_resolution() -> None:
    codes = np.array([[LIGHT, DOWN, BLOCKED, USABLE, DOWN, PLANNED, DOWN]], dtype=np.uint8)
    # two bins a character: each character shows the best state of its two bins
    assert windowview.coarser(codes, 2).tolist() == [[DOWN, USABLE, PLANNED, DOWN]]
    assert windowview.coarser(codes, 1).tolist() == codes.tolist()


# ------------------------------------------------------------------ the windows document


def windows_schema() -> dict:
    from importlib import resources

    return json.loads((resources.files("skyplan") / "data" / "windows.schema.json").read_text())


def test_windows_json_is_one_versioned_document(capsys) -> None:
    """Checked with the jsonschema library (JSON Schema 2020-12) against the shipped schema;
    the site, night and limits are the plan document's records."""
    import jsonschema

    schema = windows_schema()
    jsonschema.Draft202012Validator.check_schema(schema)
    code, out, _ = run(capsys, "windows", "--demo", *NIGHT, "-f", "json")
    assert code == 0
    doc = json.loads(out)
    jsonschema.validate(doc, schema)
    assert list(doc) == ["schema", "site", "night", "limits", "targets"]
    assert doc["schema"] == "skyplan.windows/1" and len(doc["targets"]) == 40
    code, out, _ = run(capsys, "plan", "--demo", "--method", "dispatch", *NIGHT, "-f", "json")
    plan = json.loads(out)
    for key in ("site", "night", "limits"):
        assert doc[key] == plan[key]
    code, out, _ = run(capsys, "windows", "--demo", *NIGHT, "-f", "ndjson")
    assert [json.loads(line) for line in out.splitlines()] == doc["targets"]


def test_large_windows_document_is_streamed_whole(capsys, monkeypatch) -> None:
    """Above the indented size the document is written block by block: the same document."""
    import jsonschema

    from skyplan.cli import windows as sky

    code, out, _ = run(capsys, "windows", "--demo", *NIGHT, "-f", "json")
    small = json.loads(out)
    monkeypatch.setattr(sky, "SMALL_JSON", 0)
    code, out, _ = run(capsys, "windows", "--demo", *NIGHT, "-f", "json")
    assert code == 0 and "\n" not in out.rstrip("\n")
    big = json.loads(out)
    jsonschema.validate(big, windows_schema())
    assert big == small


def test_plan_names_the_apparent_place_and_reads_old_files(capsys, tmp_path) -> None:
    from skyplan.inputs import planfile

    code, out, _ = run(capsys, "plan", "--demo", "--method", "dispatch", *NIGHT, "-f", "json")
    doc = json.loads(out)
    first = doc["observations"][0]
    assert doc["schema"] == "skyplan.plan/2.2"
    assert "ra_apparent_deg" in first and "ra_deg" not in first and "dec_deg" not in first
    new = tmp_path / "new.json"
    new.write_text(out)
    old_doc = json.loads(out)
    old_doc["schema"] = "skyplan.plan/1.1"
    for o in old_doc["observations"]:
        o["ra_deg"], o["dec_deg"] = o.pop("ra_apparent_deg"), o.pop("dec_apparent_deg")
    old = tmp_path / "old.json"
    old.write_text(json.dumps(old_doc))
    zone = zoneinfo.ZoneInfo(doc["site"]["zone"])
    got = [planfile.observations(planfile.read_plan_file(p), zone)[0] for p in (new, old)]
    assert [(t.ra_date_deg, t.dec_date_deg) for t in got[0]] == \
        [(t.ra_date_deg, t.dec_date_deg) for t in got[1]]
    assert got[0][0].ra_date_deg == first["ra_apparent_deg"]


# ------------------------------------------------------------------ chart altitude --plan


def test_chart_numbers_each_visit_in_plan_order(capsys, tmp_path) -> None:
    from skyplan.api import charts as chart_api
    from skyplan.render import altitude_chart

    plan = tmp_path / "plan.json"
    code, _, _ = run(capsys, "plan", "--demo", "--method", "dispatch", *NIGHT, "-f", "json",
                     "--out", str(plan))
    assert code == 0
    observations = json.loads(plan.read_text())["observations"]
    read = chart_api.read_plan(plan)
    assert [v.seq for v in read.visits] == [o["seq"] for o in observations]
    scene = chart_api.altitude_scene(read.site, read.night, read.targets, top=None,
                                     visits=read.visits)
    fig = altitude_chart.altitude_figure(scene)
    numbers = [t for t in fig.axes[0].texts if t.get_gid() == "visit-seq"]
    assert sorted(int(t.get_text()) for t in numbers) == list(range(1, len(observations) + 1))
    for t in numbers:  # each number sits on its own target's curve, at the visit's middle
        o = observations[int(t.get_text()) - 1]
        k = scene.names.index(o["name"])
        x, y = t.xy
        assert y == pytest.approx(float(np.interp(x, scene.time_unix, scene.alt_deg[k])))


def test_convert_csv_holds_plain_values(capsys) -> None:
    import csv
    import io

    code, out, _ = run(capsys, "convert", "--demo", "--at", "2026-12-18T21:00Z", "-f", "csv")
    assert code == 0 and "{" not in out
    rows = list(csv.DictReader(io.StringIO(out)))
    assert rows and "site" not in rows[0]
    code, js, _ = run(capsys, "convert", "--demo", "--at", "2026-12-18T21:00Z", "-f", "json")
    site = json.loads(js)[0]["site"]
    for key in ("name", "lat_deg", "lon_deg", "elevation_m", "zone"):
        assert rows[0][f"site_{key}"] == str(site[key])
    for key in ("az_deg", "alt_deg", "refraction_deg"):  # at most 9 decimal places
        assert len(rows[0][key].split(".")[-1]) <= 9
    assert len(rows[0]["hour_angle_h"].split(".")[-1]) <= 10


@pytest.mark.parametrize("width", [80, 100, 120])
def test_resolved_names_keep_one_line_and_their_identifiers_go_below(width, capsys, tmp_path,
                                                                     monkeypatch) -> None:
    """'Vega' resolved offline to 'Vega = HIP 91262' (Hipparcos-2): the name stays in its
    cell on one line, the identifier is a note under the table."""
    monkeypatch.setenv("COLUMNS", str(width))
    catalogue = tmp_path / "names.csv"
    catalogue.write_text("name,ra,dec\nVega,,\nDeneb,,\nAltair,,\nArcturus,,\n")
    for argv in (("plan", "--method", "dispatch"), ("windows",)):
        code, out, _ = run(capsys, *argv, str(catalogue), "--site", "38,-3", *NIGHT)
        assert code == 0
        fitted(out, width)
        assert "Vega = HIP 91262" in out and "(Vega" not in out
        rows = [line for line in out.splitlines() if re.search(r"\bVega\b", line)]
        assert len(rows) == 2  # its row and its note
