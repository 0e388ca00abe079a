"""Season benchmark: random fixed targets × nights at the demo site, every demo limit.

    python benchmarks/bench_season.py                        # 1,000 targets × 365 nights
    python benchmarks/bench_season.py 100000 183 out.parquet # streamed to Parquet

Each run is the whole job: ``skyplan.season`` (blocks on ``--workers`` local processes, or
this process alone with ``--workers 1``), then, when a file is named, the summary records
(``--per-night``: every night too) streamed to Parquet.  Prints for each run the wall time,
the CPU time of this process and of its worker processes, and the peak resident memory of
this process, of the workers together (sum of their RSS, sampled every 100 ms from
``/proc``, Linux) and of both together; then the best run and the load average.
"""

from __future__ import annotations

import argparse
import os
import resource
import sys
import threading
import time

import numpy as np

PAGE = os.sysconf("SC_PAGE_SIZE")
TICK = os.sysconf("SC_CLK_TCK")


def _descendants(root: int) -> list[int]:
    """The processes below ``root`` (workers of a pool are children of its server)."""
    parent = {}
    for name in os.listdir("/proc"):
        if name.isdigit():
            try:
                with open(f"/proc/{name}/stat") as f:
                    fields = f.read().rsplit(")", 1)[1].split()
                parent[int(name)] = int(fields[1])
            except (OSError, IndexError, ValueError):
                continue
    out, todo = [], [root]
    while todo:
        p = todo.pop()
        kids = [c for c, pp in parent.items() if pp == p]
        out += kids
        todo += kids
    return out


class Sampler(threading.Thread):
    """Peak RSS of this process, of its descendants together, and of both; the CPU time
    each descendant has used, as last seen."""

    def __init__(self) -> None:
        super().__init__(daemon=True)
        self.stop = threading.Event()
        self.peak_main = self.peak_workers = self.peak_total = 0
        self.cpu: dict[int, float] = {}

    @staticmethod
    def _rss(pid: int) -> int:
        with open(f"/proc/{pid}/statm") as f:
            return int(f.read().split()[1]) * PAGE

    def run(self) -> None:
        me = os.getpid()
        kids: list[int] = []
        count = 0
        while not self.stop.is_set():
            if count % 10 == 0:  # new workers: look for them every second
                kids = _descendants(me)
            count += 1
            try:
                main = self._rss(me)
            except OSError:
                main = 0
            workers = 0
            for pid in kids:
                try:
                    workers += self._rss(pid)
                    with open(f"/proc/{pid}/stat") as f:
                        fields = f.read().rsplit(")", 1)[1].split()
                    self.cpu[pid] = (int(fields[11]) + int(fields[12])) / TICK
                except (OSError, IndexError, ValueError):
                    continue
            self.peak_main = max(self.peak_main, main)
            self.peak_workers = max(self.peak_workers, workers)
            self.peak_total = max(self.peak_total, main + workers)
            self.stop.wait(0.1)


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("targets", type=int, nargs="?", default=1000)
    parser.add_argument("nights", type=int, nargs="?", default=365)
    parser.add_argument("parquet", nargs="?", default=None)
    parser.add_argument("--workers", type=int, default=None,
                        help="local processes (default: skyplan's choice)")
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--per-night", action="store_true",
                        help="with a Parquet file: every night of every target too")
    parser.add_argument("--dask", action="store_true",
                        help="run the blocks on a distributed.LocalCluster of --workers "
                        "processes (one thread each) instead of a process pool")
    args = parser.parse_args(argv)

    import datetime as dt
    import warnings

    import skyplan
    from skyplan.api.season import season
    from skyplan.api.targets import Targets
    from skyplan.render import seasoncolumns
    from skyplan.render.output import write_atomic
    from skyplan.targetdata import TargetSet

    warnings.simplefilter("ignore")  # nights past the bundled IERS table say so once each
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

        cluster = distributed.LocalCluster(n_workers=args.workers or 2, threads_per_worker=1,
                                           dashboard_address=None)
        client = distributed.Client(cluster)
    load_before = os.getloadavg()
    runs = []
    for _ in range(args.repeat):
        sampler = Sampler()
        sampler.start()
        cpu0 = time.process_time()
        t0 = time.perf_counter()
        result = season(targets, site, start, end, lim, workers=args.workers, client=client)
        if args.parquet:
            write_atomic(args.parquet, seasoncolumns.parquet_stream(
                result, per_night=args.per_night))
        wall = time.perf_counter() - t0
        cpu = time.process_time() - cpu0
        sampler.stop.set()
        sampler.join()
        runs.append((wall, cpu, sum(sampler.cpu.values()), sampler.peak_main,
                     sampler.peak_workers, sampler.peak_total))
        del result
    own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    if client is not None:
        client.close()
        cluster.close()
    mib = 1 << 20
    print(f"{n} targets x {args.nights} nights, workers={args.workers or 'default'}"
          f"{' (Dask)' if args.dask else ''}"
          f"{', Parquet' + (' per night' if args.per_night else '') if args.parquet else ''}")
    for wall, cpu, wcpu, pm, pw, pt in runs:
        print(f"  wall {wall:6.2f} s  cpu main {cpu:6.2f} s  workers {wcpu:6.2f} s  "
              f"peak RSS main {pm / mib:5.0f} MiB  workers {pw / mib:5.0f} MiB  "
              f"total {pt / mib:5.0f} MiB")
    best = min(runs)
    print(f"best {best[0]:.2f} s ({best[0] / (n * args.nights) * 1e6:.2f} µs per "
          f"target-night); peak RSS of this process over all runs {own:.0f} MiB; "
          f"load average before {load_before[0]:.1f}, after {os.getloadavg()[0]:.1f}",
          file=sys.stdout)


if __name__ == "__main__":
    main()
