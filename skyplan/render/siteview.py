"""Sites as terminal tables: one site in full, or the sites of a file (formatting only;
the record is ``tables.site_record``)."""

from __future__ import annotations

from skyplan.inputs.angles import format_dms
from skyplan.render.tables import Sheet
from skyplan.text import escaped


def site_table(site) -> Sheet:
    """One site: position, zone, weather, horizon profile, default limits, source."""
    t = Sheet(f"Site {site.name}")
    t.column("field")
    t.column("value", fate="wrap")
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
        t.add_row(("horizon profile (az:alt)", "horizon (az:alt)"), pts)
    for key, value in site.limits.items():
        t.add_row(f"limit {key}", str(value))
    if site.source:
        t.add_row("source", escaped(site.source))  # a file name as typed
    return t


def sites_table(parsed) -> Sheet:
    """The sites of a file, one row each; the default one marked."""
    t = Sheet(f"Sites in {escaped(str(parsed.path))}")
    t.column("name", fate="wrap")
    t.column("latitude", justify="right")
    t.column("longitude", justify="right")
    t.column("elevation", justify="right", rank=4, fate="drop")
    t.column("zone", rank=3, fate="wrap")
    t.column("horizon", rank=5, fate="drop")
    t.column("", rank=2)
    for name, s in parsed.sites.items():
        t.add_row(name, f"{s.lat_deg:+.4f}°", f"{s.lon_deg:+.4f}°", f"{s.elevation_m:.0f} m",
                  s.zone, "profile" if s.horizon is not None else "flat",
                  "default" if parsed.default == name else "")
    return t
