"""The scheduler obeys the mount: plans re-checked independently with astropy.

References, named beside each check: astropy's ICRS → AltAz (altitude, azimuth) and its
apparent sidereal time with the TETE (true equator, true equinox) right ascension and
declination (hour angle, declination); the two-axis slew model recomputed here from those
places; finite differences of astropy's azimuth for the azimuth rate.
"""

from __future__ import annotations

import dataclasses
import datetime as dt

import numpy as np
import pytest

from skyplan.engine import ephemeris, mount, night, windows
from skyplan.inputs.limits import Limits
from skyplan.inputs.site import Mount
from skyplan.inputs.sites import Site, nautical_zone
from skyplan.planning import build, model

GERMAN = Mount("german-equatorial", past_meridian_east_min=20.0, past_meridian_west_min=30.0,
               flip_time_s=90.0, slew_rate_deg_s=(3.0, 2.0), settle_s=8.0)
ALTAZ = Mount("altaz", max_alt_deg=85.0, az_min_deg=-250.0, az_max_deg=250.0,
              az_rate_max_deg_s=0.03, slew_rate_deg_s=(2.5, 1.5), settle_s=6.0)
FORK = Mount("equatorial", slew_rate_deg_s=(2.0, 1.0), settle_s=5.0)
MOUNTS = {"german-equatorial": GERMAN, "altaz": ALTAZ, "equatorial": FORK}
TOL_S = 0.2  # slews: the planner interpolates places on a 2-minute grid, refracted


def target_set(ra_deg, dec_deg) -> windows.TargetSet:
    n = len(ra_deg)
    z = np.zeros(n)
    return windows.TargetSet(
        np.array([f"target {i}" for i in range(n)]), np.asarray(ra_deg, float),
        np.asarray(dec_deg, float), z, z, z, z, np.full(n, 2000.0),
        np.array([""] * n, dtype=object))


def make_plan(m: Mount, seed: int, method: str = "dispatch"):
    """A plan of 40 random targets at a random site and date, with the mount ``m``."""
    ephemeris.configure_astropy_offline()
    rng = np.random.default_rng(seed)
    lat, lon = float(rng.uniform(-50, 50)), float(rng.uniform(-180, 180))
    site = Site("test", lat, lon, 1000.0, zone=nautical_zone(lon), mount=m)
    date = dt.date(2026, 1, 1) + dt.timedelta(days=int(rng.integers(0, 365)))
    nt = night.compute_night(site, date)
    n = 40
    ra = rng.uniform(0, 360, n)
    dec = np.degrees(np.arcsin(rng.uniform(np.sin(np.radians(lat - 80)),
                                           np.sin(np.radians(min(lat + 80, 89))), n)))
    limits = Limits(max_alt_deg=m.max_alt_deg)
    res = windows.compute_windows(target_set(ra, dec), site, nt, limits)
    over = dataclasses.replace(build.Overheads(setup_s=30.0), rates_given=False,
                               settle_given=False)
    exp = rng.choice([300.0, 600.0, 1200.0, 1800.0], n)
    plan = build.make_night_plan(res, rng.integers(0, 3, n), exp, over,
                                 model.PlanOptions(method=method, time_limit_s=1.0))
    return site, plan, ra, dec


def astropy_places(site: Site, ra, dec, t):
    """(alt, az, ha, dec_of_date) in degrees from astropy at POSIX times ``t``."""
    import astropy.units as u
    from astropy.coordinates import TETE, AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    when = Time(np.asarray(t, float), format="unix", scale="utc")
    loc = EarthLocation.from_geodetic(site.lon_deg * u.deg, site.lat_deg * u.deg,
                                      site.elevation_m * u.m)
    star = SkyCoord(ra=np.asarray(ra) * u.deg, dec=np.asarray(dec) * u.deg)
    hor = star.transform_to(AltAz(obstime=when, location=loc, pressure=0 * u.hPa))
    eq = star.transform_to(TETE(obstime=when, location=loc))
    last = when.sidereal_time("apparent", longitude=site.lon_deg * u.deg).deg
    ha = (last - eq.ra.deg + 180.0) % 360.0 - 180.0
    return hor.alt.deg, hor.az.deg, ha, eq.dec.deg


def wrap180(x):
    return (np.asarray(x) + 180.0) % 360.0 - 180.0


def recheck(site: Site, plan, ra, dec) -> None:
    """Every rule of the site's mount, recomputed from astropy's places."""
    m = site.mount
    kind = m.kind
    v = plan.visits
    assert len(v) >= 5
    tgt = np.array([p.target for p in v])
    start = np.array([p.start for p in v])
    t0 = np.array([p.exposure_start for p in v])
    t1 = np.array([p.end for p in v])
    assert np.all(start[1:] >= t1[:-1] - 1e-6)  # no overlap
    alt0, az0, ha0, _ = astropy_places(site, ra[tgt], dec[tgt], t0)
    alt1, az1, ha1, _ = astropy_places(site, ra[tgt], dec[tgt], t1)
    if kind == "german-equatorial":
        sides = np.array([p.pier_side for p in v])
        west = sides == "west"
        # pier west: the whole exposure at H <= +past_west; east: from H >= -past_east
        assert np.all(ha1[west] <= m.past_meridian_west_min / 4.0 + 0.01)
        assert np.all(ha0[~west] >= -m.past_meridian_east_min / 4.0 - 0.01)
        assert np.all(wrap180(ha1 - ha0)[west] > 0)  # no crossing of H = 12 h either
    if kind == "altaz":
        mid = 0.5 * (t0 + t1)
        for t in (t0, mid, t1):  # the keyhole: never above max_alt during an exposure
            alt, _, _, _ = astropy_places(site, ra[tgt], dec[tgt], t)
            assert np.all(alt <= m.max_alt_deg + 0.02)
        a0 = np.array([p.mount_az_start_deg for p in v])
        a1 = np.array([p.mount_az_end_deg for p in v])
        # the wrap: the axis reading stays in range and is the azimuth plus whole turns
        assert np.all((a0 >= m.az_min_deg - 1e-6) & (a1 <= m.az_max_deg + 1e-6))
        assert np.all((a1 >= m.az_min_deg - 1e-6) & (a0 <= m.az_max_deg + 1e-6))
        assert np.all(np.abs(wrap180(a0 - az0)) < 0.05)
        assert np.all(np.abs(wrap180(a1 - az1)) < 0.05)
    # slews: never shorter than the two-axis model between astropy's places at slew start
    r1, r2 = m.slew_rate_deg_s
    for k in range(1, len(v)):
        p, q = v[k - 1], v[k]
        ts = np.array([q.start])
        pa, pz, ph, pd = astropy_places(site, ra[[p.target]], dec[[p.target]], ts)
        qa, qz, qh, qd = astropy_places(site, ra[[q.target]], dec[[q.target]], ts)
        if kind == "altaz":
            prev_axis = p.mount_az_end_deg + wrap180(pz[0] - az1[k - 1])
            next_axis = q.mount_az_start_deg - wrap180(az0[k] - qz[0])
            d1, d2 = next_axis - prev_axis, qa[0] - pa[0]
        else:
            d1, d2 = wrap180(qh[0] - ph[0]), qd[0] - pd[0]
        want = max(abs(d1) / r1, abs(d2) / r2) + m.settle_s
        if kind == "german-equatorial" and p.pier_side != q.pier_side:
            want += m.flip_time_s
        assert q.slew_s >= want - TOL_S, (k, q.slew_s, want)
        assert q.exposure_start - q.start >= q.slew_s + 30.0 - 1e-6


@pytest.mark.parametrize("kind", sorted(MOUNTS))
@pytest.mark.parametrize("seed", [3, 11, 29])
def test_random_nights_keep_the_mount_rules(kind: str, seed: int) -> None:
    site, plan, ra, dec = make_plan(MOUNTS[kind], seed)
    recheck(site, plan, ra, dec)


@pytest.mark.parametrize("kind", sorted(MOUNTS))
def test_the_optimal_method_keeps_the_mount_rules(kind: str) -> None:
    site, plan, ra, dec = make_plan(MOUNTS[kind], 5, method="optimal")
    recheck(site, plan, ra, dec)


ONE_TURN = Mount("altaz", max_alt_deg=85.0, az_min_deg=-180.0, az_max_deg=180.0,
                 slew_rate_deg_s=(2.5, 1.5), settle_s=6.0)


def track_readings(site: Site, ra: float, dec: float, p) -> np.ndarray:
    """The azimuth axis's readings along a visit's exposure, a minute apart, from astropy:
    the reported reading at the start plus the azimuth's continuous change since."""
    t = np.append(np.arange(p.exposure_start, p.end, 60.0), p.end)
    _, az, _, _ = astropy_places(site, np.full(t.size, ra), np.full(t.size, dec), t)
    return p.mount_az_start_deg + np.concatenate([[0.0], np.cumsum(wrap180(np.diff(az)))])


@pytest.mark.parametrize("seed", [3, 29])
def test_a_wrap_of_one_turn_holds_every_whole_track(seed: int) -> None:
    """A cable wrap of exactly one turn (−180°..180°, its ends at the south): every rule
    rechecked with astropy, and each exposure's whole azimuth track, a minute apart, stays
    inside the wrap on the reported reading (no visit across the wrap's end)."""
    site, plan, ra, dec = make_plan(ONE_TURN, seed)
    recheck(site, plan, ra, dec)
    for p in plan.visits:
        axis = track_readings(site, ra[p.target], dec[p.target], p)
        assert axis.min() >= -180.0 - 0.05 and axis.max() <= 180.0 + 0.05, (p.name, axis)


@pytest.mark.filterwarnings("ignore::skyplan.notices.SkyplanWarning")  # which plan was kept
def test_a_target_best_across_the_wraps_end_is_taken_before_it() -> None:
    """The demo's timed programme with a one-turn wrap ending at the south: Hollow Veil and
    Brackenridge Arc culminate at azimuth 180° — the wrap's end — on a night left mostly
    idle.  Each still gets its visit, wholly on one side of the end (astropy's azimuth), and
    the transit of Corriemoor b, which crosses the south, is refused for the wrap."""
    from skyplan.api.night import night as night_of
    from skyplan.api.plan import plan as plan_of
    from skyplan.api.sites import site as get_site
    from skyplan.api.targets import read_targets
    from skyplan.inputs import scenario

    site = dataclasses.replace(get_site(None, demo=True), mount=ONE_TURN)
    targets = read_targets(str(scenario.demo_path("timed.csv")))
    made = plan_of(targets, site, night_of(site, scenario.DEMO_DATE)).result
    names = targets.names.tolist()
    got = {x.name: x for x in made.visits}
    for name in ("Hollow Veil", "Brackenridge Arc"):
        assert name in got, name
    for x in made.visits:
        i = names.index(x.name)
        axis = track_readings(site, targets.ra_deg[i], targets.dec_deg[i], x)
        assert axis.min() >= -180.05 and axis.max() <= 180.05, (x.name, axis)
    why = {names[i]: (code, text) for i, code, text in made.not_placed}
    assert why["Corriemoor b"][0] == "timed_not_observable"
    assert "cable wrap" in why["Corriemoor b"][1]


def test_a_german_plan_flips_and_pays_for_it() -> None:
    """Over a night some visits are on each side, and every change of side costs the flip."""
    flips = 0
    for seed in (3, 11, 29):
        _, plan, _, _ = make_plan(GERMAN, seed)
        sides = [p.pier_side for p in plan.visits]
        flips += sum(a != b for a, b in zip(sides, sides[1:], strict=False))
    assert flips >= 1


def test_azimuth_rate_matches_astropy_finite_differences() -> None:
    """dA/dt against the central difference of astropy's azimuth over ±5 s (ICRS → AltAz,
    pressure 0) for random stars above 10° and below 88°, at astropy's apparent hour angle
    and declination (TETE): within 0.2 % or 2e-6 °/s."""
    import astropy.units as u
    from astropy.coordinates import TETE, AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    ephemeris.configure_astropy_offline()
    rng = np.random.default_rng(8)
    lat, lon = 31.0, 20.0
    n = 300
    ra, dec = rng.uniform(0, 360, n), np.degrees(np.arcsin(rng.uniform(-0.5, 1.0, n)))
    t = Time("2026-05-01T22:00:00", scale="utc")
    loc = EarthLocation.from_geodetic(lon * u.deg, lat * u.deg, 0 * u.m)
    star = SkyCoord(ra=ra * u.deg, dec=dec * u.deg)

    def az_alt(dt_s):
        h = star.transform_to(AltAz(obstime=t + dt_s * u.s, location=loc, pressure=0 * u.hPa))
        return h.az.deg, h.alt.deg

    (a_minus, _), (_, alt), (a_plus, _) = az_alt(-5.0), az_alt(0.0), az_alt(5.0)
    fd = wrap180(a_plus - a_minus) / 10.0
    eq = star.transform_to(TETE(obstime=t, location=loc))  # hour angle and dec of date
    last = t.sidereal_time("apparent", longitude=lon * u.deg).deg
    ha = np.radians(last - eq.ra.deg)
    rate = mount.azimuth_rate_deg_s(ha, eq.dec.rad, np.radians(lat))
    ok = (alt > 10.0) & (alt < 88.0)
    assert ok.sum() > 50
    assert np.all(np.abs(rate[ok] - fd[ok]) <= np.maximum(0.002 * np.abs(fd[ok]), 2e-6))


def test_az_rate_is_charged_in_lost_minutes_at_the_astropy_rate() -> None:
    """A star passing 1.5° from the zenith at a mount of 0.05 °/s: the time cut is where
    astropy's azimuth rate (finite differences on a 10-second grid) passes the limit, within
    20 s at each edge; a star far from the zenith loses nothing."""
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    ephemeris.configure_astropy_offline()
    lat, lon = 37.2, -3.6
    site = Site("test", lat, lon, 0.0, zone=nautical_zone(lon),
                mount=Mount("altaz", az_rate_max_deg_s=0.05))
    nt = night.compute_night(site, dt.date(2026, 3, 20))
    ra, dec = np.array([177.0, 80.0]), np.array([lat + 1.5, 10.0])
    res = windows.compute_windows(target_set(ra, dec), site, nt, Limits(refraction_model="none"))
    lost = res.lost_s["az_rate"]
    assert lost[1] == 0.0
    t = np.arange(res.span[0], res.span[1], 10.0)
    frame = AltAz(obstime=Time(t, format="unix", scale="utc"),
                  location=EarthLocation.from_geodetic(lon * u.deg, lat * u.deg, 0 * u.m),
                  pressure=0 * u.hPa)
    az = SkyCoord(ra=ra[0] * u.deg, dec=dec[0] * u.deg).transform_to(frame).az.deg
    rate = np.abs(wrap180(np.gradient(np.unwrap(az, period=360.0), t)))
    fast = rate > 0.05
    assert fast.any()
    cut_start, cut_end = t[fast][0], t[fast][-1]
    mine = res.windows.rows == 0
    gap = res.windows.start[mine][1:][0], res.windows.end[mine][:-1][0]
    assert abs(gap[1] - cut_start) <= 20.0 and abs(gap[0] - cut_end) <= 20.0
    assert abs(lost[0] - (cut_end - cut_start)) <= 40.0


def test_wrap_turns_puts_the_track_inside_nearest_the_present_reading() -> None:
    """Hand-worked: a track 100°..120° in a −270..270 wrap may read 100 (k = 0) or −260
    (k = −1); from a reading of −200 the nearest is −260; a track 250..290 fits only as
    −110..−70 (k = −1); a 600°-wide track never fits."""
    k = mount.wrap_turns([100.0, 100.0, 250.0, 0.0], [100.0, 100.0, 250.0, 0.0],
                         [120.0, 120.0, 290.0, 600.0], [50.0, -200.0, 200.0, 0.0],
                         -270.0, 270.0)
    assert k[0] == 0 and k[1] == -1 and k[2] == -1 and np.isnan(k[3])


def test_longest_slew_is_an_upper_bound_with_flip_and_wrap() -> None:
    """SlewModel.longest_s: the wrap's width on axis 1, 180° of declination on axis 2, plus
    settle and the flip (hand-computed)."""
    alt = model.SlewModel(2.0, 1.0, 5.0, kind="altaz", wrap_deg=(-270.0, 270.0))
    assert alt.longest_s() == pytest.approx(max(540 / 2.0, 90 / 1.0) + 5.0)
    ger = model.SlewModel(2.0, 1.0, 5.0, kind="german-equatorial", flip_s=60.0)
    assert ger.longest_s() == pytest.approx(max(180 / 2.0, 180 / 1.0) + 5.0 + 60.0)
    rng = np.random.default_rng(2)
    a = rng.uniform(-90, 90, (4, 1000))
    h = rng.uniform(0, 360, (2, 1000))
    assert np.all(ger.slew_s(a[0], h[0], a[1], h[1]) <= ger.longest_s())


# ------------------------------------------------------------------ the mount table

SITE = """[site.hill]
latitude = 37.2
longitude = -3.6
zone = "Europe/Madrid"

[site.hill.mount]
{mount}
"""


@pytest.mark.parametrize(("mount", "key", "line"), [
    ('kind = "german-equatorial"\npast_meridian_west_min = -5', "past_meridian_west_min", 8),
    ('kind = "german-equatorial"\npast_meridian_east_min = "ten"', "past_meridian_east_min", 8),
    ('kind = "german-equatorial"\nflip_time_s = 4000', "flip_time_s", 8),
    ('kind = "altaz"\nflip_time_s = 60', "flip_time_s", 8),
    ('kind = "equatorial"\naz_rate_max_deg_s = 0.5', "az_rate_max_deg_s", 8),
    ('kind = "altaz"\naz_min_deg = 90\naz_max_deg = -90', "az_max_deg", 9),
    ('kind = "altaz"\naz_min_deg = -400\naz_max_deg = 400', "az_max_deg", 9),
    ('kind = "altaz"\naz_min_deg = -270', "az_min_deg", 8),
    ('kind = "altaz"\naz_rate_max_deg_s = 0', "az_rate_max_deg_s", 8),
    ('kind = "altaz"\nslew_rate_deg_s = [2.0]', "slew_rate_deg_s", 8),
    ('kind = "equatorial"\nslew_rate_deg_s = [2.0, 0]', "slew_rate_deg_s", 8),
    ('kind = "equatorial"\nsettle_s = -1', "settle_s", 8),
])
def test_a_bad_mount_key_is_reported_with_file_line_and_field(tmp_path, mount, key,
                                                              line) -> None:
    from skyplan.inputs.sitesfile import check_sites_file

    path = tmp_path / "sites.toml"
    path.write_text(SITE.format(mount=mount))
    (problem,) = check_sites_file(path)
    assert (problem.field, problem.line) == (f"site.hill.mount.{key}", line)
    assert problem.file.endswith("sites.toml")


def test_a_full_mount_table_is_read_and_written_back(tmp_path) -> None:
    from skyplan.inputs.sitesfile import load_sites, site_to_toml

    path = tmp_path / "sites.toml"
    path.write_text(SITE.format(mount='kind = "altaz"\nmax_alt_deg = 86\naz_min_deg = -270\n'
                                      'az_max_deg = 270\naz_rate_max_deg_s = 0.5\n'
                                      'slew_rate_deg_s = [3.0, 2.0]\nsettle_s = 8'))
    m = load_sites(path)["hill"].mount
    assert (m.kind, m.max_alt_deg, m.wrap_deg(), m.az_rate_max_deg_s, m.slew_rate_deg_s,
            m.settle_s) == ("altaz", 86.0, (-270.0, 270.0), 0.5, (3.0, 2.0), 8.0)
    again = tmp_path / "again.toml"
    again.write_text(site_to_toml(load_sites(path)["hill"]))
    assert load_sites(again)["hill"].mount == m


def test_the_mount_table_gives_rates_and_settle_unless_the_options_do(tmp_path,
                                                                      capsys) -> None:
    """The plan's overheads: the table's slew rates and settle; --slew-rate and --settle
    override them."""
    import json

    from skyplan.cli.app import main

    path = tmp_path / "sites.toml"
    path.write_text(SITE.format(mount='kind = "equatorial"\nslew_rate_deg_s = [3.0, 1.5]\n'
                                      'settle_s = 7'))
    out = tmp_path / "plan.json"
    base = ["plan", "--demo", "--sites-file", str(path), "--site", "hill", "--format", "json",
            "--out", str(out), "--quiet", "--method", "dispatch"]
    for extra, want in (([], (3.0, 1.5, 7.0)),
                        (["--slew-rate", "1,1", "--settle", "4"], (1.0, 1.0, 4.0))):
        with pytest.raises(SystemExit) as exc:
            main([*base, *extra])
        assert exc.value.code == 0
        over = json.loads(out.read_text())["overheads"]
        assert (over["slew_az_deg_s"], over["slew_alt_deg_s"], over["settle_s"]) == want


# ------------------------------------------------------------------ charts


def test_hour_circle_matches_erfa_hd2ae() -> None:
    """The flip limit's hour circle against ERFA ``eraHd2ae`` (hour angle and declination to
    azimuth and elevation) at the same declinations: within 1e-9 degrees."""
    import erfa

    for ha, lat in ((0.26, 0.65), (-0.09, -0.5), (0.0, 0.9)):
        alt, az = mount.hour_circle(ha, lat, n=37)
        dec = np.radians(np.linspace(-90.0, 90.0, 37))
        ref_az, ref_el = erfa.hd2ae(np.full(37, ha), dec, lat)
        assert np.abs(alt - np.degrees(ref_el)).max() < 1e-9
        ok = np.abs(np.degrees(ref_el)) < 89.9  # the azimuth is undefined at the zenith
        assert np.abs(wrap180(az[ok] - np.degrees(ref_az[ok]))).max() < 1e-9


def test_the_sky_chart_draws_the_mount_limits_and_the_altitude_chart_the_flips(
        tmp_path) -> None:
    """German mount: two flip-limit lines on the sky chart; alt-azimuth: the keyhole; a plan
    whose pier side changes marks the flip on the altitude chart (the marks read back from
    the SVG files by their ids)."""
    import json
    import xml.etree.ElementTree as ET

    from skyplan.cli.app import main

    path = tmp_path / "sites.toml"
    path.write_text(SITE.format(mount='kind = "german-equatorial"\npast_meridian_west_min = 30')
                    + SITE.replace("hill", "flat").format(mount='kind = "altaz"\n'
                                                                'max_alt_deg = 80'))

    def ids(svg) -> list[str]:
        return [e.get("id", "") for e in ET.parse(svg).getroot().iter()]

    for site, want in (("hill", "flip-limit"), ("flat", "keyhole")):
        out = tmp_path / f"{site}.svg"
        with pytest.raises(SystemExit) as exc:
            main(["chart", "sky", "--demo", "--sites-file", str(path), "--site", site,
                  "--out", str(out), "--quiet"])
        assert exc.value.code == 0
        found = ids(out)
        assert sum(i.startswith(want) for i in found) == (2 if want == "flip-limit" else 1)
        other = "keyhole" if want == "flip-limit" else "flip-limit"
        assert not any(i.startswith(other) for i in found)
    plan = tmp_path / "plan.json"
    with pytest.raises(SystemExit) as exc:
        main(["plan", "--demo", "--sites-file", str(path), "--site", "hill", "--format", "json",
              "--out", str(plan), "--quiet", "--method", "dispatch"])
    sides = [o["pier_side"] for o in json.loads(plan.read_text())["observations"]]
    flips = sum(a != b for a, b in zip(sides, sides[1:], strict=False))
    assert flips >= 1
    chart = tmp_path / "alt.svg"
    with pytest.raises(SystemExit) as exc:
        main(["chart", "altitude", "--plan", str(plan), "--sites-file", str(path), "--site",
              "hill", "--top", "0", "--out", str(chart), "--quiet"])
    assert exc.value.code == 0
    assert sum(i.startswith("flip") for i in ids(chart)) == flips


def test_a_narrow_wrap_is_charged_in_lost_minutes_and_plans_keep_inside_it() -> None:
    """A wrap of 40°..320° leaves out the north: the minutes charged to ``az_wrap`` equal the
    dark time above the minimum altitude with astropy's azimuth outside it (1-minute grid,
    pressure 0 as the engine with refraction off), within 2 minutes; a plan with that wrap
    passes every re-check."""
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    ephemeris.configure_astropy_offline()
    lat, lon = 37.2, -3.6
    narrow = dataclasses.replace(ALTAZ, az_min_deg=40.0, az_max_deg=320.0)
    site = Site("test", lat, lon, 0.0, zone=nautical_zone(lon), mount=narrow)
    nt = night.compute_night(site, dt.date(2026, 3, 20))
    ra, dec = np.array([100.0, 200.0, 150.0]), np.array([70.0, 50.0, -10.0])
    res = windows.compute_windows(target_set(ra, dec), site, nt, Limits(refraction_model="none"))
    t = np.arange(res.span[0], res.span[1], 60.0)
    frame = AltAz(obstime=Time(t, format="unix", scale="utc"),
                  location=EarthLocation.from_geodetic(lon * u.deg, lat * u.deg, 0 * u.m),
                  pressure=0 * u.hPa)
    dark = np.zeros(len(t), bool)
    for a, b in res.dark:
        dark |= (t >= a) & (t < b)
    for k in range(3):
        h = SkyCoord(ra=ra[k] * u.deg, dec=dec[k] * u.deg).transform_to(frame)
        outside = (h.az.deg < 40.0) | (h.az.deg > 320.0)
        want = float(np.sum(dark & (h.alt.deg > 20.0) & outside))
        assert abs(res.lost_s["az_wrap"][k] / 60.0 - want) <= 2.0
    assert res.lost_s["az_wrap"][0] > 60 * 60.0 and res.lost_s["az_wrap"][2] == 0.0
    recheck(*make_plan(narrow, 3))


def test_the_plan_table_notes_each_flip(tmp_path, capsys) -> None:
    """The table's notes name the new side where the JSON's pier_side changes."""
    import json

    from skyplan.cli.app import main

    path = tmp_path / "sites.toml"
    path.write_text(SITE.format(mount='kind = "german-equatorial"\nflip_time_s = 120'))
    base = ["plan", "--demo", "--sites-file", str(path), "--site", "hill", "--quiet",
            "--method", "dispatch", "--wide"]
    with pytest.raises(SystemExit):
        main([*base, "--format", "json", "--out", str(tmp_path / "p.json")])
    sides = [o["pier_side"] for o in json.loads((tmp_path / "p.json").read_text())[
        "observations"]]
    flips = sum(a != b for a, b in zip(sides, sides[1:], strict=False))
    capsys.readouterr()
    with pytest.raises(SystemExit):
        main(base)
    assert flips >= 1 and capsys.readouterr().out.count("flip to pier") == flips


DEMO_MOUNTS = {
    "german-equatorial": 'kind = "german-equatorial"\npast_meridian_east_min = 15\n'
                         'past_meridian_west_min = 30\nflip_time_s = 90\n'
                         'slew_rate_deg_s = [3.0, 2.0]\nsettle_s = 8',
    "altaz": 'kind = "altaz"\nmax_alt_deg = 80\naz_min_deg = -200\naz_max_deg = 200\n'
             'slew_rate_deg_s = [2.5, 1.5]\nsettle_s = 6',
    "equatorial": 'kind = "equatorial"\nslew_rate_deg_s = [2.0, 1.0]\nsettle_s = 5',
}


@pytest.mark.parametrize("kind", sorted(DEMO_MOUNTS))
def test_the_demo_plan_with_each_mount_kind_rechecked_with_astropy(tmp_path, kind) -> None:
    """``plan --demo`` at a site with each kind of mount, re-checked from the plan file alone:
    each visit's apparent place of date (TETE at local midnight, as written) taken by astropy
    to hour angle (apparent sidereal time) and to altitude and azimuth at the exposure's start
    and end and at the slew's start; the flip limits, the keyhole, the wrap and the slews as
    in :func:`recheck`."""
    import json

    import astropy.units as u
    from astropy.coordinates import TETE, AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    from skyplan.cli.app import main

    ephemeris.configure_astropy_offline()
    path = tmp_path / "sites.toml"
    path.write_text(SITE.format(mount=DEMO_MOUNTS[kind]))
    out = tmp_path / "plan.json"
    with pytest.raises(SystemExit) as exc:
        main(["plan", "--demo", "--sites-file", str(path), "--site", "hill", "--format", "json",
              "--out", str(out), "--quiet"])
    assert exc.value.code == 0
    doc = json.loads(out.read_text())
    obs = doc["observations"]
    assert len(obs) >= 10
    loc = EarthLocation.from_geodetic(-3.6 * u.deg, 37.2 * u.deg, 0 * u.m)
    midnight = Time(doc["night"]["local_midnight"].replace("Z", ""), scale="utc")

    def places(o, key):
        when = Time(o[key].replace("Z", ""), scale="utc")
        star = SkyCoord(o["ra_apparent_deg"] * u.deg, o["dec_apparent_deg"] * u.deg,
                        frame=TETE(obstime=midnight))
        hor = star.transform_to(AltAz(obstime=when, location=loc, pressure=0 * u.hPa))
        last = when.sidereal_time("apparent", longitude=-3.6 * u.deg).deg
        return hor.alt.deg, hor.az.deg, wrap180(last - o["ra_apparent_deg"])

    m = load_mount(path)
    r1, r2 = m.slew_rate_deg_s
    for k, o in enumerate(obs):
        alt0, az0, ha0 = places(o, "exposure_start")
        alt1, az1, ha1 = places(o, "end")
        if kind == "german-equatorial":
            if o["pier_side"] == "west":
                assert ha1 <= 30 / 4.0 + 0.01 and ha1 > ha0
            else:
                assert ha0 >= -15 / 4.0 - 0.01
        if kind == "altaz":
            assert max(alt0, alt1, o["alt_mid_deg"]) <= 80.0 + 0.02
            for reading, az in ((o["mount_az_start_deg"], az0), (o["mount_az_end_deg"], az1)):
                assert -200.0 <= reading <= 200.0 and abs(wrap180(reading - az)) < 0.05
        if k == 0:
            continue
        p = obs[k - 1]
        pa, pz, ph = places(p, "end")
        pa_s, pz_s, ph_s = places({**p, "end": o["start"]}, "end")
        qa, qz, qh = places({**o, "end": o["start"]}, "end")
        if kind == "altaz":
            d1 = (o["mount_az_start_deg"] - wrap180(az0 - qz)) - (p["mount_az_end_deg"]
                                                                  + wrap180(pz_s - pz))
            d2 = qa - pa_s
        else:
            d1, d2 = wrap180(qh - ph_s), o["dec_apparent_deg"] - p["dec_apparent_deg"]
        want = max(abs(d1) / r1, abs(d2) / r2) + m.settle_s
        if kind == "german-equatorial" and o["pier_side"] != p["pier_side"]:
            want += m.flip_time_s
        assert o["slew_s"] >= want - TOL_S - 0.01, (k, o["slew_s"], want)


def load_mount(path) -> Mount:
    from skyplan.inputs.sitesfile import load_sites

    return load_sites(path)["hill"].mount


def test_an_altaz_mount_without_a_table_keeps_out_of_the_usual_keyhole(tmp_path) -> None:
    """``plan --demo --mount altaz`` with no mount table: the maximum altitude is the usual
    keyhole (skyplan.defaults.ALTAZ_KEYHOLE_DEG, 85°, common practice) and no exposure goes
    above it at its start, middle or end (astropy's altitude of the written apparent place)."""
    import json

    import astropy.units as u
    from astropy.coordinates import TETE, AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    from skyplan.cli.app import main
    from skyplan.defaults import ALTAZ_KEYHOLE_DEG

    ephemeris.configure_astropy_offline()
    out = tmp_path / "plan.json"
    with pytest.raises(SystemExit) as exc:
        main(["plan", "--demo", "--mount", "altaz", "--format", "json", "--out", str(out),
              "--quiet"])
    assert exc.value.code == 0
    doc = json.loads(out.read_text())
    assert doc["limits"]["max_alt_deg"] == ALTAZ_KEYHOLE_DEG == 85.0
    site = doc["site"]
    loc = EarthLocation.from_geodetic(site["lon_deg"] * u.deg, site["lat_deg"] * u.deg,
                                      site["elevation_m"] * u.m)
    midnight = Time(doc["night"]["local_midnight"].replace("Z", ""), scale="utc")
    obs = doc["observations"]
    assert len(obs) >= 10
    for o in obs:
        t0 = Time(o["exposure_start"].replace("Z", ""), scale="utc")
        t1 = Time(o["end"].replace("Z", ""), scale="utc")
        when = t0 + (t1 - t0) * np.linspace(0.0, 1.0, 3)
        star = SkyCoord(o["ra_apparent_deg"] * u.deg, o["dec_apparent_deg"] * u.deg,
                        frame=TETE(obstime=midnight))
        alt = star.transform_to(AltAz(obstime=when, location=loc, pressure=0 * u.hPa)).alt.deg
        assert np.all(alt <= 85.0 + 0.02), (o["name"], alt)


@pytest.mark.parametrize("seed", range(6))
def test_the_value_and_gap_reported_are_those_of_the_plan_the_mount_follows(seed: int) -> None:
    """With a cable wrap of one turn the mount's walk re-times or drops visits the planner
    placed (a slew across the wrap's end goes the long way round); the value the optimiser
    reports, and so its gap, must be those of the plan returned — the objective recomputed
    from its definition (test_scheduling.plan_worth) — not of the plan before the walk."""
    from test_scheduling import SLEW, plan_worth, random_request

    from skyplan.planning.dispatch import make_plan as plan_core
    from skyplan.planning.model import PlanNight
    from skyplan.planning.mountfit import follow

    wrap = dataclasses.replace(SLEW, wrap_deg=(-180.0, 180.0))
    req = random_request(seed, n=30, hours=5.0, slew=wrap)
    plan = plan_core(req, model.PlanOptions(method="optimal", time_limit_s=1.0))
    worth = plan_worth(req, plan.visits)
    assert plan.metrics.solver_objective == pytest.approx(worth, rel=1e-9)
    bound = plan.metrics.dual_bound
    assert plan.metrics.gap == pytest.approx(max((bound - worth) / bound, 0.0), abs=1e-12)
    raw = [(v.target, v.start_unix, v.slew_s, v.exposure_start_unix, v.end_unix)
           for v in plan.visits]
    night = PlanNight(req, model.PlanOptions(method="optimal"))
    assert follow(night, raw) == raw  # the plan returned is one the mount follows as it is


def test_the_planners_slew_estimate_goes_the_long_way_round_a_wrap_of_one_turn() -> None:
    """Hand-worked: in a −180..180 wrap the azimuths 170° and 190° read 170 and −170, so the
    axis turns 340° between them (not 20°); 10° to 350° turns 20° (10 to −10).  A wrap of
    −270..270 reads 190° as −170 from the middle but 170 → 190 ends at 190 inside: 20°."""
    one = model.SlewModel(3.0, 2.0, 10.0, kind="altaz", wrap_deg=(-180.0, 180.0))
    assert one.wrap_turn_deg(np.array([170.0, 10.0]), np.array([190.0, 350.0])) == \
        pytest.approx([340.0, 20.0])
    assert one.slew_s(np.array([40.0]), np.array([170.0]), np.array([40.0]),
                      np.array([190.0]))[0] == pytest.approx(340.0 / 3.0 + 10.0)
    wide = model.SlewModel(3.0, 2.0, 10.0, kind="altaz", wrap_deg=(-270.0, 270.0))
    assert wide.wrap_turn_deg(np.array([170.0]), np.array([190.0]))[0] == pytest.approx(20.0)
