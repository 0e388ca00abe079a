"""``find`` results: a table and JSON records (formatting only)."""

from __future__ import annotations

from skyplan.inputs.angles import format_dms, format_hms
from skyplan.inputs.timeinput import iso_utc
from skyplan.render.tables import Sheet
from skyplan.text import escaped


def found_record(f) -> dict:
    r = f.resolved
    moving = r.kind in ("body", "orbit")
    return {
        "query": r.query, "kind": r.kind, "identifier": r.identifier,
        "identifiers": list(r.identifiers), "source": r.source, "object_type": r.object_type,
        "ra_deg": f.ra_deg, "dec_deg": f.dec_deg,
        "position": "geocentric astrometric ICRS at time" if moving else "ICRS, epoch J2000.0",
        "time": iso_utc(f.unix) if moving else None,
        "distance_au": f.distance_au,
        "pm_ra_masyr": None if moving else r.pm_ra_masyr,
        "pm_dec_masyr": None if moving else r.pm_dec_masyr,
        "parallax_mas": None if moving else r.parallax_mas,
        "magnitude": r.magnitude,
    }


def found_table(found, unknown=()) -> Sheet:
    """One row per name: the resolved ones with identifier, type, position, motion,
    magnitude and source; the ``unknown`` ones (pairs of name and problem) marked, with the
    closest known names below the table.  The names are as typed, so shown escaped
    (:func:`skyplan.text.escaped`)."""
    footer = ["fixed targets: ICRS at epoch J2000.0; Sun, Moon, planets and orbits: "
              "geocentric astrometric place at the given time"]
    if unknown:
        footer.insert(0, f"{len(found)} of {len(found) + len(unknown)} names resolved; "
                         "not found:")
        footer[1:1] = [f"  {escaped(name)}: {escaped(problem)}" for name, problem in unknown]
    t = Sheet("Names resolved offline", footer=footer)
    t.column("name", fate="wrap")
    t.column("identifier", rank=3, fate="wrap")
    t.column("type", rank=6, fate="drop")
    t.column("RA", justify="right", rank=1)
    t.column("Dec", justify="right", rank=2)
    t.column("motion", rank=7, fate="note")
    t.column("mag", justify="right", rank=4, fate="drop")
    t.column("source", rank=8, fate="note")
    for f in found:
        r = f.resolved
        if r.kind in ("body", "orbit"):
            motion = (f"{f.distance_au:.4f} au at {iso_utc(f.unix)}", f"{f.distance_au:.4f} au")
        else:
            motion = (f"pm {r.pm_ra_masyr:+.2f}, {r.pm_dec_masyr:+.2f} mas/yr; "
                      f"plx {r.parallax_mas:.2f} mas")
        mag = "" if r.magnitude is None or r.magnitude != r.magnitude else f"{r.magnitude:.2f}"
        ident = r.identifier
        t.add_row(escaped(r.query), (ident, ident.split(" = ")[0]), r.object_type,
                  format_hms(f.ra_deg, 2), format_dms(f.dec_deg, 1), motion, mag,
                  (r.source, r.source.split(" (")[0]))
    for name, _problem in unknown:
        t.add_row(escaped(name), "not found (below)", "", "", "", "", "", "")
    return t
