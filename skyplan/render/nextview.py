"""The answer of ``skyplan next``: a JSON object for the control script, a few lines for a person.

The visit is written as a plan observation (:func:`planview.visit_record`); the answer says
whether it starts now or when, why it comes first, what could be observed before it when it
starts later, and what follows.
"""

from __future__ import annotations

from zoneinfo import ZoneInfo

from skyplan import __version__
from skyplan.inputs.timeinput import iso_utc
from skyplan.render.planview import SAFETY, SAFETY_LINES, has_pier_side, visit_record
from skyplan.render.tables import Sheet, site_record
from skyplan.render.windowview import hhmm as _hhmm

NEXT_SCHEMA = "skyplan.next/1"


def headline(status: str, at: float, p, choice, zone) -> str:
    """One line: observe now, or when the next visit starts and whether anything can be
    observed before it, or nothing left tonight."""
    if status == "over" or not p.visits:
        return "nothing left to observe tonight"
    if status == "observe":
        return "observe now"
    v = p.visits[0]
    when = f"{_hhmm(v.start, zone)}, in {_minutes(v.start - at)}"
    if not choice.observable_now:
        return f"nothing can be observed now; the next visit starts at {when}"
    if choice.meanwhile:
        return (f"the best next visit starts at {when}; {_count(len(choice.meanwhile))} "
                "could be observed before it")
    return f"the best next visit starts at {when}; nothing else can be observed and end before it"


def _minutes(seconds: float) -> str:
    m = max(round(seconds / 60.0), 0)
    return f"{m} min" if m < 120 else f"{m // 60} h {m % 60:02d} min"


def _count(n: int) -> str:
    return "1 other visit" if n == 1 else f"{n} other visits"


def next_reasons(p, choice, zone) -> list[str]:
    """Why the first visit of ``p`` was chosen, one short sentence each."""
    v = p.visits[0]
    top = ("the highest of the targets left" if v.priority >= choice.top_priority
           else f"the highest left is {choice.top_priority}; the plan places those later")
    out = [f"priority {v.priority}, {top}",
           f"air mass {v.airmass_mid:.2f} at mid-exposure (best left tonight "
           f"{v.best_airmass:.2f})"]
    if choice.window_end_unix == choice.window_end_unix:
        out.append(f"its window closes at {_hhmm(choice.window_end_unix, zone)} "
                   f"({iso_utc(choice.window_end_unix)})")
    out.append(f"visit {v.repeat} of {v.repeat + choice.left - 1} of this target")
    return out


def meanwhile(p, choice, zone) -> list[dict]:
    """The visits that could be made before the first one, with when the plan makes them."""
    names = p.windows.names
    out = []
    for i, end, airmass in choice.meanwhile:
        later = next((v for v in p.visits if v.target == i), None)
        out.append({"name": str(names[i]), "end": iso_utc(end), "airmass_mid": round(airmass, 4),
                    "planned_start": None if later is None else iso_utc(later.start),
                    "planned_airmass_mid": None if later is None else round(later.airmass_mid, 4),
                    "_end": end, "_later": later})
    return out


def _meanwhile_line(m: dict, zone) -> str:
    later = m["_later"]
    text = f"{m['name']}, ending {_hhmm(m['_end'], zone)} at air mass {m['airmass_mid']:.2f}"
    if later is None:
        return text + " (the plan does not place it tonight)"
    return (text + f" (the plan takes it at {_hhmm(later.start, zone)} at air mass "
            f"{later.airmass_mid:.2f})")


def next_record(status: str, at: float, p, choice, site, generated_at: float) -> dict:
    """The answer of ``skyplan next``: the visit (as a plan observation), why, what follows."""
    zone = ZoneInfo(p.windows.night.zone)
    first = p.visits[0] if p.visits else None
    early = [] if first is None or choice is None else meanwhile(p, choice, zone)
    return {
        "schema": NEXT_SCHEMA,
        "at": iso_utc(at),
        "status": status,
        "summary": headline(status, at, p, choice, zone),
        "night": p.windows.night.date.isoformat(),
        "visit": None if first is None else visit_record(first, has_pier_side(site)),
        "wait_s": None if first is None else round(max(first.start - at, 0.0), 1),
        "next_possible": None if first is None else iso_utc(first.start),
        "why": [] if first is None else next_reasons(p, choice, zone),
        "meanwhile": [{k: v for k, v in m.items() if not k.startswith("_")} for m in early],
        "then": [{k: r[k] for k in ("seq", "name", "repeat", "start", "end")}
                 for r in (visit_record(v) for v in p.visits[1:4])],
        "remaining": {"visits": len(p.visits),
                      "targets": len({v.target for v in p.visits})},
        "site": site_record(site, brief=True),
        "safety": SAFETY,
        "software": {"name": "skyplan", "version": __version__},
        "generated_at": iso_utc(generated_at),
    }


class _Answer(Sheet):
    """Lines of 'label  text', fitted like a table but without a header."""

    def lines(self, width: int | None) -> list:
        got = super().lines(width)
        rule = next(i for i, line in enumerate(got) if set(line.plain) == {"─"})
        return got[:rule - 1] + got[rule + 1:]


def next_table(status: str, at: float, p, choice, site) -> Sheet:
    """The answer of ``skyplan next`` for a person: a few lines."""
    zone = ZoneInfo(p.windows.night.zone)
    t = _Answer(f"Next at {site.name}, {_hhmm(at, zone)} {p.windows.night.zone}, night of "
                f"{p.windows.night.date.isoformat()}: {headline(status, at, p, choice, zone)}",
                list(SAFETY_LINES))
    t.column("")
    t.column("", fate="wrap")
    if not p.visits:
        t.add_row("next possible", "none tonight")
        return t
    v = p.visits[0]
    wait = max(v.start - at, 0.0)
    t.add_row("visit", f"{v.name} (repeat {v.repeat}), {v.exposure_s / 60:.0f} min exposure")
    t.add_row("start", f"{_hhmm(v.start, zone)} ({iso_utc(v.start)}), in {_minutes(wait)}"
              if status == "wait" else f"{_hhmm(v.start, zone)} ({iso_utc(v.start)}), now")
    t.add_row("pointing", f"alt {v.alt_mid_deg:.0f}° az {v.az_mid_deg:.0f}° (mid-exposure)")
    for k, line in enumerate(next_reasons(p, choice, zone)):
        t.add_row("why" if k == 0 else "", line)
    for k, m in enumerate(meanwhile(p, choice, zone)):
        t.add_row("before it" if k == 0 else "", _meanwhile_line(m, zone))
    for k, n in enumerate(p.visits[1:4]):
        t.add_row("then" if k == 0 else "", f"{_hhmm(n.start, zone)} {n.name}")
    return t
