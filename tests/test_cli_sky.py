"""The ``night`` and ``windows`` commands end to end: JSON layout, demo sanity, bad input.

References, named beside each check: skyfield's almanac and positions (Rhodes 2019) on the
bundled DE421 for the demo night's events and the Moon's distance; the circumpolar rule of
spherical astronomy (a star at latitude φ never sets when δ > 90° − φ + 34′ and never rises
when δ < φ − 90° − 34′; Meeus 1998, eq. 15.1 with h0 = −0°34′).
"""

from __future__ import annotations

import datetime as dt
import json
import re

import numpy as np
import pytest

from skyplan.cli.app import main
from skyplan.engine import bodies, ephemeris

ISO_Z = re.compile(r"^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ$")
DEMO_LAT, DEMO_LON, DEMO_ELEV = 38.2140, -2.8830, 1310.0  # the demo site file (invented site)


def run(capsys, *args: str) -> tuple[int, str, str]:
    try:
        main(list(args))
        code = 0
    except SystemExit as exc:
        code = int(exc.code or 0)
    out, err = capsys.readouterr()
    return code, out, err


def unix(iso: str) -> float:
    return dt.datetime.fromisoformat(iso.replace("Z", "+00:00")).timestamp()


def time_or_null(value) -> bool:
    return value is None or bool(ISO_Z.match(value))


def test_night_demo_json(capsys) -> None:
    code, out, err = run(capsys, "night", "--demo", "-f", "json")
    assert code == 0, err
    doc = json.loads(out)
    for key in ("sunset", "sunrise", "dusk", "dawn", "dark_hours", "sun_state", "moon"):
        assert key in doc
    assert doc["sun_state"] == "normal"
    for side in ("dusk", "dawn"):
        assert set(doc[side]) == {"civil", "nautical", "astronomical"}
        assert all(ISO_Z.match(v) for v in doc[side].values())
    for key in ("rise", "set", "transit", "illumination", "phase_angle_deg"):
        assert key in doc["moon"]
    assert all(time_or_null(doc["moon"][k]) for k in ("rise", "set", "transit"))
    assert 0.0 <= doc["moon"]["illumination"] <= 1.0
    assert 0.0 <= doc["moon"]["phase_angle_deg"] <= 180.0

    order = [doc["sunset"], doc["dusk"]["civil"], doc["dusk"]["nautical"],
             doc["dusk"]["astronomical"], doc["dawn"]["astronomical"], doc["dawn"]["nautical"],
             doc["dawn"]["civil"], doc["sunrise"]]
    times = [unix(v) for v in order]
    assert times == sorted(times)
    dark = (unix(doc["dawn"]["astronomical"]) - unix(doc["dusk"]["astronomical"])) / 3600.0
    assert doc["dark_hours"] == pytest.approx(dark, abs=0.01)

    # skyfield almanac.find_settings/find_risings for the Sun at the demo site: whole seconds
    from skyfield import almanac
    from skyfield.api import wgs84

    eph = ephemeris.planets()
    obs = eph["earth"] + wgs84.latlon(DEMO_LAT, DEMO_LON, DEMO_ELEV)
    t0, t1 = bodies.sf_time(unix(doc["sunset"]) - 3600), bodies.sf_time(unix(doc["sunrise"]) + 3600)
    t_set, _ = almanac.find_settings(obs, eph["sun"], t0, t1)
    t_rise, _ = almanac.find_risings(obs, eph["sun"], t0, t1)
    assert abs((t_set[0].tt - bodies.sf_time(unix(doc["sunset"])).tt) * 86400) <= 1.0
    assert abs((t_rise[0].tt - bodies.sf_time(unix(doc["sunrise"])).tt) * 86400) <= 1.0


WINDOW_KEYS = {"name", "ra_deg", "dec_deg", "rise", "transit", "set", "transit_alt_deg",
               "transit_airmass", "windows", "usable_minutes", "best_time", "best_airmass",
               "status", "lost_minutes"}


def test_windows_demo_json(capsys) -> None:
    code, out, err = run(capsys, "windows", "--demo", "-f", "json")
    assert code == 0, err
    records = json.loads(out)["targets"]
    assert len(records) == 40  # the demo programme's rows
    spans = []
    for rec in records:
        assert WINDOW_KEYS <= set(rec)
        for key in ("rise", "transit", "set", "best_time"):
            assert time_or_null(rec[key])
        total = 0.0
        for w in rec["windows"]:
            assert set(w) == {"start", "end", "minutes"}
            assert ISO_Z.match(w["start"]) and ISO_Z.match(w["end"])
            assert w["minutes"] == pytest.approx((unix(w["end"]) - unix(w["start"])) / 60,
                                                 abs=0.02)
            total += w["minutes"]
        assert rec["usable_minutes"] == pytest.approx(total, abs=0.05)
        spans.append(rec["usable_minutes"] + sum(rec["lost_minutes"].values()))
        if rec["windows"]:
            assert rec["windows"][0]["start"] <= rec["best_time"] <= rec["windows"][-1]["end"]
            # the demo site's air-mass limit; Kasten & Young (1989) give 0.9997 at the zenith
            assert 0.9997 <= rec["best_airmass"] <= 2.5
    # lost and usable minutes add up to the same span for every target (rounding: 0.01 each)
    assert max(spans) - min(spans) <= 0.15

    # the circumpolar rule at the demo latitude (Meeus 1998, eq. 15.1, h0 = −34′)
    never = [r for r in records if r["dec_deg"] < DEMO_LAT - 90.0 - 34 / 60 - 0.5]
    always = [r for r in records if r["dec_deg"] > 90.0 - DEMO_LAT + 34 / 60 + 0.5]
    assert len(never) >= 3 and len(always) >= 3  # e.g. Corrie Galaxy at −73°, Quill Arc at +72°
    for rec in never:
        assert rec["status"] == "never_up"
        assert rec["rise"] is None and rec["set"] is None
        assert rec["windows"] == [] and rec["usable_minutes"] == 0.0
    for rec in always:
        assert rec["status"] in ("always_up", "always_up_blocked")
        assert rec["rise"] is None and rec["set"] is None
    assert {r["name"] for r in never} >= {"Corrie Galaxy"}


def test_windows_moon_gap_takes_minutes_from_the_target_beside_the_moon(capsys) -> None:
    """Ember Knot sits beside the Moon on the demo night; skyfield's topocentric distance at
    local midnight confirms it is within the 10° gap, and the gap costs it minutes."""
    code, out, err = run(capsys, "windows", "--demo", "--moon-gap", "10", "-f", "json")
    assert code == 0, err
    ember = next(r for r in json.loads(out)["targets"] if r["name"] == "Ember Knot")
    assert ember["lost_minutes"]["moon"] > 0.0

    from skyfield.api import Star, wgs84

    eph = ephemeris.planets()
    midnight = dt.datetime(2026, 12, 19, 0, 0, tzinfo=dt.timezone(dt.timedelta(hours=1)))
    here = (eph["earth"] + wgs84.latlon(DEMO_LAT, DEMO_LON, DEMO_ELEV)).at(
        bodies.sf_time(np.array([midnight.timestamp()])))
    star = here.observe(Star(ra_hours=ember["ra_deg"] / 15.0, dec_degrees=ember["dec_deg"]))
    gap = star.apparent().separation_from(here.observe(eph["moon"]).apparent()).degrees[0]
    assert gap < 10.0
    assert ember["moon_distance_deg"] == pytest.approx(gap, abs=0.05)


def test_windows_demo_table_and_csv(capsys) -> None:
    code, out, err = run(capsys, "windows", "--demo", "-f", "csv")
    assert code == 0, err
    lines = out.strip().splitlines()
    assert len(lines) == 41 and lines[0].startswith("name,")
    code, out, err = run(capsys, "windows", "--demo")
    assert code == 0, err
    assert "Ember Knot" in out and "Corrie Galaxy" in out


@pytest.mark.parametrize("args, names", [
    (("windows", "{catalog}", "--demo"), "Vulcanoid Nine"),
    (("windows", "--demo", "--min-alt", "95"), "--min-alt"),
    (("windows", "--demo", "--dark", "purple"), "--dark"),
    (("windows", "--demo", "--ha-range", "3,1"), "--ha-range"),
    (("windows", "--demo", "--date", "2026-13-45"), "--date"),
    (("night", "--demo", "--date", "yesterday-ish"), "--date"),
    (("night", "--site", "38,-2.9", "--date", "2199-01-01"), "DE421"),  # beyond the ephemeris
])
def test_bad_input_is_one_line_and_status_2(capsys, tmp_path, args, names) -> None:
    catalog = tmp_path / "targets.csv"
    catalog.write_text("name,ra,dec\nJupiter,,\nVulcanoid Nine,,\n")
    code, out, err = run(capsys, *(a.format(catalog=catalog) for a in args))
    assert code == 2
    assert out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("skyplan: ")
    assert names in lines[0]
    assert "Traceback" not in err
