"""Finding the site: ``--site LAT,LON[,ELEV]``, a name in the sites file, or its default.

The pieces live by topic: the :class:`Site` type and time zones in :mod:`.site`, the standard
atmosphere in :mod:`.atmosphere`, horizon profiles in :mod:`.horizon`, the sites file's
reader and writer in :mod:`.sitesfile`.  Their public names are importable from here too.
"""

from __future__ import annotations

import difflib
import os
import sys
from pathlib import Path

from skyplan.errors import InputError
from skyplan.inputs.atmosphere import geopotential_m, isa_pressure_hpa, isa_temperature_c
from skyplan.inputs.fieldvalues import compass_angle, decimal, in_range
from skyplan.inputs.horizon import HorizonProfile, read_horizon_file
from skyplan.inputs.site import (
    ELEVATION_RANGE_M,
    Site,
    nautical_zone,
    normalise_lon,
    zone_at,
    zone_warning,
)
from skyplan.inputs.sitesfile import (
    SitesFile,
    check_sites_file,
    load_sites,
    load_sites_file,
    site_to_toml,
)

__all__ = [
    "NO_SITE_MESSAGE", "SITE_WARNING", "HorizonProfile", "Site", "SitesFile", "check_sites_file",
    "default_sites_path", "find_site", "geopotential_m", "isa_pressure_hpa",
    "isa_temperature_c", "load_sites", "load_sites_file", "nautical_zone", "normalise_lon",
    "checked", "parse_site_spec", "read_horizon_file", "resolve_site", "site_to_toml",
    "zone_at", "zone_warning",
]

NO_SITE_MESSAGE = (
    "no site given: use --site LAT,LON[,ELEV] or --site NAME with a sites file "
    "(see `skyplan sites list`), or --demo for the demo observatory"
)


def parse_site_spec(text: str) -> Site:
    """A site from ``LAT,LON[,ELEV_M]``: degrees (decimal, east positive; or sexagesimal
    ``D:M:S``; or with a compass letter, ``31:57:30N,111:35:48W``) and metres."""
    parts = text.split(",")
    if len(parts) not in (2, 3):
        raise InputError(
            f"expected LAT,LON[,ELEV_M] in degrees and metres, got {text!r}", field="site"
        )
    labels = ("latitude", "longitude", "elevation")
    ranges = ((-90.0, 90.0, ""), (-180.0, 360.0, ""), (*ELEVATION_RANGE_M, " m"))
    readers = (lambda v: compass_angle(v, "lat"), lambda v: compass_angle(v, "lon"), decimal)
    values = []
    for part, label, (lo, hi, unit), read in zip(parts, labels, ranges, readers, strict=False):
        try:
            values.append(in_range(read(part), lo, hi, label, unit))
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



def find_site(name: str, path: str | Path) -> Site:
    """The site called ``name`` (case-insensitive) in a sites file."""
    return _pick(name, load_sites_file(path))


def resolve_site(spec: str | None, sites_file: str | None) -> Site:
    """The site for ``--site``: coordinates, a name in the sites file, or the file's default.

    A spec with a comma is read as ``LAT,LON[,ELEV]``; anything else is a site name looked up
    in ``sites_file`` or :func:`default_sites_path`.
    """
    if spec is not None and "," in spec:
        return checked(parse_site_spec(spec))
    path = Path(sites_file).expanduser() if sites_file else default_sites_path()
    if spec is None or not spec.strip():
        if not path.exists():
            raise InputError(NO_SITE_MESSAGE, field="site")
        parsed = load_sites_file(path)
        if parsed.default is None:
            raise InputError(f"{NO_SITE_MESSAGE} (sites file {path} has no default)", field="site")
        return checked(_pick(parsed.default, parsed))
    if not path.exists():
        raise InputError(
            f"site {spec.strip()!r} not found: no sites file at {path}; name one with "
            "--sites-file PATH or the SKYPLAN_SITES environment variable, "
            "or give --site LAT,LON[,ELEV]",
            field="site",
        )
    return checked(_pick(spec, load_sites_file(path)))


SITE_WARNING = "warning: site "  # how the notes of :func:`checked` begin


def checked(site: Site) -> Site:
    """``site``, after a note when its coordinates and zone disagree (see
    :func:`skyplan.inputs.site.zone_warning`); the note begins with :data:`SITE_WARNING`."""
    from skyplan import notices

    warning = zone_warning(site)
    if warning:
        notices.add(f"warning: {warning}")
    return site


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

