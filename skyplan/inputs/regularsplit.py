"""Large regular delimited text read column by column, block by block, with memory in
proportion to the data kept.

A file qualifies when it has more than :data:`~skyplan.inputs.delimited.FAST_FROM_ROWS`
rows, holds no quote character and no old Mac line end, every line holds a row (none
starts with white space, ``#`` or the separator) and every row has the header's number of
fields.  Its bytes are checked (UTF-8, line starts, printable text) and split by polars'
CSV reader a block of about :data:`BLOCK_BYTES` at a time; each block's columns go at once
into the finished columns: text as numpy ``StringDType`` (short strings stored inline,
16 bytes each), numeric columns as float64 with the text of only the cells that need a
second look (:class:`~skyplan.inputs.delimited.NumberCells`).  The file's text is never
made whole and no Python string is made per cell, so a 200 MB catalogue is read within a
few hundred megabytes (docs/performance.md).  Anything else is left to
:mod:`skyplan.inputs.delimited` (None is returned), which also names what is wrong.
"""

from __future__ import annotations

import re

import numpy as np
from numpy.dtypes import StringDType

from skyplan import notices
from skyplan.errors import InputError
from skyplan.inputs import delimited

BLOCK_BYTES = 1 << 23  # the text split at a time (whole lines)
_BOM = b"\xef\xbb\xbf"
# ASCII characters that str.isspace() takes as white space, as a bytes class
_ASCII_SPACE = rb"\t\n\x0b\x0c\r\x1c-\x1f "


def read_regular(
    data: bytes, source: str, delimiter: str | None, select: delimited.Select
) -> delimited.Grid | None:
    """The columns ``select`` asks for (see :func:`delimited.read_grid`) if ``data`` is
    regular text of more than ``FAST_FROM_ROWS`` rows (module docstring), else None."""
    start = len(_BOM) if data.startswith(_BOM) else 0
    first_end = data.find(b"\n", start)
    lone_cr = b"\r" in data and data.count(b"\r") != data.count(b"\r\n")
    if first_end < 0 or b'"' in data or lone_cr:
        return None
    rows = data.count(b"\n") + (not data.endswith(b"\n"))  # the header included
    if rows - 1 <= max(delimited.FAST_FROM_ROWS, 1):
        return None
    try:
        header_text = data[start:first_end].decode().rstrip("\r")
    except UnicodeDecodeError:
        return None
    if delimiter is None:
        delimiter = delimited.sniff_delimiter(header_text)
    header = header_text.split(delimiter)
    width = len(header)
    delimited.refuse_wide_header(width, source)
    sep = delimiter.encode()
    first = data[start : start + 1]
    if first.isspace() or first in (b"#", sep) or not header_text.strip():
        return None
    if re.search(rb"\n[" + _ASCII_SPACE + rb"#" + re.escape(sep) + rb"]", data):
        return None
    if data.count(sep) != (width - 1) * rows:
        return None  # a row of another width: no row longer than the header (polars refuses)
    if not _utf8_lines_start_plainly(data, start, source, delimiter):
        return None
    if rows > delimited.MAX_ROWS + 1:
        raise InputError(f"more than {delimited.MAX_ROWS} rows; split the catalogue",
                         file=source, line=delimited.MAX_ROWS + 2)
    wanted = select(header, 1, delimiter)
    grid = _split(data, first_end + 1, rows - 1, header, delimiter, wanted)
    if grid is not None and not data.endswith((b"\n", b"\r")):
        notices.add(f"{source}: the file does not end with a line break; if it was cut short, "
                    f"its last row (line {rows}) is incomplete")
    return grid


def _utf8_lines_start_plainly(data: bytes, start: int, source: str, delimiter: str) -> bool:
    """Whether the text is UTF-8 (else the InputError that :func:`delimited.decode` gives)
    whose lines start with no white space that is not ASCII (such lines are left to the
    general reader).  Checked a block at a time; blocks all ASCII are not decoded."""
    blank = re.compile(rf"(?:^|\n)[\s#{re.escape(delimiter)}]")
    pos = start
    while pos < len(data):
        end = data.find(b"\n", pos + BLOCK_BYTES)
        end = len(data) if end < 0 else end + 1
        block = data[pos:end]
        if not block.isascii():
            try:
                if blank.search(block.decode()):
                    return False
            except UnicodeDecodeError:
                delimited.decode(data, source)  # raises, naming the line and column
                raise AssertionError("UTF-8 decoding failed once only") from None
        pos = end
    return True


def _split(data: bytes, body: int, n: int, header: list[str], delimiter: str,
           wanted: dict[int, delimited.Check | None]) -> delimited.Grid | None:
    """The wanted columns of the ``n`` rows from byte ``body`` on, a block at a time."""
    import polars as pl

    texts = {pos: np.empty(n, dtype=StringDType()) for pos, c in wanted.items() if c is None}
    numbers = {pos: np.empty(n) for pos, c in wanted.items() if c is not None}
    second: dict[int, tuple[list[np.ndarray], list[np.ndarray]]] = {p: ([], []) for p in numbers}
    long_fields: list[tuple[int, int, int]] = []
    trimmed = True  # every text cell printable ASCII without a space at either end
    row, pos = 0, body
    while pos < len(data):
        end = data.find(b"\n", pos + BLOCK_BYTES)
        end = len(data) if end < 0 else end + 1
        block = data[pos:end]
        count = block.count(b"\n") + (not block.endswith(b"\n"))
        printable = _printable(block, delimiter.encode())
        try:
            table = pl.read_csv(block, has_header=False, separator=delimiter, quote_char=None,
                                infer_schema=False, empty_string_is_null=False,
                                truncate_ragged_lines=False, raise_if_empty=False)
        except pl.exceptions.PolarsError:
            return None
        if table.height != count or table.width != len(header):
            return None
        if _longest_line(block) > delimited.MAX_FIELD_CHARS:
            long_fields += _long_fields(table, row)
        del block
        for p, out in texts.items():
            series = table.to_series(p)
            trimmed = trimmed and printable and _trimmed(series)
            out[row : row + count] = delimited.Cells(series).texts(printable)
        for p, out in numbers.items():
            rows, cells = _read_numbers(table.to_series(p), delimiter, wanted[p], out, row)
            second[p][0].append(rows)
            second[p][1].append(cells)
        row, pos = row + count, end
    columns: dict[int, object] = dict(texts)
    for p, values in numbers.items():
        rows_list, cells_list = second.pop(p)
        columns[p] = delimited.NumberCells(values, np.concatenate(rows_list),
                                           np.concatenate(cells_list))
    where = np.arange(2, n + 2, dtype=np.int64)
    return delimited.Grid(header, 1, columns, where, long_fields, {}, trimmed, delimiter)


def _read_numbers(series, delimiter: str, check: delimited.Check, out: np.ndarray,
                  row: int) -> tuple[np.ndarray, np.ndarray]:
    """One block of a numeric column into ``out`` from ``row`` on; the rows (in the whole
    column) and the texts of the cells that need a second look."""
    if delimiter != ",":
        series = delimited.decimal_points(delimited.Cells(series)).series
    cells = delimited.Cells(series)
    values = cells.numbers()
    plain = None
    if values is None:
        values, plain = cells.mixed_numbers()
    with np.errstate(invalid="ignore"):
        look = (~np.isfinite(values) | ~check(values)) & ~np.isnan(values)
    if plain is not None:
        look |= ~plain
    out[row : row + len(values)] = values
    picked = np.flatnonzero(look)
    return picked + row, np.array(series.gather(picked).to_list(), dtype=StringDType())


def _longest_line(block: bytes) -> int:
    """The length in bytes of the block's longest line (line end included)."""
    ends = np.flatnonzero(np.frombuffer(block, np.uint8) == ord("\n"))
    last = len(block) - 1 - (int(ends[-1]) if len(ends) else -1)  # after the last line end
    return int(np.diff(ends, prepend=-1).max(initial=last))


def _long_fields(table, row: int) -> list[tuple[int, int, int]]:
    """(row, position, characters) of every field over ``MAX_FIELD_CHARS``, rows from ``row``."""
    import polars as pl

    lengths = table.select(pl.all().str.len_chars())
    wide = np.flatnonzero((lengths.max_horizontal() > delimited.MAX_FIELD_CHARS).to_numpy())
    found = []
    for i in wide.tolist():
        for p, size in enumerate(lengths.row(i)):
            if size > delimited.MAX_FIELD_CHARS:
                found.append((row + i, p, size))
    return found


_PRINTABLE = bytes(range(0x20, 0x7F))


def _printable(data: bytes, delimiter: bytes) -> bool:
    """Whether every byte of the text is printable ASCII, a line end (LF, CR LF) or a tab
    separator: no cell then holds a character that ``catalogrows`` must look for."""
    allowed = b"\n\r" + (b"\t" if delimiter == b"\t" else b"")
    return not data.translate(None, _PRINTABLE).translate(None, allowed)


def _trimmed(series) -> bool:
    """Whether no cell of printable ASCII text starts or ends with a space (the only white
    space it can hold), so that ``str.strip`` would leave every cell as it is."""
    return not (series.str.starts_with(" ") | series.str.ends_with(" ")).any()
