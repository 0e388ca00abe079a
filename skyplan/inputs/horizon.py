"""The local horizon: a profile of obstruction altitude against azimuth, and its text file.

A horizon file has two columns, azimuth and altitude in degrees (whitespace or a comma
between them, ``#`` starting a comment), at most :data:`MAX_HORIZON_BYTES` long.  Every bad
line is reported with its number; a message quotes at most one short, sanitised excerpt of
a field, never a line.  A file in which most lines are bad is plainly not a horizon
profile: it is refused as a whole, naming only its first bad line, so that a sites file
pointing at some other file never shows that file's content.
"""

from __future__ import annotations

import re
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from skyplan.errors import InputError, InputErrors
from skyplan.inputs import readfile
from skyplan.inputs.fieldvalues import decimal, in_range, number, shown
from skyplan.text import quoted

MAX_HORIZON_BYTES = 4 << 20  # a profile at every 0.01 degree is about 500 kB


@dataclass(frozen=True, eq=False)
class HorizonProfile:
    """The local horizon: obstruction altitude against azimuth, closed around 360 degrees.

    ``az_deg`` is strictly increasing in [0, 360); ``alt_deg`` lies in [-90, 90].  Between
    points the altitude is interpolated linearly in azimuth, across north as well.
    """

    az_deg: np.ndarray
    alt_deg: np.ndarray
    _az_closed: np.ndarray = field(init=False, repr=False)
    _alt_closed: np.ndarray = field(init=False, repr=False)

    def __post_init__(self) -> None:
        az = np.array(self.az_deg, dtype=np.float64).ravel()
        alt = np.array(self.alt_deg, dtype=np.float64).ravel()
        if az.size != alt.size or az.size < 2:
            raise ValueError("a horizon profile needs at least 2 (azimuth, altitude) points")
        if not (np.all(np.isfinite(az)) and np.all(np.isfinite(alt))):
            raise ValueError("horizon azimuths and altitudes must be finite")
        if az[0] < 0.0 or az[-1] >= 360.0 or np.any(np.diff(az) <= 0.0):
            raise ValueError("horizon azimuths must be strictly increasing within [0, 360)")
        if np.any(np.abs(alt) > 90.0):
            raise ValueError("horizon altitudes must lie within -90..90 degrees")
        # One point repeated on each side, 360 degrees away, closes the profile so that a
        # single np.interp call handles the wrap-around at north.
        az_closed = np.concatenate(([az[-1] - 360.0], az, [az[0] + 360.0]))
        alt_closed = np.concatenate(([alt[-1]], alt, [alt[0]]))
        for name, value in (
            ("az_deg", az),
            ("alt_deg", alt),
            ("_az_closed", az_closed),
            ("_alt_closed", alt_closed),
        ):
            value.setflags(write=False)
            object.__setattr__(self, name, value)

    def altitude_at(self, az_deg: np.ndarray) -> np.ndarray:
        """Obstruction altitude (deg) at each azimuth (deg, any range; NaN stays NaN)."""
        az = np.asarray(az_deg, dtype=np.float64)
        if not (az.size and az.min() >= 0.0 and az.max() < 360.0):  # skip the costly mod
            az = np.mod(az, 360.0)
        return np.asarray(np.interp(az, self._az_closed, self._alt_closed))

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, HorizonProfile):
            return NotImplemented
        same_az = np.array_equal(self.az_deg, other.az_deg)
        return bool(same_az and np.array_equal(self.alt_deg, other.alt_deg))

    def __hash__(self) -> int:
        return hash((self.az_deg.tobytes(), self.alt_deg.tobytes()))



def read_horizon_file(path: str | Path) -> HorizonProfile:
    """A horizon profile from a text file of ``azimuth altitude`` lines (degrees).

    Columns are separated by whitespace or a comma; ``#`` starts a comment.  Every bad line is
    reported (as :class:`InputErrors` when there are several).
    """
    profile, problems = horizon_file_points(Path(path))
    if problems:
        raise problems[0] if len(problems) == 1 else InputErrors(problems)
    assert profile is not None
    return profile


def _field(text: str, what: str) -> float:
    """A decimal number; the error quotes the field as a short sanitised excerpt."""
    try:
        value = decimal(text)
    except ValueError:
        raise ValueError(f"{what} {quoted(text, 12)} is not a decimal number") from None
    if what == "azimuth":
        return in_range(value, 0.0, 360.0, what)
    return in_range(value, -90.0, 90.0, what)


def horizon_file_points(path: Path) -> tuple[HorizonProfile | None, list[InputError]]:
    """The profile of a horizon file, or None and its problems (see the module docstring)."""
    name = str(path)
    try:
        data = readfile.read_input(path, MAX_HORIZON_BYTES, what="horizon file")
        text = data.decode("utf-8")
    except InputError as exc:
        return None, [exc]
    except UnicodeDecodeError:
        return None, [InputError("not a horizon profile: not UTF-8 text", file=name)]
    points: list[tuple[float, float, str, int | None]] = []
    problems: list[InputError] = []
    for line_no, raw in enumerate(text.splitlines(), start=1):
        line = raw.split("#", 1)[0].strip()
        if not line:
            continue
        columns = [c for c in re.split(r"[,\s]+", line) if c]
        if len(columns) != 2:
            problems.append(
                InputError(
                    f"expected 2 columns (azimuth altitude), found {len(columns)}",
                    file=name,
                    line=line_no,
                )
            )
            continue
        try:
            az = _field(columns[0], "azimuth")
        except ValueError as exc:
            problems.append(InputError(str(exc), file=name, line=line_no, field="azimuth"))
            continue
        try:
            alt = _field(columns[1], "altitude")
        except ValueError as exc:
            problems.append(InputError(str(exc), file=name, line=line_no, field="altitude"))
            continue
        points.append((az, alt, f"line {line_no}", line_no))
    if len(problems) > len(points):
        return None, [InputError(f"not a horizon profile (lines of 'azimuth altitude' in "
                                 f"degrees): first bad line {problems[0].line}", file=name)]
    profile, more = profile_from_points(points, file=name, field=None)
    return (None if problems else profile), problems + more


def profile_from_points(
    points: list[tuple[float, float, str, int | None]],
    *,
    file: str | None,
    field: str | None,
    line: int | None = None,
) -> tuple[HorizonProfile | None, list[InputError]]:
    """Check azimuths are distinct (360 counts as 0) and build the profile.

    ``points`` are (azimuth, altitude, label, line) with values already range-checked; a point
    without a line of its own is reported at ``line``.  A point at 360 that repeats the
    altitude at 0 only closes the circle and is accepted.
    """
    problems: list[InputError] = []
    seen: dict[float, tuple[float, str, float]] = {}
    for az, alt, label, point_line in points:
        key = 0.0 if az == 360.0 else az
        if key in seen:
            first_alt, first_label, first_az = seen[key]
            closes = first_az != az  # one of the two is 360, the other 0
            if closes and alt == first_alt:
                continue
            problems.append(
                InputError(
                    f"azimuth {az:g} repeats the azimuth of {first_label}"
                    + (" (360 is the same as 0)" if closes else ""),
                    file=file,
                    line=line if point_line is None else point_line,
                    field=field or "azimuth",
                )
            )
            continue
        seen[key] = (alt, label, az)
    if not problems and len(seen) < 2:
        problems.append(
            InputError(
                f"a horizon needs at least 2 points with different azimuths, found {len(seen)}",
                file=file,
                line=line,
                field=field,
            )
        )
    if problems:
        return None, problems
    az_sorted = sorted(seen)
    return HorizonProfile(
        az_deg=np.array(az_sorted), alt_deg=np.array([seen[a][0] for a in az_sorted])
    ), []


# --------------------------------------------------------------------------- in a sites file


def horizon_from_table(
    table: dict,
    path: Path,
    line: int | None,
    field_name: str,
    problem: Callable[..., None],
    problems: list[InputError],
) -> HorizonProfile | None:
    """A sites-file site's horizon from ``horizon`` pairs or ``horizon_file``.

    ``path`` is the sites file, ``line`` and ``field_name`` those of the ``horizon`` key;
    ``problem(message, key)`` reports at a key of the site's table, and problems found in a
    horizon file are appended to ``problems``.
    """
    both = "horizon" in table and "horizon_file" in table
    if both:
        problem("give either horizon or horizon_file, not both", "horizon_file")
    profile = None
    if "horizon_file" in table:
        profile = _horizon_listed(table["horizon_file"], path, problem, problems)
    if "horizon" in table:
        profile = _horizon_inline(table["horizon"], path, line, field_name, problem, problems)
    return None if both else profile


def _horizon_listed(
    given: object, path: Path, problem: Callable[..., None], problems: list[InputError]
) -> HorizonProfile | None:
    """The horizon file named in a sites file, relative to the sites file's folder."""
    if not isinstance(given, str) or not given.strip():
        problem(f"expected a file name, got {shown(given)}", "horizon_file")
        return None
    horizon_path = Path(given).expanduser()
    if not horizon_path.is_absolute():
        horizon_path = path.parent / horizon_path
    if not horizon_path.exists():
        problem(
            f"horizon file {horizon_path} not found (paths are relative to the sites file)",
            "horizon_file",
        )
        return None
    profile, more = horizon_file_points(horizon_path)
    problems.extend(more)
    return profile


def _horizon_inline(
    pairs: object,
    path: Path,
    line: int | None,
    field_name: str,
    problem: Callable[..., None],
    problems: list[InputError],
) -> HorizonProfile | None:
    """The horizon from ``horizon = [[az, alt], ...]``; each bad point is reported."""
    if not isinstance(pairs, list):
        problem("expected a list of [azimuth, altitude] pairs in degrees", "horizon")
        return None
    points = []
    bad = False
    for index, pair in enumerate(pairs, start=1):
        try:
            if not isinstance(pair, list) or len(pair) != 2:
                raise ValueError(f"expected [azimuth, altitude], got {shown(pair)}")
            az = in_range(number(pair[0]), 0.0, 360.0, "azimuth")
            alt = in_range(number(pair[1]), -90.0, 90.0, "altitude")
        except (TypeError, ValueError) as exc:
            problem(f"point {index}: {exc}", "horizon")
            bad = True
            continue
        points.append((az, alt, f"point {index}", None))
    if bad:
        return None
    profile, more = profile_from_points(points, file=str(path), field=field_name, line=line)
    problems.extend(more)
    return profile


