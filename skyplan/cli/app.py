"""The ``skyplan`` command: a thin typer layer over the engine.

Commands parse options, call the public API (``skyplan.api``) and hand results to a
renderer; no astronomy here.  Each command lives in a module of its own, which registers it
on the app :func:`build` makes for one run; only the command asked for is imported.
Every error reaches the user as one line on stderr, starting ``skyplan:`` (several problems
at once: a count, then a line each, at most 20, then ``and N more``), with a documented
exit status (``skyplan/errors.py``; the list with examples is ``docs/errors.md``).  Notices
from the engine follow the result as ``skyplan: note: ...`` lines, and so does any warning a
library raises that was not handled where it arose: nothing else is ever written to stderr.
The API delivers notices as ``SkyplanWarning``; they are printed as plain notes.
"""

from __future__ import annotations

import os
import signal
import sys
import threading
import warnings

import typer

from skyplan import __version__
from skyplan.text import escaped

HELP = (
    "Plan a night at the telescope, offline: frames, rise/transit/set, observable windows "
    "and an airmass-ranked schedule.  Never point unfiltered optics at or near the Sun; "
    "the plan is advice, not an interlock."
)

# Each command (or group) and the module that registers it; also the order of the commands
# in ``skyplan --help`` (typer lists the groups after the commands).
COMMANDS = (
    ("night", "skyplan.cli.night"),
    ("windows", "skyplan.cli.windows"),
    ("season", "skyplan.cli.season"),
    ("catch", "skyplan.cli.catch"),
    ("plan", "skyplan.cli.plan"),
    ("next", "skyplan.cli.nextvisit"),
    ("chart", "skyplan.cli.charts"),
    ("clock", "skyplan.cli.clock"),
    ("convert", "skyplan.cli.convert"),
    ("sites", "skyplan.cli.sites"),
    ("selfcheck", "skyplan.cli.selfcheck"),
    ("find", "skyplan.cli.find"),
)

MAX_LINE_CHARS = 600  # a message longer than this is cut (it would not be read anyway)


class Terminated(BaseException):
    """SIGTERM arrived (a cron time-out, a shutdown): unwind, clean up, exit 143.

    A BaseException, so that no ``except Exception`` in the engine mistakes it for a fault.
    """


def _version(value: bool) -> None:
    if value:
        print(f"skyplan {__version__}")
        raise typer.Exit()


def _root(
    version: bool = typer.Option(
        False, "--version", callback=_version, is_eager=True, help="Print the version and exit."
    ),
) -> None:
    """Plan a night at the telescope, offline."""


def build(wanted: str | None = None) -> typer.Typer:
    """The typer app with the command ``wanted`` alone, or with every command when
    ``wanted`` is None or names none (``--help``, ``--version``, a misspelt command)."""
    import importlib

    app = typer.Typer(
        name="skyplan", help=HELP, no_args_is_help=True, add_completion=False,
        context_settings={"help_option_names": ["-h", "--help"]},
        pretty_exceptions_enable=False,
    )
    app.callback()(_root)
    known = {name for name, _ in COMMANDS}
    for name, module in COMMANDS:
        if wanted not in known or name == wanted:
            importlib.import_module(module).register(app)
    return app


def _command(argv: list[str] | None):
    """The click command typer builds for this run, with plain option conversion.

    When the first argument names a command, only that command is built (typer reads the
    signature of every function it builds, a few milliseconds each); the full set is built
    for anything else (``--help``, ``--version``, an unknown or misspelt command).
    """
    from skyplan.cli import plainparams

    args = sys.argv[1:] if argv is None else argv
    command = typer.main.get_command(build(args[0] if args else None))
    plainparams.install(command)
    return command


def _click_module():
    """The click that typer runs on (recent typer releases carry their own copy)."""
    try:
        from typer import _click as vendored

        vendored.exceptions  # noqa: B018
        return vendored
    except (ImportError, AttributeError):
        import click

        return click


def plain_line(text: str) -> str:
    """One printable line: white space runs folded (a short indent kept), control
    characters escaped, length cut."""
    text = str(text)
    indent = " " * min(len(text) - len(text.lstrip(" ")), 4)
    folded = indent + " ".join(text.split())
    shown = escaped(folded)
    if len(shown) > MAX_LINE_CHARS:
        shown = shown[: MAX_LINE_CHARS - 1] + "…"
    return shown


def _say(line: str) -> None:
    try:
        sys.stderr.write(f"skyplan: {plain_line(line)}\n")
        sys.stderr.flush()
    except (OSError, ValueError, AttributeError):
        pass  # stderr closed: the exit status still tells


def _fail(message: str, status: int) -> None:
    _say(message)
    raise SystemExit(status)


def _on_sigterm(signum, frame) -> None:
    raise Terminated()


class _SignalGuard:
    """Turn SIGTERM into :class:`Terminated` for the length of one run (main thread only)."""

    def __enter__(self) -> _SignalGuard:
        self.previous = None
        if threading.current_thread() is threading.main_thread():
            self.previous = signal.signal(signal.SIGTERM, _on_sigterm)
        return self

    def __exit__(self, *exc) -> bool:
        if self.previous is not None:
            signal.signal(signal.SIGTERM, self.previous)
        return False


def main(argv: list[str] | None = None) -> None:
    """Run the CLI; map every error to one line and an exit status."""
    from skyplan import errors, notices
    from skyplan.cli import options

    click = _click_module()
    notices.take()  # a fresh run: nothing left over from an earlier call in this process
    options.reset_run_options()
    debug = os.environ.get("SKYPLAN_DEBUG") == "1"
    status = errors.EXIT_OK
    with _SignalGuard(), warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", notices.SkyplanWarning)  # each run reports its own
        try:
            result = _command(argv)(args=argv, standalone_mode=False, prog_name="skyplan")
            status = result if isinstance(result, int) else errors.EXIT_OK
        except errors.SkyplanError as exc:
            if debug:
                raise
            _print_notices(notices.take(), caught, bad_input=isinstance(exc, errors.InputError))
            for line in exc.lines()[:-1]:
                _say(line)
            _fail(exc.lines()[-1], exc.exit_status)
        except typer.Exit as exc:
            status = exc.exit_code
        except typer.Abort:
            _fail("interrupted", errors.EXIT_INTERRUPTED)
        except click.exceptions.UsageError as exc:
            if type(exc).__name__ == "NoArgsIsHelpError":  # typer has shown the help
                raise SystemExit(errors.EXIT_OK) from None
            where = exc.ctx.command_path.split(" ", 1) if exc.ctx else []
            hint = f"see 'skyplan {where[1]} --help'" if len(where) > 1 else "see 'skyplan --help'"
            _fail(f"{exc.format_message()} ({hint})", errors.EXIT_BAD_INPUT)
        except click.exceptions.ClickException as exc:
            _fail(exc.format_message(), errors.EXIT_BAD_INPUT)
        except KeyboardInterrupt:
            _fail("interrupted", errors.EXIT_INTERRUPTED)
        except Terminated:
            _fail("terminated (SIGTERM); no output was written", errors.EXIT_TERMINATED)
        except MemoryError:
            _fail("out of memory; split the catalogue into smaller files", errors.EXIT_FAILURE)
        except Exception as exc:  # a bug: still one line, never a traceback unless asked
            if debug:
                raise
            _fail(
                f"internal error ({type(exc).__name__}: {exc}); please report it "
                "(set SKYPLAN_DEBUG=1 to see the traceback)",
                errors.EXIT_FAILURE,
            )
    if status == errors.EXIT_INTERRUPTED:  # click turns Ctrl-C into a bare status 130
        _fail("interrupted", errors.EXIT_INTERRUPTED)
    _print_notices(notices.take(), caught)
    raise SystemExit(status)


def _print_notices(lines: list[str], caught: list[warnings.WarningMessage], *,
                   bad_input: bool = False) -> None:
    """Notices (the API's SkyplanWarnings, in their order, then any recorded outside the
    API), then any library warning nobody handled, each as one ``note`` line.

    Before a bad-input error, the site's zone warnings are left out: the error is what to
    fix first, and the warning comes back with the result.
    """
    from skyplan.cli import options
    from skyplan.notices import SkyplanWarning

    ours = [w for w in caught if issubclass(w.category, SkyplanWarning)]
    lines = [str(w.message) for w in ours] + lines
    if bad_input:
        from skyplan.inputs.sites import SITE_WARNING

        lines = [line for line in lines if not line.startswith(SITE_WARNING)]
    for warning in caught:
        if not issubclass(warning.category, SkyplanWarning):
            lines.append(f"{warning.category.__name__}: {warning.message}")
    if options.quiet_run():
        return
    seen = set()
    for line in lines:
        shown = plain_line(line)
        if shown not in seen:
            seen.add(shown)
            _say(f"note: {shown}")
