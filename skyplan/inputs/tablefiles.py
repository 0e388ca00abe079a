"""Catalogue files read by astropy's table readers: ECSV, VOTable and FITS.

Holds the formats by extension, the units numeric columns are converted to, the refusal of
XML with a DOCTYPE or entity declaration (checked before astropy parses the file), the
pairing of ECSV data rows with their text lines (so messages name lines as an editor shows
them), and :func:`read_table`, which turns a table into
:class:`~skyplan.inputs.catalogtypes.Columns` for :mod:`skyplan.inputs.catalogrows` to check.

Memory (docs/errors.md, "Input limits"): a FITS file is mapped, not read, so that only the
columns used are loaded; an ECSV file of more than :data:`ECSV_MAX_CELLS` cells and a
VOTable of more than :data:`VOTABLE_MAX_BYTES` are refused before astropy parses them;
fixed-width texts become ``StringDType`` columns without a Python string per row.
"""

from __future__ import annotations

import io
import warnings
from collections.abc import Sequence
from typing import Any, BinaryIO

import numpy as np
from numpy.dtypes import StringDType

from skyplan import notices
from skyplan.errors import InputError
from skyplan.inputs import delimited
from skyplan.inputs.catalogrows import map_headers, too_long
from skyplan.inputs.catalogtypes import Columns

ASTROPY_FORMATS = {
    ".ecsv": ("ascii.ecsv", "ECSV"),
    ".vot": ("votable", "VOTable"),
    ".votable": ("votable", "VOTable"),
    ".xml": ("votable", "VOTable"),
    ".fits": ("fits", "FITS"),
    ".fit": ("fits", "FITS"),
    ".fts": ("fits", "FITS"),
}

# astropy's readers hold much more than the file for ECSV (a Python object per cell, about
# 200 bytes) and VOTable (the file's bytes beside the parsed table): the largest each reads
# within the memory rule of docs/errors.md ("Input limits"), measured in docs/performance.md.
ECSV_MAX_CELLS = 500_000  # data lines times declared columns
VOTABLE_MAX_BYTES = 80 << 20

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


class _Prolog(Exception):
    """Raised by the pre-scan of an XML file: ``refused`` tells whether a DTD was met."""

    def __init__(self, refused: bool) -> None:
        self.refused = refused


def _refuse_xml_declarations(data: bytes, source: str) -> None:
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
        parser.Parse(data, True)
    except _Prolog as stop:
        if stop.refused:
            raise InputError(
                "XML with a DOCTYPE or ENTITY declaration is not read; remove the declaration",
                file=source,
            ) from None
    except expat.ExpatError as exc:
        raise InputError(f"not well-formed XML ({expat.errors.messages[exc.code]})",
                         file=source, line=exc.lineno) from None


# How a column is declared, counted before parsing (astropy's VOTable parser takes time that
# grows with the square of the number of columns: 32,000 of them took close to a minute).
_COLUMN_MARKS = {"votable": (b"<FIELD", b":FIELD"), "ascii.ecsv": (b"# - {name:", b"#- {name:")}


def _refuse_wide(data: bytes, fmt: str, source: str) -> None:
    """Refuse a table declaring more than :data:`delimited.MAX_COLUMNS` columns (a count of
    the declarations in one linear pass, comments included; FITS allows 999)."""
    columns = sum(data.count(mark) for mark in _COLUMN_MARKS.get(fmt, ()))
    if columns > delimited.MAX_COLUMNS:
        raise InputError(f"the table declares {columns} columns; at most "
                         f"{delimited.MAX_COLUMNS} are read", file=source)


def _refuse_large_ecsv(data: bytes, source: str) -> None:
    """Refuse an ECSV file of more than :data:`ECSV_MAX_CELLS` cells (lines that are not
    comments, the column-name line aside, times the declared columns), before astropy
    parses it."""
    columns = sum(data.count(mark) for mark in _COLUMN_MARKS["ascii.ecsv"])
    comments = data.count(b"\n#") + data.startswith(b"#")
    lines = data.count(b"\n") + (not data.endswith(b"\n")) - comments - 1
    if lines * columns > ECSV_MAX_CELLS:
        raise InputError(f"an ECSV table of {lines} rows and {columns} columns; at most "
                         f"{ECSV_MAX_CELLS} cells (rows x columns) are read as ECSV: save a "
                         "larger catalogue as CSV or FITS", file=source)


def _ecsv_data_lines(text: str, n_rows: int) -> np.ndarray | None:
    """Lines of the data rows of an ECSV file, or None if rows and lines do not pair up."""
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
    data = np.ma.getdata(column, subok=False)
    # fixed-width text: converted at once, without a string per row (bytes if all ASCII;
    # else one by one, so that a row that is not UTF-8 is named)
    if kind == "U" or (kind == "S" and _ascii(data)):
        texts = data.astype(StringDType())
        texts[mask] = ""
        return texts
    return _texts_one_by_one(data, mask, header, problems)


def _ascii(data: np.ndarray) -> bool:
    """Whether every byte of a column of fixed-width bytes is ASCII."""
    return bool((np.ascontiguousarray(data).view(np.uint8) < 0x80).all())


def _texts_one_by_one(data: np.ndarray, mask: np.ndarray, header: str,
                      problems: dict) -> list[str]:
    """The texts of a column of objects, or of bytes some of which are not UTF-8 (recorded
    in ``problems``), one row at a time."""
    texts = []
    for i, (value, masked) in enumerate(zip(data.tolist(), mask.tolist(), strict=True)):
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


def read_table(data: bytes | BinaryIO, source: str, fmt: str, label: str) -> Columns:
    """The raw columns of an astropy-read table from the file's bytes, or for FITS from a
    handle on the file (``fmt`` for astropy, ``label`` for messages).  A FITS file given by
    its handle is mapped into memory, so that only the pages of the columns read are loaded
    (and copied into the catalogue's columns)."""
    text = None
    mapped = not isinstance(data, bytes)
    if not mapped:
        _refuse_wide(data, fmt, source)
    if fmt == "votable":
        _refuse_xml_declarations(data, source)
    elif fmt == "ascii.ecsv":
        _refuse_large_ecsv(data, source)
        try:
            text = data.decode("utf-8-sig")
        except UnicodeDecodeError as exc:
            raise InputError("not UTF-8 text; save the file as UTF-8", file=source,
                             line=data.count(b"\n", 0, exc.start) + 1) from None
    from astropy.table import Table

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            # text with a line break is read as the table itself, never as a file name
            given = data if mapped else (
                io.BytesIO(data) if text is None else text.rstrip("\n") + "\n")
            table = Table.read(given, format=fmt, **({"memmap": True} if mapped else {}))
        except Exception as exc:  # noqa: BLE001 -- astropy raises many types on bad files
            message = " ".join(str(exc).split())[:200] or type(exc).__name__
            raise InputError(f"cannot read as {label}: {message}", file=source) from None
    for warning in caught[:3]:
        notices.add(f"{source}: {label} reader: {' '.join(str(warning.message).split())[:160]}")
    if len(table) > delimited.MAX_ROWS:
        raise InputError(f"more than {delimited.MAX_ROWS} rows; split the catalogue",
                         file=source)
    positions, headers, ignored = map_headers(source, table.colnames, None)
    problems: dict[int, list[tuple[str | None, str]]] = {}
    values = {
        key: _column_values(table.columns[pos], key, source, headers[key], problems)
        for key, pos in positions.items()
    }
    lines = _ecsv_data_lines(text, len(table)) if text is not None else None
    if lines is None:
        where, in_lines = np.arange(1, len(table) + 1, dtype=np.int64), False
    else:
        where, in_lines = lines, True
    for key in ("name", "notes"):
        if key in values:
            sizes = np.strings.str_len(np.asarray(values[key], dtype=StringDType()))
            for i in np.flatnonzero(sizes > delimited.MAX_FIELD_CHARS).tolist():
                problems.setdefault(i, []).append((headers[key], too_long(int(sizes[i]))))
    return Columns(source, headers, values, where, in_lines, ignored, problems)

