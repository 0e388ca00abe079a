"""The windows' JSON writers: the fast column-wise encoder must give exactly the bytes that
orjson gives for the record dictionaries (the documented layout), in every corner: names with
commas and quotes, resolved identifiers, bodies, targets with no window (nulls), and any block
size."""

from __future__ import annotations

import datetime as dt

import numpy as np
import pytest

from skyplan.engine import night, windows
from skyplan.inputs import limits, scenario, sites, targets
from skyplan.render import records, windowview


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


@pytest.mark.parametrize("chunk", [1, 3, 50_000])
def test_fast_json_is_byte_identical(results, chunk) -> None:
    for res in results:
        reference = windowview.window_records(res, text_times=False)
        array = b"".join(bytes(x) for x in windowview.json_chunks(res, ndjson=False, chunk=chunk))
        lines = b"".join(bytes(x) for x in windowview.json_chunks(res, ndjson=True, chunk=chunk))
        assert array == records.to_json(reference, clean=False, indent=False)
        assert lines == records.to_ndjson(reference)


def csv_from_records(res, columns: list[str]) -> bytes:
    """The reference: the record dictionaries flattened and written by the csv module."""
    recs = windowview.window_records(res)
    flat = [{**{k: v for k, v in r.items() if k not in ("windows", "lost_minutes")},
             "windows": ";".join(f"{w['start']}/{w['end']}" for w in r["windows"]),
             **{f"lost_{k}_min": v for k, v in r["lost_minutes"].items()}} for r in recs]
    return records.to_csv(flat, columns)


@pytest.mark.parametrize("chunk", [1, 3, 50_000])
def test_fast_csv_is_byte_identical(results, chunk) -> None:
    for res in results:
        with_identifier = bool((res.identifiers != "").any())
        columns = windowview.csv_columns(list(res.lost_s), with_identifier=with_identifier)
        fast = b"".join(windowview.csv_chunks(res, chunk=chunk))
        assert fast == csv_from_records(res, columns)
    assert b'"Comma, Star"' in fast and b'"Quote ""Q"" Star"' in fast  # quoted as csv does


def test_records_keep_the_user_name_and_add_the_identifier(results) -> None:
    recs = windowview.window_records(results[1])
    by_name = {r["name"]: r for r in recs}
    assert by_name["M 42"]["identifier"] == "M 42 = NGC 1976"
    assert "identifier" not in by_name["Comma, Star"]
    assert by_name["Deep South"]["status"] == "never_up" and by_name["Deep South"]["windows"] == []
    assert by_name["Deep South"]["best_time"] is None
    assert np.isclose(sum(by_name["Vega"]["lost_minutes"].values())
                      + by_name["Vega"]["usable_minutes"],
                      (results[1].span[1] - results[1].span[0]) / 60.0, atol=0.05)
