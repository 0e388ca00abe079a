"""Targets for the API: read from a catalogue file, or resolved from names, offline."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from skyplan.notices import as_warnings
from skyplan.text import fixed_width


@dataclass(frozen=True, eq=False)
class Targets:
    """Targets ready for :func:`skyplan.windows` and :func:`skyplan.plan`.

    ``names``, ``ra_deg``, ``dec_deg`` (ICRS; NaN for the Sun, Moon, planets and orbits),
    ``priority`` (higher is more important) and ``exposure_s`` (NaN: the plan's default)
    are numpy columns of equal length.
    """

    target_set: object = field(repr=False)  # skyplan.engine.windows.TargetSet
    priority: np.ndarray = field(repr=False)
    exposure_s: np.ndarray = field(repr=False)
    orbits: tuple = field(default=(), repr=False)
    source: str = ""
    timed: object = field(default=None, repr=False)  # skyplan.inputs.ephemerides.Ephemerides

    def __len__(self) -> int:
        return len(self.target_set.names)

    @property
    def names(self) -> np.ndarray:
        return self.target_set.names

    @property
    def ra_deg(self) -> np.ndarray:
        return self.target_set.ra_deg

    @property
    def dec_deg(self) -> np.ndarray:
        return self.target_set.dec_deg

    def to_table(self):
        """An astropy Table: name, identifier, ra, dec (deg), body, priority, exposure (s)."""
        import astropy.units as u
        from astropy.table import QTable

        t = self.target_set
        ident = t.identifiers if t.identifiers is not None else np.full(len(self), "")
        return QTable({
            "name": fixed_width(t.names), "identifier": fixed_width(ident),
            "ra": t.ra_deg * u.deg, "dec": t.dec_deg * u.deg,
            "body": np.asarray(t.body, dtype=str), "priority": self.priority,
            "exposure": self.exposure_s * u.s,
        })


def _orbits(elements: str | Path | None) -> tuple:
    if not elements:
        return ()
    from skyplan.inputs import orbits as orbit_mod

    return tuple(orbit_mod.read_elements(str(elements)))


@as_warnings
def read_targets(path: str | Path | None = None, *, skip_bad_rows: bool = False,
                 elements: str | Path | None = None, demo: bool = False,
                 input_format: str | None = None) -> Targets:
    """The targets of a catalogue file (CSV, TSV, ECSV, VOTable, FITS).

    ``input_format`` (csv, tsv, ecsv, votable, fits) overrides the extension; the path
    ``-`` reads standard input and needs it.

    Rows with a name only are resolved offline (``elements``: an orbital elements file for
    comets and asteroids).  With ``skip_bad_rows`` malformed rows, and rows whose name does
    not resolve, are dropped and reported as :class:`skyplan.SkyplanWarning`; otherwise they
    raise :class:`skyplan.InputError`.  ``demo=True`` (and no path) reads the demo programme.
    """
    from skyplan.errors import InputError
    from skyplan.inputs import scenario
    from skyplan.inputs import targets as target_input

    if path is None:
        if not demo:
            raise InputError("give a catalogue file (CSV, TSV, ECSV, VOTable, FITS) or --demo",
                             field="CATALOG")
        path = scenario.demo_path(scenario.DEMO_CATALOG)
    orbits = _orbits(elements)
    read = target_input.load_catalog(path, skip_bad=skip_bad_rows, input_format=input_format)
    source = read.source
    cat, tset = target_input.catalog_targets(read, orbits=orbits, source=source,
                                             skip_bad=skip_bad_rows)
    from skyplan.inputs.ephemerides import with_timing

    cat, tset, timed = with_timing(cat, tset, skip_bad=skip_bad_rows)
    return Targets(tset, cat.priority, cat.exposure_s, orbits, source, timed)


@as_warnings
def targets(names: list[str], *, elements: str | Path | None = None) -> Targets:
    """Targets from names (``["M 42", "Vega", "Jupiter"]``), resolved offline.

    Each gets priority 1 and the plan's default exposure.
    """
    from skyplan.engine.windows import TargetSet
    from skyplan.errors import InputError, InputErrors
    from skyplan.names import resolve as resolver

    if isinstance(names, str):
        names = [names]
    orbits = _orbits(elements)
    col, errs = resolver.resolve_many([str(n) for n in names], orbits=orbits)
    if errs:
        problems = [InputError(e.message, field=f"names[{i}]") for i, e in sorted(errs.items())]
        raise InputErrors(problems) if len(problems) > 1 else problems[0]
    n = len(names)
    fixed = (col.kind == "star") | (col.kind == "deep_sky")
    body = np.array([
        "" if f else (f"orbit:{q}" if k == "orbit" else str(q).strip().lower())
        for f, k, q in zip(fixed, col.kind, col.query)], dtype=object)
    epoch = np.where(np.isfinite(col.epoch_jyear), col.epoch_jyear, 2000.0)
    tset = TargetSet(
        np.array([str(x) for x in names], dtype=object),
        np.where(fixed, col.ra_deg, np.nan), np.where(fixed, col.dec_deg, np.nan),
        np.nan_to_num(col.pm_ra_masyr), np.nan_to_num(col.pm_dec_masyr),
        np.nan_to_num(col.parallax_mas), np.nan_to_num(col.radial_velocity_kms),
        np.where(fixed, epoch, 2000.0), body, np.asarray(col.identifier, dtype=object))
    return Targets(tset, np.ones(n, dtype=np.int64), np.full(n, np.nan), orbits)
