"""The night for the API: sunset, twilights, darkness and the Moon, as aware datetimes."""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field

from skyplan.inputs.sites import Site
from skyplan.notices import as_warnings


@dataclass(frozen=True, eq=False)
class Night:
    """Evening to morning at a site for a local date.

    Times are timezone-aware UTC datetimes (None when the event does not happen);
    ``.astimezone(site.tzinfo)`` gives the site's clock.
    """

    site: Site = field(repr=False)
    date: dt.date
    sunset: dt.datetime | None
    sunrise: dt.datetime | None
    dusk: dict[str, dt.datetime | None]
    dawn: dict[str, dt.datetime | None]
    local_midnight: dt.datetime
    dark_hours: float
    sun_state: str
    moon_illumination: float
    engine_night: object = field(repr=False)  # skyplan.engine.night.Night

    def to_records(self) -> dict:
        """The document ``skyplan night --format json`` writes (times as ISO 8601 text)."""
        from skyplan.render import nightview

        return nightview.night_record(self.engine_night, self.site)

    def to_table(self):
        """An astropy Table of the night's events: ``event`` and ``time`` (UTC, masked
        where the event does not happen), in the order of the night."""
        from astropy.table import QTable

        from skyplan.api.times import time_column

        n = self.engine_night
        events = [("sunset", n.sunset)]
        events += [(f"dusk_{k}", v) for k, v in n.dusk.items()]
        events += [("local_midnight", n.local_midnight)]
        events += [(f"dawn_{k}", v) for k, v in reversed(n.dawn.items())]
        events += [("sunrise", n.sunrise), ("moon_rise", n.moon.rise),
                   ("moon_transit", n.moon.transit), ("moon_set", n.moon.set)]
        unix = [float("nan") if v is None else v for _, v in events]
        return QTable({"event": [e for e, _ in events], "time": time_column(unix)})


def night_date(site: Site, date: dt.date | str | None, *, field_name: str = "date"):
    """The local date whose evening starts the night, checked against the ephemeris span.

    ``date``: a ``datetime.date``, ``YYYY-MM-DD``, 'today' or 'tonight'; None is the
    current night.
    """
    from skyplan.engine import ephemeris
    from skyplan.inputs import timeinput

    if isinstance(date, dt.datetime):
        date = date.date()
    if not isinstance(date, dt.date):
        date = timeinput.parse_night_date(date, site.tzinfo, field=field_name)
    start = timeinput.local_noon_unix(date, site.tzinfo)
    ephemeris.check_in_span(start, start + 86400.0, field=field_name)
    return date


def wrap(engine_night, site: Site) -> Night:
    """The API's :class:`Night` around the engine's."""
    from skyplan.api.times import aware

    n = engine_night
    return Night(
        site=site, date=n.date, sunset=aware(n.sunset), sunrise=aware(n.sunrise),
        dusk={k: aware(v) for k, v in n.dusk.items()},
        dawn={k: aware(v) for k, v in n.dawn.items()},
        local_midnight=aware(n.local_midnight), dark_hours=float(n.dark_hours),
        sun_state=n.sun_state, moon_illumination=float(n.moon.illumination), engine_night=n)


@as_warnings
def night(site: Site, date: dt.date | str | None = None) -> Night:
    """The night at ``site`` that starts on the evening of the local ``date``."""
    from skyplan.engine import night as night_engine

    day = night_date(site, date)
    return wrap(night_engine.compute_night(site, day), site)
