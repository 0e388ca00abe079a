"""``clock`` as a terminal table (formatting only; the record is ``tables.clock_record``)."""

from __future__ import annotations

from skyplan.inputs.angles import format_hms
from skyplan.render.tables import Sheet


def clock_table(r, site) -> Sheet:
    """The clock reading: quantity, value, and a remark (offsets, degrees)."""
    t = Sheet(f"Clock at {site.name} ({site.lat_deg:+.4f}°, {site.lon_deg:+.4f}°)")
    t.column("quantity")
    t.column("value")
    t.column("", rank=5, fate="wrap", style="dim")
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
        (("Greenwich mean sidereal time", "GMST"), _hms(r.gmst_deg), f"{r.gmst_deg:.6f}°"),
        (("Greenwich apparent sidereal time", "GAST"), _hms(r.gast_deg), f"{r.gast_deg:.6f}°"),
        (("local mean sidereal time", "LMST"), _hms(r.lmst_deg), f"{r.lmst_deg:.6f}°"),
        (("local apparent sidereal time", "LAST"), _hms(r.last_deg), f"{r.last_deg:.6f}°"),
    ]
    for row in rows:
        t.add_row(*row)
    return t


def _hms(deg: float) -> str:
    return format_hms(deg, places=3)
