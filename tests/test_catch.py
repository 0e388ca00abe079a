"""Time-critical targets: ephemeris columns, event times, coverage and baselines.

References, named beside each check:

* event times: plain arithmetic from T₀ and P in the test (Tₙ = T₀ + n·P, ingress and
  egress ∓ D/2), and for BJD_TDB ephemerides astropy's ``Time.light_travel_time``
  (built-in ephemeris) applied to the UTC mid-times found;
* coverage and baselines: a brute-force grid of one point a minute, target altitude from
  astropy's ICRS → AltAz (no refraction) and the Sun's from astropy's ``get_body("sun")``;
  the grid and the unrefracted altitude (≤ 2.1′ at 25°) allow 2 minutes.
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pytest

from skyplan.api.catch import catch
from skyplan.api.targets import read_targets
from skyplan.api.windows import limits
from skyplan.engine import barycentric, ephemeris
from skyplan.errors import InputError, InputErrors
from skyplan.inputs.sites import Site

SITE = Site("test", 31.0, -110.0, 0.0, zone="America/Phoenix")
HEADER = ("name,ra,dec,event_t0,event_t0_scale,period_d,duration_h,event_t0_err_d,"
          "period_err_d,phase_min,phase_max,fixed_start,fixed_window,exposure\n")
ROWS = (
    "Alpha,04:30:00,+20:00:00,2461000.30,,1.3,3.0,0.001,0.0001,,,,,\n"
    "Beta,05:40:00,+35:00:00,2461379.70,jd_utc,0.71,2.2,,,,,,,\n"
    "Gamma,03:20:00,+10:00:00,2461365.10,bjd_tdb,2.1,1.5,,,,,,,\n"
    "Delta,06:00:00,+25:00:00,2461370.00,bjd_tdb,3.3,,,,0.2,0.35,,,\n"
    "Fixed,04:00:00,+30:00:00,,,,,,,,,2026-12-05T06:00:00Z,,600\n"
    "Window,04:00:00,+30:00:00,,,,,,,,,,2026-12-05T17:00:00Z/2026-12-05T18:00:00Z,600\n"
    "Plain,04:00:00,+30:00:00,,,,,,,,,,,\n"
)
FIRST, LAST = "2026-12-03", "2026-12-09"


def write(tmp_path, rows: str, name: str = "timed.csv"):
    path = tmp_path / name
    path.write_text(HEADER + rows)
    return str(path)


@pytest.fixture(scope="module")
def caught(tmp_path_factory):
    path = write(tmp_path_factory.mktemp("timed"), ROWS)
    targets = read_targets(path)
    lim = limits(SITE, min_alt=25.0, dark="astronomical", sun_gap=0.0, moon_gap=0.0)
    return targets, catch(targets, SITE, FIRST, LAST, lim, baseline_min=45.0,
                          min_coverage=0.0).result


def test_columns_are_read(caught):
    targets, _ = caught
    kinds = targets.timed.kind.tolist()
    assert kinds == ["event", "event", "event", "phase", "fixed", "fixed", ""]
    assert targets.timed.period_d[0] == 1.3 and targets.timed.duration_h[1] == 2.2
    assert targets.timed.t0_scale[:3].tolist() == ["bjd_tdb", "jd_utc", "bjd_tdb"]


def _astropy_bjd(unix, ra, dec):
    ephemeris.configure_astropy_offline()
    import astropy.units as u
    from astropy.coordinates import EarthLocation, SkyCoord
    from astropy.time import Time

    where = EarthLocation.from_geodetic(SITE.lon_deg * u.deg, SITE.lat_deg * u.deg, 0 * u.m)
    t = Time(unix, format="unix", scale="utc", location=where)
    bjd = t.tdb + t.light_travel_time(SkyCoord(ra * u.deg, dec * u.deg), ephemeris="builtin")
    return bjd.jd1, bjd.jd2


def test_event_times_by_arithmetic(caught):
    """Tₙ = T₀ + n·P in BJD_TDB (astropy's light travel time on the UTC mids found), D/2
    either side, consecutive epochs spanning the range; a jd_utc T₀ is its own event."""
    targets, r = caught
    beta_t0 = (2461379.70 - 2440587.5) * 86400.0  # jd_utc: the n = 0 event is at T₀ exactly
    assert np.min(np.abs(r.mid[r.names == "Beta"] - beta_t0)) < 1e-3
    b1, b2 = _astropy_bjd(np.array([beta_t0]), 85.0, 35.0)
    for name, t0, p, d in (("Alpha", 2461000.30, 1.3, 3.0), ("Beta", b1[0] + b2[0], 0.71, 2.2),
                           ("Gamma", 2461365.10, 2.1, 1.5)):
        pick = (r.names == name) & (r.kind == "event")
        row = r.rows[pick][0]
        n = r.epoch[pick]
        jd1, jd2 = _astropy_bjd(r.mid[pick], targets.ra_deg[row], targets.dec_deg[row])
        assert np.max(np.abs((jd1 - (t0 + n * p)) + jd2)) * 86400.0 < 0.1
        # D in BJD_TDB; UTC runs at 1 ± 1e-4 of it (the Earth's speed over c): ≤ 1.1 s
        assert np.allclose(r.egress[pick] - r.ingress[pick], d * 3600.0, atol=1.1)
        assert np.all(np.diff(n) == 1)
        first = dt.datetime(2026, 12, 3, 19, tzinfo=dt.UTC).timestamp()  # local noon
        last = dt.datetime(2026, 12, 10, 19, tzinfo=dt.UTC).timestamp()
        assert r.mid[pick][0] - p * 86400.0 < first < r.mid[pick][0]
        assert r.mid[pick][-1] < last < r.mid[pick][-1] + p * 86400.0
    alpha = r.names == "Alpha"
    sigma = np.hypot(0.001, r.epoch[alpha] * 0.0001) * 86400.0  # σ(Tₙ)² = σ(T₀)² + n²σ(P)²
    assert np.allclose(r.mid_sigma_s[alpha], sigma)


def _brute(ra, dec, a, b):
    """Observable minutes in [a, b]: altitude > 25°, Sun below −18° (astropy)."""
    ephemeris.configure_astropy_offline()
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, SkyCoord, get_body
    from astropy.time import Time

    grid = np.arange(a + 30.0, b, 60.0)
    if grid.size == 0:
        return 0.0
    where = EarthLocation.from_geodetic(SITE.lon_deg * u.deg, SITE.lat_deg * u.deg, 0 * u.m)
    t = Time(grid, format="unix", scale="utc")
    frame = AltAz(obstime=t, location=where)
    alt = SkyCoord(ra * u.deg, dec * u.deg).transform_to(frame).alt.deg
    sun = get_body("sun", t, where).transform_to(frame).alt.deg
    return float(np.sum((alt > 25.0) & (sun < -18.0))) * 60.0


def test_coverage_and_baselines_against_a_minute_grid(caught):
    targets, r = caught
    ev = np.flatnonzero(r.kind == "event")
    assert 0 < np.sum(r.coverage[ev] == 1.0) and 0 < np.sum(r.coverage[ev] == 0.0)
    partial = np.sum((r.coverage[ev] > 0) & (r.coverage[ev] < 1))
    assert partial > 0  # the sample holds events cut by dusk, dawn or the altitude
    for i in ev:
        ra, dec = targets.ra_deg[r.rows[i]], targets.dec_deg[r.rows[i]]
        length = r.egress[i] - r.ingress[i]
        seen = _brute(ra, dec, r.ingress[i], r.egress[i])
        assert abs(r.coverage[i] * length - seen) <= 120.0, r.names[i]
        before = _brute(ra, dec, r.ingress[i] - 2700.0, r.ingress[i])
        after = _brute(ra, dec, r.egress[i], r.egress[i] + 2700.0)
        assert abs(r.baseline_before_s[i] - before) <= 120.0
        assert abs(r.baseline_after_s[i] - after) <= 120.0
        assert r.baseline_before_s[i] <= 2700.0 and r.baseline_after_s[i] <= 2700.0


def test_altitudes_at_the_contacts(caught):
    """Apparent altitudes against astropy's unrefracted ones: refraction ≤ 0.6° above 1°."""
    targets, r = caught
    ephemeris.configure_astropy_offline()
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    where = EarthLocation.from_geodetic(SITE.lon_deg * u.deg, SITE.lat_deg * u.deg, 0 * u.m)
    t = Time(r.mid, format="unix", scale="utc")
    alt = SkyCoord(targets.ra_deg[r.rows] * u.deg, targets.dec_deg[r.rows] * u.deg) \
        .transform_to(AltAz(obstime=t, location=where)).alt.deg
    up = alt > 1.0
    assert np.all(np.abs(r.alt_deg[up, 1] - alt[up]) < 0.6)
    assert np.all(r.alt_deg[up, 1] >= alt[up] - 1e-3)  # refraction lifts


def test_phase_spans_and_fixed_requests(caught):
    targets, r = caught
    ph = np.flatnonzero(r.kind == "phase")
    assert ph.size
    t0, p = 2461370.00, 3.3  # BJD_TDB; phases of the span's ends from astropy's BJD
    row = r.rows[ph][0]
    for edge in (r.ingress[ph], r.egress[ph]):
        jd1, jd2 = _astropy_bjd(edge, targets.ra_deg[row], targets.dec_deg[row])
        phase = ((jd1 - t0) + jd2) / p - r.epoch[ph]
        assert np.all(phase >= 0.2 - 1e-6) and np.all(phase <= 0.35 + 1e-6)
    for i in ph:  # the spans listed lie inside the phase span, and add up to the coverage
        mine = r.spans.rows == i
        total = np.sum(r.spans.end[mine] - r.spans.start[mine])
        assert np.all(r.spans.start[mine] >= r.ingress[i])
        assert total == pytest.approx(r.coverage[i] * (r.egress[i] - r.ingress[i]))
    fixed = r.names == "Fixed"  # 06:00Z is 23:00 at the site (UTC−7): dark, target high
    assert fixed.sum() == 1 and r.fits[fixed][0]
    assert r.egress[fixed][0] - r.ingress[fixed][0] == 600.0
    window = r.names == "Window"  # 10:00 to 11:00 local: daylight, nothing fits
    assert window.sum() == 1 and not r.fits[window][0] and r.coverage[window][0] == 0.0


def test_min_coverage_filters(tmp_path):
    targets = read_targets(write(tmp_path, ROWS))
    lim = limits(SITE, min_alt=25.0, dark="astronomical", sun_gap=0.0, moon_gap=0.0)
    every = catch(targets, SITE, FIRST, LAST, lim, min_coverage=0.0).result
    full = catch(targets, SITE, FIRST, LAST, lim, min_coverage=1.0).result
    wanted = (every.kind == "fixed") | (every.coverage >= 1.0)
    assert len(full) == int(wanted.sum())
    assert np.all((full.coverage >= 1.0) | (full.kind == "fixed"))


@pytest.mark.parametrize(("row", "field", "words"), [
    ("X,1,2,2461000.3,,,2.0,,,,,,,\n", "period_d", "needs period_d"),
    ("X,1,2,61000.3,,1.2,2.0,,,,,,,\n", "event_t0", "full Julian date"),
    ("X,1,2,2461000.3,tcb,1.2,2.0,,,,,,,\n", "event_t0_scale", "unknown time scale"),
    ("X,1,2,2461000.3,,1.2,,,,0.2,,,,\n", "phase_max", "needs phase_max"),
    ("X,1,2,2461000.3,,1.2,30,,,,,,,\n", "duration_h", "as long as the period"),
    ("X,1,2,2461000.3,,-1,2,,,,,,,\n", "period_d", "above 0"),
    ("X,1,2,,,1.2,,,,,,,,\n", "period_d", "needs event_t0"),
    ("X,1,2,,,,,,,,,2026-12-05T06:00:00,,\n", "fixed_start", "no zone"),
    ("X,1,2,,,,,,,,,,2026-12-05T06:00Z/2026-12-05T05:00Z,\n", "fixed_window", "ends before"),
    ("X,1,2,2461000.3,,1.2,2,,,,,2026-12-05T06:00:00Z,,\n", "event_t0", "not both"),
])
def test_bad_timing_names_file_line_and_field(tmp_path, row, field, words):
    path = write(tmp_path, row)
    with pytest.raises((InputError, InputErrors)) as info:
        read_targets(path)
    errors = info.value.problems if isinstance(info.value, InputErrors) else [info.value]
    mine = [e for e in errors if e.field == field]
    assert mine and words in str(mine[0]), [str(e) for e in errors]
    assert mine[0].line == 2 and mine[0].file == path


def test_skip_bad_rows_drops_bad_timing(tmp_path):
    path = write(tmp_path, ROWS + "X,1,2,2461000.3,,,2.0,,,,,,,\n")
    with pytest.warns(UserWarning, match="bad timing"):
        targets = read_targets(path, skip_bad_rows=True)
    assert len(targets) == 7 and "X" not in targets.names.tolist()


def test_barycentric_conversion_used_for_hjd(tmp_path):
    """An HJD ephemeris gives the same events as its BJD_TDB equivalent (to 0.1 s)."""
    unix = dt.datetime(2026, 12, 6, 5, tzinfo=dt.UTC).timestamp()
    ra, dec = 52.5, 10.0
    hjd = float(barycentric.utc_to_hjd(SITE, unix, ra, dec)[0])
    bjd = float(barycentric.utc_to_bjd_tdb(SITE, unix, ra, dec)[0])
    rows = (f"H,03:30:00,+10:00:00,{hjd:.7f},hjd,1.7,2.0,,,,,,,\n"
            f"B,03:30:00,+10:00:00,{bjd:.7f},bjd_tdb,1.7,2.0,,,,,,,\n")
    targets = read_targets(write(tmp_path, rows))
    r = catch(targets, SITE, FIRST, LAST, min_coverage=0.0).result
    h, b = r.mid[r.names == "H"], r.mid[r.names == "B"]
    assert len(h) == len(b) > 0 and np.max(np.abs(h - b)) < 0.1
    assert np.min(np.abs(h - unix)) < 0.1


def test_no_timed_target_is_an_error(tmp_path):
    path = tmp_path / "plain.csv"
    path.write_text("name,ra,dec\nA,1,2\n")
    with pytest.raises(InputError, match="no time-critical target"):
        catch(read_targets(str(path)), SITE, FIRST, LAST)


def test_api_records_and_table(caught):
    """``skyplan.catch`` as exported: records with the issue's keys, a table of equal length."""
    import skyplan

    targets, _ = caught
    lim = limits(SITE, min_alt=25.0, dark="astronomical", sun_gap=0.0, moon_gap=0.0)
    result = skyplan.catch(targets, SITE, FIRST, LAST, lim, min_coverage=0.0)
    records = result.to_records()
    table = result.to_table()
    assert len(records) == len(table) == len(result) > 0
    assert records[0]["ingress"].endswith("Z") and "epoch_number" in records[0]
    assert table["coverage"].min() >= 0.0 and table["coverage"].max() <= 1.0
