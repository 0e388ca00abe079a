"""Tests of the local repair of a plan (skyplan.planning.repair).

Every rule is recomputed from its definition by ``assert_valid`` (tests/test_scheduling.py):
no overlap, each whole visit inside one window, slews from the slew model, spacing, repeats,
airmass ceilings.  The dusk case is worked by hand in its comments.
"""

from __future__ import annotations

import pytest
from test_scheduling import assert_valid, curve_request, random_request

from skyplan.planning import merit, realise, repair
from skyplan.planning.dispatch import _finish, make_plan
from skyplan.planning.model import PlanNight, PlanOptions


def raw_visits(plan) -> list[tuple]:
    return [(v.target, v.start_unix, v.slew_s, v.exposure_start_unix, v.end_unix)
            for v in plan.visits]


def dispatch_start(seed: int):
    """A random 30-target, 6-hour night and its dispatch plan: (request, options, night,
    weights, the plan's raw visits, its value, the top level's mask)."""
    req = random_request(seed, n=30, hours=6.0)
    opt = PlanOptions(method="dispatch")
    night = PlanNight(req, opt)
    weight = merit.priority_weights(night.priority, night.active)
    start = raw_visits(make_plan(req, opt))
    top = night.active & (night.priority == night.priority[night.active].max())
    return req, opt, night, weight, start, realise.plan_value(night, start, weight), top


@pytest.mark.parametrize("seed", range(6))
def test_repair_keeps_every_rule_and_never_loses_value(seed):
    req, opt, night, weight, start, value, top = dispatch_start(800 + seed)
    for level in (top, night.active):
        for step in (repair.insert_missing, repair.relocate):
            raw = step(night, start, weight, level)
            assert_valid(req, opt, _finish(night, raw, "optimal", None))
            assert realise.plan_value(night, raw, weight) >= value - 1e-9
    raw = repair.spread_repeats(night, start, weight)
    assert_valid(req, opt, _finish(night, raw, "optimal", None))
    assert realise.plan_value(night, raw, weight) >= value - 1e-9


def dusk_request():
    # Four targets of one priority, az 10-40 deg apart (slews 5 s + 10 s settle, 2 deg/s),
    # setup 60 s.  Windows from dusk: 0-12 min (2 min exposure), 0-18 min (3 min), 0-20 min
    # (10 min) and 0-2 h (5 min).  In the order 0, 1, 2 the visits end by 3.2, 7.6 and 19.0
    # min, inside their windows; target 3 fits after them.
    curves = [lambda h: 1.5 + 0.5 * h, lambda h: 1.4 + 0.5 * h, lambda h: 1.3 + 0.5 * h,
              lambda h: 1.2 + 0.0 * h]
    windows = [(0, 0.0, 12 / 60), (1, 0.0, 18 / 60), (2, 0.0, 20 / 60), (3, 0.0, 2.0)]
    return curve_request(curves, windows, [120.0, 180.0, 600.0, 300.0], [2, 2, 2, 2],
                         [10.0, 20.0, 30.0, 40.0], 2.0)


def test_a_visit_missing_at_dusk_is_inserted_by_re_timing_its_neighbours():
    req = dusk_request()
    opt = PlanOptions(method="dispatch")
    night = PlanNight(req, opt)
    weight = merit.priority_weights(night.priority, night.active)
    # A plan that took target 3 first: targets 0 and 1 still fit after it, target 2 does not
    # (3 ends at 6.2 min, 0 at 9.7, 1 at 14.2; each exposure 60 s of setup and 30 s, more
    # than the slew, after the previous end; 2 would end after 25 min).
    first = (3, night.t0, 10.0, night.t0 + 70.0, night.t0 + 370.0)
    s0, sl0 = realise.slew_into(night, 3, 0, first[4] + 90.0)
    v0 = (0, s0, sl0, first[4] + 90.0, first[4] + 210.0)
    s1, sl1 = realise.slew_into(night, 0, 1, v0[4] + 90.0)
    v1 = (1, s1, sl1, v0[4] + 90.0, v0[4] + 270.0)
    plan = [first, v0, v1]
    assert_valid(req, opt, _finish(night, plan, "optimal", None))
    got = repair.insert_missing(night, plan, weight, night.active)
    assert_valid(req, opt, _finish(night, got, "optimal", None))
    assert sorted(v[0] for v in got) == [0, 1, 2, 3]
    assert [v[0] for v in got[:3]] == [0, 1, 2]  # the only order that fits all three
    assert got[2][4] <= night.t0 + 20 * 60.0
    assert realise.plan_value(night, got, weight) > realise.plan_value(night, plan, weight)


def test_the_optimiser_places_all_four_dusk_visits():
    req = dusk_request()
    opt = PlanOptions(method="optimal", time_limit_s=10.0)
    plan = make_plan(req, opt)
    assert_valid(req, opt, plan)
    assert sorted(v.target for v in plan.visits) == [0, 1, 2, 3]
