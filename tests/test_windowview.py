"""The windows' machine formats (:mod:`skyplan.render.windowcolumns`): every format, read
back with the standard library's own readers (:mod:`json`, :mod:`csv`), gives the values of
the documented layout, rebuilt here independently from the result arrays with plain Python
(``datetime``), in every corner: names with commas and quotes, resolved
identifiers, bodies, targets with no window (nulls), and any block size."""

from __future__ import annotations

import csv
import datetime as dt
import io
import json
import math

import numpy as np
import pytest

from skyplan.engine import night, windows
from skyplan.inputs import limits, scenario, sites, targets
from skyplan.render import windowcolumns

KEYS = ["name", "ra_deg", "dec_deg", "rise", "transit", "set", "transit_alt_deg",
        "transit_airmass", "windows", "usable_minutes", "best_time", "best_airmass", "status",
        "lost_minutes", "near_sun", "daylight_window", "sun_distance_deg", "moon_distance_deg"]


@pytest.fixture(scope="module")
def results(tmp_path_factory):
    site = sites.find_site("Hollowmere", scenario.demo_path("sites.toml"))
    n = night.compute_night(site, dt.date(2026, 12, 18))
    odd = tmp_path_factory.mktemp("cat") / "odd.csv"
    odd.write_text('name,ra,dec\n"Comma, Star",10,20\n"Quote ""Q"" Star",30,40\n'
                   "M 42,,\nVega,,\nJupiter,,\nDeep South,06:00:00,-80:00:00\n")
    out = []
    for path, lim in ((scenario.demo_path("programme.csv"), limits.build_limits(site.limits)),
                      (odd, limits.build_limits({}, dark="none", moon_gap=10))):
        tset, _ = targets.target_set(targets.load_catalog(path))
        out.append(windows.compute_windows(tset, site, n, lim))
    return out


def _number(x, places: int):
    """Rounded to ``places`` as numpy rounds (scaled, then to the nearest even, as the output
    always has been); null (None) where not finite."""
    x = float(x)
    return float(np.round(x, places)) if math.isfinite(x) else None


def _instant(u):
    """ISO 8601 UTC with Z to the nearest second, by the datetime module; None for NaN."""
    if not math.isfinite(float(u)):
        return None
    stamp = dt.datetime.fromtimestamp(round(float(u)), dt.UTC)
    return stamp.strftime("%Y-%m-%dT%H:%M:%SZ")


def _status(res, i: int) -> str:
    usable = res.usable_s[i] > 0
    if res.status[i] == "never_up":
        return "never_up"
    if res.status[i] == "always_up":
        return "always_up" if usable else "always_up_blocked"
    return "observable" if usable else "not_observable"


def expected_records(res) -> list[dict]:
    """The documented record of each target, one Python loop over the result."""
    out = []
    w = res.windows
    for i in range(len(res.names)):
        sel = np.flatnonzero(w.rows == i)
        rec = {
            "name": str(res.names[i]), "ra_deg": _number(res.ra_deg[i], 7),
            "dec_deg": _number(res.dec_deg[i], 7), "rise": _instant(res.rise[i]),
            "transit": _instant(res.transit[i]), "set": _instant(res.set[i]),
            "transit_alt_deg": _number(res.transit_alt_deg[i], 3),
            "transit_airmass": _number(res.transit_airmass[i], 4),
            "windows": [{"start": _instant(w.start[k]), "end": _instant(w.end[k]),
                         "minutes": _number((w.end[k] - w.start[k]) / 60.0, 2)} for k in sel],
            "usable_minutes": _number(res.usable_s[i] / 60.0, 2),
            "best_time": _instant(res.best_time[i]),
            "best_airmass": _number(res.best_airmass[i], 4), "status": _status(res, i),
            "lost_minutes": {k: _number(v[i] / 60.0, 2) for k, v in res.lost_s.items()},
            "near_sun": bool(res.near_sun[i]), "daylight_window": bool(res.daylight_window[i]),
            "sun_distance_deg": _number(res.sun_distance_deg[i], 2),
            "moon_distance_deg": _number(res.moon_distance_deg[i], 2),
        }
        if res.identifiers[i]:
            rec["identifier"] = str(res.identifiers[i])
        out.append(rec)
    return out


def _frames(res, chunk: int, text_times: bool = True):
    n = len(res.names)
    ident = windowcolumns.has_identifiers(res)
    return [windowcolumns.frame(res, a, min(n, a + chunk), identifier=ident,
                                text_times=text_times)
            for a in range(0, max(n, 1), chunk)]


def _iso(value):
    """Every datetime in a record as the JSON output's text; each must be aware UTC."""
    import datetime as dt

    if isinstance(value, dt.datetime):
        assert value.utcoffset() == dt.timedelta(0)
        return value.strftime("%Y-%m-%dT%H:%M:%SZ")
    if isinstance(value, dict):
        return {k: _iso(v) for k, v in value.items()}
    if isinstance(value, list):
        return [_iso(v) for v in value]
    return value


def _same(got, want) -> None:
    """Equal values and the same keys in the same order, at every level."""
    assert got == want
    if isinstance(want, dict):
        assert list(got) == list(want)
        for k in want:
            _same(got[k], want[k])
    elif isinstance(want, list):
        for g, w in zip(got, want):
            _same(g, w)


@pytest.mark.parametrize("chunk", [1, 3, 50_000])
def test_json_and_ndjson_hold_the_documented_values(results, chunk) -> None:
    for res in results:
        want = expected_records(res)
        array = b"".join(bytes(x) for x in windowcolumns.json_stream(_frames(res, chunk)))
        lines = b"".join(bytes(x) for x in windowcolumns.ndjson_stream(_frames(res, chunk)))
        assert array.endswith(b"]\n") and lines.endswith(b"}\n")
        _same(json.loads(array), want)
        _same([json.loads(line) for line in lines.splitlines()], want)
        assert [list(r)[:len(KEYS)] for r in want] == [KEYS] * len(want)
    _same(windowcolumns.records(res), want)  # the small, indented document's records


def csv_from_records(res, columns: list[str]) -> list[list[str]]:
    """The reference: the records flattened into the text of CSV fields."""
    def text(value) -> str:
        return "" if value is None else str(value)

    rows = [columns]
    for r in expected_records(res):
        flat = {**{k: v for k, v in r.items() if k not in ("windows", "lost_minutes")},
                "windows": ";".join(f"{w['start']}/{w['end']}" for w in r["windows"]),
                **{f"lost_{k}_min": v for k, v in r["lost_minutes"].items()}}
        rows.append([text(flat.get(c)) for c in columns])
    return rows


def _csv_values(cells: list[str]) -> list:
    """Numbers compared as numbers (their text may differ: 1e-05 and 0.00001), the rest as
    text."""
    out = []
    for c in cells:
        try:
            out.append(float(c))
        except ValueError:
            out.append(c)
    return out


@pytest.mark.parametrize("chunk", [1, 3, 50_000])
def test_csv_holds_the_documented_values(results, chunk) -> None:
    for res in results:
        with_identifier = bool((res.identifiers != "").any())
        columns = windowcolumns.csv_columns(list(res.lost_s), with_identifier=with_identifier)
        text = b"".join(windowcolumns.csv_stream(_frames(res, chunk), list(res.lost_s)))
        got = list(csv.reader(io.StringIO(text.decode(), newline="")))
        want = csv_from_records(res, columns)
        assert got[0] == want[0] == columns
        assert [_csv_values(r) for r in got] == [_csv_values(r) for r in want]
    assert b'"Comma, Star"' in text and b'"Quote ""Q"" Star"' in text  # quoted as csv does


def test_csv_header_order() -> None:
    assert windowcolumns.csv_columns(["dark", "moon"], with_identifier=True) == [
        "name", "identifier", "ra_deg", "dec_deg", "rise", "transit", "set", "transit_alt_deg",
        "transit_airmass", "usable_minutes", "best_time", "best_airmass", "status", "near_sun",
        "daylight_window", "sun_distance_deg", "moon_distance_deg", "windows", "lost_dark_min",
        "lost_moon_min"]


def test_parquet_holds_the_same_records(results) -> None:
    import pyarrow.parquet as pq  # an independent reader of the open format

    for res in results:
        data = windowcolumns.parquet(_frames(res, 3, text_times=False))
        table = pq.read_table(io.BytesIO(data))
        assert str(table.schema.field("transit").type) == "timestamp[us, tz=UTC]"
        got = [_iso(rec) for rec in table.to_pylist()]
        for rec in got:
            if rec.get("identifier", "") is None:
                del rec["identifier"]
        assert got == expected_records(res)


def test_records_keep_the_user_name_and_add_the_identifier(results) -> None:
    recs = windowcolumns.records(results[1])
    by_name = {r["name"]: r for r in recs}
    assert by_name["M 42"]["identifier"] == "M 42 = NGC 1976"
    assert "identifier" not in by_name["Comma, Star"]
    assert by_name["Deep South"]["status"] == "never_up" and by_name["Deep South"]["windows"] == []
    assert by_name["Deep South"]["best_time"] is None
    assert np.isclose(sum(by_name["Vega"]["lost_minutes"].values())
                      + by_name["Vega"]["usable_minutes"],
                      (results[1].span[1] - results[1].span[0]) / 60.0, atol=0.05)
