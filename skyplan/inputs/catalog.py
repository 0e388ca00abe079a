"""Target lists: reading a catalogue file into a :class:`Catalog` of numpy columns.

Formats are chosen by ``input_format`` (``csv``, ``tsv``, ``ecsv``, ``votable``, ``fits``)
or else by the file extension; ``-`` reads standard input and needs ``input_format``.  Every
file is read through :mod:`skyplan.inputs.readfile` (a regular file, or ``-``; at most
1 GiB, counted while reading):

- ``.csv`` and ``.txt`` (the separator told by the header line: tab if it holds one, else
  ``;`` if it holds more semicolons than commas, else comma), ``.tsv`` (tab), UTF-8, read as
  the standard :mod:`csv` module reads them (fields may be quoted).  With ``;`` or tab as
  separator a numeric cell may use a decimal comma (``83,82``).  Lines of at most 1 MiB,
  headers of at most 10,000 columns.  Lines
  starting with ``#``, blank lines and lines of separators only are skipped; line numbers in
  messages are the lines of the file as an editor shows them.  A row with fewer fields than
  the header has its missing trailing fields empty; a row with more is an error.
- ``.ecsv``, ``.vot`` / ``.votable`` / ``.xml``, ``.fits`` / ``.fit`` / ``.fts``, read with
  astropy's table readers (FITS mapped into memory; ECSV of at most 500,000 cells, VOTable
  of at most 80 MiB: see :mod:`skyplan.inputs.tablefiles`).  Numeric RA/Dec columns with
  an angle unit (``deg``, ``hourangle``, ...) are converted by that unit; numeric columns
  without a unit are taken in the units below.  String columns go through the same parsers
  as CSV text.

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
A decimal RA is read as degrees; when it looks like hours (at least 3 RAs, all plain decimal
numbers below 24, one at least 1 or more) a notice says so.
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

Memory follows what is kept, not the file: CSV/TSV text is read in blocks of whole lines
and a large regular file is split a block at a time into the finished columns (names and
notes as numpy ``StringDType``, numbers as float64), each block let go once read
(:mod:`skyplan.inputs.regularsplit`); columns the file does not have cost nothing per row.

This module holds :func:`read_catalog`, which picks the reader by the file's extension, and
the mapping of CSV/TSV/TXT columns; the types are in :mod:`skyplan.inputs.catalogtypes`, the
astropy-read formats in :mod:`skyplan.inputs.tablefiles`, and the per-field rules, defaults
and the building of the checked catalogue in :mod:`skyplan.inputs.catalogrows`.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

import numpy as np

from skyplan.errors import InputError
from skyplan.inputs import delimited, readfile, regularsplit
from skyplan.inputs.catalogrows import NUMBER_CHECKS, build_catalog, map_headers, too_long
from skyplan.inputs.catalogtypes import Catalog, CatalogRead, Columns, NumberCells
from skyplan.inputs.tablefiles import ASTROPY_FORMATS, VOTABLE_MAX_BYTES, read_table
from skyplan.text import quoted

__all__ = ["INPUT_FORMATS", "Catalog", "CatalogRead", "read_catalog"]

# --input-format names: the separator (None: told by the header line) or the astropy format
INPUT_FORMATS = {
    "csv": None,
    "tsv": "\t",
    "ecsv": ASTROPY_FORMATS[".ecsv"],
    "votable": ASTROPY_FORMATS[".vot"],
    "fits": ASTROPY_FORMATS[".fits"],
}
_DELIMITED = {".csv": None, ".tsv": "\t", ".txt": None}


def read_catalog(
    path: str | Path, *, skip_bad: bool = False, input_format: str | None = None
) -> CatalogRead:
    """Read a target list; the format follows ``input_format`` (one of
    :data:`INPUT_FORMATS`) or else the extension (see the module docstring).  ``-`` reads
    standard input, which needs ``input_format``.

    Raises :class:`InputError` for a file that cannot be read, lacks a required column or is
    beyond the size limits, and :class:`InputErrors` listing every bad field unless
    ``skip_bad`` is set, in which case the rows with bad fields are dropped and listed in
    :attr:`CatalogRead.skipped`.
    """
    source = "<stdin>" if str(path) == readfile.STDIN else str(path)
    kind = _format_of(str(path), source, input_format)
    # the file's bytes are handed on, not kept here, so that the reader can let them go
    if isinstance(kind, tuple) and kind[0] == "fits" and str(path) != readfile.STDIN:
        with readfile.open_sized(path, delimited.MAX_FILE_BYTES, what="catalogue") as handle:
            columns = read_table(handle, source, *kind)
    elif kind == ASTROPY_FORMATS[".vot"]:
        columns = read_table(readfile.read_input(path, VOTABLE_MAX_BYTES,
                                                 what="VOTable catalogue"), source, *kind)
    elif isinstance(kind, tuple):
        columns = read_table(readfile.read_input(path, delimited.MAX_FILE_BYTES,
                                                 what="catalogue"), source, *kind)
    else:
        columns = _delimited_columns(source, readfile.read_blocks(
            path, delimited.MAX_FILE_BYTES, what="catalogue"), kind)
    read = build_catalog(columns, skip_bad=skip_bad)
    readfile.give_back_freed()  # what the reading let go, before the caller's work begins
    return read


def _format_of(path: str, source: str, input_format: str | None) -> str | tuple | None:
    """The separator (None: sniffed) or the astropy format of the input."""
    if input_format is not None:
        name = input_format.strip().lower()
        if name not in INPUT_FORMATS:
            raise InputError(f"unknown input format {quoted(input_format, 20)}; use one "
                             f"of {', '.join(INPUT_FORMATS)}", field="--input-format")
        return INPUT_FORMATS[name]
    if path == readfile.STDIN:
        raise InputError("standard input has no extension to tell its format; give "
                         f"--input-format ({'|'.join(INPUT_FORMATS)})", file=source)
    suffix = Path(path).suffix.lower()
    if suffix in _DELIMITED:
        return _DELIMITED[suffix]
    if suffix in ASTROPY_FORMATS:
        return ASTROPY_FORMATS[suffix]
    known = ", ".join(sorted([*_DELIMITED, *ASTROPY_FORMATS]))
    raise InputError(
        f"unknown catalogue format '{suffix or '(no extension)'}'; use one of {known} "
        "(or --input-format)",
        file=source,
    )


# ---------------------------------------------------------------------------------------
# CSV, TSV and TXT: split by skyplan.inputs.delimited, mapped here


def _delimited_columns(source: str, blocks: list[bytes], delimiter: str | None) -> Columns:
    """Split delimited text (the file as ``readfile.read_blocks`` gives it), keeping only
    the mapped columns; map the header and name the fields too long to read."""

    def select(header: list[str], line: int, sep: str) -> dict[int, delimited.Check | None]:
        _refuse_other_separator(source, header, line, sep)
        positions, _, _ = map_headers(source, header, line)
        return {pos: NUMBER_CHECKS.get(key) for key, pos in positions.items()}

    delimited.refuse_long_lines(blocks, source)
    grid = regularsplit.read_regular(blocks, source, delimiter, select)
    if grid is None:
        grid = delimited.read_grid(_joined(blocks), source, delimiter, select)
    positions, headers, ignored = map_headers(source, grid.header, grid.header_line)
    problems = grid.problems
    for row, pos, size in grid.long_fields:
        problems.setdefault(row, []).append((grid.header[pos].strip(), too_long(size)))
    values: dict[str, Sequence[object]] = {}
    decimals: dict[str, np.ndarray] = {}
    for key, pos in positions.items():
        column = grid.columns.pop(pos)
        if isinstance(column, NumberCells):
            if column.any_read():  # the text of a cell is kept only if it is read again
                decimals[key] = column.numbers
            else:
                column = column.all_texts()
                readfile.give_back_freed()
        values[key] = column
    return Columns(source, headers, values, grid.where, True, ignored, problems, grid.trimmed,
                   decimals)


def _joined(blocks: list[bytes]) -> bytes:
    """The blocks as one text; the list is emptied, so that the text is held once."""
    data = b"".join(blocks)
    blocks.clear()
    return data


def _refuse_other_separator(source: str, header: list[str], line: int, delimiter: str) -> None:
    """A header of one column that holds another separator: name the one the file uses."""
    if len(header) != 1:
        return
    other = delimited.sniff_delimiter(header[0])
    if other != delimiter and other in header[0]:
        raise InputError(f"this file seems to use {other!r} as separator, not "
                         f"{delimiter!r}; use --input-format csv or name it .csv",
                         file=source, line=line)
