"""Sites: where the telescope stands, read from a ``LAT,LON[,ELEV]`` spec or a TOML sites file.

A :class:`Site` holds the position (geodetic latitude, east longitude, elevation), the IANA
time zone, the local weather used for refraction, an optional horizon profile and the site's
default limits.  Everything here is parsed and validated at the edge: every problem becomes an
:class:`~skyplan.errors.InputError` naming the file, line and field.

The sites file is TOML (read with the standard :mod:`tomllib`)::

    default = "ridge"                 # optional: the site used when --site is not given

    [site.ridge]                      # one table per site; the name is matched case-insensitively
    latitude = 31.2                   # degrees, north positive, or a string "+31:12:00"
    longitude = -110.5                # degrees, east positive (0..360 accepted), or "-110:30:00"
    elevation = 2100                  # metres above sea level (optional, default 0)
    zone = "America/Phoenix"          # optional IANA zone; found from the coordinates if absent
    pressure = 790.0                  # hPa (optional; standard atmosphere if absent)
    temperature = 6.0                 # degrees C (optional)
    humidity = 0.3                    # relative humidity 0..1 (optional)
    horizon = [[0, 12], [90, 8], [180, 15], [270, 5]]   # azimuth, altitude pairs in degrees
    # horizon_file = "ridge-horizon.txt"                # or a two-column file beside this one

    [site.ridge.limits]               # the site's defaults for the observer's limits
    min_alt_deg = 25
    max_airmass = 2.0
    dark = "nautical"                 # "civil", "nautical", "astronomical" or a Sun altitude
    moon_gap_deg = 30
    sun_gap_deg = 45
    ha_range_h = [-4.5, 4.5]
    dec_range_deg = [-30, 85]
"""

from __future__ import annotations

import difflib
import functools
import json
import math
import os
import re
import sys
import tomllib
import zoneinfo
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from skyplan import notices
from skyplan.errors import InputError, InputErrors

ELEVATION_RANGE_M = (-500.0, 9000.0)
PRESSURE_RANGE_HPA = (100.0, 1100.0)
TEMPERATURE_RANGE_C = (-90.0, 60.0)
DARK_NAMES = ("civil", "nautical", "astronomical")

SITE_KEYS = (
    "latitude",
    "longitude",
    "elevation",
    "zone",
    "pressure",
    "temperature",
    "humidity",
    "horizon",
    "horizon_file",
    "limits",
)
LIMIT_KEYS = (
    "min_alt_deg",
    "max_airmass",
    "dark",
    "moon_gap_deg",
    "sun_gap_deg",
    "ha_range_h",
    "dec_range_deg",
)

NO_SITE_MESSAGE = (
    "no site given: use --site LAT,LON[,ELEV] or --site NAME with a sites file "
    "(see `skyplan sites list`), or --demo for the demo observatory"
)


# --------------------------------------------------------------------------- data


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


@dataclass(frozen=True)
class Site:
    """Where the telescope stands.

    ``lon_deg`` is normalised to -180..180 (east positive).  An empty ``zone`` is filled in
    from the coordinates (offline, with timezonefinder); over the ocean that gives the nautical
    ``Etc/GMT+N`` zone.  ``limits`` holds the site file's defaults for the observer's limits
    (keys in :data:`LIMIT_KEYS`).  ``source`` says where the site came from, for messages.
    """

    name: str
    lat_deg: float
    lon_deg: float
    elevation_m: float = 0.0
    zone: str = ""
    pressure_hpa: float | None = None
    temperature_c: float | None = None
    humidity: float | None = None
    horizon: HorizonProfile | None = None
    limits: dict[str, object] = field(default_factory=dict, hash=False)
    source: str = ""

    def __post_init__(self) -> None:
        lat, lon, elev = float(self.lat_deg), float(self.lon_deg), float(self.elevation_m)
        if not (math.isfinite(lat) and abs(lat) <= 90.0):
            raise ValueError(f"site latitude {lat} outside -90..90")
        if not (math.isfinite(lon) and -180.0 <= lon <= 360.0):
            raise ValueError(f"site longitude {lon} outside -180..360")
        if not math.isfinite(elev):
            raise ValueError(f"site elevation {elev} is not finite")
        lon = normalise_lon(lon)
        object.__setattr__(self, "lat_deg", lat)
        object.__setattr__(self, "lon_deg", lon)
        object.__setattr__(self, "elevation_m", elev)
        if not self.zone:
            object.__setattr__(self, "zone", zone_at(lat, lon))
        _zone_info(self.zone)  # a bad zone given directly is a programming error: ValueError

    @property
    def tzinfo(self) -> zoneinfo.ZoneInfo:
        """The site's time zone."""
        return zoneinfo.ZoneInfo(self.zone)

    def weather(self) -> tuple[float, float, float]:
        """(pressure_hpa, temperature_c, humidity) with the standard atmosphere for what is absent.

        Absent pressure and temperature come from the ICAO Standard Atmosphere (ICAO Doc 7488,
        identical below 32 km to the U.S. Standard Atmosphere 1976): see :func:`isa_pressure_hpa`
        and :func:`isa_temperature_c` at the site's elevation.  Absent humidity is 0.0, the
        default of ERFA's refraction constants as astropy uses them (``relative_humidity=0``);
        at optical wavelengths it changes refraction by well under 0.1 per cent.
        """
        pressure = self.pressure_hpa
        if pressure is None:
            pressure = float(isa_pressure_hpa(self.elevation_m))
        temperature = self.temperature_c
        if temperature is None:
            temperature = float(isa_temperature_c(self.elevation_m))
        humidity = 0.0 if self.humidity is None else self.humidity
        return pressure, temperature, humidity


@dataclass(frozen=True)
class SitesFile:
    """A parsed sites file: the sites by name (as written) and the optional default name."""

    path: Path
    sites: dict[str, Site]
    default: str | None


# --------------------------------------------------------------------------- atmosphere

_ISA_P0_HPA = 1013.25  # sea-level pressure
_ISA_T0_K = 288.15  # sea-level temperature, 15 degrees C
_ISA_LAPSE_K_PER_M = 0.0065  # troposphere lapse rate, 6.5 K/km
_ISA_G0 = 9.80665  # standard gravity, m s^-2
_ISA_M = 0.0289644  # molar mass of dry air, kg mol^-1
_ISA_R = 8.31432  # gas constant as the 1976 standard states it, J mol^-1 K^-1
_ISA_R0_M = 6356766.0  # effective Earth radius for geopotential altitude


def geopotential_m(elevation_m: np.ndarray | float) -> np.ndarray:
    """Geopotential altitude H = r0 Z / (r0 + Z), r0 = 6356.766 km.

    U.S. Standard Atmosphere 1976 (NOAA/NASA/USAF), eq. 18.
    """
    z = np.asarray(elevation_m, dtype=np.float64)
    return _ISA_R0_M * z / (_ISA_R0_M + z)


def isa_temperature_c(elevation_m: np.ndarray | float) -> np.ndarray:
    """Standard-atmosphere temperature: 15 C falling 6.5 K per geopotential km (ICAO Doc 7488)."""
    return _ISA_T0_K - 273.15 - _ISA_LAPSE_K_PER_M * geopotential_m(elevation_m)


def isa_pressure_hpa(elevation_m: np.ndarray | float) -> np.ndarray:
    """Standard-atmosphere pressure by the barometric formula for a constant lapse rate.

    P = P0 [(T0 - L H) / T0]^(g0 M / (R L)) with P0 = 1013.25 hPa, T0 = 288.15 K, L = 6.5 K/km
    and H the geopotential altitude (U.S. Standard Atmosphere 1976, eq. 33a, there written with
    a signed lapse rate; the same model as the ICAO Standard Atmosphere, Doc 7488).  Valid in
    the troposphere, below 11 km.
    """
    h = geopotential_m(elevation_m)
    exponent = _ISA_G0 * _ISA_M / (_ISA_R * _ISA_LAPSE_K_PER_M)
    return _ISA_P0_HPA * ((_ISA_T0_K - _ISA_LAPSE_K_PER_M * h) / _ISA_T0_K) ** exponent


# --------------------------------------------------------------------------- zones


def normalise_lon(lon_deg: float) -> float:
    """East longitude in -180..180 (values above 180, up to 360, are taken 360 degrees down)."""
    return lon_deg - 360.0 if lon_deg > 180.0 else lon_deg


def nautical_zone(lon_deg: float) -> str:
    """The nautical zone for a longitude: 15-degree bands centred on multiples of 15 degrees.

    Zone number n = round(lon / 15), limited to -12..12; the IANA name inverts the sign
    (``Etc/GMT+2`` is two hours behind UTC, for longitudes near 30 W).
    """
    n = max(-12, min(12, math.floor(normalise_lon(lon_deg) / 15.0 + 0.5)))
    if n == 0:
        return "Etc/GMT"
    return f"Etc/GMT{-n:+d}"


@functools.lru_cache(maxsize=1)
def _zone_finder() -> object | None:
    """One shared timezonefinder instance, built on first use (kept in memory when possible)."""
    try:
        from timezonefinder import TimezoneFinder
    except ImportError:
        return None
    try:
        return TimezoneFinder(in_memory=True)
    except TypeError:
        return TimezoneFinder()


def zone_at(lat_deg: float, lon_deg: float) -> str:
    """The IANA zone at a point, offline; the nautical zone where no zone polygon covers it."""
    finder = _zone_finder()
    zone = None
    if finder is None:
        notices.add("timezonefinder is not installed: site zones fall back to nautical zones")
    else:
        zone = finder.timezone_at(lng=normalise_lon(lon_deg), lat=lat_deg)
    if zone is None:
        zone = nautical_zone(lon_deg)
        if finder is not None:
            notices.add(f"no time zone found at {lat_deg:.4f},{lon_deg:.4f}: using {zone}")
    return zone


def _zone_info(zone: str) -> zoneinfo.ZoneInfo:
    """ZoneInfo for a name; ValueError when the name is not a known IANA zone."""
    try:
        return zoneinfo.ZoneInfo(zone)
    except (zoneinfo.ZoneInfoNotFoundError, ValueError, OSError) as exc:
        raise ValueError(f"unknown IANA time zone {zone!r}") from exc


# --------------------------------------------------------------------------- numbers

_DECIMAL = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?")
_SEXAGESIMAL = re.compile(r"([+-]?)(\d+)[:\s]+(\d+(?:\.\d*)?)(?:[:\s]+(\d+(?:\.\d*)?))?")


def _decimal(text: str) -> float:
    """A finite decimal number; ValueError with a plain reason otherwise."""
    text = text.strip()
    if not _DECIMAL.fullmatch(text):
        raise ValueError(f"{text!r} is not a decimal number")
    value = float(text)
    if not math.isfinite(value):
        raise ValueError(f"{text!r} is not a finite number")
    return value


def _angle(value: object) -> float:
    """Degrees from a TOML number or a string: decimal or sexagesimal "+D:M[:S]" / "D M S"."""
    if isinstance(value, str):
        text = value.strip()
        match = _SEXAGESIMAL.fullmatch(text)
        if match is None:
            try:
                return _decimal(text)
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
    return _number(value)


def _number(value: object) -> float:
    """A finite TOML number (not a boolean)."""
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise TypeError(f"expected a number, got {_shown(value)}")
    result = float(value)
    if not math.isfinite(result):
        raise ValueError(f"expected a finite number, got {value}")
    return result


def _in_range(value: float, lo: float, hi: float, what: str, unit: str = "") -> float:
    if not lo <= value <= hi:
        raise ValueError(f"{what} {value:g}{unit} outside {lo:g}..{hi:g}{unit}")
    return value


def _shown(value: object) -> str:
    if isinstance(value, str):
        return repr(value)
    return f"{type(value).__name__} {value!r}"[:60]


# --------------------------------------------------------------------------- LAT,LON[,ELEV]


def parse_site_spec(text: str) -> Site:
    """A site from ``LAT,LON[,ELEV_M]`` in decimal degrees (east positive) and metres."""
    parts = text.split(",")
    if len(parts) not in (2, 3):
        raise InputError(
            f"expected LAT,LON[,ELEV_M] in decimal degrees and metres, got {text!r}", field="site"
        )
    labels = ("latitude", "longitude", "elevation")
    ranges = ((-90.0, 90.0, ""), (-180.0, 360.0, ""), (*ELEVATION_RANGE_M, " m"))
    values = []
    for part, label, (lo, hi, unit) in zip(parts, labels, ranges, strict=False):
        try:
            values.append(_in_range(_decimal(part), lo, hi, label, unit))
        except ValueError as exc:
            raise InputError(f"{label}: {exc} (in {text!r})", field="site") from None
    lat, lon = values[0], normalise_lon(values[1])
    elevation = values[2] if len(values) == 3 else 0.0
    return Site(
        name=f"{lat:.10g},{lon:.10g}",
        lat_deg=lat,
        lon_deg=lon,
        elevation_m=elevation,
        source=f"--site {text.strip()}",
    )


# --------------------------------------------------------------------------- horizon


def read_horizon_file(path: str | Path) -> HorizonProfile:
    """A horizon profile from a text file of ``azimuth altitude`` lines (degrees).

    Columns are separated by whitespace or a comma; ``#`` starts a comment.  Every bad line is
    reported (as :class:`InputErrors` when there are several).
    """
    profile, problems = _horizon_file(Path(path))
    if problems:
        raise problems[0] if len(problems) == 1 else InputErrors(problems)
    assert profile is not None
    return profile


def _horizon_file(path: Path) -> tuple[HorizonProfile | None, list[InputError]]:
    name = str(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        return None, [InputError("horizon file not found", file=name)]
    except (OSError, UnicodeDecodeError) as exc:
        return None, [InputError(f"cannot read horizon file: {exc}", file=name)]
    points: list[tuple[float, float, str, int | None]] = []
    problems: list[InputError] = []
    for number, raw in enumerate(text.splitlines(), start=1):
        line = raw.split("#", 1)[0].strip()
        if not line:
            continue
        columns = [c for c in re.split(r"[,\s]+", line) if c]
        if len(columns) != 2:
            problems.append(
                InputError(
                    f"expected 2 columns (azimuth altitude), found {len(columns)}: {line!r}",
                    file=name,
                    line=number,
                )
            )
            continue
        try:
            az = _in_range(_decimal(columns[0]), 0.0, 360.0, "azimuth")
        except ValueError as exc:
            problems.append(InputError(str(exc), file=name, line=number, field="azimuth"))
            continue
        try:
            alt = _in_range(_decimal(columns[1]), -90.0, 90.0, "altitude")
        except ValueError as exc:
            problems.append(InputError(str(exc), file=name, line=number, field="altitude"))
            continue
        points.append((az, alt, f"line {number}", number))
    profile, more = _profile_from_points(points, file=name, field=None)
    return (None if problems else profile), problems + more


def _profile_from_points(
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


# --------------------------------------------------------------------------- sites file


def default_sites_path() -> Path:
    """``$SKYPLAN_SITES`` if set, else ``sites.toml`` in the platform's user config folder."""
    override = os.environ.get("SKYPLAN_SITES")
    if override:
        return Path(override).expanduser()
    if sys.platform == "win32":
        appdata = os.environ.get("APPDATA")
        base = Path(appdata) if appdata else Path.home() / "AppData" / "Roaming"
    elif sys.platform == "darwin":
        base = Path.home() / "Library" / "Application Support"
    else:
        xdg = os.environ.get("XDG_CONFIG_HOME")
        base = Path(xdg) if xdg and os.path.isabs(xdg) else Path.home() / ".config"
    return base / "skyplan" / "sites.toml"


def load_sites_file(path: str | Path) -> SitesFile:
    """Parse a sites file; any problem raises (several at once as :class:`InputErrors`)."""
    parsed, problems = _read_sites_file(Path(path))
    if problems:
        raise problems[0] if len(problems) == 1 else InputErrors(problems)
    assert parsed is not None
    return parsed


def load_sites(path: str | Path) -> dict[str, Site]:
    """The sites of a sites file by name, as written in the file."""
    return load_sites_file(path).sites


def check_sites_file(path: str | Path) -> list[InputError]:
    """Every problem in a sites file (each site, each field, each horizon-file line)."""
    return _read_sites_file(Path(path))[1]


def find_site(name: str, path: str | Path) -> Site:
    """The site called ``name`` (case-insensitive) in a sites file."""
    return _pick(name, load_sites_file(path))


def resolve_site(spec: str | None, sites_file: str | None) -> Site:
    """The site for ``--site``: coordinates, a name in the sites file, or the file's default.

    A spec with a comma is read as ``LAT,LON[,ELEV]``; anything else is a site name looked up
    in ``sites_file`` or :func:`default_sites_path`.
    """
    if spec is not None and "," in spec:
        return parse_site_spec(spec)
    path = Path(sites_file).expanduser() if sites_file else default_sites_path()
    if spec is None or not spec.strip():
        if not path.is_file():
            raise InputError(NO_SITE_MESSAGE, field="site")
        parsed = load_sites_file(path)
        if parsed.default is None:
            raise InputError(f"{NO_SITE_MESSAGE} (sites file {path} has no default)", field="site")
        return _pick(parsed.default, parsed)
    if not path.is_file():
        raise InputError(
            f"site {spec.strip()!r} not found: no sites file at {path}; name one with "
            "--sites-file PATH or the SKYPLAN_SITES environment variable, "
            "or give --site LAT,LON[,ELEV]",
            field="site",
        )
    return _pick(spec, load_sites_file(path))


def _pick(name: str, parsed: SitesFile) -> Site:
    wanted = name.strip().casefold()
    for site_name, site in parsed.sites.items():
        if site_name.casefold() == wanted:
            return site
    if not parsed.sites:
        raise InputError(
            f"unknown site {name.strip()!r}: the file has no sites",
            file=str(parsed.path),
            field="site",
        )
    by_fold = {n.casefold(): n for n in parsed.sites}
    ranked = difflib.get_close_matches(wanted, list(by_fold), n=len(by_fold), cutoff=0.0)
    known = ", ".join(by_fold[n] for n in ranked)
    raise InputError(
        f"unknown site {name.strip()!r}; known sites: {known}", file=str(parsed.path), field="site"
    )


def site_to_toml(site: Site) -> str:
    """The ``[site.NAME]`` tables of a site, in the sites-file format (horizon inline)."""
    key = _toml_key(site.name)
    lines = [
        f"[site.{key}]",
        f"latitude = {site.lat_deg!r}",
        f"longitude = {site.lon_deg!r}",
        f"elevation = {site.elevation_m!r}",
        f"zone = {json.dumps(site.zone)}",
    ]
    for name, value in (
        ("pressure", site.pressure_hpa),
        ("temperature", site.temperature_c),
        ("humidity", site.humidity),
    ):
        if value is not None:
            lines.append(f"{name} = {float(value)!r}")
    if site.horizon is not None:
        pairs = ", ".join(
            f"[{float(a)!r}, {float(b)!r}]"
            for a, b in zip(site.horizon.az_deg, site.horizon.alt_deg, strict=True)
        )
        lines.append(f"horizon = [{pairs}]")
    if site.limits:
        lines += ["", f"[site.{key}.limits]"]
        for name, value in site.limits.items():
            lines.append(f"{name} = {_toml_value(value)}")
    return "\n".join(lines) + "\n"


def _toml_key(name: str) -> str:
    return name if re.fullmatch(r"[A-Za-z0-9_-]+", name) else json.dumps(name)


def _toml_value(value: object) -> str:
    if isinstance(value, str):
        return json.dumps(value)
    if isinstance(value, tuple | list):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    if isinstance(value, int | float):
        return repr(float(value))
    raise TypeError(f"cannot write {_shown(value)} to a sites file")


# --------------------------------------------------------------------------- file parsing

_KEY_PART = r'"(?:[^"\\]|\\.)*"|\'[^\']*\'|[A-Za-z0-9_-]+'
_DOTTED = rf"(?:{_KEY_PART})(?:\s*\.\s*(?:{_KEY_PART}))*"
_HEADER_RE = re.compile(rf"\s*\[\s*({_DOTTED})\s*\]\s*(?:#.*)?")
_KEY_RE = re.compile(rf"\s*({_DOTTED})\s*=")
_TOML_WHERE = re.compile(r"\s*\(at line (\d+), column \d+\)\s*$")


class _Lines:
    """Best-effort line numbers of TOML keys, found by scanning the text."""

    def __init__(self, text: str) -> None:
        self._first: dict[tuple[str, ...], int] = {}
        table: tuple[str, ...] = ()
        for number, line in enumerate(text.splitlines(), start=1):
            header = _HEADER_RE.fullmatch(line)
            if header:
                table = _key_parts(header.group(1))
                self._first.setdefault(table, number)
                continue
            key = _KEY_RE.match(line)
            if key:
                self._first.setdefault(table + _key_parts(key.group(1)), number)

    def of(self, *path: str) -> int | None:
        """Line of the key at ``path``, else of its nearest enclosing table found."""
        for end in range(len(path), 0, -1):
            if path[:end] in self._first:
                return self._first[path[:end]]
        return None


def _key_parts(dotted: str) -> tuple[str, ...]:
    parts = re.findall(_KEY_PART, dotted)
    return tuple(p[1:-1] if p[:1] in "\"'" else p for p in parts)


def _read_sites_file(path: Path) -> tuple[SitesFile | None, list[InputError]]:
    name = str(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        return None, [InputError("sites file not found", file=name)]
    except (OSError, UnicodeDecodeError) as exc:
        return None, [InputError(f"cannot read sites file: {exc}", file=name)]
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        message = str(exc)
        where = _TOML_WHERE.search(message)
        line = int(where.group(1)) if where else None
        return None, [
            InputError(f"TOML syntax: {_TOML_WHERE.sub('', message)}", file=name, line=line)
        ]
    lines = _Lines(text)
    problems: list[InputError] = []

    def problem(message: str, *key_path: str) -> None:
        problems.append(
            InputError(message, file=name, line=lines.of(*key_path), field=".".join(key_path))
        )

    for key in data:
        if key not in ("default", "site"):
            problem(f"unknown top-level key {key!r}; allowed: default, site", key)
    tables = data.get("site", {})
    if not isinstance(tables, dict):
        problem("'site' must hold one table per site, e.g. [site.NAME]", "site")
        tables = {}
    sites: dict[str, Site] = {}
    folded: dict[str, str] = {}
    for site_name, table in tables.items():
        if not site_name.strip() or "," in site_name:
            problem("a site name must be non-empty and contain no comma", "site", site_name)
            continue
        if site_name.casefold() in folded:
            problem(
                f"site name repeats {folded[site_name.casefold()]!r} (names ignore case)",
                "site",
                site_name,
            )
            continue
        folded[site_name.casefold()] = site_name
        if not isinstance(table, dict):
            problem(
                f"expected a table [site.{_toml_key(site_name)}], got {_shown(table)}",
                "site",
                site_name,
            )
            continue
        site = _site_from_table(site_name, table, path, lines, problems)
        if site is not None:
            sites[site_name] = site
    default = data.get("default")
    if default is not None:
        if not isinstance(default, str):
            problem(f"expected a site name, got {_shown(default)}", "default")
            default = None
        elif default.strip().casefold() not in folded:
            known = ", ".join(folded.values()) or "none"
            problem(f"default site {default!r} is not in the file; sites: {known}", "default")
            default = None
        else:
            default = folded[default.strip().casefold()]
    return SitesFile(path=path, sites=sites, default=default), problems


def _site_from_table(
    site_name: str, table: dict, path: Path, lines: _Lines, problems: list[InputError]
) -> Site | None:
    """One site from its table; appends every problem found and returns None if any."""
    file = str(path)
    start = len(problems)

    def problem(message: str, *keys: str) -> None:
        key_path = ("site", site_name, *keys)
        problems.append(
            InputError(message, file=file, line=lines.of(*key_path), field=".".join(key_path))
        )

    def value(
        key: str,
        convert: Callable[[object], float],
        lo: float,
        hi: float,
        what: str,
        unit: str = "",
    ) -> float | None:
        if key not in table:
            return None
        try:
            return _in_range(convert(table[key]), lo, hi, what, unit)
        except (TypeError, ValueError) as exc:
            problem(str(exc), key)
            return None

    for key in table:
        if key not in SITE_KEYS:
            close = difflib.get_close_matches(key, SITE_KEYS, n=1)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            problem(f"unknown key {key!r}{hint}; allowed: {', '.join(SITE_KEYS)}", key)
    for key in ("latitude", "longitude"):
        if key not in table:
            problem(f"missing {key}", key)
    lat = value("latitude", _angle, -90.0, 90.0, "latitude")
    lon = value("longitude", _angle, -180.0, 360.0, "longitude")
    elevation = value("elevation", _number, *ELEVATION_RANGE_M, "elevation", " m")
    pressure = value("pressure", _number, *PRESSURE_RANGE_HPA, "pressure", " hPa")
    temperature = value("temperature", _number, *TEMPERATURE_RANGE_C, "temperature", " C")
    humidity = value("humidity", _number, 0.0, 1.0, "relative humidity")
    zone = table.get("zone", "")
    if "zone" in table:
        try:
            if not isinstance(zone, str) or not zone.strip():
                raise ValueError(f"expected an IANA zone name, got {_shown(zone)}")
            zone = zone.strip()
            _zone_info(zone)
        except ValueError as exc:
            problem(str(exc), "zone")
    horizon = _horizon_from_table(table, path, lines, site_name, problem, problems)
    limits: dict[str, object] = {}
    if "limits" in table:
        if isinstance(table["limits"], dict):
            limits = _limits_from_table(table["limits"], problem)
        else:
            problem(f"expected a table [site.{_toml_key(site_name)}.limits]", "limits")
    if len(problems) > start:
        return None
    assert lat is not None and lon is not None
    return Site(
        name=site_name,
        lat_deg=lat,
        lon_deg=normalise_lon(lon),
        elevation_m=0.0 if elevation is None else elevation,
        zone=zone,
        pressure_hpa=pressure,
        temperature_c=temperature,
        humidity=humidity,
        horizon=horizon,
        limits=limits,
        source=f"{file} [site.{_toml_key(site_name)}]",
    )


def _horizon_from_table(
    table: dict,
    path: Path,
    lines: _Lines,
    site_name: str,
    problem: Callable[..., None],
    problems: list[InputError],
) -> HorizonProfile | None:
    """The horizon from ``horizon`` pairs or ``horizon_file``; problems are appended."""
    both = "horizon" in table and "horizon_file" in table
    if both:
        problem("give either horizon or horizon_file, not both", "horizon_file")
    profile = None
    if "horizon_file" in table:
        profile = _horizon_listed(table["horizon_file"], path, problem, problems)
    if "horizon" in table:
        line = lines.of("site", site_name, "horizon")
        profile = _horizon_inline(table["horizon"], path, line, site_name, problem, problems)
    return None if both else profile


def _horizon_listed(
    given: object, path: Path, problem: Callable[..., None], problems: list[InputError]
) -> HorizonProfile | None:
    """The horizon file named in a sites file, relative to the sites file's folder."""
    if not isinstance(given, str) or not given.strip():
        problem(f"expected a file name, got {_shown(given)}", "horizon_file")
        return None
    horizon_path = Path(given).expanduser()
    if not horizon_path.is_absolute():
        horizon_path = path.parent / horizon_path
    if not horizon_path.is_file():
        problem(
            f"horizon file {horizon_path} not found (paths are relative to the sites file)",
            "horizon_file",
        )
        return None
    profile, more = _horizon_file(horizon_path)
    problems.extend(more)
    return profile


def _horizon_inline(
    pairs: object,
    path: Path,
    line: int | None,
    site_name: str,
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
                raise ValueError(f"expected [azimuth, altitude], got {_shown(pair)}")
            az = _in_range(_number(pair[0]), 0.0, 360.0, "azimuth")
            alt = _in_range(_number(pair[1]), -90.0, 90.0, "altitude")
        except (TypeError, ValueError) as exc:
            problem(f"point {index}: {exc}", "horizon")
            bad = True
            continue
        points.append((az, alt, f"point {index}", None))
    if bad:
        return None
    field_name = f"site.{site_name}.horizon"
    profile, more = _profile_from_points(points, file=str(path), field=field_name, line=line)
    problems.extend(more)
    return profile


def _limits_from_table(table: dict, problem: Callable[..., None]) -> dict[str, object]:
    """Validated limits: plain numbers, a darkness name or Sun altitude, [min, max] ranges."""
    limits: dict[str, object] = {}
    scalar = {
        "min_alt_deg": (-90.0, 90.0, "minimum altitude"),
        "max_airmass": (1.0, 100.0, "maximum airmass"),
        "moon_gap_deg": (0.0, 180.0, "distance from the Moon"),
        "sun_gap_deg": (0.0, 180.0, "distance from the Sun"),
    }
    spans = {
        "ha_range_h": (-12.0, 12.0, "hour angle", " h"),
        "dec_range_deg": (-90.0, 90.0, "declination", ""),
    }
    for key, raw in table.items():
        try:
            if key in scalar:
                lo, hi, what = scalar[key]
                limits[key] = _in_range(_number(raw), lo, hi, what)
            elif key == "dark":
                limits[key] = _darkness(raw)
            elif key in spans:
                lo, hi, what, unit = spans[key]
                limits[key] = _span(raw, lo, hi, what, unit)
            else:
                close = difflib.get_close_matches(key, LIMIT_KEYS, n=1)
                hint = f" (did you mean {close[0]!r}?)" if close else ""
                raise ValueError(f"unknown limit {key!r}{hint}; allowed: {', '.join(LIMIT_KEYS)}")
        except (TypeError, ValueError) as exc:
            problem(str(exc), "limits", key)
    return limits


def _darkness(raw: object) -> str | float:
    if isinstance(raw, str):
        name = raw.strip().lower()
        if name not in DARK_NAMES:
            raise ValueError(
                f"dark {raw!r}: expected one of {', '.join(DARK_NAMES)} "
                "or a Sun altitude in degrees"
            )
        return name
    return _in_range(_number(raw), -90.0, 0.0, "Sun altitude for dark")


def _span(raw: object, lo: float, hi: float, what: str, unit: str) -> tuple[float, float]:
    if not isinstance(raw, list) or len(raw) != 2:
        raise ValueError(f"expected [min, max] for {what}, got {_shown(raw)}")
    low = _in_range(_number(raw[0]), lo, hi, f"{what} minimum", unit)
    high = _in_range(_number(raw[1]), lo, hi, f"{what} maximum", unit)
    if low >= high:
        raise ValueError(f"{what} range [{low:g}, {high:g}] must have min below max")
    return (low, high)
