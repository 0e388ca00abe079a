"""Benchmark of the night plan on synthetic 200-target nights (run by hand).

    python benchmarks/bench_scheduling.py [--targets 200] [--nights 10] [--time-limit 2]
                                          [--airmass-slack 0.15] [--no-demo]

Each night is invented: targets at random right ascension and declination (uniform on the
sphere above declination -30 deg) seen from latitude 40 deg N for a 9-hour night.  Altitude
follows the standard relation sin(alt) = sin(phi) sin(dec) + cos(phi) cos(dec) cos(H) and
azimuth tan(A) = sin(H) / (cos(H) sin(phi) - tan(dec) cos(phi)) (Meeus 1998, Astronomical
Algorithms, eq. 13.5-13.6, azimuth from the south there, from the north here); airmass is the
plane-parallel sec(z).  Windows are the runs of slots above 30 deg altitude.

The demo night of ``skyplan plan --demo`` (32 targets) comes first, unless ``--no-demo``.
Every night is planned with the airmass slack given (default: the planner's) and without it.

Reports, per night, slack and method: wall and CPU time, targets placed / possible, visits,
airmass excess
(all visits and top-priority visits), idle minutes, top-priority targets placed / possible,
the solver's gap and whether it proved optimality; then the means.  "used" is the method whose
plan was returned ("optimal" keeps the dispatch plan when that ranks higher).
"""

from __future__ import annotations

import argparse
import os
import time

import numpy as np

from skyplan.planning import dispatch as scheduling
from skyplan.planning.dispatch import PlanOptions, PlanRequest, SlewModel, make_plan

EXPOSURE_P = [0.2, 0.25, 0.25, 0.2, 0.1]
SIDEREAL_RATE = 1.00273790935  # sidereal hours per solar hour (IERS Conventions 2010, ch. 5)


def synthetic_night(
    n_targets: int, seed: int, step_s: float = 120.0, lat_deg: float = 40.0, hours: float = 9.0
) -> PlanRequest:
    """An invented night: alt/az/airmass curves, windows above 30 deg, mixed visit requests."""
    rng = np.random.default_rng(seed)
    phi = np.radians(lat_deg)
    t0 = 1_700_000_000.0
    slot_unix = t0 + np.arange(0.0, hours * 3600 + 0.5, step_s)
    lst_h = 18.0 + rng.uniform(-3, 3) + SIDEREAL_RATE * (slot_unix - t0) / 3600.0
    ra_h = rng.uniform(0.0, 24.0, n_targets)
    dec = np.arcsin(rng.uniform(np.sin(np.radians(min(-30.0, lat_deg - 70.0))), 1.0, n_targets))
    ha = np.radians(15.0 * (lst_h[None, :] - ra_h[:, None]))
    sin_alt = np.sin(phi) * np.sin(dec)[:, None] + np.cos(phi) * np.cos(dec)[:, None] * np.cos(ha)
    alt = np.degrees(np.arcsin(np.clip(sin_alt, -1, 1)))
    az = np.degrees(
        np.arctan2(np.sin(ha), np.cos(ha) * np.sin(phi) - np.tan(dec)[:, None] * np.cos(phi))
    )
    az = (az + 180.0) % 360.0
    with np.errstate(divide="ignore"):
        airmass = np.where(alt > 0, 1.0 / np.sin(np.radians(alt)), np.inf)

    up = alt >= 30.0
    edges = np.diff(np.pad(up.astype(int), ((0, 0), (1, 1))), axis=1)
    rows_on, cols_on = np.nonzero(edges == 1)
    rows_off, cols_off = np.nonzero(edges == -1)
    win_target = rows_on
    win_start = slot_unix[cols_on]
    win_end = slot_unix[cols_off - 1]
    assert np.array_equal(rows_on, rows_off)
    best = np.where(up, airmass, np.inf).min(axis=1)

    repeats = rng.choice([1, 2, 3], n_targets, p=[0.6, 0.25, 0.15])
    return PlanRequest(
        slot_unix=slot_unix,
        win_target=win_target,
        win_start_unix=win_start,
        win_end_unix=win_end,
        exposure_s=rng.choice([60.0, 120.0, 180.0, 300.0, 600.0], n_targets, p=EXPOSURE_P),
        repeats=repeats,
        spacing_s=np.where(repeats > 1, rng.choice([1800.0, 3600.0], n_targets), 0.0),
        priority=rng.choice([1, 2, 3, 4, 5], n_targets, p=[0.3, 0.25, 0.2, 0.15, 0.1]),
        best_airmass=best,
        sun_flag=rng.random(n_targets) < 0.02,
        airmass=airmass,
        alt_deg=alt,
        az_deg=az,
        setup_s=60.0,
        slew=SlewModel(rate_az_deg_s=3.0, rate_alt_deg_s=2.0, settle_s=10.0),
    )


def top_priority(request: PlanRequest, plan) -> tuple[int, int, float]:
    """(placed, possible, airmass excess) for the targets of the highest priority."""
    top = np.flatnonzero(np.asarray(request.priority) == np.max(request.priority))
    possible = [i for i in top if plan.not_placed.get(int(i), "no_room") == "no_room"]
    visits = [v for v in plan.visits if request.priority[v.target] == np.max(request.priority)]
    placed = {v.target for v in visits}
    am = np.mean([v.airmass_mid for v in visits]) if visits else np.nan
    best = np.mean([request.best_airmass[v.target] for v in visits]) if visits else np.nan
    return sum(int(i) in placed for i in possible), len(possible), am / best - 1.0


def demo_night() -> PlanRequest:
    """The request ``skyplan plan --demo`` hands to the scheduler (captured on its way)."""
    from skyplan.cli.app import main as cli

    seen: list[PlanRequest] = []
    make = scheduling.make_plan

    def capture(request, options=None):
        seen.append(request)
        return make(request, options)

    scheduling.make_plan = capture
    try:
        cli(["plan", "--demo", "--quiet", "-f", "json", "-o", os.devnull])
    except SystemExit:
        pass
    finally:
        scheduling.make_plan = make
    return seen[0]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--targets", type=int, default=200)
    parser.add_argument("--nights", type=int, default=10)
    parser.add_argument("--time-limit", type=float, default=2.0)
    parser.add_argument("--airmass-slack", type=float, default=scheduling.AIRMASS_SLACK)
    parser.add_argument("--no-demo", action="store_true")
    args = parser.parse_args()
    nights = [] if args.no_demo else [("demo", demo_night())]
    nights += [(str(seed), synthetic_night(args.targets, seed)) for seed in range(args.nights)]
    print(
        f"{'night':>5} {'slack':>5} {'asked':>8} {'used':>8} {'wall_s':>6} {'cpu_s':>6} "
        f"{'placed':>8} {'visits':>6} {'excess':>7} {'top_exc':>7} {'idle_min':>8} {'top':>6} "
        f"{'proven':>6}"
    )
    totals: dict[tuple, list] = {}
    for name, request in nights:
        for slack in (args.airmass_slack, None):
            for method in ("dispatch", "optimal"):
                options = PlanOptions(
                    method=method, time_limit_s=args.time_limit, airmass_slack=slack
                )
                wall, cpu = time.perf_counter(), time.process_time()
                plan = make_plan(request, options)
                wall, cpu = time.perf_counter() - wall, time.process_time() - cpu
                m = plan.metrics
                top, top_possible, top_excess = top_priority(request, plan)
                row = (
                    wall,
                    cpu,
                    m.placed,
                    m.possible,
                    len(plan.visits),
                    m.airmass_excess,
                    top_excess,
                    m.idle_minutes,
                    top == top_possible,
                    m.method == "optimal",
                    m.proven_optimal,
                )
                if name != "demo":
                    totals.setdefault((slack, method), []).append(row)
                print(
                    f"{name:>5} {str(slack):>5} {method:>8} {m.method:>8} {wall:>6.2f} "
                    f"{cpu:>6.2f} {m.placed:>3}/{m.possible:<4} {len(plan.visits):>6} "
                    f"{100 * m.airmass_excess:>6.2f}% {100 * top_excess:>6.2f}% "
                    f"{m.idle_minutes:>8.1f} {top:>2}/{top_possible:<3} {m.proven_optimal!s:>6}"
                )
    print(f"means over the {args.nights} synthetic nights:")
    for (slack, method), rows in totals.items():
        a = np.array(rows, dtype=float)
        print(
            f"slack {slack} {method}: wall {a[:, 0].mean():.2f} s (max {a[:, 0].max():.2f}), "
            f"cpu {a[:, 1].mean():.2f} s (max {a[:, 1].max():.2f}), placed "
            f"{a[:, 2].mean():.1f}/{a[:, 3].mean():.1f}, visits {a[:, 4].mean():.1f}, excess "
            f"{100 * a[:, 5].mean():.2f}% (top priority {100 * a[:, 6].mean():.2f}%), idle "
            f"{a[:, 7].mean():.1f} min, all top placed in {int(a[:, 8].sum())}/{len(a)}, "
            f"optimiser plan kept in {int(a[:, 9].sum())}/{len(a)}, proven {int(a[:, 10].sum())}"
        )


if __name__ == "__main__":
    main()
