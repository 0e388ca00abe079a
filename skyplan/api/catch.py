"""Time-critical targets for the API: which events can be caught over a range of nights."""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field

import numpy as np

from skyplan.api.targets import Targets
from skyplan.defaults import TIMED_BASELINE_MIN as BASELINE_MIN
from skyplan.defaults import TIMED_MIN_COVERAGE as MIN_COVERAGE
from skyplan.inputs.limits import Limits
from skyplan.inputs.sites import Site
from skyplan.notices import as_warnings
from skyplan.text import fixed_width

NIGHTS = 30  # the default range: this many nights from the first
MAX_NIGHTS = 400
DEMO_TIMED = "timed.csv"  # the invented timed programme in catalogs-demo/
DEMO_FROM = "2026-12-18"  # the demo's first night (the demo date)
DEFAULT_EXPOSURE_S = 300.0  # a fixed_start visit with no exposure of its own (plan's default)


@dataclass(frozen=True, eq=False)
class Catch:
    """The occurrences that can be caught: ``to_records()`` the JSON records (one per
    event, phase span or fixed-time request), ``to_table()`` an astropy table."""

    site: Site = field(repr=False)
    limits: Limits
    result: object = field(repr=False)  # skyplan.engine.catch.CatchResult

    def __len__(self) -> int:
        return len(self.result)

    def to_records(self) -> list[dict]:
        from skyplan.render import catchview

        return catchview.records(self.result, self.site)

    def to_table(self):
        """An astropy QTable, one row per occurrence; times as UTC ``Time``."""
        import astropy.units as u
        from astropy.table import QTable

        from skyplan.api.times import time_column

        r = self.result
        return QTable({
            "name": fixed_width(r.names), "kind": np.asarray(r.kind, dtype=str),
            "epoch_number": r.epoch, "ingress": time_column(r.ingress),
            "mid": time_column(r.mid), "egress": time_column(r.egress),
            "mid_sigma": r.mid_sigma_s / 60.0 * u.min, "coverage": r.coverage,
            "baseline_before": r.baseline_before_s / 60.0 * u.min,
            "baseline_after": r.baseline_after_s / 60.0 * u.min,
            "alt_mid": r.alt_deg[:, 1] * u.deg, "airmass_mid": r.airmass[:, 1],
            "sun_alt_mid": r.sun_alt_deg * u.deg, "moon_distance": r.moon_distance_deg * u.deg,
            "moon_illumination": r.moon_illumination, "fits": r.fits,
        })


def catch_dates(site: Site, start, end) -> list[dt.date]:
    """The nights from ``start`` to ``end`` inclusive (default: :data:`NIGHTS` nights)."""
    from skyplan.api.night import night_date
    from skyplan.errors import InputError

    first = night_date(site, start, field_name="--from")
    last = first + dt.timedelta(days=NIGHTS - 1) if end is None else \
        night_date(site, end, field_name="--to")
    if last < first:
        raise InputError(f"the range ends ({last}) before it starts ({first})", field="--to")
    if (last - first).days >= MAX_NIGHTS:
        raise InputError(f"the range holds more than {MAX_NIGHTS} nights", field="--to")
    night_date(site, last + dt.timedelta(days=1), field_name="--to")
    return [first + dt.timedelta(days=i) for i in range((last - first).days + 1)]


@as_warnings
def catch(targets: Targets, site: Site, start=None, end=None, limits: Limits | None = None,
          *, baseline_min: float = BASELINE_MIN, min_coverage: float = MIN_COVERAGE) -> Catch:
    """Every event, phase span and fixed-time request of the time-critical ``targets``
    (a catalogue with ephemeris columns, see docs/timed.md) on the nights ``start`` to
    ``end`` (local dates of the evening, inclusive), observable under ``limits`` for at
    least ``min_coverage`` of its length (0: every one); baselines up to ``baseline_min``
    minutes on either side of each event."""
    from skyplan.api.windows import limits as site_limits
    from skyplan.engine import catch as catch_engine
    from skyplan.errors import InputError

    for value, name, hi in ((baseline_min, "--baseline", 1440.0),
                            (min_coverage, "--min-coverage", 1.0)):
        if not (np.isfinite(value) and 0.0 <= value <= hi):
            raise InputError(f"{value:g} is not between 0 and {hi:g}", field=name)
    timed = targets.timed
    if timed is None or not timed.timed.any():
        raise InputError("the catalogue has no time-critical target: give event_t0 with "
                         "period_d, or fixed_start or fixed_window (docs/timed.md)",
                         field="CATALOG")
    lim = limits if limits is not None else site_limits(site)
    dates = catch_dates(site, start, end)
    rows = np.flatnonzero(timed.timed)
    exposure = np.where(np.isfinite(targets.exposure_s), targets.exposure_s,
                        DEFAULT_EXPOSURE_S)
    res = catch_engine.catch(targets.target_set.take(rows), timed.take(rows), site, dates,
                             lim, baseline_s=60.0 * baseline_min, min_coverage=min_coverage,
                             exposure_s=exposure[rows])
    return Catch(site, lim, res)


def event_spans(targets: Targets, rows: np.ndarray, site: Site, night, lim: Limits) -> tuple:
    """The events and fixed-time requests of the targets ``rows`` on ``night`` (an API
    :class:`~skyplan.api.night.Night`) as ``(start, end, name)``, for the altitude chart;
    empty without time-critical targets."""
    timed = targets.timed
    if timed is None or not timed.timed[rows].any():
        return ()
    from skyplan.engine import catch as catch_engine

    rows = np.asarray(rows)[timed.timed[rows]]
    exposure = np.where(np.isfinite(targets.exposure_s), targets.exposure_s,
                        DEFAULT_EXPOSURE_S)
    res = catch_engine.catch(targets.target_set.take(rows), timed.take(rows), site,
                             [night.date], lim, baseline_s=0.0, min_coverage=0.0,
                             exposure_s=exposure[rows])
    shown = res.kind != "phase"  # a phase span may fill the night: its curve says enough
    return tuple((float(a), float(b), str(name)) for a, b, name in
                 zip(res.ingress[shown], res.egress[shown], res.names[shown], strict=True))
