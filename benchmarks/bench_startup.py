"""Whole-process time of the everyday commands on the demo (run by hand).

    python benchmarks/bench_startup.py [--runs 7]

Each command runs in a fresh interpreter (``python -m skyplan ...``), so the figure includes
the interpreter's start, every import, reading the bundled data and writing the output to
/dev/null: what an observer waits for.  Reports the best and the median of the runs, and
compares them with the goals in docs/performance.md.
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import time

COMMANDS = (
    ("--help", ["--help"], 0.35),
    ("night --demo", ["night", "--demo"], 0.6),
    ("windows --demo", ["windows", "--demo"], 0.6),
    ("windows --demo -f json", ["windows", "--demo", "-f", "json"], None),
    ("plan --demo", ["plan", "--demo"], 0.8),
    ("next --demo --at 23:00", ["next", "--demo", "--at", "2026-12-18T23:00"], None),
    ("season --demo", ["season", "--demo"], None),
    ("catch --demo", ["catch", "--demo"], None),
)


def seconds(args: list[str]) -> float:
    start = time.perf_counter()
    done = subprocess.run([sys.executable, "-m", "skyplan", *args], stdout=subprocess.DEVNULL,
                          stderr=subprocess.DEVNULL)
    took = time.perf_counter() - start
    if done.returncode not in (0, 3):
        raise SystemExit(f"skyplan {' '.join(args)} exited {done.returncode}")
    return took


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=7)
    runs = parser.parse_args().runs
    seconds(["--help"])  # bytecode compiled, files in the page cache
    print(f"{'command':28} {'best':>7} {'median':>7}  goal")
    for label, args, goal in COMMANDS:
        times = [seconds(args) for _ in range(runs)]
        best = min(times)
        verdict = "" if goal is None else f"≤ {goal} s: {'met' if best <= goal else 'NOT met'}"
        print(f"{label:28} {best:6.2f}s {statistics.median(times):6.2f}s  {verdict}")


if __name__ == "__main__":
    main()
