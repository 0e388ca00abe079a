"""Terminal tables and plain records for clock, convert and sites (formatting only)."""

from __future__ import annotations

import io

import numpy as np

from skyplan.inputs.angles import format_dms, format_dms_array, format_hms, format_hms_array


def render_text(renderable) -> str:
    """Render a rich object to text: colour on a terminal, plain elsewhere."""
    con = _console()
    if con.is_terminal:
        with con.capture() as cap:
            con.print(renderable)
        return cap.get()
    from rich.console import Console

    buf = io.StringIO()
    Console(file=buf, width=200, no_color=True, force_terminal=False, highlight=False,
            color_system=None).print(renderable)
    return buf.getvalue()


def _console():
    """A rich console on stdout: colour only on a terminal, plain text otherwise."""
    import os
    import sys

    from rich.console import Console

    tty = sys.stdout.isatty() and os.environ.get("TERM") != "dumb"
    return Console(
        force_terminal=False if not tty else None,
        no_color=not tty or "NO_COLOR" in os.environ,
        highlight=False,
        width=None if tty else 160,
    )


def _table(title: str | None = None, caption: str | None = None):
    from rich import box
    from rich.table import Table

    return Table(title=title, caption=caption, box=box.SIMPLE_HEAD, title_justify="left",
                 caption_justify="left", header_style="bold")


# ---------------------------------------------------------------- clock


def clock_record(r, site) -> dict:
    return {
        "site": site_record(site, brief=True),
        "utc": r.utc, "ut1": r.ut1, "tt": r.tt,
        "local_time": r.local_time, "zone": r.zone,
        "jd_utc": r.jd_utc, "jd_ut1": r.jd_ut1, "jd_tt": r.jd_tt, "mjd_utc": r.mjd_utc,
        "ut1_minus_utc_s": r.dut1_s, "tai_minus_utc_s": r.tai_utc_s,
        "era_deg": r.era_deg, "gmst_deg": r.gmst_deg, "gast_deg": r.gast_deg,
        "lmst_deg": r.lmst_deg, "last_deg": r.last_deg,
    }


def clock_table(r, site):
    t = _table(f"Clock at {site.name} ({site.lat_deg:+.4f}°, {site.lon_deg:+.4f}°)")
    t.add_column("quantity")
    t.add_column("value")
    t.add_column("", style="dim")
    rows = [
        ("UTC", r.utc, ""),
        ("local civil time", r.local_time, r.zone),
        ("UT1", r.ut1, f"UT1−UTC {r.dut1_s:+.4f} s"),
        ("TT", r.tt, f"TAI−UTC {r.tai_utc_s:.0f} s"),
        ("Julian date (UTC)", f"{r.jd_utc:.6f}", ""),
        ("Julian date (UT1)", f"{r.jd_ut1:.6f}", ""),
        ("Julian date (TT)", f"{r.jd_tt:.6f}", ""),
        ("MJD (UTC)", f"{r.mjd_utc:.6f}", ""),
        ("Earth rotation angle", f"{r.era_deg:.6f}°", ""),
        ("Greenwich mean sidereal time", _hms(r.gmst_deg), f"{r.gmst_deg:.6f}°"),
        ("Greenwich apparent sidereal time", _hms(r.gast_deg), f"{r.gast_deg:.6f}°"),
        ("local mean sidereal time", _hms(r.lmst_deg), f"{r.lmst_deg:.6f}°"),
        ("local apparent sidereal time", _hms(r.last_deg), f"{r.last_deg:.6f}°"),
    ]
    for row in rows:
        t.add_row(*row)
    return t


def _hms(deg: float) -> str:
    return format_hms(deg, places=3)


# ---------------------------------------------------------------- convert

_KEYS = {
    "icrs": ("ra_deg", "dec_deg"),
    "fk5": ("ra_deg", "dec_deg"),
    "apparent": ("ra_deg", "dec_deg"),
    "horizon": ("az_deg", "alt_deg"),
    "ecliptic": ("elon_deg", "elat_deg"),
    "galactic": ("l_deg", "b_deg"),
}


def conversion_records(res) -> list[dict]:
    req = res.request
    klon, klat = _KEYS[req.to_frame]
    site = site_record(req.site, brief=True) if req.site is not None else None
    from skyplan.inputs.timeinput import iso_utc

    when = iso_utc(req.unix, places=3) if req.unix is not None else None
    p = res.positions
    lon = np.round(res.lon_deg, 9).tolist()
    lat = np.round(res.lat_deg, 9).tolist()
    out = []
    for i in range(len(lon)):
        rec = {"name": p.names[i]}
        if p.identifiers[i]:
            rec["identifier"] = p.identifiers[i]
        rec[klon] = lon[i]
        rec[klat] = lat[i]
        if req.to_frame == "horizon":
            rec["hour_angle_h"] = float(res.hour_angle_h[i])
            rec["refraction_deg"] = float(res.refraction_deg[i])
        rec["frame"] = req.to_frame
        if res.equinox_label:
            rec["equinox"] = res.equinox_label
        rec["from_frame"] = req.from_frame
        if req.to_frame == "horizon":
            rec["refraction"] = req.refraction
        if site is not None:
            rec["site"] = site
        if when is not None:
            rec["time"] = when
        out.append(rec)
    return out


def conversion_table(res):
    req = res.request
    klon, klat = _KEYS[req.to_frame]
    bits = [f"{req.from_frame} → {req.to_frame}"]
    if res.equinox_label:
        bits.append(f"equinox {res.equinox_label}")
    if req.site is not None and req.to_frame in ("horizon", "apparent"):
        bits.append(f"site {req.site.name}")
    if req.unix is not None:
        from skyplan.inputs.timeinput import iso_utc

        bits.append(iso_utc(req.unix))
    caption = None
    if req.to_frame == "horizon":
        caption = ("altitudes refracted (" + req.refraction + " model, site weather)"
                   if req.refraction != "none" else "geometric altitudes, no refraction")
        caption += "; azimuth from north through east"
    t = _table(", ".join(bits), caption)
    t.add_column("target")
    names = res.positions.names
    if req.to_frame in ("icrs", "fk5", "apparent"):
        t.add_column("RA", justify="right")
        t.add_column("Dec", justify="right")
        t.add_column("ra_deg", justify="right")
        t.add_column("dec_deg", justify="right")
        ra_s = format_hms_array(res.lon_deg, places=2)
        dec_s = format_dms_array(res.lat_deg, places=1)
        for i in range(len(names)):
            t.add_row(str(names[i]), ra_s[i], dec_s[i], f"{res.lon_deg[i]:.6f}",
                      f"{res.lat_deg[i]:.6f}")
    elif req.to_frame == "horizon":
        for col in ("alt", "az", "alt_deg", "az_deg", "hour angle"):
            t.add_column(col, justify="right")
        for i in range(len(names)):
            t.add_row(str(names[i]), format_dms(res.lat_deg[i], 0),
                      format_dms(res.lon_deg[i], 0).lstrip("+"), f"{res.lat_deg[i]:.4f}",
                      f"{res.lon_deg[i]:.4f}", f"{res.hour_angle_h[i]:+.3f} h")
    else:
        a, b = ("λ", "β") if req.to_frame == "ecliptic" else ("l", "b")
        t.add_column(a, justify="right")
        t.add_column(b, justify="right")
        t.add_column(klon, justify="right")
        t.add_column(klat, justify="right")
        for i in range(len(names)):
            t.add_row(str(names[i]), format_dms(res.lon_deg[i], 1).lstrip("+"),
                      format_dms(res.lat_deg[i], 1), f"{res.lon_deg[i]:.6f}",
                      f"{res.lat_deg[i]:.6f}")
    return t


# ---------------------------------------------------------------- sites


def site_record(site, brief: bool = False) -> dict:
    rec = {
        "name": site.name, "lat_deg": site.lat_deg, "lon_deg": site.lon_deg,
        "elevation_m": site.elevation_m, "zone": site.zone,
    }
    if brief:
        return rec
    p, t, h = site.weather()
    rec.update({
        "pressure_hpa": p, "temperature_c": t, "humidity": h,
        "weather_given": site.pressure_hpa is not None,
        "horizon": None if site.horizon is None else [
            [float(a), float(b)] for a, b in zip(site.horizon.az_deg, site.horizon.alt_deg)],
        "limits": dict(site.limits),
        "source": site.source,
    })
    return rec


def site_table(site):
    t = _table(f"Site {site.name}")
    t.add_column("field")
    t.add_column("value")
    p, temp, h = site.weather()
    given = site.pressure_hpa is not None
    t.add_row("latitude", f"{format_dms(site.lat_deg, 1)}  ({site.lat_deg:+.5f}°)")
    t.add_row("longitude", f"{format_dms(site.lon_deg, 1)}  ({site.lon_deg:+.5f}° east)")
    t.add_row("elevation", f"{site.elevation_m:.0f} m")
    t.add_row("time zone", site.zone)
    t.add_row("weather", f"{p:.1f} hPa, {temp:.1f} °C, humidity {h:.2f}"
              + ("" if given else "  (standard atmosphere)"))
    if site.horizon is not None:
        pts = ", ".join(f"{a:g}°:{b:g}°" for a, b in zip(site.horizon.az_deg, site.horizon.alt_deg))
        t.add_row("horizon profile (az:alt)", pts)
    for key, value in site.limits.items():
        t.add_row(f"limit {key}", str(value))
    if site.source:
        t.add_row("source", site.source)
    return t


def sites_table(parsed):
    t = _table(f"Sites in {parsed.path}")
    for col in ("name", "latitude", "longitude", "elevation", "zone", "horizon", ""):
        t.add_column(col)
    for name, s in parsed.sites.items():
        t.add_row(name, f"{s.lat_deg:+.4f}°", f"{s.lon_deg:+.4f}°", f"{s.elevation_m:.0f} m",
                  s.zone, "profile" if s.horizon is not None else "flat",
                  "default" if parsed.default == name else "")
    return t


# ---------------------------------------------------------------- selfcheck


def selfcheck_record(report) -> dict:
    return {
        "ok": report.ok,
        "ephemeris": report.ephemeris,
        "ephemeris_span": list(report.ephemeris_span),
        "iers_table_end": report.iers_table_end,
        "iers_observed_end": report.iers_observed_end,
        "checks": [{"name": c.name, "ok": c.ok, "expected": c.expected, "got": c.got,
                    "source": c.source} for c in report.checks],
    }


def selfcheck_table(report):
    verdict = "all checks pass" if report.ok else "SOME CHECKS FAIL"
    caption = (f"{verdict}; ephemeris {report.ephemeris} covers {report.ephemeris_span[0]} to "
               f"{report.ephemeris_span[1]}; IERS table: measured to "
               f"{report.iers_observed_end}, predicted to {report.iers_table_end}")
    t = _table("skyplan selfcheck", caption)
    for col in ("", "check", "expected", "got", "source"):
        t.add_column(col)
    for c in report.checks:
        t.add_row("pass" if c.ok else "FAIL", c.name, c.expected, c.got, c.source)
    return t
