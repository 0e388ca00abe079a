"""From raw catalogue columns to a checked :class:`~skyplan.inputs.catalogtypes.Catalog`.

Holds the header names of each field and their mapping (:func:`map_headers`), the rules and
limits of the numeric columns (proper motion, parallax, radial velocity, exposure, priority,
epoch), the defaults of empty fields, the checks of names and notes, and
:func:`build_catalog`, which parses every column at once and collects each bad field as an
:class:`~skyplan.errors.InputError` naming file, line (or table row) and column.
"""

from __future__ import annotations

import re
from collections import Counter
from collections.abc import Callable, Sequence

import numpy as np

from skyplan import notices
from skyplan.errors import InputError, InputErrors
from skyplan.inputs import delimited
from skyplan.inputs.angles import parse_column, parse_dec_column, parse_ra_column
from skyplan.inputs.catalogtypes import Catalog, CatalogRead, Columns
from skyplan.text import UNPRINTABLE, quoted

MAX_PM_MASYR = 100_000.0  # |proper motion| must be below this
SPEED_OF_LIGHT_KMS = 299_792.458  # |radial velocity| must be below this (SI definition)
EPOCH_RANGE_JYEAR = (1000.0, 3000.0)  # accepted Julian epoch years, inclusive
PRIORITY_RANGE = (0, 1_000_000)  # accepted priorities, inclusive; higher = more important
DEFAULT_PRIORITY = 1
DEFAULT_EPOCH_JYEAR = 2000.0
RA_HOURS_MIN_ROWS = 3  # fewer RAs never raise the "RA looks like hours" notice
_SEXAGESIMAL_MARK = re.compile(r"[^0-9.eE+\-\n]")  # in RA text: not a plain decimal

TIMED_FIELDS = ("event_t0", "event_t0_scale", "period_d", "duration_h", "event_t0_err_d",
                "period_err_d", "phase_min", "phase_max", "fixed_start", "fixed_window")
_ALIASES: dict[str, tuple[str, ...]] = {
    "name": ("name", "target"),
    "ra_deg": ("ra", "ra_deg"),
    "dec_deg": ("dec", "dec_deg"),
    "pm_ra_masyr": ("pm_ra", "pmra", "pm_ra_masyr", "pm_ra_cosdec"),
    "pm_dec_masyr": ("pm_dec", "pmdec", "pm_dec_masyr"),
    "epoch_jyear": ("epoch", "epoch_jyear"),
    "parallax_mas": ("parallax", "plx", "parallax_mas"),
    "radial_velocity_kms": ("radial_velocity", "rv", "radial_velocity_kms"),
    "priority": ("priority",),
    "exposure_s": ("exposure", "exp", "exposure_s"),
    "notes": ("notes", "note"),
    **{key: (key,) for key in TIMED_FIELDS},  # parsed by skyplan.inputs.ephemerides
}
_FIELD_OF_HEADER = {alias: key for key, aliases in _ALIASES.items() for alias in aliases}
_REQUIRED = ("name", "ra_deg", "dec_deg")
TEXT_FIELDS = ("name", "notes", "event_t0_scale", "fixed_start", "fixed_window")

# Characters that must not reach a terminal inside a name or note: C0/C1 controls (newline
# and tab included), line/paragraph separators and bidirectional overrides.
_UNPRINTABLE = UNPRINTABLE


def too_long(size: int) -> str:
    """The message for a field longer than the reader takes."""
    return f"field is {size} characters long; at most {delimited.MAX_FIELD_CHARS} are read"


def map_headers(
    source: str, names: Sequence[str], line: int | None
) -> tuple[dict[str, int], dict[str, str], list[str]]:
    """Column positions by field, the header text by field, and the ignored header names."""
    positions: dict[str, int] = {}
    headers: dict[str, str] = {}
    ignored: dict[str, None] = {}  # ordered, and linear in the width of the header
    for position, raw in enumerate(names):
        key = _FIELD_OF_HEADER.get(raw.strip().lower())
        if key is None:
            ignored.setdefault(raw.strip() or f"(unnamed column {position + 1})")
        elif key in positions:
            raise InputError(
                f"columns '{headers[key]}' and '{raw.strip()}' both give {key}; keep one",
                file=source,
                line=line,
                field=raw.strip(),
            )
        else:
            positions[key] = position
            headers[key] = raw.strip()
    if not positions:  # plainly not a catalogue: refused without quoting it
        raise InputError("not a catalogue: the header names none of the columns name, ra, "
                         "dec", file=source, line=line)
    missing = [key for key in _REQUIRED if key not in positions]
    if missing:
        have = ", ".join(quoted(n.strip(), 20) for n in names[:12]) or "nothing"
        have += ", ..." if len(names) > 12 else ""
        raise InputErrors(
            [
                InputError(
                    f"missing required column '{_ALIASES[key][0]}' (the header has {have})",
                    file=source,
                    line=line,
                    field=_ALIASES[key][0],
                )
                for key in missing
            ]
        )
    return positions, headers, list(ignored)


# ---------------------------------------------------------------------------------------
# Values: the number rules, the defaults, and the checked Catalog


def _plain_number(text: str, what: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise ValueError(f"cannot read {text[:40]!r} as {what}") from None
    if not np.isfinite(value):
        raise ValueError(f"{what} {text[:40]!r} is not a finite number")
    return value


def _number_rule(
    what: str, ok: Callable[[np.ndarray], np.ndarray], rule: str
) -> tuple[Callable[[str], float], Callable[[np.ndarray], np.ndarray]]:
    """A parser for one entry and the matching vectorised check, sharing one rule."""

    def parse_one(text: str) -> float:
        value = _plain_number(text, what)
        if not ok(np.float64(value)):
            raise ValueError(f"{what} {value:g} {rule}")
        return value

    return parse_one, ok


def _parse_epoch(text: str) -> float:
    body = text.strip()
    if body[:1] in ("B", "b"):
        raise ValueError(
            f"Besselian epoch {body[:40]!r} is not accepted; give a Julian one like J2000"
        )
    if body[:1] in ("J", "j"):
        body = body[1:].strip()
    value = _plain_number(body, "epoch")
    if not _epoch_ok(np.float64(value)):
        low, high = EPOCH_RANGE_JYEAR
        raise ValueError(f"epoch {text.strip()[:40]!r} is outside J{low:g}..J{high:g}")
    return value


def _epoch_ok(epoch: np.ndarray) -> np.ndarray:
    return (epoch >= EPOCH_RANGE_JYEAR[0]) & (epoch <= EPOCH_RANGE_JYEAR[1])


_NUMBER_RULES = {
    "pm_ra_masyr": _number_rule(
        "proper motion",
        lambda v: np.abs(v) < MAX_PM_MASYR,
        f"mas/yr is not below {MAX_PM_MASYR:g} in size",
    ),
    "pm_dec_masyr": _number_rule(
        "proper motion",
        lambda v: np.abs(v) < MAX_PM_MASYR,
        f"mas/yr is not below {MAX_PM_MASYR:g} in size",
    ),
    "parallax_mas": _number_rule("parallax", lambda v: v >= 0, "mas is negative"),
    "radial_velocity_kms": _number_rule(
        "radial velocity",
        lambda v: np.abs(v) < SPEED_OF_LIGHT_KMS,
        "km/s is not below the speed of light",
    ),
    "exposure_s": _number_rule("exposure", lambda v: v > 0, "s must be above 0"),
    "priority": _number_rule(
        "priority",
        lambda v: (v == np.floor(v)) & (v >= PRIORITY_RANGE[0]) & (v <= PRIORITY_RANGE[1]),
        f"is not a whole number from {PRIORITY_RANGE[0]} to {PRIORITY_RANGE[1]}",
    ),
    "epoch_jyear": (_parse_epoch, _epoch_ok),
}
_DEFAULTS = {
    "pm_ra_masyr": 0.0,
    "pm_dec_masyr": 0.0,
    "parallax_mas": 0.0,
    "radial_velocity_kms": 0.0,
    "exposure_s": np.nan,
    "priority": float(DEFAULT_PRIORITY),
    "epoch_jyear": DEFAULT_EPOCH_JYEAR,
}


def _text_column(
    values: Sequence[str],
    header: str,
    what: str,
    problems: dict,
    *,
    required: bool,
    trimmed: bool = False,
) -> np.ndarray:
    """Stripped text as an object array, with empty (if required) and unprintable checked.

    ``trimmed`` tells that the texts are known to be printable ASCII without a space at
    either end: there is nothing to strip or to look for.
    """
    texts = values if trimmed else list(map(str.strip, values))
    if not trimmed and _UNPRINTABLE.search("".join(texts)):
        for i, text in enumerate(texts):
            match = _UNPRINTABLE.search(text)
            if match:
                problems.setdefault(i, []).append(
                    (header, f"{what} contains the control character U+{ord(match.group()):04X}")
                )
    if required and not all(texts):
        lengths = np.fromiter(map(len, texts), dtype=np.int64, count=len(texts))
        for i in np.flatnonzero(lengths == 0).tolist():
            problems.setdefault(i, []).append((header, f"empty {what}"))
    return np.fromiter(texts, dtype=object, count=len(texts))


def build_catalog(columns: Columns, *, skip_bad: bool) -> CatalogRead:
    """Parse and check every column into a :class:`CatalogRead`.

    Every bad field is raised together as :class:`InputErrors`, or with ``skip_bad`` the rows
    holding them are dropped and listed in :attr:`CatalogRead.skipped`.
    """
    n = len(columns.where)
    problems = columns.problems
    headers = columns.headers

    def note(errors: dict[int, str], key: str) -> None:
        for i, message in errors.items():
            problems.setdefault(i, []).append((headers[key], message))

    def text(key: str, what: str, required: bool) -> np.ndarray:
        if key not in columns.values:
            return np.full(n, "", dtype=object)
        return _text_column(columns.values[key], headers[key], what, problems,
                            required=required, trimmed=columns.trimmed)

    names = text("name", "name", required=True)
    notes_text = text("notes", "note", required=False)
    decimals = columns.decimals
    ra, ra_errors = parse_ra_column(columns.values["ra_deg"], decimals=decimals.get("ra_deg"))
    dec, dec_errors = parse_dec_column(columns.values["dec_deg"], decimals=decimals.get("dec_deg"))
    note(ra_errors, "ra_deg")
    note(dec_errors, "dec_deg")
    if _ra_looks_like_hours(ra, columns.values["ra_deg"], "ra_deg" in decimals):
        notices.add(f"{columns.source}: RA looks like hours: all values < 24; write 05:35:17 "
                    "or 83.82 (a decimal RA is read as degrees)")
    ra_empty = np.isnan(ra)
    ra_empty[list(ra_errors)] = False
    dec_empty = np.isnan(dec)
    dec_empty[list(dec_errors)] = False
    for i in np.flatnonzero(ra_empty & ~np.isnan(dec)).tolist():
        problems.setdefault(i, []).append(
            (
                headers["ra_deg"],
                "RA is empty but Dec is given; give both, or neither to look the name up",
            )
        )
    for i in np.flatnonzero(dec_empty & ~np.isnan(ra)).tolist():
        problems.setdefault(i, []).append(
            (
                headers["dec_deg"],
                "Dec is empty but RA is given; give both, or neither to look the name up",
            )
        )

    numbers: dict[str, np.ndarray] = {}
    for key, (parse_one, ok) in _NUMBER_RULES.items():
        if key not in columns.values:
            numbers[key] = np.full(n, _DEFAULTS[key])
            continue
        values, errors = parse_column(
            columns.values[key], parse_one, ok, decimals=decimals.get(key)
        )
        note(errors, key)
        empty = np.isnan(values)
        empty[list(errors)] = False
        values[empty] = _DEFAULTS[key]
        numbers[key] = values

    skipped: list[InputError] = []
    keep = np.ones(n, dtype=bool)
    if problems:
        rows = sorted(problems)
        if not skip_bad:
            raise InputErrors([_error(columns, i, m, f) for i in rows for f, m in problems[i]])
        skipped = [_row_summary(columns, i, problems[i]) for i in rows]
        keep[list(problems)] = False

    priority = np.where(np.isnan(numbers["priority"]), DEFAULT_PRIORITY, numbers["priority"])
    catalog = Catalog(
        name=names,
        ra_deg=ra,
        dec_deg=dec,
        pm_ra_masyr=numbers["pm_ra_masyr"],
        pm_dec_masyr=numbers["pm_dec_masyr"],
        epoch_jyear=numbers["epoch_jyear"],
        parallax_mas=numbers["parallax_mas"],
        radial_velocity_kms=numbers["radial_velocity_kms"],
        priority=priority.astype(np.int64),
        exposure_s=numbers["exposure_s"],
        notes=notes_text,
        line=np.asarray(columns.where, dtype=np.int64),
        source=columns.source,
        timed={key: _raw(columns, key) for key in TIMED_FIELDS if key in columns.values},
    )
    if not keep.all():
        catalog = catalog.subset(np.flatnonzero(keep))
    names_kept = catalog.name.tolist()
    duplicates = []
    if len(set(names_kept)) < len(names_kept):
        duplicates = [name for name, count in Counter(names_kept).items() if count > 1]
    return CatalogRead(catalog, skipped, duplicates, list(columns.ignored))


def _raw(columns: Columns, key: str) -> np.ndarray:
    """A column as read (numbers where the reader made them, else text), one entry a row."""
    if key in columns.decimals:
        return columns.decimals[key]
    values = columns.values[key]
    texts = values.texts() if isinstance(values, delimited.Cells) else list(values)
    return np.asarray(texts, dtype=object)


def _ra_looks_like_hours(ra_deg: np.ndarray, cells: Sequence[object], plain: bool) -> bool:
    """Whether decimal RAs were most likely written in hours: at least
    :data:`RA_HOURS_MIN_ROWS` rows give an RA, every one is below 24, one at least is 1 or
    more, and every RA is a plain decimal number (``plain``: known to be so; sexagesimal RA
    is hours by definition)."""
    given = ra_deg[np.isfinite(ra_deg)]
    if len(given) < RA_HOURS_MIN_ROWS or given.max() >= 24.0 or given.max() < 1.0:
        return False
    if plain or (isinstance(cells, np.ndarray) and cells.dtype.kind == "f"):
        return True
    return _SEXAGESIMAL_MARK.search("\n".join(str(c).strip() for c in cells)) is None


def _error(columns: Columns, row: int, message: str, column: str | None) -> InputError:
    """An error at a row: its text line, or for FITS/VOTable tables its row number."""
    where = int(columns.where[row])
    if columns.in_lines:
        return InputError(message, file=columns.source, line=where, field=column)
    return InputError(f"row {where}: {message}", file=columns.source, field=column)


def _row_summary(columns: Columns, row: int, found: list[tuple[str | None, str]]) -> InputError:
    """One error for a skipped row, keeping every problem found in it."""
    if len(found) == 1:
        return _error(columns, row, found[0][1], found[0][0])
    message = "; ".join(f"field '{f}': {m}" if f else m for f, m in found)
    return _error(columns, row, message, None)
