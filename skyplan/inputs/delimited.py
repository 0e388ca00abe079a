"""Delimited text (CSV, TSV, TXT) into columns of cells, before any checking.

UTF-8 text, read as the standard :mod:`csv` module reads it (fields may be quoted).  Lines
starting with ``#``, blank lines and lines of separators only are skipped; line numbers are
the lines of the file as an editor shows them.  A row with fewer fields than the header has
its missing trailing fields empty; a row with more is a problem of that row.

Text without quote characters takes a fast path: one numpy pass over its bytes finds the
fields and checks every row's width, and the columns stay bytes (:class:`Cells`) until a
column's text is needed; plain decimal columns are then read by
:func:`skyplan.inputs.decimaltext.read_decimals` without making text at all.  Anything irregular
goes through :mod:`csv`, which also names what is wrong.
"""

from __future__ import annotations

import csv
import io
import re
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from skyplan import notices
from skyplan.errors import InputError

MAX_FIELD_CHARS = 1000  # longer fields are refused (per row)
MAX_ROWS = 5_000_000  # more data rows than this refuses the whole file
MAX_FILE_BYTES = 1 << 30  # larger text files are refused before reading
BLANK = " \t\r\n\f\v"  # what a row of separators only may hold besides the separators


def _read_text(path: Path, source: str) -> str:
    """The whole file as text; InputError naming the line of the first non-UTF-8 byte."""
    try:
        size = path.stat().st_size
        if size > MAX_FILE_BYTES:
            raise InputError(
                f"file is {size} bytes; catalogues of at most {MAX_FILE_BYTES} bytes are read",
                file=source,
            )
        data = path.read_bytes()
    except OSError as exc:
        raise InputError(f"cannot read the file: {exc.strerror or exc}", file=source) from exc
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = data.count(b"\n", 0, exc.start) + 1
        column = exc.start - (data.rfind(b"\n", 0, exc.start) + 1) + 1
        if exc.reason == "unexpected end of data":
            raise InputError(
                f"the file ends inside a UTF-8 character (column {column}): it was cut short",
                file=source,
                line=line,
            ) from None
        raise InputError(
            f"not UTF-8 text (byte 0x{data[exc.start]:02x} at column {column}); "
            "save the file as UTF-8",
            file=source,
            line=line,
        ) from None
    if not text.endswith(("\n", "\r")) and text.strip():
        notices.add(
            f"{source}: the file does not end with a line break; if it was cut short, its "
            f"last row (line {text.count(chr(10)) + 1}) is incomplete"
        )
    return text


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

    def __init__(self, lines: list[str], delimiter: str) -> None:
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


def _lines(text: str) -> list[str]:
    """The lines of the text as :mod:`csv` sees them, each with its line end."""
    return io.StringIO(text, newline="").readlines()


def _content_lines(
    text: str, delimiter: str, source: str
) -> tuple[list[str] | None, range | list[int]]:
    """The lines of text without quotes, and the indices of those that hold rows (header included).

    When no line starts with white space, ``#`` or the delimiter (found by one scan of the
    text), every line holds a row and the text is not split into lines (None is returned
    for them); otherwise each line is looked at.
    """
    lone_cr = "\r" in text and text.count("\r") != text.count("\r\n")  # old Mac line ends
    first = text[:1]
    if lone_cr or not first or first.isspace() or first in ("#", delimiter):
        plain = False
    else:
        plain = re.search(rf"\n[\s#{re.escape(delimiter)}]", text) is None
    lines: list[str] | None
    if plain:  # lines end in "\n" (or "\r\n") only
        lines = None
        content: range | list[int] = range(text.count("\n") + (not text.endswith("\n")))
    else:
        lines = _lines(text)
        blank_chars = BLANK + delimiter
        content = [i for i, line in enumerate(lines) if _is_content(line, blank_chars)]
    if len(content) > MAX_ROWS + 1:  # the header is not a data row
        raise _too_many_rows(source, content[MAX_ROWS + 1] + 1)
    return lines, content


@dataclass
class Grid:
    """Cells of a delimited file by column, before any checking."""

    header: list[str]
    header_line: int
    columns: list[Sequence[str]]
    where: np.ndarray  # line of each row
    wide_rows: np.ndarray  # rows that may hold a field over MAX_FIELD_CHARS (all that do)
    problems: dict[int, list[tuple[str | None, str]]]
    trimmed: bool = False  # every cell is printable ASCII without a space at either end


class Cells(Sequence[str]):
    """One column of rows held as UTF-8 bytes, by where each cell starts and ends in them.

    A cell's text is made when it is asked for, and :meth:`texts` makes the whole column at
    once.  In the bytes every cell is followed by ``separator`` (the delimiter, or the line
    feed after the last column), which no cell holds.
    """

    def __init__(self, data: np.ndarray, start: np.ndarray, end: np.ndarray, separator: str):
        self.data, self.start, self.end, self.separator = data, start, end, separator

    def __len__(self) -> int:
        return len(self.start)

    def __getitem__(self, row: int | slice) -> str | list[str]:  # type: ignore[override]
        if isinstance(row, slice):
            return [self[i] for i in range(len(self))[row]]
        return self.data[self.start[row] : self.end[row]].tobytes().decode()

    def texts(self) -> list[str]:
        """Every cell's text: the cells are gathered with their separators and split once."""
        if not len(self):
            return []
        size = self.end - self.start + 1  # with the separator
        step = np.ones(int(size.sum()), dtype=np.intp)  # from one gathered byte to the next
        step[0] = self.start[0]
        step[np.cumsum(size[:-1])] = self.start[1:] - self.end[:-1]
        texts = self.data[np.cumsum(step)].tobytes().decode().split(self.separator)
        texts.pop()  # the empty text after the last separator
        return texts


def _split_regular(
    text: str, lines: list[str] | None, content: range | list[int], delimiter: str
) -> Grid | None:
    """Fast split of text without quote characters, if every row has the header's width.

    Without quotes a row is simply its line split at the delimiter, exactly as :mod:`csv`
    reads it.  The rows are joined into one text, each ending in a line feed; one numpy pass
    over its bytes finds where fields end and checks that every row has the header's width.
    The columns are :class:`Cells` over those bytes, so that text is made only for the
    columns that need it.  ``lines`` None means that every line of ``text`` holds a row.
    Returns None when some row has a different number of fields (the csv path then reports
    it).
    """
    if lines is None:
        cut = text.find("\n") + 1 or len(text)
        header_text, body = text[:cut], text[cut:]
        where = np.arange(2, len(content) + 1, dtype=np.int64)
    else:
        header_text = lines[content[0]]
        body = "".join([lines[i] for i in content[1:]])
        where = np.array(content[1:], dtype=np.int64) + 1
    header = header_text.rstrip("\r\n").split(delimiter)
    width, rows = len(header), len(where)
    if "\r" in body:
        body = body.replace("\r\n", "\n").replace("\r", "\n")
    if body and not body.endswith("\n"):
        body += "\n"
    data = np.frombuffer(body.encode(), dtype=np.uint8)  # UTF-8: ASCII bytes are characters
    line_end = data == ord("\n")
    field_end = np.flatnonzero(line_end | (data == ord(delimiter)))
    # The body has one line end per row: the row widths are right when the field ends
    # number rows * width and every width-th of them is a line end.
    if len(field_end) != rows * width or not line_end[field_end[width - 1 :: width]].all():
        return None
    field_start = np.zeros_like(field_end)
    field_start[1:] = field_end[:-1] + 1
    wide = field_end - field_start > MAX_FIELD_CHARS  # bytes: at least the characters
    wide_rows = np.unique(np.flatnonzero(wide) // width)
    separators = [delimiter] * (width - 1) + ["\n"]
    columns: list[Sequence[str]] = [
        Cells(data, field_start[k::width], field_end[k::width], separators[k])
        for k in range(width)
    ]
    trimmed = _trimmed_printable(data, field_start, field_end)
    return Grid(header, content[0] + 1, columns, where, wide_rows, {}, trimmed)


def _trimmed_printable(data: np.ndarray, field_start: np.ndarray, field_end: np.ndarray) -> bool:
    """Whether every field of the bytes is printable ASCII without a space at either end.

    ``str.strip`` leaves such text as it is and :data:`_UNPRINTABLE` finds nothing in it.
    Bytes outside printable ASCII may only be the field ends (line ends, tab separators).
    An empty field's first and last bytes are field ends, never a space.
    """
    outside = data - np.uint8(0x20) > 0x7E - 0x20  # below 0x20 wraps round to above 0xDF
    if np.count_nonzero(outside) != np.count_nonzero(outside[field_end]):
        return False
    space = ord(" ")
    return not ((data[field_start] == space).any() or (data[field_end - 1] == space).any())



def _split_rows(rows: list[list[str]], starts: list[int]) -> Grid:
    """Rows from :mod:`csv` as columns; short rows padded, long rows reported."""
    header, body = rows[0], rows[1:]
    width = len(header)
    problems: dict[int, list[tuple[str | None, str]]] = {}
    lengths = np.fromiter(map(len, body), dtype=np.int64, count=len(body))
    for i in np.flatnonzero(lengths != width).tolist():
        if lengths[i] < width:  # missing trailing fields are empty
            body[i] = body[i] + [""] * (width - int(lengths[i]))
        else:
            message = (
                f"row has {lengths[i]} fields but the header has {width} "
                "(quote fields that contain the separator)"
            )
            problems.setdefault(i, []).append((None, message))
            body[i] = body[i][:width]
    columns = list(zip(*body, strict=True)) if body else [() for _ in header]
    row_chars = np.fromiter(map(len, map("".join, body)), dtype=np.int64, count=len(body))
    wide_rows = np.flatnonzero(row_chars > MAX_FIELD_CHARS)
    where = np.array(starts[1:], dtype=np.int64)
    return Grid(header, starts[0], columns, where, wide_rows, problems)


def _rows_one_per_line(
    lines: list[str], content: range | list[int], delimiter: str, source: str
) -> tuple[list[list[str]], list[int]]:
    """Rows of text without quote characters, where every content line is one row."""
    reader = csv.reader([lines[i] for i in content], delimiter=delimiter)
    try:
        rows = list(reader)
    except csv.Error as exc:
        raise _csv_error(source, delimiter, exc, content[reader.line_num - 1] + 1) from None
    return rows, [i + 1 for i in content]


def _rows_quoted(
    lines: list[str], delimiter: str, source: str
) -> tuple[list[list[str]], list[int]]:
    """Rows of text that may quote fields across lines; each row keeps its first line."""
    feed = _LineFeed(lines, delimiter)
    reader = csv.reader(feed.lines(), delimiter=delimiter)
    rows: list[list[str]] = []
    starts: list[int] = []
    try:
        for row in reader:
            feed.at_row_start = True
            rows.append(row)
            starts.append(feed.row_start)
            if len(rows) > MAX_ROWS + 1:  # the header is not a data row
                raise _too_many_rows(source, feed.row_start)
    except csv.Error as exc:
        raise _csv_error(source, delimiter, exc, feed.lineno) from None
    return rows, starts


def read_grid(path: Path, source: str, delimiter: str | None) -> Grid:
    """The cells of a delimited text file by column (see the module docstring)."""
    text = _read_text(path, source)
    if delimiter is None:  # .txt: tab if the header line has one
        each_line = io.StringIO(text, newline="")
        header = next((line for line in each_line if (s := line.lstrip()) and s[0] != "#"), "")
        delimiter = "\t" if "\t" in header else ","
    grid = None
    if '"' in text:
        rows, starts = _rows_quoted(_lines(text), delimiter, source)
        if rows:
            grid = _split_rows(rows, starts)
    else:
        lines, content = _content_lines(text, delimiter, source)
        if content:
            grid = _split_regular(text, lines, content, delimiter)
            if grid is None:
                lines = _lines(text) if lines is None else lines
                grid = _split_rows(*_rows_one_per_line(lines, content, delimiter, source))
    if grid is None:
        raise InputError("no header line (expected columns name, ra, dec)", file=source)
    return grid
