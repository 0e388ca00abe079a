"""JSON text for whole columns at once, in numpy word grids (formatting only).

Records are built as grids of ``uint32`` words, one record per row, the bytes of each word
in text order, with zero bytes anywhere as filler; :func:`squeeze` drops the filler of the
whole grid at once and leaves the text of every record, without a Python object per value.
JSON text never holds a zero byte (a U+0000 in a string is written ``\\u0000``), so filler
and text cannot be confused.  A value is a *column*: a list of word arrays, one word per
row each, so that every step is one pass over a contiguous array (a 2-D copy with a short
inner axis costs numpy far more).

Every token is written exactly as orjson writes the same value, so that records made here
and records made from dictionaries are the same bytes (``tests/test_bytegrid.py``):

* :func:`decimals` writes ``numpy.round(x, places)``.  orjson writes a float as the
  shortest text that reads back as the same double (the property of Steele & White 1990
  and of Ryū, Adams 2018), in positional notation from 1e-5 to 1e16.  ``numpy.round``
  returns the double nearest to k / 10**places for an integer k, and a decimal of at most
  15 significant digits reads back as itself (IEEE 754 binary64: DBL_DIG = 15, ISO C
  5.2.4.2.2), so for k below 10**15 that shortest text is k / 10**places with its trailing
  zeros dropped and one digit kept after the point.  Other finite values (very small or
  huge; none in a windows record) are handed to orjson one by one.  NaN and infinities
  are ``null``, as orjson writes them.
* :func:`instants` writes POSIX seconds as quoted ISO 8601 UTC to the second with ``Z``.

Digits come from tables of three digits at a time: one gather of a word per three digits.
"""

from __future__ import annotations

import numpy as np

MAX_EXACT = 10**15  # below this many units of the last place a decimal reads back exactly
MIN_POSITIONAL = 1e-5  # orjson writes smaller magnitudes with an exponent
MIN_POSITIONAL_TEXT = 1e-4  # Python's repr (and so the csv module) from here on


def words(text: bytes) -> np.ndarray:
    """``text`` as words, zero-padded to a whole number of them."""
    return np.frombuffer(text + b"\0" * (-len(text) % 4), dtype=np.uint32)


def _word(text: bytes) -> int:
    return int(words(text)[0])


NULL = _word(b"null")


def _table(texts: list[bytes]) -> np.ndarray:
    """One word per text (at most four bytes), zero bytes in front."""
    return np.array([t.rjust(4, b"\0") for t in texts], dtype="S4").view(np.uint32)


_THREE = [f"{v:03d}".encode() for v in range(1000)]
_PADDED = _table(_THREE)  # "042"
_PLAIN = _table([str(v).encode() for v in range(1000)]  # "42"; then "-42"
                + [b"-" + str(v).encode() for v in range(1000)])
_POINT_PADDED = _table([b"." + t for t in _THREE])  # ".042"
_POINT_SHORT = _table([b"." + (t.rstrip(b"0") or b"0") for t in _THREE])  # ".04", ".0"
_SHORT = _table([t.rstrip(b"0") for t in _THREE])  # "04", "" for 0


def _groups(count: int) -> range:
    return range(-(-count // 3))


def decimals(x, places: int, *, text: bool = False) -> list[np.ndarray]:
    """``numpy.round(x, places)`` as orjson writes it: positional, shortest, or ``null``.

    ``text``: as Python's ``repr`` writes it instead (the csv module's numbers), and
    nothing for NaN and infinities (an empty CSV field).  ``repr`` gives the same digits
    (the shortest that read back, David Gay's algorithm) and is positional from 1e-4 to 1e16.
    """
    if places < 1:
        raise ValueError("places must be at least 1")
    with np.errstate(over="ignore", invalid="ignore"):  # as orjson gets them: inf, NaN
        r = np.round(np.asarray(x, dtype=np.float64), places)
    scale = 10**places
    magnitude = np.abs(r)
    finite = np.isfinite(r)
    with np.errstate(invalid="ignore"):
        smallest = MIN_POSITIONAL_TEXT if text else MIN_POSITIONAL
        fast = finite & ((magnitude == 0.0) | ((magnitude >= smallest)
                                               & (magnitude * scale < MAX_EXACT)))
    units = np.rint(np.where(fast, magnitude, 0.0) * scale).astype(np.int64)
    whole, part = np.divmod(units, scale)
    sign = np.signbit(r) * 1000
    columns = []
    top = int(whole.max(initial=0))
    for j in reversed(_groups(len(str(top)))):  # whole part, three digits a group
        above = whole // 1000 ** (j + 1)
        group = whole // 1000**j % 1000
        plain = _PLAIN[group + sign]
        if j:
            plain = np.where(group > 0, plain, 0)
        columns.append(np.where(above > 0, _PADDED[group], plain))
    count = len(_groups(places))
    part = part * 10 ** (3 * count - places)
    for i in range(count):  # fraction, three digits a group, trailing zeros dropped
        lower = 1000 ** (count - 1 - i)
        group, below = part // lower % 1000, part % lower
        padded, short = (_POINT_PADDED, _POINT_SHORT) if i == 0 else (_PADDED, _SHORT)
        columns.append(np.where(below > 0, padded[group], short[group]))
    columns = _nulls(columns, finite, 0 if text else NULL)
    odd = np.flatnonzero(finite & ~fast)
    if len(odd):
        import orjson

        write = (lambda v: repr(v).encode()) if text else orjson.dumps
        columns = _put_rows(columns, odd, [write(v) for v in r[odd].tolist()])
    return columns


def _nulls(columns: list[np.ndarray], finite: np.ndarray, null: int) -> list[np.ndarray]:
    if finite.all():
        return columns
    return [np.where(finite, c, null if k == 0 else 0) for k, c in enumerate(columns)]


def _put_rows(columns: list[np.ndarray], rows: np.ndarray, tokens: list[bytes]):
    """Replace whole rows by the given tokens (widening the column when they need it)."""
    extra = texts(tokens)
    n = len(columns[0])
    while len(columns) < len(extra):
        columns.append(np.zeros(n, dtype=np.uint32))
    for k, c in enumerate(columns):
        c[rows] = extra[k] if k < len(extra) else 0
    return columns


def texts(tokens: list[bytes]) -> list[np.ndarray]:
    """Finished tokens (JSON strings, literals) as a column: one row each."""
    arr = np.array(tokens, dtype="S")  # zero-padded to the longest
    size = arr.dtype.itemsize + (-arr.dtype.itemsize % 4)
    grid = arr.astype(f"S{size}").view(np.uint32).reshape(len(tokens), size // 4)
    return [grid[:, k] for k in range(grid.shape[1])]


def choice(flags, yes: bytes, no: bytes) -> list[np.ndarray]:
    """``yes`` where a flag is set, else ``no``."""
    a, b = words(yes), words(no)
    size = max(len(a), len(b))
    a, b = np.pad(a, (0, size - len(a))), np.pad(b, (0, size - len(b)))
    flags = np.asarray(flags, dtype=bool)
    return [np.where(flags, a[k], b[k]) for k in range(size)]


_CLOCK: list[np.ndarray] = []  # "HH:MM:SS" of every second of the day as two words


def _clock() -> np.ndarray:
    if not _CLOCK:
        second = np.arange(86400)
        text = np.full((86400, 8), ord(":"), dtype=np.uint8)
        for column, value in ((0, second // 3600), (3, second // 60 % 60), (6, second % 60)):
            text[:, column] = ord("0") + value // 10
            text[:, column + 1] = ord("0") + value % 10
        _CLOCK.append(np.ascontiguousarray(text.view(np.uint32).T))
    return _CLOCK[0]


def preload() -> None:
    """Make the tables now (before workers fork, so that each need not)."""
    _clock()


def instants(unix, *, text: bool = False) -> list[np.ndarray]:
    """POSIX seconds as ``"YYYY-MM-DDTHH:MM:SSZ"`` (rounded to the second), NaN as ``null``.

    The calendar comes from numpy's datetime64 (proleptic Gregorian, no leap seconds, as
    POSIX time and ISO 8601 UTC stamps written from it are): each date in the range is
    written once, and each time of day is read from a table of the 86,400 seconds.  Years
    outside 1000–9999 are handed to orjson.  ``text``: without quotes, NaN as nothing (a
    CSV field), other years as numpy writes them.
    """
    quote, null = (b"", 0) if text else (b'"', NULL)
    u = np.round(np.asarray(unix, dtype=np.float64))
    n = len(u)
    finite = np.isfinite(u)
    if not finite.any():
        return [np.full(n, null, dtype=np.uint32)]
    seconds = np.where(finite, u, u[finite][0]).astype(np.int64)
    day, of_day = np.divmod(seconds, 86400)
    first, last = int(day.min()), int(day.max())
    if last - first < 4096:
        days, index = np.arange(first, last + 1), day - first
    else:
        days, index = np.unique(day, return_inverse=True)
    year = days.astype("datetime64[D]").astype("datetime64[Y]").astype(np.int64) + 1970
    plain = (year >= 1000) & (year <= 9999)
    day_text = np.datetime_as_string(np.where(plain, days, 0).astype("datetime64[D]"),
                                     unit="D")
    dates = (np.char.add(np.char.add(quote, day_text.astype("S10")), b"T").astype("S12")
             .view(np.uint32).reshape(len(days), 3))
    clock = _clock()
    columns = [dates[:, 0][index], dates[:, 1][index], dates[:, 2][index],
               clock[0][of_day], clock[1][of_day],
               np.full(n, _word(b"Z" + quote), dtype=np.uint32)]
    columns = _nulls(columns, finite, null)
    odd = np.flatnonzero(finite & ~plain[index])
    if len(odd):
        import orjson

        stamps = seconds[odd].astype("datetime64[s]")
        columns = _put_rows(columns, odd, [
            s.encode() + b"Z" for s in np.datetime_as_string(stamps, unit="s").tolist()
        ] if text else [orjson.dumps(m, option=orjson.OPT_NAIVE_UTC | orjson.OPT_UTC_Z)
                        for m in stamps.tolist()])
    return columns


def assemble(rows: int, parts: list, multiple: int = 1) -> np.ndarray:
    """Records side by side from ``parts``: text the same on every row (bytes) or columns;
    the width is rounded up to a multiple of ``multiple`` words with filler."""
    template = []
    for part in parts:
        template.append(words(part) if isinstance(part, bytes)
                        else np.zeros(len(part), dtype=np.uint32))
    line = np.concatenate(template) if template else np.zeros(0, dtype=np.uint32)
    line = np.pad(line, (0, -len(line) % multiple))
    grid = np.empty((rows, len(line)), dtype=np.uint32)
    grid[:] = line
    at = 0
    for part, filler in zip(parts, template):
        if not isinstance(part, bytes):
            for k, column in enumerate(part):
                grid[:, at + k] = column
        at += len(filler)
    return grid


def nest(head: np.ndarray, inner: np.ndarray, owner: np.ndarray,
         tail: np.ndarray) -> np.ndarray:
    """Record ``i`` as ``head[i]``, then the rows of ``inner`` whose ``owner`` is ``i`` (owners
    ascending), then ``tail[i]``: one grid as wide as ``inner``, into whose width the head and
    tail grids must divide (see ``multiple`` in :func:`assemble`).  Narrow rows keep the
    filler, and the work of squeezing it out, small.
    """
    n, width = len(head), inner.shape[1]
    heads, tails = head.reshape(n, -1, width), tail.reshape(n, -1, width)
    hr, tr = heads.shape[1], tails.shape[1]
    before = np.searchsorted(owner, np.arange(n + 1))  # inner rows of the records before
    first = np.arange(n) * (hr + tr) + before[:-1]  # each record's first row
    out = np.empty((n * (hr + tr) + len(inner), width), dtype=np.uint32)
    out[(first[:, None] + np.arange(hr)).reshape(-1)] = heads.reshape(-1, width)
    out[(first[:, None] + (hr + np.diff(before))[:, None] + np.arange(tr)).reshape(-1)] = \
        tails.reshape(-1, width)
    if len(inner):
        out[first[owner] + hr + np.arange(len(inner)) - before[owner]] = inner
    return out


def squeeze(grid: np.ndarray) -> bytes:
    """The text of a grid, row after row, without the filler."""
    return np.ascontiguousarray(grid).tobytes().translate(None, b"\0")  # faster than a mask
