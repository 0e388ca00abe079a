"""Season benchmark: random fixed targets × nights at the demo site, every demo limit.

    python benchmarks/bench_season.py                      # 1,000 targets × 365 nights
    python benchmarks/bench_season.py 100000 183 out.parquet

Prints the wall time of each run (best of ``--repeat``), the time per target-night, and the
peak resident memory of this process (worker processes hold one block each: 20,000
targets × 16 nights).
"""

from __future__ import annotations

import argparse
import resource
import sys
import time

import numpy as np


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("targets", type=int, nargs="?", default=1000)
    parser.add_argument("nights", type=int, nargs="?", default=365)
    parser.add_argument("parquet", nargs="?", default=None)
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--dask", action="store_true",
                        help="run the blocks on a distributed.LocalCluster of --workers "
                        "processes (one thread each) instead of a process pool")
    args = parser.parse_args(argv)

    import datetime as dt

    import skyplan
    from skyplan.api.season import season
    from skyplan.api.targets import Targets
    from skyplan.render import seasoncolumns
    from skyplan.targetdata import TargetSet

    rng = np.random.default_rng(2026)
    n = args.targets
    tset = TargetSet.fixed(np.array([f"T{i:06d}" for i in range(n)], dtype=object),
                           rng.uniform(0, 360, n), np.degrees(np.arcsin(rng.uniform(-1, 1, n))))
    targets = Targets(tset, np.ones(n), np.full(n, np.nan))
    site = skyplan.site(demo=True)
    lim = skyplan.limits(site)
    start = dt.date(2027, 1, 1)
    end = start + dt.timedelta(days=args.nights - 1)
    client = None
    if args.dask:
        import distributed

        cluster = distributed.LocalCluster(n_workers=args.workers, threads_per_worker=1,
                                           dashboard_address=None)
        client = distributed.Client(cluster)
    times = []
    for _ in range(args.repeat):
        t0 = time.perf_counter()
        result = season(targets, site, start, end, lim, workers=args.workers, client=client)
        if args.parquet:
            data = seasoncolumns.parquet(result, per_night=False)
            with open(args.parquet, "wb") as f:
                f.write(data)
        times.append(time.perf_counter() - t0)
    best = min(times)
    own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    if client is not None:
        client.close()
        cluster.close()
    print(f"{n} targets x {args.nights} nights, {args.workers} "
          f"{'Dask workers' if args.dask else 'workers'}: best {best:.2f} s of"
          f" {len(times)} ({', '.join(f'{t:.2f}' for t in times)}); "
          f"{best / (n * args.nights) * 1e6:.2f} µs per target-night; "
          f"peak RSS of this process {own:.0f} MiB (workers not counted)", file=sys.stdout)


if __name__ == "__main__":
    main()
