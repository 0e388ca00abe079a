"""Plain decimal text read by arithmetic, a whole column at once.

The IERS table holds plain decimals (``-12.345``); reading them
character position by character position over all rows, with one division at the end, is
several times faster than converting a Python string per value, and gives the same doubles.
"""

from __future__ import annotations

import numpy as np

MAX_DIGITS = 15  # decimal text of at most this many digits is read at once (below 2**53)

_POWERS = np.array([float(10**k) for k in range(MAX_DIGITS + 1)])  # exact in float64


def read_decimals(data: np.ndarray, start: np.ndarray, end: np.ndarray) -> np.ndarray | None:
    """The cells ``data[start:end]`` as numbers if every one is a plain decimal or empty.

    A plain decimal is ``[+|-]digits[.digits]`` (one of the two runs of digits may be empty)
    with at most :data:`MAX_DIGITS` digits; an empty cell gives NaN; anything else
    returns None.  Its digits form an integer M below 2**53 and its value is M / 10**k, k
    being the digits after the point: M and 10**k are exact doubles, so the one IEEE
    division rounds the decimal correctly, as Python's ``float`` does (Clinger 1990, "How
    to read floating point numbers accurately", PLDI '90, the case of exact operands).
    The cells are read one character position at a time, all rows at once.
    """
    length = end - start
    width = int(length.max(initial=0))
    if width > MAX_DIGITS + 2:  # a sign and a point besides the digits
        return None
    n = len(start)
    mantissa = np.zeros(n, dtype=np.int64)
    digits = np.zeros(n, dtype=np.int8)
    after_point = np.zeros(n, dtype=np.int8)
    points = np.zeros(n, dtype=np.int8)
    at = start.copy()  # the character read, in every cell
    for position in range(width):
        inside = length > position
        char = np.take(data, at, mode="clip")
        at += 1
        value = char - np.uint8(ord("0"))  # below "0" wraps round to above 9
        digit = (value < 10) & inside
        point = (char == ord(".")) & inside
        other = inside & ~(digit | point)
        if position == 0:
            other &= (char != ord("+")) & (char != ord("-"))
        if other.any():
            return None
        mantissa *= np.where(digit, np.int64(10), np.int64(1))  # Horner's rule, digits only
        mantissa += value * digit
        digits += digit
        after_point += digit & (points > 0)
        points += point
    filled = length > 0
    if (points > 1).any() or (digits > MAX_DIGITS).any() or (filled & (digits == 0)).any():
        return None
    numbers = mantissa / _POWERS[after_point]
    numbers = np.where(np.take(data, start, mode="clip") == ord("-"), -numbers, numbers)
    numbers[~filled] = np.nan
    return numbers
