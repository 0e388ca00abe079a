"""Progress through a night, read and checked at the edge: where the plan resumes
(``--start``) and what is already done (``--done FILE``).

A start is ``now``, ``HH:MM`` on the night's local clock (after noon: the evening of the
night's date; before noon: the next morning) or ISO 8601 (with ``Z`` or an offset; bare, in
the site's zone).

A done file has one of three forms, told apart by their content:

* a plan document (``skyplan plan --format json``) whose observations carry ``"done": true``;
* NDJSON, one finished visit per line: an object with ``name`` and optionally ``start`` and
  ``end`` (ISO 8601 with ``Z`` or an offset; a bare time is read in the site's zone) and
  ``done`` (``false`` leaves the line out);
* plain text, one target name per line; from ``#`` to the end of a line is a comment.

A name given twice counts as two visits.  Visits with times must lie inside the night being
planned (a log of another night is refused, not silently counted).  Every problem is an
InputError naming the file, the line (the observation, in a plan document) and the field.
"""

from __future__ import annotations

import datetime as dt
import json
import re
from dataclasses import dataclass
from pathlib import Path

from skyplan.errors import InputError
from skyplan.inputs import readfile
from skyplan.text import quoted

MAX_DONE_BYTES = 16 * 1024 * 1024  # a night's log is a few hundred lines
_CLOCK = re.compile(r"^([01]?\d|2[0-3]):([0-5]\d)$")


def is_clock_time(text: str) -> bool:
    """``HH:MM`` (or ``now``): a time that needs the night to become an instant."""
    return text.strip().lower() == "now" or _CLOCK.match(text.strip()) is not None


def night_date_of(unix: float, zone) -> dt.date:
    """The night an instant belongs to: the local date, or the day before in the morning."""
    local = dt.datetime.fromtimestamp(unix, zone)
    return local.date() if local.hour >= 12 else local.date() - dt.timedelta(days=1)


def start_instant(text: str, zone, night_date: dt.date, *, field: str = "--start") -> float:
    """POSIX seconds of a start given as ``now``, ``HH:MM`` on the night's clock, or ISO."""
    from skyplan.inputs import timeinput

    clock = _CLOCK.match(text.strip())
    if clock is None:
        try:
            return timeinput.parse_instant(text, zone, field=field)
        except InputError as exc:
            if not exc.message.startswith("cannot read"):
                raise
            raise InputError(f"cannot read {text!r} as a time: use 'now', HH:MM on the "
                             "night's clock, or ISO 8601 such as 2026-12-18T23:00:00Z or "
                             "2026-12-18T23:00+01:00", field=field) from None
    hour, minute = int(clock.group(1)), int(clock.group(2))
    day = night_date if hour >= 12 else night_date + dt.timedelta(days=1)
    return timeinput.parse_instant(f"{day.isoformat()}T{hour:02d}:{minute:02d}", zone,
                                   field=field)


@dataclass(frozen=True)
class DoneVisit:
    name: str
    start: float | None  # POSIX seconds, None when not given
    end: float | None


@dataclass(frozen=True)
class DoneLog:
    """The finished visits of one night, in the order given, and where they came from."""

    path: str
    kind: str  # "plan", "ndjson" or "names"
    visits: tuple[DoneVisit, ...]


def read_done(path: str | Path, zone, night_span: tuple[float, float],
              night_date: str) -> DoneLog:
    """The done visits in ``path``; times must fall in ``night_span`` (POSIX seconds, the
    noon-to-noon span of the night of ``night_date``)."""
    where = str(path)
    raw = readfile.read_input(path, MAX_DONE_BYTES, what="log of visits done")
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[:exc.start].count(b"\n") + 1
        raise InputError("not UTF-8 text; save the file as UTF-8", file=where,
                         line=line) from None
    reader = _Reader(where, zone, night_span, night_date)
    first = next((s for s in (ln.strip() for ln in text.splitlines())
                  if s and not s.startswith("#")), "")
    if first == "{":  # one document over many lines: a plan
        return DoneLog(where, "plan", reader.plan(text))
    if first.startswith("{"):
        return DoneLog(where, "ndjson", reader.ndjson(text))
    return DoneLog(where, "names", reader.names(text))


class _Reader:
    def __init__(self, path: str, zone, span: tuple[float, float], date: str) -> None:
        self.path, self.zone, self.span, self.date = path, zone, span, date

    def fail(self, message: str, line: int | None = None, field: str | None = None):
        return InputError(message, file=self.path, line=line, field=field)

    def names(self, text: str) -> tuple[DoneVisit, ...]:
        names = (line.split("#", 1)[0].strip() for line in text.splitlines())
        return tuple(DoneVisit(name, None, None) for name in names if name)

    def ndjson(self, text: str) -> tuple[DoneVisit, ...]:
        out = []
        for number, line in enumerate(text.splitlines(), 1):
            stripped = line.strip()
            if not stripped or stripped.startswith("#"):
                continue
            try:
                rec = json.loads(stripped)
            except json.JSONDecodeError as exc:
                raise self.fail(f"not JSON ({exc.msg}, column {exc.colno})", number) from None
            if not isinstance(rec, dict):
                raise self.fail("each line is one JSON object with a name", number)
            visit = self.visit(rec, number, "")
            if visit is not None:
                out.append(visit)
        return tuple(out)

    def plan(self, text: str) -> tuple[DoneVisit, ...]:
        try:
            doc = json.loads(text)
        except json.JSONDecodeError as exc:
            raise self.fail(f"not JSON ({exc.msg}, column {exc.colno})", exc.lineno) from None
        if not isinstance(doc, dict):
            raise self.fail("a plan is a JSON object with its observations")
        night = doc.get("night")
        date = night.get("date") if isinstance(night, dict) else night
        if date is not None and str(date) != self.date:
            raise self.fail(f"this plan is for the night of {date}, not of {self.date}",
                            field="night.date")
        obs = doc.get("observations")
        if not isinstance(obs, list):
            raise self.fail("missing or not a list", field="observations")
        out = []
        for i, rec in enumerate(obs):
            if not isinstance(rec, dict):
                raise self.fail("not an object", field=f"observations[{i}]")
            try:
                visit = self.visit(rec, None, f"observations[{i}].", default_done=False)
            except InputError as exc:
                raise self.fail(exc.message, _element_line(text, "observations", i),
                                exc.field) from None
            if visit is not None:
                out.append(visit)
        return tuple(out)

    def visit(self, rec: dict, line: int | None, prefix: str, *,
              default_done: bool = True) -> DoneVisit | None:
        done = rec.get("done", default_done)
        if not isinstance(done, bool):
            raise self.fail("must be true or false", line, f"{prefix}done")
        if not done:
            return None
        name = rec.get("name")
        if not isinstance(name, str) or not name.strip():
            raise self.fail("missing or empty; every done visit names its target", line,
                            f"{prefix}name")
        start = self.instant(rec.get("start"), line, f"{prefix}start")
        end = self.instant(rec.get("end"), line, f"{prefix}end")
        if start is not None and end is not None and not end > start:
            raise self.fail("ends before it starts", line, f"{prefix}end")
        return DoneVisit(name.strip(), start, end)

    def instant(self, value, line: int | None, field: str) -> float | None:
        from skyplan.inputs import timeinput

        if value is None:
            return None
        if not isinstance(value, str) or value.strip().lower() == "now":
            raise self.fail("an ISO 8601 time such as 2026-12-18T21:30:00Z", line, field)
        try:
            unix = timeinput.parse_instant(value, self.zone, field=field)
        except InputError as exc:
            raise self.fail(exc.message, line, field) from None
        if not self.span[0] <= unix <= self.span[1]:
            raise self.fail(f"{quoted(value, 40)} is not in the night of "
                            f"{self.date} (noon to noon, local time); is this another "
                            "night's log?", line, field)
        return unix


def _element_line(text: str, key: str, index: int) -> int | None:
    """The line on which element ``index`` of the array ``key`` starts (for a message only:
    the first ``"key": [`` of the text, scanned with strings skipped)."""
    found = re.search('"' + re.escape(key) + r'"\s*:\s*\[', text)
    if found is None:
        return None
    depth, quoted, escaped, expect, seen = 0, False, False, True, -1
    for pos in range(found.end(), len(text)):  # runs only to report an error
        c = text[pos]
        if quoted:
            if escaped:
                escaped = False
            elif c == "\\":
                escaped = True
            elif c == '"':
                quoted = False
            continue
        if depth == 0 and c == ",":
            expect = True
        elif depth == 0 and expect and c not in " \t\r\n]":
            expect, seen = False, seen + 1
            if seen == index:
                return text.count("\n", 0, pos) + 1
        if c == '"':
            quoted = True
        elif c in "{[":
            depth += 1
        elif c in "}]":
            depth -= 1
            if depth < 0:
                return None
    return None
