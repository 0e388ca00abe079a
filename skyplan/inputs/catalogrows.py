"""From raw catalogue columns to a checked :class:`~skyplan.inputs.catalogtypes.Catalog`.

Holds :data:`COLUMNS`, the one table of catalogue columns (field, header names, kind,
default, the rule of its numbers), the mapping of a header (:func:`map_headers`), the checks
of names and notes, and :func:`build_catalog`, which parses every column at once and
collects each bad field as an :class:`~skyplan.errors.InputError` naming file, line (or
table row) and column.  Texts stay numpy ``StringDType`` arrays and a column the file does
not have is its default broadcast over the rows, so that a catalogue costs memory in
proportion to what it holds (docs/performance.md).

A new optional column is one :class:`Column` in :data:`COLUMNS` (numbers: a ``rule``, made
with :func:`_number_rule`, and a default; text: ``kind="text"``, ``what`` for messages)
and one field of the same key in :class:`~skyplan.inputs.catalogtypes.Catalog`; readers,
checks, defaults and ``--skip-bad-rows`` follow from them.  Document it in
:mod:`skyplan.inputs.catalog`'s table.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
from numpy.dtypes import StringDType

from skyplan import notices
from skyplan.errors import InputError, InputErrors
from skyplan.inputs import delimited, readfile
from skyplan.inputs.angles import parse_column, parse_dec_column, parse_ra_column
from skyplan.inputs.catalogtypes import Catalog, CatalogRead, Columns, NumberCells
from skyplan.text import UNPRINTABLE, quoted

MAX_PM_MASYR = 100_000.0  # |proper motion| must be below this
SPEED_OF_LIGHT_KMS = 299_792.458  # |radial velocity| must be below this (SI definition)
EPOCH_RANGE_JYEAR = (1000.0, 3000.0)  # accepted Julian epoch years, inclusive
PRIORITY_RANGE = (0, 1_000_000)  # accepted priorities, inclusive; higher = more important
DEFAULT_PRIORITY = 1
DEFAULT_EPOCH_JYEAR = 2000.0
RA_HOURS_MIN_ROWS = 3  # fewer RAs never raise the "RA looks like hours" notice
_SEXAGESIMAL_MARK = re.compile(r"[^0-9.eE+\-\n]")  # in RA text: not a plain decimal

_REQUIRED = ("name", "ra_deg", "dec_deg")  # columns a catalogue must have

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


def _ra_ok(ra_deg: np.ndarray) -> np.ndarray:
    return (ra_deg >= 0.0) & (ra_deg < 360.0)  # as skyplan.inputs.angles accepts RA


def _dec_ok(dec_deg: np.ndarray) -> np.ndarray:
    return (dec_deg >= -90.0) & (dec_deg <= 90.0)  # as skyplan.inputs.angles accepts Dec


def _pm_rule() -> tuple[Callable[[str], float], Callable[[np.ndarray], np.ndarray]]:
    return _number_rule("proper motion", lambda v: np.abs(v) < MAX_PM_MASYR,
                        f"mas/yr is not below {MAX_PM_MASYR:g} in size")


@dataclass(frozen=True)
class Column:
    """One catalogue column: the :class:`Catalog` field it fills, its header names (the
    first is the documented one), its kind (``text``; ``angle``, read by the RA and Dec
    parsers; ``number``, read by ``rule``), the value of an empty or missing field (for a
    text, whether it may be empty), and the numbers' type."""

    key: str
    aliases: tuple[str, ...]
    kind: str = "number"
    default: object = np.nan
    rule: tuple[Callable[[str], float], Callable[[np.ndarray], np.ndarray]] | None = None
    dtype: type = np.float64
    what: str = ""  # a text column's name in messages


# Every column a catalogue may have; a new optional column is one entry here and one field
# of Catalog (catalogtypes.py) of the same key.
COLUMNS = (
    Column("name", ("name", "target"), "text", default=None, what="name"),
    Column("ra_deg", ("ra", "ra_deg"), "angle", rule=(str, _ra_ok)),
    Column("dec_deg", ("dec", "dec_deg"), "angle", rule=(str, _dec_ok)),
    Column("pm_ra_masyr", ("pm_ra", "pmra", "pm_ra_masyr", "pm_ra_cosdec"), default=0.0,
           rule=_pm_rule()),
    Column("pm_dec_masyr", ("pm_dec", "pmdec", "pm_dec_masyr"), default=0.0, rule=_pm_rule()),
    Column("epoch_jyear", ("epoch", "epoch_jyear"), default=DEFAULT_EPOCH_JYEAR,
           rule=(_parse_epoch, _epoch_ok)),
    Column("parallax_mas", ("parallax", "plx", "parallax_mas"), default=0.0,
           rule=_number_rule("parallax", lambda v: v >= 0, "mas is negative")),
    Column("radial_velocity_kms", ("radial_velocity", "rv", "radial_velocity_kms"),
           default=0.0, rule=_number_rule("radial velocity",
                                          lambda v: np.abs(v) < SPEED_OF_LIGHT_KMS,
                                          "km/s is not below the speed of light")),
    Column("priority", ("priority",), default=float(DEFAULT_PRIORITY), dtype=np.int64,
           rule=_number_rule("priority", lambda v: (v == np.floor(v))
                             & (v >= PRIORITY_RANGE[0]) & (v <= PRIORITY_RANGE[1]),
                             f"is not a whole number from {PRIORITY_RANGE[0]} to "
                             f"{PRIORITY_RANGE[1]}")),
    Column("exposure_s", ("exposure", "exp", "exposure_s"),
           rule=_number_rule("exposure", lambda v: v > 0, "s must be above 0")),
    Column("notes", ("notes", "note"), "text", default="", what="note"),
)
# The ephemeris columns of time-critical targets, under their own names: read here as
# numbers or text, checked together by skyplan.inputs.ephemerides (Catalog.timed).
TIMED_NUMBERS = ("event_t0", "period_d", "duration_h", "event_t0_err_d", "period_err_d",
                 "phase_min", "phase_max")
TIMED_TEXTS = ("event_t0_scale", "fixed_start", "fixed_window")
TIMED_FIELDS = TIMED_NUMBERS + TIMED_TEXTS
_ALIASES = {c.key: c.aliases for c in COLUMNS} | {key: (key,) for key in TIMED_FIELDS}
_FIELD_OF_HEADER = {alias: key for key, aliases in _ALIASES.items() for alias in aliases}
TEXT_FIELDS = tuple(c.key for c in COLUMNS if c.kind == "text") + TIMED_TEXTS
# the vectorised check of each numeric column: a reader keeps the text of cells failing it
NUMBER_CHECKS = {c.key: c.rule[1] for c in COLUMNS if c.rule is not None} | {
    key: np.isfinite for key in TIMED_NUMBERS}


TEXT_BLOCK = 100_000  # texts joined at a time to look for unprintable characters


def _text_column(
    values: Sequence[str],
    header: str,
    what: str,
    problems: dict,
    *,
    required: bool,
    trimmed: bool = False,
) -> np.ndarray:
    """Stripped text as a numpy ``StringDType`` array, with empty (if required) and
    unprintable checked.

    ``trimmed`` tells that the texts are known to be printable ASCII without a space at
    either end: there is nothing to strip or to look for.
    """
    texts = values
    if not (isinstance(values, np.ndarray) and values.dtype.kind == "T"):
        texts = np.array(values, dtype=StringDType())
    if not trimmed:
        texts = np.strings.strip(texts)
        for start in range(0, len(texts), TEXT_BLOCK):
            block = texts[start : start + TEXT_BLOCK].tolist()
            if not _UNPRINTABLE.search("".join(block)):
                continue
            for i, text in enumerate(block, start):
                match = _UNPRINTABLE.search(text)
                if match:
                    problems.setdefault(i, []).append(
                        (header, f"{what} contains the control character "
                                 f"U+{ord(match.group()):04X}"))
    if required:
        for i in np.flatnonzero(np.strings.str_len(texts) == 0).tolist():
            problems.setdefault(i, []).append((header, f"empty {what}"))
    return texts


def _missing(column: Column, n: int) -> np.ndarray:
    """The column of a catalogue without it: its default in every row (one value, shown n
    times without n copies; subsets make real arrays)."""
    if column.kind == "text":
        return np.broadcast_to(np.array(column.default, dtype=StringDType()), (n,))
    return np.broadcast_to(np.array(column.default).astype(column.dtype), (n,))


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

    fields: dict[str, np.ndarray] = {}
    for column in COLUMNS:
        if column.kind == "text" and column.key in columns.values:
            fields[column.key] = _text_column(
                columns.values.pop(column.key), headers[column.key], column.what, problems,
                required=column.default is None, trimmed=columns.trimmed)
        elif column.kind == "text":
            fields[column.key] = _missing(column, n)
    fields["ra_deg"], fields["dec_deg"] = _angles(columns, note)
    timed = _timed(columns, note, problems)
    decimals = columns.decimals
    for column in COLUMNS:
        if column.kind != "number":
            continue
        key = column.key
        if key not in columns.values:
            fields[key] = _missing(column, n)
            continue
        parse_one, ok = column.rule  # type: ignore[misc]
        values, errors = parse_column(columns.values.pop(key), parse_one, ok,
                                      decimals=decimals.pop(key, None))
        note(errors, key)
        empty = np.isnan(values)
        empty[list(errors)] = False
        values[empty] = column.default
        if column.dtype is not np.float64:  # rows with errors are NaN: dropped or refused
            values = np.where(np.isnan(values), column.default, values).astype(column.dtype)
        fields[key] = values

    skipped: list[InputError] = []
    keep = np.ones(n, dtype=bool)
    if problems:
        rows = sorted(problems)
        if not skip_bad:
            raise InputErrors([_error(columns, i, m, f) for i in rows for f, m in problems[i]])
        skipped = [_row_summary(columns, i, problems[i]) for i in rows]
        keep[list(problems)] = False

    catalog = Catalog(**fields, line=np.asarray(columns.where, dtype=np.int64),
                      source=columns.source, timed=timed)
    if not keep.all():
        catalog = catalog.subset(np.flatnonzero(keep))
    return CatalogRead(catalog, skipped, _duplicates(catalog.name), list(columns.ignored))


def _timed(columns: Columns, note: Callable, problems: dict) -> dict[str, np.ndarray]:
    """The ephemeris columns the file has: numbers (NaN where empty; an entry that is not a
    number is noted) and texts, for :mod:`skyplan.inputs.ephemerides` to check together."""
    out: dict[str, np.ndarray] = {}
    for key in TIMED_NUMBERS:
        if key in columns.values:
            values, errors = parse_column(
                columns.values.pop(key), _number_rule(key, np.isfinite, "is not finite")[0],
                np.isfinite, decimals=columns.decimals.pop(key, None))
            note(errors, key)
            out[key] = values
    for key in TIMED_TEXTS:
        if key in columns.values:
            out[key] = _text_column(columns.values.pop(key), columns.headers[key], key,
                                    problems, required=False, trimmed=columns.trimmed)
    return out


def _angles(columns: Columns, note: Callable) -> tuple[np.ndarray, np.ndarray]:
    """RA and Dec in degrees (NaN where empty or bad), with their problems noted."""
    decimals = columns.decimals
    ra_cells = columns.values.pop("ra_deg")
    ra, ra_errors = _in_blocks(parse_ra_column, ra_cells, decimals.pop("ra_deg", None))
    dec, dec_errors = _in_blocks(parse_dec_column, columns.values.pop("dec_deg"),
                                 decimals.pop("dec_deg", None))
    note(ra_errors, "ra_deg")
    note(dec_errors, "dec_deg")
    if _ra_looks_like_hours(ra, ra_cells):
        notices.add(f"{columns.source}: RA looks like hours: all values < 24; write 05:35:17 "
                    "or 83.82 (a decimal RA is read as degrees)")
    ra_empty = np.isnan(ra)
    ra_empty[list(ra_errors)] = False
    dec_empty = np.isnan(dec)
    dec_empty[list(dec_errors)] = False
    note({i: "RA is empty but Dec is given; give both, or neither to look the name up"
          for i in np.flatnonzero(ra_empty & ~np.isnan(dec)).tolist()}, "ra_deg")
    note({i: "Dec is empty but RA is given; give both, or neither to look the name up"
          for i in np.flatnonzero(dec_empty & ~np.isnan(ra)).tolist()}, "dec_deg")
    return ra, dec


ANGLE_BLOCK = 100_000  # angles given as text parsed at a time


def _in_blocks(parse: Callable, cells: Sequence[object], decimals: np.ndarray | None
               ) -> tuple[np.ndarray, dict[int, str]]:
    """``parse(cells, decimals=...)`` over a column of text :data:`ANGLE_BLOCK` rows at a
    time, so that the Python strings its parsers make (sexagesimal text) are held for one
    block only; each entry is read as it is read in the whole column."""
    if not isinstance(cells, np.ndarray) or cells.dtype.kind != "T" or decimals is not None:
        return parse(cells, decimals=decimals)
    values = np.empty(len(cells))
    errors: dict[int, str] = {}
    for start in range(0, len(cells), ANGLE_BLOCK):
        part, found = parse(cells[start : start + ANGLE_BLOCK])
        values[start : start + len(part)] = part
        errors.update((start + i, message) for i, message in found.items())
        del part, found
        readfile.give_back_freed()
    return values, errors


def _duplicates(names: np.ndarray) -> list[str]:
    """The names given more than once, in the order they first appear (found by sorting,
    without a Python object per name)."""
    if len(names) < 2:
        return []
    ordered = np.sort(names)
    same = ordered[1:] == ordered[:-1]
    if not same.any():
        return []
    repeated = np.unique(ordered[1:][same])
    return list(dict.fromkeys(names[np.isin(names, repeated)].tolist()))


def _ra_looks_like_hours(ra_deg: np.ndarray, cells: Sequence[object]) -> bool:
    """Whether decimal RAs were most likely written in hours: at least
    :data:`RA_HOURS_MIN_ROWS` rows give an RA, every one is below 24, one at least is 1 or
    more, and every RA is a plain decimal number (sexagesimal RA is hours by definition).
    Cells read as numbers at once are plain decimals; only the others' text is looked at."""
    given = ra_deg[np.isfinite(ra_deg)]
    if len(given) < RA_HOURS_MIN_ROWS or given.max() >= 24.0 or given.max() < 1.0:
        return False
    if isinstance(cells, np.ndarray) and cells.dtype.kind == "f":
        return True
    if isinstance(cells, NumberCells):
        cells = cells.texts
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
