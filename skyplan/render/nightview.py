"""The night: a table for the terminal and a record for JSON (formatting only)."""

from __future__ import annotations

from zoneinfo import ZoneInfo

from skyplan.inputs.angles import format_hms
from skyplan.inputs.timeinput import iso_local, iso_utc
from skyplan.render.tables import _table


def night_record(n, site) -> dict:
    from skyplan.render.tables import site_record

    return {
        "site": site_record(site, brief=True),
        "date": n.date.isoformat(),
        "sun_state": n.sun_state,
        "sunset": iso_utc(n.sunset),
        "sunrise": iso_utc(n.sunrise),
        "dusk": {k: iso_utc(v) for k, v in n.dusk.items()},
        "dawn": {k: iso_utc(v) for k, v in n.dawn.items()},
        "dark_hours": round(n.dark_hours, 4),
        "local_midnight": iso_utc(n.local_midnight),
        "moon": {
            "rise": iso_utc(n.moon.rise), "set": iso_utc(n.moon.set),
            "transit": iso_utc(n.moon.transit),
            "transit_alt_deg": None if n.moon.transit_alt_deg is None else round(
                n.moon.transit_alt_deg, 3),
            "illumination": round(n.moon.illumination, 4),
            "phase_angle_deg": round(n.moon.phase_angle_deg, 3),
            "waxing": n.moon.waxing,
            "altitude": [{"time": iso_utc(t), "alt_deg": round(float(a), 2)}
                         for t, a in zip(*n.moon_altitudes())],
        },
        "lst_deg": {k: None if v is None else round(v, 5) for k, v in n.lst_deg.items()},
    }


def _both(unix, zone) -> tuple[str, str]:
    if unix is None:
        return "—", "—"
    return iso_local(unix, zone)[:16].replace("T", " "), iso_utc(unix)[11:16] + "Z"


STATE_TEXT = {
    "normal": "the Sun sets and rises",
    "midnight_sun": "midnight Sun: the Sun stays up all night",
    "polar_night": "polar night: the Sun stays below the horizon",
    "twilight_all_night": "the Sun sets but never reaches −18°: no astronomical darkness",
}


def night_table(n, site):
    zone = ZoneInfo(n.zone)
    t = _table(f"Night of {n.date.isoformat()} at {site.name} ({n.zone})",
               caption=STATE_TEXT.get(n.sun_state, n.sun_state))
    t.add_column("event")
    t.add_column("local", justify="right")
    t.add_column("UTC", justify="right")
    t.add_column("note", style="dim")
    rows = [("sunset", n.sunset, "upper limb, −0°50′")]
    rows += [(f"{k} dusk", v, f"Sun at {d}°") for (k, v), d in
             zip(n.dusk.items(), (-6, -12, -18))]
    rows += [("local midnight", n.local_midnight,
              f"LST {format_hms(n.lst_deg['midnight'], 0)}")]
    rows += [(f"{k} dawn", v, f"Sun at {d}°") for (k, v), d in
             reversed(list(zip(n.dawn.items(), (-6, -12, -18))))]
    rows += [("sunrise", n.sunrise, "upper limb, −0°50′")]
    for name, when, note in rows:
        t.add_row(name, *_both(when, zone), note)
    t.add_row("dark (Sun below −18°)", f"{n.dark_hours:.2f} h", "", "")
    for key in ("dusk", "dawn"):
        v = n.lst_deg[key]
        t.add_row(f"LST at {key}", "—" if v is None else format_hms(v, 0), "",
                  "astronomical twilight, else the nearest event")
    m = n.moon
    phase = f"{100 * m.illumination:.0f}% lit, {'waxing' if m.waxing else 'waning'}"
    t.add_row("moonrise", *_both(m.rise, zone), phase)
    alt = "" if m.transit_alt_deg is None else f"altitude {m.transit_alt_deg:.1f}°"
    t.add_row("Moon transit", *_both(m.transit, zone), alt)
    t.add_row("moonset", *_both(m.set, zone), f"phase angle {m.phase_angle_deg:.1f}°")
    hours, alts = n.moon_altitudes()
    if len(hours):
        import datetime as dt

        strip = "  ".join(f"{dt.datetime.fromtimestamp(h, zone):%H}h {a:+.0f}°"
                          for h, a in zip(hours, alts))
        t.add_row("Moon altitude", "", "", strip)
    return t
