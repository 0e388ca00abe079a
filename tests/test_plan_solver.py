"""Tests of the optimised plan (skyplan.planning.solver, timeindexed, realise, merit).

Rules are recomputed from their definitions by ``assert_valid`` (tests/test_scheduling.py):
no overlap, each whole visit inside one window, slews from the slew model, spacing, repeats.
The integer programs are checked against enumeration of every feasible set of starts, and the
upper bound against the best plan found by enumerating visit orders and start times with the
real slews (any plan's value, so also the best one, must stay below the bound: then the
reported gap, ``1 - value / bound``, is at least the true gap ``1 - value / best``).
"""

from __future__ import annotations

import itertools
import json

import numpy as np
import pytest
from test_scheduling import (
    T0,
    assert_valid,
    curve_request,
    plan_worth,
    random_request,
    sky,
)

from skyplan.planning import merit, realise, reasons, timeindexed
from skyplan.planning.dispatch import _finish, make_plan
from skyplan.planning.model import PlanNight, PlanOptions, PlanRequest, SlewModel

# -- the objective ----------------------------------------------------------------------------


def test_merit_from_its_definition():
    # q(r) = 1 / (1 + 4 r), merit = w (1 - 0.2 (1 - q)), r = X / X_best - 1 (docs/planning.md).
    w = np.array([1.0, 10.0, 10.0])
    x = np.array([1.0, 1.05, 2.3])
    best = np.array([1.0, 1.0, 2.0])
    expect = [1.0, 10.0 * (1 - 0.2 * (1 - 1 / 1.2)), 10.0 * (1 - 0.2 * (1 - 1 / 1.6))]
    assert merit.merit(w, x, best) == pytest.approx(expect)
    # Levels ranked among the placeable targets: 1, 10, 100; a target left out weighs 0.
    weights = merit.priority_weights(np.array([5, 1, 3, 3, 9]), np.array([1, 1, 1, 1, 0], bool))
    assert weights.tolist() == [100.0, 1.0, 10.0, 10.0, 0.0]


def test_many_priority_levels_keep_the_weights_in_range():
    weights = merit.priority_weights(np.arange(20), np.ones(20, bool))
    assert weights.max() == pytest.approx(1e6)
    assert np.all(np.diff(weights) > 0)


# -- validity and determinism on random nights ------------------------------------------------


@pytest.mark.parametrize("seed", range(8))
def test_optimised_plans_obey_every_rule(seed):
    req = random_request(500 + seed, n=30, hours=6.0)
    opt = PlanOptions(method="optimal", time_limit_s=10.0)
    plan = make_plan(req, opt)
    assert_valid(req, opt, plan)
    m = plan.metrics
    assert m.visits == len(plan.visits)
    assert m.dual_bound >= plan_worth(req, plan.visits) - 1e-6
    dispatch = make_plan(req, PlanOptions(method="dispatch"))
    assert plan_worth(req, plan.visits) >= plan_worth(req, dispatch.visits) - 1e-9


@pytest.mark.parametrize("seed", range(3))
def test_same_input_same_plan(seed):
    req = random_request(600 + seed, n=25, hours=5.0)
    opt = PlanOptions(method="optimal", time_limit_s=30.0)
    first, second = make_plan(req, opt), make_plan(req, opt)
    assert first.visits == second.visits
    assert first.not_placed == second.not_placed
    assert first.metrics == second.metrics


def test_short_repeats_are_reported_with_the_visits_they_got():
    req = random_request(0, n=14, hours=3.0)
    plan = make_plan(req, PlanOptions(method="optimal", time_limit_s=10.0))
    got = {}
    for v in plan.visits:
        got[v.target] = got.get(v.target, 0) + 1
    short = {i: (k, int(req.repeats[i])) for i, k in got.items() if k < req.repeats[i]}
    assert short, "this night leaves some repeats out"
    assert plan.repeats_short == short
    assert plan.metrics.visits == sum(got.values())


# -- the models against enumeration -----------------------------------------------------------


def tiny_request(seed, n=3, hours=0.75):
    rng = np.random.default_rng(seed)
    slot, alt, az, _ = sky(n, hours, 120.0, rng)
    airmass = 1.0 + rng.uniform(0.0, 0.5, (n, 1)) + 0.2 * np.sin(
        rng.uniform(0, 6, (n, 1)) + (slot - T0)[None, :] / 900.0
    )
    ws = T0 + rng.uniform(0, 900, n)
    we = np.minimum(ws + rng.uniform(600, 1800, n), slot[-1])
    return PlanRequest(
        slot_unix=slot,
        win_target=np.arange(n),
        win_start_unix=ws,
        win_end_unix=we,
        exposure_s=rng.choice([60.0, 180.0, 300.0], n),
        repeats=rng.permutation([1] * (n - 1) + [int(rng.integers(1, 3))]),
        spacing_s=rng.choice([0.0, 600.0], n),
        priority=rng.integers(1, 3, n),
        best_airmass=airmass.min(axis=1),
        sun_flag=np.zeros(n, bool),
        airmass=airmass,
        alt_deg=alt,
        az_deg=az,
        setup_s=30.0,
        slew=SlewModel(rate_az_deg_s=6.0, rate_alt_deg_s=6.0, settle_s=5.0),
    )


def enumerate_model(model: timeindexed.TimeModel) -> float:
    """Best objective over every feasible set of variables: no slot twice, repeats, spacing."""
    by_target: dict[int, list[int]] = {}
    for v in range(model.size):
        by_target.setdefault(int(model.var_target[v]), []).append(v)
    options = []
    for i, vs in by_target.items():
        choices = [()]
        for r in range(1, int(model.repeats[i]) + 1):
            for combo in itertools.combinations(vs, r):
                slots = [int(model.var_slot[v]) for v in combo]
                gap = max(model.spacing_slots[i], 1)
                if all(b - a >= gap for a, b in itertools.pairwise(slots)):
                    choices.append(combo)
        options.append(choices)
    best = 0.0
    for pick in itertools.product(*options):
        used, clash, total = 0, False, 0.0
        for combo in pick:
            for v in combo:
                mask = ((1 << int(model.var_block[v])) - 1) << int(model.var_slot[v])
                clash |= bool(used & mask)
                used |= mask
                total += model.var_merit[v]
        if not clash:
            best = max(best, total)
    return best


@pytest.mark.parametrize("seed", range(12))
def test_integer_program_matches_enumeration(seed):
    req = tiny_request(seed)
    night = PlanNight(req, PlanOptions(airmass_slack=0.15))
    weight = merit.priority_weights(night.priority, night.active)
    for model in (
        timeindexed.padded_model(night, 240.0, weight),
        timeindexed.relaxed_model(night, 240.0, weight),
    ):
        result = timeindexed.solve(model, 30.0, integer=True)
        assert result.optimal
        assert result.objective == pytest.approx(enumerate_model(model), rel=1e-4)
        lp = timeindexed.solve(model, 30.0, integer=False)
        assert lp.bound >= result.objective - 1e-6


def best_plan_by_enumeration(req, step_s=60.0):
    """The best value of any plan whose starts lie on a ``step_s`` grid: every order of every
    set of visits (repeats included), each visit at every grid start after the previous end,
    with the slews of the slew model, inside a window, keeping the spacing."""
    night = PlanNight(req, PlanOptions(airmass_slack=None))
    weight = merit.priority_weights(night.priority, night.active)
    n = night.n
    starts = np.arange(night.t0, night.t1, step_s)
    best = 0.0

    def grow(prev, t, done, last, total):
        nonlocal best
        best = max(best, total)
        for i in range(n):
            if not night.active[i] or done[i] >= night.repeats[i]:
                continue
            for s in starts[starts >= t - 1e-9]:
                if s - last[i] < night.spacing_s[i] - 1e-6:
                    continue
                if prev < 0:
                    slew = night.slew.settle_s
                else:
                    a0, z0 = night.pointing_at(np.array([prev]), np.array([s]))
                    a1, z1 = night.pointing_at(np.array([i]), np.array([s]))
                    slew = float(night.slew.slew_s(a0, z0, a1, z1)[0])
                end = s + slew + night.setup_s + night.exposure_s[i]
                own = night.win_target == i
                ws, we = night.win_start[own], night.win_end[own]
                if not np.any((ws <= s + 1e-6) & (we >= end - 1e-6)):
                    continue
                x = night.airmass_at(np.array([i]), np.array([end - night.exposure_s[i] / 2]))
                value = float(merit.merit(weight[[i]], x, night.best_airmass[[i]])[0])
                done[i] += 1
                saved = last[i]
                last[i] = s
                grow(i, end, done, last, total + value)
                done[i] -= 1
                last[i] = saved

    grow(-1, night.t0, np.zeros(n, int), np.full(n, -np.inf), 0.0)
    return best


@pytest.mark.parametrize("seed", range(6))
def test_the_bound_is_above_every_plan_so_the_gap_is_honest(seed):
    req = tiny_request(40 + seed, n=3, hours=0.5)
    plan = make_plan(req, PlanOptions(method="optimal", time_limit_s=10.0, airmass_slack=None))
    m = plan.metrics
    best = best_plan_by_enumeration(req)
    assert m.dual_bound >= best - 1e-6, "the bound is above the best plan"
    value = plan_worth(req, plan.visits)
    assert value == pytest.approx(m.solver_objective)
    if best > 0:
        assert m.gap >= 1.0 - value / best - 1e-9, "reported gap >= true gap"


# -- the zenith, short windows ----------------------------------------------------------------


def test_a_target_passing_near_the_zenith_is_placed_near_its_best():
    # Target 0 passes 1 deg from the zenith at hour 1 (airmass 1.00015 there, sec z); target 1,
    # top priority, is flat at 1.3.  The night has room for both.
    def zenith(h):
        z = np.radians(1.0 + 40.0 * np.abs(h - 1.0))
        return 1.0 / np.cos(z)

    curves = [zenith, lambda h: 1.3 + 0.0 * h]
    req = curve_request(curves, [(0, 0.0, 2.0), (1, 0.0, 2.0)], [600.0, 600.0], [1, 2],
                        [10.0, 200.0], 2.0)
    for method in ("dispatch", "optimal"):
        opt = PlanOptions(method=method, time_limit_s=10.0)
        plan = make_plan(req, opt)
        assert_valid(req, opt, plan)
        assert plan.not_placed == {}
        v0 = next(v for v in plan.visits if v.target == 0)
        assert v0.airmass_mid <= req.best_airmass[0] * 1.05


# -- why a target was left out, short repeats ---------------------------------------------------


def test_taken_by_names_the_visits_over_its_windows_and_the_free_room():
    # Windows of target 0: 0-100 and 200-300.  Visits: target 1 over 10-60, target 2 over
    # 60-100 and 190-260, target 3 over 400-500 (outside).  Free inside its windows: 0-10,
    # 260-300 (the longest, 40).  Overlaps: target 2 has 40 + 60 = 100, target 1 has 50.
    taken = reasons.taken_by(
        np.array([0, 0, 1]), np.array([200.0, 0.0, 0.0]), np.array([300.0, 100.0, 900.0]),
        np.array([1, 2, 2, 3]), np.array([10.0, 60.0, 190.0, 400.0]),
        np.array([60.0, 100.0, 260.0, 500.0]), 0)
    assert taken.windows == [(0.0, 100.0), (200.0, 300.0)]
    assert taken.blockers == [2, 1]
    assert taken.longest_free_s == pytest.approx(40.0)
    assert taken.free == [(0.0, 10.0), (260.0, 300.0)]


def test_taken_by_merges_the_overlapping_pieces_of_a_window():
    # A mount splits a window 0-150 into overlapping pieces 0-100 and 50-150 (pier sides or
    # the two arcs of a cable wrap): one window for the observer, a visit of target 1 over
    # 60-80 counted once, free 0-60 and 80-150.
    taken = reasons.taken_by(
        np.array([0, 0]), np.array([50.0, 0.0]), np.array([150.0, 100.0]),
        np.array([1]), np.array([60.0]), np.array([80.0]), 0)
    assert taken.windows == [(0.0, 150.0)]
    assert taken.blockers == [1]
    assert taken.free == [(0.0, 60.0), (80.0, 150.0)]
    assert taken.longest_free_s == pytest.approx(70.0)


def test_the_lowest_airmass_left_in_the_free_time():
    # Air mass falling linearly from 2.0 at t = 0 to 1.0 at t = 1000 s (samples every 100 s).
    # A visit leads 70 s (settle + setup) and exposes 60 s, so its middle is 100 s after the
    # start of a stretch and 30 s before its end: in 0-50 none fits; in 200-500 the middle
    # reaches 470 s at the latest, where the air mass is 2.0 - 0.47 = 1.53.
    slots = np.arange(0.0, 1001.0, 100.0)
    x = 2.0 - slots / 1000.0
    got = reasons.lowest_airmass_free([(0.0, 50.0), (200.0, 500.0)], slots, x, 70.0, 60.0)
    assert got == pytest.approx(1.53)
    assert reasons.lowest_airmass_free([(0.0, 50.0)], slots, x, 70.0, 60.0) == np.inf


def test_the_command_says_who_took_the_time_and_counts_short_repeats(tmp_path):
    from skyplan.cli.app import main

    path = tmp_path / "plan.json"
    with pytest.raises(SystemExit) as exc:
        main(["plan", "--demo", "--repeats", "2", "--spacing", "60", "--format", "json",
              "--out", str(path), "--quiet"])
    assert exc.value.code == 0
    doc = json.loads(path.read_text())
    got: dict[str, int] = {}
    for o in doc["observations"]:
        got[o["name"]] = got.get(o["name"], 0) + 1
    short = {s["name"]: (s["visits"], s["asked"]) for s in doc["short_repeats"]}
    assert short == {n: (k, 2) for n, k in got.items() if k < 2}
    assert short, "the demo night cannot hold two visits of every target"
    assert doc["metrics"]["visits"] == len(doc["observations"])
    for entry in doc["not_placed"]:
        if entry["reason"] in ("no_room", "poor_airmass"):
            assert "its usable time" in entry["explanation"]


@pytest.mark.parametrize("seed", range(6))
def test_each_polishing_step_keeps_every_rule_and_never_loses_value(seed):
    req = random_request(700 + seed, n=30, hours=6.0)
    opt = PlanOptions(method="dispatch")
    night = PlanNight(req, opt)
    weight = merit.priority_weights(night.priority, night.active)
    start = [(v.target, v.start_unix, v.slew_s, v.exposure_start_unix, v.end_unix)
             for v in make_plan(req, opt).visits]
    for step in (
        lambda raw: realise.fill_gaps(night, raw, weight),
        lambda raw: realise.swap_neighbours(night, raw, weight),
        lambda raw: realise.compact(night, raw),
    ):
        raw = step(start)
        assert_valid(req, opt, _finish(night, raw, "optimal", None))
        assert len(raw) >= len(start)
    filled = realise.fill_gaps(night, start, weight)
    assert realise.plan_value(night, filled, weight) >= realise.plan_value(night, start, weight)
    swapped = realise.swap_neighbours(night, start, weight)
    assert realise.plan_value(night, swapped, weight) >= realise.plan_value(night, start, weight)


# -- bounded memory on large catalogues ---------------------------------------------------------


def test_relaxed_model_in_chunks_equals_the_one_pass_model(monkeypatch):
    # The lowest-airmass samples are evaluated a chunk of variables at a time; each variable
    # alone, so any chunk size must give the same model as one pass.
    req = random_request(31, n=30, hours=6.0)
    night = PlanNight(req, PlanOptions())
    weight = merit.priority_weights(night.priority, night.active)
    whole = timeindexed.relaxed_model(night, night.step_s, weight)
    monkeypatch.setattr(timeindexed, "LOWEST_CHUNK", 17)
    chunked = timeindexed.relaxed_model(night, night.step_s, weight)
    assert whole.size > 17 * 3
    for name in ("var_target", "var_slot", "var_block", "var_merit", "var_duration"):
        assert np.array_equal(getattr(whole, name), getattr(chunked, name)), name


def test_slot_grid_in_chunks_equals_the_one_pass_grid():
    from skyplan.planning.build import slot_grid

    class Sky:  # element-wise, like the position pipeline: each (target, time) pair alone
        def horizon(self, rows, t):
            return np.sin(0.37 * rows + t / 997.0) * 90.0, (rows * 7.0 + t / 13.0) % 360.0, t

    idx = np.array([3, 0, 8, 5, 11, 2, 9])
    slots = T0 + 120.0 * np.arange(41)
    one = slot_grid(Sky(), idx, slots, chunk=10**9)
    # one pass, computed here from the definition
    expect_alt = np.sin(0.37 * idx[:, None] + slots[None, :] / 997.0) * 90.0
    assert np.array_equal(one[0], expect_alt)
    for chunk in (1, 40, 41, 100, 123):
        got = slot_grid(Sky(), idx, slots, chunk=chunk)
        assert np.array_equal(got[0], one[0]) and np.array_equal(got[1], one[1])


def test_typical_slew_from_a_sample_is_near_the_all_pairs_quantile():
    # Above TYPICAL_SLEW_TARGETS targets up at a time, the quantile is taken over the pairs of
    # a sample; compare with the quantile over every pair, computed here from its definition.
    from skyplan.planning.model import EPS_S, TYPICAL_SLEW_TARGETS, typical_slew_s

    req = random_request(47, n=3000, hours=4.0)
    night = PlanNight(req, PlanOptions())
    times = night.slot_unix[np.linspace(0, night.slot_unix.size - 1, 9).round().astype(int)]
    slews, most = [], 0
    for t in times:
        up = (night.win_start <= t + EPS_S) & (night.win_end >= t - EPS_S)
        i = np.unique(night.win_target[up])
        most = max(most, i.size)
        alt, az = night.pointing_at(i, np.full(i.shape, t))
        a, b = np.triu_indices(i.size, 1)
        slews.append(night.slew.slew_s(alt[a], az[a], alt[b], az[b]))
    assert most > 2 * TYPICAL_SLEW_TARGETS
    exact = float(np.quantile(np.concatenate(slews), 0.5))
    assert typical_slew_s(night, 0.5) == pytest.approx(exact, rel=0.01)


def test_the_lagrangian_grid_divides_the_bounds_grid():
    from skyplan.planning.solver import fine_stride

    # smallest divisor of k at least `least` (k itself when none smaller fits)
    assert [fine_stride(12, m) for m in (0, 1, 2, 5, 7, 12, 40)] == [1, 1, 2, 6, 12, 12, 12]
    assert fine_stride(26, 2) == 2 and fine_stride(26, 3) == 13 and fine_stride(5, 2) == 5


@pytest.mark.parametrize("budget", [1, 40])
@pytest.mark.parametrize("seed", range(3))
def test_the_bound_stays_above_every_plan_with_the_lagrangian_grid_capped(
    monkeypatch, seed, budget
):
    # A small variable budget coarsens (or drops) the Lagrangian model: the bound must still be
    # above the best plan found by enumeration, so the reported gap stays honest.
    from skyplan.planning import solver

    monkeypatch.setattr(solver, "LAGRANGIAN_VARIABLE_BUDGET", budget)
    req = tiny_request(40 + seed, n=3, hours=0.5)
    plan = make_plan(req, PlanOptions(method="optimal", time_limit_s=10.0, airmass_slack=None))
    best = best_plan_by_enumeration(req)
    assert plan.metrics.dual_bound >= best - 1e-6
    if best > 0:
        value = plan_worth(req, plan.visits)
        assert plan.metrics.gap >= 1.0 - value / best - 1e-9


def each_plan(req, on_plan, step_s: float = 60.0, earliest: bool = False) -> None:
    """Call ``on_plan(path)`` for every plan whose starts lie on a ``step_s`` grid, ``path``
    its visits so far as (target, relative excess X / X_best - 1 at mid-exposure, >= 0):
    every order, every start (only the earliest of each visit with ``earliest``: a later
    start ends later, slews changing slower than the clock), the real slews of the slew
    model, windows, repeats and spacing."""
    night = PlanNight(req, PlanOptions(airmass_slack=None))
    n = night.n
    starts = np.arange(night.t0, night.t1, step_s)
    path: list[tuple[int, float]] = []

    def grow(prev, t, done, last):
        on_plan(path)
        for i in range(n):
            if not night.active[i] or done[i] >= night.repeats[i]:
                continue
            for s in starts[starts >= t - 1e-9]:
                if s - last[i] < night.spacing_s[i] - 1e-6:
                    continue
                slew = night.slew.settle_s if prev < 0 else realise.slew_at(night, prev, i, s)
                end = s + slew + night.setup_s + night.exposure_s[i]
                own = night.win_target == i
                if not np.any((night.win_start[own] <= s + 1e-6)
                              & (night.win_end[own] >= end - 1e-6)):
                    continue
                x = float(night.airmass_at(np.array([i]),
                                           np.array([end - night.exposure_s[i] / 2]))[0])
                done[i] += 1
                saved, last[i] = last[i], s
                path.append((i, max(x / night.best_airmass[i] - 1.0, 0.0)))
                grow(i, end, done, last)
                path.pop()
                done[i] -= 1
                last[i] = saved
                if earliest:
                    break

    grow(-1, night.t0, np.zeros(n, int), np.full(n, -np.inf))


def count_vectors_by_enumeration(req, step_s=60.0) -> set[tuple[int, ...]]:
    """The visits per priority level (lowest level first) of every plan whose starts lie on
    a ``step_s`` grid (:func:`each_plan`, earliest starts)."""
    night = PlanNight(req, PlanOptions(airmass_slack=None))
    levels = sorted(set(night.priority[night.active].tolist()))
    seen: set[tuple[int, ...]] = set()

    def count(path):
        got = [night.priority[i] for i, _ in path]
        seen.add(tuple(int(sum(1 for p in got if p == q)) for q in levels))

    each_plan(req, count, step_s, earliest=True)
    return seen


def count_bound_cases():
    for seed in range(6):
        yield tiny_request(60 + seed, n=5, hours=0.4)
    # One top-priority target with a 10-minute exposure and three lower ones of 1 minute,
    # all in the same 12 minutes (setup 60 s, settle 10 s): three short visits fit, or the
    # long one alone.
    curves = [lambda h: 1.2 + 0.1 * h] * 4
    yield curve_request(curves, [(i, 0.0, 0.2) for i in range(4)], [600.0] + [60.0] * 3,
                        [2, 1, 1, 1], [10.0, 20.0, 30.0, 40.0], 0.25)


@pytest.mark.parametrize("case", range(7))
def test_the_count_bound_is_above_every_plan_level_by_level(case):
    from skyplan.planning.bound import count_bound

    req = list(count_bound_cases())[case]
    night = PlanNight(req, PlanOptions(airmass_slack=None))
    levels = sorted(set(night.priority[night.active].tolist()))
    vectors = count_vectors_by_enumeration(req)
    assert len(vectors) > 1
    for step in (night.step_s, 2 * night.step_s):
        for k, p in enumerate(levels):
            free = count_bound(night, p, {}, step)
            for floor in {v[k + 1:] for v in vectors}:  # counts kept at the higher levels
                keep = [v for v in vectors if all(a >= b for a, b in zip(v[k + 1:], floor))]
                most = max(sum(v[k:]) for v in keep)
                floors = dict(zip(levels[k + 1:], floor, strict=True))
                bound = count_bound(night, p, floors, step)
                assert most - 1e-6 <= bound <= free + 1e-6, (p, floor)
    if case == 6:  # three short visits, or the long one: keeping it leaves room for none
        assert vectors == {(0, 0), (1, 0), (2, 0), (3, 0), (0, 1)}
        assert count_bound(night, 1, {}, night.step_s) >= 3.0
        # the relaxation rounds the long visit down to 5 two-minute slots, so one short
        # visit (rounded down to 1 slot) still fits beside it: 2 instead of 3
        assert count_bound(night, 1, {2: 1}, night.step_s) == pytest.approx(2.0)
