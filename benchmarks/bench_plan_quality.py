"""Plan quality on seeded invented nights at 1x, 2x and 5x oversubscription, two sites (by hand).

    python benchmarks/bench_plan_quality.py [--seeds 2] [--time-limit 5] [--only 40 5]

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
(:func:`bound.count_bound`, rounded down: a count is whole): no plan that keeps those can have
more.  Beside the top
priority's excess, its certified floor (:func:`bound.excess_floor`, on a ``--floor-step``
grid): the least mean excess of any plan with at least as many top-priority visits as the
plan judged, and of any such plan that also places every top-priority target that had room.
The bounds and floors see the night as the planner does (:func:`dispatch.plan_night`: on a
night whose top-priority visits cannot all fit, the top priority keeps the airmass slack too).
Prints a Markdown table (the one in docs/planning.md).

``--counts``: instead, for each night, the visits at each priority or above of the
``optimal`` plan with the objective as it is, and with the airmass share ``S`` of the merit
set to 0 (:mod:`skyplan.planning.merit`): every visit of a level then weighs the same, so the
planner maximises the visits level by level (one visit outweighing nine of the level below),
beside the same count bound.  It separates what the bound misses from what the objective
trades for airmass.

``--only LAT LOAD``: only the nights of that site (latitude, 40 or 64) and load (1, 2 or 5).
"""

from __future__ import annotations

import argparse
import time

import numpy as np
from bench_scheduling import synthetic_night

from skyplan.planning import merit
from skyplan.planning.bound import count_bound, excess_floor
from skyplan.planning.dispatch import PlanOptions, make_plan, plan_night

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
    night = plan_night(request, PlanOptions())
    out = []
    for p in levels:
        floors = {q: int(np.sum(pr == q)) for q in levels if q > p}
        out.append(count_bound(night, p, floors, night.step_s))
    return out


def top_floors(request, top: int, visits: int, could, step_s: float, limit_s: float) -> str:
    """The certified floors of the top priority's mean excess, in %: at least ``visits``
    top-priority visits / and a visit of each target in ``could``."""
    night = plan_night(request, PlanOptions())
    alone = excess_floor(night, top, visits, step_s, time_limit_s=limit_s)
    every = excess_floor(night, top, visits, step_s, must=np.asarray(could, int),
                         time_limit_s=limit_s)
    return f"{100 * alone:.1f}/{100 * every:.1f}"


def count_study(time_limit_s: float, seeds: int) -> None:
    """The ``--counts`` table (see the module docstring)."""
    levels = [5, 4, 3, 2, 1]
    print("| site | load | targets | visits at >= 5/4/3/2/1: objective / counts only / bound |")
    print("|---|---|---|---|")
    share = merit.AIRMASS_SHARE
    for lat, hours in SITES:
        for load in LOADS:
            for seed in range(seeds):
                request = night_at_load(load, seed, lat, hours)
                got = []
                for s in (share, 0.0):
                    merit.AIRMASS_SHARE = s
                    try:
                        plan = make_plan(request, PlanOptions(method="optimal",
                                                              time_limit_s=time_limit_s))
                    finally:
                        merit.AIRMASS_SHARE = share
                    got.append(np.array([request.priority[v.target] for v in plan.visits]))
                bounds = count_bounds(request, levels, got[1])
                cells = "/".join(
                    f"{int(np.sum(got[0] >= p))}:{int(np.sum(got[1] >= p))}:"
                    f"{np.floor(b + 1e-6):.0f}" for p, b in zip(levels, bounds))
                print(f"| {lat:.0f} N | {load}x | {len(request.exposure_s)} | {cells} |")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--seeds", type=int, default=2)
    parser.add_argument("--time-limit", type=float, default=5.0)
    parser.add_argument("--floor-step", type=float, default=120.0,
                        help="grid of the excess floor, seconds")
    parser.add_argument("--floor-limit", type=float, default=5.0,
                        help="time limit of each of the floor's solves, seconds")
    parser.add_argument("--counts", action="store_true",
                        help="the visits with the airmass share of the merit at 0 instead")
    parser.add_argument("--only", nargs=2, type=int, metavar=("LAT", "LOAD"),
                        help="only the nights of this site's latitude and this load")
    args = parser.parse_args()
    if args.counts:
        count_study(args.time_limit, args.seeds)
        return
    levels = [5, 4, 3, 2, 1]
    print(
        "| site | load | targets | method | s | excess % by priority 5/4/3/2/1 | top floor % | "
        "top placed | visits at >= 5/4/3/2/1 (bound) | gap % |"
    )
    print("|---|---|---|---|---|---|---|---|---|---|")
    for lat, hours in SITES:
        for load in LOADS:
            if args.only and (round(lat), load) != tuple(args.only):
                continue
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
                    counts = "/".join(f"{int(np.sum(pr >= p))} ({np.floor(b + 1e-6):.0f})"
                                      for p, b in zip(levels, bounds))
                    floor = top_floors(request, levels[0], int(np.sum(pr == levels[0])),
                                       could, args.floor_step, args.floor_limit)
                    gap = "-" if plan.metrics.gap is None else f"{100 * plan.metrics.gap:.1f}"
                    print(f"| {lat:.0f} N | {load}x | {len(request.exposure_s)} | "
                          f"{plan.metrics.method if method == 'optimal' else 'dispatch'} | "
                          f"{wall:.2f} | {excess} | {floor} | {got}/{len(could)} | {counts} | "
                          f"{gap} |")


if __name__ == "__main__":
    main()
