"""Windows: the terminal table with a timeline (formatting only; the machine formats are
written from :mod:`skyplan.render.windowcolumns`).

The table is a :class:`~skyplan.render.tables.Sheet` fitted to the width like every other
table; the timeline strip takes the room the other columns leave, one character for one,
two, three, four or six of the engine's time bins (a character shows the best state inside
its stretch, the legend says how long a character is), and is left out when even the
coarsest strip does not fit.
"""

from __future__ import annotations

import math
from zoneinfo import ZoneInfo

import numpy as np

from skyplan.engine.timeline import BLOCKED, DOWN, LIGHT, PLANNED, USABLE
from skyplan.render.tables import Sheet, fit
from skyplan.render.windowcolumns import status as _status

# characters read without colour and in log files; colour is only a help on a terminal
TIMELINE_CHARS = {USABLE: "#", BLOCKED: "-", DOWN: ".", LIGHT: " ", PLANNED: "@"}
TIMELINE_STYLE = {USABLE: "bold green", BLOCKED: "yellow", DOWN: "grey50", LIGHT: "on grey23",
                  PLANNED: "bold white on blue"}
TIMELINE_KEY = ("timeline: '#' usable, '-' up but blocked by a limit, '.' below the altitude "
                "limit, blank: sky not dark")
STRIP_STEPS = (1, 2, 3, 4, 6)  # engine bins per character, finest first
MIN_STRIP = 8  # a strip narrower than this is left out


def timeline_text(codes, color: bool):
    """One strip of timeline codes as rich text: characters first, colour only as a help."""
    from rich.text import Text

    text = Text()
    for c in codes:
        text.append(TIMELINE_CHARS[int(c)], style=TIMELINE_STYLE[int(c)] if color else None)
    return text


def coarser(codes: np.ndarray, step: int) -> np.ndarray:
    """``step`` bins per character: each keeps the best code of its bins (planned, usable,
    blocked, down, light: the order of the codes), the last one padded with light."""
    n = codes.shape[1]
    wide = np.full((codes.shape[0], math.ceil(n / step) * step), LIGHT, dtype=codes.dtype)
    wide[:, :n] = codes
    return wide.reshape(codes.shape[0], -1, step).max(axis=2)


class TimelineSheet(Sheet):
    """A sheet with a timeline strip as its last column, as fine as the width leaves room
    for; ``key`` is the legend, completed with the strip's span and a character's length."""

    def __init__(self, title: str, footer: list[str], codes, edges, zone, key: str,
                 color: bool, strip_rank: float = 1e9) -> None:
        super().__init__(title, footer)
        self.strip_rank = strip_rank
        if codes is not None and len(codes):  # the strip starts and ends where the sky is dark
            dark = np.flatnonzero((codes != LIGHT).any(axis=0))
            if dark.size:
                codes, edges = codes[:, dark[0]:dark[-1] + 1], edges[dark[0]:dark[-1] + 2]
        self.codes, self.edges, self.zone, self.key, self.color = codes, edges, zone, key, color

    def lines(self, width: int | None) -> list:
        if self.codes is None or not len(self.codes):
            return fit(self, width)
        n = self.codes.shape[1]
        for step in STRIP_STEPS:
            if math.ceil(n / step) < MIN_STRIP:
                break
            got = fit(self._with_strip(step), width)
            rule = next(i for i, line in enumerate(got) if set(line.plain) == {"─"})
            if width is None or any("timeline" in line.plain.split() for line in got[:rule]):
                return got  # the strip is in the header: it fits
        note = f"timeline left out at {width} columns (--wide shows it)"
        return fit(Sheet(self.title, [*self.footer, note], list(self.columns)), width)

    def _with_strip(self, step: int) -> Sheet:
        codes = coarser(self.codes, step)
        minutes = (self.edges[-1] - self.edges[0]) / self.codes.shape[1] * step / 60.0
        legend = (f"{self.key}; strip {hhmm(self.edges[0], self.zone)}–"
                  f"{hhmm(self.edges[-1], self.zone)}, one character ≈ {minutes:.0f} min"
                  + (" (the best state within it)" if step > 1 else ""))
        sheet = Sheet(self.title, [*self.footer, legend], list(self.columns))
        sheet.column("timeline", rank=self.strip_rank, fate="drop")
        sheet.columns[-1].cells = [(timeline_text(c, self.color), None) for c in codes]
        return sheet


def hhmm(unix, zone) -> str:
    """Local HH:MM of a POSIX time, '—' when there is none."""
    import datetime as dt

    if unix is None or not np.isfinite(unix):
        return "—"
    return dt.datetime.fromtimestamp(float(unix), zone).strftime("%H:%M")


STATUS_SHORT = {"observable": "yes", "always up blocked": "blocked", "not observable": "none"}


def limits_line(res) -> str:
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
    line = "limits: " + ", ".join(bits) + f"; times {res.night.zone}"
    if "dark" in res.lost_s and len(res.names):
        line += (f"; twilight takes {float(np.max(res.lost_s['dark'])) / 60:.0f} min of the "
                 "night from every target")
    return line


def windows_table(res, site, codes=None, edges=None, *, color: bool = True) -> Sheet:
    """The windows table, best targets first: name, windows, usable time and best air mass
    before everything else."""
    zone = ZoneInfo(res.night.zone)
    status = _status(res)
    order = np.argsort(-res.usable_s, kind="stable")
    t = TimelineSheet(f"Windows, night of {res.night.date.isoformat()} at {site.name}",
                      [limits_line(res)],
                      None if codes is None else codes[order], edges, zone, TIMELINE_KEY, color,
                      strip_rank=8.5)
    t.column("target", rank=0)
    t.column("status", rank=5, fate="drop")
    t.column("rise", rank=7, fate="drop", justify="right")
    t.column("transit", rank=4, fate="drop", justify="right")
    t.column("set", rank=7.5, fate="drop", justify="right")
    t.column("windows", rank=1, fate="wrap")
    t.column("usable", rank=2, justify="right")
    t.column("best", rank=3, justify="right")
    t.column("lost to", rank=9, fate="drop")
    named = any(str(i) and str(i) != str(n) for i, n in zip(res.identifiers, res.names))
    if named:
        t.column("identifier", rank=9.5, fate="note")
    w = res.windows
    for i in order:
        sel = w.rows == i
        wins = ", ".join(f"{hhmm(a, zone)}–{hhmm(b, zone)}"
                         for a, b in zip(w.start[sel], w.end[sel])) or "—"
        lost = sorted(((v[i] / 60.0, key) for key, v in res.lost_s.items()
                       if key != "dark" and v[i] >= 30.0), reverse=True)
        lost_txt = [f"{key.replace('_', ' ')} {m:.0f}m" for m, key in lost[:2]]
        flags = [f for f, on in (("NEAR SUN", res.near_sun[i]),
                                 ("DAYLIGHT", res.daylight_window[i])) if on]
        st = status[i].replace("_", " ")
        tail = " " + " ".join(flags) if flags else ""
        best = "—" if not np.isfinite(res.best_time[i]) else \
            f"{hhmm(res.best_time[i], zone)} X{res.best_airmass[i]:.2f}"
        tr = "—" if not np.isfinite(res.transit[i]) else \
            f"{hhmm(res.transit[i], zone)} {res.transit_alt_deg[i]:+.0f}°"
        label = str(res.names[i])
        ident = [res.identifiers[i] if res.identifiers[i] != label else ""] if named else []
        t.add_row(label, (st + tail, STATUS_SHORT.get(st, st) + tail), hhmm(res.rise[i], zone),
                  tr, hhmm(res.set[i], zone), wins, f"{res.usable_s[i] / 60.0:.0f}m", best,
                  (", ".join(lost_txt), lost_txt[0] if lost_txt else ""), *ident)
    return t
