"""The season's closed forms: random targets on nights through the year against ``windows``
on each night (horizon profile, Moon and Sun distance, Dec and hour-angle ranges, maximum
altitude), the hour-angle sets' cumulative measure against brute-force counting, the
darkness of a run of nights against each night's own, and the Parquet written frame by
frame."""

from __future__ import annotations

import datetime as dt
import io

import numpy as np
import pytest

import skyplan
from skyplan.api.season import season
from skyplan.engine import night as night_mod
from skyplan.engine import season as season_engine
from skyplan.engine import seasonprofile, seasonwindows
from skyplan.engine import windows as window_engine
from skyplan.engine.hourangleset import HourAngleSet
from skyplan.engine.sky import Sky, distance_margin


def fixed(n: int, seed: int):
    from skyplan.api.targets import Targets
    from skyplan.targetdata import TargetSet

    rng = np.random.default_rng(seed)
    tset = TargetSet.fixed(np.array([f"R{i:04d}" for i in range(n)], dtype=object),
                           rng.uniform(0, 360, n), np.degrees(np.arcsin(rng.uniform(-1, 1, n))))
    return Targets(tset, np.ones(n), np.full(n, np.nan))


def dense_minutes(sky: Sky, lim, rows, times, step_s: float = 5.0) -> np.ndarray:
    """Usable minutes counted on a 5-second grid with the ``windows`` evaluator itself:
    every limit tested at every instant (the reference where ``windows``' 5-minute
    sampling of the horizon profile misses a dip shorter than its step)."""
    site, out = sky.site, np.zeros(len(rows))
    threshold = seasonprofile.threshold(lim)
    tr = sky.night.track
    for a, b in times:
        t = np.arange(a + step_s / 2, b, step_s)
        r, tt = np.repeat(rows, len(t)), np.tile(t, len(rows))
        alt, az, ha = sky.horizon(r, tt)
        ok = (alt >= threshold) & (alt >= site.horizon.altitude_at(az))
        if lim.max_alt_deg is not None:
            ok &= alt <= lim.max_alt_deg
        ha = (ha + np.pi) % (2 * np.pi) - np.pi
        lo, hi = (np.radians(15.0 * v) for v in lim.ha_range_h)
        ok &= (ha >= lo) & (ha <= hi)
        dec = np.degrees(sky.dec[r])
        ok &= (dec >= lim.dec_range_deg[0]) & (dec <= lim.dec_range_deg[1])
        for gap, ra, de in ((lim.moon_gap_deg, tr.moon_ra_deg, tr.moon_dec_deg),
                            (lim.sun_gap_deg, tr.sun_ra_deg, tr.sun_dec_deg)):
            ok &= distance_margin(sky, tr.t, ra, de, gap)(r, tt) >= 0
        out += ok.reshape(len(rows), len(t)).sum(axis=1) * step_s / 60.0
    return out


@pytest.mark.parametrize("start, kw", [
    ("2027-01-20", {"moon_gap": 30, "sun_gap": 40, "max_alt": 85}),
    ("2027-06-10", {"moon_gap": 45, "dark": "civil", "ha_range": "-3,4.5",
                    "dec_range": "-30,60"}),
])
def test_random_targets_equal_windows_night_by_night(start, kw) -> None:
    """300 random targets, 40 nights (three blocks of nights, so the horizon profile of a
    block's middle night serves nights 8 days away), every limit of the demo site and
    more: on nights at and between the blocks' edges each target's usable minutes equal
    ``windows`` on that night, computed on its own, to the minute, with no exception
    (``windows`` looks between its samples for the profile's narrow peaks,
    :mod:`skyplan.engine.profiledips`; where a pair ever differs, the season is also
    checked against a 5-second count with the ``windows`` evaluator to 0.25 min)."""
    site = skyplan.site(demo=True)
    lim = skyplan.limits(site, **kw)
    targets = fixed(300, seed=int(start.replace("-", "")))
    first = dt.date.fromisoformat(start)
    got = season(targets, site, first, first + dt.timedelta(days=39), lim, workers=1)
    tset = targets.target_set
    pairs = exceptions = cut = profiled = 0
    for k in (0, 8, 15, 16, 24, 31, 32, 39):
        night = night_mod.compute_night(site, got.dates[k])
        res = window_engine.compute_windows(tset, site, night, lim)
        ours = got.usable_min[:, k].astype(float)
        theirs = res.usable_s / 60.0
        off = np.flatnonzero(np.abs(ours - theirs) >= 1.0)
        if len(off):
            sky = Sky(tset, site, night, lim)
            dark = seasonwindows.darkness([night], [night_mod.SUNSET_ALT_DEG,
                                                    lim.dark_sun_alt_deg])[0]
            times = seasonwindows._times(sky, lim, dark)
            reference = dense_minutes(sky, lim, off, times)
            np.testing.assert_allclose(ours[off], reference, atol=0.25)
        pairs += len(ours)
        exceptions += len(off)
        cut += int(np.count_nonzero(res.lost_s["moon"] + res.lost_s["sun"] > 60))
        profiled += int(np.count_nonzero(res.lost_s["horizon"] > 60))
    assert exceptions == 0
    assert cut > 20 and profiled > 20  # the Moon, the Sun and the profile all took time
    assert np.count_nonzero(got.usable_min > 60) > 0.2 * got.usable_min.size


def test_airmass_mid_where_the_moon_cuts_the_night() -> None:
    """Targets that lose part of the night to the Moon (the brightest night of a
    fortnight): the middle of the usable time found around the cut, the air mass there as
    ``windows``' evaluator gives it at the middle computed from ``windows``' own
    intervals."""
    from skyplan.engine import airmass as am

    site = skyplan.site(demo=True)
    lim = skyplan.limits(site, moon_gap=40, no_horizon_profile=True)
    targets = fixed(1200, seed=3)
    got = season(targets, site, "2027-03-10", "2027-03-24", lim, workers=1)
    k = int(np.argmax(got.moon_illumination))
    night = night_mod.compute_night(site, got.dates[k])
    res = window_engine.compute_windows(targets.target_set, site, night, lim)
    n = len(res.names)
    t_mid = season_engine.middle_times(res.windows, n)
    has = np.flatnonzero(np.isfinite(t_mid))
    alt, _, _ = res.sky.horizon(has, t_mid[has])
    expected = np.full(n, np.nan)
    expected[has] = am.airmass(alt, lim.airmass_model)
    cut = np.flatnonzero((res.lost_s["moon"] > 600) & (res.usable_s > 600))
    assert len(cut) >= 8
    np.testing.assert_allclose(got.airmass_mid[cut, k], expected[cut], rtol=2e-4)
    assert np.array_equal(np.isnan(got.airmass_mid[:, k]), np.isnan(expected))
    np.testing.assert_allclose(got.usable_min[:, k], res.usable_s / 60.0, atol=0.05)


# ------------------------------------------------------------------ the closed forms


def test_hour_angle_sets_against_counting() -> None:
    """F(x1) − F(x0) against the share of a fine grid of hour angles inside the set
    (brute force, periodic), over spans of up to three turns; the inverse returns to x."""
    rng = np.random.default_rng(11)
    n = 200
    a = HourAngleSet.above(rng.uniform(-0.5, 3.5, n))
    b = HourAngleSet.below(rng.uniform(-0.5, 3.5, n))
    lo = rng.uniform(-np.pi, 0.5, n)
    c = HourAngleSet.interval(lo, lo + rng.uniform(0.1, 2.5, n))
    s = a.intersect(b).intersect(c)
    x0 = rng.uniform(-10, 10, n)
    x1 = x0 + rng.uniform(0, 3 * 2 * np.pi, n)
    rows = np.arange(n)
    got = s.cumulative(rows, x1) - s.cumulative(rows, x0)
    step = 1e-4
    for i in range(0, n, 20):
        x = np.arange(x0[i], x1[i], step)
        w = (x + np.pi) % (2 * np.pi) - np.pi
        inside = ((w[:, None] >= s.p[i]) & (w[:, None] <= s.q[i])).any(axis=1)
        assert got[i] == pytest.approx(inside.sum() * step, abs=5 * step)
    some = np.flatnonzero(s.total > 0)
    y = rng.uniform(0, 1, len(some)) * 2.0 * s.total[some]
    back = s.cumulative(some, s.inverse(some, y))
    np.testing.assert_allclose(back, y, atol=1e-9)


def test_darkness_of_a_run_of_nights_equals_each_night() -> None:
    """The darkness of 40 consecutive nights from one search equals each night's own
    (``Night.dark_interval``), at a mid-latitude site and above the Arctic circle
    (midnight Sun and nights with no astronomical darkness)."""
    for site in (skyplan.site(demo=True),
                 skyplan.site(lat_deg=69.65, lon_deg=18.96, elevation_m=10.0,
                              tz="Europe/Oslo")):
        dates = [dt.date(2027, 4, 20) + dt.timedelta(days=k) for k in range(40)]
        nights = season_engine.season_nights(site, dates)
        alts = [night_mod.SUNSET_ALT_DEG, -12.0, -18.0]
        got = seasonwindows.darkness(nights, alts)
        for night, per in zip(nights, got):
            for alt in alts:
                own = night.dark_interval(alt)
                assert len(per[alt]) == len(own)
                np.testing.assert_allclose(np.reshape(per[alt], (-1, 2)),
                                           np.reshape(own, (-1, 2)), rtol=0, atol=1e-3)
    assert any(not per[-18.0] for per in got)  # the far north (last): no astronomical night


def test_parquet_written_frame_by_frame(monkeypatch) -> None:
    """Frames of 7 targets, one row group each: the file read back by polars equals the
    records built whole, with and without the nights."""
    import polars as pl

    from skyplan.render import seasoncolumns

    site = skyplan.site(demo=True)
    result = season(skyplan.read_targets(demo=True), site, "2027-02-01", "2027-02-05",
                    workers=1)
    monkeypatch.setattr(seasoncolumns, "BLOCK", 7)
    for per_night in (False, True):
        data = b"".join(seasoncolumns.parquet_stream(result, per_night=per_night))
        back = pl.read_parquet(io.BytesIO(data))
        whole = seasoncolumns.frame(result, per_night=per_night)
        assert back.equals(whole) and back.schema == whole.schema
        import pyarrow.parquet as pq

        assert pq.ParquetFile(io.BytesIO(data)).num_row_groups == -(-len(result) // 7)
