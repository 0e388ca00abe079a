"""Plan quality on seeded invented nights at 1x, 2x and 5x oversubscription, two sites (by hand).

    python benchmarks/bench_plan_quality.py [--seeds 2] [--time-limit 5]

The nights are those of ``bench_scheduling.synthetic_night`` (targets uniform on the sky,
windows above 30 deg, exposures 60-600 s, 1-3 repeats, priorities 1-5), at latitude 40 deg N
(9-hour night) and 64 deg N (16-hour winter night).  The load is the visits' summed shortest
length (settle + setup + exposure, every repeat) over the night's length; targets are added
until it reaches 1, 2 or 5.

For each night and method: the mean relative airmass excess ``X / X_best - 1`` of the visits
at each priority; how many top-priority targets that could be placed were; and the visits at
each priority or above against an independent bound, level by level: the optimum of the
linear-programming relaxation of the time-indexed model without slews
(:func:`timeindexed.relaxed_model`, the count of those visits as objective, every other rule
kept) with rows keeping at least the plan's visits at every higher priority
(:func:`bound.count_bound`): no plan that keeps those can have more.  Prints a Markdown table
(the one in docs/planning.md).
"""

from __future__ import annotations

import argparse
import time

import numpy as np
from bench_scheduling import synthetic_night

from skyplan.planning.bound import count_bound
from skyplan.planning.dispatch import PlanOptions, make_plan
from skyplan.planning.model import PlanNight

SITES = ((40.0, 9.0), (64.0, 16.0))
LOADS = (1, 2, 5)


def load_of(request) -> float:
    """Summed shortest visit length of the targets with a window, over the night's length."""
    has = np.zeros(len(request.exposure_s), bool)
    has[np.asarray(request.win_target)] = True
    has &= ~np.asarray(request.sun_flag, bool)
    work = request.slew.settle_s + request.setup_s + np.asarray(request.exposure_s)
    night = request.slot_unix[-1] - request.slot_unix[0]
    return float(np.sum((work * request.repeats)[has]) / night)


def night_at_load(load: float, seed: int, lat: float, hours: float):
    """The smallest synthetic night (targets in steps of 10) whose load reaches ``load``."""
    n = 10
    while True:
        request = synthetic_night(n, seed, lat_deg=lat, hours=hours)
        if load_of(request) >= load:
            return request
        n += 10


def count_bounds(request, levels, pr) -> list[float]:
    """For each level p: the most visits of priority >= p of any plan that keeps at least
    the visits ``pr`` (the plan's priorities) has at each higher level
    (:func:`bound.count_bound`)."""
    night = PlanNight(request, PlanOptions())
    out = []
    for p in levels:
        floors = {q: int(np.sum(pr == q)) for q in levels if q > p}
        out.append(count_bound(night, p, floors, night.step_s))
    return out


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--seeds", type=int, default=2)
    parser.add_argument("--time-limit", type=float, default=5.0)
    args = parser.parse_args()
    levels = [5, 4, 3, 2, 1]
    print(
        "| site | load | targets | method | s | excess % by priority 5/4/3/2/1 | top placed | "
        "visits at >= 5/4/3/2/1 (bound) | gap % |"
    )
    print("|---|---|---|---|---|---|---|---|---|")
    for lat, hours in SITES:
        for load in LOADS:
            for seed in range(args.seeds):
                request = night_at_load(load, seed, lat, hours)
                for method in ("dispatch", "optimal"):
                    wall = time.perf_counter()
                    plan = make_plan(request, PlanOptions(method=method,
                                                          time_limit_s=args.time_limit))
                    wall = time.perf_counter() - wall
                    pr = np.array([request.priority[v.target] for v in plan.visits])
                    rel = np.array([v.airmass_mid / request.best_airmass[v.target] - 1.0
                                    for v in plan.visits])
                    excess = "/".join(
                        f"{100 * rel[pr == p].mean():.1f}" if np.any(pr == p) else "-"
                        for p in levels)
                    top = np.flatnonzero(np.asarray(request.priority) == 5)
                    could = [i for i in top if plan.not_placed.get(int(i), "no_room")
                             in ("no_room", "poor_airmass")]
                    placed = {v.target for v in plan.visits}
                    got = sum(int(i) in placed for i in could)
                    bounds = count_bounds(request, levels, pr)
                    counts = "/".join(f"{int(np.sum(pr >= p))} ({b:.0f})"
                                      for p, b in zip(levels, bounds))
                    gap = "-" if plan.metrics.gap is None else f"{100 * plan.metrics.gap:.1f}"
                    print(f"| {lat:.0f} N | {load}x | {len(request.exposure_s)} | "
                          f"{plan.metrics.method if method == 'optimal' else 'dispatch'} | "
                          f"{wall:.2f} | {excess} | {got}/{len(could)} | {counts} | {gap} |")


if __name__ == "__main__":
    main()
