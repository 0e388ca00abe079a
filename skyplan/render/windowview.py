"""Windows: records for JSON/CSV and a terminal table with a timeline (formatting only)."""

from __future__ import annotations

import itertools
from zoneinfo import ZoneInfo

import numpy as np

from skyplan.render.tables import _table
from skyplan.timeline import BLOCKED, DOWN, LIGHT, PLANNED, USABLE

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
    stamps[~ok] = np.datetime64("NaT")
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


def _float_tokens(a, places: int) -> list[bytes]:
    """JSON number tokens (null for NaN and infinities) of a float column, one orjson call."""
    import orjson

    a = np.round(np.asarray(a, dtype=float), places)
    return orjson.dumps(a.tolist())[1:-1].split(b",") if len(a) else []


def _time_tokens(unix) -> list[bytes]:
    """JSON tokens of UTC instants: quoted ISO 8601 with Z to the second, or null."""
    import orjson

    u = np.round(np.asarray(unix, dtype=float))
    ok = np.isfinite(u)
    stamps = np.where(ok, u, 0.0).astype("int64").astype("datetime64[s]")
    stamps[~ok] = np.datetime64("NaT")
    body = orjson.dumps(stamps.tolist(), option=orjson.OPT_NAIVE_UTC | orjson.OPT_UTC_Z)
    return body[1:-1].split(b",") if len(u) else []


def _text_tokens(values) -> list[bytes]:
    """JSON string tokens; one orjson call for the column unless a value holds a comma."""
    import orjson

    vals = list(values)
    if any("," in v for v in vals):
        return [orjson.dumps(v) for v in vals]
    return orjson.dumps(vals)[1:-1].split(b",") if vals else []


def _bool_tokens(a) -> list[bytes]:
    return [b"true" if x else b"false" for x in np.asarray(a, bool).tolist()]


def window_json_lines(res, a: int = 0, b: int | None = None) -> list[bytes]:
    """Compact JSON, one line per target (targets ``a`` to ``b``).

    Byte for byte what orjson makes of :func:`window_records`, three times faster: each
    column is encoded by one orjson call and split into tokens, and the records are joined
    from the tokens, with no dictionary per target.
    """
    import orjson

    b = len(res.names) if b is None else b
    n = b - a
    w = res.windows
    lo, hi = np.searchsorted(w.rows, [a, b])
    ws, we = w.start[lo:hi], w.end[lo:hi]
    win = _joined([(b'{"start":', _time_tokens(ws)), (b',"end":', _time_tokens(we)),
                   (b',"minutes":', _float_tokens((we - ws) / 60.0, 2))], b"}")
    per_row = [b""] * n
    if hi > lo:
        bounds = np.searchsorted(w.rows[lo:hi] - a, np.arange(n + 1)).tolist()
        for i in np.nonzero(np.diff(bounds))[0].tolist():
            per_row[i] = b",".join(win[bounds[i]:bounds[i + 1]])
    lost = _joined([((b"," if j else b"") + b'"' + k.encode() + b'":',
                     _float_tokens(res.lost_s[k][a:b] / 60.0, 2))
                    for j, k in enumerate(res.lost_s)], b"") if res.lost_s else [b""] * n
    ident = [b"" if not x else b',"identifier":' + orjson.dumps(x)
             for x in res.identifiers[a:b].tolist()]
    fields = [
        (b'{"name":', _text_tokens(res.names[a:b].tolist())),
        (b',"ra_deg":', _float_tokens(res.ra_deg[a:b], 7)),
        (b',"dec_deg":', _float_tokens(res.dec_deg[a:b], 7)),
        (b',"rise":', _time_tokens(res.rise[a:b])),
        (b',"transit":', _time_tokens(res.transit[a:b])),
        (b',"set":', _time_tokens(res.set[a:b])),
        (b',"transit_alt_deg":', _float_tokens(res.transit_alt_deg[a:b], 3)),
        (b',"transit_airmass":', _float_tokens(res.transit_airmass[a:b], 4)),
        (b',"windows":[', per_row),
        (b'],"usable_minutes":', _float_tokens(res.usable_s[a:b] / 60.0, 2)),
        (b',"best_time":', _time_tokens(res.best_time[a:b])),
        (b',"best_airmass":', _float_tokens(res.best_airmass[a:b], 4)),
        (b',"status":', _text_tokens(_status(res, a, b))),
        (b',"lost_minutes":{', lost),
        (b'},"near_sun":', _bool_tokens(res.near_sun[a:b])),
        (b',"daylight_window":', _bool_tokens(res.daylight_window[a:b])),
        (b',"sun_distance_deg":', _float_tokens(res.sun_distance_deg[a:b], 2)),
        (b',"moon_distance_deg":', _float_tokens(res.moon_distance_deg[a:b], 2)),
        (b"", ident),
    ]
    return _joined(fields, b"}")


def _joined(fields: list[tuple[bytes, list[bytes]]], tail: bytes) -> list[bytes]:
    """Row by row: key, token, key, token, ..., tail."""
    parts = []
    for key, tokens in fields:
        parts += [itertools.repeat(key), tokens]
    parts.append(itertools.repeat(tail))
    return list(map(b"".join, zip(*parts)))


def json_chunks(res, *, ndjson: bool, chunk: int = 50_000):
    """The windows as JSON (an array) or NDJSON, produced a block of targets at a time so
    that a million-target catalogue never holds all its records in memory at once."""
    n = len(res.names)
    if not ndjson:
        yield b"["
    for k, a in enumerate(range(0, n, chunk)):
        lines = window_json_lines(res, a, min(n, a + chunk))
        if ndjson:
            yield b"\n".join(lines) + b"\n"
        else:
            yield (b"," if k else b"") + b",".join(lines)
    if not ndjson:
        yield b"]\n"


def csv_chunks(res, *, chunk: int = 50_000):
    """The windows as CSV, one row per target (windows as START/END pairs joined by ';',
    lost minutes as ``lost_<limit>_min`` columns), a block of targets at a time."""
    from skyplan.render import records

    n = len(res.names)
    columns = None
    for a in range(0, n, chunk):
        recs = window_records(res, start=a, stop=min(n, a + chunk))
        flat = [{**{k: v for k, v in r.items() if k not in ("windows", "lost_minutes")},
                 "windows": ";".join(f"{w['start']}/{w['end']}" for w in r["windows"]),
                 **{f"lost_{k}_min": v for k, v in r["lost_minutes"].items()}} for r in recs]
        if columns is None:
            columns = list(flat[0]) if flat else []
            if "identifier" not in columns and (res.identifiers != "").any():
                columns.insert(1, "identifier")
            yield records.to_csv(flat, columns)
        else:
            yield records.to_csv(flat, columns).split(b"\n", 1)[1]  # without the header
    if columns is None:
        yield records.to_csv([], ["name"])


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
        "schema": "skyplan.windows/1",
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

