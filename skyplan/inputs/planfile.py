"""Plan files (``skyplan plan --format json``) read back: parsed and checked at the edge.

A plan names its site (a name, or a record with ``name``, ``lat_deg``, ``lon_deg``,
``elevation_m``, ``zone``), its night (a date, or a record with ``date``) and its
``observations``: ``name``, ``start`` and ``end`` (ISO 8601 UTC), ``ra_apparent_deg`` and
``dec_apparent_deg`` (apparent, of date; plan documents before schema 2 call them ``ra_deg``
and ``dec_deg``, still read), optionally ``priority``; optionally ``limits`` with
``min_alt_deg`` and ``max_airmass``.  Every problem is an InputError naming the file and
the field.  No astronomy here: the places stay apparent, of date.
"""

from __future__ import annotations

import datetime as dt
import json
from dataclasses import dataclass
from pathlib import Path

from skyplan.errors import InputError
from skyplan.inputs import readfile
from skyplan.text import first_unprintable

MAX_PLAN_BYTES = 64 << 20  # a night's plan is a few hundred kilobytes


@dataclass(frozen=True)
class PlannedTarget:
    """One target of a plan file, in the order of first appearance."""

    name: str
    ra_date_deg: float  # apparent, equinox of date
    dec_date_deg: float
    priority: float


@dataclass(frozen=True)
class PlanVisit:
    name: str
    start: float  # POSIX seconds
    end: float
    pier_side: str = ""  # "east" or "west" (German equatorial mounts), else ""


@dataclass(frozen=True)
class PlanFile:
    path: str
    site_value: object  # the plan's ``site``: a name, a record, or None
    night_value: object  # the plan's ``night``
    observations: list  # the raw records, checked by :func:`observations`
    limits: dict  # ``min_alt_deg`` / ``max_airmass`` as site-file limit keys


def read_plan_file(path: str | Path) -> PlanFile:
    """The plan document at ``path``: JSON, an object (its fields are checked later)."""
    plan_path = str(path)
    data = readfile.read_input(path, MAX_PLAN_BYTES, what="plan")
    try:
        doc = json.loads(data.decode("utf-8"))
    except UnicodeDecodeError:
        raise InputError("not UTF-8 text; a plan is JSON", file=plan_path) from None
    except json.JSONDecodeError as exc:
        raise InputError(f"not JSON: {exc.msg}", file=plan_path, line=exc.lineno) from None
    except RecursionError:
        raise InputError("arrays or objects nested too deep for a plan", file=plan_path) from None
    if not isinstance(doc, dict):
        raise InputError("a plan is a JSON object with site, night and observations",
                         file=plan_path)
    return PlanFile(plan_path, doc.get("site"), doc.get("night"), doc.get("observations"),
                    plan_limits(doc.get("limits")))


def plan_limits(value) -> dict:
    """The plan's altitude limits, the ones the chart draws, as site-file limit keys."""
    if not isinstance(value, dict):
        return {}
    return {k: value[k] for k in ("min_alt_deg", "max_airmass") if value.get(k) is not None}


def plan_site(plan: PlanFile, sites_file: str | None):
    """The plan's own site: a name in the sites file, or a record."""
    from skyplan.inputs import sites

    value = plan.site_value
    if isinstance(value, str) and value.strip():
        return sites.resolve_site(value, sites_file)
    if isinstance(value, dict):
        try:
            return sites.Site(
                name=str(value.get("name") or "plan site"),
                lat_deg=float(value["lat_deg"]),
                lon_deg=float(value["lon_deg"]),
                elevation_m=float(value.get("elevation_m") or 0.0),
                zone=str(value.get("zone") or ""),
            )
        except KeyError as exc:
            raise InputError(f"the site record lacks {exc.args[0]!r}; give --site",
                             file=plan.path, field="site") from None
        except (TypeError, ValueError) as exc:
            raise InputError(f"bad site record ({exc}); give --site", file=plan.path,
                             field="site") from None
    raise InputError("the plan names no site; give --site", file=plan.path, field="site")


def plan_date(plan: PlanFile, zone) -> dt.date:
    """The local date whose evening starts the plan's night."""
    from skyplan.inputs import timeinput

    value = plan.night_value
    if isinstance(value, dict):
        value = value.get("date")
    if not isinstance(value, str):
        raise InputError("missing the night's date (YYYY-MM-DD)", file=plan.path, field="night")
    return timeinput.parse_night_date(value, zone, field="night")


def observations(plan: PlanFile, zone) -> tuple[list[PlannedTarget], list[PlanVisit]]:
    """The plan's targets (each once, first appearance) and its visits, checked."""
    obs = plan.observations
    if not isinstance(obs, list):
        raise InputError("missing or not a list", file=plan.path, field="observations")
    found: dict[str, PlannedTarget] = {}
    visits = []
    for i, rec in enumerate(obs):  # the visits of one night: a few hundred at most
        name, t0, t1, ra, dec, priority = _observation(rec, i, plan.path, zone)
        found.setdefault(name, PlannedTarget(name, ra, dec, priority))
        if not t1 > t0:
            raise InputError("ends before it starts", file=plan.path,
                             field=f"observations[{i}].end")
        side = rec.get("pier_side", "") if isinstance(rec, dict) else ""
        if side not in ("", "east", "west"):
            raise InputError(f"expected east or west, got {side!r}", file=plan.path,
                             field=f"observations[{i}].pier_side")
        visits.append(PlanVisit(name, t0, t1, side))
    return list(found.values()), visits


def _observation(rec, i, plan_path, zone):
    from skyplan.inputs import timeinput

    where = f"observations[{i}]"
    if not isinstance(rec, dict):
        raise InputError("not an object", file=plan_path, field=where)
    try:
        name = str(rec["name"]).strip()
        start = timeinput.parse_instant(str(rec["start"]), zone, field=f"{where}.start")
        end = timeinput.parse_instant(str(rec["end"]), zone, field=f"{where}.end")
        ra = float(rec["ra_apparent_deg"] if "ra_apparent_deg" in rec else rec["ra_deg"])
        dec = float(rec["dec_apparent_deg"] if "dec_apparent_deg" in rec else rec["dec_deg"])
    except KeyError as exc:
        raise InputError(f"missing {exc.args[0]!r}", file=plan_path, field=where) from None
    except (TypeError, ValueError) as exc:
        raise InputError(str(exc), file=plan_path, field=where) from None
    except InputError as exc:
        raise InputError(exc.message, file=plan_path, field=exc.field) from None
    bad = first_unprintable(name)
    if bad is not None:
        raise InputError(f"the name holds the control character {bad}", file=plan_path,
                         field=f"{where}.name")
    if not name or not (0.0 <= ra <= 360.0 and -90.0 <= dec <= 90.0):
        raise InputError("needs a name, ra_apparent_deg in 0..360 and dec_apparent_deg in -90..90",
                         file=plan_path, field=where)
    priority = rec.get("priority", 1)
    if isinstance(priority, bool) or not isinstance(priority, (int, float)):
        raise InputError("priority must be a number", file=plan_path, field=f"{where}.priority")
    return name, start, end, ra, dec, float(priority)
