"""Targets from the command line: a catalogue file, a position, or names (the input edge)."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from skyplan import notices
from skyplan.errors import InputError, InputErrors
from skyplan.targetdata import TargetSet

BODY_NAMES = ("sun", "moon", "mercury", "venus", "mars", "jupiter", "saturn", "uranus",
              "neptune", "pluto")


def load_catalog(path: str | Path, *, skip_bad: bool = False, input_format: str | None = None):
    """Read a catalogue (``-``: standard input, with ``input_format``), report skipped rows
    and duplicates."""
    from skyplan.inputs.catalog import read_catalog

    read = read_catalog(path, skip_bad=skip_bad, input_format=input_format)
    p = read.catalog.source
    if read.skipped:
        notices.add(f"{p}: skipped {len(read.skipped)} malformed row(s) "
                    f"(first: {read.skipped[0].one_line()})")
    if read.duplicates:
        shown = ", ".join(read.duplicates[:5])
        more = f" and {len(read.duplicates) - 5} more" if len(read.duplicates) > 5 else ""
        notices.add(f"{p}: duplicate target names kept: {shown}{more}")
    if len(read.catalog) == 0:
        left = " once the malformed rows are skipped" if read.skipped else ""
        notices.add(f"{p}: the catalogue holds no targets{left}")
    return read.catalog


def positions_from_catalog(cat, *, skip_bad: bool = False):
    """Fixed targets from a catalogue; rows with a name only are looked up first.

    Every name that does not resolve (with ``skip_bad``: its row is dropped and noted), and
    every Sun, Moon, planet or orbit (they move, and ``convert`` takes fixed targets), is an
    error naming its line.
    """
    _, tset = catalog_targets(cat, skip_bad=skip_bad)
    moving = np.flatnonzero(tset.body != "")
    if moving.size:
        problems = [InputError(f"{cat.name[i]!r} moves: convert takes fixed targets; use "
                               "'skyplan windows' or 'skyplan find' for it", file=cat.source,
                               line=int(cat.line[i]), field="name") for i in moving]
        raise InputErrors(problems) if len(problems) > 1 else problems[0]
    return tset


def targets_from_arguments(args: list[str], frame: str, *, skip_bad: bool = False,
                           demo: bool = False, input_format: str | None = None):
    """The targets of ``convert``'s arguments (positions in the ``frame`` given); one
    argument ``-`` is a catalogue on standard input, read as ``input_format``."""
    from skyplan.inputs import angles, scenario

    if not args:
        if demo:
            return positions_from_catalog(load_catalog(scenario.demo_path(scenario.DEMO_CATALOG)))
        raise InputError("give a catalogue file, a position (two angles) or a target name",
                         field="position")
    if len(args) == 1 and (args[0] == "-" or Path(args[0]).is_file()):
        if frame != "icrs":
            raise InputError("catalogue files hold ICRS positions; use --from icrs",
                             field="--from")
        return positions_from_catalog(
            load_catalog(args[0], skip_bad=skip_bad, input_format=input_format),
            skip_bad=skip_bad)
    if input_format is not None:
        raise InputError("reads a catalogue file or '-' (standard input), not positions or "
                         "names",
                         field="--input-format")
    if len(args) == 2:
        try:
            if frame in ("icrs", "fk5", "apparent"):
                lon, lat = angles.parse_ra_deg(args[0]), angles.parse_dec_deg(args[1])
            else:
                lon, lat = angles.parse_angle_deg(args[0]) % 360.0, angles.parse_angle_deg(args[1])
                if not -90.0 <= lat <= 90.0:
                    raise ValueError(f"latitude {lat:g} outside -90..90")
        except ValueError as exc:
            if _looks_numeric(args[0]) or _looks_numeric(args[1]):
                raise InputError(str(exc), field="position") from None
        else:
            return TargetSet.fixed([f"{args[0]} {args[1]}"], [lon], [lat])
    looks_like_path = "/" in args[0] or "." in Path(args[0]).suffix
    if len(args) == 1 and (_looks_numeric(args[0]) or looks_like_path):
        raise InputError(f"{args[0]!r} is not a file that exists, nor a target name",
                         field="position")
    return positions_from_names(args, frame)


def _looks_numeric(text: str) -> bool:
    return bool(text) and (text[0].isdigit() or text[0] in "+-.")


def positions_from_names(names: list[str], frame: str):
    """Resolve target names offline (catalogue objects, bright stars)."""
    from skyplan.names import resolve as resolver

    if frame != "icrs":
        raise InputError("names give ICRS positions; use --from icrs", field="--from")
    found = [resolver.resolve(n) for n in names]
    bodies = [r.query for r in found if r.kind == "body"]
    if bodies:
        raise InputError(f"{bodies[0]!r} moves: convert takes fixed targets; use "
                         "'skyplan windows' or 'skyplan find' for the Sun, Moon and planets",
                         field="position")
    arr = np.array
    return TargetSet(
        names=arr([r.query for r in found], dtype=object),
        ra_deg=arr([r.ra_deg for r in found], dtype=float),
        dec_deg=arr([r.dec_deg for r in found], dtype=float),
        pm_ra_masyr=arr([r.pm_ra_masyr for r in found], dtype=float),
        pm_dec_masyr=arr([r.pm_dec_masyr for r in found], dtype=float),
        parallax_mas=arr([r.parallax_mas for r in found], dtype=float),
        rv_kms=arr([0.0 for _ in found]),
        epoch_jyear=arr([r.epoch_jyear for r in found], dtype=float),
        body=np.full(len(found), "", dtype=object),
        identifiers=arr([r.identifier for r in found], dtype=object),
    )


def target_set(cat, *, orbits=(), source: str | None = None):
    """The targets of a catalogue: name-only rows resolved offline.

    Rows with coordinates are used as given.  Rows with a name only are looked up (catalogue
    objects, Hipparcos stars, proper names, the Sun/Moon/planets, orbits from an elements
    file); every name that does not resolve is reported with its line, and the run stops.
    Returns (TargetSet, identifiers) where identifiers holds the catalogue identifier of each
    resolved row ("" for rows given with coordinates).
    """
    _, tset = catalog_targets(cat, orbits=orbits, source=source)
    return tset, tset.identifiers


SKIPPED_NAMES_SHOWN = 20  # unresolved rows noted one by one; the rest are counted


def catalog_targets(cat, *, orbits=(), source: str | None = None, skip_bad: bool = False):
    """The catalogue's rows kept and their targets: ``(Catalog, TargetSet)``.

    As :func:`target_set`; with ``skip_bad`` the rows whose name does not resolve are dropped
    instead, each noted with its file, line and the closest known names.
    """
    n = len(cat)
    look = np.nonzero(cat.needs_lookup)[0]
    if not len(look):  # every row has its place: the catalogue's columns are used as they are
        nothing = np.broadcast_to(np.array("", dtype=object), (n,))
        return cat, TargetSet(cat.name, cat.ra_deg, cat.dec_deg, cat.pm_ra_masyr,
                              cat.pm_dec_masyr, cat.parallax_mas, cat.radial_velocity_kms,
                              cat.epoch_jyear, nothing, nothing)
    ra, dec = cat.ra_deg.copy(), cat.dec_deg.copy()
    pmra, pmdec = cat.pm_ra_masyr.copy(), cat.pm_dec_masyr.copy()
    plx, rv, ep = cat.parallax_mas.copy(), cat.radial_velocity_kms.copy(), cat.epoch_jyear.copy()
    body = np.full(n, "", dtype=object)
    ident = np.full(n, "", dtype=object)
    keep = np.ones(n, dtype=bool)
    from skyplan.names import resolve as resolver

    col, errs = resolver.resolve_many([str(x) for x in cat.name[look]], orbits=orbits)
    if errs:
        problems = [InputError(e.message, file=source or cat.source,
                               line=int(cat.line[look[i]]), field="name")
                    for i, e in sorted(errs.items())]
        if not skip_bad:
            raise InputErrors(problems) if len(problems) > 1 else problems[0]
        _note_unresolved(problems, source or cat.source, len(errs) == n)
        keep[look[sorted(errs)]] = False
    fixed = (col.kind == "star") | (col.kind == "deep_sky")
    rows = look[fixed]
    ra[rows], dec[rows] = col.ra_deg[fixed], col.dec_deg[fixed]
    pmra[rows] = np.nan_to_num(col.pm_ra_masyr[fixed])
    pmdec[rows] = np.nan_to_num(col.pm_dec_masyr[fixed])
    plx[rows] = np.nan_to_num(col.parallax_mas[fixed])
    rv[rows] = np.nan_to_num(col.radial_velocity_kms[fixed])
    ep[rows] = np.where(np.isfinite(col.epoch_jyear[fixed]), col.epoch_jyear[fixed], 2000.0)
    moving = ~fixed
    body[look[moving]] = np.array(
        [f"orbit:{q}" if k == "orbit" else str(q).strip().lower()
         for k, q in zip(col.kind[moving], col.query[moving])], dtype=object)
    ident[look] = col.identifier
    if keep.all():
        return cat, TargetSet(cat.name, ra, dec, pmra, pmdec, plx, rv, ep, body, ident)
    kept = cat.subset(keep)
    columns = (ra, dec, pmra, pmdec, plx, rv, ep, body, ident)
    return kept, TargetSet(kept.name, *(c[keep] for c in columns))


def _note_unresolved(problems: list[InputError], source: str, none_left: bool) -> None:
    """One note per skipped unresolved row (file:line, the name, closest known names)."""
    for problem in problems[:SKIPPED_NAMES_SHOWN]:
        notices.add(f"skipped: {problem.one_line()}")
    if len(problems) > SKIPPED_NAMES_SHOWN:
        notices.add(f"{source}: skipped {len(problems) - SKIPPED_NAMES_SHOWN} more row(s) "
                    "whose name does not resolve")
    if none_left:
        notices.add(f"{source}: the catalogue holds no targets once the rows whose name does "
                    "not resolve are skipped")
