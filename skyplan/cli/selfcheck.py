"""Command ``selfcheck``: the installation checked offline against known answers."""

from __future__ import annotations

import typer

from skyplan.cli import options


def register(app: typer.Typer) -> None:
    app.command()(selfcheck)


def selfcheck(
    fmt: str = typer.Option("table", "--format", "-f", help="table or json."),
    wide: bool = options.WideOpt,
) -> None:
    """Check the installation offline against reference cases with known answers."""
    from skyplan.api import clock
    from skyplan.errors import SelfcheckFailed
    from skyplan.render import checkview, records, tables

    fmt = options.check_format(fmt, ("table", "json"))
    report = clock.selfcheck()
    if fmt == "json":
        options.emit(records.to_json(tables.selfcheck_record(report)), None)
    else:
        options.emit(tables.render_text(checkview.selfcheck_table(report), wide=wide), None)
    if not report.ok:
        failed = [c.name for c in report.checks if not c.ok]
        raise SelfcheckFailed(f"selfcheck: {len(failed)} of {len(report.checks)} checks "
                              f"failed: {'; '.join(failed)}")
