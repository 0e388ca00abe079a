"""The sites file: a TOML file of named sites, read and validated with file, line and field.

The sites file is TOML (read with the standard :mod:`tomllib`)::

    default = "ridge"                 # optional: the site used when --site is not given

    [site.ridge]                      # one table per site; the name is matched case-insensitively
    latitude = 31.2                   # degrees, north positive, or a string "+31:12:00"/"31:12N"
    longitude = -110.5                # degrees, east positive (0..360 accepted), or "-110:30:00"
                                      # or "110:30:00W"
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
    dark = "nautical"                 # civil, nautical, astronomical, none or a Sun altitude
    moon_gap_deg = 30
    sun_gap_deg = 45
    ha_range_h = [-4.5, 4.5]
    dec_range_deg = [-30, 85]

    [site.ridge.mount]                # optional: the telescope's mount
    kind = "altaz"                    # equatorial, german-equatorial or altaz
    max_alt_deg = 86                  # altaz: the highest altitude it follows (default --max-alt)
    az_min_deg = -270                 # altaz: the cable wrap (narrower than 360: sky is lost)
    az_max_deg = 270
    slew_rate_deg_s = [3.0, 2.0]      # axis 1 (azimuth), axis 2 (altitude), degrees per second
    settle_s = 8

Every problem becomes an :class:`~skyplan.errors.InputError` naming the file, line and field;
the limits are checked by :func:`skyplan.inputs.limits.check_limits`, the validator the
command line uses too, with the line of each key as its origin.
"""

from __future__ import annotations

import difflib
import json
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

from skyplan.errors import InputError, InputErrors
from skyplan.inputs import limits as limits_mod
from skyplan.inputs import readfile
from skyplan.inputs.fieldvalues import compass_angle, in_range, number, shown
from skyplan.inputs.horizon import horizon_from_table
from skyplan.inputs.mounttable import MOUNT_KEYS, mount_from_table
from skyplan.inputs.site import (
    ELEVATION_RANGE_M,
    PRESSURE_RANGE_HPA,
    TEMPERATURE_RANGE_C,
    Site,
    normalise_lon,
    zone_info,
)
from skyplan.inputs.tomltext import (
    KeyLines,
    field_of,
    parse_toml,
    toml_key,
    toml_value,
)
from skyplan.text import first_unprintable, quoted

MAX_SITES_FILE_BYTES = 1 << 20  # a sites file longer than this (1 MiB) is refused unread

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
    "mount",
)

@dataclass(frozen=True)
class SitesFile:
    """A parsed sites file: the sites by name (as written) and the optional default name."""

    path: Path
    sites: dict[str, Site]
    default: str | None



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



# --------------------------------------------------------------------------- writing


def site_to_toml(site: Site) -> str:
    """The ``[site.NAME]`` tables of a site, in the sites-file format (horizon inline)."""
    key = toml_key(site.name)
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
            lines.append(f"{name} = {toml_value(value)}")
    if site.mount is not None:
        lines += ["", f"[site.{key}.mount]", f"kind = {json.dumps(site.mount.kind)}"]
        for key in MOUNT_KEYS[1:]:
            value = getattr(site.mount, key)
            if value is not None:
                lines.append(f"{key} = {toml_value(value)}")
    return "\n".join(lines) + "\n"


def _read_sites_file(path: Path) -> tuple[SitesFile | None, list[InputError]]:
    name = str(path)
    try:
        text = readfile.read_input(path, MAX_SITES_FILE_BYTES, what="sites file").decode("utf-8")
    except InputError as exc:
        return None, [exc]
    except UnicodeDecodeError as exc:
        return None, [InputError(f"cannot read sites file: {exc}", file=name)]
    data, unreadable = parse_toml(text, name)
    if data is None:
        return None, unreadable
    lines = KeyLines(text)
    problems: list[InputError] = []

    def problem(message: str, *key_path: str) -> None:
        problems.append(InputError(message, file=name, line=lines.of(*key_path),
                                   field=field_of(key_path)))

    for key in data:
        if key not in ("default", "site"):
            problem(f"unknown top-level key {quoted(key)}; allowed: default, site", key)
    tables = data.get("site", {})
    if not isinstance(tables, dict):
        problem("'site' must hold one table per site, e.g. [site.NAME]", "site")
        tables = {}
    sites: dict[str, Site] = {}
    folded: dict[str, str] = {}
    for site_name, table in tables.items():
        unprintable = first_unprintable(site_name)
        if unprintable:
            problem(f"a site name must not contain the control character {unprintable}",
                    "site", site_name)
            continue
        if not site_name.strip() or "," in site_name:
            problem("a site name must be non-empty and contain no comma", "site", site_name)
            continue
        if site_name.casefold() in folded:
            problem(
                f"site name repeats {quoted(folded[site_name.casefold()])} (names ignore case)",
                "site",
                site_name,
            )
            continue
        folded[site_name.casefold()] = site_name
        if not isinstance(table, dict):
            problem(
                f"expected a table [site.{toml_key(site_name)}], got {shown(table)}",
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
            problem(f"expected a site name, got {shown(default)}", "default")
            default = None
        elif first_unprintable(default):
            problem(f"a site name must not contain the control character "
                    f"{first_unprintable(default)}", "default")
            default = None
        elif default.strip().casefold() not in folded:
            known = ", ".join(folded.values()) or "none"
            problem(f"default site {quoted(default)} is not in the file; sites: {known}",
                    "default")
            default = None
        else:
            default = folded[default.strip().casefold()]
    return SitesFile(path=path, sites=sites, default=default), problems


def _site_from_table(
    site_name: str, table: dict, path: Path, lines: KeyLines, problems: list[InputError]
) -> Site | None:
    """One site from its table; appends every problem found and returns None if any."""
    file = str(path)
    start = len(problems)

    def problem(message: str, *keys: str) -> None:
        key_path = ("site", site_name, *keys)
        problems.append(InputError(message, file=file, line=lines.of(*key_path),
                                   field=field_of(key_path)))

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
            return in_range(convert(table[key]), lo, hi, what, unit)
        except (TypeError, ValueError) as exc:
            problem(str(exc), key)
            return None

    for key in ("zone", "horizon_file"):
        unprintable = first_unprintable(table[key]) if isinstance(table.get(key), str) else None
        if unprintable:
            problem(f"must not contain the control character {unprintable}", key)
            table = {k: v for k, v in table.items() if k != key}
    for key in table:
        if key not in SITE_KEYS:
            close = difflib.get_close_matches(key, SITE_KEYS, n=1)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            problem(f"unknown key {quoted(key)}{hint}; allowed: {', '.join(SITE_KEYS)}", key)
    for key in ("latitude", "longitude"):
        if key not in table:
            problem(f"missing {key}", key)
    lat = value("latitude", lambda v: compass_angle(v, "lat"), -90.0, 90.0, "latitude")
    lon = value("longitude", lambda v: compass_angle(v, "lon"), -180.0, 360.0, "longitude")
    elevation = value("elevation", number, *ELEVATION_RANGE_M, "elevation", " m")
    pressure = value("pressure", number, *PRESSURE_RANGE_HPA, "pressure", " hPa")
    temperature = value("temperature", number, *TEMPERATURE_RANGE_C, "temperature", " C")
    humidity = value("humidity", number, 0.0, 1.0, "relative humidity")
    zone = table.get("zone", "")
    if "zone" in table:
        try:
            if not isinstance(zone, str) or not zone.strip():
                raise ValueError(f"expected an IANA zone name, got {shown(zone)}")
            zone = zone.strip()
            zone_info(zone)
        except ValueError as exc:
            problem(str(exc), "zone")
    horizon = horizon_from_table(
        table, path, lines.of("site", site_name, "horizon"), f"site.{site_name}.horizon",
        problem, problems,
    )
    limits: dict[str, object] = {}
    origins: dict[str, limits_mod.Origin] = {}
    if "limits" in table:
        if isinstance(table["limits"], dict):
            limits, origins = _limits_from_table(table["limits"], file, lines, site_name, problems)
        else:
            problem(f"expected a table [site.{toml_key(site_name)}.limits]", "limits")
    mount = None
    if "mount" in table:
        mount = mount_from_table(table["mount"], file, lines, site_name, problem)
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
        limit_origins=origins,
        mount=mount,
        source=f"{file} [site.{toml_key(site_name)}]",
    )


def _limits_from_table(
    table: dict, file: str, lines: KeyLines, site_name: str, problems: list[InputError]
) -> tuple[dict[str, object], dict[str, limits_mod.Origin]]:
    """The site's limits checked by the one validator, and where each key is written."""
    given: dict[str, limits_mod.Given] = {}
    for key, raw in table.items():
        key_path = ("site", site_name, "limits", key)
        origin = limits_mod.Origin(field=field_of(key_path), file=file, line=lines.of(*key_path))
        if key in limits_mod.FILE_KEYS:
            given[key] = limits_mod.Given(raw, origin)
            continue
        close = difflib.get_close_matches(key, limits_mod.FILE_KEYS, n=1)
        hint = f" (did you mean {close[0]!r}?)" if close else ""
        problems.append(origin.error(
            f"unknown limit {quoted(key)}{hint}; allowed: {', '.join(limits_mod.FILE_KEYS)}"))
    try:
        checked = limits_mod.check_limits(given)
    except InputErrors as exc:
        problems.extend(exc.problems)
        return {}, {}
    except InputError as exc:
        problems.append(exc)
        return {}, {}
    return checked, {key: item.origin for key, item in given.items()}
