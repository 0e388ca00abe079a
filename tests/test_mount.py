"""What the mount has to do: parallactic angle, field rotation, the plan's per-visit mount fields.

References, named beside each check: ERFA ``eraHd2pa`` (through pyerfa); an independent
vector construction of the angle between the directions to the pole and to the zenith at the
target; the finite-difference time derivative of the parallactic angle along the engine's own
tracks (the field of an alt-azimuth mount turns with the parallactic angle); the engine's own
horizon places; astropy's Sun (``get_body``) for the distance from the Sun.
"""

from __future__ import annotations

import datetime as dt

import erfa
import numpy as np
import pytest

from skyplan.cli.app import main
from skyplan.engine import ephemeris, mount, night, windows
from skyplan.engine.sky import Sky
from skyplan.inputs.limits import Limits
from skyplan.inputs.sites import Site, nautical_zone
from skyplan.planning import build, model


def target_set(ra_deg, dec_deg) -> windows.TargetSet:
    n = len(ra_deg)
    z = np.zeros(n)
    return windows.TargetSet(
        np.array([f"target {i}" for i in range(n)]), np.asarray(ra_deg, float),
        np.asarray(dec_deg, float), z, z, z, z, np.full(n, 2000.0),
        np.array([""] * n, dtype=object))


def random_places(rng, n):
    ha = rng.uniform(-np.pi, np.pi, n)
    dec = np.arcsin(rng.uniform(-1.0, 1.0, n))
    lat = np.arcsin(rng.uniform(-1.0, 1.0, n))
    return ha, dec, lat


def test_parallactic_angle_matches_erfa_hd2pa() -> None:
    """ERFA ``eraHd2pa`` on 10,000 random (H, δ, φ): agreement to 1e-9 degrees."""
    ha, dec, lat = random_places(np.random.default_rng(14), 10_000)
    q = mount.parallactic_angle_deg(ha, dec, lat)
    ref = np.degrees(erfa.hd2pa(ha, dec, lat))
    assert np.abs((q - ref + 180.0) % 360.0 - 180.0).max() < 1e-9


def test_parallactic_angle_matches_the_angle_between_pole_and_zenith() -> None:
    """Independent construction: in the local (H, δ) frame, the tangent directions at the
    target toward the celestial pole and toward the zenith; q is the angle from the first to
    the second, positive when the target is west of the meridian (H > 0)."""
    ha, dec, lat = random_places(np.random.default_rng(141), 2_000)
    s = np.stack([np.cos(dec) * np.cos(ha), -np.cos(dec) * np.sin(ha), np.sin(dec)], -1)
    pole = np.array([0.0, 0.0, 1.0])
    zen = np.stack([np.cos(lat), np.zeros_like(lat), np.sin(lat)], -1)
    tp = pole - np.sum(s * pole, -1, keepdims=True) * s
    tz = zen - np.sum(s * zen, -1, keepdims=True) * s
    ok = (np.linalg.norm(tp, axis=-1) > 1e-6) & (np.linalg.norm(tz, axis=-1) > 1e-6)
    angle = np.degrees(np.arccos(np.clip(
        np.sum(tp * tz, -1) / np.linalg.norm(tp, axis=-1) / np.linalg.norm(tz, axis=-1),
        -1.0, 1.0)))
    q = mount.parallactic_angle_deg(ha, dec, lat)
    assert np.abs(np.abs(q[ok]) - angle[ok]).max() < 1e-6
    west = ok & (np.abs(np.sin(ha)) > 1e-6) & (angle > 1e-6) & (angle < 180 - 1e-6)
    assert np.all(np.sign(q[west]) == np.sign(np.sin(ha[west])))


def test_field_rotation_is_the_rate_of_the_parallactic_angle_along_engine_tracks() -> None:
    """Along the engine's own tracks (hour angle and declination from :class:`Sky`), the
    field rotation rate equals the central difference of the parallactic angle over ±15 s,
    to 0.1 % (or 1e-4 °/min) wherever the target is more than 2° from the zenith and the nadir."""
    site = Site("test", 37.2, -3.6, 2800.0, zone=nautical_zone(-3.6))
    nt = night.compute_night(site, dt.date(2026, 3, 20))
    rng = np.random.default_rng(5)
    ra, dec = rng.uniform(0, 360, 60), np.degrees(np.arcsin(rng.uniform(-0.6, 1.0, 60)))
    sky = Sky(target_set(ra, dec), site, nt, Limits(refraction_model="none"))
    rows = np.repeat(np.arange(60), 40)
    t = np.tile(np.linspace(nt.span_start + 60, nt.span_end - 60, 40), 60)
    lat = np.radians(site.lat_deg)

    def q(at):
        _, _, ha = sky.horizon(rows, at)
        return mount.parallactic_angle_deg(ha, sky.radec(rows, at)[1], lat)

    alt, _, ha = sky.horizon(rows, t)
    rate = mount.field_rotation_deg_per_min(ha, sky.radec(rows, t)[1], lat)
    fd = ((q(t + 15.0) - q(t - 15.0) + 180.0) % 360.0 - 180.0) / 0.5
    ok = np.abs(alt) < 88.0  # away from the zenith and the nadir, where ω diverges
    assert np.all(np.abs(fd[ok] - rate[ok]) < np.maximum(1e-3 * np.abs(rate[ok]), 1e-4))


@pytest.fixture(scope="module")
def small_plan():
    ephemeris.configure_astropy_offline()
    site = Site("test", -30.2, -70.7, 2200.0, zone=nautical_zone(-70.7))
    nt = night.compute_night(site, dt.date(2026, 6, 15))
    rng = np.random.default_rng(7)
    n = 25
    ra, dec = rng.uniform(0, 360, n), rng.uniform(-80, 20, n)
    res = windows.compute_windows(target_set(ra, dec), site, nt, Limits())
    plan = build.make_night_plan(res, np.zeros(n, int), np.full(n, np.nan), build.Overheads(),
                                 model.PlanOptions())
    assert len(plan.visits) > 3
    return site, res, plan, ra, dec


def test_visit_azimuths_and_parallactic_angles_follow_the_engine(small_plan) -> None:
    """Each visit's start/end azimuths are the engine's horizon places at the exposure's
    start and end; its parallactic angles those of ERFA ``eraHd2pa`` at the engine's hour
    angle and declination at start, middle and end."""
    site, res, plan, _, _ = small_plan
    lat = np.radians(site.lat_deg)
    for v in plan.visits:
        mid = 0.5 * (v.exposure_start + v.end)
        for t, az, q in ((v.exposure_start, v.az_start_deg, v.parallactic_start_deg),
                         (mid, v.az_mid_deg, v.parallactic_mid_deg),
                         (v.end, v.az_end_deg, v.parallactic_end_deg)):
            _, az_ref, ha = res.sky.horizon(np.array([v.target]), np.array([t]))
            dec = res.sky.radec(np.array([v.target]), np.array([t]))[1]
            assert abs(az - az_ref[0]) < 1e-9
            assert abs(q - np.degrees(erfa.hd2pa(ha[0], dec[0], lat))) < 1e-9
        assert np.isfinite(v.field_rotation_deg_per_min)


def test_visit_sun_distance_matches_astropy(small_plan) -> None:
    """Distance from the Sun at mid-exposure against astropy: the catalogue place taken to
    GCRS at that instant, separated from astropy's geocentric apparent Sun (``get_body``).
    Within 0.01° (the engine's Sun is topocentric: its parallax is below 9″)."""
    import astropy.units as u
    from astropy.coordinates import GCRS, SkyCoord, get_body
    from astropy.time import Time

    _, res, plan, ra, dec = small_plan
    for v in plan.visits:
        when = Time(0.5 * (v.exposure_start + v.end), format="unix")
        star = SkyCoord(ra=ra[v.target] * u.deg, dec=dec[v.target] * u.deg).transform_to(
            GCRS(obstime=when))
        sep = star.separation(get_body("sun", when)).deg
        assert abs(v.sun_distance_deg - sep) < 0.01


# ------------------------------------------------------------------ the maximum altitude


def test_max_alt_splits_a_near_zenith_pass_and_charges_the_time_above() -> None:
    """A star passing 1° north of the zenith (δ = φ + 1°) at about local midnight, with
    ``max_alt_deg=85``: two windows, one ending before the transit and one starting after;
    the minutes charged to ``max_alt`` equal the time above 85° on a 1-minute grid of
    astropy's ICRS → AltAz (pressure 0, as the engine with refraction off), within 1 minute."""
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    lat, lon = 37.2, -3.6
    site = Site("test", lat, lon, 2800.0, zone=nautical_zone(lon))
    nt = night.compute_night(site, dt.date(2026, 3, 20))
    ra, dec = np.array([177.0, 80.0]), np.array([lat + 1.0, 10.0])
    res = windows.compute_windows(target_set(ra, dec), site, nt,
                                  Limits(max_alt_deg=85.0, refraction_model="none"))
    mine = res.windows.rows == 0
    starts, ends = res.windows.start[mine], res.windows.end[mine]
    assert len(starts) == 2
    transit = float(res.transit[0])
    assert ends[0] < transit < starts[1]

    t = np.arange(res.span[0], res.span[1], 60.0)
    frame = AltAz(obstime=Time(t, format="unix", scale="utc"),
                  location=EarthLocation.from_geodetic(lon * u.deg, lat * u.deg, 2800.0 * u.m),
                  pressure=0 * u.hPa)
    alt = SkyCoord(ra=ra[0] * u.deg, dec=dec[0] * u.deg).transform_to(frame).alt.deg
    dark = np.zeros(len(t), bool)
    for a, b in res.dark:
        dark |= (t >= a) & (t < b)
    above_min = float(np.sum(dark & (alt > 85.0)))
    assert abs(res.lost_s["max_alt"][0] / 60.0 - above_min) <= 1.0
    assert above_min > 10.0
    assert abs((starts[1] - ends[0]) / 60.0 - float(np.sum(alt > 85.0))) <= 1.0
    # the other star never gets above 85°: nothing charged
    assert res.lost_s["max_alt"][1] == 0.0


def test_max_alt_must_be_above_the_minimum_altitude(capsys) -> None:
    """A maximum altitude at or below the minimum: a one-line error naming the option, exit 2."""
    with pytest.raises(SystemExit) as exc:
        main(["windows", "--demo", "--min-alt", "30", "--max-alt", "30"])
    assert exc.value.code == 2
    err = capsys.readouterr().err
    assert "--max-alt" in err and "Traceback" not in err


# ------------------------------------------------------------------ the site's mount

MOUNT_SITE = """[site.hill]
latitude = 37.2
longitude = -3.6
elevation = 2800
zone = "Europe/Madrid"

[site.hill.mount]
{mount}
"""


def write_site(tmp_path, mount: str, extra: str = ""):
    path = tmp_path / "sites.toml"
    path.write_text(MOUNT_SITE.format(mount=mount) + extra)
    return path


@pytest.mark.parametrize(("mount", "key", "line"), [
    ('kind = "fork"', "kind", 8),
    ("max_alt_deg = 86", "kind", 7),  # kind missing: the table's line
    ('kind = "altaz"\nmax_alt_deg = 95', "max_alt_deg", 9),
    ('kind = "altaz"\nmax_alt = 85', "max_alt", 9),
])
def test_a_bad_mount_table_is_reported_with_file_line_and_field(tmp_path, mount, key,
                                                                 line) -> None:
    from skyplan.inputs.sitesfile import check_sites_file

    (problem,) = check_sites_file(write_site(tmp_path, mount))
    assert (problem.field, problem.line) == (f"site.hill.mount.{key}", line)
    assert problem.file.endswith("sites.toml")


def windows_limits(capsys, args) -> dict:
    import json

    with pytest.raises(SystemExit) as exc:
        main(["windows", "--demo", "--format", "json", *args])
    assert exc.value.code == 0
    return json.loads(capsys.readouterr().out)["limits"]


def test_an_altaz_mount_gives_its_max_alt_as_the_default_limit(tmp_path, capsys) -> None:
    """altaz: the mount's max_alt_deg is the maximum altitude, unless --max-alt, the site's
    own limit or another --mount kind says otherwise."""
    path = write_site(tmp_path, 'kind = "altaz"\nmax_alt_deg = 86')
    base = ["--sites-file", str(path), "--site", "hill"]
    assert windows_limits(capsys, base)["max_alt_deg"] == 86.0
    assert windows_limits(capsys, [*base, "--max-alt", "80"])["max_alt_deg"] == 80.0
    assert windows_limits(capsys, [*base, "--mount", "equatorial"])["max_alt_deg"] is None
    own = write_site(tmp_path, 'kind = "altaz"\nmax_alt_deg = 86',
                     "\n[site.hill.limits]\nmax_alt_deg = 84\n")
    assert windows_limits(capsys, ["--sites-file", str(own), "--site", "hill"])[
        "max_alt_deg"] == 84.0


def test_an_altaz_max_alt_below_the_minimum_is_reported_at_the_mount_line(tmp_path,
                                                                          capsys) -> None:
    path = write_site(tmp_path, 'kind = "altaz"\nmax_alt_deg = 15')
    with pytest.raises(SystemExit) as exc:
        main(["windows", "--demo", "--sites-file", str(path), "--site", "hill"])
    assert exc.value.code == 2
    err = capsys.readouterr().err
    assert "sites.toml:9" in err and "site.hill.mount.max_alt_deg" in err


def test_a_german_mount_names_the_pier_side_from_the_hour_angle(tmp_path, capsys) -> None:
    """german-equatorial: pier_side is east exactly when the hour angle at the exposure's
    start is positive (target west of the meridian); the hour angle recomputed from astropy's
    apparent sidereal time at the site's longitude and the visit's apparent right ascension.
    Without a German mount there is no pier_side."""
    import json

    import astropy.units as u
    from astropy.time import Time

    ephemeris.configure_astropy_offline()
    path = write_site(tmp_path, 'kind = "german-equatorial"')
    out = tmp_path / "plan.json"
    with pytest.raises(SystemExit) as exc:
        main(["plan", "--demo", "--sites-file", str(path), "--site", "hill", "--format",
              "json", "--out", str(out), "--quiet"])
    assert exc.value.code == 0
    obs = json.loads(out.read_text())["observations"]
    assert obs
    t = Time([o["exposure_start"].replace("Z", "") for o in obs], scale="utc")
    last = t.sidereal_time("apparent", longitude=-3.6 * u.deg).deg
    ha = (last - np.array([o["ra_apparent_deg"] for o in obs]) + 180.0) % 360.0 - 180.0
    clear = np.abs(ha) > 0.05  # degrees: away from the meridian itself
    assert clear.sum() > 3
    sides = np.array([o["pier_side"] for o in obs])
    assert np.all((sides[clear] == "east") == (ha[clear] > 0))
    with pytest.raises(SystemExit):
        main(["plan", "--demo", "--sites-file", str(path), "--site", "hill", "--mount",
              "altaz", "--format", "json", "--out", str(out), "--quiet"])
    assert all("pier_side" not in o for o in json.loads(out.read_text())["observations"])


def test_an_unknown_mount_option_is_refused(capsys) -> None:
    with pytest.raises(SystemExit) as exc:
        main(["windows", "--demo", "--mount", "fork"])
    assert exc.value.code == 2
    assert "--mount" in capsys.readouterr().err
