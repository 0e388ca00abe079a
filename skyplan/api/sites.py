"""Sites for the API: a named site from a sites file or the demo, or one from coordinates."""

from __future__ import annotations

from pathlib import Path

from skyplan.inputs.sites import Site
from skyplan.notices import as_warnings


@as_warnings
def site(name: str | None = None, *, lat_deg: float | None = None,
         lon_deg: float | None = None, elevation_m: float = 0.0, tz: str | None = None,
         sites_file: str | Path | None = None, demo: bool = False) -> Site:
    """The site to plan for.

    ``site("Name")`` looks the name up in ``sites_file`` (default: ``$SKYPLAN_SITES`` or
    the user config folder; with ``demo=True`` the demo's sites file).  ``site(demo=True)``
    is the demo observatory.  ``site(lat_deg=..., lon_deg=..., elevation_m=..., tz=...)``
    builds one from coordinates (east-positive longitude, metres, an IANA zone; without
    ``tz`` the zone is found from the coordinates).  ``site()`` alone is the sites file's
    default site.
    """
    from skyplan.errors import InputError
    from skyplan.inputs import scenario, sites

    if lat_deg is not None or lon_deg is not None:
        if name is not None and sites_file is not None:
            raise InputError("give a site name or coordinates, not both", field="site")
        if lat_deg is None or lon_deg is None:
            raise InputError("a site from coordinates needs both lat_deg and lon_deg",
                             field="lat_deg" if lat_deg is None else "lon_deg")
        try:
            return Site(name=name or "site", lat_deg=lat_deg, lon_deg=lon_deg,
                        elevation_m=elevation_m, zone=tz or "")
        except (TypeError, ValueError) as exc:
            raise InputError(str(exc), field="site") from None
    if demo:
        if sites_file is None:
            sites_file = scenario.demo_path("sites.toml")
        if name is None:
            name = scenario.DEMO_SITE
    return sites.resolve_site(name, None if sites_file is None else str(sites_file))


def sites_path(sites_file: str | Path | None = None, *, demo: bool = False) -> Path:
    """The sites file in use: the one named, the demo's, or the default."""
    from skyplan.inputs import scenario, sites

    if sites_file:
        return Path(sites_file)
    return scenario.demo_path("sites.toml") if demo else sites.default_sites_path()


@as_warnings
def sites(sites_file: str | Path | None = None, *, demo: bool = False):
    """Every site of a sites file (``.sites`` by name, ``.default``)."""
    from skyplan.errors import InputError
    from skyplan.inputs import sites as site_input

    path = sites_path(sites_file, demo=demo)
    if not path.is_file():
        raise InputError(
            f"no sites file at {path}; create one (see docs/sites.md), name it with --sites-file "
            "or SKYPLAN_SITES, or try --demo", field="sites file")
    return site_input.load_sites_file(path)


@as_warnings
def check_sites(path: str | Path) -> list:
    """Every problem of a sites file, each an InputError naming its line (none: [])."""
    from skyplan.inputs import sites as site_input

    return site_input.check_sites_file(path)
