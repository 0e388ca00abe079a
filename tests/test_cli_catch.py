"""The ``catch`` command end to end: the demo's timed programme, formats, errors."""

from __future__ import annotations

import csv
import io
import json

import pytest

from skyplan import notices
from skyplan.cli import app
from skyplan.engine.ephemeris import configure_astropy_offline

configure_astropy_offline()

KEYS = ("name", "epoch_number", "ingress", "mid", "egress", "mid_sigma_min", "coverage",
        "baseline_before_min", "baseline_after_min", "alt_ingress_deg", "alt_mid_deg",
        "alt_egress_deg")  # the keys issue 18 fixes


def run(capsys, *argv: str) -> tuple[int, str, str]:
    notices.take()
    with pytest.raises(SystemExit) as exc:
        app.main(list(argv))
    out, err = capsys.readouterr()
    return int(exc.value.code or 0), out, err


def test_demo_lists_a_month_of_events(capsys):
    code, out, err = run(capsys, "catch", "--demo", "-f", "json")
    assert code == 0, err
    doc = json.loads(out)
    assert doc["from"] == "2026-12-18" and doc["to"] == "2027-01-16"
    events = doc["events"]
    assert {e["name"] for e in events} >= {"Corriemoor b", "Feldspar Reach b", "Tollgate Vale",
                                           "Marrow Lantern", "Kestrel Relay", "Quarry Lamp"}
    for e in events:
        assert all(k in e for k in KEYS)
        assert e["ingress"].endswith("Z") and e["ingress"] <= e["mid"] <= e["egress"]
        assert e["kind"] == "fixed" or e["coverage"] >= 0.5
    first = [e for e in events if e["name"] == "Corriemoor b"][0]
    assert first["mid"].startswith("2026-12-18T23:2")  # the demo's night (docs/timed.md)
    assert first["coverage"] == 1.0 and first["baseline_before_min"] == 60.0


def test_table_and_csv(capsys):
    code, out, _ = run(capsys, "catch", "--demo", "--to", "2026-12-20", "--wide")
    assert code == 0 and "Corriemoor b" in out and "Events to catch at Hollowmere" in out
    code, out, _ = run(capsys, "catch", "--demo", "--to", "2026-12-20", "-f", "csv",
                       "--baseline", "30", "--min-coverage", "1")
    rows = list(csv.DictReader(io.StringIO(out)))
    assert code == 0 and rows and list(rows[0])[:len(KEYS)] == list(KEYS)
    assert all(float(r["baseline_before_min"] or 0) <= 30.0 for r in rows)


@pytest.mark.parametrize(("args", "field"), [
    (("--min-coverage", "1.5"), "--min-coverage"),
    (("--baseline", "-5"), "--baseline"),
    (("--from", "2026-12-20", "--to", "2026-12-10"), "--to"),
])
def test_bad_options_exit_2(capsys, args, field):
    code, out, err = run(capsys, "catch", "--demo", *args)
    assert code == 2 and field in err and "Traceback" not in err and not out


def test_bad_timing_exit_2(capsys, tmp_path):
    path = tmp_path / "t.csv"
    path.write_text("name,ra,dec,event_t0,period_d,duration_h\nA,10,20,2461000.5,0,2\n")
    code, _, err = run(capsys, "catch", str(path), "--site", "40,-3")
    assert code == 2 and f"{path}:2" in err and "period_d" in err


def test_altitude_chart_shades_tonights_events(tmp_path, capsys):
    """The demo night holds Corriemoor b's transit (epoch 203) among others: one hatched
    band per event or fixed time, none for phase spans."""
    import xml.etree.ElementTree as ET

    path = tmp_path / "alt.svg"
    from skyplan.inputs import scenario

    code, _, err = run(capsys, "chart", "altitude", str(scenario.demo_path("timed.csv")),
                       "--demo", "--out", str(path), "--top", "0")
    assert code == 0, err
    ids = {g.get("id") for g in ET.parse(path).getroot().iter("{http://www.w3.org/2000/svg}g")}
    bands = {i for i in ids if i and i.startswith("event-")}
    assert len(bands) == 5  # Tollgate Vale, Corriemoor b, Feldspar Reach b, two fixed times
