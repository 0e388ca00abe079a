"""Benchmark: peak memory and wall time of ``skyplan plan`` on large catalogues.

Run by hand (not part of the test suite):

    python benchmarks/bench_plan_memory.py [--targets 1000 5000] [--repeat 3]

For each size, writes an invented catalogue (seeded: RA uniform, declination uniform on the
sphere above -30 deg, priorities 1-5, exposures 60/120/300/600 s) in a temporary folder, runs
``skyplan plan CATALOG --site 38.2,-3.5,1300 --date 2026-12-18 -f json --out FILE`` in a
child process (interpreter start included) ``--repeat`` times and reports, for that child
alone (``os.wait4``): the best and every wall time and the largest peak resident memory
(``ru_maxrss``).  Goal: 5,000 targets within 500 MiB.
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

SITE = "38.2,-3.5,1300"
GOAL_MIB = {5000: 500.0}


def write_catalogue(path: Path, rows: int, seed: int = 20261218) -> None:
    """Invented targets: RA uniform, sin(Dec) uniform above Dec -30 deg."""
    rng = np.random.default_rng(seed)
    ra = rng.uniform(0.0, 360.0, rows)
    dec = np.degrees(np.arcsin(rng.uniform(-0.5, 1.0, rows)))
    priority = rng.integers(1, 6, rows)
    exposure = rng.choice([60, 120, 300, 600], rows)
    lines = [f"T{k:05d},{ra[k]:.5f},{dec[k]:.5f},{priority[k]},{exposure[k]}" for k in range(rows)]
    path.write_text("name,ra_deg,dec_deg,priority,exposure_s\n" + "\n".join(lines) + "\n",
                    encoding="utf-8")


def run_child(argv: list[str]) -> tuple[int, float, resource.struct_rusage, str]:
    """Run a command; return (exit status, wall seconds, its rusage, its stderr)."""
    with tempfile.TemporaryFile() as err:
        start = time.perf_counter()
        child = subprocess.Popen(argv, stdout=subprocess.DEVNULL, stderr=err)
        _, status, usage = os.wait4(child.pid, 0)
        wall = time.perf_counter() - start
        err.seek(0)
        return os.waitstatus_to_exitcode(status), wall, usage, err.read().decode(errors="replace")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--targets", type=int, nargs="+", default=[1000, 5000])
    parser.add_argument("--date", default="2026-12-18")
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    print(f"{platform.machine()}, {os.cpu_count()} CPUs, load average "
          f"{os.getloadavg()[0]:.1f} at the start (a shared machine makes times noisy)")
    failed = False
    with tempfile.TemporaryDirectory() as folder:
        for rows in args.targets:
            catalogue = Path(folder) / f"plan{rows}.csv"
            out = Path(folder) / f"plan{rows}.json"
            write_catalogue(catalogue, rows)
            argv = [sys.executable, "-m", "skyplan", "plan", str(catalogue), "--site", SITE,
                    "--date", args.date, "-f", "json", "--out", str(out)]
            runs = [run_child(argv) for _ in range(args.repeat)]
            bad = [r for r in runs if r[0] != 0]
            if bad:
                print(f"{rows} targets: exit status {bad[0][0]}\n{bad[0][3]}")
                failed = True
                continue
            walls = sorted(r[1] for r in runs)
            peak = max(r[2].ru_maxrss for r in runs) / 1024.0  # Linux: KiB
            visits = len(json.loads(out.read_text(encoding="utf-8")).get("observations", []))
            goal = GOAL_MIB.get(rows)
            verdict = "" if goal is None else (
                f" (goal <= {goal:.0f} MiB: {'met' if peak <= goal else 'NOT met'})")
            failed |= goal is not None and peak > goal
            print(f"{rows:>6} targets: best {walls[0]:.2f} s (all: "
                  f"{', '.join(f'{w:.2f}' for w in walls)}), peak {peak:.0f} MiB{verdict}, "
                  f"{visits} visits")
    sys.exit(1 if failed else 0)


if __name__ == "__main__":
    main()
