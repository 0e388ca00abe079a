"""Tests of re-timing runs of visits and the exchange move (skyplan.planning.retime).

Every rule is recomputed from its definition by ``assert_valid`` (tests/test_scheduling.py):
no overlap, each whole visit inside one window, slews from the slew model, spacing, repeats,
airmass ceilings.  The packed dusk run is worked by hand in its comments.
"""

from __future__ import annotations

import numpy as np
import pytest
from test_plan_repair import dispatch_start
from test_scheduling import assert_valid, curve_request

from skyplan.planning import merit, realise, repair, retime, solver
from skyplan.planning.dispatch import _finish, _improve
from skyplan.planning.model import PlanNight, PlanOptions


def excess(night, v) -> float:
    """X / X_best - 1 at mid-exposure, from the night's curves (docs/planning.md)."""
    mid = v[3] + night.exposure_s[v[0]] / 2
    x = night.airmass_at(np.array([v[0]]), np.array([mid]))[0]
    return float(x / night.best_airmass[v[0]] - 1.0)


def packed_dusk_request():
    # Three targets of one priority, azimuth 0, 20 and 40 deg (slews 10 s + 10 s settle at
    # 2 deg/s), setup 60 s.  Target 0 (2 min exposure, window 0-15 min) is best 12 min into
    # the night: X = 1.1 + 2 (h - 0.2)^2; from dusk, mid-exposure is 130 s in: X = 1.154,
    # 4.9 % above its best.  Targets 1 and
    # 2 (15 min exposures, up all 3 hours) lose a little by waiting: X rises by 0.02
    # an hour (0.3 % in 10 min).  Neither can go first (a visit of 16.2 min is longer than
    # target 0's window), so the best plan waits about 10 min at dusk and then takes
    # 0, 1, 2 in a row.
    curves = [lambda h: 1.1 + 2.0 * (h - 0.2) ** 2, lambda h: 1.2 + 0.02 * h,
              lambda h: 1.25 + 0.02 * h]
    windows = [(0, 0.0, 0.25), (1, 0.0, 3.0), (2, 0.0, 3.0)]
    return curve_request(curves, windows, [120.0, 900.0, 900.0], [2, 2, 2], [0.0, 20.0, 40.0],
                         3.0)


def packed_from_dusk(night):
    """0, 1, 2 each as early as it can go from dusk."""
    plan, prev, free = [], -1, night.t0
    for i in (0, 1, 2):
        slew = night.slew.settle_s if prev < 0 else realise.slew_at(night, prev, i, free)
        exp_start = free + slew + night.setup_s
        plan.append((i, free, slew, exp_start, exp_start + night.exposure_s[i]))
        prev, free = i, plan[-1][4]
    return plan


def test_a_packed_run_moves_together_to_bring_a_visit_to_its_best():
    req = packed_dusk_request()
    opt = PlanOptions(method="dispatch")
    night = PlanNight(req, opt)
    weight = merit.priority_weights(night.priority, night.active)
    plan = packed_from_dusk(night)
    assert_valid(req, opt, _finish(night, plan, "optimal", None))
    assert excess(night, plan[0]) > 0.045
    # The earlier moves leave it there: a single visit has no free gap to move in, taking
    # it out and inserting it again packs it as early as allowed, the exchange of
    # neighbours puts target 1 first, which does not fit.
    old = _improve(night, plan)
    old = realise.swap_neighbours(night, old, weight)
    old = repair.relocate(night, old, weight, night.active)
    assert [v[0] for v in old] == [0, 1, 2]
    assert excess(night, old[0]) > 0.045
    got = retime.retime_plan(night, plan, weight, night.active)
    assert_valid(req, opt, _finish(night, got, "optimal", None))
    assert [v[0] for v in got] == [0, 1, 2]
    # target 0 within 0.2 % of its best (hand value: 0 at a start of 9.8 min; the grid is
    # 10 s, the curve flat there: 2 (10 s / 3600 s)^2 = 2e-5)
    assert excess(night, got[0]) < 0.002
    assert realise.plan_value(night, got, weight) > realise.plan_value(night, old, weight)


@pytest.mark.parametrize("seed", range(6))
def test_re_timing_and_exchange_keep_every_rule_and_never_lose_value(seed):
    req, opt, night, weight, start, value, top = dispatch_start(900 + seed)
    for level in (top, night.active):
        timed = retime.retime_plan(night, start, weight, level)
        assert_valid(req, opt, _finish(night, timed, "optimal", None))
        assert realise.plan_value(night, timed, weight) >= value - 1e-9
        moved = retime.exchange(night, start, weight, level)
        assert_valid(req, opt, _finish(night, moved, "optimal", None))
        assert realise.plan_value(night, moved, weight) >= value - 1e-9
        # the visits of the level are all kept (only lower ones may be left out)
        for plan in (timed, moved):
            kept = sorted(v[0] for v in plan if level[v[0]])
            assert kept == sorted(v[0] for v in start if level[v[0]])


@pytest.mark.parametrize("seed", range(4))
def test_the_loosened_top_level_keeps_every_rule(seed):
    # The optimiser's last step (solver._loosened): the top level re-timed with the lower
    # levels light, refilled, re-timed and moved again; every rule holds for the result and
    # for the light re-timing alone, which keeps every top-priority visit.
    req, opt, night, weight, start, _, _ = dispatch_start(950 + seed)
    top = solver.top_level(night)
    assert top is not None
    light = retime.loosen_top(night, start, weight, top)
    assert_valid(req, opt, _finish(night, light, "optimal", None))
    assert sorted(v[0] for v in light if top[v[0]]) == sorted(v[0] for v in start if top[v[0]])
    got = solver._loosened(night, weight, _improve, start, top, float("inf"))
    assert_valid(req, opt, _finish(night, got, "optimal", None))
