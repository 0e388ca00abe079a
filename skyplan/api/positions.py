"""Positions for the API: conversion between frames, and what a name resolves to."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from skyplan.inputs.sites import Site
from skyplan.notices import as_warnings
from skyplan.text import fixed_width


@dataclass(frozen=True, eq=False)
class Conversion:
    """Positions converted to another frame (``to_records``: as ``skyplan convert -f json``)."""

    result: object = field(repr=False)  # skyplan.engine.convert.ConversionResult

    def __len__(self) -> int:
        return len(self.result.lon_deg)

    def to_records(self) -> list[dict]:
        from skyplan.render import convertview

        return convertview.conversion_records(self.result)

    def to_table(self):
        """An astropy QTable: name, identifier, the two angles of the frame (deg), and for
        the horizon frame the hour angle (h) and refraction (deg)."""
        import astropy.units as u
        from astropy.table import QTable

        r = self.result
        lon_key, lat_key = {"horizon": ("az", "alt"), "ecliptic": ("elon", "elat"),
                            "galactic": ("l", "b")}.get(r.request.to_frame, ("ra", "dec"))
        columns = {"name": fixed_width(r.positions.names),
                   "identifier": fixed_width(r.positions.identifiers),
                   lon_key: r.lon_deg * u.deg, lat_key: r.lat_deg * u.deg}
        if r.hour_angle_h is not None:
            columns["hour_angle"] = r.hour_angle_h * u.hour
        if r.refraction_deg is not None:
            columns["refraction"] = r.refraction_deg * u.deg
        return QTable(columns)


def equinox_jyear(text: str, *, field_name: str = "equinox") -> float:
    """A Julian-year equinox from text such as 'J2000' or 'J2025.5'."""
    from skyplan.errors import InputError

    raw = text.strip().upper().lstrip("J")
    try:
        value = float(raw)
    except ValueError:
        raise InputError(f"cannot read {text!r} as an equinox; use e.g. J2000 or J2025.5",
                         field=field_name) from None
    if not 1000.0 <= value <= 3000.0:
        raise InputError(f"equinox {text!r} outside J1000..J3000", field=field_name)
    return value


@as_warnings
def convert(positions: list[str] | str | Path, *, from_frame: str = "icrs",
            to_frame: str = "horizon", site: Site | None = None, at=None,
            equinox: str = "J2000", ecliptic_of_date: bool = False,
            refraction: str = "bennett", skip_bad_rows: bool = False,
            demo: bool = False, input_format: str | None = None) -> Conversion:
    """Convert positions between frames: icrs, fk5, apparent, horizon, ecliptic, galactic.

    ``positions``: a catalogue file, two angles of ``from_frame`` (``["05h35m17s",
    "-05d23m28s"]``, or one text holding both: ``"05:35:17 -05:23:28"``,
    ``"05:35:17,-05:23:28"``), or target names.  The horizon frame's two angles are
    azimuth (from north through east), then altitude.  ``at`` is needed for the apparent and horizon
    frames and the ecliptic of date: an aware datetime, astropy Time, ISO 8601 text (without
    an offset: the site's clock) or 'now'.  ``site`` is needed for the horizon frame.
    ``refraction``: bennett, erfa or none.  ``"-"`` is a catalogue on standard input, read
    as ``input_format`` (csv, tsv, ecsv, votable, fits; for a file it overrides the
    extension).  ``skip_bad_rows`` drops malformed rows and names that do not resolve.
    """
    from skyplan.api.times import posix
    from skyplan.engine import convert as conversion
    from skyplan.engine import ephemeris, frames
    from skyplan.errors import InputError
    from skyplan.inputs import angles, targets

    for value, name, allowed in ((from_frame, "from_frame", frames.FRAMES),
                                 (to_frame, "to_frame", frames.FRAMES),
                                 (refraction, "refraction", ("bennett", "erfa", "none"))):
        if value not in allowed:
            raise InputError(f"{value!r} is not one of: {', '.join(allowed)}", field=name)
    needs_time = "horizon" in (from_frame, to_frame) or "apparent" in (from_frame, to_frame) \
        or ecliptic_of_date
    if "horizon" in (from_frame, to_frame) and site is None:
        raise InputError("the horizon frame needs a site", field="site")
    unix = None
    if needs_time:
        unix = posix("now" if at is None else at, site.tzinfo if site is not None else None)
        ephemeris.check_in_span(unix, unix, field="at")
    if isinstance(positions, (str, Path)):
        positions = [str(positions)]
    positions = [str(p) for p in positions]
    if len(positions) == 1 and positions[0] != "-" and not Path(positions[0]).is_file():
        positions = list(angles.split_position(positions[0]) or positions)
    found = targets.targets_from_arguments([str(p) for p in positions], from_frame,
                                           skip_bad=skip_bad_rows, demo=demo,
                                           input_format=input_format)
    request = conversion.ConversionRequest(
        from_frame=from_frame, to_frame=to_frame, unix=unix, site=site,
        equinox_jyear=equinox_jyear(equinox), ecliptic_of_date=ecliptic_of_date,
        refraction=refraction)
    return Conversion(conversion.convert(found, request))


@dataclass(frozen=True, eq=False)
class Lookup:
    """What names resolve to (``to_records``: as ``skyplan find -f json``); ``unknown``
    holds the names that did not resolve, each with the problem (and the closest names)."""

    found: list = field(repr=False)  # skyplan.engine.find.Found
    unknown: list[tuple[str, str]] = field(default_factory=list)

    def __len__(self) -> int:
        return len(self.found)

    def to_records(self) -> list[dict]:
        from skyplan.render import findview

        return [findview.found_record(f) for f in self.found]

    def to_table(self):
        """An astropy QTable: name, identifier, kind, ra, dec (ICRS, deg), distance (AU)."""
        import astropy.units as u
        from astropy.table import QTable

        f = self.found
        return QTable({
            "name": [x.resolved.query for x in f],
            "identifier": [x.resolved.identifier for x in f],
            "kind": [x.resolved.kind for x in f],
            "ra": np.array([x.ra_deg for x in f], dtype=float) * u.deg,
            "dec": np.array([x.dec_deg for x in f], dtype=float) * u.deg,
            "distance": np.array([np.nan if x.distance_au is None else x.distance_au
                                  for x in f], dtype=float) * u.AU,
        })


@as_warnings
def find(names: list[str] | str, *, at=None, elements: str | Path | None = None) -> Lookup:
    """What each name resolves to, offline; moving targets placed at ``at`` (default now).

    Names that do not resolve are listed in ``unknown``; when none resolves, the problems
    are raised (an InputError, or InputErrors for several names).
    """
    from skyplan.api.targets import _orbits
    from skyplan.api.times import posix
    from skyplan.engine import ephemeris
    from skyplan.engine import find as lookup

    if isinstance(names, str):
        names = [names]
    orbits = _orbits(elements)
    unix = posix("now" if at is None else at)
    ephemeris.check_in_span(unix, unix, field="at")
    from skyplan.errors import InputError, InputErrors

    found, unknown, problems = [], [], []
    for name in names:  # a handful of names typed by hand
        try:
            found += lookup.look_up([name], orbits, unix)
        except InputError as exc:
            unknown.append((name, exc.message))
            problems.append(exc)
    if not found and problems:
        raise problems[0] if len(problems) == 1 else InputErrors(problems)
    return Lookup(found, unknown)
