"""Catalogue files read by astropy's table readers: ECSV, VOTable and FITS.

Holds the formats by extension, the units numeric columns are converted to, the refusal of
XML with a DOCTYPE or entity declaration (checked before astropy parses the file), the
pairing of ECSV data rows with their text lines (so messages name lines as an editor shows
them), and :func:`read_table`, which turns a table into
:class:`~skyplan.inputs.catalogtypes.Columns` for :mod:`skyplan.inputs.catalogrows` to check.
"""

from __future__ import annotations

import io
import warnings
from collections.abc import Sequence
from typing import Any

import numpy as np

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


def read_table(data: bytes, source: str, fmt: str, label: str) -> Columns:
    """The raw columns of an astropy-read table from the file's bytes (``fmt`` for astropy,
    ``label`` for messages)."""
    text = None
    _refuse_wide(data, fmt, source)
    if fmt == "votable":
        _refuse_xml_declarations(data, source)
    elif fmt == "ascii.ecsv":
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
            given = io.BytesIO(data) if text is None else text.rstrip("\n") + "\n"
            table = Table.read(given, format=fmt)
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
        for i, text in enumerate(values.get(key, ())):
            if len(str(text)) > delimited.MAX_FIELD_CHARS:
                problems.setdefault(i, []).append((headers[key], too_long(len(str(text)))))
    return Columns(source, headers, values, where, in_lines, ignored, problems)

