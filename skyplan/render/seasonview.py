"""The season as a terminal table: a month strip per target (formatting only).

One character per month of the range, by the share of that month's nights with at least
the minimum usable minutes: ``#`` two thirds or more, ``+`` a third or more, ``.`` some,
blank none.  Characters first (read without colour and in logs), colour only as a help.
"""

from __future__ import annotations

import numpy as np

from skyplan.render.tables import Sheet

STRIP_LEVELS = ((2 / 3, "#", "bold green"), (1 / 3, "+", "green"), (1e-9, ".", "yellow"))
MONTH_LETTERS = "JFMAMJJASOND"


def month_strip(share, color: bool):
    from rich.text import Text

    text = Text()
    for v in share:
        for level, char, style in STRIP_LEVELS:
            if v >= level:
                text.append(char, style=style if color else None)
                break
        else:
            text.append(" ")
    return text


def strip_header(months: list[str]) -> str:
    return "".join(MONTH_LETTERS[int(m[5:]) - 1] for m in months)


def season_table(season, *, color: bool = False) -> Sheet:
    """Targets by their best night, the month strip last."""
    s = season.summary()
    lim = season.limits
    first_day, last_day = season.dates[0], season.dates[-1]
    footer = [
        f"Strip: one character a month, {s.months[0]} to {s.months[-1]} "
        f"({strip_header(s.months)}); '#' two thirds or more of the month's nights have "
        f"{season.min_minutes:g}+ usable minutes, '+' a third or more, '.' some, blank none.",
        f"Limits: min alt {lim.min_alt_deg:g}°"
        + (f", airmass ≤ {lim.max_airmass:g}" if lim.max_airmass else "")
        + f", dark: {lim.dark_label}, Moon ≥ {lim.moon_gap_deg:g}°, Sun ≥ "
        f"{lim.sun_gap_deg:g}°; hours: the nights with {season.min_minutes:g}+ minutes.",
    ]
    title = (f"Season at {season.site.name}, nights of {first_day.isoformat()} to "
             f"{last_day.isoformat()} ({len(season.dates)} nights, {season.site.zone})")
    t = Sheet(title, footer=footer)
    t.column("target")
    t.column("first", justify="right", rank=3)
    t.column("last", justify="right", rank=4)
    t.column("best night", justify="right", rank=2)
    t.column("nights", justify="right", rank=5, fate="drop")
    t.column("hours", justify="right", rank=1)
    t.column(strip_header(s.months), rank=0)
    text = s.date_text
    first, last, best = text(s.first), text(s.last), text(s.best)
    key = np.where(s.best >= 0, s.best, len(season.dates))
    order = np.lexsort((-s.usable_hours, key))
    for i in order:
        b = f"{best[i]} {s.best_minutes[i]:.0f}m" if best[i] else "—"
        t.add_row(str(season.names[i]), (first[i] or "—", first[i][5:] or "—"),
                  (last[i] or "—", last[i][5:] or "—"),
                  (b, f"{best[i][5:]} {s.best_minutes[i]:.0f}m" if best[i] else "—"),
                  str(int(s.nights_observable[i])), f"{s.usable_hours[i]:.1f}",
                  month_strip(s.month_share[i], color))
    return t
