"""Where a plan's airmass excess at some priority passes 5 %: could any plan do better there
without giving up visits?  (By hand; minutes a night.)

    python benchmarks/bench_plan_joint_floor.py [--cap 0.05] [--step 120] [--limit 60]

For each night of ``bench_plan_quality`` (the same seeds, sites and loads) the ``optimal``
plan is made (``--time-limit`` 5 s); at each priority whose mean relative excess
``X / X_best - 1`` passes ``--cap``, two certified floors of that mean (docs/planning.md):

* alone (:func:`bound.excess_floor`): any plan with at least the plan's visits at that
  priority, whatever it does with the others;
* joint (:func:`bound.joint_excess_floor`): any plan with at least the plan's visits at
  every priority and a mean excess within ``--cap`` at every other priority.

A joint floor above the cap proves that on that night no plan keeping the plan's visits has
every priority within the cap: the goal "at most 5 % at every priority" then asks to give
up visits.  Floors on a ``--step`` grid, each integer program limited to ``--limit`` s (a
time limit only lowers a floor).
"""

from __future__ import annotations

import argparse
import time

import numpy as np
from bench_plan_quality import LOADS, SITES, night_at_load

from skyplan.planning.bound import excess_floor, joint_excess_floor
from skyplan.planning.dispatch import PlanOptions, make_plan, plan_night


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--seeds", type=int, default=2)
    parser.add_argument("--time-limit", type=float, default=5.0)
    parser.add_argument("--cap", type=float, default=0.05)
    parser.add_argument("--step", type=float, default=120.0)
    parser.add_argument("--limit", type=float, default=60.0)
    parser.add_argument("--only", nargs=3, type=float, metavar=("LAT", "LOAD", "SEED"),
                        help="one night only")
    args = parser.parse_args()
    print("| site | load | targets | priority | visits | plan excess % | floor alone % |"
          " floor joint % | s |")
    print("|---|---|---|---|---|---|---|---|---|")
    for lat, hours in SITES:
        for load in LOADS:
            for seed in range(args.seeds):
                if args.only and (lat, load, seed) != tuple(args.only):
                    continue
                request = night_at_load(load, seed, lat, hours)
                plan = make_plan(request, PlanOptions(method="optimal",
                                                      time_limit_s=args.time_limit))
                tgt = np.array([v.target for v in plan.visits])
                am = np.array([v.airmass_mid for v in plan.visits])
                excess = am / request.best_airmass[tgt] - 1.0
                pr = request.priority[tgt]
                counts = {int(q): int(np.sum(pr == q)) for q in np.unique(pr)}
                night = plan_night(request, PlanOptions())
                for q in sorted(counts, reverse=True):
                    mean = float(excess[pr == q].mean())
                    if mean <= args.cap:
                        continue
                    t = time.perf_counter()
                    alone = excess_floor(night, q, counts[q], args.step,
                                         time_limit_s=args.limit)
                    joint = joint_excess_floor(night, q, counts, args.cap, args.step,
                                               time_limit_s=args.limit)
                    took = time.perf_counter() - t
                    print(f"| {lat:.0f} N | {load}x | {len(request.exposure_s)} | {q} | "
                          f"{counts[q]} | {100 * mean:.1f} | {100 * alone:.2f} | "
                          f"{100 * joint:.2f} | {took:.0f} |", flush=True)


if __name__ == "__main__":
    main()
