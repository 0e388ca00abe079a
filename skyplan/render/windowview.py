"""Windows: records for JSON/CSV and a terminal table with a timeline (formatting only)."""

from __future__ import annotations

from zoneinfo import ZoneInfo

import numpy as np

from skyplan.engine.timeline import BLOCKED, DOWN, LIGHT, PLANNED, USABLE
from skyplan.render.tables import _table

# characters read without colour and in log files; colour is only a help on a terminal
TIMELINE_CHARS = {USABLE: "#", BLOCKED: "-", DOWN: ".", LIGHT: " ", PLANNED: "@"}
TIMELINE_STYLE = {USABLE: "bold green", BLOCKED: "yellow", DOWN: "grey50", LIGHT: "on grey23",
                  PLANNED: "bold white on blue"}
TIMELINE_KEY = ("timeline: '#' usable, '-' up but blocked by a limit, '.' below the altitude "
                "limit, blank: sky not dark")


def _iso_array(unix: np.ndarray) -> list:
    """ISO 8601 UTC strings with Z (None for NaN), vectorised through numpy datetime64."""
    u = np.asarray(unix, dtype=float)
    ok = np.isfinite(u)
    out = np.full(len(u), None, dtype=object)
    if ok.any():
        stamps = np.round(u[ok]).astype("int64").astype("datetime64[s]")
        out[ok] = np.char.add(np.datetime_as_string(stamps, unit="s"), "Z")
    return out.tolist()


def _datetimes(unix: np.ndarray) -> list:
    """UTC instants as naive datetime objects to the second (None for NaN); the JSON writer
    renders them as ISO 8601 with Z, much faster than formatting strings here."""
    u = np.round(np.asarray(unix, dtype=float))
    ok = np.isfinite(u)
    stamps = np.where(ok, u, 0.0).astype("int64").astype("datetime64[s]")
    stamps[~ok] = np.datetime64("NaT", "s")
    return stamps.tolist()


def _rounded(a: np.ndarray, places: int) -> list:
    """Rounded floats; NaN and inf stay as they are and are written as JSON null (orjson)."""
    return np.round(np.asarray(a, dtype=float), places).tolist()


def window_records(res, *, text_times: bool = True, start: int = 0,
                   stop: int | None = None) -> list[dict]:
    """One record per target (targets ``start`` to ``stop``), in the documented JSON layout.

    Times are ISO 8601 strings, or with ``text_times=False`` datetime objects that
    :func:`skyplan.render.records.to_json` writes as the same strings, faster.
    """
    import gc

    collect = gc.isenabled()
    gc.disable()  # hundreds of thousands of fresh containers: the collector only slows this
    try:
        stop = len(res.names) if stop is None else stop
        return _window_records(res, _iso_array if text_times else _datetimes, start, stop)
    finally:
        if collect:
            gc.enable()


def _window_records(res, times, a: int, b: int) -> list[dict]:
    n = b - a
    w = res.windows
    lo, hi = np.searchsorted(w.rows, [a, b])  # intervals are sorted by row
    rows, w_start, w_end = w.rows[lo:hi] - a, w.start[lo:hi], w.end[lo:hi]
    starts, ends = times(w_start), times(w_end)
    mins = np.round((w_end - w_start) / 60.0, 2).tolist()
    per_row: list[list] = [[] for _ in range(n)]
    for r, s, e, m in zip(rows.tolist(), starts, ends, mins):
        per_row[r].append({"start": s, "end": e, "minutes": m})
    keys = list(res.lost_s)
    lost_rows = [dict(zip(keys, vals)) for vals in zip(
        *(_rounded(res.lost_s[k][a:b] / 60.0, 2) for k in keys))] if keys else [{}] * n
    columns = zip(
        res.names[a:b].tolist(), _rounded(res.ra_deg[a:b], 7), _rounded(res.dec_deg[a:b], 7),
        times(res.rise[a:b]), times(res.transit[a:b]), times(res.set[a:b]),
        _rounded(res.transit_alt_deg[a:b], 3), _rounded(res.transit_airmass[a:b], 4), per_row,
        _rounded(res.usable_s[a:b] / 60.0, 2), times(res.best_time[a:b]),
        _rounded(res.best_airmass[a:b], 4), _status(res, a, b), lost_rows,
        res.near_sun[a:b].tolist(), res.daylight_window[a:b].tolist(),
        _rounded(res.sun_distance_deg[a:b], 2), _rounded(res.moon_distance_deg[a:b], 2),
    )
    out = [
        {"name": c0, "ra_deg": c1, "dec_deg": c2, "rise": c3, "transit": c4, "set": c5,
         "transit_alt_deg": c6, "transit_airmass": c7, "windows": c8, "usable_minutes": c9,
         "best_time": c10, "best_airmass": c11, "status": c12, "lost_minutes": c13,
         "near_sun": c14, "daylight_window": c15, "sun_distance_deg": c16,
         "moon_distance_deg": c17}
        for c0, c1, c2, c3, c4, c5, c6, c7, c8, c9, c10, c11, c12, c13, c14, c15, c16, c17
        in columns
    ]
    ident = res.identifiers[a:b]
    for i in np.nonzero(ident != "")[0]:
        out[i]["identifier"] = ident[i]
    return out


PIECE = 8192  # targets encoded at a time: bounds the grid (a 1,000-character name widens it)


def _json_strings(values: list[str]) -> list[bytes]:
    """Each value as a JSON string; one orjson call unless a value holds a comma."""
    import orjson

    if not values:
        return []
    if "," in "".join(values):
        return [orjson.dumps(v) for v in values]
    return orjson.dumps(values)[1:-1].split(b",")


def json_block(res, a: int = 0, b: int | None = None, *, ndjson: bool) -> bytes:
    """Targets ``a`` to ``b`` as NDJSON lines, or as array members joined by commas.

    Byte for byte what orjson makes of :func:`window_records`, many times faster: every
    column is written at once into a byte grid (:mod:`skyplan.render.bytegrid`).
    """
    b = len(res.names) if b is None else b
    sep = b"\n" if ndjson else b","
    return b"".join(_json_piece(res, s, min(b, s + PIECE), sep,
                                sep if ndjson or s + PIECE < b else b"")
                    for s in range(a, b, PIECE))


def _json_piece(res, a: int, b: int, sep: bytes, last_sep: bytes) -> bytes:
    """One record per target: a head up to ``"windows":[``, one row per window, a tail."""
    import orjson

    from skyplan.render import bytegrid as g

    n = b - a
    w = res.windows
    lo, hi = np.searchsorted(w.rows, [a, b])  # intervals are sorted by row
    rows, ws, we = w.rows[lo:hi] - a, w.start[lo:hi], w.end[lo:hi]
    m = hi - lo
    first = np.ones(m, dtype=bool)
    first[1:] = rows[1:] != rows[:-1]
    win = g.assemble(m, [
        g.choice(first, b"", b","), b'{"start":', g.instants(ws), b',"end":', g.instants(we),
        b',"minutes":', g.decimals((we - ws) / 60.0, 2), b"}",
    ])
    width = win.shape[1]  # the grid's rows are this wide: one window a row
    head = g.assemble(n, [
        b'{"name":', g.texts(_json_strings(res.names[a:b].tolist())),
        b',"ra_deg":', g.decimals(res.ra_deg[a:b], 7),
        b',"dec_deg":', g.decimals(res.dec_deg[a:b], 7),
        b',"rise":', g.instants(res.rise[a:b]),
        b',"transit":', g.instants(res.transit[a:b]),
        b',"set":', g.instants(res.set[a:b]),
        b',"transit_alt_deg":', g.decimals(res.transit_alt_deg[a:b], 3),
        b',"transit_airmass":', g.decimals(res.transit_airmass[a:b], 4),
        b',"windows":[',
    ], multiple=width)
    statuses = _status(res, a, b)
    status = {s: b',"status":' + orjson.dumps(s) for s in set(statuses)}
    tail = g.assemble(n, [
        b'],"usable_minutes":', g.decimals(res.usable_s[a:b] / 60.0, 2),
        b',"best_time":', g.instants(res.best_time[a:b]),
        b',"best_airmass":', g.decimals(res.best_airmass[a:b], 4),
        g.texts([status[s] for s in statuses]),
        *_lost_parts(res, a, b),
        b'},"near_sun":', g.choice(res.near_sun[a:b], b"true", b"false"),
        b',"daylight_window":', g.choice(res.daylight_window[a:b], b"true", b"false"),
        b',"sun_distance_deg":', g.decimals(res.sun_distance_deg[a:b], 2),
        b',"moon_distance_deg":', g.decimals(res.moon_distance_deg[a:b], 2),
        *_identifier_parts(res.identifiers[a:b]), b"}",
        g.choice(np.arange(n) < n - 1, sep, last_sep),
    ], multiple=width)
    grid = g.nest(head, win, rows, tail)
    return g.squeeze(grid)


def _lost_parts(res, a: int, b: int) -> list:
    """The ``lost_minutes`` object, one key and value column per limit (the first opens it)."""
    from skyplan.render import bytegrid as g

    keys = list(res.lost_s)
    if not keys:
        return [b',"lost_minutes":{']
    out = []
    for j, k in enumerate(keys):
        out.append((b"," if j else b',"lost_minutes":{') + b'"' + k.encode() + b'":')
        out.append(g.decimals(res.lost_s[k][a:b] / 60.0, 2))
    return out


def _identifier_parts(identifiers) -> list:
    """``,"identifier":"..."`` where a name was resolved, nothing elsewhere."""
    import orjson

    from skyplan.render import bytegrid as g

    identifiers = np.asarray(identifiers)
    given = np.flatnonzero(identifiers != "")
    if not len(given):
        return []
    tokens = [b""] * len(identifiers)
    for i, x in zip(given.tolist(), identifiers[given].tolist()):
        tokens[i] = b',"identifier":' + orjson.dumps(x)
    return [g.texts(tokens)]


def json_stream(blocks, *, ndjson: bool):
    """The whole document from blocks made by :func:`json_block`, in order: an array, or
    NDJSON (the blocks as they are)."""
    if not ndjson:
        yield b"["
    for k, block in enumerate(blocks):
        if k and not ndjson:
            yield b","
        yield block
    if not ndjson:
        yield b"]\n"


def json_chunks(res, *, ndjson: bool, chunk: int = 50_000):
    """The windows as JSON (an array) or NDJSON, produced a block of targets at a time so
    that a million-target result never holds all its records in memory at once."""
    n = len(res.names)
    return json_stream((json_block(res, a, min(n, a + chunk), ndjson=ndjson)
                        for a in range(0, n, chunk)), ndjson=ndjson)


CSV_BASE_COLUMNS = ("name", "ra_deg", "dec_deg", "rise", "transit", "set", "transit_alt_deg",
                    "transit_airmass", "usable_minutes", "best_time", "best_airmass", "status",
                    "near_sun", "daylight_window", "sun_distance_deg", "moon_distance_deg",
                    "windows")


def csv_columns(lost_keys, *, with_identifier: bool) -> list[str]:
    """The CSV header: the record's fields (``identifier`` second when any target has one,
    windows as START/END pairs joined by ';'), then ``lost_<limit>_min`` per limit."""
    head = list(CSV_BASE_COLUMNS)
    if with_identifier:
        head.insert(1, "identifier")
    return head + [f"lost_{k}_min" for k in lost_keys]


def csv_block(res, columns: list[str], a: int = 0, b: int | None = None, *,
              header: bool) -> bytes:
    """Targets ``a`` to ``b`` as CSV rows, with the header line when ``header``.

    Byte for byte what :func:`skyplan.render.records.to_csv` makes of the flattened
    :func:`window_records` (Python's csv module: numbers as ``repr`` writes them, empty
    fields for missing values), written column by column into byte grids.
    """
    b = len(res.names) if b is None else b
    head = (",".join(columns) + "\n").encode() if header else b""
    with_identifier = "identifier" in columns
    return head + b"".join(_csv_piece(res, s, min(b, s + PIECE), with_identifier)
                           for s in range(a, b, PIECE))


def _csv_fields(values: list[str]) -> list[bytes]:
    """Each value as the csv module writes a field (quoted only when it must be)."""
    import csv
    import io

    if not any(c in "".join(values) for c in ',"\r\n'):
        return [v.encode() for v in values]
    out = []
    for v in values:
        buffer = io.StringIO()
        csv.writer(buffer, lineterminator="\n").writerow([v, ""])
        out.append(buffer.getvalue()[:-2].encode())  # without the empty field and the "\n"
    return out


def _csv_piece(res, a: int, b: int, with_identifier: bool) -> bytes:
    """One row per target: the fields up to ``windows``, one grid row per window, the rest."""
    from skyplan.render import bytegrid as g

    n = b - a
    w = res.windows
    lo, hi = np.searchsorted(w.rows, [a, b])
    rows, ws, we = w.rows[lo:hi] - a, w.start[lo:hi], w.end[lo:hi]
    first = np.ones(hi - lo, dtype=bool)
    first[1:] = rows[1:] != rows[:-1]
    win = g.assemble(hi - lo, [g.choice(first, b"", b";"), g.instants(ws, text=True), b"/",
                               g.instants(we, text=True)])
    width = win.shape[1]

    def number(values, places: int) -> list:
        return [b",", g.decimals(values, places, text=True)]

    def instant(values) -> list:
        return [b",", g.instants(values, text=True)]

    identifier = [b",", g.texts(_csv_fields(res.identifiers[a:b].tolist()))] \
        if with_identifier else []
    head = g.assemble(n, [
        g.texts(_csv_fields(res.names[a:b].tolist())), *identifier,
        *number(res.ra_deg[a:b], 7), *number(res.dec_deg[a:b], 7),
        *instant(res.rise[a:b]), *instant(res.transit[a:b]), *instant(res.set[a:b]),
        *number(res.transit_alt_deg[a:b], 3), *number(res.transit_airmass[a:b], 4),
        *number(res.usable_s[a:b] / 60.0, 2), *instant(res.best_time[a:b]),
        *number(res.best_airmass[a:b], 4),
        b",", g.texts(_csv_fields(_status(res, a, b))),
        b",", g.choice(res.near_sun[a:b], b"True", b"False"),
        b",", g.choice(res.daylight_window[a:b], b"True", b"False"),
        *number(res.sun_distance_deg[a:b], 2), *number(res.moon_distance_deg[a:b], 2), b",",
    ], multiple=width)
    lost = [part for k in res.lost_s for part in number(res.lost_s[k][a:b] / 60.0, 2)]
    tail = g.assemble(n, [*lost, b"\n"], multiple=width)
    return g.squeeze(g.nest(head, win, rows, tail))


def csv_chunks(res, *, chunk: int = 50_000):
    """The windows as CSV, one row per target, a block of targets at a time."""
    n = len(res.names)
    columns = csv_columns(list(res.lost_s), with_identifier=bool((res.identifiers != "").any()))
    if n == 0:
        yield csv_block(res, columns, header=True)
    for a in range(0, n, chunk):
        yield csv_block(res, columns, a, min(n, a + chunk), header=a == 0)


def _status(res, a: int = 0, b: int | None = None) -> list[str]:
    """always_up / never_up / observable / not_observable (rises but no window), targets a..b."""
    base = np.asarray(res.status[a:b], dtype=object)
    usable = res.usable_s[a:b] > 0
    out = np.where(base == "never_up", "never_up",
                   np.where(base == "always_up", np.where(usable, "always_up", "always_up_blocked"),
                            np.where(usable, "observable", "not_observable")))
    return out.tolist()


def windows_document(res, site, records: list[dict]) -> dict:
    from skyplan.render.nightview import night_record
    from skyplan.render.tables import site_record

    return {
        "schema": "skyplan.engine.windows/1",
        "site": site_record(site, brief=True),
        "night": night_record(res.night, site),
        "limits": res.limits.as_record(),
        "span": {"start": _iso_array(np.array([res.span[0]]))[0],
                 "end": _iso_array(np.array([res.span[1]]))[0]},
        "targets": records,
    }


def timeline_text(codes, color: bool):
    """One strip of timeline codes as rich text: characters first, colour only as a help."""
    from rich.text import Text

    text = Text()
    for c in codes:
        text.append(TIMELINE_CHARS[int(c)], style=TIMELINE_STYLE[int(c)] if color else None)
    return text


def _hhmm(unix, zone) -> str:
    import datetime as dt

    if unix is None or not np.isfinite(unix):
        return "—"
    return dt.datetime.fromtimestamp(float(unix), zone).strftime("%H:%M")


def windows_table(res, site, codes=None, edges=None, *, color: bool = True):
    zone = ZoneInfo(res.night.zone)

    lim = res.limits
    bits = [f"min alt {lim.min_alt_deg:g}°"]
    if lim.max_airmass:
        bits.append(f"airmass ≤ {lim.max_airmass:g}")
    bits.append(f"dark: {lim.dark_label}")
    if lim.moon_gap_deg:
        bits.append(f"Moon ≥ {lim.moon_gap_deg:g}°")
    bits.append(f"Sun ≥ {lim.sun_gap_deg:g}°")
    if lim.ha_range_h:
        bits.append(f"HA {lim.ha_range_h[0]:+g}..{lim.ha_range_h[1]:+g} h")
    if lim.dec_range_deg:
        bits.append(f"Dec {lim.dec_range_deg[0]:+g}..{lim.dec_range_deg[1]:+g}°")
    caption = "limits: " + ", ".join(bits) + f"; times {res.night.zone}"
    if "dark" in res.lost_s and len(res.names):
        caption += (f"; twilight takes {float(np.max(res.lost_s['dark'])) / 60:.0f} min of the "
                    "night from every target")
    if codes is not None:
        caption += f"\n{TIMELINE_KEY}; strip {_hhmm(edges[0], zone)}–{_hhmm(edges[-1], zone)}"
    t = _table(f"Windows, night of {res.night.date.isoformat()} at {site.name}", caption)
    for col, just in (("target", "left"), ("status", "left"), ("rise", "right"),
                      ("transit", "right"), ("set", "right"), ("windows", "left"),
                      ("usable", "right"), ("best", "right"), ("lost to", "left")):
        t.add_column(col, justify=just, no_wrap=col in ("windows", "transit", "best"))
    if codes is not None:
        t.add_column("timeline", no_wrap=True)
    status = _status(res)
    w = res.windows
    order = np.argsort(-res.usable_s, kind="stable")
    for i in order:
        sel = w.rows == i
        wins = ", ".join(f"{_hhmm(a, zone)}–{_hhmm(b, zone)}"
                         for a, b in zip(w.start[sel], w.end[sel])) or "—"
        lost = sorted(((v[i] / 60.0, key) for key, v in res.lost_s.items()
                       if key != "dark" and v[i] >= 30.0), reverse=True)
        lost_txt = ", ".join(f"{key.replace('_', ' ')} {m:.0f}m" for m, key in lost[:2])
        flags = []
        if res.near_sun[i]:
            flags.append("NEAR SUN")
        if res.daylight_window[i]:
            flags.append("DAYLIGHT")
        st = status[i].replace("_", " ") + (" " + " ".join(flags) if flags else "")
        best = "—" if not np.isfinite(res.best_time[i]) else \
            f"{_hhmm(res.best_time[i], zone)} X{res.best_airmass[i]:.2f}"
        tr = "—" if not np.isfinite(res.transit[i]) else \
            f"{_hhmm(res.transit[i], zone)} {res.transit_alt_deg[i]:+.0f}°"
        label = str(res.names[i])
        if res.identifiers[i] and res.identifiers[i] != label:
            label += f" ({res.identifiers[i]})"
        row = [label, st, _hhmm(res.rise[i], zone), tr, _hhmm(res.set[i], zone),
               wins, f"{res.usable_s[i] / 60.0:.0f}m", best, lost_txt]
        if codes is not None:
            row.append(timeline_text(codes[i], color))
        t.add_row(*row, style="red" if res.near_sun[i] and color else None)
    return t

