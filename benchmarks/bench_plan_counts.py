"""Visits per priority on small nights: the planner, the exact best on a grid, the bound (by hand).

    python benchmarks/bench_plan_counts.py [--minutes 60] [--seed 0] [--time-limit 5] [--step 60]
                                           [--exact-limit 25] [--upper-limit 150]
                                           [--merit-limit 20] [--loads 1,2,5]
                                           [--slew-step 10] [--slew-limit 100]

Each night is the last ``--minutes`` of an invented night of
``bench_scheduling.synthetic_night`` (targets uniform on the sky, windows above 30 deg,
exposures 60-600 s, 1-3 repeats, priorities 1-5) at 40 deg N (9-hour night) and 64 deg N
(16-hour night), as a re-plan from that time would see it: the same windows, each target's
best air mass over what is left.  Targets are added 5 at a time until the load (the visits'
summed shortest length, settle + setup + exposure, every repeat, of the targets with room,
over the night's length) reaches 1, 2 or 5.

For each night, the visits at each priority or above of:

* ``dispatch`` and ``optimal`` (``--time-limit``), and ``optimal`` with the airmass share of
  the merit at 0 ("counts only": every visit of a level weighs the same);
* ``exact``: the lexicographic best on a grid of starts (``--step``, 1 minute) with the
  real slews (``exact_counts.py``; the stages at priority >= 4 limited to
  ``--upper-limit`` s, the others to ``--exact-limit`` s): a plan, so a lower bound on the
  best plan; exact on the grid when its MIP gap is 0;
* the count bound (:func:`bound.count_bound`) given the ``optimal`` plan's visits at the
  higher levels, on the 2-minute grid (as in ``bench_plan_quality.py``) and on the
  1-minute grid: an upper bound, rounded down;
* the same bound charging the slews (``slew_bound.py``, ``--slew-step`` 10 s, the integer
  program's proven dual bound after ``--slew-limit`` s a level; 0 skips it).

Then the merit of the ``optimal`` plan against the best merit on the grid
(``exact_merit``, ``--merit-limit``).  Prints two Markdown tables (docs/planning.md).
"""

from __future__ import annotations

import argparse
import sys
import time
from dataclasses import replace

import numpy as np
from bench_scheduling import synthetic_night
from exact_counts import exact_counts, exact_merit
from slew_bound import slew_count_bound

from skyplan.planning import merit
from skyplan.planning.bound import count_bound
from skyplan.planning.dispatch import PlanOptions, make_plan, plan_night
from skyplan.planning.model import PlanNight

SITES = ((40.0, 9.0), (64.0, 16.0))
LEVELS = (5, 4, 3, 2, 1)


def last_minutes(request, minutes: float):
    """The request as seen from ``minutes`` before the night's end: the grids cut there,
    each target's best air mass the lowest left inside its windows."""
    slot = np.asarray(request.slot_unix)
    keep = slot >= slot[-1] - minutes * 60.0 - 1e-6
    airmass = np.asarray(request.airmass)[:, keep]
    inside = np.zeros(airmass.shape, bool)
    for k, i in enumerate(np.asarray(request.win_target)):
        inside[i] |= (slot[keep] >= request.win_start_unix[k]) & (
            slot[keep] <= request.win_end_unix[k])
    best = np.where(inside, airmass, np.inf).min(axis=1)
    return replace(request, slot_unix=slot[keep], airmass=airmass,
                   alt_deg=np.asarray(request.alt_deg)[:, keep],
                   az_deg=np.asarray(request.az_deg)[:, keep],
                   best_airmass=np.where(np.isfinite(best), best, 1.0))


def load_of(request) -> float:
    """Summed shortest visit length of the targets with room, over the night's length."""
    night = plan_night(request, PlanOptions())
    work = night.shortest_visit_s * night.repeats
    return float(work[night.has_room & ~night.sun_blocked].sum() / (night.t1 - night.t0))


def small_night(load: float, seed: int, lat: float, hours: float, minutes: float):
    n = 5
    while True:
        request = last_minutes(synthetic_night(n, seed, lat_deg=lat, hours=hours), minutes)
        if load_of(request) >= load:
            return request
        n += 5


def planner_levels(request, time_limit_s: float, share: float) -> tuple[np.ndarray, object]:
    saved = merit.AIRMASS_SHARE
    merit.AIRMASS_SHARE = share
    try:
        plan = make_plan(request, PlanOptions(method="optimal" if time_limit_s else "dispatch",
                                              time_limit_s=time_limit_s))
    finally:
        merit.AIRMASS_SHARE = saved
    return np.array([request.priority[v.target] for v in plan.visits], int), plan


def value_of(night: PlanNight, visits) -> float:
    """The merit of docs/planning.md of a plan's visits."""
    weight = merit.priority_weights(night.priority, night.active)
    i = np.array([v.target for v in visits], int)
    am = np.array([v.airmass_mid for v in visits])
    return float(merit.merit(weight[i], am, night.best_airmass[i]).sum()) if i.size else 0.0


def cells(pr: np.ndarray) -> str:
    return " | ".join(str(int(np.sum(pr >= p))) for p in LEVELS)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--minutes", type=float, default=60.0)
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument("--time-limit", type=float, default=5.0)
    parser.add_argument("--step", type=float, default=60.0, help="the exact solver's grid, s")
    parser.add_argument("--exact-limit", type=float, default=25.0)
    parser.add_argument("--upper-limit", type=float, default=150.0,
                        help="the time limit of the stages at priority >= 4, s")
    parser.add_argument("--merit-limit", type=float, default=20.0)
    parser.add_argument("--loads", default="1,2,5", help="the loads, comma-separated")
    parser.add_argument("--slew-step", type=float, default=10.0)
    parser.add_argument("--slew-limit", type=float, default=100.0,
                        help="the bound with slews: time limit a level, s (0: skip it)")
    args = parser.parse_args()
    counts_rows, solve_rows = [], []
    for lat, hours in SITES:
        for load in [int(x) for x in args.loads.split(",")]:
            request = small_night(load, args.seed, lat, hours, args.minutes)
            night = plan_night(request, PlanOptions())
            name = f"{lat:.0f} N | {load}x | {int(night.active.sum())}"
            plans, first_row = {}, len(counts_rows)
            for what, limit, share in (("dispatch", 0.0, merit.AIRMASS_SHARE),
                                       ("optimal", args.time_limit, merit.AIRMASS_SHARE),
                                       ("optimal, counts only", args.time_limit, 0.0)):
                pr, plans[what] = planner_levels(request, limit, share)
                counts_rows.append(f"| {name} | {what} | {cells(pr)} |")
            wall = time.perf_counter()
            upper = {p: args.upper_limit for p in LEVELS if p >= 4}
            got = exact_counts(night, args.step, args.exact_limit, level_limits=upper)
            wall = time.perf_counter() - wall
            pr = night.priority[[v[0] for v in got.visits]].astype(int)
            mark = "" if got.exact else " (MIP gap > 0)"
            counts_rows.append(f"| {name} | exact, {args.step:.0f}-s grid{mark} | {cells(pr)} |")
            judged = np.array([request.priority[v.target] for v in plans["optimal"].visits], int)
            for step in (120.0, 60.0):
                bounds = []
                for p in LEVELS:
                    floors = {q: int(np.sum(judged == q)) for q in LEVELS if q > p}
                    bounds.append(count_bound(night, p, floors, step, time_limit_s=120.0))
                row = " | ".join(f"{np.floor(b + 1e-6):.0f}" for b in bounds)
                counts_rows.append(f"| {name} | bound, {step / 60:.0f}-min grid | {row} |")
            if args.slew_limit > 0:
                cells_ = []
                for p in LEVELS:
                    floors = {q: int(np.sum(judged == q)) for q in LEVELS if q > p}
                    got_ = slew_count_bound(night, p, floors, args.slew_step, args.slew_limit,
                                            integer=True)
                    mark_ = "" if got_.status == "Optimal" else "+"  # stopped: a bound still
                    cells_.append(f"{np.floor(got_.bound + 1e-6):.0f}{mark_}"
                                  if np.isfinite(got_.bound) else "-")  # no LP in the time
                counts_rows.append(f"| {name} | bound with slews, {args.slew_step:.0f}-s grid | "
                                   + " | ".join(cells_) + " |")
            stages = ", ".join(f"{s.value:.0f}" + ("" if s.gap <= 1e-9 else f"..{s.bound:.0f}")
                               + f" {s.seconds:.1f} s" for s in got.stages)
            m = exact_merit(night, args.step, args.merit_limit).stages[0]
            merit_cell = f"{m.value:.2f}" + ("" if m.gap <= 1e-9 else f" (gap {100 * m.gap:.2f} %)")
            if m.gap >= 1.0:
                merit_cell = f"none near: {m.value:.2f}, bound {m.bound:.2f}"
            solve_rows.append(
                f"| {name} | {got.columns} | {wall:.1f} | {stages} | "
                f"{value_of(night, plans['optimal'].visits):.2f} | {merit_cell} | "
                f"{m.seconds:.1f} |")
            print("\n".join(counts_rows[first_row:] + solve_rows[-1:]), file=sys.stderr, flush=True)
    print("| site | load | targets | plan | >= 5 | >= 4 | >= 3 | >= 2 | >= 1 |")
    print("|---|---|---|---|---|---|---|---|---|")
    print("\n".join(counts_rows))
    print()
    print("| site | load | targets | columns | exact s | stages: count (..bound) and s | "
          "optimal's merit | best merit on the grid | s |")
    print("|---|---|---|---|---|---|---|---|---|")
    print("\n".join(solve_rows))


if __name__ == "__main__":
    main()
