"""A column of strict ``±D:M:S[.s]`` angles read at once: the fast path of
:func:`skyplan.inputs.angles.parse_column`.

Sexagesimal to decimal: value = D + M/60 + S/3600, the sign belonging to the whole angle
(Meeus, *Astronomical Algorithms*, 2nd ed. 1998, ch. 1).  The arithmetic is the one
:mod:`skyplan.inputs.angles` does for a single entry, in the same order, so results are
equal entry for entry.

Two ways to find the parts, with the same rule (every entry blank or matching
``^[+-]?[0-9]{1,3}:[0-9]{1,2}:[0-9]{1,2}(\\.[0-9]*)?$`` once stripped of white space):

* a column of numpy ``StringDType`` text (what the CSV readers give) becomes one byte
  matrix, a row per entry padded with zero bytes, on which every rule is checked at once;
  the whole and minute parts are read from their digits and the seconds text is converted
  by numpy, which rounds correctly as ``float`` does.  No Python object is made per entry
  (200,000 sexagesimal rows: about 60 MiB less at the peak of the read);
* any other sequence: one regular-expression pass over the joined column.

A column that does not follow the rule gives None, and its entries are then read one by one
(:func:`skyplan.inputs.angles.parse_column`), which reports what is wrong.
"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence

import numpy as np

_STRICT_COLON = re.compile(
    r"^([+-]?)([0-9]{1,3}):([0-9]{1,2}):([0-9]{1,2}(?:\.[0-9]*)?)$", re.MULTILINE
)
_ZERO, _NINE, _COLON, _DOT, _PLUS, _MINUS = (ord(c) for c in "09:.+-")


def colon_column(values: Sequence[object], scale: float, unsigned: bool,
                 max_chars: int) -> np.ndarray | None:
    """Values of a column whose every non-empty entry is strict ``±D:M:S[.s]`` (the first
    part times ``scale``), else None.  Entries that break a rule (minutes or seconds of 60 or
    more, a sign where ``unsigned``) are left NaN so that the per-entry parser reports them.
    ``max_chars``: a ``StringDType`` column whose entries are all at most this long is read
    as bytes (the matrix has a column per character of the longest)."""
    if isinstance(values, np.ndarray) and values.dtype.kind == "T" and (
            not len(values) or np.strings.str_len(values).max() <= max_chars):
        parts = _byte_parts(values)
    else:
        parts = _text_parts(values)
    if parts is None:
        return None
    filled, negative, whole, m, sec = parts
    magnitude = whole + m / 60.0 + sec / 3600.0
    value = np.where(negative, -magnitude, magnitude) * scale + 0.0
    broken = (m >= 60) | (sec >= 60)
    if unsigned:
        broken |= negative
    value[broken] = math.nan
    out = np.full(len(values), math.nan)
    out[filled] = value
    return out


def _text_parts(values: Sequence[object]) -> tuple[np.ndarray, ...] | None:
    """(the rows not blank, and for those: negative, first part, minutes, seconds) by one
    regular-expression pass, or None."""
    try:
        stripped = list(map(str.strip, values))  # type: ignore[arg-type]
    except TypeError:
        return None
    n = len(stripped)
    filled = np.flatnonzero(np.fromiter(map(len, stripped), dtype=np.int64, count=n))
    texts = [stripped[i] for i in filled.tolist()] if len(filled) < n else stripped
    joined = "\n".join(texts)
    if joined.count("\n") != len(texts) - 1:
        return None
    matches = _STRICT_COLON.findall(joined)
    if not matches or len(matches) != len(texts):
        return None
    signs, first, minutes, seconds = (list(part) for part in zip(*matches, strict=True))
    return (filled, np.array(signs) == "-", np.array(first, dtype=np.float64),
            np.array(minutes, dtype=np.float64), np.array(seconds, dtype=np.float64))


def _byte_parts(cells: np.ndarray) -> tuple[np.ndarray, ...] | None:
    """As :func:`_text_parts`, for ``StringDType`` cells, on their bytes."""
    if (np.strings.str_len(np.strings.add(cells, "|")) - 1 != np.strings.str_len(cells)).any():
        return None  # a NUL at the end, which numpy's string functions leave out
    stripped = np.strings.strip(cells)
    lengths = np.strings.str_len(stripped)
    filled = np.flatnonzero(lengths)
    if not len(filled):
        return None
    width = int(lengths[filled].max())
    try:
        raw = stripped[filled].astype(f"S{width}")
    except UnicodeEncodeError:  # not ASCII: not of the strict form
        return None
    del stripped
    size = lengths[filled].astype(np.int64)[:, None]
    m = raw.view(np.uint8).reshape(len(filled), width)
    pos = np.arange(width)
    inside = pos < size
    colon = (m == _COLON) & inside
    first = colon.argmax(axis=1)[:, None]
    second = (colon & (pos > first)).argmax(axis=1)[:, None]
    dot = (m == _DOT) & inside
    signed = ((m[:, 0] == _PLUS) | (m[:, 0] == _MINUS))[:, None]
    allowed = ((m >= _ZERO) & (m <= _NINE)) | colon | (dot & (pos > second)) \
        | ((pos == 0) & signed)
    point = np.where(dot.any(axis=1)[:, None], dot.argmax(axis=1)[:, None], size)
    ok = ((colon.sum(axis=1) == 2) & (dot.sum(axis=1) <= 1)
          & (allowed | ~inside).all(axis=1))[:, None]
    ok &= (first - signed >= 1) & (first - signed <= 3)  # 1-3 digits
    ok &= (second - first >= 2) & (second - first <= 3)  # 1-2 digits
    ok &= (point - second >= 2) & (point - second <= 3)  # 1-2 digits before any point
    if not ok.all():
        return None
    whole = _integer(m, signed, first)
    minutes = _integer(m, first + 1, second)
    seconds = np.empty(len(m))
    for start in np.unique(second + 1).tolist():  # the seconds' text starts at a few places
        rows = np.flatnonzero(second[:, 0] + 1 == start)
        text = np.ascontiguousarray(m[rows, start:])
        seconds[rows] = text.view(f"S{width - start}")[:, 0].astype(np.float64)
    return filled, m[:, 0] == _MINUS, whole, minutes, seconds


def _integer(m: np.ndarray, start: np.ndarray, end: np.ndarray) -> np.ndarray:
    """The whole number written by the (at most three) digits at ``start <= pos < end`` of
    each row, a place at a time."""
    value = np.zeros(len(m))
    for place in range(3):
        at = end[:, 0] - 1 - place
        digit = np.take_along_axis(m, np.maximum(at, 0)[:, None], axis=1)[:, 0]
        value += np.where(at >= start[:, 0], (digit - _ZERO) * 10.0**place, 0.0)
    return value
