"""Reading instants and night dates from the command line (the input edge).

Accepted forms for an instant (``--at``):

* ``now``;
* ISO 8601 with ``Z`` or an offset: ``2026-12-01T21:30:00Z``, ``2026-12-01 21:30+01:00``;
* a bare ISO date/time, read in the site's local zone (IANA rules, daylight saving
  included): ``2026-12-01T21:30``; a bare date means local midnight.

A night date (``--date``) is a local calendar date ``YYYY-MM-DD``, ``today`` or ``tonight``
(the same), or ``tomorrow``; the night is the one that begins on the evening of that date.
With no date, the current night is used: before local noon that is the night that began
the previous evening.
"""

from __future__ import annotations

import datetime as dt
import re
from zoneinfo import ZoneInfo

from skyplan import notices
from skyplan.defaults import EPHEMERIS_FIRST, EPHEMERIS_LAST, EPHEMERIS_NAME
from skyplan.errors import InputError

_OUTSIDE = (f"outside the span of the bundled {EPHEMERIS_NAME} ephemeris "
            f"({EPHEMERIS_FIRST} to {EPHEMERIS_LAST})")
_LEAP_SECOND = re.compile(r"T\d\d:\d\d:60(?:[.,]\d+)?(?:[+-]|$)")


def _now() -> dt.datetime:
    return dt.datetime.now(dt.UTC)


def parse_instant(text: str, zone: ZoneInfo, *, field: str = "--at") -> float:
    """Return POSIX seconds (UTC) for a time given as text."""
    raw = text.strip()
    if raw.lower() == "now":
        return _now().timestamp()
    candidate = raw.replace(" ", "T", 1) if len(raw) > 10 else raw
    if candidate.endswith(("z", "Z")):
        candidate = candidate[:-1] + "+00:00"
    try:
        when = dt.datetime.fromisoformat(candidate)
    except ValueError:
        if _LEAP_SECOND.search(candidate):
            raise InputError(
                f"{text!r} names a leap second (second 60), which POSIX time cannot hold; "
                "give 23:59:59.999 or the following 00:00:00",
                field=field,
            ) from None
        raise InputError(
            f"cannot read {text!r} as a time; use ISO 8601 such as 2026-12-01T21:30:00Z, "
            "2026-12-01T21:30+01:00, a bare local 2026-12-01T21:30, or 'now'",
            field=field,
        ) from None
    try:
        if when.tzinfo is None:
            when = _resolve_local(when, zone, field)
        return when.timestamp()
    except (OverflowError, ValueError):
        raise InputError(f"{text!r} is {_OUTSIDE}", field=field) from None


def _resolve_local(naive: dt.datetime, zone: ZoneInfo, field: str) -> dt.datetime:
    """Attach the zone; refuse local times skipped by a daylight-saving change.

    A local time that happens twice (clocks go back) is taken at its first occurrence, and a
    notice says so.
    """
    aware = naive.replace(tzinfo=zone)
    back = aware.astimezone(dt.UTC).astimezone(zone).replace(tzinfo=None)
    if back != naive:
        raise InputError(
            f"{naive.isoformat()} does not exist in {zone.key} (clocks jump forward then); "
            "give the time with an offset or in UTC",
            field=field,
        )
    later = naive.replace(tzinfo=zone, fold=1)
    if later.utcoffset() != aware.utcoffset():
        notices.add(
            f"{naive.isoformat()} happens twice in {zone.key} (clocks go back); the first, "
            f"{aware.isoformat()}, is used: give an offset to choose the second"
        )
    return aware


def parse_night_date(text: str | None, zone: ZoneInfo, *, field: str = "--date") -> dt.date:
    """The local date whose evening starts the night."""
    if text is None or text.strip().lower() in ("", "tonight", "today", "tomorrow"):
        local = _now().astimezone(zone)
        if text is None and local.hour < 12:
            return (local - dt.timedelta(days=1)).date()
        if text is not None and text.strip().lower() == "tomorrow":
            return (local + dt.timedelta(days=1)).date()
        return local.date()
    try:
        return dt.date.fromisoformat(text.strip())
    except ValueError:
        raise InputError(
            f"cannot read {text!r} as a date; use YYYY-MM-DD, 'today', 'tonight' or 'tomorrow'",
            field=field
        ) from None


def local_noon_unix(date: dt.date, zone: ZoneInfo) -> float:
    """POSIX seconds of local civil noon on a date (start of the night's search span)."""
    try:
        return dt.datetime.combine(date, dt.time(12, 0), tzinfo=zone).timestamp()
    except (OverflowError, ValueError):
        raise InputError(f"{date.isoformat()} is {_OUTSIDE}", field="--date") from None


def iso_utc(unix: float | None, *, places: int = 0) -> str | None:
    """ISO 8601 UTC with Z, rounded to whole seconds by default; None stays None."""
    if unix is None or unix != unix:  # None or NaN
        return None
    when = dt.datetime.fromtimestamp(round(float(unix), places), dt.UTC)
    spec = "seconds" if places == 0 else "milliseconds"
    return when.replace(tzinfo=None).isoformat(timespec=spec) + "Z"


def iso_local(unix: float | None, zone: ZoneInfo, *, places: int = 0) -> str | None:
    """ISO 8601 local civil time with its offset."""
    if unix is None or unix != unix:
        return None
    when = dt.datetime.fromtimestamp(round(float(unix), places), zone)
    return when.isoformat(timespec="seconds" if places == 0 else "milliseconds")
