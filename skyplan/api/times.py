"""Instants as the API hands them out: aware datetimes (one) and astropy Time (columns).

The engine counts POSIX seconds (UTC, leap seconds not counted); nothing at the API surface
is a bare float.  Columns go to astropy through calendar fields (numpy ``datetime64``, which
counts as POSIX does): astropy's own ``unix`` format departs from POSIX time on the day of a
leap second.
"""

from __future__ import annotations

import datetime as dt
import math

import numpy as np


def aware(unix: float | None) -> dt.datetime | None:
    """One instant as a timezone-aware UTC datetime; None (or NaN) stays None."""
    if unix is None or not math.isfinite(float(unix)):
        return None
    return dt.datetime.fromtimestamp(float(unix), tz=dt.UTC)


def time_column(unix) -> object:
    """POSIX seconds as an astropy ``Time`` column in UTC; NaN entries are masked."""
    from astropy.time import Time

    x = np.asarray(unix, dtype=float).reshape(-1)
    bad = ~np.isfinite(x)
    micro = np.round(np.where(bad, 0.0, x) * 1e6).astype("int64")
    t = Time(micro.astype("datetime64[us]"), scale="utc", format="datetime64")
    t.format = "isot"
    if bad.any():
        t[bad] = np.ma.masked
    return t


def posix(when, zone=None) -> float:
    """POSIX seconds of an aware datetime, an astropy Time, an ISO 8601 text or 'now'.

    A text without Z or an offset is read in ``zone`` (a ZoneInfo; default UTC).
    """
    from skyplan.errors import InputError

    if isinstance(when, dt.datetime):
        if when.tzinfo is None:
            raise InputError("a datetime without a time zone is ambiguous; give tzinfo",
                             field="at")
        return when.timestamp()
    if isinstance(when, str):
        from zoneinfo import ZoneInfo

        from skyplan.inputs.timeinput import parse_instant

        return parse_instant(when, zone or ZoneInfo("UTC"), field="at")
    if type(when).__name__ == "Time":
        return float(when.utc.unix)
    raise InputError(f"cannot read {when!r} as an instant; give an aware datetime, an astropy "
                     "Time or ISO 8601 text", field="at")
