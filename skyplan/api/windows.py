"""Limits and observable windows for the API."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from skyplan.api.night import Night
from skyplan.api.targets import Targets
from skyplan.inputs.limits import Limits
from skyplan.inputs.sites import Site
from skyplan.notices import as_warnings
from skyplan.text import fixed_width


def limits(site: Site | None = None, *, defaults: dict | None = None, **options) -> Limits:
    """Validated :class:`skyplan.Limits`: the given options, then the site file's defaults.

    Options as the command line's: ``min_alt``, ``max_airmass``, ``dark`` ('civil',
    'nautical', 'astronomical', a Sun altitude, or 'none'), ``moon_gap``, ``sun_gap``,
    ``ha_range`` ('MIN,MAX' hours), ``dec_range``, ``between`` ('20:00-02:30'),
    ``no_horizon_profile``, ``airmass_model``, ``refraction``.  ``defaults`` (site-file
    limit keys, e.g. a plan file's) take the place of the site file's where given.
    """
    from skyplan.inputs.limits import build_limits
    from skyplan.inputs.site import mount_limits

    own, origins = mount_limits(site) if site is not None else ({}, None)
    merged = {**own, **(defaults or {})}
    return build_limits(merged, origins=origins, **options)


def _site_limits(site: Site) -> Limits:
    return limits(site)


@dataclass(frozen=True, eq=False)
class Windows:
    """Rise, transit, set and the observable windows of every target on one night.

    ``windows_of(name)`` gives one target's windows as (start, end) aware datetimes;
    ``to_table()`` one row per target; ``to_records()`` the target records of ``skyplan
    windows --format json`` (its document's ``targets``; NDJSON holds them one a line).
    """

    site: Site = field(repr=False)
    night: Night = field(repr=False)
    limits: Limits
    result: object = field(repr=False)  # skyplan.engine.windows.WindowResult

    def __len__(self) -> int:
        return len(self.result.names)

    @property
    def names(self) -> np.ndarray:
        return self.result.names

    def windows_of(self, name: str) -> list[tuple]:
        """The windows of the target called ``name`` (the first of that name)."""
        from skyplan.api.times import aware

        rows = np.flatnonzero(self.result.names == name)
        if rows.size == 0:
            raise KeyError(name)
        w = self.result.windows
        mine = w.rows == rows[0]
        return [(aware(a), aware(b)) for a, b in zip(w.start[mine], w.end[mine])]

    def to_records(self) -> list[dict]:
        """One record per target, as in the JSON document's ``targets`` (ISO 8601 times,
        null for none)."""
        from skyplan.render import windowcolumns

        return windowcolumns.records(self.result)

    def to_table(self):
        """An astropy QTable, one row per target; angles in deg, times as UTC ``Time``."""
        import astropy.units as u
        from astropy.table import QTable

        from skyplan.api.times import time_column

        r = self.result
        count = np.bincount(r.windows.rows, minlength=len(r.names))
        columns = {
            "name": fixed_width(r.names),
            "identifier": fixed_width(r.identifiers),
            "ra": r.ra_deg * u.deg, "dec": r.dec_deg * u.deg,
            "rise": time_column(r.rise), "transit": time_column(r.transit),
            "set": time_column(r.set), "transit_alt": r.transit_alt_deg * u.deg,
            "transit_airmass": r.transit_airmass, "windows": count,
            "usable": r.usable_s / 60.0 * u.min, "best_time": time_column(r.best_time),
            "best_airmass": r.best_airmass, "status": np.asarray(r.status, dtype=str),
            "near_sun": r.near_sun, "daylight_window": r.daylight_window,
            "sun_distance": r.sun_distance_deg * u.deg,
            "moon_distance": r.moon_distance_deg * u.deg,
        }
        for key, lost in r.lost_s.items():
            columns[f"lost_{key}"] = lost / 60.0 * u.min
        return QTable(columns)


@as_warnings
def windows(targets: Targets, site: Site, night: Night, limits: Limits | None = None
            ) -> Windows:
    """The observable windows of ``targets`` on ``night`` within ``limits`` (default: the
    site file's limits, then skyplan's defaults)."""
    from skyplan.engine import windows as window_engine

    lim = limits if limits is not None else _site_limits(site)
    res = window_engine.compute_windows(targets.target_set, site, night.engine_night, lim,
                                        orbits=targets.orbits)
    return Windows(site, night, lim, res)
