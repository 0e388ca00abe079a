"""Delimited text (CSV, TSV, TXT) into columns of cells, before any checking.

UTF-8 text, read as the standard :mod:`csv` module reads it (fields may be quoted); the
separator is given or told by the header line (:func:`sniff_delimiter`).  A line longer than
:data:`MAX_LINE_BYTES` or a header of more than :data:`MAX_COLUMNS` columns refuses the file
before it is split, so that the work stays linear in the size of the file.  Lines
starting with ``#``, blank lines and lines of separators only are skipped; line numbers are
the lines of the file as an editor shows them.  A row with fewer fields than the header has
its missing trailing fields empty; a row with more is a problem of that row.

Text of more than :data:`FAST_FROM_ROWS` rows, without quote characters, in which every line
holds a row of the header's width takes a fast path, :mod:`skyplan.inputs.regularsplit`:
polars' CSV reader splits it a piece at a time (:class:`Cells`), texts go into numpy
``StringDType`` columns and plain decimal columns are read as numbers at once
(``catalogtypes.NumberCells``).  Anything irregular (quotes, comments, blank lines, rows
of another width) goes through :mod:`csv` here, which also names what is wrong.  Only the
columns the caller asks for are kept (:data:`Select`).
"""

from __future__ import annotations

import csv
import itertools
import re
from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass

import numpy as np
from numpy.dtypes import StringDType

from skyplan import notices
from skyplan.errors import InputError

MAX_FIELD_CHARS = 1000  # longer fields are refused (per row)
MAX_ROWS = 5_000_000  # more data rows than this refuses the whole file
MAX_FILE_BYTES = 1 << 30  # larger files are refused (counted while reading)
MAX_LINE_BYTES = 1 << 20  # a longer line refuses the whole file
MAX_COLUMNS = 10_000  # a header of more columns refuses the whole file
FAST_FROM_ROWS = 2000  # smaller files go through csv: importing polars would take longer
PACKED_TEXT_BYTES = 1 << 25  # a column of a block packed to one width at most (Cells.texts)
BLANK = " \t\r\n\f\v"  # what a row of separators only may hold besides the separators


def decode(data: bytes, source: str) -> str:
    """The file's bytes as text; InputError naming the line of the first non-UTF-8 byte."""
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise utf8_error(data, exc, source) from None
    if not text.endswith(("\n", "\r")) and text.strip():
        notices.add(
            f"{source}: the file does not end with a line break; if it was cut short, its "
            f"last row (line {text.count(chr(10)) + 1}) is incomplete"
        )
    return text


def utf8_error(data: bytes, exc: UnicodeDecodeError, source: str,
               lines_before: int = 0) -> InputError:
    """The error for bytes that are not UTF-8, naming the line (``lines_before`` lines
    precede ``data`` in the file) and the column."""
    line = lines_before + data.count(b"\n", 0, exc.start) + 1
    column = exc.start - (data.rfind(b"\n", 0, exc.start) + 1) + 1
    if exc.reason == "unexpected end of data":
        return InputError(
            f"the file ends inside a UTF-8 character (column {column}): it was cut short",
            file=source, line=line)
    return InputError(f"not UTF-8 text (byte 0x{data[exc.start]:02x} at column {column}); "
                      "save the file as UTF-8", file=source, line=line)


def refuse_long_lines(blocks: Sequence[bytes], source: str) -> None:
    """InputError at the first line longer than :data:`MAX_LINE_BYTES` in the text made of
    ``blocks`` (each but the last ending with a line end, as ``readfile.read_blocks``
    gives them; one block: any bytes).

    Scanned in slices, so that the scan holds a few megabytes whatever the file's size.
    """
    lines_before = 0
    for data in blocks:
        a = np.frombuffer(data, np.uint8)
        last_end = -1  # index of the last line end (LF or CR) met
        step = 1 << 23
        for start in range(0, len(a), step):
            part = a[start : start + step]
            ends = np.flatnonzero((part == 10) | (part == 13)) + start
            if ends.size:
                gaps = np.diff(ends, prepend=last_end) - 1
                if gaps.max() > MAX_LINE_BYTES:
                    j = int(np.argmax(gaps > MAX_LINE_BYTES))
                    _long_line(data, int(ends[j] - gaps[j]), source, lines_before)
                last_end = int(ends[-1])
            if start + len(part) - last_end - 1 > MAX_LINE_BYTES:
                _long_line(data, last_end + 1, source, lines_before)
        lines_before += data.count(b"\n")


def _long_line(data: bytes, begin: int, source: str, lines_before: int) -> None:
    raise InputError(
        f"a line longer than {MAX_LINE_BYTES} bytes; is this a catalogue of one row per line?",
        file=source,
        line=lines_before + data.count(b"\n", 0, max(begin, 0)) + 1,
    )


def first_content_line(text: str) -> str:
    """The first line that is not blank or a comment (at most :data:`MAX_LINE_BYTES` of it)."""
    pos = 0
    while pos < len(text):
        end = text.find("\n", pos, pos + MAX_LINE_BYTES)
        end = min(len(text), pos + MAX_LINE_BYTES) if end < 0 else end + 1
        line = text[pos:end]
        stripped = line.lstrip()
        if stripped and stripped[0] != "#":
            return line
        pos = end
    return ""


def sniff_delimiter(header: str) -> str:
    """The separator of a header line: tab if it holds one, else ';' if it holds more
    semicolons than commas (spreadsheets that write decimal commas), else ','."""
    if "\t" in header:
        return "\t"
    return ";" if header.count(";") > header.count(",") else ","


_DECIMAL_COMMA = r"^([^,.]*),([^,.]*)$"  # one comma, no point: the comma is a decimal mark


def decimal_points(column: Sequence[str]) -> Sequence[str]:
    """The cells of a numeric column with a decimal comma written as a point (``83,82`` ->
    ``83.82``); a cell with more than one comma, or a comma and a point, is left as it is."""
    if isinstance(column, Cells):
        return Cells(column.series.str.replace(_DECIMAL_COMMA, "${1}.${2}"))
    pattern = re.compile(_DECIMAL_COMMA)
    return [pattern.sub(r"\1.\2", cell) if "," in cell else cell for cell in column]


def _is_content(line: str, blank_chars: str) -> bool:
    """Whether a line starting a row holds data: not blank, not a comment, not separators only.

    Rows of separators only (",,,," as spreadsheets export them) hold nothing and are skipped
    like blank lines.
    """
    stripped = line.lstrip()
    return bool(stripped) and stripped[0] != "#" and bool(line.strip(blank_chars))


class _LineFeed:
    """Feeds a csv reader, skipping comment and blank lines between rows.

    ``row_start`` is the physical (1-based) line on which the current row began; ``lineno``
    the last line read.  Lines inside a quoted multi-line field are passed through as they are.
    """

    def __init__(self, lines: Iterable[str], delimiter: str) -> None:
        self._lines = lines
        self._blank_chars = BLANK + delimiter
        self.lineno = 0
        self.row_start = 0
        self.at_row_start = True

    def lines(self) -> Iterator[str]:
        for line in self._lines:
            self.lineno += 1
            if self.at_row_start:
                if not _is_content(line, self._blank_chars):
                    continue
                self.row_start = self.lineno
                self.at_row_start = False
            yield line


def _too_many_rows(source: str, line: int) -> InputError:
    return InputError(f"more than {MAX_ROWS} rows; split the catalogue", file=source, line=line)


def _csv_error(source: str, delimiter: str, exc: csv.Error, line: int) -> InputError:
    return InputError(f"malformed {delimiter!r}-separated text: {exc}", file=source, line=line)


Check = Callable[[np.ndarray], np.ndarray]  # True where a number needs no second look
Select = Callable[[list[str], int, str], "dict[int, Check | None]"]


@dataclass
class Grid:
    """The columns of a delimited file that the caller asked for, before any checking."""

    header: list[str]
    header_line: int
    columns: dict[int, Sequence[str]]  # by position: StringDType text, or NumberCells
    where: np.ndarray  # line of each row
    long_fields: list[tuple[int, int, int]]  # (row, position, characters) over MAX_FIELD_CHARS
    problems: dict[int, list[tuple[str | None, str]]]
    trimmed: bool = False  # every cell is printable ASCII without a space at either end
    delimiter: str = ","


PLAIN_DECIMAL = r"^[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)$"  # as Python's float reads it exactly


class Cells(Sequence[str]):
    """One column read by polars: the text of a cell is made when it is asked for,
    :meth:`texts` makes the whole column at once, and :meth:`numbers` reads it as plain
    decimals without making text at all."""

    def __init__(self, series) -> None:
        self.series = series

    def __len__(self) -> int:
        return len(self.series)

    def __getitem__(self, row: int | slice) -> str | list[str]:  # type: ignore[override]
        if isinstance(row, slice):
            return self.series[row].to_list()
        return self.series[row]

    def texts(self, printable: bool = False) -> np.ndarray:
        """The whole column as a numpy ``StringDType`` array.  ``printable`` tells that every
        cell is printable ASCII: the cells are then packed to one width by polars and
        converted by numpy, without a Python string per cell."""
        import polars as pl

        s = self.series
        width = s.str.len_bytes().max() or 0 if len(s) else 0
        if printable and 0 < width and len(s) * width <= PACKED_TEXT_BYTES:
            packed = s.str.pad_end(width, "\x00").str.join("").cast(pl.Binary).item()
            return np.frombuffer(packed, dtype=f"S{width}").astype(StringDType())
        if printable and width == 0:
            return np.full(len(s), "", dtype=StringDType())
        return np.array(s.to_list(), dtype=StringDType())

    def numbers(self) -> np.ndarray | None:
        """The column as numbers if every cell is a plain decimal (``[+|-]digits[.digits]``,
        one run of digits may be empty) or empty (NaN); else None.

        polars reads decimal text correctly rounded, so the values are bit for bit what
        Python's ``float`` gives for the same text."""
        import polars as pl

        s = self.series
        if not (s.str.contains(PLAIN_DECIMAL) | (s == "")).all():
            return None
        return s.replace("", None).cast(pl.Float64).fill_null(np.nan).to_numpy()

    def mixed_numbers(self) -> tuple[np.ndarray, np.ndarray]:
        """As :meth:`numbers` for a column where some cells are not plain decimals: the
        numbers, with infinity where a cell is not a plain decimal, and where the cells are
        plain (or empty)."""
        import polars as pl

        s = self.series
        plain = (s.str.contains(PLAIN_DECIMAL) | (s == "")).to_numpy()
        numbers = s.cast(pl.Float64, strict=False).fill_null(np.nan).to_numpy(writable=True)
        numbers[~plain] = np.inf
        return numbers, plain


ROWS_AT_ONCE = 50_000  # rows from csv made into columns at a time
# a line with its end (LF, CR LF or CR, as io.StringIO(newline="") splits them), or a last
# line without one: found one at a time, so that the text is not copied whole
_LINE = re.compile(r"[^\r\n]*(?:\r\n|\r|\n)|[^\r\n]+")


def _rows(text: str, delimiter: str, source: str) -> Iterator[tuple[list[str], int]]:
    """The rows of the text as :mod:`csv` reads them (fields may be quoted across lines),
    each with the line it starts on; comment and blank lines between rows are skipped."""
    feed = _LineFeed((m.group() for m in _LINE.finditer(text)), delimiter)
    reader = csv.reader(feed.lines(), delimiter=delimiter)
    count = 0
    try:
        for row in reader:
            feed.at_row_start = True
            count += 1
            if count > MAX_ROWS + 1:  # the header is not a data row
                raise _too_many_rows(source, feed.row_start)
            yield row, feed.row_start
    except csv.Error as exc:
        raise _csv_error(source, delimiter, exc, feed.lineno) from None


def read_grid(data: bytes, source: str, delimiter: str | None, select: Select) -> Grid:
    """The columns of delimited text that ``select`` asks for (see the module docstring);
    ``delimiter`` None lets the header line tell it (:func:`sniff_delimiter`).

    ``select(header, header_line, delimiter)`` is called once the header is known and gives
    the positions of the columns to keep: None for a text column, else the
    :data:`Check` of a numeric one.  Text columns come back as numpy ``StringDType`` arrays;
    numeric ones as text (large regular files are read by :mod:`skyplan.inputs.regularsplit`
    into ``catalogtypes.NumberCells``).  The rows are made into columns
    :data:`ROWS_AT_ONCE` at a time, so that a Python string per cell is held for those rows
    only.  The caller has refused long lines (:func:`refuse_long_lines`) and holds no other
    reference to ``data``, which is let go once it is text.
    """
    text = decode(data, source)
    del data
    header_line = first_content_line(text)
    if delimiter is None:
        delimiter = sniff_delimiter(header_line)
    refuse_wide_header(header_line.count(delimiter) + 1, source)
    rows = _rows(text, delimiter, source)
    first = next(rows, None)
    if first is None:
        raise InputError("no header line (expected columns name, ra, dec)", file=source)
    header, line = first
    wanted = select(header, line, delimiter)
    parts: dict[int, list[np.ndarray]] = {pos: [] for pos in wanted}
    starts: list[np.ndarray] = []  # numpy, not Python ints kept among the freed cells
    done = 0
    problems: dict[int, list[tuple[str | None, str]]] = {}
    long_fields: list[tuple[int, int, int]] = []
    while batch := list(itertools.islice(rows, ROWS_AT_ONCE)):
        body = [row for row, _ in batch]
        _fit_rows(body, len(header), done, delimiter, problems, long_fields)
        for pos, check in wanted.items():
            cells: Sequence[str] = [row[pos] for row in body]
            if check is not None and delimiter != ",":
                cells = decimal_points(cells)
            parts[pos].append(np.array(cells, dtype=StringDType()))
        starts.append(np.fromiter((start for _, start in batch), np.int64, len(batch)))
        done += len(batch)
    del text
    columns: dict[int, Sequence[str]] = {}
    for pos in wanted:
        chunks = parts.pop(pos)
        columns[pos] = np.concatenate(chunks) if chunks else np.empty(0, StringDType())
    where = np.concatenate(starts) if starts else np.empty(0, np.int64)
    return Grid(header, line, columns, where, long_fields, problems, False, delimiter)


def _fit_rows(body: list[list[str]], width: int, first: int, delimiter: str,
              problems: dict, long_fields: list[tuple[int, int, int]]) -> None:
    """Rows ``first``... to the header's width: short rows padded (missing trailing fields
    are empty), long rows cut and reported; fields too long to read noted."""
    lengths = np.fromiter(map(len, body), dtype=np.int64, count=len(body))
    for i in np.flatnonzero(lengths != width).tolist():
        if lengths[i] < width:
            body[i] = body[i] + [""] * (width - int(lengths[i]))
        else:
            message = (
                f"row has {lengths[i]} fields but the header has {width} (the separator is "
                f"{delimiter!r}; quote fields that contain it)"
            )
            problems.setdefault(first + i, []).append((None, message))
            body[i] = body[i][:width]
    row_chars = np.fromiter(map(len, map("".join, body)), dtype=np.int64, count=len(body))
    long_fields += [(first + i, pos, len(cell))
                    for i in np.flatnonzero(row_chars > MAX_FIELD_CHARS).tolist()
                    for pos, cell in enumerate(body[i]) if len(cell) > MAX_FIELD_CHARS]


def refuse_wide_header(columns: int, source: str) -> None:
    """InputError for a header of more than :data:`MAX_COLUMNS` columns."""
    if columns > MAX_COLUMNS:
        raise InputError(f"the header has {columns} columns; at most {MAX_COLUMNS} are read",
                         file=source)
