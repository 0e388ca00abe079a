"""Night plan: the order and times of visits, from per-target windows and airmass curves.

No astronomy happens here.  The caller gives a uniform slot grid over the usable night, the
windows of every target, and each target's airmass, altitude and azimuth sampled on that grid;
this module decides which visits to make and when.  Time is POSIX seconds UTC ("unix").

A visit is one block ``[start, end]``: the slew, then the setup, then the exposure.  Every plan
obeys three rules, whatever the method:

* visits never overlap, and the whole block lies inside one window of its target;
* consecutive repeats of a target start at least ``spacing_s`` apart (start to start);
* a target flagged as near the Sun is never placed unless the options allow it.

Quality is lexicographic: more visits of the highest priority first, then of the next
priority, and so on; then the lowest total airmass excess ``airmass_mid - best_airmass``.
The airmass slack (``PlanOptions.airmass_slack``, default 0.15) bounds what a count may cost:
below the top priority of the targets that can be placed, a visit is made only at airmass
``<= best_airmass * (1 + slack)``; a target left out by that rule although an idle gap of the
plan could hold it gets the reason ``"poor_airmass"``.  The top priority has that ceiling too
when its visits cannot all be placed tonight (:func:`skyplan.planning.bound.visits_fit`), and
none otherwise.

Choices made here (documented once, relied on everywhere):

* The slot grid samples the usable night including both ends, so the night is
  ``[slot_unix[0], slot_unix[-1]]``; windows are clipped to it.  Between samples, airmass,
  altitude and azimuth are interpolated linearly in time (azimuth along the shorter arc).
* Slew time between two pointings is ``max(|d az| / rate_az, |d alt| / rate_alt) + settle``,
  with ``|d az|`` taken the shorter way round (the mount is assumed free to turn either way).
  Both pointings are taken at the moment the slew begins; between visits the telescope keeps
  tracking the previous target.
* The first visit of the night costs the settle time only: the telescope is assumed to be
  pointed at it during twilight, before the usable night begins.
* A visit's airmass is the airmass at the middle of its exposure.

How the dispatch plan is made (``"optimal"`` starts from it, see :mod:`skyplan.planning.solver`
and docs/planning.md for the objective both are judged by):

1. Reservations on a coarser slot grid (:mod:`skyplan.planning.reservations`), about 5 minutes (a
   whole number of the request's steps).  A reserved visit covers ``ceil((allowance + setup +
   exposure) / step)`` slots, the allowance being the median slew between targets that are
   up at the same time (:func:`typical_slew_s`); the forward pass absorbs the rarer longer
   slews.  Visits are reserved greedily, in priority order, each at its cheapest free start.
2. A forward pass (:func:`_forward`) walks the night with the actual slews.  A reserved visit
   starts at its slot, up to one block earlier when the telescope would otherwise stand idle,
   or later when the previous visit overran; a reservation that no longer fits its window
   goes back to the pool.  The gaps are filled greedily (highest priority first, then the
   visit nearest the best airmass it can still reach).
3. An improvement pass (:func:`_improve`) moves every visit inside its free gap toward its
   lowest airmass.

``"optimal"`` returns the plan worth the most among the dispatch plan and the plans realised
from the time-indexed models, with the gap of that plan against a proven upper bound.
"""

from __future__ import annotations

import numpy as np

from skyplan import notices
from skyplan.errors import InputError
from skyplan.planning import mountfit
from skyplan.planning.merit import priority_weights
from skyplan.planning.model import (
    AIRMASS_SLACK,
    EPS_S,
    METHODS,
    REASONS,
    Plan,
    PlanMetrics,
    PlanNight,
    PlanOptions,
    PlanRequest,
    SlewModel,
    Visit,
    typical_slew_s,
)
from skyplan.planning.reservations import SlotModel, build_slot_model, reserve_greedy

# the plan's data live in :mod:`skyplan.planning.model`; named here too for callers of this module
__all__ = ["AIRMASS_SLACK", "METHODS", "REASONS", "Plan", "PlanMetrics", "PlanOptions",
           "PlanRequest", "SlewModel", "Visit", "make_plan", "typical_slew_s"]

# The reservations' slot step and slew allowance (measured on the synthetic nights) and the
# improvement sweeps.
_IP_STEP_S = 300.0
_ALLOWANCE_QUANTILE = 0.5
_SWEEPS = 3


def make_plan(request: PlanRequest, options: PlanOptions | None = None) -> Plan:
    """Plan one night: choose the visits and their times.

    Deterministic for the same inputs while every solve ends inside the time limit (HiGHS with
    fixed options); one stopped by the limit returns the best found by then, which depends on
    the machine's speed and load (the gap then says how far the plan may be from the best).
    """
    options = options or PlanOptions()
    if options.method not in METHODS:
        raise InputError(f"unknown method {options.method!r}; use one of {METHODS}", field="method")
    if not options.time_limit_s >= 0:
        raise InputError("the time limit must be >= 0 seconds", field="time_limit_s")
    if options.airmass_slack is not None and not 0 <= options.airmass_slack < 100:
        raise InputError("the airmass slack must be a fraction >= 0", field="airmass_slack")
    night = plan_night(request, options)
    typical = typical_slew_s(night, _ALLOWANCE_QUANTILE)
    model = build_slot_model(night, _IP_STEP_S, typical)
    greedy = reserve_greedy(model)
    weight = priority_weights(night.priority, night.active)
    dispatch = mountfit.settle(night, _improve(night, _forward(night, model, greedy)), weight)
    if options.method == "dispatch":
        return _finish(night, dispatch, "dispatch", None)
    from skyplan.planning import solver

    outcome = solver.optimise(night, dispatch, options.time_limit_s, _improve, typical)
    if not outcome.solved:
        notices.add("the optimiser found no plan in time; the plan was made by dispatch")
    elif outcome.method == "dispatch":
        notices.add("the dispatch plan was worth more than the optimised one and was kept")
    return _finish(night, outcome.visits, outcome.method, outcome)


def plan_night(request: PlanRequest, options: PlanOptions) -> PlanNight:
    """The night as every method plans it (and as bounds on its plans must see it): the
    validated inputs, and the airmass slack given to the top priority too when its visits
    cannot all be placed tonight (:func:`bound.visits_fit`).  Then some of them are left out
    whatever the plan, and those taken are taken within the slack of their best airmass, as
    the lower priorities are, instead of as many as possible anywhere."""
    night = PlanNight(request, options)
    top = night.top_level()
    if night.airmass_slack is None or not top.any():
        return night
    from skyplan.planning import bound

    if not bound.visits_fit(night, top):
        night.keep_within_slack(top)
        notices.add("the top priority cannot all fit tonight, so it keeps the --airmass-slack "
                    "too")
    return night


def _forward(night: PlanNight, model: SlotModel, chosen: np.ndarray) -> list[tuple]:
    """Walk the night forward: realise the reserved visits and fill the gaps between them.

    At each free moment ``t``, among the visits that can start now and end before the next
    reservation (window, spacing and repeats all respected), the highest priority is placed,
    then the smallest regret (airmass at mid-exposure minus the lowest airmass the target can
    still reach in its windows), then the lowest index.  When nothing fits before the next
    reservation, that reserved visit starts now if it is at most one block early and still
    valid, else at its slot.  A reservation that would break a rule (impossible with the
    worst-case allowance; kept as a guard) goes back to the pool.  Returns
    ``(target, start, slew, exposure_start, end)`` tuples in time order.
    """
    n = night.n
    order = np.lexsort((model.var_target[chosen], model.var_slot[chosen]))
    res_i = model.var_target[chosen][order]
    res_t = model.slot_unix[model.var_slot[chosen][order]]
    res_early = model.var_block[chosen][order] * model.step_s
    remaining = np.where(night.active, night.repeats, 0) - np.bincount(res_i, minlength=n)
    upcoming = {int(i): list(res_t[res_i == i]) for i in np.unique(res_i)}
    next_res = np.full(n, np.inf)
    for i, times in upcoming.items():
        next_res[i] = times[0]
    last_start = np.full(n, -np.inf)
    wt, ws, we = night.win_target, night.win_start, night.win_end
    future_best = _future_best(night)
    visits: list[tuple] = []
    prev = -1
    t = float(ws.min()) if ws.size else night.t1

    def timing(i: np.ndarray, start: float) -> tuple[np.ndarray, np.ndarray]:
        if prev < 0:
            slew = np.full(i.shape, night.slew.settle_s)
        else:
            alt0, az0 = night.pointing_at(np.array([prev]), np.array([start]))
            alt1, az1 = night.pointing_at(i, np.full(i.shape, start))
            slew = night.slew.slew_s(alt0, az0, alt1, az1)
        return slew, start + slew + night.setup_s + night.exposure_s[i]

    def valid(i: np.ndarray, start: float, end: np.ndarray, deadline: float) -> np.ndarray:
        """Visits of targets i over [start, end]: inside a window, spaced, before deadline."""
        end_of = np.full(n, np.inf)
        end_of[i] = end
        inside = (ws <= start + EPS_S) & (we >= end_of[wt] - EPS_S)
        ok = np.zeros(n, bool)
        ok[wt[inside]] = True
        ok &= start >= last_start + night.spacing_s - EPS_S
        ok &= start <= next_res - night.spacing_s + EPS_S
        low = night.airmass_at(i, end - night.exposure_s[i] / 2) <= night.max_airmass[i]
        return ok[i] & low & (end <= deadline + EPS_S)

    def place(i: int, start: float, slew: float, end: float) -> None:
        nonlocal prev, t
        visits.append((i, start, slew, end - night.exposure_s[i], end))
        last_start[i] = start
        prev, t = i, end

    k = 0
    while True:
        deadline = res_t[k] if k < res_t.size else night.t1
        cand = np.flatnonzero(remaining > 0)
        slew, end = timing(cand, t)
        ok = valid(cand, t, end, deadline)
        if ok.any():
            cand, slew, end = cand[ok], slew[ok], end[ok]
            mid = end - night.exposure_s[cand] / 2
            regret = night.airmass_at(cand, mid) - future_best[cand, _slot_after(night, t)]
            j = np.lexsort((cand, regret, -night.priority[cand]))[0]
            remaining[cand[j]] -= 1
            place(int(cand[j]), t, float(slew[j]), float(end[j]))
            continue
        opens = ws[(ws > t + EPS_S) & (remaining[wt] > 0)]
        release = last_start + night.spacing_s
        release = release[(release > t + EPS_S) & (remaining > 0)]
        t_next = min((float(e.min()) for e in (opens, release) if e.size), default=np.inf)
        if k >= res_t.size or res_t[k] > t_next:
            if not np.isfinite(t_next):
                break
            t = t_next
            continue
        i, slot_t = int(res_i[k]), float(res_t[k])
        upcoming[i].pop(0)
        next_res[i] = upcoming[i][0] if upcoming[i] else np.inf
        early = 0.0 < slot_t - t <= res_early[k]
        for start in (t, slot_t) if early else (max(t, slot_t),):
            slew, end = timing(np.array([i]), start)
            if valid(np.array([i]), start, end, night.t1)[0]:
                place(i, start, float(slew[0]), float(end[0]))
                break
        else:
            remaining[i] += 1
        k += 1
    return visits


def _improve(night: PlanNight, raw: list[tuple]) -> list[tuple]:
    """Local search: move each visit inside its free gap toward its lowest airmass.

    A visit may start anywhere between the end of the previous visit and the latest start
    that still ends by the next one's start (on a grid of half the slot step, plus both
    ends).  Its own slew is recomputed from the previous target; the next visit's slew is
    unchanged, because it is taken at the next visit's start, from the previous target's
    pointing then.  A move is kept only if the visit stays inside one window, keeps the
    spacing from its target's other visits and its airmass ceiling, and lowers its airmass
    at mid-exposure.  Sweeps run in time order until nothing moves or ``sweeps`` are done.
    """
    visits = sorted(raw, key=lambda v: (v[1], v[0]))
    wt, ws, we = night.win_target, night.win_start, night.win_end
    for _ in range(_SWEEPS):
        moved = False
        for k, (i, start, _slew, _exp, end) in enumerate(visits):
            lo = visits[k - 1][4] if k else float(ws[wt == i].min())
            hi = visits[k + 1][1] if k + 1 < len(visits) else night.t1
            if hi - lo <= end - start + EPS_S:
                continue
            starts = np.unique(np.r_[np.arange(lo, hi, night.step_s / 2), hi, start])
            if k:
                prev = np.array([visits[k - 1][0]])
                alt0, az0 = night.pointing_at(prev, starts)
                alt1, az1 = night.pointing_at(np.array([i]), starts)
                slew = night.slew.slew_s(alt0, az0, alt1, az1)
            else:
                slew = np.full(starts.shape, night.slew.settle_s)
            ends = starts + slew + night.setup_s + night.exposure_s[i]
            own = wt == i
            ok = (ends <= hi + EPS_S) & np.any(
                (ws[own] <= starts[:, None] + EPS_S) & (we[own] >= ends[:, None] - EPS_S), axis=1
            )
            for j, v in enumerate(visits):
                if v[0] == i and j != k:
                    ok &= np.abs(starts - v[1]) >= night.spacing_s[i] - EPS_S
            am = night.airmass_at(np.full(starts.shape, i), ends - night.exposure_s[i] / 2)
            ok &= am <= night.max_airmass[i]
            current = night.airmass_at(np.array([i]), np.array([end - night.exposure_s[i] / 2]))
            if not ok.any():
                continue
            b = np.flatnonzero(ok)[np.argmin(am[ok])]
            if am[b] < current[0] - 1e-9:
                exp_start = float(ends[b] - night.exposure_s[i])
                visits[k] = (i, float(starts[b]), float(slew[b]), exp_start, float(ends[b]))
                moved = True
        if not moved:
            break
    return visits


def _future_best(night: PlanNight) -> np.ndarray:
    """[N, S+1]: lowest airmass sampled inside a window of the target at or after each slot."""
    s = night.slot_unix.size
    covered = (night.slot_unix >= night.win_start[:, None] - EPS_S) & (
        night.slot_unix <= night.win_end[:, None] + EPS_S
    )
    inside = np.zeros((night.n, s), bool)
    np.logical_or.at(inside, night.win_target, covered)
    masked = np.where(inside, night.airmass, np.inf)
    out = np.full((night.n, s + 1), np.inf)
    out[:, :s] = np.minimum.accumulate(masked[:, ::-1], axis=1)[:, ::-1]
    return out


def _slot_after(night: PlanNight, t: float) -> int:
    return int(np.clip(np.ceil((t - night.t0) / night.step_s - 1e-9), 0, night.slot_unix.size))


def _fits_in_a_gap(night: PlanNight, raw: list[tuple], targets: np.ndarray) -> np.ndarray:
    """Which targets could take one visit in an idle gap of the plan, whatever its airmass.

    For every gap (before the first visit, between two, after the last) and every window of
    a target, the visit starts as early as both allow; it fits if it ends inside the window
    and leaves the next visit its exposure start (the next slew then begins from this target).
    """
    fits = np.zeros(targets.size, bool)
    use = np.isin(night.win_target, targets)
    wt, ws, we = night.win_target[use], night.win_start[use], night.win_end[use]
    gaps = [(-1, night.t0), *((v[0], v[4]) for v in raw)]
    for (prev, lo), after in zip(gaps, [*raw, None], strict=True):
        start = np.maximum(ws, lo)
        if prev < 0:
            slew = np.full(wt.shape, night.slew.settle_s)
        else:
            alt0, az0 = night.pointing_at(np.full(wt.shape, prev), start)
            alt1, az1 = night.pointing_at(wt, start)
            slew = night.slew.slew_s(alt0, az0, alt1, az1)
        end = start + slew + night.setup_s + night.exposure_s[wt]
        ok = end <= we + EPS_S
        if after is not None:
            j, t_next, exp_next = after[0], after[1], after[3]
            alt0, az0 = night.pointing_at(wt, np.full(wt.shape, t_next))
            alt1, az1 = night.pointing_at(np.full(wt.shape, j), np.full(wt.shape, t_next))
            slew_next = night.slew.slew_s(alt0, az0, alt1, az1)
            ok &= t_next + slew_next + night.setup_s <= exp_next + EPS_S
            ok &= end <= t_next + EPS_S
        fits |= np.isin(targets, wt[ok])
    return fits


def _finish(night: PlanNight, raw: list[tuple], method: str, solve) -> Plan:
    """Number the repeats, give every unplaced target its reason, and compute the metrics."""
    raw = sorted(mountfit.follow(night, raw), key=lambda v: (v[1], v[0]))
    target = np.array([v[0] for v in raw], dtype=int)
    mid = np.array([v[3] for v in raw]) + night.exposure_s[target] / 2
    am = night.airmass_at(target, mid)
    count = np.zeros(night.n, int)
    visits = []
    for (i, start, slew, exp_start, end), am_mid in zip(raw, am.tolist(), strict=True):
        count[i] += 1
        times = (float(start), float(slew), night.setup_s, float(exp_start), float(end))
        visits.append(Visit(int(i), int(count[i]), *times, am_mid))
    reason = np.select(
        [night.cut, night.sun_blocked, ~night.has_window, ~night.has_room],
        ["below_priority_cut", "near_sun", "no_window", "too_short"],
        "no_room",
    )
    left_out = np.flatnonzero((count == 0) & night.slack_applies)
    reason[left_out[_fits_in_a_gap(night, raw, left_out)]] = "poor_airmass"
    not_placed = {int(i): str(reason[i]) for i in np.flatnonzero(count == 0)}
    short = (count > 0) & (count < night.repeats)
    missing = {int(i): int(night.repeats[i] - count[i]) for i in np.flatnonzero(short)}

    best = night.best_airmass[target]
    excess = float(am.mean() / best.mean() - 1.0) if visits else float("nan")
    idle = 0.0
    if visits:
        busy = sum(v.end_unix - v.start_unix for v in visits)
        idle = (visits[-1].end_unix - float(night.win_start.min()) - busy) / 60.0
    metrics = PlanMetrics(
        placed=int(np.count_nonzero(count)),
        possible=int(np.count_nonzero(night.active)),
        airmass_excess=excess,
        idle_minutes=idle,
        objective=float(np.sum(am - best)),
        solver_objective=None if solve is None else solve.value,
        dual_bound=None if solve is None else solve.bound,
        gap=None if solve is None else solve.gap,
        method=method,
        proven_optimal=bool(solve is not None and solve.gap is not None and solve.gap <= 1e-4),
        visits=len(visits),
        visits_possible=int(np.sum(np.where(night.active, night.repeats, 0))),
    )
    got = {int(i): (int(count[i]), int(night.repeats[i])) for i in np.flatnonzero(short)}
    return Plan(visits, not_placed, missing, metrics, got)
