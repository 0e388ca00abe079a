"""Large regular delimited text read column by column, block by block, with memory in
proportion to the data kept.

A file qualifies when it has more than :data:`~skyplan.inputs.delimited.FAST_FROM_ROWS`
rows, holds no quote character and no old Mac line end, every line holds a row (none
starts with white space, ``#`` or the separator) and every row has the header's number of
fields.  Its bytes are checked (UTF-8, line starts, printable text) and split by polars'
CSV reader a piece of about :data:`PIECE_BYTES` at a time; each piece's columns go at once
into the finished columns: text as numpy ``StringDType`` (short strings stored inline,
16 bytes each), numeric columns as float64 with the text of only the cells that need a
second look (:class:`~skyplan.inputs.catalogtypes.NumberCells`).  The file's text is never
made whole and no Python string is made per cell, so a 200 MB catalogue is read within a
few hundred megabytes (docs/performance.md).  Anything else is left to
:mod:`skyplan.inputs.delimited` (None is returned), which also names what is wrong.
"""

from __future__ import annotations

import codecs
from collections.abc import Iterator, Sequence

import numpy as np
from numpy.dtypes import StringDType

from skyplan import notices
from skyplan.errors import InputError
from skyplan.inputs import delimited, readfile
from skyplan.inputs.catalogtypes import NumberCells

PIECE_BYTES = 1 << 23  # the text split by polars at a time (whole lines)
_BOM = b"\xef\xbb\xbf"
# the ASCII characters that str.isspace() takes as white space
_ASCII_FIRST = b"\t\n\x0b\x0c\r\x1c\x1d\x1e\x1f "


def read_regular(
    blocks: list[bytes], source: str, delimiter: str | None, select: delimited.Select
) -> delimited.Grid | None:
    """The columns ``select`` asks for (see :func:`delimited.read_grid`) if the text made of
    ``blocks`` (as ``readfile.read_blocks`` gives them) is regular text of more than
    ``FAST_FROM_ROWS`` rows (module docstring), else None with ``blocks`` untouched.  Once
    the text is known to be regular, each block is let go (emptied in the list) as soon as
    its columns are made."""
    if not blocks:
        return None
    first = blocks[0]
    start = len(_BOM) if first.startswith(_BOM) else 0
    first_end = first.find(b"\n", start)
    if first_end < 0 or any(b'"' in b or (b"\r" in b and b.count(b"\r") != b.count(b"\r\n"))
                            for b in blocks):
        return None
    rows = sum(b.count(b"\n") for b in blocks) + (not blocks[-1].endswith(b"\n"))
    if rows - 1 <= max(delimited.FAST_FROM_ROWS, 1):
        return None
    try:
        header_text = first[start:first_end].decode().rstrip("\r")
    except UnicodeDecodeError:
        return None
    if delimiter is None:
        delimiter = delimited.sniff_delimiter(header_text)
    header = header_text.split(delimiter)
    delimited.refuse_wide_header(len(header), source)
    sep = delimiter.encode()
    if first[start : start + 1] in (b"#", sep) or header_text[:1].isspace():
        return None
    if not _every_line_a_row(blocks, start, source, delimiter, len(header)):
        return None
    if rows > delimited.MAX_ROWS + 1:
        raise InputError(f"more than {delimited.MAX_ROWS} rows; split the catalogue",
                         file=source, line=delimited.MAX_ROWS + 2)
    wanted = select(header, 1, delimiter)
    blocks[0] = first[first_end + 1 :]  # the rows: the header line is read
    del first
    no_line_end = not blocks[-1].endswith((b"\n", b"\r"))
    grid = _split(blocks, rows - 1, header, delimiter, wanted)
    if no_line_end:
        notices.add(f"{source}: the file does not end with a line break; if it was cut short, "
                    f"its last row (line {rows}) is incomplete")
    return grid


def _every_line_a_row(blocks: list[bytes], start: int, source: str, delimiter: str,
                      width: int) -> bool:
    """Whether every line holds a row of ``width`` fields: UTF-8 text (else the InputError
    that :func:`delimited.decode` gives) in which no line starts with white space, ``#`` or
    the separator, and every line has ``width - 1`` separators.  Blocks all ASCII are not
    decoded; the first byte of every line is looked up at once."""
    sep = delimiter.encode()
    refused = np.zeros(256, dtype=bool)  # first bytes of a line that is not a plain row
    refused[np.frombuffer(_ASCII_FIRST + b"#" + sep, np.uint8)] = True
    lines_before = 0
    for k, block in enumerate(blocks):
        offset = start if k == 0 else 0
        if not block.isascii():
            try:
                codecs.utf_8_decode(memoryview(block)[offset:], None, True)
            except UnicodeDecodeError as exc:
                body = block[offset:]
                raise delimited.utf8_error(body, exc, source, lines_before) from None
        a = np.frombuffer(block, np.uint8, offset=offset)
        ends = np.flatnonzero(a == ord("\n"))
        heads = np.concatenate(([0], ends + 1))
        heads = heads[heads < len(a)]
        if refused[a[heads]].any() or any(
                bytes(a[p : p + 4]).decode(errors="ignore")[:1].isspace()
                for p in heads[a[heads] >= 0x80].tolist()):
            return False
        fields = np.bincount(np.searchsorted(ends, np.flatnonzero(a == sep[0])),
                             minlength=len(ends) + 1)
        if (fields[: len(heads)] != width - 1).any():
            return False
        lines_before += len(ends)
    return True


def _split(blocks: list[bytes], n: int, header: list[str], delimiter: str,
           wanted: dict[int, delimited.Check | None]) -> delimited.Grid:
    """The wanted columns of the ``n`` rows in ``blocks``, a block at a time; each block is
    emptied in the list once read."""
    import polars as pl

    texts = {pos: np.empty(n, dtype=StringDType()) for pos, c in wanted.items() if c is None}
    numbers = {pos: np.empty(n) for pos, c in wanted.items() if c is not None}
    second: dict[int, tuple[list[np.ndarray], list[np.ndarray]]] = {p: ([], []) for p in numbers}
    long_fields: list[tuple[int, int, int]] = []
    trimmed = True  # every text cell printable ASCII without a space at either end
    row = 0
    for k in range(len(blocks)):
        block, blocks[k] = blocks[k], b""
        for piece in _pieces(block):
            count = piece.count(b"\n") + (not piece.endswith(b"\n"))
            printable = _printable(piece, delimiter.encode())
            table = pl.read_csv(piece, has_header=False, separator=delimiter, quote_char=None,
                                infer_schema=False, empty_string_is_null=False,
                                truncate_ragged_lines=False, raise_if_empty=False)
            if table.height != count or table.width != len(header):  # checked before: never
                raise AssertionError(f"{count} rows read as {table.height}")
            if _longest_line(piece) > delimited.MAX_FIELD_CHARS:
                long_fields += _long_fields(table, row)
            del piece
            for p, out in texts.items():
                series = table.to_series(p)
                trimmed = trimmed and printable and _trimmed(series)
                out[row : row + count] = delimited.Cells(series).texts(printable)
            for p, out in numbers.items():
                rows, cells = _read_numbers(table.to_series(p), delimiter, wanted[p], out, row,
                                            printable)
                second[p][0].append(rows)
                second[p][1].append(cells)
            row += count
            del table
        del block
        readfile.give_back_freed()
    columns: dict[int, Sequence[str]] = dict(texts)
    for p, values in numbers.items():
        rows_list, cells_list = second.pop(p)
        columns[p] = NumberCells(values, np.concatenate(rows_list),
                                           np.concatenate(cells_list))
        del rows_list, cells_list
    readfile.give_back_freed()
    where = np.arange(2, n + 2, dtype=np.int64)
    return delimited.Grid(header, 1, columns, where, long_fields, {}, trimmed, delimiter)


def _pieces(block: bytes) -> Iterator[bytes]:
    """The block in pieces of about :data:`PIECE_BYTES`, each of whole lines."""
    pos = 0
    while pos < len(block):
        end = block.find(b"\n", pos + PIECE_BYTES)
        end = len(block) if end < 0 else end + 1
        yield block[pos:end]
        pos = end


def _read_numbers(series, delimiter: str, check: delimited.Check, out: np.ndarray,
                  row: int, printable: bool) -> tuple[np.ndarray, np.ndarray]:
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
    return picked + row, delimited.Cells(series.gather(picked)).texts(printable)


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
