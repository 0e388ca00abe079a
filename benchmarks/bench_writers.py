"""Benchmark: the columnar writers the windows output was chosen among (polars, pyarrow).

Run by hand (not part of the test suite):

    python benchmarks/bench_writers.py [--rows 100000 1000000] [--repeat 3]

Computes the windows of invented targets once, then times, best of ``--repeat``, in one
process: building the records' columns (one frame of the whole result) and writing them as
JSON, NDJSON, CSV and Parquet into memory.  polars is skyplan's writer
(:mod:`skyplan.render.windowcolumns`); pyarrow builds the same columns (lists of windows
from offsets, times by ``strftime``) and writes CSV and Parquet itself; it has no JSON
writer, so its JSON is orjson over ``to_pylist()`` (at the first size only: it is slow).
"""

from __future__ import annotations

import argparse
import datetime as dt
import io
import time

import numpy as np

SITE = "38.2,-2.9,1300"


def result(rows: int):
    from skyplan.engine import night, windows
    from skyplan.engine.windows import TargetSet
    from skyplan.inputs import limits, sites

    rng = np.random.default_rng(3)
    ra = rng.uniform(0, 360, rows)
    dec = np.degrees(np.arcsin(rng.uniform(-1, 1, rows)))
    zero = np.zeros(rows)
    tset = TargetSet(np.char.add("T", np.arange(rows).astype(str)).astype(object), ra, dec,
                     zero, zero, zero, zero, np.full(rows, 2000.0),
                     np.full(rows, "", dtype=object))
    site = sites.parse_site_spec(SITE)
    n = night.compute_night(site, dt.date(2026, 12, 18))
    return windows.compute_windows(tset, site, n, limits.build_limits(site.limits, moon_gap=25))


def best(fn, repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def arrow_table(res):
    """The record's columns built by pyarrow alone."""
    import pyarrow as pa
    import pyarrow.compute as pc

    from skyplan.render import windowcolumns as wc

    def number(a, places):
        a = np.round(np.asarray(a, dtype=float), places)
        return pa.array(a, mask=~np.isfinite(a))

    def instant(u):
        u = np.round(np.asarray(u, dtype=float))
        ok = np.isfinite(u)
        stamps = pa.array(np.where(ok, u, 0).astype("int64"), type=pa.timestamp("s"), mask=~ok)
        return pc.strftime(stamps, "%Y-%m-%dT%H:%M:%SZ")

    w = res.windows
    offsets = np.concatenate([[0], np.cumsum(np.bincount(w.rows, minlength=len(res.names)))])
    parts = pa.StructArray.from_arrays(
        [instant(w.start), instant(w.end), number((w.end - w.start) / 60.0, 2)],
        ["start", "end", "minutes"])
    lost = pa.StructArray.from_arrays([number(v / 60.0, 2) for v in res.lost_s.values()],
                                      list(res.lost_s))
    columns = {
        "name": pa.array(res.names.astype(str)), "ra_deg": number(res.ra_deg, 7),
        "dec_deg": number(res.dec_deg, 7), "rise": instant(res.rise),
        "transit": instant(res.transit), "set": instant(res.set),
        "transit_alt_deg": number(res.transit_alt_deg, 3),
        "transit_airmass": number(res.transit_airmass, 4),
        "windows": pa.ListArray.from_arrays(pa.array(offsets.astype("int32")), parts),
        "usable_minutes": number(res.usable_s / 60.0, 2), "best_time": instant(res.best_time),
        "best_airmass": number(res.best_airmass, 4), "status": pa.array(wc.status(res)),
        "lost_minutes": lost, "near_sun": pa.array(res.near_sun),
        "daylight_window": pa.array(res.daylight_window),
        "sun_distance_deg": number(res.sun_distance_deg, 2),
        "moon_distance_deg": number(res.moon_distance_deg, 2),
    }
    return pa.table(columns)


def arrow_csv(table) -> bytes:
    import pyarrow as pa
    import pyarrow.compute as pc
    import pyarrow.csv as pacsv

    windows = table["windows"].combine_chunks()
    pairs = pc.binary_join_element_wise(windows.flatten().field("start"),
                                        windows.flatten().field("end"), "/")
    joined = pc.binary_join(pa.ListArray.from_arrays(windows.offsets, pairs), ";")
    flat = table.drop_columns(["windows", "lost_minutes"]).append_column("windows", joined)
    lost = table["lost_minutes"].combine_chunks()
    for k in range(lost.type.num_fields):
        flat = flat.append_column(f"lost_{lost.type.field(k).name}_min", lost.field(k))
    buffer = io.BytesIO()
    pacsv.write_csv(flat, buffer)
    return buffer.getvalue()


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--rows", type=int, nargs="+", default=[100_000, 1_000_000])
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    import orjson
    import polars as pl
    import pyarrow.parquet as pq

    from skyplan.render import windowcolumns as wc

    for k, rows in enumerate(args.rows):
        res = result(rows)
        keys = list(res.lost_s)
        frame = wc.frame(res)
        table = arrow_table(res)

        def parquet_arrow(table=table) -> None:
            pq.write_table(table, io.BytesIO())

        timings = {
            "polars build": best(lambda res=res: wc.frame(res), args.repeat),
            "polars JSON": best(lambda f=frame: b"".join(wc.json_stream([f])), args.repeat),
            "polars NDJSON": best(lambda f=frame: wc.ndjson(f), args.repeat),
            "polars CSV": best(lambda f=frame, k=keys: wc.csv(f, k, header=True), args.repeat),
            "polars Parquet": best(lambda f=frame: wc.parquet([f]), args.repeat),
            "pyarrow build": best(lambda res=res: arrow_table(res), args.repeat),
            "pyarrow CSV": best(lambda t=table: arrow_csv(t), args.repeat),
            "pyarrow Parquet": best(parquet_arrow, args.repeat),
        }
        if k == 0:
            timings["pyarrow to_pylist + orjson NDJSON"] = best(
                lambda t=table: b"".join(orjson.dumps(r, option=orjson.OPT_APPEND_NEWLINE)
                                         for r in t.to_pylist()), 1)
        print(f"{rows:,} targets ({pl.__version__=}):")
        for label, seconds in timings.items():
            print(f"  {label:38s} {seconds * 1e3:7.0f} ms")


if __name__ == "__main__":
    main()
