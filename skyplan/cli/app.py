"""The ``skyplan`` command: a thin typer layer over the engine.

Commands parse options, call the engine and hand results to a renderer; no astronomy here.
Every error reaches the user as one line on stderr with a documented exit status.
"""

from __future__ import annotations

import os
import sys

import typer

from skyplan import __version__

app = typer.Typer(
    name="skyplan",
    help=(
        "Plan a night at the telescope, offline: frames, rise/transit/set, observable windows "
        "and an airmass-ranked schedule.  Never point unfiltered optics at or near the Sun; "
        "the plan is advice, not an interlock."
    ),
    no_args_is_help=True,
    add_completion=False,
    context_settings={"help_option_names": ["-h", "--help"]},
    pretty_exceptions_enable=False,
)


def _version(value: bool) -> None:
    if value:
        print(f"skyplan {__version__}")
        raise typer.Exit()


@app.callback()
def _root(
    version: bool = typer.Option(
        False, "--version", callback=_version, is_eager=True, help="Print the version and exit."
    ),
) -> None:
    """Plan a night at the telescope, offline."""


def _register() -> None:
    from skyplan.cli import commands  # noqa: F401  (registers the commands on ``app``)


def _click_module():
    """The click that typer runs on (recent typer releases carry their own copy)."""
    try:
        from typer import _click as vendored

        vendored.exceptions  # noqa: B018
        return vendored
    except (ImportError, AttributeError):
        import click

        return click


def _fail(message: str, status: int) -> None:
    sys.stderr.write(f"skyplan: {message}\n")
    sys.stderr.flush()
    raise SystemExit(status)


def main(argv: list[str] | None = None) -> None:
    """Run the CLI; map every error to one line and an exit status."""
    from skyplan import errors, notices

    click = _click_module()

    _register()
    debug = os.environ.get("SKYPLAN_DEBUG") == "1"
    status = 0
    try:
        result = app(args=argv, standalone_mode=False, prog_name="skyplan")
        status = result if isinstance(result, int) else 0
    except errors.SkyplanError as exc:
        if debug:
            raise
        _print_notices(notices.take())
        _fail(exc.one_line(), exc.exit_status)
    except typer.Exit as exc:
        status = exc.exit_code
    except typer.Abort:
        _fail("interrupted", 130)
    except click.exceptions.UsageError as exc:
        if type(exc).__name__ == "NoArgsIsHelpError":
            sys.stderr.write(exc.ctx.get_help() + "\n" if exc.ctx else "")
            raise SystemExit(errors.EXIT_OK) from None
        hint = (
            f" (see 'skyplan {exc.ctx.command_path.split(' ', 1)[1]} --help')"
            if (exc.ctx and " " in exc.ctx.command_path)
            else " (see 'skyplan --help')"
        )
        _fail(" ".join(exc.format_message().split()) + hint, errors.EXIT_BAD_INPUT)
    except click.exceptions.ClickException as exc:
        _fail(" ".join(exc.format_message().split()), errors.EXIT_BAD_INPUT)
    except KeyboardInterrupt:
        _fail("interrupted", 130)
    except BrokenPipeError:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        raise SystemExit(errors.EXIT_FAILURE) from None
    except MemoryError:
        _fail("out of memory; try a smaller catalogue or the --chunk option", errors.EXIT_FAILURE)
    except Exception as exc:  # a bug: still one line, never a traceback unless asked
        if debug:
            raise
        _fail(
            f"internal error ({type(exc).__name__}: {exc}); please report it "
            "(set SKYPLAN_DEBUG=1 to see the traceback)",
            errors.EXIT_FAILURE,
        )
    _print_notices(notices.take())
    raise SystemExit(status)


def _print_notices(lines: list[str]) -> None:
    if os.environ.get("SKYPLAN_QUIET") == "1":
        return
    for line in lines:
        sys.stderr.write(f"skyplan: note: {line}\n")
