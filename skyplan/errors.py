"""Errors that reach the user as one plain line, and the exit statuses they map to.

Every problem with what the user gave us (a file, a command-line value, a site) is an
:class:`InputError`.  It names the file, line and field where known so that the message
alone is enough to fix the input.  The CLI turns it into one line on stderr and exit
status 2; nothing else ever prints a traceback.
"""

from __future__ import annotations

from skyplan.text import escaped

EXIT_OK = 0
EXIT_FAILURE = 1  # a fault inside skyplan (a bug) or a damaged installation (DataError)
EXIT_BAD_INPUT = 2  # bad input: file, option, site, catalogue row
EXIT_NOTHING_OBSERVABLE = 3  # valid input, but no target can be observed tonight
EXIT_OUTPUT = 4  # the output could not be written (permissions, full disk)
EXIT_SELFCHECK = 5  # ``skyplan selfcheck`` found a check that failed
EXIT_INTERRUPTED = 130  # Ctrl-C (SIGINT): 128 + 2, as shells report it
EXIT_TERMINATED = 143  # SIGTERM (a cron time-out, a shutdown): 128 + 15


class SkyplanError(Exception):
    """Base class: carries an exit status and a one-line message."""

    exit_status = EXIT_FAILURE

    def one_line(self) -> str:
        return " ".join(str(self).split())

    def lines(self) -> list[str]:
        """The message as the CLI prints it, one line each (one line for most errors)."""
        return [self.one_line()]

    def __reduce__(self):
        """Pickle as it is, message and attributes (an error crosses a process boundary whole)."""
        return _restore, (type(self), self.args, dict(self.__dict__))


def _restore(cls, args, state):
    exc = cls.__new__(cls)
    exc.args = args
    exc.__dict__.update(state)
    return exc


class InputError(SkyplanError):
    """Bad input: names where it is (file, line, field) and what is wrong."""

    exit_status = EXIT_BAD_INPUT

    def __init__(
        self,
        message: str,
        *,
        file: str | None = None,
        line: int | None = None,
        field: str | None = None,
    ) -> None:
        self.message = message
        self.file = file
        self.line = line
        self.field = field
        super().__init__(self._compose())

    def _compose(self) -> str:
        """The message after where it is; the file name and the field (a key from the
        file, which may be anything) are shown with control characters escaped."""
        where = []
        if self.file is not None:
            file = escaped(str(self.file))
            where.append(file if self.line is None else f"{file}:{self.line}")
        elif self.line is not None:
            where.append(f"line {self.line}")
        if self.field is not None:
            where.append(f"field '{escaped(str(self.field))}'")
        prefix = ", ".join(where)
        return f"{prefix}: {self.message}" if prefix else self.message


class InputErrors(InputError):
    """Several input problems at once (e.g. every bad row of a catalogue).

    ``str()`` is one line (for logs and the API); :meth:`lines` is what the CLI prints: a
    count, then each problem on a line of its own (file:line, field, what is wrong), at
    most ``limit`` of them, then ``and N more``.
    """

    def __init__(self, problems: list[InputError], *, limit: int = 20) -> None:
        self.problems = problems
        self.limit = limit
        if len(problems) == 1:
            super().__init__(problems[0].one_line())
            return
        if limit <= 0:
            super().__init__(f"{len(problems)} problem(s)")
            return
        shown = "; ".join(p.one_line() for p in problems[:limit])
        more = f"; and {len(problems) - limit} more" if len(problems) > limit else ""
        super().__init__(f"{len(problems)} problem(s): {shown}{more}")

    def _compose(self) -> str:  # the message is already complete
        return self.message

    def lines(self) -> list[str]:
        if len(self.problems) == 1:
            return [self.one_line()]
        shown = [p.one_line() for p in self.problems[:max(self.limit, 0)]]
        more = len(self.problems) - len(shown)
        files = {p.file for p in self.problems}
        where = f" in {next(iter(files))}" if len(files) == 1 and None not in files else ""
        return ([f"{len(self.problems)} problems{where}:"] + [f"  {line}" for line in shown]
                + ([f"  and {more} more"] if more else []))


class OutputError(SkyplanError):
    """The result could not be written where asked."""

    exit_status = EXIT_OUTPUT


class DataError(SkyplanError):
    """A bundled data file (ephemeris, IERS table, name catalogue) is missing or damaged.

    Not the user's input and not a bug in skyplan, but the installation: status 1, with a
    message naming the file and how to repair it.
    """

    exit_status = EXIT_FAILURE


class SelfcheckFailed(SkyplanError):
    """``skyplan selfcheck`` found a check that failed (the table says which)."""

    exit_status = EXIT_SELFCHECK


class NothingObservable(SkyplanError):
    """Valid input, but nothing can be observed: a distinct status for cron scripts."""

    exit_status = EXIT_NOTHING_OBSERVABLE
