"""Tests of the night plan (skyplan.planning.dispatch, skyplan.planning.reservations).

The rules every plan must obey are checked from their definitions, recomputed here
independently of the engine: visits never overlap, each whole visit (slew, setup, exposure)
lies in one window of its target, repeats keep their spacing, near-Sun targets stay out, and
each visit's slew follows the slew model (the slower axis, azimuth the shorter way round, plus
the settle time).  The greedy reservation is checked against brute-force enumeration of every
feasible set of starts on tiny problems (the optimising method has its own brute-force checks
in tests/test_plan_solver.py).

Synthetic skies: altitude from sin(alt) = sin(phi) sin(dec) + cos(phi) cos(dec) cos(H) and
azimuth from tan(A) = sin(H) / (cos(H) sin(phi) - tan(dec) cos(phi)) (Meeus 1998, Astronomical
Algorithms, eq. 13.5-13.6, azimuth reckoned there from the south), airmass sec(z).
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest

from skyplan import notices
from skyplan.errors import InputError
from skyplan.planning.dispatch import make_plan
from skyplan.planning.model import (
    REASONS,
    PlanNight,
    PlanOptions,
    PlanRequest,
    SlewModel,
    typical_slew_s,
)
from skyplan.planning.reservations import build_slot_model, reserve_greedy

T0 = 1_750_000_000.0
EPS = 1e-6
SLEW = SlewModel(rate_az_deg_s=3.0, rate_alt_deg_s=2.0, settle_s=10.0)


def sky(n: int, hours: float, step_s: float, rng, lst0_h: float = 20.0):
    """Alt/az/airmass on a slot grid for n random targets seen from latitude 40 deg N."""
    phi = math.radians(40.0)
    slot = T0 + np.arange(0.0, hours * 3600.0 + 0.5, step_s)
    # 1.00273790935 sidereal hours per solar hour (IERS Conventions 2010, ch. 5)
    lst = lst0_h + 1.00273790935 * (slot - T0) / 3600.0
    ra = rng.uniform(0.0, 24.0, n)
    dec = np.arcsin(rng.uniform(math.sin(math.radians(-20.0)), 1.0, n))
    h = np.radians(15.0 * (lst[None, :] - ra[:, None]))
    sin_alt = math.sin(phi) * np.sin(dec)[:, None] + math.cos(phi) * np.cos(dec)[:, None] * np.cos(
        h
    )
    alt = np.degrees(np.arcsin(np.clip(sin_alt, -1.0, 1.0)))
    az = np.degrees(
        np.arctan2(np.sin(h), np.cos(h) * math.sin(phi) - np.tan(dec)[:, None] * math.cos(phi))
    )
    az = (az + 180.0) % 360.0
    with np.errstate(divide="ignore"):
        airmass = np.where(alt > 0, 1.0 / np.sin(np.radians(alt)), np.inf)
    return slot, alt, az, airmass


def windows_above(slot, alt, min_alt_deg, rng=None):
    """Runs of slots above min_alt; with rng, some runs get a random cut (two windows)."""
    up = alt >= min_alt_deg
    edges = np.diff(np.pad(up.astype(int), ((0, 0), (1, 1))), axis=1)
    rows, on = np.nonzero(edges == 1)
    _, off = np.nonzero(edges == -1)
    wt, ws, we = list(rows), list(slot[on]), list(slot[off - 1])
    if rng is not None:
        for k in range(len(wt)):
            if we[k] - ws[k] > 3600 and rng.random() < 0.3:
                cut = rng.uniform(ws[k] + 600, we[k] - 600)
                wt.append(wt[k])
                ws.append(cut + 300.0)
                we.append(we[k])
                we[k] = cut
    return np.array(wt, dtype=int), np.array(ws), np.array(we)


def random_request(seed: int, n: int = 20, hours: float = 4.0, step_s: float = 120.0, **over):
    rng = np.random.default_rng(seed)
    slot, alt, az, airmass = sky(n, hours, step_s, rng, lst0_h=rng.uniform(0, 24))
    wt, ws, we = windows_above(slot, alt, 30.0, rng)
    inside = np.zeros(alt.shape, bool)
    for i, a, b in zip(wt, ws, we, strict=True):
        inside[i] |= (slot >= a) & (slot <= b)
    repeats = rng.choice([1, 1, 2, 3], n)
    fields = dict(
        slot_unix=slot,
        win_target=wt,
        win_start_unix=ws,
        win_end_unix=we,
        exposure_s=rng.choice([60.0, 180.0, 300.0, 600.0, 900.0], n),
        repeats=repeats,
        spacing_s=np.where(repeats > 1, rng.choice([0.0, 900.0, 1800.0], n), 0.0),
        priority=rng.integers(1, 4, n),
        best_airmass=np.where(inside, airmass, np.inf).min(axis=1),
        sun_flag=rng.random(n) < 0.1,
        airmass=airmass,
        alt_deg=alt,
        az_deg=az,
        setup_s=45.0,
        slew=SLEW,
    )
    fields.update(over)
    return PlanRequest(**fields)


def interp_row(values, slot, t):
    """Linear interpolation in time on one target's finite samples (np.interp)."""
    ok = np.isfinite(values)
    return float(np.interp(t, slot[ok], values[ok]))


def pointing(req, i, t):
    alt = interp_row(req.alt_deg[i], req.slot_unix, t)
    az = np.degrees(np.unwrap(np.radians(req.az_deg[i])))
    return alt, interp_row(az, req.slot_unix, t) % 360.0


def expected_slew(req, prev, i, t):
    """The slew model from its definition: slower axis, shorter way round, plus settle."""
    if prev is None:
        return req.slew.settle_s  # first visit of the night: settle only (documented choice)
    alt0, az0 = pointing(req, prev, t)
    alt1, az1 = pointing(req, i, t)
    daz = abs(az1 - az0) % 360.0
    daz = min(daz, 360.0 - daz)
    return max(daz / req.slew.rate_az_deg_s, abs(alt1 - alt0) / req.slew.rate_alt_deg_s) + (
        req.slew.settle_s
    )


def assert_valid(req: PlanRequest, opt: PlanOptions, plan) -> None:
    """Every rule of a plan, recomputed from the request."""
    n = len(req.exposure_s)
    night0, night1 = req.slot_unix[0], req.slot_unix[-1]
    wt = np.asarray(req.win_target)
    ws = np.maximum(req.win_start_unix, night0)
    we = np.minimum(req.win_end_unix, night1)
    prev = None
    last_end = -np.inf
    starts: dict[int, list[float]] = {}
    for v in plan.visits:
        i = v.target
        assert v.start_unix >= last_end - EPS, "visits overlap"
        assert v.slew_s == pytest.approx(expected_slew(req, prev, i, v.start_unix), abs=1e-6)
        assert v.setup_s == req.setup_s
        assert v.exposure_start_unix == pytest.approx(v.start_unix + v.slew_s + v.setup_s)
        assert v.end_unix == pytest.approx(v.exposure_start_unix + req.exposure_s[i])
        inside = (wt == i) & (ws <= v.start_unix + EPS) & (we >= v.end_unix - EPS)
        assert inside.any(), f"visit of target {i} not inside one of its windows"
        mid = v.exposure_start_unix + req.exposure_s[i] / 2
        assert v.airmass_mid == pytest.approx(interp_row(req.airmass[i], req.slot_unix, mid))
        assert opt.allow_near_sun or not req.sun_flag[i], "near-Sun target placed"
        assert opt.priority_cut is None or req.priority[i] >= opt.priority_cut
        starts.setdefault(i, []).append(v.start_unix)
        assert v.repeat == len(starts[i])
        prev, last_end = i, v.end_unix
    if opt.airmass_slack is not None and plan.visits:
        # The slack rule: below the top priority of the targets that could be placed, a visit's
        # airmass is at most best * (1 + slack).
        top = top_priority(req, opt)
        for v in plan.visits:
            if req.priority[v.target] < top:
                ceiling = req.best_airmass[v.target] * (1 + opt.airmass_slack)
                assert v.airmass_mid <= ceiling + 1e-9, "visit above its airmass ceiling"
    for i, s in starts.items():
        assert len(s) <= req.repeats[i]
        assert np.all(np.diff(s) >= req.spacing_s[i] - EPS), "repeats closer than the spacing"
        if len(s) < req.repeats[i]:
            assert plan.missing_repeats[i] == req.repeats[i] - len(s)
    assert set(plan.not_placed) == set(range(n)) - set(starts)
    assert set(plan.not_placed.values()) <= set(REASONS)
    assert plan.metrics.placed == len(starts)


def top_priority(req: PlanRequest, opt: PlanOptions) -> int:
    """The highest priority of the targets that could be placed (a window long enough, allowed)."""
    wt = np.asarray(req.win_target)
    ws = np.maximum(req.win_start_unix, req.slot_unix[0])
    we = np.minimum(req.win_end_unix, req.slot_unix[-1])
    work = req.slew.settle_s + req.setup_s + np.asarray(req.exposure_s)
    allowed = np.zeros(len(req.exposure_s), bool)
    allowed[wt[we - ws >= work[wt] - EPS]] = True
    allowed &= opt.allow_near_sun | ~np.asarray(req.sun_flag, bool)
    if opt.priority_cut is not None:
        allowed &= np.asarray(req.priority) >= opt.priority_cut
    return int(np.max(np.asarray(req.priority)[allowed]))


def plan_worth(req, visits):
    """The objective of docs/planning.md from its definition: the sum over visits of
    w * (1 - 0.2 * (1 - 1 / (1 + 4 r))), r = airmass / best - 1, w = 10 ** (rank of the
    visit's priority among the levels of the targets that can be placed, lowest 0)."""
    levels = sorted(set(np.asarray(req.priority)[placeable(req)].tolist()))
    total = 0.0
    for v in visits:
        r = max(v.airmass_mid / req.best_airmass[v.target] - 1.0, 0.0)
        w = 10.0 ** levels.index(int(req.priority[v.target]))
        total += w * (1.0 - 0.2 * (1.0 - 1.0 / (1.0 + 4.0 * r)))
    return total


def placeable(req):
    """Targets with a window long enough for one visit and not flagged near the Sun."""
    wt = np.asarray(req.win_target)
    ws = np.maximum(req.win_start_unix, req.slot_unix[0])
    we = np.minimum(req.win_end_unix, req.slot_unix[-1])
    work = req.slew.settle_s + req.setup_s + np.asarray(req.exposure_s)
    ok = np.zeros(len(req.exposure_s), bool)
    ok[wt[we - ws >= work[wt] - EPS]] = True
    return ok & ~np.asarray(req.sun_flag, bool)


def lex_value(req, visits):
    """(visits per priority, highest first, ..., -total airmass excess) of realised visits."""
    levels = sorted(set(np.asarray(req.priority).tolist()), reverse=True)
    counts = [sum(req.priority[v.target] == p for v in visits) for p in levels]
    return (*counts, -sum(v.airmass_mid - req.best_airmass[v.target] for v in visits))


# -- the slew model -------------------------------------------------------------------------


def test_slew_takes_the_shorter_way_round_and_the_slower_axis():
    # Definition: max(|d az| / rate_az, |d alt| / rate_alt) + settle, |d az| the shorter arc.
    m = SlewModel(rate_az_deg_s=2.0, rate_alt_deg_s=1.0, settle_s=5.0)
    assert m.slew_s(40.0, 350.0, 40.0, 10.0) == pytest.approx(20.0 / 2.0 + 5.0)
    assert m.slew_s(20.0, 0.0, 50.0, 30.0) == pytest.approx(30.0 / 1.0 + 5.0)
    assert m.slew_s(30.0, 90.0, 30.0, 270.0) == pytest.approx(180.0 / 2.0 + 5.0)
    assert m.longest_s() == pytest.approx(max(180.0 / 2.0, 90.0 / 1.0) + 5.0)


# -- rules on random problems ---------------------------------------------------------------


@pytest.mark.parametrize("seed", range(12))
def test_dispatch_plans_obey_every_rule(seed):
    req = random_request(seed, n=25)
    opt = PlanOptions(method="dispatch")
    plan = make_plan(req, opt)
    assert_valid(req, opt, plan)
    assert plan.visits, "a 4-hour night with 25 targets should hold some visits"


@pytest.mark.parametrize("seed", range(6))
def test_optimiser_plans_obey_every_rule_and_never_rank_below_dispatch(seed):
    req = random_request(100 + seed, n=14, hours=3.0)
    opt = PlanOptions(method="optimal", time_limit_s=10.0)
    plan = make_plan(req, opt)
    assert_valid(req, opt, plan)
    dispatch = make_plan(req, PlanOptions(method="dispatch"))
    # The plan's objective (docs/planning.md), recomputed here: never below the dispatch plan's.
    assert plan_worth(req, plan.visits) >= plan_worth(req, dispatch.visits) - 1e-9


@pytest.mark.parametrize("seed", range(4))
def test_other_grid_steps_and_options(seed):
    req = random_request(200 + seed, n=18, step_s=60.0)
    for opt in (
        PlanOptions(method="dispatch", priority_cut=2),
        PlanOptions(method="dispatch", allow_near_sun=True),
        PlanOptions(method="optimal", time_limit_s=10.0, priority_cut=2, allow_near_sun=True),
    ):
        assert_valid(req, opt, make_plan(req, opt))


def test_identical_inputs_give_identical_plans():
    req = random_request(7, n=14, hours=3.0)
    for method in ("dispatch", "optimal"):
        opt = PlanOptions(method=method, time_limit_s=30.0)
        first, second = make_plan(req, opt), make_plan(req, opt)
        assert first.visits == second.visits
        assert first.not_placed == second.not_placed
        assert first.metrics == second.metrics


# -- priority, the Sun, reasons -----------------------------------------------------------


@pytest.mark.parametrize("seed", range(8))
@pytest.mark.parametrize("method", ["dispatch", "optimal"])
def test_a_feasible_top_priority_target_is_always_placed(seed, method):
    base = random_request(300 + seed, n=20)
    n = len(base.exposure_s)
    rng = np.random.default_rng(seed)
    top = int(rng.integers(0, n))
    # Give it one window of an hour somewhere in the night and the highest priority.
    a = base.slot_unix[0] + rng.uniform(0, 2.5) * 3600
    keep = base.win_target != top
    priority = np.asarray(base.priority).copy()
    priority[top] = 99
    sun = np.asarray(base.sun_flag).copy()
    sun[top] = False
    airmass = np.where(np.isfinite(base.airmass), base.airmass, 3.0)
    req = PlanRequest(
        **{
            **base.__dict__,
            "win_target": np.r_[base.win_target[keep], top],
            "win_start_unix": np.r_[base.win_start_unix[keep], a],
            "win_end_unix": np.r_[base.win_end_unix[keep], a + 3600.0],
            "priority": priority,
            "sun_flag": sun,
            "airmass": airmass,
            "best_airmass": np.minimum(base.best_airmass, 3.0),
        }
    )
    opt = PlanOptions(method=method, time_limit_s=2.0)
    plan = make_plan(req, opt)
    assert_valid(req, opt, plan)
    assert top in {v.target for v in plan.visits}


def two_target_night(sun_flag, priority=(1, 1), exposure=(300.0, 300.0), win_len=1800.0):
    rng = np.random.default_rng(1)
    slot, alt, az, airmass = sky(2, 2.0, 120.0, rng)
    airmass = np.where(np.isfinite(airmass), airmass, 5.0)
    return PlanRequest(
        slot_unix=slot,
        win_target=np.array([0, 1]),
        win_start_unix=np.array([T0 + 600.0, T0 + 600.0]),
        win_end_unix=np.array([T0 + 600.0 + win_len, T0 + 600.0 + win_len]),
        exposure_s=np.array(exposure),
        repeats=np.array([1, 1]),
        spacing_s=np.zeros(2),
        priority=np.array(priority),
        best_airmass=airmass.min(axis=1),
        sun_flag=np.array(sun_flag),
        airmass=airmass,
        alt_deg=alt,
        az_deg=az,
        setup_s=30.0,
        slew=SLEW,
    )


@pytest.mark.parametrize("method", ["dispatch", "optimal"])
def test_near_sun_targets_only_with_the_override(method):
    req = two_target_night(sun_flag=[True, False])
    plan = make_plan(req, PlanOptions(method=method))
    assert {v.target for v in plan.visits} == {1}
    assert plan.not_placed == {0: "near_sun"}
    override = make_plan(req, PlanOptions(method=method, allow_near_sun=True))
    assert {v.target for v in override.visits} == {0, 1}


def test_reason_codes():
    # No window at all, a window shorter than settle + setup + exposure, a priority cut,
    # and a night too short for both of two visits competing for one window.
    req = two_target_night([False, False])
    no_window = PlanRequest(**{**req.__dict__, "win_target": np.array([1, 1])})
    assert make_plan(no_window).not_placed == {0: "no_window"}
    short = two_target_night([False, False], exposure=(2000.0, 300.0))
    assert make_plan(short).not_placed == {0: "too_short"}
    cut = two_target_night([False, False], priority=(1, 2))
    assert make_plan(cut, PlanOptions(priority_cut=2)).not_placed == {0: "below_priority_cut"}
    crowded = two_target_night(
        [False, False], priority=(1, 2), exposure=(700.0, 700.0), win_len=1000.0
    )
    for method in ("dispatch", "optimal"):
        plan = make_plan(crowded, PlanOptions(method=method))
        assert plan.not_placed == {0: "no_room"}, "the higher priority takes the only room"
        assert plan.metrics.placed == 1 and plan.metrics.possible == 2


def test_bad_values_are_input_errors():
    req = two_target_night([False, False])
    bad = PlanRequest(**{**req.__dict__, "exposure_s": np.array([0.0, 300.0])})
    with pytest.raises(InputError) as err:
        make_plan(bad)
    assert err.value.field == "exposure_s"
    with pytest.raises(InputError):
        make_plan(req, PlanOptions(method="best"))


def test_optimiser_without_time_falls_back_to_dispatch_with_a_notice():
    notices.take()
    req = random_request(11, n=10)
    plan = make_plan(req, PlanOptions(method="optimal", time_limit_s=0.0))
    assert plan.metrics.method == "dispatch" and not plan.metrics.proven_optimal
    assert any("dispatch" in line for line in notices.take())
    assert plan.visits == make_plan(req, PlanOptions(method="dispatch")).visits


def test_solver_report_when_given_time():
    req = random_request(12, n=12, hours=3.0)
    plan = make_plan(req, PlanOptions(method="optimal", time_limit_s=30.0))
    m = plan.metrics
    # The gap is that of the plan returned against a proven upper bound (docs/planning.md):
    # the bound is above the plan's value, and "proven optimal" means a gap of at most 1e-4.
    assert m.gap is not None and m.gap >= 0.0
    assert m.dual_bound >= m.solver_objective - 1e-9
    assert m.gap == pytest.approx((m.dual_bound - m.solver_objective) / m.dual_bound)
    assert m.solver_objective == pytest.approx(plan_worth(req, plan.visits))
    assert m.proven_optimal == (m.gap <= 1e-4)
    assert m.objective == pytest.approx(-lex_value(req, plan.visits)[-1])


# -- the greedy reservation against brute force ---------------------------------------------

# Airmass per top-priority visit that the brute force's ordering lets the lower levels add to
# the top priority's least excess (the ordering the former lexicographic program defined).
TOP_EXCESS_TOLERANCE = 0.003


def brute_force(req, stride=1, allowance=None, slack=None):
    """Best value over every feasible set of starts, by enumeration: ``(top count, top excess,
    (visits per lower priority, highest first), -total excess)``.

    The slot model from its definition: the grid is every ``stride``-th sample; a visit
    starting at slot s covers ceil((allowance + setup + exposure) / step) slots (settle
    instead of the allowance at slot 0; the allowance is the longest slew unless given), must
    lie inside one window, and costs the airmass at mid-exposure (slew = allowance) minus the
    best airmass.  With a slack, targets below the top priority keep only the starts whose
    airmass is at most best * (1 + slack).  The priorities ranked are those of the targets
    with at least one start, highest first.  The order, as the optimiser defines it: the most
    top-priority visits; among those sets the least top-priority excess E; then, over the sets
    with that count and a top-priority excess <= E + tolerance * count, the most visits per
    lower priority, then the least total excess.
    """
    slot = np.asarray(req.slot_unix)[::stride]
    step = (req.slot_unix[-1] - req.slot_unix[0]) / (len(req.slot_unix) - 1) * stride
    longest = req.slew.longest_s() if allowance is None else allowance
    settle = req.slew.settle_s
    top = max(req.priority)
    options = []
    for i in range(len(req.exposure_s)):
        work = req.setup_s + req.exposure_s[i]
        ceiling = math.inf
        if slack is not None and req.priority[i] < top:
            ceiling = req.best_airmass[i] * (1 + slack)
        starts = []
        for s in range(len(slot)):
            slew = settle if s == 0 else longest
            block = math.ceil((slew + work) / step - 1e-9)
            t0, t1 = slot[s], slot[s] + block * step
            windows = zip(req.win_target, req.win_start_unix, req.win_end_unix, strict=True)
            if any(
                w == i and a <= t0 + EPS and t1 <= min(b, req.slot_unix[-1]) + EPS
                for w, a, b in windows
            ):
                mid = slot[s] + slew + work - req.exposure_s[i] / 2
                airmass = interp_row(req.airmass[i], req.slot_unix, mid)
                if airmass <= ceiling:
                    starts.append((s, block, airmass - req.best_airmass[i]))
        sp = math.ceil(req.spacing_s[i] / step - 1e-9)
        choices = [()]
        for r in range(1, req.repeats[i] + 1):
            for combo in itertools.combinations(starts, r):
                if all(b[0] - a[0] >= max(sp, 1) for a, b in itertools.pairwise(combo)):
                    choices.append(combo)
        options.append(choices)
    levels = sorted({int(req.priority[i]) for i, c in enumerate(options) if len(c) > 1})[::-1]
    sets = []  # (top count, top excess, lower counts, total excess) of every feasible set
    for pick in itertools.product(*options):
        used, clash = 0, False
        for combo in pick:
            for s, block, _ in combo:
                mask = ((1 << block) - 1) << s  # the slots s .. s + block - 1
                clash |= bool(used & mask)
                used |= mask
        if clash:
            continue
        counts = [sum(len(c) for i, c in enumerate(pick) if req.priority[i] == p) for p in levels]
        top = sum(c[-1] for i, cs in enumerate(pick) if req.priority[i] == levels[0] for c in cs)
        total = sum(cost for c in pick for *_, cost in c)
        sets.append((counts[0], top, tuple(counts[1:]), total))
    most = max(v[0] for v in sets)
    least = min(v[1] for v in sets if v[0] == most)
    allowed = [v for v in sets if v[0] == most and v[1] <= least + TOP_EXCESS_TOLERANCE * most]
    lower, total = max((v[2], -v[3]) for v in allowed)
    return most, least, lower, -total


def tiny_request(seed):
    rng = np.random.default_rng(seed)
    n = 3
    slot, alt, az, airmass = sky(n, 0.75, 120.0, rng)
    airmass = (
        1.0
        + rng.uniform(0.0, 0.5, (n, 1))
        + 0.2 * np.sin(rng.uniform(0, 6, (n, 1)) + (slot - T0)[None, :] / 900.0)
    )
    wt = np.arange(n)
    ws = T0 + rng.uniform(0, 900, n)
    we = np.minimum(ws + rng.uniform(600, 1800, n), slot[-1])
    return PlanRequest(
        slot_unix=slot,
        win_target=wt,
        win_start_unix=ws,
        win_end_unix=we,
        exposure_s=rng.choice([60.0, 180.0, 300.0], n),
        repeats=rng.permutation([1, 1, int(rng.integers(1, 3))]),  # 3 or 4 visits
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


@pytest.mark.parametrize("seed", range(20))
@pytest.mark.parametrize("coarse", [False, True])
def test_greedy_reservation_against_brute_force_on_tiny_problems(seed, coarse):
    # Default grid and worst-case allowance, and the plan's own setting: a grid of every other
    # sample, the typical slew as the allowance and the airmass slack.
    req = tiny_request(seed)
    slack = 0.15 if coarse else None
    night = PlanNight(req, PlanOptions(airmass_slack=slack))
    step = 2 * (req.slot_unix[1] - req.slot_unix[0]) if coarse else None
    allowance = typical_slew_s(night, 0.5) if coarse else None
    model = build_slot_model(night, step, allowance)
    most, least, _, _ = brute_force(req, 2 if coarse else 1, allowance, slack)
    levels = np.unique(model.priority[model.var_target])[::-1]
    # The greedy reservation has no more top-priority visits than the best set, and with as
    # many, no less excess.
    greedy = reserve_greedy(model)
    g_top = model.priority[model.var_target[greedy]] == levels[0]
    assert g_top.sum() <= most
    assert g_top.sum() < most or model.var_cost[greedy][g_top].sum() >= least - 1e-9


# -- plan quality: a short early window, the airmass slack -----------------------------------


def curve_request(airmass, windows, exposure_s, priority, az_deg, hours, step_s=120.0):
    """A request from given airmass curves; altitude from airmass = 1 / sin(alt) (sec z)."""
    slot = T0 + np.arange(0.0, hours * 3600.0 + 0.5, step_s)
    x = np.array([f((slot - T0) / 3600.0) for f in airmass])
    alt = np.degrees(np.arcsin(1.0 / x))
    n = len(airmass)
    inside = np.zeros(x.shape, bool)
    for i, a, b in windows:
        inside[i] |= (slot >= T0 + a * 3600.0) & (slot <= T0 + b * 3600.0)
    return PlanRequest(
        slot_unix=slot,
        win_target=np.array([w[0] for w in windows]),
        win_start_unix=T0 + 3600.0 * np.array([w[1] for w in windows]),
        win_end_unix=T0 + 3600.0 * np.array([w[2] for w in windows]),
        exposure_s=np.asarray(exposure_s, float),
        repeats=np.ones(n, int),
        spacing_s=np.zeros(n),
        priority=np.asarray(priority),
        best_airmass=np.where(inside, x, np.inf).min(axis=1),
        sun_flag=np.zeros(n, bool),
        airmass=x,
        alt_deg=alt,
        az_deg=np.repeat(np.asarray(az_deg, float)[:, None], slot.size, axis=1),
        setup_s=60.0,
        slew=SlewModel(rate_az_deg_s=2.0, rate_alt_deg_s=2.0, settle_s=10.0),
    )


@pytest.mark.parametrize("slack", [None, 0.15])
def test_a_short_window_at_dusk_is_placed_when_the_night_has_room(slack):
    # A low-priority target setting at dusk (a 70-minute window, a 10-minute exposure) among
    # 40 higher-priority targets that are best at dusk too but stay up all night; they fill
    # about 5 of the 9 hours, so the plan has hours of idle time and the dusk target fits.
    # The model is larger than the solver's variable budget, so this also exercises pruning.
    n = 41
    rng = np.random.default_rng(5)
    curves = [lambda h: 1.75 + 0.3 * h]
    curves += [lambda h, a=a: a + 0.012 * h for a in rng.uniform(1.0, 1.3, n - 1)]
    windows = [(0, 0.0, 70 / 60)] + [(i, 0.0, 9.0) for i in range(1, n)]
    exposure = [600.0] + [300.0] * (n - 1)
    req = curve_request(curves, windows, exposure, [1] + [2] * (n - 1), rng.uniform(0, 360, n), 9.0)
    opt = PlanOptions(method="optimal", time_limit_s=10.0, airmass_slack=slack)
    plan = make_plan(req, opt)
    assert_valid(req, opt, plan)
    assert len(plan.visits) == n and plan.not_placed == {}
    assert req.slot_unix[-1] - plan.visits[-1].end_unix > 2 * 3600.0, "the night had room"


@pytest.mark.parametrize("method", ["dispatch", "optimal"])
def test_the_airmass_slack_leaves_out_a_visit_only_possible_at_poor_airmass(method):
    # Target 0 (top priority) needs 60 of the night's 90 minutes and always covers minutes
    # 30-60; target 1 (lower priority) is below airmass 1.15 only in minutes 37.5-52.5, so
    # with a slack of 0.15 it has no place, although the night has room for it elsewhere.
    # Target 0 has no ceiling: the slack never applies to the top priority.
    curves = [lambda h: 1.2 + 0.0 * h, lambda h: 1.0 + 1.2 * np.abs(h - 0.75)]
    windows = [(0, 0.0, 1.5), (1, 0.0, 1.5)]
    req = curve_request(curves, windows, [3500.0, 300.0], [2, 1], [180.0, 190.0], 1.5, 60.0)
    slack = PlanOptions(method=method, time_limit_s=10.0, airmass_slack=0.15)
    plan = make_plan(req, slack)
    assert_valid(req, slack, plan)
    assert [v.target for v in plan.visits] == [0]
    assert plan.not_placed == {1: "poor_airmass"}
    free = PlanOptions(method=method, time_limit_s=10.0, airmass_slack=None)
    plan = make_plan(req, free)
    assert_valid(req, free, plan)
    assert {v.target for v in plan.visits} == {0, 1}
    assert max(v.airmass_mid for v in plan.visits if v.target == 1) > 1.15


def test_a_negative_airmass_slack_is_an_input_error():
    req = two_target_night([False, False])
    with pytest.raises(InputError) as err:
        make_plan(req, PlanOptions(airmass_slack=-0.1))
    assert err.value.field == "airmass_slack"
