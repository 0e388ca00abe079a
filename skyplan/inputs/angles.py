"""Angles as text: reading right ascension, declination and general angles, and writing them back.

Accepted input (surrounding spaces ignored, letters in either case):

- right ascension in sexagesimal *hours*: ``05:35:17.3``, ``05 35 17.3``, ``5h35m17.3s``,
  ``5h35.5m``, ``5.5h``; or a bare decimal number, which means *degrees* (``83.82``); a value
  with a degree sign or ``d`` (``83d49m19.5s``) is read as degrees too;
- declination and other angles in sexagesimal *degrees*: ``-05:23:28``, ``-05 23 28``,
  ``-5d23m28s``, ``+41°16′09″``, ``41°16'09"``; or a bare decimal number of degrees.

The sign belongs to the whole angle, so ``-0:30:00`` is -0.5 degrees.  Minutes and seconds
must be below 60, and only the last part may carry a decimal fraction.  Every problem is a
``ValueError`` with a short message; callers add the file, line and field.

The patterns are anchored and have no nested repetition, and text longer than
:data:`MAX_ANGLE_CHARS` is refused before any pattern runs, so matching time stays linear.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Sequence

import numpy as np
import numpy.typing as npt

from skyplan.inputs.colonangles import colon_column

MAX_ANGLE_CHARS = 64  # longer text is refused before any pattern runs
MAX_PLACES = 9  # decimal places the formatters accept

_NUM = r"(\d+(?:\.\d*)?|\.\d+)"
_COLON = re.compile(rf"([+-]?)\s*{_NUM}\s*:\s*{_NUM}(?:\s*:\s*{_NUM})?")
_SPACED = re.compile(rf"([+-]?)\s*{_NUM}\s+{_NUM}(?:\s+{_NUM})?")
_HOURS = re.compile(rf"([+-]?)\s*{_NUM}\s*h(?:\s*{_NUM}\s*(?:m(?:\s*{_NUM}\s*s?)?)?)?")
_DEGREES = re.compile(rf"([+-]?)\s*{_NUM}\s*d(?:\s*{_NUM}\s*(?:m(?:\s*{_NUM}\s*s?)?)?)?")

# Typographic marks folded to the ASCII letters the patterns use.
_FOLD = str.maketrans(
    {
        "°": "d",
        "º": "d",
        "′": "m",
        "'": "m",
        "″": "s",
        '"': "s",
        "ʰ": "h",
        "ᵐ": "m",
        "ˢ": "s",
        "−": "-",
        "–": "-",
    }
)

_RA_HINT = "use hours like 05:35:17.3 or 5h35m17.3s, or decimal degrees"
_DEC_HINT = "use degrees like -05:23:28 or -5d23m28s, or decimal degrees"


def _show(text: str) -> str:
    """Quote user text for a message: escapes control characters, shortens long text."""
    return repr(text if len(text) <= 40 else text[:37] + "...")


def _sexagesimal(match: re.Match[str], text: str) -> tuple[bool, float]:
    """Combine the matched parts into (negative, magnitude in the first part's unit)."""
    sign, *raw = match.groups()
    parts = [p for p in raw if p is not None]
    if any("." in p for p in parts[:-1]):
        raise ValueError(f"only the last part of {_show(text)} may have a decimal fraction")
    values = [float(p) for p in parts] + [0.0] * (3 - len(parts))
    if values[1] >= 60:
        raise ValueError(f"minutes must be below 60 in {_show(text)}")
    if values[2] >= 60:
        raise ValueError(f"seconds must be below 60 in {_show(text)}")
    return sign == "-", values[0] + values[1] / 60.0 + values[2] / 3600.0


def _read(text: str, what: str, hint: str, *, hours: bool) -> float:
    """Read decimal degrees or a sexagesimal angle; ``hours`` selects the RA conventions."""
    if not isinstance(text, str):
        raise TypeError(f"{what} must be text, not {type(text).__name__}")
    stripped = text.strip()
    if not stripped:
        raise ValueError(f"empty {what}")
    if len(stripped) > MAX_ANGLE_CHARS:
        raise ValueError(
            f"{what} is too long ({len(stripped)} characters; at most {MAX_ANGLE_CHARS})"
        )
    try:
        value = float(stripped)
    except ValueError:
        pass
    else:
        if not math.isfinite(value):
            raise ValueError(f"{what} {_show(stripped)} is not a finite number")
        return value + 0.0  # turns -0.0 into 0.0
    folded = stripped.replace("''", '"').translate(_FOLD).lower()
    scale = 1.0
    if hours and "h" in folded:
        match, scale = _HOURS.fullmatch(folded), 15.0
    elif "d" in folded:
        match = _DEGREES.fullmatch(folded)
    else:
        match = _COLON.fullmatch(folded) or _SPACED.fullmatch(folded)
        scale = 15.0 if hours else 1.0
    if match is None:
        raise ValueError(f"cannot read {_show(stripped)} as {what} ({hint})")
    negative, magnitude = _sexagesimal(match, stripped)
    if hours and negative:
        raise ValueError(f"{what} {_show(stripped)} cannot be negative")
    return (-magnitude if negative else magnitude) * scale + 0.0


def _ra_ok(ra_deg: np.ndarray) -> np.ndarray:
    return (ra_deg >= 0.0) & (ra_deg < 360.0)


def _dec_ok(dec_deg: np.ndarray) -> np.ndarray:
    return (dec_deg >= -90.0) & (dec_deg <= 90.0)


def parse_ra_deg(text: str) -> float:
    """Right ascension in degrees from sexagesimal hours or decimal degrees; 0 <= RA < 360."""
    value = _read(text, "right ascension", _RA_HINT, hours=True)
    if not _ra_ok(np.float64(value)):
        raise ValueError(
            f"right ascension {_show(text.strip())} is {value:.9g} deg, outside 0 <= RA < 360 deg"
        )
    return value


def parse_dec_deg(text: str) -> float:
    """Declination in degrees from sexagesimal or decimal degrees; -90 <= Dec <= +90."""
    value = _read(text, "declination", _DEC_HINT, hours=False)
    if not _dec_ok(np.float64(value)):
        raise ValueError(
            f"declination {_show(text.strip())} is {value:.9g} deg, outside -90..+90 deg"
        )
    return value


def parse_angle_deg(text: str) -> float:
    """A general angle in degrees (sexagesimal or decimal degrees), without a range check."""
    return _read(text, "angle", "use degrees like 30, 30:15:00 or 30d15m", hours=False)


def split_position(text: str) -> tuple[str, str] | None:
    """The two angles of a position typed as one value, or None when it is not two angles
    (a target name such as ``M 42``).

    Accepted: ``"05:35:17.3 -05:23:28"``, ``"05:35:17.3,-05:23:28"``,
    ``"5h35m17.3s -5d23m28s"``, ``"05 35 17.3 -05 23 28"`` (a comma, or the words halved).
    """
    if len(text) > 2 * MAX_ANGLE_CHARS:
        return None
    parts = text.split(",")
    if len(parts) != 2:
        words = text.split()
        if len(words) not in (2, 4, 6):
            return None
        half = len(words) // 2
        parts = [" ".join(words[:half]), " ".join(words[half:])]
    first, second = (p.strip() for p in parts)
    for part, hours in ((first, True), (second, False)):
        try:
            _read(part, "angle", "", hours=hours)  # hours also take a bare decimal or d/m/s
        except ValueError:
            return None
    return first, second


def _as_text(value: object) -> str | None:
    """Entry of a column as stripped text; None for an empty or missing entry."""
    if value is None:
        return None
    if isinstance(value, int | float | np.number):  # from typed table columns
        number = float(value)
        return None if math.isnan(number) else repr(number)
    return str(value).strip() or None


def _plain_floats(values: Sequence[object]) -> np.ndarray:
    """Each entry as a float where it is a plain number, NaN elsewhere."""
    floats = []
    for value in values:
        try:
            floats.append(float(value))  # type: ignore[arg-type]
        except (TypeError, ValueError):
            floats.append(math.nan)
    return np.array(floats, dtype=np.float64)


def parse_column(
    values: Sequence[object],
    parse_one: Callable[[str], float],
    valid: Callable[[np.ndarray], np.ndarray] | None = None,
    *,
    colon_scale: float | None = None,
    unsigned: bool = False,
    decimals: np.ndarray | None = None,
) -> tuple[np.ndarray, dict[int, str]]:
    """Parse a column of text into float64, fast for plain decimal numbers.

    The whole column is first converted by numpy.  If that fails and ``colon_scale`` is
    given, a column of strict ``±D:M:S.s`` entries is read at once (first part times
    ``colon_scale``; ``unsigned`` forbids a sign).  Entries that are still not finite, or
    that fail ``valid`` (a vectorised range check), go one by one through ``parse_one``,
    which either returns the value or raises ``ValueError`` with the message to report.
    Repeated texts are parsed once.  Empty entries (blank text, None, NaN numbers) give NaN
    without an error.

    ``decimals``, when given, takes the place of the first conversion: the entries already
    read as numbers by a reader that gives exactly what ``float`` gives for each text, NaN
    exactly where the entry is empty, and infinity where it left the text unread.  Only
    the entries that are not finite or fail ``valid`` are then parsed one by one.

    Returns the values and ``{row index: message}`` for the entries that could not be read
    (NaN in the array).
    """
    n = len(values)
    if decimals is not None:
        out = np.array(decimals, dtype=np.float64)
    else:
        try:
            out = np.array(values, dtype=np.float64)
        except (TypeError, ValueError):
            out = None
    if (out is None or out.shape != (n,)) and colon_scale is not None:
        out = colon_column(values, colon_scale, unsigned, MAX_ANGLE_CHARS)
    if out is None or out.shape != (n,):
        out = _plain_floats(values)
    redo = ~np.isfinite(out)
    if valid is not None:
        with np.errstate(invalid="ignore"):
            redo |= ~valid(out)
    if decimals is not None:
        redo &= ~np.isnan(decimals)  # empty entries: NaN, as the loop below would give
    errors: dict[int, str] = {}
    seen: dict[str, float | str] = {}
    for i in np.flatnonzero(redo).tolist():
        text = _as_text(values[i])
        if text is None:
            out[i] = math.nan
            continue
        if text not in seen:
            try:
                seen[text] = parse_one(text)
            except ValueError as exc:
                seen[text] = str(exc)
        result = seen[text]
        if isinstance(result, str):
            errors[i] = result
            out[i] = math.nan
        else:
            out[i] = result
    out += 0.0  # turns -0.0 into 0.0
    return out, errors


def parse_ra_column(
    values: Sequence[object], *, decimals: np.ndarray | None = None
) -> tuple[np.ndarray, dict[int, str]]:
    """Right ascensions in degrees (NaN where empty or bad) and ``{row index: message}``.

    ``decimals``: see :func:`parse_column`.
    """
    return parse_column(
        values, parse_ra_deg, _ra_ok, colon_scale=15.0, unsigned=True, decimals=decimals
    )


def parse_dec_column(
    values: Sequence[object], *, decimals: np.ndarray | None = None
) -> tuple[np.ndarray, dict[int, str]]:
    """Declinations in degrees (NaN where empty or bad) and ``{row index: message}``.

    ``decimals``: see :func:`parse_column`.
    """
    return parse_column(values, parse_dec_deg, _dec_ok, colon_scale=1.0, decimals=decimals)


def _check_places(places: int) -> int:
    if not isinstance(places, int | np.integer) or not 0 <= places <= MAX_PLACES:
        raise ValueError(f"places must be an integer from 0 to {MAX_PLACES}, not {places!r}")
    return int(places)


def _split_units(total: np.ndarray, unit: int) -> tuple[np.ndarray, ...]:
    """Split integer counts of 1/unit seconds into (whole units, minutes, seconds, fraction)."""
    big, rest = np.divmod(total, 3600 * unit)
    minutes, rest = np.divmod(rest, 60 * unit)
    seconds, fraction = np.divmod(rest, unit)
    return big, minutes, seconds, fraction


def _fraction_text(fraction: int, places: int) -> str:
    return f".{fraction:0{places}d}" if places else ""


def format_hms_array(ra_deg: npt.ArrayLike, places: int = 1, missing: str = "") -> list[str]:
    """Right ascensions (degrees) as ``HH:MM:SS.s`` text, wrapped into 00h..24h.

    Rounding is done once, on the total count of 10**-places seconds, so a carry runs through
    minutes and hours (59.99995 s becomes the next minute, 24h becomes 00h).  Non-finite
    values give ``missing``.
    """
    places = _check_places(places)
    unit = 10**places
    ra = np.asarray(ra_deg, dtype=np.float64).ravel()
    finite = np.isfinite(ra)
    seconds_of_time = np.mod(np.where(finite, ra, 0.0), 360.0) * 240.0  # 1 deg = 240 s of time
    total = np.rint(seconds_of_time * unit).astype(np.int64) % (86400 * unit)
    hours, minutes, seconds, fraction = (a.tolist() for a in _split_units(total, unit))
    return [
        f"{h:02d}:{m:02d}:{s:02d}{_fraction_text(f, places)}" if ok else missing
        for ok, h, m, s, f in zip(finite.tolist(), hours, minutes, seconds, fraction, strict=True)
    ]


def format_dms_array(dec_deg: npt.ArrayLike, places: int = 0, missing: str = "") -> list[str]:
    """Angles (degrees) as ``±DD:MM:SS`` text, always with a sign.

    Rounding is done once on the total count of 10**-places arcseconds, so carries are exact;
    a value that rounds to zero is written with ``+``.  Non-finite values give ``missing``.
    """
    places = _check_places(places)
    unit = 10**places
    dec = np.asarray(dec_deg, dtype=np.float64).ravel()
    finite = np.isfinite(dec)
    scaled = np.abs(np.where(finite, dec, 0.0)) * 3600.0 * unit
    if np.any(scaled >= 2.0**62):
        raise ValueError("angle too large to format")
    total = np.rint(scaled).astype(np.int64)
    negative = (dec < 0) & (total > 0)
    degrees, minutes, seconds, fraction = (a.tolist() for a in _split_units(total, unit))
    return [
        f"{'-' if neg else '+'}{d:02d}:{m:02d}:{s:02d}{_fraction_text(f, places)}"
        if ok
        else missing
        for ok, neg, d, m, s, f in zip(
            finite.tolist(), negative.tolist(), degrees, minutes, seconds, fraction, strict=True
        )
    ]


def format_hms(ra_deg: float, places: int = 1, missing: str = "") -> str:
    """One right ascension (degrees) as ``HH:MM:SS.s``; see :func:`format_hms_array`."""
    return format_hms_array([ra_deg], places, missing)[0]


def format_dms(dec_deg: float, places: int = 0, missing: str = "") -> str:
    """One angle (degrees) as ``±DD:MM:SS``; see :func:`format_dms_array`."""
    return format_dms_array([dec_deg], places, missing)[0]
