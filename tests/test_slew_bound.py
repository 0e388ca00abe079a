"""Tests of the count bound that charges slews (benchmarks/slew_bound.py).

It claims to bound the visits per priority of every plan under the planner's rules, slews
included, and to be at most the planner's count bound (skyplan.planning.bound.count_bound)
on the same grid.  References: the brute-force enumeration of tests/test_plan_solver.py
(every order of visits, each at its earliest start on a fine grid, real slews of the slew
model, windows, repeats, spacing), the exact yardstick on a grid (benchmarks/exact_counts.py,
tested in tests/test_exact_counts.py), and a night worked by hand.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest
from test_plan_solver import count_bound_cases, count_vectors_by_enumeration
from test_scheduling import curve_request, random_request

from skyplan.planning.bound import count_bound
from skyplan.planning.model import PlanNight, PlanOptions

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "benchmarks"))
from exact_counts import exact_counts  # noqa: E402
from slew_bound import least_slew_s, slew_count_bound  # noqa: E402


def ring_night(hours: float):
    """Eight targets 45° apart in azimuth at one altitude, one 60 s exposure each (setup 60 s,
    settle 10 s, 2°/s), up all night: a first visit takes 130 s, every later one at least
    22.5 + 10 + 60 + 60 = 152.5 s."""
    curves = [lambda h: 1.2 + 0.0 * h] * 8
    return curve_request(curves, [(i, 0.0, hours) for i in range(8)], [60.0] * 8, [1] * 8,
                         [45.0 * i for i in range(8)], hours, step_s=60.0)


def test_a_night_worked_by_hand():
    # 12 minutes (720 s): without slews 5 visits fit (5 x 130 = 650 s); with them 4
    # (130 + 3 x 152.5 = 587.5 s; a fifth would end at 740 s).  The settle-only bound
    # allows even 6 (each visit rounded down to whole slots); this one says 4 on a 10 s grid.
    night = PlanNight(ring_night(0.2), PlanOptions(airmass_slack=None))
    assert count_bound(night, 1, {}, 10.0) >= 5.0
    assert slew_count_bound(night, 1, {}, 10.0).bound == pytest.approx(4.0)
    assert slew_count_bound(night, 1, {}, 10.0, integer=True).bound == pytest.approx(4.0)
    # the enumeration of every plan (earliest starts on a 10 s grid) finds 4 too
    assert max(sum(v) for v in count_vectors_by_enumeration(ring_night(0.2), 10.0)) == 4
    # 13 minutes: 130 + 4 x 152.5 = 740 s <= 780 s, so 5
    night = PlanNight(ring_night(13 / 60), PlanOptions(airmass_slack=None))
    assert slew_count_bound(night, 1, {}, 10.0).bound == pytest.approx(5.0)


def test_the_least_slew_of_a_slot_is_below_every_slew_in_it():
    # random pairs over whole sampling steps (120 s) of a random night, slews sampled every
    # second; some pairs' axis differences pass zero inside, where the least is not at an end
    req = random_request(3, n=12, hours=1.0)
    night = PlanNight(req, PlanOptions(airmass_slack=None))
    rng = np.random.default_rng(0)
    m = 4000
    src, tgt = rng.integers(0, night.n, m), rng.integers(0, night.n, m)
    t_a = night.t0 + night.step_s * rng.integers(0, night.slot_unix.size - 1, m)
    least = least_slew_s(night, src, tgt, t_a, t_a + night.step_s)
    times = t_a[:, None] + np.arange(0.0, night.step_s + 0.001, 1.0)[None, :]
    s_, t_ = (np.repeat(a[:, None], times.shape[1], 1).ravel() for a in (src, tgt))
    a0, z0 = night.pointing_at(s_, times.ravel())
    a1, z1 = night.pointing_at(t_, times.ravel())
    slews = night.slew.slew_s(a0, z0, a1, z1).reshape(times.shape)
    assert np.all(least <= slews.min(axis=1) + 1e-9)
    # the least is within the clock's second of the sampled least (an axis turning at most
    # 1 deg a minute between the samples)
    assert np.all(slews.min(axis=1) - least < 0.5)
    inside = least < slews[:, [0, -1]].min(axis=1) - 1e-6
    assert 0 < inside.sum() < m // 10


def test_the_least_slew_where_an_axis_difference_passes_zero():
    # two targets at one altitude; the second's azimuth runs 95 -> 105 deg over a 2-minute
    # step past the first's 100 deg: 2.5 s of azimuth (at 2 deg/s) plus 10 s settle at both
    # ends, the settle alone in the middle
    from dataclasses import replace

    req = curve_request([lambda h: 1.2 + 0.0 * h] * 2, [(0, 0.0, 0.2), (1, 0.0, 0.2)],
                        [60.0, 60.0], [1, 1], [100.0, 0.0], 0.2, step_s=120.0)
    az = np.asarray(req.az_deg).copy()
    az[1] = 95.0 + 10.0 * np.arange(az.shape[1])
    night = PlanNight(replace(req, az_deg=az), PlanOptions(airmass_slack=None))
    t = np.array([night.t0])
    least = least_slew_s(night, np.array([0]), np.array([1]), t, t + 120.0)
    ends = least_slew_s(night, np.array([0]), np.array([1]), t, t)
    assert ends == pytest.approx(12.5)
    assert least == pytest.approx(10.0)


@pytest.mark.parametrize("case", range(7))
def test_the_bound_is_above_every_plan_and_below_the_settle_only_bound(case):
    req = list(count_bound_cases())[case]
    night = PlanNight(req, PlanOptions(airmass_slack=None))
    levels = sorted(set(night.priority[night.active].tolist()))
    vectors = count_vectors_by_enumeration(req, 10.0)
    for step in (10.0, 30.0):
        for k, p in enumerate(levels):
            for floor in {v[k + 1:] for v in vectors}:  # counts kept at the higher levels
                keep = [v for v in vectors if all(a >= b for a, b in zip(v[k + 1:], floor))]
                most = max(sum(v[k:]) for v in keep)
                floors = dict(zip(levels[k + 1:], floor, strict=True))
                bound = slew_count_bound(night, p, floors, step).bound
                assert most - 1e-6 <= bound <= count_bound(night, p, floors, step) + 1e-5


@pytest.mark.parametrize("seed", range(3))
def test_the_bound_is_above_the_exact_plans_on_a_busier_night(seed):
    # the airmass slack, repeats and spacing; the yardstick's lexicographic counts (plans,
    # real slews) stay below the bound given their own higher levels
    req = random_request(seed, n=10, hours=1.0)
    night = PlanNight(req, PlanOptions(airmass_slack=0.15))
    got = exact_counts(night, 60.0, 30.0)
    pr = night.priority[[v[0] for v in got.visits]]
    levels = sorted(set(night.priority[night.active].tolist()), reverse=True)
    for p in levels:
        floors = {q: int(np.sum(pr == q)) for q in levels if q > p}
        bound = slew_count_bound(night, p, floors, 20.0).bound
        assert np.sum(pr >= p) <= bound + 1e-6
    assert got.visits
