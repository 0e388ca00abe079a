"""The season of a catalogue: usable minutes per target and night over a date range, and
when in the year each target can be observed.

The blocks of targets × nights (:func:`skyplan.engine.season.blocks`) run on a Dask cluster
when one is named (``cluster="tcp://HOST:8786"`` or the ``SKYPLAN_CLUSTER`` environment
variable; the optional extra ``skyplan[cluster]``), else on local worker processes
(``concurrent.futures``), else, for a single block, in this process.  The block layout
depends on the inputs alone, so every way of running gives the same numbers.
"""

from __future__ import annotations

import datetime as dt
import os
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field

import numpy as np

from skyplan.api.targets import Targets
from skyplan.inputs.limits import Limits
from skyplan.inputs.sites import Site
from skyplan.notices import as_warnings
from skyplan.text import fixed_width

CLUSTER_ENV = "SKYPLAN_CLUSTER"
MIN_MINUTES = 60.0  # a night counts as observable with at least this many usable minutes
# below this many target-nights (about 2 s of one core), the default is this process alone:
# starting worker processes costs 1-2 s (measured, docs/performance.md)
POOL_MIN_TARGET_NIGHTS = 2_000_000


@dataclass(frozen=True, eq=False)
class Season:
    """Usable minutes of every target on every night from ``dates[0]`` to ``dates[-1]``.

    ``usable_min`` and ``airmass_mid`` are (targets, nights) arrays; ``moon_illumination``
    one value per night.  ``to_records(per_night=)`` gives the JSON records,
    ``to_table()`` an astropy table of the per-target summary.
    """

    site: Site = field(repr=False)
    limits: Limits
    names: np.ndarray = field(repr=False)
    dates: list[dt.date] = field(repr=False)
    usable_min: np.ndarray = field(repr=False)
    airmass_mid: np.ndarray = field(repr=False)
    moon_illumination: np.ndarray = field(repr=False)
    min_minutes: float = MIN_MINUTES

    def __len__(self) -> int:
        return len(self.names)

    def summary(self):
        """Per target: first, last and best night, hours, months (``engine.season``)."""
        from skyplan.engine.season import summarise

        return summarise(self.usable_min, self.airmass_mid, self.dates, self.min_minutes)

    def to_records(self, per_night: bool = False) -> list[dict]:
        """One record per target (``nights`` with ``per_night``), as the JSON output."""
        from skyplan.render import seasoncolumns

        return seasoncolumns.frame(self, per_night=per_night).to_dicts()

    def to_table(self):
        """An astropy Table, one row per target: the summary."""
        import astropy.units as u
        from astropy.table import QTable

        s = self.summary()
        return QTable({
            "name": fixed_width(self.names),
            "first_night": s.date_text(s.first), "last_night": s.date_text(s.last),
            "best_night": s.date_text(s.best), "best_minutes": s.best_minutes * u.min,
            "nights": s.nights_observable, "usable_total": s.usable_hours * u.h,
        })


# ------------------------------------------------------------------ running the blocks


def cluster_address(cluster: str | None) -> str | None:
    """The Dask scheduler named by the caller, else by ``SKYPLAN_CLUSTER`` (None: local)."""
    address = cluster if cluster else os.environ.get(CLUSTER_ENV, "").strip()
    return address or None


def _run_block(args):
    """One block, with the notices it raised (a worker process's notices would be lost)."""
    from skyplan import notices
    from skyplan.engine.season import season_block

    targets, site, limits, dates, a, b, i, j, orbits = args
    earlier = notices.take()
    block = season_block(targets, site, limits, dates, a, b, i, j, orbits)
    said = notices.take()
    for line in earlier:
        notices.add(line)
    return block, said


def run_blocks(targets, site: Site, limits: Limits, dates: list[dt.date], *, orbits=(),
               cluster: str | None = None, workers: int | None = None,
               client=None) -> Iterator:
    """The season's blocks, in block order, from whoever computes them.

    ``client``: a ``distributed.Client`` to use as it is; else ``cluster`` (an address) or
    ``SKYPLAN_CLUSTER``; else ``workers`` local processes (default: the CPU count, or this
    process alone below :data:`POOL_MIN_TARGET_NIGHTS`; 1: this process).
    """
    from skyplan.engine.season import blocks

    layout = blocks(len(targets), len(dates))
    jobs = [(targets.rows(a, b), site, limits, dates, a, b, i, j, tuple(orbits))
            for a, b, i, j in layout]
    address = cluster_address(cluster)
    if client is not None or address is not None:
        yield from _on_dask(jobs, address, client)
        return
    if workers is None:  # small runs: starting processes would cost more than they save
        small = len(targets) * len(dates) < POOL_MIN_TARGET_NIGHTS
        workers = 1 if small else (os.cpu_count() or 1)
    if workers <= 1 or len(jobs) == 1:
        yield from map(_run_block, jobs)
        return
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor

    context = multiprocessing.get_context("spawn" if os.name == "nt" else "forkserver")
    with ProcessPoolExecutor(max_workers=min(workers, len(jobs)), mp_context=context) as pool:
        yield from pool.map(_run_block, jobs)


def _on_dask(jobs: Sequence, address: str | None, client) -> Iterator:
    from skyplan.errors import InputError

    try:
        import distributed
    except ImportError:
        raise InputError("a Dask cluster needs the optional extra: pip install "
                         "'skyplan[cluster]'", field="--cluster") from None
    own = client is None
    if own:
        try:
            client = distributed.Client(address, timeout=10)
        except (OSError, TimeoutError) as exc:
            raise InputError(f"cannot reach the Dask scheduler at {address} ({exc})",
                             field="--cluster") from None
    try:
        futures = client.map(_run_block, jobs, pure=False)
        for future in futures:
            yield future.result()
    finally:
        if own:
            client.close()


def collect(blocks_iter, n_targets: int, n_nights: int):
    """The (targets, nights) matrices and the per-night Moon illumination from the blocks."""
    from skyplan import notices

    usable = np.zeros((n_targets, n_nights), np.float32)
    x_mid = np.full((n_targets, n_nights), np.nan, np.float32)
    illum = np.zeros(n_nights)
    seen: set[str] = set()
    for blk, said in blocks_iter:
        for line in said:
            if line not in seen:
                seen.add(line)
                notices.add(line)
        usable[blk.a:blk.b, blk.i:blk.j] = blk.usable_min
        x_mid[blk.a:blk.b, blk.i:blk.j] = blk.airmass_mid
        illum[blk.i:blk.j] = blk.moon_illumination
    return usable, x_mid, illum


def season_dates(site: Site, start, end) -> list[dt.date]:
    """The nights from ``start`` to ``end`` inclusive (default: the next 12 months)."""
    from skyplan.api.night import night_date
    from skyplan.engine.season import dates_between
    from skyplan.errors import InputError

    first = night_date(site, start, field_name="start")
    if end is None:
        last = _plus_year(first) - dt.timedelta(days=1)
    else:
        last = night_date(site, end, field_name="end")
    if last < first:
        raise InputError(f"the range ends ({last}) before it starts ({first})", field="end")
    if (last - first).days > 3660:
        raise InputError("the range is longer than ten years", field="end")
    night_date(site, last, field_name="end")
    return dates_between(first, last)


def _plus_year(d: dt.date) -> dt.date:
    try:
        return d.replace(year=d.year + 1)
    except ValueError:  # 29 February
        return d.replace(year=d.year + 1, day=28)


@as_warnings
def season(targets: Targets, site: Site, start=None, end=None, limits: Limits | None = None,
           *, min_minutes: float = MIN_MINUTES, cluster: str | None = None,
           workers: int | None = None, client=None) -> Season:
    """Usable minutes of ``targets`` at ``site`` on every night from ``start`` to ``end``
    (local dates of the evening, inclusive; default: today and the next 12 months), under
    ``limits`` (default: the site file's, then skyplan's).

    ``cluster``: a Dask scheduler address (else ``SKYPLAN_CLUSTER``); ``workers``: local
    processes (default the CPU count; this process alone for small runs); ``client``: a
    ``distributed.Client`` to use.
    """
    from skyplan.api.windows import limits as make_limits

    lim = limits if limits is not None else make_limits(site)
    dates = season_dates(site, start, end)
    tset = targets.target_set
    usable, x_mid, illum = collect(
        run_blocks(tset, site, lim, dates, orbits=targets.orbits, cluster=cluster,
                   workers=workers, client=client), len(tset), len(dates))
    return Season(site, lim, np.asarray(tset.names), dates, usable, x_mid, illum,
                  float(min_minutes))
