"""Benchmark: a catalogue of 1,000,000 targets through ``skyplan windows`` (a memory bound).

Run by hand (not part of the test suite):

    python benchmarks/bench_large.py [--rows 1000000] [--date 2026-12-18] [--repeat 5]

Writes an invented catalogue (targets spread evenly over the sphere, seeded) as CSV in a
temporary folder, runs ``skyplan windows CATALOG --site ... -f ndjson --out FILE`` in a
child process (interpreter start included) ``--repeat`` times and reports, for that child
alone (``os.wait4``): the best and every wall time, user and system CPU time and the
largest peak resident memory (``ru_maxrss``).  It then checks that the output holds one
record per target, so that nothing was dropped on the way.  The catalogue is written by a
child process, so that this process stays small (its high-water mark would otherwise be
carried into the children it starts and counted in their peaks).
"""

from __future__ import annotations

import argparse
import multiprocessing
import os
import platform
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

SITE = "38.2,-2.9,1300"


def write_catalogue(path: Path, rows: int) -> None:
    """Invented targets: RA uniform, Dec uniform in sin(Dec) (even over the sphere)."""
    rng = np.random.default_rng(20261218)
    ra = rng.uniform(0.0, 360.0, rows)
    dec = np.degrees(np.arcsin(rng.uniform(-1.0, 1.0, rows)))
    priority = rng.integers(1, 6, rows)
    names = np.char.add("T", np.arange(rows).astype(str))
    body = np.char.add(np.char.add(np.char.add(names, ","), np.char.mod("%.5f", ra)), ",")
    body = np.char.add(np.char.add(body, np.char.mod("%.5f", dec)), ",")
    body = np.char.add(body, priority.astype(str))
    with path.open("w", encoding="utf-8") as handle:
        handle.write("name,ra,dec,priority\n")
        handle.write("\n".join(body.tolist()))
        handle.write("\n")


def run_child(argv: list[str]) -> tuple[int, float, resource.struct_rusage, str]:
    """Run a command; return (exit status, wall seconds, its rusage, its stderr)."""
    with tempfile.TemporaryFile() as err:
        start = time.perf_counter()
        child = subprocess.Popen(argv, stdout=subprocess.DEVNULL, stderr=err)
        _, status, usage = os.wait4(child.pid, 0)
        wall = time.perf_counter() - start
        child.returncode = os.waitstatus_to_exitcode(status)
        err.seek(0)
        return child.returncode, wall, usage, err.read().decode(errors="replace")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=1_000_000)
    parser.add_argument("--date", default="2026-12-18")
    parser.add_argument("--repeat", type=int, default=5)
    args = parser.parse_args()

    with tempfile.TemporaryDirectory() as folder:
        catalogue = Path(folder) / "large.csv"
        out = Path(folder) / "windows.ndjson"
        t0 = time.perf_counter()
        # written by a child process: Linux carries a parent's high-water mark into the
        # children it starts, so a large parent would inflate the figures below
        writer = multiprocessing.get_context("spawn").Process(
            target=write_catalogue, args=(catalogue, args.rows))
        writer.start()
        writer.join()
        made = time.perf_counter() - t0
        size_mb = catalogue.stat().st_size / 1e6
        print(f"catalogue: {args.rows:,} rows, {size_mb:.1f} MB, written in {made:.1f} s")

        argv = [sys.executable, "-m", "skyplan", "windows", str(catalogue), "--site", SITE,
                "--date", args.date, "-f", "ndjson", "--out", str(out)]
        runs = [run_child(argv) for _ in range(args.repeat)]
        status, wall, usage, err = min(runs, key=lambda r: r[1])
        print(f"skyplan windows -f ndjson --out: exit status {status}")
        print(f"  wall time        {wall:8.1f} s best of {len(runs)} "
              f"(all: {', '.join(f'{r[1]:.1f}' for r in runs)})")
        print(f"  CPU user/system  {usage.ru_utime:8.1f} s / {usage.ru_stime:.1f} s (best run)")
        peak = max(r[2].ru_maxrss for r in runs) / 1024
        print(f"  peak RSS         {peak:8.0f} MiB (largest ru_maxrss of the child)")
        if err.strip():
            print("  stderr:", *err.strip().splitlines(), sep="\n    ")
        if status == 0:
            with out.open("rb") as handle:
                records = sum(1 for _ in handle)
            print(f"  output           {out.stat().st_size / 1e6:8.1f} MB, {records:,} records"
                  f" ({'all targets' if records == args.rows else 'TARGETS MISSING'})")
    print(f"machine: {platform.machine()}, {os.cpu_count()} CPUs, Python "
          f"{platform.python_version()}, {platform.system()} {platform.release()}")


if __name__ == "__main__":
    main()
