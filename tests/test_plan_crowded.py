"""The top priority keeps the airmass slack when its visits cannot all fit tonight.

``bound.visits_fit`` is the interval condition of single-machine scheduling with time
windows (Horn 1974): checked here against hand-worked nights and against every plan of small
nights enumerated on a 1-minute grid (test_plan_solver.each_plan, real slews): whenever one of
those plans holds every top-priority visit, it must not claim that they cannot all fit.  The
plans themselves are checked from the rule's definition: on a crowded night every visit of
every priority is within ``best * (1 + slack)`` of its best airmass, and a note says why; on a
night with room the top priority has no ceiling.
"""

from __future__ import annotations

import numpy as np
import pytest
from test_plan_solver import each_plan, tiny_request
from test_scheduling import curve_request

from skyplan import notices
from skyplan.planning import bound
from skyplan.planning.dispatch import make_plan, plan_night
from skyplan.planning.model import PlanNight, PlanOptions


def night_of(req, slack=0.15) -> PlanNight:
    return PlanNight(req, PlanOptions(airmass_slack=slack))


def two_targets(second_window_h: tuple[float, float]):
    """Two top-priority targets of 10 minutes each (settle 10 s, setup 60 s: 670 s a visit):
    the first may only be taken in its 15 minutes, the second in ``second_window_h``."""
    curves = [lambda h: 1.2 + 0.1 * h] * 2
    windows = [(0, 0.0, 0.25), (1, *second_window_h)]
    return curve_request(curves, windows, [600.0, 600.0], [3, 3], [10.0, 20.0], 1.0)


def test_two_visits_that_need_the_same_quarter_hour_do_not_fit() -> None:
    # Hand-worked: both must lie in [0, 15 min] and need 2 x 670 s = 22.3 min > 15 min.
    assert not bound.visits_fit(night_of(two_targets((0.0, 0.25))), np.array([True, True]))
    # The second may also use the next quarter: every interval holds its work.
    assert bound.visits_fit(night_of(two_targets((0.0, 0.5))), np.array([True, True]))
    # One window ending before the other begins: no interval holds more than its length
    # (an end before a start is no interval).
    assert bound.visits_fit(night_of(two_targets((0.5, 0.75))), np.array([True, True]))
    # One target alone always fits in its own window.
    assert bound.visits_fit(night_of(two_targets((0.0, 0.25))), np.array([True, False]))


def small_night(seed: int):
    return tiny_request(300 + seed, n=5, hours=0.3)


def most_top_visits(req) -> tuple[int, int]:
    """(the most top-priority visits of any enumerated plan, the visits the top asks)."""
    night = night_of(req, None)
    top = night.top_level()
    most = [0]

    def count(path):
        most[0] = max(most[0], sum(1 for i, _ in path if top[i]))

    each_plan(req, count, 60.0, earliest=True)
    return most[0], int(night.repeats[top].sum())


def test_it_never_says_no_when_a_plan_holds_every_top_visit() -> None:
    held = said_no = 0
    for seed in range(16):
        req = small_night(seed)
        night = night_of(req, None)
        fits = bound.visits_fit(night, night.top_level())
        most, asked = most_top_visits(req)
        if most >= asked:
            held += 1
            assert fits, f"seed {seed}: a plan holds all {asked} top visits"
        said_no += not fits
    assert held >= 3 and said_no >= 3  # both kinds of night were met


def crowded_night():
    """Twelve top-priority targets, each able to take only the same 40 minutes (five fit),
    and three of a lower priority, all steep in airmass so that the excess matters."""
    rng = np.random.default_rng(4)
    n = 15
    curves = [lambda h, a=a: a + 0.6 * (h - 0.3) ** 2 for a in rng.uniform(1.0, 1.2, n)]
    windows = [(i, 0.0, 40 / 60) for i in range(12)] + [(i, 0.0, 2.0) for i in range(12, n)]
    return curve_request(curves, windows, [420.0] * n, [5] * 12 + [2] * 3,
                         rng.uniform(0, 360, n), 2.0)


@pytest.mark.parametrize("method", ["dispatch", "optimal"])
def test_a_crowded_top_priority_keeps_within_the_slack_and_says_so(method: str) -> None:
    req = crowded_night()
    notices.take()
    plan = make_plan(req, PlanOptions(method=method, time_limit_s=1.0, airmass_slack=0.15))
    said = notices.take()
    assert any("cannot all fit tonight" in s for s in said), said
    assert plan.visits
    for v in plan.visits:  # the rule from its definition, every priority
        assert v.airmass_mid <= req.best_airmass[v.target] * 1.15 + 1e-9
    # Without the rule the same night takes top-priority visits beyond it.
    loose = make_plan(req, PlanOptions(method=method, time_limit_s=1.0, airmass_slack=None))
    assert any(v.airmass_mid > req.best_airmass[v.target] * 1.15 for v in loose.visits)
    assert not any("cannot all fit" in s for s in notices.take())


def test_a_top_priority_with_room_has_no_ceiling() -> None:
    notices.take()
    room = plan_night(two_targets((0.0, 1.0)), PlanOptions(airmass_slack=0.15))
    assert not any("cannot all fit" in s for s in notices.take())
    assert np.all(np.isinf(room.max_airmass[room.top_level()]))
    crowded = plan_night(two_targets((0.0, 0.25)), PlanOptions(airmass_slack=0.15))
    assert any("cannot all fit" in s for s in notices.take())
    top = crowded.top_level()
    assert np.allclose(crowded.max_airmass[top], crowded.best_airmass[top] * 1.15)
