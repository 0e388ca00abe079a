"""``convert`` results: plain records (JSON, NDJSON, CSV) and a terminal table (formatting
only)."""

from __future__ import annotations

import numpy as np

from skyplan.inputs.angles import format_dms, format_dms_array, format_hms_array
from skyplan.render.tables import Sheet, site_record

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
            rec["hour_angle_h"] = round(float(res.hour_angle_h[i]), 10)
            rec["refraction_deg"] = round(float(res.refraction_deg[i]), 9)
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


def csv_records(records: list[dict]) -> list[dict]:
    """The records for CSV: plain values only, the site flattened to ``site_name``,
    ``site_lat_deg``, ``site_lon_deg``, ``site_elevation_m``, ``site_zone``."""
    out = []
    for rec in records:
        flat = {k: v for k, v in rec.items() if k != "site"}
        if "site" in rec:
            flat.update({f"site_{k}": v for k, v in rec["site"].items()})
        out.append(flat)
    return out


def conversion_table(res) -> Sheet:
    """One row per target: the two angles of the frame (sexagesimal, then degrees).

    The horizon frame lists azimuth then altitude, the order ``--from horizon`` reads them.
    """
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
    footer = []
    if req.to_frame == "horizon":
        footer.append(("altitudes refracted (" + req.refraction + " model, site weather)"
                       if req.refraction != "none" else "geometric altitudes, no refraction")
                      + "; azimuth from north through east")
    t = Sheet(", ".join(bits), footer=footer)
    t.column("target", fate="wrap")
    names = res.positions.names
    lon, lat = res.lon_deg, res.lat_deg
    if req.to_frame in ("icrs", "fk5", "apparent"):
        heads = ("RA", "Dec")
        lon_s, lat_s = format_hms_array(lon, places=2), format_dms_array(lat, places=1)
        digits = 6
    elif req.to_frame == "horizon":
        heads = ("az", "alt")
        lon_s = [format_dms(v, 0).lstrip("+") for v in lon]
        lat_s = format_dms_array(lat, places=0)
        digits = 4
    else:
        heads = ("λ", "β") if req.to_frame == "ecliptic" else ("l", "b")
        lon_s = [format_dms(v, 1).lstrip("+") for v in lon]
        lat_s = format_dms_array(lat, places=1)
        digits = 6
    t.column(heads[0], justify="right")
    t.column(heads[1], justify="right")
    t.column(klon, justify="right", rank=4, fate="drop")
    t.column(klat, justify="right", rank=5, fate="drop")
    if req.to_frame == "horizon":
        t.column("hour angle", justify="right", rank=3, fate="drop")
    for i in range(len(names)):
        row = [str(names[i]), lon_s[i], lat_s[i], f"{lon[i]:.{digits}f}", f"{lat[i]:.{digits}f}"]
        if req.to_frame == "horizon":
            row.append(f"{res.hour_angle_h[i]:+.3f} h")
        t.add_row(*row)
    return t
