"""Benchmark: reading target lists (run by hand: ``python benchmarks/bench_catalog.py``).

Times the decimal fast path of the angle parser, the splitting stage alone (the file read
into columns, the decimal RA and Dec into numbers) by skyplan's reader and by the CSV readers it
was chosen among, and whole-catalogue reads of 100,000 rows in decimal degrees and in
sexagesimal text; CPU and wall time, best of five.
"""

from __future__ import annotations

import tempfile
import time
from pathlib import Path

import numpy as np

from skyplan.inputs.angles import format_dms_array, format_hms_array, parse_ra_column
from skyplan.inputs.catalog import read_catalog


def best_of(fn, repeat: int = 5) -> tuple[float, float]:
    cpu, wall = np.inf, np.inf
    for _ in range(repeat):
        c0, w0 = time.process_time(), time.perf_counter()
        fn()
        cpu = min(cpu, time.process_time() - c0)
        wall = min(wall, time.perf_counter() - w0)
    return cpu, wall


def splitting(path: Path, n: int) -> None:
    """The file into columns and its decimal columns into numbers, reader by reader."""
    import polars as pl

    from skyplan.inputs import delimited, readfile, regularsplit
    from skyplan.inputs.catalogrows import NUMBER_CHECKS

    def select(header: list[str], line: int, sep: str) -> dict:
        return {1: NUMBER_CHECKS["ra_deg"], 2: NUMBER_CHECKS["dec_deg"]}

    def ours() -> None:
        blocks = readfile.read_blocks(path, delimited.MAX_FILE_BYTES)
        grid = regularsplit.read_regular(blocks, str(path), ",", select)
        assert grid is not None and all(grid.columns[k].any_read() for k in (1, 2))

    readers = {"skyplan (polars, with its checks)": ours,
               "polars read_csv, types inferred": lambda: pl.read_csv(path)}
    try:
        import pyarrow.csv as pacsv

        readers["pyarrow read_csv, types inferred"] = lambda: pacsv.read_csv(path)
    except ImportError:
        pass
    for label, fn in readers.items():
        cpu, wall = best_of(fn)
        print(f"split, {n:,} rows, {label}: cpu {cpu * 1e3:.0f} ms, wall {wall * 1e3:.0f} ms")


def main() -> None:
    n = 100_000
    rng = np.random.default_rng(11)
    ra = rng.uniform(0, 360, n)
    dec = np.degrees(np.arcsin(rng.uniform(-1, 1, n)))
    values = [f"{x:.6f}" for x in ra]
    cpu, wall = best_of(lambda: parse_ra_column(values))
    print(f"parse_ra_column, {n:,} decimal entries: cpu {cpu * 1e3:.0f} ms, "
          f"wall {wall * 1e3:.0f} ms")
    with tempfile.TemporaryDirectory() as tmp:
        dec_path = Path(tmp) / "decimal.csv"
        dec_path.write_text("name,ra,dec,pmra,pmdec,priority\n" + "".join(
            f"t{i},{r:.6f},{d:.6f},1.5,-2.5,{i % 5}\n" for i, (r, d) in enumerate(zip(ra, dec))))
        splitting(dec_path, n)
        cpu, wall = best_of(lambda: read_catalog(dec_path))
        print(f"read_catalog, {n:,} rows decimal: cpu {cpu:.2f} s, wall {wall:.2f} s")
        sex_path = Path(tmp) / "sexagesimal.csv"
        hms, dms = format_hms_array(ra, 2), format_dms_array(dec, 1)
        sex_path.write_text("name,ra,dec\n" + "".join(
            f"t{i},{a},{b}\n" for i, (a, b) in enumerate(zip(hms, dms))))
        cpu, wall = best_of(lambda: read_catalog(sex_path))
        print(f"read_catalog, {n:,} rows sexagesimal: cpu {cpu:.2f} s, wall {wall:.2f} s")


if __name__ == "__main__":
    main()
