"""Terminal tables fitted to a width, and the plain records of clock, sites and selfcheck
(formatting only).

The width rule (README, "Terminal width")
-----------------------------------------
* ``--wide``: every column in full; lines are as long as they need to be.
* otherwise ``COLUMNS`` when it is set to a whole number (never less than 40);
* otherwise the terminal's width when standard output is a terminal;
* otherwise (piped or redirected) 100 columns.

No line of a fitted table is longer than the width, no cell is ever cut with ``…``, and
no line ends in spaces.

How a view declares its table
-----------------------------
A view builds a :class:`Sheet` and hands it (or a list of sheets and :class:`Strip` s) to
:func:`render_text`; it never needs to know the width::

    sheet = Sheet("Names resolved offline", footer=["fixed targets: ICRS ..."])
    sheet.column("name")                                  # kept whatever the width
    sheet.column("identifier", rank=3, fate="note")       # may move below the table
    sheet.column("type", rank=6, fate="drop")             # may go
    sheet.column("RA", justify="right")
    sheet.column("note", rank=9, fate="wrap", style="dim")  # may wrap onto more lines
    sheet.add_row("M42", ("M 42 = NGC 1976", "M 42"), "nebula", "05:35:16", "bright")

Columns appear in the order declared; ``rank`` says how important a column is (lower is
more important; by default the order of declaration).  A cell is text, a rich ``Text``
(styles kept), or a pair ``(full, short)``: the short form is used when the table is too
wide.  :func:`fit` then, until the table fits: (1) shortens columns, least important first;
(2) applies each column's ``fate``, least important first: ``drop`` (the column goes;
the footer names it), ``note`` (its values go below the table, one line per row, led by
the row's first cell), ``wrap`` (every ``wrap`` column narrows together, widest first, to
no less than 12 characters, its cells wrapping at spaces), ``keep`` (nothing); short forms
come back where there is room; (3) as a last resort the widest columns wrap.  ``--wide``
skips all of it.  A command offers ``--wide`` with ``wide: bool = options.WideOpt`` and
passes ``wide=wide`` to :func:`render_text`.  A cell may be a rich ``Text`` with colours
(the timeline strips of :mod:`skyplan.render.windowview`), kept as it is.
"""

from __future__ import annotations

import os
import re
import sys
from dataclasses import dataclass, field

DEFAULT_WIDTH = 100  # columns when not on a terminal and COLUMNS is not set
MIN_WIDTH = 40  # a smaller COLUMNS is read as this
GAP = 2  # spaces between columns
MIN_WRAP = 12  # a wrapped column keeps at least this many characters a line
FATES = ("keep", "drop", "note", "wrap")


def is_terminal() -> bool:
    """Whether standard output is a terminal that takes colour and cursor codes."""
    return sys.stdout.isatty() and os.environ.get("TERM") != "dumb"


def table_width(wide: bool = False) -> int | None:
    """The width tables are fitted to (None: no limit, ``--wide``); the rule is above."""
    if wide:
        return None
    raw = os.environ.get("COLUMNS", "").strip()
    if raw.isdigit():
        return max(int(raw), MIN_WIDTH)
    if is_terminal():
        import shutil

        return max(shutil.get_terminal_size((DEFAULT_WIDTH, 24)).columns, MIN_WIDTH)
    return DEFAULT_WIDTH


@dataclass
class _Column:
    header: str
    rank: float
    fate: str
    justify: str
    style: str | None
    cells: list = field(default_factory=list)  # (full Text, short Text or None) per row


@dataclass
class Sheet:
    """A table declared column by column and fitted to a width by :func:`fit`."""

    title: str | None = None
    footer: list[str] = field(default_factory=list)
    columns: list[_Column] = field(default_factory=list)

    def column(self, header: str, *, rank: float | None = None, fate: str = "keep",
               justify: str = "left", style: str | None = None) -> None:
        """Declare the next column (see the module docstring for ``rank`` and ``fate``)."""
        if fate not in FATES:
            raise ValueError(f"fate {fate!r} is not one of {FATES}")
        self.columns.append(_Column(header, len(self.columns) if rank is None else rank,
                                    fate, justify, style))

    def add_row(self, *cells) -> None:
        """One row: a cell per declared column (text, rich Text, or ``(full, short)``)."""
        if len(cells) != len(self.columns):
            raise ValueError(f"{len(cells)} cells for {len(self.columns)} columns")
        for col, cell in zip(self.columns, cells):
            full, short = cell if isinstance(cell, tuple) else (cell, None)
            col.cells.append((_text(full, col.style), None if short is None
                              else _text(short, col.style)))

    def lines(self, width: int | None) -> list:
        """The table as rich ``Text`` lines, fitted to ``width`` (None: natural width)."""
        return fit(self, width)


@dataclass
class Strip:
    """Labelled pairs laid out in rows as wide as the width allows (e.g. the Moon's
    altitude hour by hour): a line of ``top`` values over a line of ``bottom`` values."""

    label_top: str
    label_bottom: str
    top: list[str]
    bottom: list[str]
    title: str | None = None

    def lines(self, width: int | None) -> list:
        from rich.text import Text

        if not self.top:
            return []
        head = max(len(self.label_top), len(self.label_bottom))
        cell = max(len(v) for v in self.top + self.bottom)
        per = len(self.top) if width is None else max(1, (width - head) // (cell + 1))
        out = [Text(self.title, style="bold")] if self.title else []
        for i in range(0, len(self.top), per):
            for label, values in ((self.label_top, self.top), (self.label_bottom, self.bottom)):
                row = label.ljust(head) + "".join(v.rjust(cell + 1) for v in values[i:i + per])
                out.append(Text(row, style="dim" if label is self.label_top else None))
        return out


def _text(value, style: str | None):
    from rich.text import Text

    if isinstance(value, Text):
        return value
    return Text("" if value is None else " ".join(str(value).splitlines()), style=style or "")


def _wrap(text, width: int) -> list:
    """``text`` cut at spaces into lines of at most ``width`` characters (a longer word is
    split)."""
    plain = text.plain
    spans, start = [], 0
    while len(plain) - start > width:
        space = plain.rfind(" ", start, start + width + 1)
        if space > start:
            spans.append((start, space))
            start = space + 1
        else:
            spans.append((start, start + width))
            start += width
    spans.append((start, len(plain)))
    return [text[a:b] for a, b in spans]


def _cells(col: _Column, short: bool) -> list:
    return [s if short and s is not None else f for f, s in col.cells]


def _natural(col: _Column, short: bool) -> int:
    return max([len(col.header)] + [c.cell_len for c in _cells(col, short)])


def fit(sheet: Sheet, width: int | None) -> list:
    """Lay ``sheet`` out in at most ``width`` columns (the steps in the module docstring)."""
    cols = list(sheet.columns)
    short = {id(c): False for c in cols}
    wrap_at: dict[int, int] = {}
    noted: list[_Column] = []
    dropped: list[_Column] = []

    naturals: dict[tuple[int, bool], int] = {}

    def natural(c: _Column) -> int:
        key = (id(c), short[id(c)])
        if key not in naturals:
            naturals[key] = _natural(c, short[id(c)])
        return naturals[key]

    def total() -> int:
        widths = [wrap_at.get(id(c), natural(c)) for c in cols]
        return sum(widths) + GAP * (len(cols) - 1)

    def level(group: list[_Column], floor: int) -> None:
        """Narrow the widest of ``group`` until the table fits or all reach ``floor``."""
        while total() > width:
            now_of = {id(c): wrap_at.get(id(c), natural(c)) for c in group}
            c = max(group, key=lambda c: now_of[id(c)])
            now = now_of[id(c)]
            second = max([now_of[id(o)] for o in group if o is not c] or [floor])
            new = max(now - (total() - width), second, floor)
            new = now - 1 if new >= now else new
            if new < floor:
                return
            wrap_at[id(c)] = new

    if width is not None:
        by_rank = sorted(cols, key=lambda c: -c.rank)
        for c in by_rank:
            if total() <= width:
                break
            if any(s is not None for _, s in c.cells):
                short[id(c)] = True
        for c in by_rank:
            if total() <= width or len(cols) == 1:
                break
            if c.fate in ("drop", "note"):
                cols.remove(c)
                (noted if c.fate == "note" else dropped).append(c)
            elif c.fate == "wrap" and id(c) not in wrap_at:  # every wrap column together
                level([o for o in cols if o.fate == "wrap"], MIN_WRAP)
        for c in sorted(cols, key=lambda c: c.rank):  # room left: full forms back
            if short[id(c)] and id(c) not in wrap_at:
                short[id(c)] = False
                if total() > width:
                    short[id(c)] = True
        level(cols, 1)  # last resort: the widest columns wrap, down to even widths
    return _lay_out(sheet, cols, short, wrap_at, noted, dropped, width)


def _lay_out(sheet: Sheet, cols: list[_Column], short: dict, wrap_at: dict,
             noted: list[_Column], dropped: list[_Column], width: int | None) -> list:
    from rich.text import Text

    widths = [wrap_at.get(id(c), _natural(c, short[id(c)])) for c in cols]
    span = sum(widths) + GAP * (len(cols) - 1)

    def para(text: str, style: str = "") -> list:
        return _wrap(Text(text, style=style), width) if width is not None else [Text(text,
                                                                                      style=style)]

    def row(cells: list) -> list:
        pieces = [_wrap(cell, w) for cell, w in zip(cells, widths)]
        out = []
        for k in range(max(len(p) for p in pieces)):
            line = Text()
            for j, (c, p) in enumerate(zip(cols, pieces)):
                piece = p[k] if k < len(p) else Text("")
                pad = " " * (widths[j] - piece.cell_len)
                if c.justify == "right":
                    line.append(pad)
                    line.append_text(piece)
                else:
                    line.append_text(piece)
                    line.append(pad)
                if j < len(cols) - 1:
                    line.append(" " * GAP)
            line.rstrip()
            out.append(line)
        return out

    out = para(sheet.title, "bold") if sheet.title else []
    if out:
        out.append(Text(""))
    out += row([Text(c.header, style="bold") for c in cols])
    out.append(Text("─" * span, style="dim"))
    body = [_cells(c, short[id(c)]) for c in cols]
    for r in range(len(cols[0].cells) if cols else 0):
        out += row([b[r] for b in body])
    tail = []
    noted.sort(key=lambda c: c.rank)
    for r, key in enumerate(_cells(sheet.columns[0], True) if noted else ()):
        said = "; ".join(f"{c.header} {c.cells[r][0].plain}" for c in noted if c.cells[r][0].plain)
        if said:
            tail += para(f"{key.plain}: {said}", "dim")
    if dropped:
        names = ", ".join(c.header for c in sorted(dropped, key=lambda c: c.rank))
        tail += para(f"left out at {width} columns: {names} (--wide shows every column)", "dim")
    for text in sheet.footer:
        tail += para(text)
    return out + ([Text("")] + tail if tail else [])


_ESCAPED_TRAIL = re.compile(r" +((?:\x1b\[[0-9;]*m)*)$", re.M)


def render_text(renderable, *, wide: bool = False, width: int | None = None) -> str:
    """Text for the terminal or a pipe: colour on a terminal, plain elsewhere.

    ``renderable`` is a :class:`Sheet` or :class:`Strip`, or a list of them (laid out one
    below the other, fitted to ``width``, by default :func:`table_width`).
    """
    parts = renderable if isinstance(renderable, list) else [renderable]
    from rich.text import Text

    if width is None:
        width = table_width(wide)
    lines: list = []
    for part in parts:
        got = part.lines(width)
        if lines and got:
            lines.append(Text(""))
        lines += got
    con = _console()
    if not con.is_terminal or con.no_color:
        return "".join(line.plain.rstrip() + "\n" for line in lines)
    with con.capture() as cap:
        for line in lines:
            con.print(line, soft_wrap=True)
    return _ESCAPED_TRAIL.sub(r"\1", cap.get())


def _console():
    """A rich console on stdout: colour only on a terminal, plain text otherwise."""
    from rich.console import Console

    tty = is_terminal()
    return Console(
        force_terminal=False if not tty else None,
        no_color=not tty or "NO_COLOR" in os.environ,
        highlight=False,
        width=None if tty else 160,
    )


# ---------------------------------------------------------------- plain records


def clock_record(r, site) -> dict:
    return {
        "site": site_record(site, brief=True),
        "utc": r.utc, "ut1": r.ut1, "tt": r.tt,
        "local_time": r.local_time, "zone": r.zone,
        "jd_utc": r.jd_utc, "jd_ut1": r.jd_ut1, "jd_tt": r.jd_tt, "mjd_utc": r.mjd_utc,
        "ut1_minus_utc_s": r.dut1_s, "tai_minus_utc_s": r.tai_utc_s,
        "era_deg": r.era_deg, "gmst_deg": r.gmst_deg, "gast_deg": r.gast_deg,
        "lmst_deg": r.lmst_deg, "last_deg": r.last_deg,
    }


def site_record(site, brief: bool = False) -> dict:
    rec = {
        "name": site.name, "lat_deg": site.lat_deg, "lon_deg": site.lon_deg,
        "elevation_m": site.elevation_m, "zone": site.zone,
    }
    if brief:
        return rec
    p, t, h = site.weather()
    rec.update({
        "pressure_hpa": p, "temperature_c": t, "humidity": h,
        "weather_given": site.pressure_hpa is not None,
        "horizon": None if site.horizon is None else [
            [float(a), float(b)] for a, b in zip(site.horizon.az_deg, site.horizon.alt_deg)],
        "limits": dict(site.limits),
        "source": site.source,
    })
    return rec


def selfcheck_record(report) -> dict:
    return {
        "ok": report.ok,
        "ephemeris": report.ephemeris,
        "ephemeris_span": list(report.ephemeris_span),
        "iers_table_end": report.iers_table_end,
        "iers_observed_end": report.iers_observed_end,
        "checks": [{"name": c.name, "ok": c.ok, "expected": c.expected, "got": c.got,
                    "source": c.source} for c in report.checks],
    }
