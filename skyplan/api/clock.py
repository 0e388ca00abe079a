"""Time at a site for the API: UTC, local time, UT1, TT, Julian dates, sidereal times."""

from __future__ import annotations

from dataclasses import dataclass, field

from skyplan.inputs.sites import Site
from skyplan.notices import as_warnings


@dataclass(frozen=True, eq=False)
class Clock:
    """One instant at a site (``to_records``: as ``skyplan clock --format json``)."""

    site: Site
    reading: object = field(repr=False)  # skyplan.engine.sidereal.ClockReading

    def to_records(self) -> dict:
        from skyplan.render import tables

        return tables.clock_record(self.reading, self.site)


@as_warnings
def clock(site: Site, at=None) -> Clock:
    """The clock reading at ``site`` at ``at`` (an aware datetime, astropy Time, ISO 8601
    text — without an offset, the site's clock — or 'now'; default now)."""
    from skyplan.api.times import posix
    from skyplan.engine import ephemeris, sidereal

    unix = posix("now" if at is None else at, site.tzinfo)
    ephemeris.check_in_span(unix, unix, field="at")
    return Clock(site, sidereal.clock_reading(unix, site.lon_deg, site.tzinfo))


def selfcheck() -> object:
    """Check the installation offline against reference cases with known answers
    (the report has ``.ok`` and ``.checks``)."""
    from skyplan.engine import selfcheck as checks

    return checks.run()
