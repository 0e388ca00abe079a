"""Time-critical targets: the ephemeris columns of a catalogue, parsed and checked.

A catalogue row may carry one of three kinds of timing (columns named exactly so):

* **events** (transits, eclipses): ``event_t0`` (the mid-time of one event, a Julian date),
  ``event_t0_scale`` (``bjd_tdb``, the default; ``hjd`` — heliocentric, UTC — or
  ``jd_utc``), ``period_d`` (days), ``duration_h`` (hours, first to last contact), and their
  uncertainties ``event_t0_err_d``, ``period_err_d`` (days, optional);
* **phase windows**: ``event_t0``, ``period_d`` and ``phase_min``, ``phase_max`` (0..1,
  phase 0 at ``event_t0``; ``phase_min > phase_max`` wraps through phase 0);
* **fixed-time requests**: ``fixed_start`` (ISO 8601 with ``Z`` or an offset: the visit
  starts then and lasts the row's exposure) or ``fixed_window`` (``START/END``, both
  ISO 8601 with ``Z`` or an offset: the visit must lie inside).

Every bad value or bad combination is an :class:`~skyplan.errors.InputError` naming the
file, line and column.  The values stay in their own time scales here; the engine
(:mod:`skyplan.engine.barycentric`) converts them.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
from dataclasses import dataclass

import numpy as np

from skyplan import notices
from skyplan.errors import InputError, InputErrors
from skyplan.inputs.angles import parse_column
from skyplan.text import fixed_width

SCALES = ("bjd_tdb", "hjd", "jd_utc")
JD_RANGE = (2_400_000.0, 2_500_000.0)  # full Julian dates only (1858 to 2132)
NUMBER_COLUMNS = ("event_t0", "period_d", "duration_h", "event_t0_err_d", "period_err_d",
                  "phase_min", "phase_max")
_RULES = {
    "event_t0": (lambda v: (v >= JD_RANGE[0]) & (v <= JD_RANGE[1]),
                 "is not a full Julian date from 2400000 to 2500000 (write the whole date, "
                 "not one less 2450000)"),
    "period_d": (lambda v: v > 0, "must be above 0 days"),
    "duration_h": (lambda v: v > 0, "must be above 0 hours"),
    "event_t0_err_d": (lambda v: v >= 0, "must not be negative"),
    "period_err_d": (lambda v: v >= 0, "must not be negative"),
    "phase_min": (lambda v: (v >= 0) & (v <= 1), "must be from 0 to 1"),
    "phase_max": (lambda v: (v >= 0) & (v <= 1), "must be from 0 to 1"),
}


@dataclass(frozen=True)
class Ephemerides:
    """The timing of every catalogue row (equal-length arrays, NaN where not given).

    ``kind``: ``"event"``, ``"phase"``, ``"fixed"`` or ``""`` (not time-critical).
    ``fixed_start``/``fixed_end`` are POSIX seconds; ``fixed_end`` is NaN for a
    ``fixed_start`` request (the visit lasts its exposure).
    """

    kind: np.ndarray
    t0_jd: np.ndarray
    t0_scale: np.ndarray  # one of SCALES
    period_d: np.ndarray
    duration_h: np.ndarray
    t0_err_d: np.ndarray
    period_err_d: np.ndarray
    phase_min: np.ndarray
    phase_max: np.ndarray
    fixed_start: np.ndarray
    fixed_end: np.ndarray

    def __len__(self) -> int:
        return len(self.kind)

    @classmethod
    def none(cls, n: int) -> Ephemerides:
        """``n`` rows without timing."""
        nan = np.full(n, np.nan)
        return cls(np.full(n, "", dtype=object), nan, np.full(n, "bjd_tdb", dtype=object),
                   *(nan.copy() for _ in range(8)))

    def take(self, rows) -> Ephemerides:
        """The rows at the indices (or mask) ``rows``."""
        return Ephemerides(*(getattr(self, f.name)[rows] for f in dataclasses.fields(self)))

    @property
    def timed(self) -> np.ndarray:
        """True for the time-critical rows."""
        return self.kind != ""


def read_ephemerides(catalog, *, skip_bad: bool = False) -> tuple[Ephemerides, np.ndarray]:
    """The timing of each row of a :class:`~skyplan.inputs.catalogtypes.Catalog`, and a
    mask of the rows to keep.

    Every problem is raised together as :class:`InputErrors`; with ``skip_bad`` the rows
    holding them are left out of the mask instead (the caller notes them).
    """
    n = len(catalog)
    raw = catalog.timed
    problems: dict[int, list[tuple[str, str]]] = {}

    def note(rows, column: str, message: str) -> None:
        for i in np.flatnonzero(rows).tolist() if isinstance(rows, np.ndarray) else rows:
            problems.setdefault(int(i), []).append((column, message))

    numbers = {}
    for key in NUMBER_COLUMNS:
        if key not in raw:
            numbers[key] = np.full(n, np.nan)
            continue
        ok, rule = _RULES[key]
        values, errors = parse_column(raw[key], _parse_number(key, ok, rule), ok)
        for i, message in errors.items():
            note([i], key, message)
        numbers[key] = values
    scale = _scales(raw.get("event_t0_scale"), n, note)
    start, end = _fixed(raw, n, note)

    given = {k: np.isfinite(v) for k, v in numbers.items()}
    t0 = given["event_t0"]
    for key in ("period_d", "duration_h", "event_t0_err_d", "period_err_d", "phase_min",
                "phase_max"):
        note(given[key] & ~t0, key, f"{key} needs event_t0 in the same row")
    if "event_t0_scale" in raw:
        written = _texts(raw["event_t0_scale"]) != ""
        note(written & ~t0, "event_t0_scale", "event_t0_scale needs event_t0 in the same row")
    note(t0 & ~given["period_d"], "period_d", "event_t0 needs period_d (days)")
    phase = given["phase_min"] | given["phase_max"]
    note(given["phase_max"] & ~given["phase_min"], "phase_min", "phase_max needs phase_min")
    note(given["phase_min"] & ~given["phase_max"], "phase_max", "phase_min needs phase_max")
    note(phase & given["duration_h"], "duration_h",
         "give duration_h (events) or phase_min/phase_max (a phase window), not both")
    note(t0 & ~phase & ~given["duration_h"], "duration_h",
         "event_t0 needs duration_h (hours), or phase_min and phase_max")
    note(given["phase_min"] & (numbers["phase_min"] == numbers["phase_max"]), "phase_max",
         "phase_max equals phase_min: the window is empty")
    with np.errstate(invalid="ignore"):
        note(numbers["duration_h"] / 24.0 >= numbers["period_d"], "duration_h",
             "the event lasts as long as the period or longer")
    fixed = np.isfinite(start)
    note(fixed & t0, "event_t0", "a row is either periodic (event_t0) or fixed-time "
         "(fixed_start/fixed_window), not both")

    keep = np.ones(n, dtype=bool)
    if problems:
        errors = [InputError(message, file=catalog.source, line=int(catalog.line[i]),
                             field=column)
                  for i in sorted(problems) for column, message in problems[i]]
        if not skip_bad:
            raise InputErrors(errors) if len(errors) > 1 else errors[0]
        keep[list(problems)] = False
    kind = np.full(n, "", dtype=object)
    kind[t0 & given["duration_h"]] = "event"
    kind[t0 & phase] = "phase"
    kind[fixed] = "fixed"
    return Ephemerides(kind, numbers["event_t0"], scale, numbers["period_d"],
                       numbers["duration_h"], np.nan_to_num(numbers["event_t0_err_d"]),
                       np.nan_to_num(numbers["period_err_d"]), numbers["phase_min"],
                       numbers["phase_max"], start, end), keep


def with_timing(catalog, targets, *, skip_bad: bool = False):
    """``(catalog, targets, Ephemerides or None)``: the timing of a catalogue's rows kept
    (``targets`` their :class:`~skyplan.targetdata.TargetSet`); None when the catalogue has
    no ephemeris column.  A time-critical row must be a fixed target (not a body or orbit).
    With ``skip_bad`` the rows with bad timing are dropped and noted."""
    if not catalog.timed:
        return catalog, targets, None
    eph, keep = read_ephemerides(catalog, skip_bad=skip_bad)
    moving = np.flatnonzero(eph.timed & (np.asarray(targets.body, dtype=object) != ""))
    problems = [InputError(f"{catalog.name[i]!r} moves: a time-critical target needs a fixed "
                           "place (RA and Dec, or a star's name)", file=catalog.source,
                           line=int(catalog.line[i]), field="name") for i in moving]
    if problems and not skip_bad:
        raise InputErrors(problems) if len(problems) > 1 else problems[0]
    keep[moving] = False
    if not keep.all():
        notices.add(f"{catalog.source}: skipped {int((~keep).sum())} row(s) with bad timing "
                    f"(first line {int(catalog.line[~keep][0])})")
        rows = np.flatnonzero(keep)
        return catalog.subset(rows), targets.take(rows), eph.take(rows)
    return catalog, targets, eph


def _parse_number(key: str, ok, rule: str):
    def parse_one(text: str) -> float:
        try:
            value = float(str(text).strip())
        except ValueError:
            raise ValueError(f"cannot read {str(text)[:40]!r} as a number") from None
        if not np.isfinite(value):
            raise ValueError(f"{str(text)[:40]!r} is not a finite number")
        if not ok(np.float64(value)):
            raise ValueError(f"{key} {value:.10g} {rule}")
        return value

    return parse_one


def _texts(values) -> np.ndarray:
    """A column as stripped text (numpy strings), vectorised."""
    return np.char.strip(fixed_width(values))


def _scales(values, n: int, note) -> np.ndarray:
    """The time scale of each row's ``event_t0`` (empty: ``bjd_tdb``)."""
    out = np.full(n, "bjd_tdb", dtype=object)
    if values is None:
        return out
    text = np.char.lower(_texts(values))
    known = np.isin(text, SCALES)
    out[known] = text[known]
    for i in np.flatnonzero(~known & (text != "")).tolist():
        note([i], "event_t0_scale", f"unknown time scale {str(values[i])[:20]!r}; use "
             f"{', '.join(SCALES)}")
    return out


def parse_utc_instant(text: str) -> float:
    """POSIX seconds of an ISO 8601 time with ``Z`` or an offset; ValueError otherwise."""
    body = text.strip()
    candidate = body[:-1] + "+00:00" if body.endswith(("z", "Z")) else body
    try:
        when = dt.datetime.fromisoformat(candidate)
    except ValueError:
        raise ValueError(f"cannot read {body[:40]!r} as an ISO 8601 time such as "
                         "2026-12-18T21:30:00Z") from None
    if when.tzinfo is None:
        raise ValueError(f"{body[:40]!r} has no zone; end it with Z (UTC) or an offset")
    return when.timestamp()


def _fixed(raw: dict, n: int, note) -> tuple[np.ndarray, np.ndarray]:
    """Start and end (POSIX seconds, NaN where not given) of the fixed-time requests."""
    start, end = np.full(n, np.nan), np.full(n, np.nan)
    given = {key: _texts(raw[key]) for key in ("fixed_start", "fixed_window") if key in raw}
    for i in np.flatnonzero(given.get("fixed_start", np.zeros(0, str)) != "").tolist():
        try:
            start[i] = parse_utc_instant(str(given["fixed_start"][i]))
        except ValueError as exc:
            note([i], "fixed_start", str(exc))
    for i in np.flatnonzero(given.get("fixed_window", np.zeros(0, str)) != "").tolist():
        text = str(given["fixed_window"][i])
        if np.isfinite(start[i]):
            note([i], "fixed_window", "give fixed_start or fixed_window, not both")
            continue
        parts = text.split("/")
        if len(parts) != 2:
            note([i], "fixed_window", f"cannot read {text[:60]!r} as START/END (two ISO 8601 "
                 "times joined by /)")
            continue
        try:
            a, b = parse_utc_instant(parts[0]), parse_utc_instant(parts[1])
        except ValueError as exc:
            note([i], "fixed_window", str(exc))
            continue
        if b <= a:
            note([i], "fixed_window", "the window ends before it starts")
            continue
        start[i], end[i] = a, b
    return start, end
