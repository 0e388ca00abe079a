"""Plans built around time-critical visits, re-checked independently.

The demo's timed programme (catalogs-demo/timed.csv) on the demo night: the plan is
re-checked without the planner — visits in time order and apart; every exposure above the
minimum altitude and in nautical darkness on a one-minute grid of astropy altitudes (ICRS →
AltAz, no refraction: 2′ at 20°, so 0.1° of slack); the transit visit at ingress − 1 h ..
egress + 1 h with the event times from astropy's BJD_TDB (``Time.light_travel_time``) of
the visit's edges and T₀ + n·P; the fixed-time visit at its time; the JSON document valid
under the shipped schema and marking the timed visits.
"""

from __future__ import annotations

import json
from importlib import resources

import jsonschema
import numpy as np
import pytest

from skyplan.api.night import night
from skyplan.api.plan import plan
from skyplan.api.sites import site as get_site
from skyplan.api.targets import read_targets
from skyplan.engine import ephemeris
from skyplan.inputs import scenario
from skyplan.inputs.timeinput import iso_utc

ephemeris.configure_astropy_offline()
CORRIEMOOR = (2460740.07547, 3.218734, 2.74)  # T0 (BJD_TDB), P (d), D (h): timed.csv


@pytest.fixture(scope="module")
def made():
    site = get_site(None, demo=True)
    targets = read_targets(str(scenario.demo_path("timed.csv")))
    return site, targets, plan(targets, site, night(site, scenario.DEMO_DATE))


def _astropy(site):
    import astropy.units as u
    from astropy.coordinates import EarthLocation

    return EarthLocation.from_geodetic(site.lon_deg * u.deg, site.lat_deg * u.deg,
                                       site.elevation_m * u.m)


def test_visits_keep_order_and_limits(made):
    import astropy.units as u
    from astropy.coordinates import AltAz, SkyCoord, get_body
    from astropy.time import Time

    site, targets, p = made
    v = p.result.visits
    assert any(x.timed for x in v) and any(not x.timed for x in v)
    for k in range(len(v) - 1):
        assert v[k].end <= v[k + 1].start + 1e-6, (v[k].name, v[k + 1].name)
    where = _astropy(site)
    names = targets.names.tolist()
    for x in v:
        grid = np.arange(x.exposure_start + 30.0, x.end, 60.0)
        t = Time(grid, format="unix", scale="utc")
        frame = AltAz(obstime=t, location=where)
        i = names.index(x.name)
        alt = SkyCoord(targets.ra_deg[i] * u.deg, targets.dec_deg[i] * u.deg) \
            .transform_to(frame).alt.deg
        sun = get_body("sun", t, where).transform_to(frame).alt.deg
        assert np.all(alt >= 20.0 - 0.1), x.name  # the demo site's min_alt_deg
        assert np.all(1.0 / np.sin(np.radians(alt)) <= 2.5 * 1.01), x.name  # max_airmass
        assert np.all(sun <= -12.0 + 0.1), x.name  # dark = nautical


def test_transit_visit_at_its_time(made):
    import astropy.units as u
    from astropy.coordinates import SkyCoord
    from astropy.time import Time

    site, targets, p = made
    visit = [x for x in p.result.visits if x.name == "Corriemoor b"]
    assert len(visit) == 1 and visit[0].timed
    x = visit[0]
    t0, period, dur = CORRIEMOOR
    i = targets.names.tolist().index("Corriemoor b")
    t = Time([x.exposure_start + 3600.0, x.end - 3600.0], format="unix", scale="utc",
             location=_astropy(site))
    bjd = t.tdb + t.light_travel_time(SkyCoord(targets.ra_deg[i] * u.deg,
                                               targets.dec_deg[i] * u.deg), ephemeris="builtin")
    n = x.epoch_number
    expected = t0 + n * period + np.array([-1.0, 1.0]) * dur / 48.0
    assert np.max(np.abs((bjd.jd1 - expected) + bjd.jd2)) * 86400.0 < 0.5  # baselines whole


def test_fixed_time_visit_and_refusals(made):
    _, _, p = made
    relay = [x for x in p.result.visits if x.name == "Kestrel Relay"]
    assert len(relay) == 1 and relay[0].timed and relay[0].epoch_number is None
    assert iso_utc(relay[0].exposure_start) == "2026-12-19T02:30:00Z"
    assert relay[0].end - relay[0].exposure_start == 900.0
    quarry = [x for x in p.result.visits if x.name == "Quarry Lamp"][0]
    assert "2026-12-18T19:30:00Z" <= iso_utc(quarry.exposure_start)
    assert iso_utc(quarry.end) <= "2026-12-18T22:30:00Z"
    reasons = {p.result.windows.names[i]: code for i, code, _ in p.result.not_placed}
    assert reasons["Tollgate Vale"] == "timed_conflict"  # under Corriemoor b (priority 5)
    assert reasons["Feldspar Reach b"] == "timed_not_observable"  # after dawn


def test_json_marks_the_timed_visits(made):
    _, _, p = made
    doc = json.loads(json.dumps(p.to_document()))
    schema = json.loads((resources.files("skyplan") / "data" / "plan.schema.json").read_text())
    jsonschema.validate(doc, schema)
    assert doc["schema"] == "skyplan.plan/2.2"
    timed = {o["name"]: o for o in doc["observations"] if o.get("timed")}
    assert set(timed) == {"Corriemoor b", "Kestrel Relay", "Quarry Lamp", "Marrow Lantern"}
    assert timed["Marrow Lantern"]["epoch_number"] == 63  # the phase span over the night
    assert timed["Corriemoor b"]["epoch_number"] == 203
    assert all("timed" not in o for o in doc["observations"] if o["name"] not in timed)
    placed = {o["name"] for o in doc["observations"]}
    assert doc["metrics"]["placed"] == len(placed)


def test_replan_after_a_timed_visit_began(made):
    """From 21:50 UTC: Tollgate Vale's eclipse (ingress 21:13 UTC) has begun and is passed;
    Corriemoor b's transit (ingress 21:57 UTC) is still caught, its baseline before cut to
    the start; Quarry Lamp's window (to 22:30 UTC) is then taken; nothing overlaps."""
    import datetime as dt

    site, targets, whole = made
    start = dt.datetime(2026, 12, 18, 21, 50, tzinfo=dt.UTC).timestamp()
    p = plan(targets, site, night(site, scenario.DEMO_DATE),
             start=dt.datetime.fromtimestamp(start, dt.UTC))
    reasons = {p.result.windows.names[i]: code for i, code, _ in p.result.not_placed}
    assert reasons["Tollgate Vale"] == "passed"
    assert reasons["Quarry Lamp"] == "timed_conflict"
    was = [x for x in whole.result.visits if x.name == "Corriemoor b"][0]
    now = [x for x in p.result.visits if x.name == "Corriemoor b"][0]
    assert now.timed and now.end == was.end and now.epoch_number == 203
    assert start < now.exposure_start < was.exposure_start + 3600.0  # before ingress
    v = p.result.visits
    assert all(x.start >= start - 1e-6 for x in v)
    assert all(v[k].end <= v[k + 1].start + 1e-6 for k in range(len(v) - 1))


def test_timed_visits_on_a_german_mount_keep_the_pier_side_and_its_slews():
    """The demo's timed programme with a German mount (limits 20 and 30 min past the
    meridian, a 90 s flip): every visit, time-critical or not, lies within its pier side's
    hour-angle range by astropy's apparent sidereal time, and the time between two visits
    holds the setup and the slew on the mount's axes, plus the flip when the side changes
    (places from astropy; the two-axis model recomputed here)."""
    import dataclasses

    import astropy.units as u
    from astropy.coordinates import TETE, SkyCoord
    from astropy.time import Time

    from skyplan.inputs.site import Mount

    german = Mount("german-equatorial", past_meridian_east_min=20.0,
                   past_meridian_west_min=30.0, flip_time_s=90.0, slew_rate_deg_s=(3.0, 2.0),
                   settle_s=8.0)
    site = dataclasses.replace(get_site(None, demo=True), mount=german)
    targets = read_targets(str(scenario.demo_path("timed.csv")))
    made_here = plan(targets, site, night(site, scenario.DEMO_DATE), setup_s=60.0).result
    v = made_here.visits
    assert any(x.timed for x in v)
    # the transit of Corriemoor b spans the meridian (HA about -2 h to +2.4 h): not taken
    why = {targets.names[i]: (code, text) for i, code, text in made_here.not_placed}
    assert why["Corriemoor b"][0] == "timed_not_observable"
    assert "meridian flip" in why["Corriemoor b"][1]
    names = targets.names.tolist()
    where = _astropy(site)

    def place(i, t):
        when = Time(np.atleast_1d(t), format="unix", scale="utc")
        c = SkyCoord(targets.ra_deg[i] * u.deg, targets.dec_deg[i] * u.deg).transform_to(
            TETE(obstime=when, location=where))
        lst = when.sidereal_time("apparent", longitude=site.lon_deg * u.deg).deg
        ha = (lst - c.ra.deg + 180.0) % 360.0 - 180.0
        return ha / 15.0, c.dec.deg

    for x in v:
        i = names.index(x.name)
        h0, h1 = place(i, x.exposure_start)[0][0], place(i, x.end)[0][0]
        assert h1 > h0, x.name  # no crossing of 12 h
        if x.pier_side == "west":
            assert h1 <= 30.0 / 60.0 + 0.003, (x.name, h1)
        else:
            assert h0 >= -20.0 / 60.0 - 0.003, (x.name, h0)
    for p, q in zip(v, v[1:], strict=False):
        hp, dp = place(names.index(p.name), p.end)
        hq, dq = place(names.index(q.name), p.end)
        want = max(abs(hq[0] - hp[0]) * 15.0 / 3.0, abs(dq[0] - dp[0]) / 2.0) + 8.0 + 60.0
        if p.pier_side != q.pier_side:
            want += 90.0
        # the slew is reckoned at its start (no earlier than p.end); pointings move slowly
        assert q.exposure_start - p.end >= want - 1.0, (p.name, q.name)


def test_the_baseline_option_sets_the_out_of_event_time(made):
    """``baseline_min=10`` (``--baseline 10``): the transit visit runs from ingress − 10 min
    to egress + 10 min, ingress and egress from T0, P and the duration by plain arithmetic
    and astropy's light travel time, as in the test above."""
    import astropy.units as u
    from astropy.coordinates import SkyCoord
    from astropy.time import Time

    site, targets, _ = made
    p = plan(targets, site, night(site, scenario.DEMO_DATE), baseline_min=10.0)
    x = next(v for v in p.result.visits if v.name == "Corriemoor b")
    t0, period, dur = CORRIEMOOR
    i = targets.names.tolist().index("Corriemoor b")
    t = Time([x.exposure_start + 600.0, x.end - 600.0], format="unix", scale="utc",
             location=_astropy(site))
    bjd = t.tdb + t.light_travel_time(SkyCoord(targets.ra_deg[i] * u.deg,
                                               targets.dec_deg[i] * u.deg), ephemeris="builtin")
    expected = t0 + x.epoch_number * period + np.array([-1.0, 1.0]) * dur / 48.0
    assert np.max(np.abs((bjd.jd1 - expected) + bjd.jd2)) * 86400.0 < 0.5
