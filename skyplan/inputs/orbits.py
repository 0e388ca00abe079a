"""Comets and minor planets from orbital elements in the MPC one-line formats.

Two fixed-column formats published by the IAU Minor Planet Center are read (columns are
1-based and inclusive, as in the MPC's descriptions):

**Minor planets (MPCORB format)**::

      1 -   7  number or provisional designation, packed
      9 -  13  absolute magnitude H            15 -  19  slope parameter G
     21 -  25  epoch, packed (0h TT)           27 -  35  mean anomaly M at the epoch (deg)
     38 -  46  argument of perihelion (deg)    49 -  57  longitude of ascending node (deg)
     60 -  68  inclination (deg)               71 -  79  eccentricity e
     81 -  91  mean daily motion n (deg/day)   93 - 103  semimajor axis a (au)
    106        uncertainty U                  108 - 116  reference
    118 - 122  number of observations         124 - 126  number of oppositions
    128 - 136  arc or years of observation    138 - 141  rms residual (arcsec)
    143 - 149  perturbers                     151 - 160  computer name
    162 - 165  flags (hex)                    167 - 194  readable designation, e.g. "(1) Ceres"
    195 - 202  date of last observation

Angles refer to the ecliptic and equinox J2000.0.  Columns 1-103 are required (``a`` may be
blank if ``n`` is given); H, G and the readable designation are used when present.

**Comets (CometEls format)**::

      1 -   4  periodic comet number           5        orbit type (P, C, D, X, I, A)
      6 -  12  provisional designation, packed (columns 11-12: fragment of a numbered comet)
     15 -  18  year of perihelion passage     20 -  21  month           23 -  29  day (TT)
     31 -  39  perihelion distance q (au)      42 -  49  eccentricity e
     52 -  59  argument of perihelion (deg)   62 -  69  longitude of ascending node (deg)
     72 -  79  inclination (deg)              82 -  89  epoch of osculation YYYYMMDD
     92 -  95  absolute magnitude H           97 - 100  slope parameter K
    103 - 158  designation and name           160 - 168  reference

Packed designations and dates follow the MPC's "packed provisional and permanent
designations" rules (base-62 digits 0-9, A-Z, a-z; century letters I=18, J=19, K=20).

Positions from the elements: :mod:`skyplan.engine.kepler`.
"""

from __future__ import annotations

import datetime as dt
import math
import re
from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from pathlib import Path

from skyplan.errors import InputError, InputErrors
from skyplan.inputs import readfile

MAX_LINE_CHARS = 300
MAX_LINES = 2_000_000
MAX_PROBLEMS = 1000  # bad lines reported before reading stops
GAUSS_K = 0.01720209895  # au^1.5 / day (IAU 1976)

KIND_MINOR_PLANET = "minor planet"
KIND_COMET = "comet"
_COMET_TYPES = "PCDXIA"
_B62 = "0123456789ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz"
_SURVEYS = {"PLS": "P-L", "T1S": "T-1", "T2S": "T-2", "T3S": "T-3"}
_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")
_DASHES = re.compile(r"-{10,}")


@dataclass(frozen=True)
class OrbitElements:
    """Heliocentric osculating elements of one comet or minor planet (J2000 ecliptic)."""

    designation: str  # unpacked: "(1)", "2007 TA418", "1P", "73P-B", "C/1995 O1"
    name: str  # readable name from the line ("(1) Ceres", "C/1995 O1 (Hale-Bopp)")
    object_type: str  # "minor planet" or "comet"
    epoch_jd_tt: float  # epoch of osculation (comets without one: time of perihelion)
    perihelion_jd_tt: float  # time of perihelion passage (NaN if not defined)
    perihelion_distance_au: float
    eccentricity: float
    inclination_deg: float
    node_deg: float  # longitude of the ascending node
    arg_perihelion_deg: float
    mean_anomaly_deg: float | None  # at the epoch (minor planets)
    semimajor_axis_au: float | None  # None for parabolic and hyperbolic orbits
    mean_daily_motion_deg: float | None
    abs_magnitude: float | None  # H
    slope: float | None  # G (minor planets) or K (comets)
    source: str  # "file:line"


# --- packed designations and dates ---------------------------------------------------------


def _b62(char: str) -> int:
    index = _B62.find(char) if len(char) == 1 else -1
    if index < 0:
        raise ValueError(f"'{char}' is not a packed digit")
    return index


def _century(char: str) -> int:
    if not ("A" <= char <= "Z"):
        raise ValueError(f"'{char}' is not a century letter")
    return _b62(char) * 100


def unpack_number(packed: str) -> int:
    """Packed permanent number: "00001" -> 1, "A0345" -> 100345, "~0000" -> 620000."""
    if len(packed) != 5:
        raise ValueError("a packed number has 5 characters")
    if packed[0] == "~":
        value = 0
        for char in packed[1:]:
            value = value * 62 + _b62(char)
        return 620000 + value
    if not packed[1:].isdigit() or not packed[1:].isascii():
        raise ValueError(f"'{packed}' is not a packed number")
    return _b62(packed[0]) * 10000 + int(packed[1:])


def _year_half_month(packed: str) -> tuple[int, str]:
    if not (packed[1:3].isdigit() and packed[1:3].isascii()):
        raise ValueError(f"'{packed[1:3]}' is not a two-digit year")
    half_month = packed[3]
    if not ("A" <= half_month <= "Y") or half_month == "I":
        raise ValueError(f"'{half_month}' is not a half-month letter")
    return _century(packed[0]) + int(packed[1:3]), half_month


def _cycle(packed: str) -> int:
    if not (packed[5].isdigit() and packed[5].isascii()):
        raise ValueError(f"'{packed[4:6]}' is not a packed cycle count")
    return _b62(packed[4]) * 10 + int(packed[5])


def unpack_provisional(packed: str) -> str:
    """Packed provisional minor-planet designation: "K07Tf8A" -> "2007 TA418"."""
    if len(packed) != 7:
        raise ValueError("a packed provisional designation has 7 characters")
    if packed[:3] in _SURVEYS and packed[3:].isdigit() and packed[3:].isascii():
        return f"{int(packed[3:])} {_SURVEYS[packed[:3]]}"
    year, half_month = _year_half_month(packed)
    second = packed[6]
    if not ("A" <= second <= "Z") or second == "I":
        raise ValueError(f"'{second}' is not a designation letter")
    cycle = _cycle(packed)
    return f"{year} {half_month}{second}{cycle if cycle else ''}"


def unpack_comet_provisional(packed: str) -> str:
    """Packed comet designation without its type: "K23A030" -> "2023 A3", "J94P01b" ->
    "1994 P1-B"; an upper-case last letter is a minor-planet style designation."""
    if len(packed) != 7:
        raise ValueError("a packed comet designation has 7 characters")
    year, half_month = _year_half_month(packed)
    order, last = _cycle(packed), packed[6]
    if last == "0":
        if order == 0:
            raise ValueError("comet order number 0")
        return f"{year} {half_month}{order}"
    if "a" <= last <= "z":
        return f"{year} {half_month}{order}-{last.upper()}"
    if "A" <= last <= "Z" and last != "I":
        return f"{year} {half_month}{last}{order if order else ''}"
    raise ValueError(f"'{last}' is not a fragment or designation letter")


def unpack_epoch(packed: str) -> dt.date:
    """Packed date: "K205V" -> 2020-05-31 (century letter, year, month, day)."""
    if len(packed) != 5:
        raise ValueError("a packed date has 5 characters")
    year, _ = _year_half_month(packed[:3] + "A")
    return dt.date(year, _b62(packed[3]), _b62(packed[4]))


def _jd(date: dt.date, day_fraction: float = 0.0) -> float:
    """Julian date of a proleptic Gregorian calendar date (0h) plus a fraction of a day."""
    return date.toordinal() + 1721424.5 + day_fraction


# --- fields --------------------------------------------------------------------------------


class _Line:
    """One line of an elements file, with field access that raises InputError."""

    def __init__(self, text: str, file: str, number: int) -> None:
        self.text, self.file, self.number = text, file, number

    def error(self, message: str, field: str | None = None) -> InputError:
        return InputError(message, file=self.file, line=self.number, field=field)

    def raw(self, first: int, last: int) -> str:
        return self.text[first - 1:last].strip()

    def number_field(self, first: int, last: int, field: str, *, required: bool = True,
                     low: float = -math.inf, high: float = math.inf) -> float | None:
        text = self.raw(first, last)
        if not text:
            if required:
                raise self.error(f"missing (columns {first}-{last})", field)
            return None
        if not _NUMBER.fullmatch(text):
            raise self.error(f"'{text}' is not a number (columns {first}-{last})", field)
        value = float(text)
        if not (low <= value <= high) or not math.isfinite(value):
            raise self.error(f"{text} is outside {low:g} to {high:g}", field)
        return value

    def blanks(self, columns: Iterable[int]) -> None:
        """Separator columns must be blank, or the fields are not where the format says."""
        for col in columns:
            if col <= len(self.text) and not self.text[col - 1].isspace():
                raise self.error(f"column {col} should be blank; the columns are misaligned",
                                 "layout")


def _is_comet_line(text: str) -> bool:
    return (len(text) >= 18 and text[4] in _COMET_TYPES and text[14:18].isdigit()
            and text[13:14] == " ")


def _minor_planet(line: _Line) -> OrbitElements:
    if len(line.text.rstrip()) < 103:
        raise line.error("too short for the MPCORB format (columns 1-103 are required) or "
                         "the comet format", "layout")
    line.blanks((8, 14, 20, 26, 36, 37, 47, 48, 58, 59, 69, 70, 80, 92))
    packed = line.text[0:7]
    try:
        if packed[5:7] == "  " and packed[:5].strip() == packed[:5]:
            designation = f"({unpack_number(packed[:5])})"
        else:
            designation = unpack_provisional(packed)
    except ValueError as exc:
        raise line.error(f"'{packed.strip()}': {exc}", "designation") from None
    try:
        epoch = unpack_epoch(line.text[20:25])
    except ValueError as exc:
        raise line.error(f"'{line.text[20:25]}': {exc}", "epoch") from None
    h = line.number_field(9, 13, "H", required=False, low=-10, high=40)
    g = line.number_field(15, 19, "G", required=False, low=-5, high=5)
    m = line.number_field(27, 35, "M", low=0, high=360)
    peri = line.number_field(38, 46, "peri", low=0, high=360)
    node = line.number_field(49, 57, "node", low=0, high=360)
    incl = line.number_field(60, 68, "incl", low=0, high=180)
    e = line.number_field(71, 79, "e", low=0, high=1e3)
    n = line.number_field(81, 91, "n", required=False, low=0, high=1e3)
    a = line.number_field(93, 103, "a", required=False, low=-1e9, high=1e9)
    if a is None:
        if not n:
            raise line.error("neither the semimajor axis nor the mean daily motion is given", "a")
        a = (GAUSS_K / math.radians(n)) ** (2.0 / 3.0) * (1.0 if e < 1.0 else -1.0)
    if not 1e-6 <= abs(a) <= 1e9:
        raise line.error(f"a = {a:g} au is outside 1e-06 to 1e+09 in size", "a")
    if e == 1.0 or (a > 0) != (e < 1.0):
        raise line.error(f"a = {a:g} au does not fit e = {e:g}", "a")
    name = line.raw(167, 194) or designation
    perihelion = math.nan
    if e < 1.0:
        motion = math.degrees(GAUSS_K / a**1.5)
        m_signed = m if m <= 180.0 else m - 360.0
        perihelion = _jd(epoch) - m_signed / motion
    return OrbitElements(
        designation, name, KIND_MINOR_PLANET, _jd(epoch), perihelion, a * (1.0 - e), e, incl,
        node, peri, m, a if e < 1.0 else None, n, h, g, f"{line.file}:{line.number}",
    )


def _comet(line: _Line) -> OrbitElements:
    if len(line.text.rstrip()) < 79:
        raise line.error("too short for the comet format (columns 1-79 are required)", "layout")
    line.blanks((13, 14, 19, 22, 30, 40, 41, 50, 51, 60, 61, 70, 71))
    number, kind, packed = line.text[0:4], line.text[4], line.text[5:12]
    try:
        if number.strip():
            if not (number.isdigit() and number.isascii()) or int(number) == 0:
                raise ValueError(f"'{number}' is not a comet number")
            fragment = packed.strip()
            if fragment and not (fragment.isalpha() and fragment.islower()
                                 and packed[:7 - len(fragment)].isspace()):
                raise ValueError(f"'{packed}' is not a fragment letter")
            designation = f"{int(number)}{kind}" + (f"-{fragment.upper()}" if fragment else "")
        else:
            designation = f"{kind}/{unpack_comet_provisional(packed)}"
    except ValueError as exc:
        raise line.error(f"'{line.text[0:12].strip()}': {exc}", "designation") from None
    year = line.number_field(15, 18, "perihelion year", low=1, high=9999)
    month = line.number_field(20, 21, "perihelion month", low=1, high=12)
    day = line.number_field(23, 29, "perihelion day", low=0, high=32)
    if year != int(year) or month != int(month):
        raise line.error("the year and month of perihelion must be whole numbers", "perihelion")
    try:
        perihelion = _jd(dt.date(int(year), int(month), 1), day - 1.0)
    except ValueError as exc:
        raise line.error(str(exc), "perihelion") from None
    q = line.number_field(31, 39, "q", low=1e-6, high=1e6)
    e = line.number_field(42, 49, "e", low=0, high=1e3)
    peri = line.number_field(52, 59, "peri", low=0, high=360)
    node = line.number_field(62, 69, "node", low=0, high=360)
    incl = line.number_field(72, 79, "incl", low=0, high=180)
    epoch = perihelion
    stamp = line.raw(82, 89)
    if stamp:
        try:
            if not (len(stamp) == 8 and stamp.isdigit() and stamp.isascii()):
                raise ValueError("expected YYYYMMDD")
            epoch = _jd(dt.date(int(stamp[:4]), int(stamp[4:6]), int(stamp[6:])))
        except ValueError as exc:
            raise line.error(f"'{stamp}': {exc}", "epoch") from None
    h = line.number_field(92, 95, "H", required=False, low=-10, high=40)
    k = line.number_field(97, 100, "K", required=False, low=-50, high=50)
    name = line.raw(103, 158) or designation
    a = q / (1.0 - e) if e < 1.0 else None
    motion = math.degrees(GAUSS_K / a**1.5) if a else None
    return OrbitElements(
        designation, name, KIND_COMET, epoch, perihelion, q, e, incl, node, peri, None, a,
        motion, h, k, f"{line.file}:{line.number}",
    )


def parse_line(text: str, *, file: str = "<elements>", line: int = 1) -> OrbitElements:
    """Parse one line in the MPCORB or the comet format (told apart by their columns)."""
    if len(text) > MAX_LINE_CHARS:
        raise InputError(f"line longer than {MAX_LINE_CHARS} characters", file=file, line=line)
    if not text.isascii() or not text.isprintable():
        raise InputError("the line holds characters outside printable ASCII", file=file,
                         line=line)
    where = _Line(text, file, line)
    return _comet(where) if _is_comet_line(text) else _minor_planet(where)


def _parse_numbered(lines: Iterable[tuple[int, str]], file: str, *,
                    refuse_junk: bool = False) -> list[OrbitElements]:
    """Parse numbered lines; '#' comments and blank lines are skipped, and so is a header
    that ends in a line of dashes (as at the top of MPCORB.DAT).

    ``refuse_junk``: a file with more bad lines than good ones is plainly not an elements
    file and is refused as a whole, quoting nothing of it."""
    out: list[OrbitElements] = []
    problems: list[InputError] = []
    for number, text in lines:
        if not text.strip() or text.lstrip().startswith("#"):
            continue
        if _DASHES.fullmatch(text.strip()) and not out:
            problems.clear()  # everything so far was the header
            continue
        try:
            out.append(parse_line(text, file=file, line=number))
        except InputError as exc:
            problems.append(exc)
            if len(problems) == MAX_PROBLEMS:
                problems.append(InputError(f"stopped reading after {MAX_PROBLEMS} bad lines",
                                           file=file, line=number))
                break
    if refuse_junk and len(problems) > len(out):
        raise InputError("not an elements file (MPC one-line formats): first bad line "
                         f"{problems[0].line}", file=file)
    if len(problems) == 1:
        raise problems[0]
    if problems:
        raise InputErrors(problems)
    if not out:
        raise InputError("no orbital elements found", file=file)
    return out


def parse_elements(text: str, *, file: str = "<elements>") -> list[OrbitElements]:
    """Parse the text of an elements file (see :func:`read_elements`)."""
    lines = text.splitlines()
    if len(lines) > MAX_LINES:
        raise InputError(f"more than {MAX_LINES:,} lines", file=file)
    return _parse_numbered(enumerate(lines, 1), file)


def read_elements(path: str | Path) -> list[OrbitElements]:
    """Read a user's elements file in the MPCORB and/or comet one-line formats.

    Bounded: a line longer than 300 characters or a file of more than 2,000,000 lines is
    an InputError; only a regular file is read (:mod:`skyplan.inputs.readfile`), and a file
    with more bad lines than good ones is refused as a whole.  Every malformed line is
    reported (file, line, field), up to ``MAX_PROBLEMS`` of them, after which reading stops
    and says so; none is skipped.
    """
    file = str(path)

    def numbered(handle) -> Iterator[tuple[int, str]]:
        for number, raw in enumerate(iter(lambda: handle.readline(MAX_LINE_CHARS + 3), b""), 1):
            if number > MAX_LINES:
                raise InputError(f"more than {MAX_LINES:,} lines", file=file)
            body = raw.rstrip(b"\r\n")
            if len(body) > MAX_LINE_CHARS:
                raise InputError(f"line longer than {MAX_LINE_CHARS} characters", file=file,
                                 line=number)
            try:
                yield number, body.decode("ascii")
            except UnicodeDecodeError:
                raise InputError("the line holds characters outside printable ASCII",
                                 file=file, line=number) from None

    try:
        with readfile.open_input(path, what="elements file") as handle:
            return _parse_numbered(numbered(handle), file, refuse_junk=True)
    except OSError as exc:
        raise InputError(f"cannot read the elements file ({exc.strerror or exc})",
                         file=file) from None
