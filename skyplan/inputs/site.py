"""The Site type: where the telescope stands, its time zone and its weather.

A :class:`Site` holds the position (geodetic latitude, east longitude, elevation), the IANA
time zone, the local weather used for refraction, an optional horizon profile and the site's
default limits.  How a site is found (``--site``, a sites file) is in
:mod:`skyplan.inputs.sites`; the sites file's reader in :mod:`skyplan.inputs.sitesfile`.
"""

from __future__ import annotations

import dataclasses
import functools
import math
import zoneinfo
from dataclasses import dataclass, field

from skyplan import notices
from skyplan.defaults import ALTAZ_KEYHOLE_DEG
from skyplan.errors import InputError
from skyplan.inputs.atmosphere import isa_pressure_hpa, isa_temperature_c
from skyplan.inputs.horizon import HorizonProfile
from skyplan.inputs.limits import Origin
from skyplan.text import first_unprintable

ELEVATION_RANGE_M = (-500.0, 9000.0)
PRESSURE_RANGE_HPA = (100.0, 1100.0)
TEMPERATURE_RANGE_C = (-90.0, 60.0)
MOUNT_KINDS = ("equatorial", "german-equatorial", "altaz")
MOUNT_MAX_ALT_RANGE_DEG = (0.0, 90.0)  # above 0, at most 90
MOUNT_PAST_MERIDIAN_RANGE_MIN = (0.0, 360.0)  # how far past the meridian a German mount tracks
MOUNT_FLIP_TIME_RANGE_S = (0.0, 3600.0)
MOUNT_AZ_RANGE_DEG = (-720.0, 720.0)  # cable-wrap limits; the range at most 720 wide
MOUNT_RATE_RANGE_DEG_S = (0.0, 100.0)  # slew and azimuth rates: above 0, at most 100
MOUNT_SETTLE_RANGE_S = (0.0, 3600.0)
FLIP_TIME_S = 60.0  # a German mount's meridian flip when the mount table does not give one


@dataclass(frozen=True)
class Mount:
    """The telescope's mount: its kind (:data:`MOUNT_KINDS`) and its limits.

    ``max_alt_deg``: the highest altitude an alt-azimuth mount follows (its zenith keyhole).
    German equatorial: ``past_meridian_east_min``/``past_meridian_west_min`` (minutes of
    hour angle; 0 when not given): with the tube on the pier's west side (the target east of
    the meridian) the mount tracks until hour angle +past_meridian_west_min, on the east side
    from hour angle −past_meridian_east_min; ``flip_time_s`` is added to a slew that changes
    the side.  Alt-azimuth: ``az_min_deg``/``az_max_deg`` bound the azimuth the mount may
    turn to (its cable wrap; a range narrower than 360° also cuts sky, charged to ``az_wrap``
    in the lost minutes), ``az_rate_max_deg_s`` the azimuth
    rate it can follow.  For all kinds: ``slew_rate_deg_s`` (axis 1, axis 2: azimuth and
    altitude for altaz, hour angle and declination for the equatorial kinds) and
    ``settle_s``, None where the plan's options decide.  ``origin``: where ``max_alt_deg`` was
    written, for messages.
    """

    kind: str
    max_alt_deg: float | None = None
    origin: Origin | None = field(default=None, compare=False, repr=False)
    past_meridian_east_min: float | None = None
    past_meridian_west_min: float | None = None
    flip_time_s: float | None = None
    az_min_deg: float | None = None
    az_max_deg: float | None = None
    az_rate_max_deg_s: float | None = None
    slew_rate_deg_s: tuple[float, float] | None = None
    settle_s: float | None = None

    @property
    def german(self) -> bool:
        """True for a German equatorial mount (the one kind that flips)."""
        return self.kind == "german-equatorial"

    def past_meridian_rad(self) -> tuple[float, float]:
        """(east, west) hour angles past the meridian a German mount may track, radians."""
        east = self.past_meridian_east_min or 0.0
        west = self.past_meridian_west_min or 0.0
        return math.radians(east / 4.0), math.radians(west / 4.0)

    def flip_s(self) -> float:
        """The time a meridian flip adds to a slew (German mounts), seconds."""
        if not self.german:
            return 0.0
        return FLIP_TIME_S if self.flip_time_s is None else self.flip_time_s

    def wrap_deg(self) -> tuple[float, float] | None:
        """(az_min, az_max) of an alt-azimuth mount's cable wrap, or None."""
        if self.kind != "altaz" or self.az_min_deg is None or self.az_max_deg is None:
            return None
        return self.az_min_deg, self.az_max_deg


@dataclass(frozen=True)
class Site:
    """Where the telescope stands.

    ``lon_deg`` is normalised to -180..180 (east positive).  An empty ``zone`` is filled in
    from the coordinates (offline, with timezonefinder); over the ocean that gives the nautical
    ``Etc/GMT+N`` zone.  ``limits`` holds the site's defaults for the observer's limits, checked
    values by key (:data:`skyplan.inputs.limits.FILE_KEYS`); ``limit_origins`` says where each
    was written (the sites file's line), for messages.  ``source`` says where the site came
    from.  The name is printed as given, so it may hold no control character
    (:data:`skyplan.text.UNPRINTABLE`): ValueError.
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
    limit_origins: dict[str, Origin] = field(
        default_factory=dict, hash=False, compare=False, repr=False)
    mount: Mount | None = None

    def __post_init__(self) -> None:
        unprintable = first_unprintable(str(self.name))
        if unprintable:
            raise ValueError(f"site name contains the control character {unprintable}")
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
        zone_info(self.zone)  # a bad zone given directly is a programming error: ValueError

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
    """One shared timezonefinder instance, built on first use.  Its data files are mapped
    from the disk, not loaded (``in_memory=True`` took 33 MiB of the process's own memory
    against 3 MiB, and 38 ms against 13 ms to build, for lookups of 0.1 ms either way;
    docs/performance.md)."""
    try:
        from timezonefinder import TimezoneFinder
    except ImportError:
        return None
    finder = TimezoneFinder()
    cleanup = getattr(finder, "cleanup", None)
    if cleanup is not None:  # close its mapped files ourselves, not in the final clean-up
        import atexit

        atexit.register(cleanup)
    return finder


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


def zone_info(zone: str) -> zoneinfo.ZoneInfo:
    """ZoneInfo for a name; ValueError when the name is not a known IANA zone."""
    try:
        return zoneinfo.ZoneInfo(zone)
    except (zoneinfo.ZoneInfoNotFoundError, ValueError, OSError) as exc:
        raise ValueError(f"unknown IANA time zone {zone!r}") from exc



# --------------------------------------------------------------------------- zone checks

ZONE_SLACK_DEG = 40.0  # how far a site may lie from its zone's meridian before a check


def standard_offset_h(zone: str, year: int = 2026) -> float:
    """The zone's standard offset from UTC in hours: the smaller of its January and July
    offsets (summer time only ever adds)."""
    import datetime as dt

    tz = zone_info(zone)
    return min(dt.datetime(year, m, 1, 12, tzinfo=tz).utcoffset().total_seconds()
               for m in (1, 7)) / 3600.0


def _continent(zone: str) -> str:
    return zone.split("/", 1)[0] if "/" in zone else zone


def _at_sea(zone: str) -> bool:
    return zone.startswith("Etc/") or zone in ("UTC", "GMT")


def _quiet_zone(lat_deg: float, lon_deg: float) -> str | None:
    finder = _zone_finder()
    return None if finder is None else finder.timezone_at(lng=normalise_lon(lon_deg),
                                                          lat=lat_deg)


def _flips(lat: float, lon: float, fits) -> str | None:
    """The first sign flip (longitude, latitude, both) that puts the point where ``fits``
    says it belongs, described for a message."""
    for new_lat, new_lon, what in ((lat, -lon, f"longitude {-lon:+.4f}"),
                                   (-lat, lon, f"latitude {-lat:+.4f}"),
                                   (-lat, -lon, f"latitude {-lat:+.4f} and longitude "
                                                f"{-lon:+.4f}")):
        found = _quiet_zone(new_lat, new_lon)
        if found is not None and fits(found):
            return f"{what} (a flipped sign?) lies in {found}"
    return None


def zone_warning(site: Site) -> str | None:
    """One line when the site's coordinates and time zone disagree, naming the likely fix.

    A site in a land zone whose longitude lies more than :data:`ZONE_SLACK_DEG` from the
    zone's meridian (15 degrees times its standard UTC offset) is looked up with
    timezonefinder: if the zone found there is on another continent (the first part of the
    IANA name), the line says so.  A site whose zone (named or found) is an ``Etc/`` zone
    and where timezonefinder finds only an ocean zone is in the open sea.  Either way, a
    flipped sign of the latitude or longitude that would fit is named.  None when all is
    well, or when timezonefinder is not installed.
    """
    lat, lon, zone = site.lat_deg, site.lon_deg, site.zone
    where = f"site {site.name} at {lat:+.4f},{lon:+.4f}"
    if _at_sea(zone):
        found = _quiet_zone(lat, lon)
        if found is None or not _at_sea(found):
            return None
        fix = _flips(lat, lon, lambda z: not _at_sea(z))
        return (f"{where} lies in the open sea (zone {found}); "
                + (f"check the coordinates: {fix}" if fix else "check the coordinates"))
    meridian = 15.0 * standard_offset_h(zone)
    if abs((lon - meridian + 180.0) % 360.0 - 180.0) <= ZONE_SLACK_DEG:
        return None
    found = _quiet_zone(lat, lon)
    if found is None or found == zone or _continent(found) == _continent(zone):
        return None
    fix = _flips(lat, lon, lambda z: z == zone or _continent(z) == _continent(zone))
    return (f"{where} lies in {found}, not in its zone {zone} (meridian {meridian:+.0f}°); "
            + (f"check the coordinates: {fix}" if fix else "check the coordinates and zone"))


def with_mount(site: Site, kind: str | None) -> Site:
    """The site with its mount's kind set from ``--mount`` (None: as the site says)."""
    if kind is None:
        return site
    if kind not in MOUNT_KINDS:
        raise InputError(f"mount {kind!r} is not one of {', '.join(MOUNT_KINDS)}",
                         field="--mount")
    old = site.mount or Mount(kind)
    return dataclasses.replace(site, mount=dataclasses.replace(old, kind=kind))


def mount_limits(site: Site) -> tuple[dict[str, object], dict[str, Origin]]:
    """The site's limits with an alt-azimuth mount's ``max_alt_deg`` as the default maximum
    altitude (a ``max_alt_deg`` among the site's limits comes first; a mount table without
    one: :data:`skyplan.defaults.ALTAZ_KEYHOLE_DEG`), and their origins."""
    m = site.mount
    if m is None or m.kind != "altaz" or "max_alt_deg" in site.limits:
        return dict(site.limits), dict(site.limit_origins)
    origins = dict(site.limit_origins)
    if m.max_alt_deg is None:  # no figure of the mount's own: the usual keyhole
        return {**site.limits, "max_alt_deg": ALTAZ_KEYHOLE_DEG}, origins
    if m.origin is not None:
        origins["max_alt_deg"] = m.origin
    return {**site.limits, "max_alt_deg": m.max_alt_deg}, origins
