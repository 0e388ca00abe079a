"""Benchmark of offline name resolution (run by hand).

    python benchmarks/bench_names.py [--names 10000] [--repeats 5] [--seed 1]

A column of invented queries mixes Messier numbers, NGC and IC numbers, HIP numbers and IAU
star names in varied spelling ("m 31", "NGC0224", "hip 27989", "vega"), with about 1% of
names that resolve to nothing.  Reports, each in a fresh process so the indexes are really
built: the time to import skyplan.names.resolve and resolve the whole column the first time; then,
in this process, the repeat time for the same column and the time of single ``resolve``
calls.
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import time

import numpy as np


def invented_queries(n: int, seed: int) -> list[str]:
    """Names in mixed spelling; about 1% are unknown on purpose."""
    from skyplan.names.resolve import STAR_NAMES_PATH

    rng = np.random.default_rng(seed)
    stars = [line.split(",")[0] for line in STAR_NAMES_PATH.read_text().splitlines()[1:]]
    out = []
    for kind in rng.choice(["M", "NGC", "IC", "HIP", "star", "bad"], n,
                           p=[0.15, 0.3, 0.15, 0.25, 0.14, 0.01]):
        if kind == "M":
            out.append(rng.choice(["M{}", "m {}", "Messier {}", "M {:03d}"]).format(
                int(rng.integers(1, 111))))
        elif kind == "NGC":
            out.append(rng.choice(["NGC {}", "ngc{}", "NGC{:04d}"]).format(
                int(rng.integers(1, 7841))))
        elif kind == "IC":
            out.append(rng.choice(["IC {}", "ic{}", "IC{:04d}"]).format(
                int(rng.integers(1, 5387))))
        elif kind == "HIP":
            out.append(rng.choice(["HIP {}", "hip{}"]).format(int(rng.integers(1, 120405))))
        elif kind == "star":
            name = str(rng.choice(stars))
            out.append(name.lower() if rng.random() < 0.5 else name)
        else:
            out.append(f"no such object {int(rng.integers(1000))}")
    return out


def first_use_seconds(n: int, seed: int) -> tuple[float, float]:
    """Import + index build + one resolve_many in a fresh interpreter: (wall, CPU) seconds."""
    code = (
        "import time, sys\n"
        "sys.path.insert(0, 'benchmarks')\n"
        "from bench_names import invented_queries\n"
        f"q = invented_queries({n}, {seed})\n"
        "t, c = time.perf_counter(), time.process_time()\n"
        "from skyplan.names.resolve import resolve_many\n"
        "resolve_many(q)\n"
        "print(time.perf_counter() - t, time.process_time() - c)\n"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          check=True)
    wall, cpu = done.stdout.strip().splitlines()[-1].split()
    return float(wall), float(cpu)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--names", type=int, default=10_000)
    parser.add_argument("--repeats", type=int, default=5)
    parser.add_argument("--seed", type=int, default=1)
    args = parser.parse_args()

    firsts = [first_use_seconds(args.names, args.seed) for _ in range(3)]
    walls, cpus = [f[0] for f in firsts], [f[1] for f in firsts]
    print(f"first use (fresh process: import, indexes, {args.names} names): "
          f"wall min {min(walls):.3f} s, median {statistics.median(walls):.3f} s; "
          f"CPU min {min(cpus):.3f} s")

    from skyplan.names.resolve import resolve, resolve_many

    queries = invented_queries(args.names, args.seed)
    resolve_many(queries)
    repeats, cpu = [], []
    for _ in range(args.repeats):
        start, start_cpu = time.perf_counter(), time.process_time()
        column, errors = resolve_many(queries)
        repeats.append(time.perf_counter() - start)
        cpu.append(time.process_time() - start_cpu)
    print(f"repeat ({args.names} names): wall min {min(repeats):.3f} s, "
          f"median {statistics.median(repeats):.3f} s; CPU min {min(cpu):.3f} s; "
          f"resolved {int(column.ok.sum())}, errors {len(errors)}")

    sample = [q for q in queries[:2000] if not q.startswith("no such")]
    start = time.perf_counter()
    for q in sample:
        try:
            resolve(q)
        except Exception:  # names absent from the catalogues count like the others
            pass
    per_call = (time.perf_counter() - start) / len(sample)
    print(f"single resolve(): {per_call * 1e6:.0f} us per name ({len(sample)} names)")


if __name__ == "__main__":
    main()
