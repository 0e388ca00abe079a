"""Commands ``sites list``, ``sites show`` and ``sites check``."""

from __future__ import annotations

from pathlib import Path

import typer

from skyplan.cli import options
from skyplan.errors import InputError


def register(app: typer.Typer) -> None:
    sites_app = typer.Typer(help="List, show and check sites.", no_args_is_help=True)
    sites_app.command("list")(sites_list)
    sites_app.command("show")(sites_show)
    sites_app.command("check")(sites_check)
    app.add_typer(sites_app, name="sites")


def sites_list(
    sites_file: str = options.SitesFileOpt,
    demo: bool = options.DemoOpt,
    wide: bool = options.WideOpt,
) -> None:
    """List the sites in the sites file."""
    from skyplan.api import sites
    from skyplan.render import siteview, tables

    parsed = sites.sites(sites_file, demo=demo)
    options.emit(tables.render_text(siteview.sites_table(parsed), wide=wide), None)


def sites_show(
    name: str = typer.Argument(..., help="Site name, or LAT,LON[,ELEV]."),
    sites_file: str = options.SitesFileOpt,
    demo: bool = options.DemoOpt,
    fmt: str = typer.Option("table", "--format", "-f", help="table, json or toml."),
    wide: bool = options.WideOpt,
) -> None:
    """Show one site: position, zone, weather, horizon profile and default limits."""
    from skyplan.inputs import sites
    from skyplan.render import records, siteview, tables

    fmt = options.check_format(fmt, ("table", "json", "toml"))
    the_site = options.get_site(name, sites_file, demo)
    if fmt == "json":
        options.emit(records.to_json(tables.site_record(the_site)), None)
    elif fmt == "toml":
        options.emit(sites.site_to_toml(the_site), None)
    else:
        options.emit(tables.render_text(siteview.site_table(the_site), wide=wide), None)


def sites_check(file: Path = typer.Argument(..., help="Sites file to check.")) -> None:
    """Check a sites file and report every problem with its line."""
    from skyplan.api import sites
    from skyplan.cli.app import plain_line
    from skyplan.text import escaped

    problems = sites.check_sites(file)
    if len(problems) == 1:
        raise problems[0]
    if problems:
        for problem in problems:
            typer.echo(f"skyplan: {plain_line(problem.one_line())}", err=True)
        raise InputError(f"{len(problems)} problems, each on a line above", file=str(file))
    typer.echo(f"{escaped(str(file))}: ok ({len(sites.sites(file).sites)} site(s))")
