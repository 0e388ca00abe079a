"""Windows for a whole catalogue: the inputs of a run read and checked, then the windows
computed block by block of targets, so that a million-target run never holds every
intermediate array at once.

One process does it all: on the project's machine worker processes gained no wall time at
100,000 targets, and one process meets the speed and memory goals at 100,000 and
1,000,000 targets (docs/performance.md).  Problems and notices come in the order the
inputs are read: site (by the caller), limits, date, the elements file, the catalogue, the
night (its data files).  The catalogue is read before the night is computed and its
reader's transient memory is given back first, so that the reading's peak and the
engine's do not stack (docs/performance.md, "The whole command's memory").
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from skyplan.engine.night import Night
    from skyplan.engine.windows import TargetSet, WindowResult
    from skyplan.inputs.catalog import Catalog
    from skyplan.inputs.limits import Limits
    from skyplan.inputs.orbits import OrbitElements
    from skyplan.inputs.sites import Site

# targets computed (and then written) at a time: 5,000 keeps a whole `windows` run within
# 3 x the catalogue's size + 200 MiB (20,000 at a time: 250 MiB at 100,000 targets, 0.1 s faster)
BLOCK = 5_000


@dataclass(frozen=True)
class WindowRun:
    """Everything a windows computation needs, read and checked."""

    site: Site
    limits: Limits
    night: Night
    targets: TargetSet
    orbits: Sequence[OrbitElements] = ()


def night_date(site: Site, date_text: str | None, demo: bool) -> dt.date:
    """The local date whose evening starts the night (the demo date with ``demo``)."""
    from skyplan.api.night import night_date as checked_date
    from skyplan.inputs import scenario

    if date_text is None and demo:
        date_text = scenario.DEMO_DATE
    return checked_date(site, date_text, field_name="--date")


def catalogue_path(catalog: str | None, demo: bool) -> str | None:
    """The catalogue file: the one named, else the demo programme with ``demo``."""
    from skyplan.inputs import scenario

    if catalog is None:
        return str(scenario.demo_path(scenario.DEMO_CATALOG)) if demo else None
    return catalog


def read_catalogue(path: str | None, skip_bad: bool, input_format: str | None = None) -> Catalog:
    from skyplan.errors import InputError
    from skyplan.inputs import targets

    if path is None:
        raise InputError("give a catalogue file (CSV, TSV, ECSV, VOTable, FITS) or --demo",
                         field="CATALOG")
    return targets.load_catalog(path, skip_bad=skip_bad, input_format=input_format)


def read_orbits(elements: str | None) -> Sequence[OrbitElements]:
    if not elements:
        return ()
    from skyplan.inputs import orbits

    return orbits.read_elements(elements)


def window_inputs(site: Site, limits_kw: dict, *, date: str | None = None,
                  catalog: str | None = None, demo: bool = False, skip_bad: bool = False,
                  elements: str | None = None, input_format: str | None = None) -> WindowRun:
    """Limits, night, orbits and targets of a windows run at ``site`` (a resolved Site);
    ``catalog`` ``-`` is standard input, read as ``input_format``."""
    from skyplan.api.windows import limits
    from skyplan.engine import night
    from skyplan.inputs import readfile, targets

    lim = limits(site, **limits_kw)
    day = night_date(site, date, demo)
    orbits = read_orbits(elements)
    cat = read_catalogue(catalogue_path(catalog, demo), skip_bad, input_format)
    _, tset = targets.catalog_targets(cat, orbits=orbits, source=cat.source, skip_bad=skip_bad)
    del cat
    readfile.give_back_freed()  # the reading's transient memory, before the night's arrays
    return WindowRun(site, lim, night.compute_night(site, day), tset, orbits)


def window_result(run: WindowRun) -> WindowResult:
    """The windows of every target at once (for the table, small documents and planning)."""
    from skyplan.engine import windows

    return windows.compute_windows(run.targets, run.site, run.night, run.limits,
                                   orbits=run.orbits)


def window_blocks(run: WindowRun, block: int | None = None) -> Iterator[WindowResult]:
    """The windows of targets ``0..block``, ``block..2 block``, ... (default :data:`BLOCK`)
    in order, each computed when asked for (one empty result for an empty catalogue)."""
    from skyplan.engine import windows

    block = BLOCK if block is None else block
    n = len(run.targets)
    for a in range(0, max(n, 1), block):
        yield windows.compute_windows(run.targets.rows(a, min(n, a + block)), run.site,
                                      run.night, run.limits, orbits=run.orbits)


def has_identifiers(run: WindowRun) -> bool:
    """Whether any target's name was resolved to a catalogue identifier."""
    identifiers = run.targets.identifiers
    return identifiers is not None and bool((identifiers != "").any())
