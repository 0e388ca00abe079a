"""Numbers and angles as people write them in sites and horizon files and options.

Each reader returns a float or raises ``ValueError`` / ``TypeError`` with a plain reason; the
caller adds the file, line and field.
"""

from __future__ import annotations

import math
import re

_DECIMAL = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?")
_SEXAGESIMAL = re.compile(r"([+-]?)(\d+)[:\s]+(\d+(?:\.\d*)?)(?:[:\s]+(\d+(?:\.\d*)?))?")


def decimal(text: str) -> float:
    """A finite decimal number; ValueError with a plain reason otherwise."""
    text = text.strip()
    if not _DECIMAL.fullmatch(text):
        raise ValueError(f"{text!r} is not a decimal number")
    value = float(text)
    if not math.isfinite(value):
        raise ValueError(f"{text!r} is not a finite number")
    return value


def angle(value: object) -> float:
    """Degrees from a TOML number or a string: decimal or sexagesimal "+D:M[:S]" / "D M S"."""
    if isinstance(value, str):
        text = value.strip()
        match = _SEXAGESIMAL.fullmatch(text)
        if match is None:
            try:
                return decimal(text)
            except ValueError:
                raise ValueError(
                    f"{value!r} is neither decimal degrees nor sexagesimal '+D:M:S'"
                ) from None
        sign, deg, minutes, seconds = match.groups()
        m, s = float(minutes), float(seconds or 0.0)
        if m >= 60.0 or s >= 60.0 or (seconds is not None and m != int(m)):
            raise ValueError(f"{value!r}: minutes and seconds must be below 60")
        degrees = int(deg) + m / 60.0 + s / 3600.0
        return -degrees if sign == "-" else degrees
    return number(value)


_COMPASS = {"N": 1.0, "S": -1.0, "E": 1.0, "W": -1.0}


def compass_angle(value: object, axis: str) -> float:
    """Degrees as :func:`angle` reads them, or with a compass letter before or after:
    ``"31:57:30N"``, ``"111:35:48W"``, ``"S 33.5"``.  ``axis`` is ``"lat"`` (N or S) or
    ``"lon"`` (E or W); S and W are negative."""
    if isinstance(value, str):
        text = value.strip()
        letter = ""
        if text and text[-1].upper() in _COMPASS:
            letter, text = text[-1].upper(), text[:-1].strip()
        elif text and text[0].upper() in _COMPASS:
            letter, text = text[0].upper(), text[1:].strip()
        if letter:
            allowed, what = ("NS", "latitude") if axis == "lat" else ("EW", "longitude")
            if letter not in allowed:
                raise ValueError(f"{value!r}: a {what} takes {allowed[0]} or {allowed[1]}, "
                                 f"not {letter}")
            if text[:1] in ("+", "-"):
                raise ValueError(f"{value!r}: give a sign or a compass letter, not both")
            return _COMPASS[letter] * angle(text)
    return angle(value)


def number(value: object) -> float:
    """A finite TOML number (not a boolean)."""
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise TypeError(f"expected a number, got {shown(value)}")
    try:
        result = float(value)
    except OverflowError:
        raise ValueError(f"expected a finite number, got an integer of {len(str(value))} "
                         "digits") from None
    if not math.isfinite(result):
        raise ValueError(f"expected a finite number, got {value}")
    return result


def in_range(value: float, lo: float, hi: float, what: str, unit: str = "") -> float:
    if not lo <= value <= hi:
        raise ValueError(f"{what} {value:g}{unit} outside {lo:g}..{hi:g}{unit}")
    return value


def shown(value: object) -> str:
    if isinstance(value, str):
        return repr(value)
    return f"{type(value).__name__} {value!r}"[:60]

