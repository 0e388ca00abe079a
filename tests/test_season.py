"""The season: each night equals ``windows`` on that night; usable minutes against an
astropy grid; observable months of bright stars against the trade's rule of thumb; the
Dask cluster run equals the local run; the command's outputs."""

from __future__ import annotations

import datetime as dt
import json

import numpy as np
import pytest

import skyplan
from skyplan.api.season import season
from skyplan.cli.app import main
from skyplan.engine import night as night_mod
from skyplan.engine import windows as window_engine
from skyplan.engine.ephemeris import configure_astropy_offline
from skyplan.engine.season import summarise
from skyplan.render import seasoncolumns


def run(capsys, *args: str) -> tuple[int, str, str]:
    try:
        main(list(args))
        code = 0
    except SystemExit as exc:
        code = int(exc.code or 0)
    out, err = capsys.readouterr()
    return code, out, err


def fixed(names, ra_deg, dec_deg):
    from skyplan.api.targets import Targets
    from skyplan.targetdata import TargetSet

    n = len(names)
    return Targets(TargetSet.fixed(np.asarray(names, dtype=object), ra_deg, dec_deg),
                   np.ones(n), np.full(n, np.nan))


@pytest.fixture(scope="module")
def demo():
    site = skyplan.site(demo=True)
    return site, skyplan.read_targets(demo=True), skyplan.limits(site)


@pytest.fixture(scope="module")
def demo_season(demo):
    site, targets, lim = demo
    return season(targets, site, "2027-03-01", "2027-03-20", lim, workers=1)


# ------------------------------------------------------------------ equal to windows


def test_each_night_equals_windows_on_that_night(demo, demo_season) -> None:
    """Every limit of the demo site (darkness, altitude, air mass, hour angle, Dec range,
    horizon profile, Moon and Sun distance): the season's minutes of a night are the
    windows command's minutes of that night, computed on its own, to the minute."""
    site, targets, lim = demo
    for k in (0, 7, 19):  # a sample of nights, every target
        night = night_mod.compute_night(site, demo_season.dates[k])
        res = window_engine.compute_windows(targets.target_set, site, night, lim,
                                            orbits=targets.orbits)
        got = demo_season.usable_min[:, k].astype(float)
        assert np.max(np.abs(got - res.usable_s / 60.0)) < 1.0
        assert demo_season.moon_illumination[k] == pytest.approx(night.moon.illumination,
                                                                 abs=1e-9)
    assert demo_season.usable_min.max() > 300  # some targets are observable for hours


def test_airmass_at_the_middle_of_the_usable_time(demo, demo_season) -> None:
    """Where a target has a single window, the middle of the usable time is its midpoint:
    the air mass there, from the windows' own evaluator."""
    from skyplan.engine import airmass as am

    site, targets, lim = demo
    night = night_mod.compute_night(site, demo_season.dates[3])
    res = window_engine.compute_windows(targets.target_set, site, night, lim)
    count = np.bincount(res.windows.rows, minlength=len(res.names))
    one = np.flatnonzero(count == 1)
    w = res.windows.take_rows(count == 1)
    alt, _, _ = res.sky.horizon(w.rows, 0.5 * (w.start + w.end))
    expected = am.airmass(alt, lim.airmass_model)
    assert len(one) > 5
    np.testing.assert_allclose(demo_season.airmass_mid[one, 3], expected, rtol=1e-5)
    assert np.all(np.isnan(demo_season.airmass_mid[count == 0, 3]))


# ------------------------------------------------------------------ astropy grid


def test_usable_minutes_against_an_astropy_altaz_grid() -> None:
    """Reference: astropy's ICRS → AltAz (ERFA, with the site's pressure, temperature and
    humidity for refraction) and astropy's Sun (AltAz with pressure 0: the unrefracted
    centre, as skyplan's darkness), on a 1-minute grid: minutes with the target at or above
    30° while the Sun is below −18°.  Within 2 minutes a night (the grid's own step)."""
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, SkyCoord, get_sun
    from astropy.time import Time

    configure_astropy_offline()
    site = skyplan.site(lat_deg=-30.24, lon_deg=-70.74, elevation_m=2200.0,
                        tz="America/Santiago")
    ra = np.array([10.0, 83.8, 201.3, 279.2])
    dec = np.array([-45.0, -5.4, -11.2, 38.8])
    targets = fixed(["A", "B", "C", "D"], ra, dec)
    lim = skyplan.limits(site, min_alt=30, dark="astronomical", moon_gap=0, sun_gap=0,
                         no_horizon_profile=True, refraction="erfa")
    got = season(targets, site, "2027-05-02", "2027-05-04", lim, workers=1)
    p, temp, hum = site.weather()
    loc = EarthLocation.from_geodetic(site.lon_deg * u.deg, site.lat_deg * u.deg,
                                      site.elevation_m * u.m)
    stars = SkyCoord(ra * u.deg, dec * u.deg)
    for k, night in enumerate(got.dates):
        n = night_mod.compute_night(site, night)
        t = np.arange(n.span_start + 30.0, n.span_end, 60.0)
        when = Time(t, format="unix", scale="utc")
        sun = get_sun(when).transform_to(AltAz(obstime=when, location=loc, pressure=0))
        dark = sun.alt.deg < -18.0
        frame = AltAz(obstime=when[None, :], location=loc, pressure=p * u.hPa,
                      temperature=temp * u.deg_C, relative_humidity=hum,
                      obswl=0.55 * u.micron)
        alt = stars[:, None].transform_to(frame).alt.deg
        reference = ((alt >= 30.0) & dark[None, :]).sum(axis=1)
        np.testing.assert_allclose(got.usable_min[:, k], reference, atol=2.0)


# ------------------------------------------------------------------ rule of thumb


def test_bright_stars_observable_around_midnight_culmination() -> None:
    """Rule of thumb of the trade (common practice, stated as such): a star at RA α
    culminates at local midnight about when the Sun's RA is α + 12 h, and the Sun's RA grows
    from 0 h at the March equinox (~20 March) by about 2 h a month.  Near that date the star
    is observable every night; near the date when the Sun's RA is α (conjunction) it is
    not.  Stars (RA hours, Dec degrees; J2000, values recalled from memory): Sirius,
    Arcturus, Antares, Betelgeuse."""
    site = skyplan.site(lat_deg=38.0, lon_deg=-3.0, elevation_m=1000.0, tz="Europe/Madrid")
    stars = {"Sirius": (6.752, -16.72), "Arcturus": (14.261, 19.18),
             "Antares": (16.490, -26.43), "Betelgeuse": (5.919, 7.41)}
    ra = np.array([v[0] * 15.0 for v in stars.values()])
    dec = np.array([v[1] for v in stars.values()])
    targets = fixed(list(stars), ra, dec)
    lim = skyplan.limits(site, min_alt=20, dark="astronomical", moon_gap=0, sun_gap=30)
    equinox = dt.date(2026, 3, 20)
    for name, (alpha, _) in stars.items():
        midnight = equinox + dt.timedelta(days=((alpha + 12.0) % 24.0) / 24.0 * 365.25)
        conj = equinox + dt.timedelta(days=alpha / 24.0 * 365.25)
        near = season(targets, site, midnight - dt.timedelta(days=5),
                      midnight + dt.timedelta(days=5), lim, workers=1)
        row = int(np.flatnonzero(near.names == name)[0])
        assert near.summary().nights_observable[row] == len(near.dates), name
        assert near.summary().months, name
        away = season(targets, site, conj - dt.timedelta(days=5),
                      conj + dt.timedelta(days=5), lim, workers=1)
        assert away.summary().nights_observable[row] == 0, name


# ------------------------------------------------------------------ summary


def test_summary_first_last_best_months() -> None:
    dates = [dt.date(2027, 1, 30) + dt.timedelta(days=k) for k in range(4)]
    usable = np.array([[0, 70, 90, 90], [10, 20, 30, 40], [60, 0, 0, 61]], np.float32)
    x = np.array([[np.nan, 1.2, 1.5, 1.3], [2, 2, 2, 2], [1.1, np.nan, np.nan, 1.0]],
                 np.float32)
    s = summarise(usable, x, dates, 60.0)
    assert s.first.tolist() == [1, -1, 0]
    assert s.last.tolist() == [3, -1, 3]
    assert s.best.tolist() == [3, 3, 3]  # a tie at 90 min goes to the lower air mass
    assert s.usable_hours.tolist() == pytest.approx([250 / 60, 0.0, 121 / 60])
    assert s.months == ["2027-01", "2027-02"]
    assert (s.month_share > 0).tolist() == [[True, True], [False, False], [True, True]]


# ------------------------------------------------------------------ the cluster


def test_dask_cluster_run_equals_the_local_run(demo) -> None:
    """Blocks run by a distributed.LocalCluster (two workers) give the same bytes."""
    distributed = pytest.importorskip("distributed")
    from skyplan.engine import season as season_engine

    site, targets, lim = demo
    local = season(targets, site, "2027-04-01", "2027-04-20", lim, workers=1)
    assert len(season_engine.blocks(len(targets), 20)) == 2  # more than one block
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False,
                                  dashboard_address=None) as cluster, \
            distributed.Client(cluster) as client:
        remote = season(targets, site, "2027-04-01", "2027-04-20", lim, client=client)
    assert remote.usable_min.tobytes() == local.usable_min.tobytes()
    assert remote.airmass_mid.tobytes() == local.airmass_mid.tobytes()
    a = b"".join(seasoncolumns.json_stream(local, per_night=True))
    b = b"".join(seasoncolumns.json_stream(remote, per_night=True))
    assert a == b


def test_blocks_of_targets_and_nights_join_up(demo, monkeypatch) -> None:
    """Small blocks (16 targets × 2 nights) give what one block gives."""
    from skyplan.engine import season as season_engine

    site, targets, lim = demo
    whole = season(targets, site, "2027-04-01", "2027-04-05", lim, workers=1)
    monkeypatch.setattr(season_engine, "TARGET_BLOCK", 16)
    monkeypatch.setattr(season_engine, "NIGHT_BLOCK", 2)
    assert len(season_engine.blocks(len(targets), 5)) == 9
    parts = season(targets, site, "2027-04-01", "2027-04-05", lim, workers=1)
    np.testing.assert_allclose(parts.usable_min, whole.usable_min, atol=1 / 60)
    assert np.isfinite(parts.airmass_mid).sum() == np.isfinite(whole.airmass_mid).sum()


def test_notices_of_worker_processes_reach_the_caller(monkeypatch) -> None:
    """Nights beyond the bundled IERS table: the note comes back from the workers."""
    from skyplan.engine import season as season_engine

    monkeypatch.setattr(season_engine, "NIGHT_BLOCK", 1)
    site = skyplan.site(demo=True)
    with pytest.warns(skyplan.SkyplanWarning, match="IERS"):
        season(fixed(["A"], [10.0], [20.0]), site, "2028-01-01", "2028-01-02", workers=2)


def test_process_pool_equals_one_process(demo) -> None:
    site, targets, lim = demo
    one = season(targets, site, "2027-04-01", "2027-04-20", lim, workers=1)
    two = season(targets, site, "2027-04-01", "2027-04-20", lim, workers=2)
    assert one.usable_min.tobytes() == two.usable_min.tobytes()


# ------------------------------------------------------------------ the command


def test_season_command_json_and_table(capsys, tmp_path) -> None:
    code, out, err = run(capsys, "season", "--demo", "--to", "2027-01-10", "-f", "json",
                         "--per-night", "--workers", "1")
    assert code == 0, err
    records = json.loads(out)
    first = records[0]
    assert set(first) >= {"name", "first_night", "last_night", "best_night",
                          "usable_hours_total", "months", "nights"}
    assert first["nights"][0]["date"] == "2026-12-18"
    assert set(first["nights"][0]) == {"date", "usable_minutes", "airmass_mid",
                                       "moon_illumination"}
    assert len(first["nights"]) == 24
    code, out, err = run(capsys, "season", "--demo", "--to", "2027-01-10", "--workers", "1",
                         "--chart", str(tmp_path / "s.png"))
    assert code == 0, err
    assert max(len(line) for line in out.splitlines()) <= 100
    assert "DJ" in out and (tmp_path / "s.png").read_bytes()[:4] == b"\x89PNG"


def test_season_command_csv_parquet_and_bad_range(capsys, tmp_path) -> None:
    import polars as pl

    code, out, err = run(capsys, "season", "--demo", "--to", "2026-12-20", "-f", "csv",
                         "--per-night", "--workers", "1")
    assert code == 0, err
    assert out.splitlines()[0] == "name,date,usable_minutes,airmass_mid,moon_illumination"
    assert len(out.splitlines()) == 1 + 3 * 40
    path = tmp_path / "s.parquet"
    code, _, err = run(capsys, "season", "--demo", "--to", "2026-12-20", "-f", "parquet",
                       "-o", str(path), "--workers", "1")
    assert code == 0, err
    assert pl.read_parquet(path).height == 40
    code, _, err = run(capsys, "season", "--demo", "--from", "2027-01-10", "--to", "2027-01-01")
    assert code == 2 and "--to" in err
