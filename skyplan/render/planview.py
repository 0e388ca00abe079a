"""The night plan: a table for the person at the telescope, a JSON document for scripts."""

from __future__ import annotations

import datetime as dt
from zoneinfo import ZoneInfo

from skyplan import __version__
from skyplan.inputs.timeinput import iso_utc
from skyplan.render.tables import Sheet, site_record
from skyplan.render.windowview import hhmm as _hhmm

SCHEMA = "skyplan.plan/2.2"
SAFETY_LINES = ("Advice only: the telescope's own limits, interlocks and the site's rules come "
                "first.", "Never point unfiltered optics at or near the Sun.")
SAFETY = " ".join(SAFETY_LINES)


def has_pier_side(site) -> bool:
    """Whether the plan's visits name the pier side: a German equatorial mount."""
    return site.mount is not None and site.mount.kind == "german-equatorial"


def has_wrap(site) -> bool:
    """Whether the plan's visits name the azimuth axis's readings: an alt-azimuth mount with
    a cable wrap."""
    return site.mount is not None and site.mount.wrap_deg() is not None


def visit_record(v, pier_side: bool = False, wrap: bool = False) -> dict:
    """One visit as a plan observation; ``pier_side``: with the German mount's pier side;
    ``wrap``: with the azimuth axis's readings inside the cable wrap."""
    extra = {"identifier": v.identifier} if v.identifier else {}
    pier = {"pier_side": v.pier_side} if pier_side else {}
    if wrap:
        pier = {"mount_az_start_deg": round(v.mount_az_start_deg, 3),
                "mount_az_end_deg": round(v.mount_az_end_deg, 3)}
    return {
        "seq": v.seq, "name": v.name, **extra, "repeat": v.repeat,
        "start": iso_utc(v.start), "exposure_start": iso_utc(v.exposure_start),
        "end": iso_utc(v.end), "exposure_s": round(v.exposure_s, 3),
        "overhead_s": round(v.overhead_s, 3), "slew_s": round(v.slew_s, 3),
        "ra_apparent_deg": round(v.ra_date_deg, 6),
        "dec_apparent_deg": round(v.dec_date_deg, 6),
        "alt_start_deg": round(v.alt_start_deg, 3), "alt_mid_deg": round(v.alt_mid_deg, 3),
        "alt_end_deg": round(v.alt_end_deg, 3), "az_mid_deg": round(v.az_mid_deg, 3),
        "airmass_mid": round(v.airmass_mid, 4), "hour_angle_mid_h": round(v.hour_angle_mid_h, 4),
        "moon_distance_deg": round(v.moon_distance_deg, 2), "priority": v.priority,
        "best_airmass": round(v.best_airmass, 4),
        "az_start_deg": round(v.az_start_deg, 3), "az_end_deg": round(v.az_end_deg, 3),
        "parallactic_start_deg": round(v.parallactic_start_deg, 3),
        "parallactic_mid_deg": round(v.parallactic_mid_deg, 3),
        "parallactic_end_deg": round(v.parallactic_end_deg, 3),
        "field_rotation_deg_per_min": round(v.field_rotation_deg_per_min, 4),
        "sun_distance_deg": round(v.sun_distance_deg, 2), **pier,
        **({"timed": True, "epoch_number": v.epoch_number} if v.timed else {}),
    }


def plan_document(p, site, generated_at: float, rest=None) -> dict:
    """The plan as one JSON-ready document; ``rest`` (a re-plan's Progress) adds
    ``rest_of_night``: the start and the visits counted as done, per target."""
    from skyplan.render.nightview import night_record

    res = p.windows
    m = p.metrics
    n = night_record(res.night, site)
    return {
        "schema": SCHEMA,
        "site": site_record(site, brief=True),
        "night": {k: n[k] for k in ("date", "sun_state", "sunset", "sunrise", "dusk", "dawn",
                                    "dark_hours", "local_midnight")},
        "moon": {k: v for k, v in n["moon"].items() if k != "altitude"},
        "limits": res.limits.as_record(),
        "overheads": {
            "default_exposure_s": p.overheads.default_exposure_s,
            "setup_s": p.overheads.setup_s, "repeats": p.overheads.repeats,
            "spacing_s": p.overheads.spacing_s,
            "slew_az_deg_s": p.overheads.slew_az_deg_s,
            "slew_alt_deg_s": p.overheads.slew_alt_deg_s, "settle_s": p.overheads.settle_s,
        },
        "observations": [visit_record(v, has_pier_side(site), has_wrap(site))
                         for v in p.visits],
        "not_placed": [{"name": str(res.names[i]), "reason": code, "explanation": text}
                       for i, code, text in p.not_placed],
        "short_repeats": [{"name": str(res.names[i]), "visits": got, "asked": asked}
                          for i, got, asked in p.short_repeats],
        "metrics": {
            "placed": m.placed, "possible": m.possible, "targets": len(res.names),
            "airmass_excess": None if m.airmass_excess != m.airmass_excess else round(
                m.airmass_excess, 5),
            "visits": m.visits, "visits_possible": m.visits_possible,
            "idle_minutes": round(m.idle_minutes, 2), "objective": round(m.objective, 6),
            "gap": m.gap, "proven_optimal": m.proven_optimal, "method": m.method,
        },
        **({} if rest is None else {"rest_of_night": rest_record(rest, res.names)}),
        "safety": SAFETY,
        "software": {"name": "skyplan", "version": __version__},
        "generated_at": iso_utc(generated_at),
    }


def rest_record(rest, names) -> dict:
    """Where a re-plan starts and what it counted as done (targets in catalogue order)."""
    done = rest.done
    return {
        "start": None if rest.start_unix is None else iso_utc(rest.start_unix),
        "done": [{"name": str(names[i]), "visits": int(done[i])} for i in done.nonzero()[0]],
        "unknown_done": list(rest.unknown),
    }


def plan_table(p, site, codes=None, edges=None, *, color: bool = True):
    """The plan for the person at the telescope: order, start, target, altitude and air mass
    first; the timeline strip takes the room left (see :mod:`skyplan.render.windowview`)."""
    from skyplan.render.windowview import TIMELINE_KEY, TimelineSheet

    res = p.windows
    zone = ZoneInfo(res.night.zone)
    m = p.metrics
    excess = "—" if m.airmass_excess != m.airmass_excess else f"{100 * m.airmass_excess:.1f}%"
    gap = "" if m.gap is None else f", gap {100 * m.gap:.2f}%"
    short = {i: (got, asked) for i, got, asked in p.short_repeats}
    visits = f" ({m.visits} of {m.visits_possible} visits)" if m.visits_possible != m.possible \
        else ""
    footer = [f"placed {m.placed} of {m.possible} possible targets{visits}; airmass excess "
              f"{excess}; idle {m.idle_minutes:.0f} min; method {m.method}{gap}", *SAFETY_LINES]
    t = TimelineSheet(f"Plan for the night of {res.night.date.isoformat()} at {site.name} "
                      f"(times {res.night.zone})", footer, codes, edges, zone,
                      f"{TIMELINE_KEY}, '@' this visit", color,
                      strip_rank=8.8)
    t.column("#", rank=0, justify="right")
    t.column("start", rank=1)
    t.column("UTC", rank=7, fate="drop")
    t.column("target", rank=2)
    t.column("exp", rank=5, justify="right")
    t.column("alt", rank=3, justify="right")
    t.column("alt start/end", rank=9, fate="drop", justify="right")
    t.column("az", rank=8, fate="drop", justify="right")
    t.column("airmass", rank=4, justify="right")
    t.column("HA", rank=6, fate="drop", justify="right")
    t.column("Moon", rank=8.5, fate="drop", justify="right")
    t.column("notes", rank=10, fate="wrap")
    named = any(v.identifier and v.identifier != v.name for v in p.visits)
    if named:
        t.column("identifier", rank=11, fate="note")
    sides = [v.pier_side for v in p.visits] if has_pier_side(site) else []
    for k, v in enumerate(p.visits):
        utc = dt.datetime.fromtimestamp(v.exposure_start, dt.UTC)
        notes = []
        if sides and k and sides[k] != sides[k - 1]:
            notes.append(f"flip to pier {sides[k]}")
        if v.repeat > 1:
            notes.append(f"repeat {v.repeat}")
        if v.target in short and v.repeat == short[v.target][0]:
            notes.append(f"only {short[v.target][0]} of {short[v.target][1]} visits")
        if v.airmass_mid > v.best_airmass * 1.05:
            notes.append(f"best {v.best_airmass:.2f}")
        ident = [v.identifier if v.identifier != v.name else ""] if named else []
        t.add_row(str(v.seq), _hhmm(v.exposure_start, zone), f"{utc:%H:%M}", v.name,
                  f"{v.exposure_s / 60:.0f}m", f"{v.alt_mid_deg:.0f}°",
                  f"{v.alt_start_deg:.0f}°/{v.alt_end_deg:.0f}°", f"{v.az_mid_deg:.0f}°",
                  f"{v.airmass_mid:.2f}", f"{v.hour_angle_mid_h:+.1f}h",
                  f"{v.moon_distance_deg:.0f}°", ", ".join(notes), *ident)
    return t


def not_placed_table(p) -> Sheet:
    res = p.windows
    t = Sheet("Not placed, most important first")
    t.column("target")
    t.column("priority", justify="right")
    t.column("reason", fate="wrap")
    for i, _code, text in p.not_placed:
        t.add_row(str(res.names[i]), str(int(p.priority[i])), text)
    return t
