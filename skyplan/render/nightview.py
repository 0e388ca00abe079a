"""The night: a table for the terminal and a record for JSON (formatting only)."""

from __future__ import annotations

import datetime as dt
from zoneinfo import ZoneInfo

from skyplan.inputs.angles import format_hms
from skyplan.inputs.timeinput import iso_local, iso_utc
from skyplan.render.tables import Sheet, Strip


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


STATE_TEXT = {
    "normal": "the Sun sets and rises",
    "midnight_sun": "midnight Sun: the Sun stays up all night",
    "polar_night": "polar night: the Sun stays below the horizon",
    "twilight_all_night": "the Sun sets but never reaches −18°: no astronomical darkness",
}
_SUN_AT = {"civil": "−6°", "nautical": "−12°", "astronomical": "−18°"}


def _events(n) -> list[tuple[str, float | None, str]]:
    """Every event of the night with its note: the Sun's, local midnight and the Moon's."""
    m = n.moon
    rows = [("sunset", n.sunset, "Sun's upper limb at −0°50′")]
    rows += [(f"{k} dusk", v, f"Sun at {_SUN_AT[k]}") for k, v in n.dusk.items()]
    rows += [("local midnight", n.local_midnight,
              f"sidereal time {format_hms(n.lst_deg['midnight'], 0)}")]
    rows += [(f"{k} dawn", v, f"Sun at {_SUN_AT[k]}") for k, v in reversed(n.dawn.items())]
    rows += [("sunrise", n.sunrise, "Sun's upper limb at −0°50′")]
    alt = "" if m.transit_alt_deg is None else f"Moon {m.transit_alt_deg:.1f}° high"
    rows += [("moonrise", m.rise, ""), ("Moon transit", m.transit, alt), ("moonset", m.set, "")]
    return rows


def night_table(n, site) -> list:
    """The night's events in time order (events that do not happen last), the Moon's
    altitude hour by hour, and a footer with darkness, sidereal times and the Moon's phase."""
    zone = ZoneInfo(n.zone)
    m = n.moon
    lst = {k: "—" if n.lst_deg[k] is None else format_hms(n.lst_deg[k], 0)
           for k in ("dusk", "dawn")}
    state = STATE_TEXT.get(n.sun_state, n.sun_state)
    footer = [
        f"{state[:1].upper()}{state[1:]}; dark (Sun below −18°) for {n.dark_hours:.2f} h.",
        f"Sidereal time {lst['dusk']} at dusk and {lst['dawn']} at dawn (astronomical "
        "twilight, or the nearest event when the Sun does not reach −18°).",
        f"Moon {100 * m.illumination:.0f}% lit, {'waxing' if m.waxing else 'waning'} "
        f"(phase angle {m.phase_angle_deg:.1f}°).",
    ]
    t = Sheet(f"Night of {n.date.isoformat()} at {site.name} ({n.zone})", footer=footer)
    t.column("event")
    t.column("local", justify="right")
    t.column("UTC", justify="right", rank=3, fate="drop")
    t.column("note", rank=2, fate="wrap", style="dim")
    events = _events(n)
    events.sort(key=lambda e: (e[1] is None, e[1] or 0.0))
    for name, when, note in events:
        if when is None:
            t.add_row(name, "—", "—", f"{note}: not this night" if note else
                      "does not happen this night")
            continue
        local = iso_local(when, zone)[:16].replace("T", " ")
        t.add_row(name, (local, local[5:]), iso_utc(when)[11:16] + "Z", note)
    hours, alts = n.moon_altitudes()
    strip = Strip("local hour", "Moon alt.", [f"{dt.datetime.fromtimestamp(h, zone):%H}h"
                                              for h in hours],
                  [f"{a:+.0f}°" for a in alts],
                  title="The Moon's altitude, hour by hour through the night")
    return [t, strip] if len(hours) else [t]
