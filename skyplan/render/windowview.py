"""Windows: records for JSON/CSV and a terminal table with a timeline (formatting only)."""

from __future__ import annotations

from zoneinfo import ZoneInfo

import numpy as np

from skyplan.render.tables import _table
from skyplan.timeline import BLOCKED, DOWN, LIGHT, USABLE

# characters read without colour and in log files; colour is only a help on a terminal
TIMELINE_CHARS = {USABLE: "#", BLOCKED: "-", DOWN: ".", LIGHT: " "}
TIMELINE_STYLE = {USABLE: "bold green", BLOCKED: "yellow", DOWN: "grey50", LIGHT: "on grey23"}
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


def window_records(res, *, text_times: bool = True) -> list[dict]:
    """One record per target, in the documented JSON layout (columns first, then rows).

    Times are ISO 8601 strings, or with ``text_times=False`` datetime objects that
    :func:`skyplan.render.records.to_json` writes as the same strings, faster.
    """
    import gc

    collect = gc.isenabled()
    gc.disable()  # hundreds of thousands of fresh containers: the collector only slows this
    try:
        return _window_records(res, _iso_array if text_times else _datetimes)
    finally:
        if collect:
            gc.enable()


def _window_records(res, times) -> list[dict]:
    n = len(res.names)
    w = res.windows
    starts, ends = times(w.start), times(w.end)
    mins = np.round((w.end - w.start) / 60.0, 2).tolist()
    per_row: list[list] = [[] for _ in range(n)]
    for r, a, b, m in zip(w.rows.tolist(), starts, ends, mins):
        per_row[r].append({"start": a, "end": b, "minutes": m})
    keys = list(res.lost_s)
    lost_rows = [dict(zip(keys, vals)) for vals in zip(
        *(_rounded(res.lost_s[k] / 60.0, 2) for k in keys))] if keys else [{}] * n
    columns = zip(
        res.names.tolist(), _rounded(res.ra_deg, 7), _rounded(res.dec_deg, 7),
        times(res.rise), times(res.transit), times(res.set),
        _rounded(res.transit_alt_deg, 3), _rounded(res.transit_airmass, 4), per_row,
        _rounded(res.usable_s / 60.0, 2), times(res.best_time),
        _rounded(res.best_airmass, 4), _status(res), lost_rows, res.near_sun.tolist(),
        res.daylight_window.tolist(), _rounded(res.sun_distance_deg, 2),
        _rounded(res.moon_distance_deg, 2),
    )
    out = [
        {"name": a, "ra_deg": b, "dec_deg": c, "rise": d, "transit": e, "set": f,
         "transit_alt_deg": g, "transit_airmass": h, "windows": i, "usable_minutes": j,
         "best_time": k, "best_airmass": m, "status": o, "lost_minutes": p,
         "near_sun": q, "daylight_window": r, "sun_distance_deg": s, "moon_distance_deg": u}
        for a, b, c, d, e, f, g, h, i, j, k, m, o, p, q, r, s, u in columns
    ]
    for i in np.nonzero(res.identifiers != "")[0]:
        out[i]["identifier"] = res.identifiers[i]
    return out


def _status(res) -> list[str]:
    """always_up / never_up / observable / not_observable (rises but no window)."""
    base = np.asarray(res.status, dtype=object)
    usable = res.usable_s > 0
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


def _hhmm(unix, zone) -> str:
    import datetime as dt

    if unix is None or not np.isfinite(unix):
        return "—"
    return dt.datetime.fromtimestamp(float(unix), zone).strftime("%H:%M")


def windows_table(res, site, codes=None, edges=None, *, color: bool = True):
    zone = ZoneInfo(res.night.zone)
    from rich.text import Text

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
    for k, i in enumerate(order):
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
            text = Text()
            for c in codes[i]:
                text.append(TIMELINE_CHARS[int(c)], style=TIMELINE_STYLE[int(c)] if color else None)
            row.append(text)
        t.add_row(*row, style="red" if res.near_sun[i] and color else None)
        del k
    return t

