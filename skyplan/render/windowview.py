"""Windows: the terminal table with a timeline (formatting only; the machine formats are
written from :mod:`skyplan.render.windowcolumns`)."""

from __future__ import annotations

from zoneinfo import ZoneInfo

import numpy as np

from skyplan.engine.timeline import BLOCKED, DOWN, LIGHT, PLANNED, USABLE
from skyplan.render.tables import _table
from skyplan.render.windowcolumns import status as _status

# characters read without colour and in log files; colour is only a help on a terminal
TIMELINE_CHARS = {USABLE: "#", BLOCKED: "-", DOWN: ".", LIGHT: " ", PLANNED: "@"}
TIMELINE_STYLE = {USABLE: "bold green", BLOCKED: "yellow", DOWN: "grey50", LIGHT: "on grey23",
                  PLANNED: "bold white on blue"}
TIMELINE_KEY = ("timeline: '#' usable, '-' up but blocked by a limit, '.' below the altitude "
                "limit, blank: sky not dark")


def timeline_text(codes, color: bool):
    """One strip of timeline codes as rich text: characters first, colour only as a help."""
    from rich.text import Text

    text = Text()
    for c in codes:
        text.append(TIMELINE_CHARS[int(c)], style=TIMELINE_STYLE[int(c)] if color else None)
    return text


def _hhmm(unix, zone) -> str:
    import datetime as dt

    if unix is None or not np.isfinite(unix):
        return "—"
    return dt.datetime.fromtimestamp(float(unix), zone).strftime("%H:%M")


def windows_table(res, site, codes=None, edges=None, *, color: bool = True):
    zone = ZoneInfo(res.night.zone)

    lim = res.limits
    bits = [f"min alt {lim.min_alt_deg:g}°"]
    if lim.max_airmass:
        bits.append(f"airmass ≤ {lim.max_airmass:g}")
    bits.append(f"dark: {lim.dark_label}")
    if lim.moon_gap_deg:
        bits.append(f"Moon ≥ {lim.moon_gap_deg:g}°")
    bits.append(f"Sun ≥ {lim.sun_gap_deg:g}°")
    if lim.ha_range_h:
        bits.append(f"HA {lim.ha_range_h[0]:+g}..{lim.ha_range_h[1]:+g} h")
    if lim.dec_range_deg:
        bits.append(f"Dec {lim.dec_range_deg[0]:+g}..{lim.dec_range_deg[1]:+g}°")
    caption = "limits: " + ", ".join(bits) + f"; times {res.night.zone}"
    if "dark" in res.lost_s and len(res.names):
        caption += (f"; twilight takes {float(np.max(res.lost_s['dark'])) / 60:.0f} min of the "
                    "night from every target")
    if codes is not None:
        caption += f"\n{TIMELINE_KEY}; strip {_hhmm(edges[0], zone)}–{_hhmm(edges[-1], zone)}"
    t = _table(f"Windows, night of {res.night.date.isoformat()} at {site.name}", caption)
    for col, just in (("target", "left"), ("status", "left"), ("rise", "right"),
                      ("transit", "right"), ("set", "right"), ("windows", "left"),
                      ("usable", "right"), ("best", "right"), ("lost to", "left")):
        t.add_column(col, justify=just, no_wrap=col in ("windows", "transit", "best"))
    if codes is not None:
        t.add_column("timeline", no_wrap=True)
    status = _status(res)
    w = res.windows
    order = np.argsort(-res.usable_s, kind="stable")
    for i in order:
        sel = w.rows == i
        wins = ", ".join(f"{_hhmm(a, zone)}–{_hhmm(b, zone)}"
                         for a, b in zip(w.start[sel], w.end[sel])) or "—"
        lost = sorted(((v[i] / 60.0, key) for key, v in res.lost_s.items()
                       if key != "dark" and v[i] >= 30.0), reverse=True)
        lost_txt = ", ".join(f"{key.replace('_', ' ')} {m:.0f}m" for m, key in lost[:2])
        flags = []
        if res.near_sun[i]:
            flags.append("NEAR SUN")
        if res.daylight_window[i]:
            flags.append("DAYLIGHT")
        st = status[i].replace("_", " ") + (" " + " ".join(flags) if flags else "")
        best = "—" if not np.isfinite(res.best_time[i]) else \
            f"{_hhmm(res.best_time[i], zone)} X{res.best_airmass[i]:.2f}"
        tr = "—" if not np.isfinite(res.transit[i]) else \
            f"{_hhmm(res.transit[i], zone)} {res.transit_alt_deg[i]:+.0f}°"
        label = str(res.names[i])
        if res.identifiers[i] and res.identifiers[i] != label:
            label += f" ({res.identifiers[i]})"
        row = [label, st, _hhmm(res.rise[i], zone), tr, _hhmm(res.set[i], zone),
               wins, f"{res.usable_s[i] / 60.0:.0f}m", best, lost_txt]
        if codes is not None:
            row.append(timeline_text(codes[i], color))
        t.add_row(*row, style="red" if res.near_sun[i] and color else None)
    return t

