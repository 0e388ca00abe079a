"""Target lists: reading a catalogue file into a :class:`Catalog` of numpy columns.

Formats are chosen by the file extension:

- ``.csv`` (comma), ``.tsv`` (tab), ``.txt`` (tab if the header line has a tab, else comma),
  UTF-8, read as the standard :mod:`csv` module reads them (fields may be quoted).  Lines
  starting with ``#``, blank lines and lines of separators only are skipped; line numbers in
  messages are the lines of the file as an editor shows them.  A row with fewer fields than
  the header has its missing trailing fields empty; a row with more is an error.
- ``.ecsv``, ``.vot`` / ``.votable`` / ``.xml``, ``.fits`` / ``.fit`` / ``.fts``, read with
  astropy's table readers.  Numeric RA/Dec columns with an angle unit (``deg``,
  ``hourangle``, ...) are converted by that unit; numeric columns without a unit are taken in
  the units below.  String columns go through the same parsers as CSV text.

Columns (header names are matched without case and surrounding spaces; the first name of
each row is the documented one, the others are accepted aliases):

=========================  ========================================  ============================
field                      header names                              empty means
=========================  ========================================  ============================
``name`` (required)        name, target                              an error
``ra_deg`` (required)      ra, ra_deg                                look the name up
``dec_deg`` (required)     dec, dec_deg                              look the name up
``pm_ra_masyr``            pm_ra, pmra, pm_ra_masyr, pm_ra_cosdec    0 (μα·cos δ, mas/yr)
``pm_dec_masyr``           pm_dec, pmdec, pm_dec_masyr               0 (mas/yr)
``epoch_jyear``            epoch, epoch_jyear                        2000.0 (J2000, 2015.5)
``parallax_mas``           parallax, plx, parallax_mas               0 (mas)
``radial_velocity_kms``    radial_velocity, rv, radial_velocity_kms  0 (km/s)
``priority``               priority                                  1 (higher: more important)
``exposure_s``             exposure, exp, exposure_s                 NaN (the command's default)
``notes``                  notes, note                               ""
=========================  ========================================  ============================

RA is sexagesimal hours (``05:35:17.3``) or decimal degrees; Dec is sexagesimal or decimal
degrees (see :mod:`skyplan.inputs.angles`).  A row giving a name but neither RA nor Dec is kept with
NaN coordinates, to be resolved by name later; a row giving only one of them is an error.
Columns with other names are ignored and listed in :attr:`CatalogRead.ignored_columns`.
Checks: |proper motion| below 100000 mas/yr, parallax >= 0, |radial velocity| below the
speed of light, exposure > 0, priority a whole number from 0 to 1000000, Julian epochs from
J1000 to J3000 (``B``-prefixed Besselian epochs are refused), fields at most 1000 characters,
no control characters in names and notes; at most 5,000,000 rows (the limits are
constants in :mod:`skyplan.inputs.delimited`).

Every bad field is collected as an :class:`~skyplan.errors.InputError` naming the file, line
and column; they are raised together as :class:`~skyplan.errors.InputErrors`, or, with
``skip_bad=True``, the rows they are in are dropped and listed in
:attr:`CatalogRead.skipped`.  The reader only ever parses data: nothing in a file is
evaluated, and XML with a DOCTYPE or entity declaration is refused before parsing.
"""

from __future__ import annotations

import io
import re
import warnings
from collections import Counter
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from skyplan import notices
from skyplan.errors import InputError, InputErrors
from skyplan.inputs import delimited
from skyplan.inputs.angles import parse_column, parse_dec_column, parse_ra_column

MAX_PM_MASYR = 100_000.0  # |proper motion| must be below this
SPEED_OF_LIGHT_KMS = 299_792.458  # |radial velocity| must be below this (SI definition)
EPOCH_RANGE_JYEAR = (1000.0, 3000.0)  # accepted Julian epoch years, inclusive
PRIORITY_RANGE = (0, 1_000_000)  # accepted priorities, inclusive; higher = more important
DEFAULT_PRIORITY = 1
DEFAULT_EPOCH_JYEAR = 2000.0

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
}
_FIELD_OF_HEADER = {alias: key for key, aliases in _ALIASES.items() for alias in aliases}
_REQUIRED = ("name", "ra_deg", "dec_deg")
_TEXT_FIELDS = ("name", "notes")

# Units of numeric columns in astropy tables (astropy unit strings).
_UNITS = {
    "ra_deg": "deg",
    "dec_deg": "deg",
    "pm_ra_masyr": "mas / yr",
    "pm_dec_masyr": "mas / yr",
    "parallax_mas": "mas",
    "radial_velocity_kms": "km / s",
    "exposure_s": "s",
}

# Characters that must not reach a terminal inside a name or note: C0/C1 controls (newline
# and tab included), line/paragraph separators and bidirectional overrides.
_UNPRINTABLE = re.compile("[\x00-\x1f\x7f-\x9f\u2028\u2029\u202a-\u202e\u2066-\u2069]")

_DELIMITED = {".csv": ",", ".tsv": "\t", ".txt": None}
_ASTROPY = {
    ".ecsv": ("ascii.ecsv", "ECSV"),
    ".vot": ("votable", "VOTable"),
    ".votable": ("votable", "VOTable"),
    ".xml": ("votable", "VOTable"),
    ".fits": ("fits", "FITS"),
    ".fit": ("fits", "FITS"),
    ".fts": ("fits", "FITS"),
}

_ARRAY_FIELDS = (
    "name",
    "ra_deg",
    "dec_deg",
    "pm_ra_masyr",
    "pm_dec_masyr",
    "epoch_jyear",
    "parallax_mas",
    "radial_velocity_kms",
    "priority",
    "exposure_s",
    "notes",
    "line",
)


@dataclass
class Catalog:
    """Targets as equal-length numpy columns.

    ``ra_deg``/``dec_deg`` are NaN for rows that give a name only.  ``priority``: higher
    numbers are more important (default 1).  ``exposure_s``: NaN means the command's
    default.  ``line``: where the row is in ``source`` — the 1-based line of a text file
    (CSV, TSV, TXT, ECSV), or the 1-based row number of a FITS or VOTable table.
    """

    name: np.ndarray  # object array of str
    ra_deg: np.ndarray
    dec_deg: np.ndarray
    pm_ra_masyr: np.ndarray  # μα·cos δ
    pm_dec_masyr: np.ndarray
    epoch_jyear: np.ndarray
    parallax_mas: np.ndarray
    radial_velocity_kms: np.ndarray
    priority: np.ndarray  # int64
    exposure_s: np.ndarray
    notes: np.ndarray  # object array of str
    line: np.ndarray  # int64
    source: str = ""

    def __post_init__(self) -> None:
        lengths = {f: len(getattr(self, f)) for f in _ARRAY_FIELDS}
        if len(set(lengths.values())) > 1:
            raise ValueError(f"catalogue columns differ in length: {lengths}")

    def __len__(self) -> int:
        return len(self.name)

    def subset(self, index: np.ndarray | Sequence[int]) -> Catalog:
        """The rows picked by an integer index array or a boolean mask, in that order."""
        picked = np.asarray(index)
        if picked.ndim != 1:
            raise ValueError("subset needs a one-dimensional index or mask")
        if picked.size == 0:
            picked = picked.astype(np.intp)
        return Catalog(**{f: getattr(self, f)[picked] for f in _ARRAY_FIELDS}, source=self.source)

    @property
    def needs_lookup(self) -> np.ndarray:
        """True for rows whose position must be found from the name (RA or Dec is NaN)."""
        return np.isnan(self.ra_deg) | np.isnan(self.dec_deg)


@dataclass
class CatalogRead:
    """A catalogue as read, with what the reader noticed on the way."""

    catalog: Catalog
    skipped: list[InputError] = field(default_factory=list)  # one per dropped row
    duplicates: list[str] = field(default_factory=list)  # names given more than once
    ignored_columns: list[str] = field(default_factory=list)  # header names not used


@dataclass
class _Columns:
    """What a format reader hands on: raw column values by field, before any checking."""

    source: str
    headers: dict[str, str]  # field -> column name as written in the file
    values: dict[str, Sequence[object]]  # field -> text (or numbers from typed tables)
    where: np.ndarray  # line (text files) or row number (tables) of each row
    in_lines: bool  # whether ``where`` holds text lines
    ignored: list[str]
    problems: dict[int, list[tuple[str | None, str]]]  # row -> [(column, message)]
    trimmed: bool = False  # every text is printable ASCII without a space at either end
    decimals: dict[str, np.ndarray] = field(default_factory=dict)  # see delimited.Cells


def read_catalog(path: str | Path, *, skip_bad: bool = False) -> CatalogRead:
    """Read a target list; the format follows the extension (see the module docstring).

    Raises :class:`InputError` for a file that cannot be read, lacks a required column or is
    beyond the size limits, and :class:`InputErrors` listing every bad field unless
    ``skip_bad`` is set, in which case the rows with bad fields are dropped and listed in
    :attr:`CatalogRead.skipped`.
    """
    path = Path(path)
    source = str(path)
    suffix = path.suffix.lower()
    if suffix in _DELIMITED:
        columns = _read_delimited(path, source, _DELIMITED[suffix])
    elif suffix in _ASTROPY:
        columns = _read_table(path, source, *_ASTROPY[suffix])
    else:
        known = ", ".join(sorted([*_DELIMITED, *_ASTROPY]))
        raise InputError(
            f"unknown catalogue format '{suffix or '(no extension)'}'; use one of {known}",
            file=source,
        )
    return _build(columns, skip_bad=skip_bad)


# ---------------------------------------------------------------------------------------
# Text formats


def _read_delimited(path: Path, source: str, delimiter: str | None) -> _Columns:
    return _columns_from_grid(source, delimited.read_grid(path, source, delimiter))



def _too_long(size: int) -> str:
    return f"field is {size} characters long; at most {delimited.MAX_FIELD_CHARS} are read"


def _map_headers(
    source: str, names: Sequence[str], line: int | None
) -> tuple[dict[str, int], dict[str, str], list[str]]:
    """Column positions by field, the header text by field, and the ignored header names."""
    positions: dict[str, int] = {}
    headers: dict[str, str] = {}
    ignored: list[str] = []
    for position, raw in enumerate(names):
        key = _FIELD_OF_HEADER.get(raw.strip().lower())
        if key is None:
            label = raw.strip() or f"(unnamed column {position + 1})"
            if label not in ignored:
                ignored.append(label)
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
    missing = [key for key in _REQUIRED if key not in positions]
    if missing:
        have = ", ".join(f"'{n.strip()}'" for n in names) or "nothing"
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
    return positions, headers, ignored


def _columns_from_grid(source: str, grid: delimited.Grid) -> _Columns:
    """Map the header and check field sizes."""
    positions, headers, ignored = _map_headers(source, grid.header, grid.header_line)
    problems = grid.problems
    for i in grid.wide_rows.tolist():
        for name, column in zip(grid.header, grid.columns, strict=True):
            if len(column[i]) > delimited.MAX_FIELD_CHARS:
                problems.setdefault(i, []).append((name.strip(), _too_long(len(column[i]))))
    values: dict[str, Sequence[str]] = {}
    decimals: dict[str, np.ndarray] = {}
    for key, pos in positions.items():
        column = grid.columns[pos]
        if isinstance(column, delimited.Cells):
            numbers = None
            if key not in _TEXT_FIELDS:
                numbers = column.numbers()
            if numbers is None:
                column = column.texts()
            else:  # the text of a cell is made only if it is read again
                decimals[key] = numbers
        values[key] = column
    return _Columns(
        source, headers, values, grid.where, True, ignored, problems, grid.trimmed, decimals
    )


# ---------------------------------------------------------------------------------------
# Formats read by astropy


class _Prolog(Exception):
    """Raised by the pre-scan of an XML file: ``refused`` tells whether a DTD was met."""

    def __init__(self, refused: bool) -> None:
        self.refused = refused


def _refuse_xml_declarations(path: Path, source: str) -> None:
    """Refuse XML whose prolog holds a document type declaration (where entities live).

    The file is pre-scanned with expat up to its first element, so the check holds whatever
    the encoding (UTF-8, UTF-16 with its byte-order mark) and however long the comments
    before it; a DOCTYPE may not follow the root element (XML 1.0, section 2.8).
    """
    from xml.parsers import expat

    def met_declaration(*_args) -> None:
        raise _Prolog(refused=True)

    def met_root(*_args) -> None:
        raise _Prolog(refused=False)

    parser = expat.ParserCreate()
    parser.StartDoctypeDeclHandler = met_declaration
    parser.EntityDeclHandler = met_declaration
    parser.ExternalEntityRefHandler = met_declaration
    parser.StartElementHandler = met_root
    try:
        with path.open("rb") as handle:
            parser.ParseFile(handle)
    except OSError as exc:
        raise InputError(f"cannot read the file: {exc.strerror or exc}", file=source) from exc
    except _Prolog as stop:
        if stop.refused:
            raise InputError(
                "XML with a DOCTYPE or ENTITY declaration is not read; remove the declaration",
                file=source,
            ) from None
    except expat.ExpatError as exc:
        raise InputError(f"not well-formed XML ({expat.errors.messages[exc.code]})",
                         file=source, line=exc.lineno) from None


def _ecsv_data_lines(path: Path, n_rows: int) -> np.ndarray | None:
    """Lines of the data rows of an ECSV file, or None if rows and lines do not pair up."""
    try:
        text = path.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError):
        return None
    numbers = [
        n
        for n, line in enumerate(io.StringIO(text, newline=""), start=1)
        if line.strip() and not line.lstrip().startswith("#")
    ]
    data = numbers[1:]  # the first is the column-name line
    return np.array(data, dtype=np.int64) if len(data) == n_rows else None


def _column_values(
    column: Any, key: str, source: str, header: str, problems: dict
) -> Sequence[object]:
    """Values of one astropy column: floats (NaN where masked) or text ("" where masked).

    Byte strings that are not UTF-8 are recorded in ``problems``.
    """
    from astropy import units as u

    if column.ndim != 1:
        raise InputError(
            "column holds several values per row; one is expected", file=source, field=header
        )
    mask = np.ma.getmaskarray(column)
    kind = column.dtype.kind
    if kind in "iuf" and key not in ("name", "notes"):
        numbers = np.array(np.ma.getdata(column, subok=False), dtype=np.float64)
        numbers[mask] = np.nan
        unit = getattr(column, "unit", None)
        if unit is not None and key in _UNITS:
            try:
                numbers *= unit.to(u.Unit(_UNITS[key]))
            except (u.UnitsError, ValueError, TypeError):
                raise InputError(
                    f"unit '{unit}' cannot be converted to {_UNITS[key]}",
                    file=source,
                    field=header,
                ) from None
        return numbers
    texts = []
    for i, (value, masked) in enumerate(
        zip(np.ma.getdata(column, subok=False).tolist(), mask.tolist(), strict=True)
    ):
        if masked:
            texts.append("")
        elif isinstance(value, bytes):
            try:
                texts.append(value.decode("utf-8"))
            except UnicodeDecodeError:
                problems.setdefault(i, []).append((header, "text is not UTF-8"))
                texts.append(value.decode("utf-8", errors="replace"))  # the row is rejected
        else:
            texts.append(str(value))
    return texts


def _read_table(path: Path, source: str, fmt: str, label: str) -> _Columns:
    if not path.is_file():
        raise InputError("cannot read the file: not found or not a regular file", file=source)
    if fmt == "votable":
        _refuse_xml_declarations(path, source)
    from astropy.table import Table

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            table = Table.read(path, format=fmt)
        except Exception as exc:  # noqa: BLE001 -- astropy raises many types on bad files
            message = " ".join(str(exc).split())[:200] or type(exc).__name__
            raise InputError(f"cannot read as {label}: {message}", file=source) from None
    for warning in caught[:3]:
        notices.add(f"{source}: {label} reader: {' '.join(str(warning.message).split())[:160]}")
    if len(table) > delimited.MAX_ROWS:
        raise InputError(f"more than {delimited.MAX_ROWS} rows; split the catalogue",
                         file=source)
    positions, headers, ignored = _map_headers(source, table.colnames, None)
    problems: dict[int, list[tuple[str | None, str]]] = {}
    values = {
        key: _column_values(table.columns[pos], key, source, headers[key], problems)
        for key, pos in positions.items()
    }
    lines = _ecsv_data_lines(path, len(table)) if fmt == "ascii.ecsv" else None
    if lines is None:
        where, in_lines = np.arange(1, len(table) + 1, dtype=np.int64), False
    else:
        where, in_lines = lines, True
    for key in ("name", "notes"):
        for i, text in enumerate(values.get(key, ())):
            if len(str(text)) > delimited.MAX_FIELD_CHARS:
                problems.setdefault(i, []).append((headers[key], _too_long(len(str(text)))))
    return _Columns(source, headers, values, where, in_lines, ignored, problems)


# ---------------------------------------------------------------------------------------
# From raw columns to a checked Catalog


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


def _build(columns: _Columns, *, skip_bad: bool) -> CatalogRead:
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
    )
    if not keep.all():
        catalog = catalog.subset(np.flatnonzero(keep))
    names_kept = catalog.name.tolist()
    duplicates = []
    if len(set(names_kept)) < len(names_kept):
        duplicates = [name for name, count in Counter(names_kept).items() if count > 1]
    return CatalogRead(catalog, skipped, duplicates, list(columns.ignored))


def _error(columns: _Columns, row: int, message: str, column: str | None) -> InputError:
    """An error at a row: its text line, or for FITS/VOTable tables its row number."""
    where = int(columns.where[row])
    if columns.in_lines:
        return InputError(message, file=columns.source, line=where, field=column)
    return InputError(f"row {where}: {message}", file=columns.source, field=column)


def _row_summary(columns: _Columns, row: int, found: list[tuple[str | None, str]]) -> InputError:
    """One error for a skipped row, keeping every problem found in it."""
    if len(found) == 1:
        return _error(columns, row, found[0][1], found[0][0])
    message = "; ".join(f"field '{f}': {m}" if f else m for f, m in found)
    return _error(columns, row, message, None)
