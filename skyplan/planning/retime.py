"""Re-timing runs of visits: the best starts of many visits at once, in a given order.

Moving one visit inside its free gap (:func:`skyplan.planning.dispatch._improve`) or taking
one out and putting it back (:mod:`skyplan.planning.repair`) cannot move a packed run: a
top-priority visit that would be at its best ten minutes later gets there only if the visits
between all move, or change places with it.  Here the starts of a run of visits in a given
order are chosen together by dynamic programming over the visits in that order (Bellman
1957, *Dynamic Programming*, ch. 1: the best plan of the first ``k`` visits ending by ``e``
extends to the best plan of the first ``k + 1``):

* each visit's candidate starts are a grid of ``STEP_S`` inside its window (the one it is
  in) and the free time of the run; when the order is the plan's own, those within
  ``AROUND_S`` of its current start and that start itself, so the plan given is among the
  candidates;
* a state is (end of the last visit placed, value so far); a start ``s`` of visit ``k``
  takes the best value among the states ending by ``s``, with the slew model's slew from
  that state's target at ``s``; a state ending later with no more value is dropped;
* a visit below the priorities in ``keep`` may be left out (at most ``MAX_SKIP`` in a row):
  its neighbours then slew from one another;
* spacing: two visits of one target inside the run share their current slack (the earlier
  starts no later than its middle, the later no earlier than that plus the spacing); a
  visit of the run keeps the spacing from its target's visits outside it;
* the airmass ceiling holds at the chosen start; the visit after the run keeps its exposure
  start and takes its new slew (:func:`repair.join`, which checks it).

:func:`retime_plan` re-times a whole plan; :func:`exchange` moves each of the top level's
visits furthest from their best airmass to another place in the order among its
neighbours, the run between re-timed (an insertion move, whose run's top visits in effect
exchange their times; Glover 1996 on ejection chains), and keeps each move that raises the
plan's value (:func:`realise.plan_value`); :func:`loosen_top` re-times a plan as if the
lower levels weighed almost nothing, so the top level can take the time lower visits held
(the caller refills them and compares).  Cost: a run's visits times their candidates times
``MAX_SKIP + 1`` slew evaluations, vectorised per visit.
"""

from __future__ import annotations

import time
from typing import TYPE_CHECKING

import numpy as np

from skyplan.planning.merit import merit
from skyplan.planning.realise import plan_value
from skyplan.planning.repair import furthest_from_best, join

if TYPE_CHECKING:
    from skyplan.planning.model import PlanNight

STEP_S = 10.0  # the candidate starts' grid
AROUND_S = 900.0  # a whole plan re-timed: candidates this near each visit's start
MAX_SKIP = 2  # lower-priority visits in a row that may be left out
MOVED = 12  # top-level visits, the furthest from their best airmass, tried in new places
REACH = 6  # places before and after its own a visit is tried at
MARGIN = 2  # visits re-timed on each side of the moved stretch
MOVE_ABOVE = 0.02  # ... when their airmass is more than this above their best
LOWER_SHARE = 1e-3  # loosen_top: the lower levels' share of their weight
WIDE_SKIP = 4  # ... and how many of them in a row may be left out
_EPS_S = 1e-6


def _window(night: PlanNight, i: int, start: float, end: float) -> tuple[float, float]:
    own = np.flatnonzero((night.win_target == i) & (night.win_start <= start + _EPS_S)
                         & (night.win_end >= end - _EPS_S))
    if own.size == 0:  # not inside a window (never in a valid plan): the visit stays put
        return start, end
    return float(night.win_start[own[0]]), float(night.win_end[own[0]])


def _bounds(night: PlanNight, run: list[tuple], others: list[tuple]) -> tuple[np.ndarray, ...]:
    """Earliest and latest start of each visit of ``run`` (its window, its share of the
    spacing, the spacing from ``others``) and the end of its window."""
    n = len(run)
    lo, hi, we = np.empty(n), np.empty(n), np.empty(n)
    for k, v in enumerate(run):
        i, sp = v[0], night.spacing_s[v[0]]
        lo[k], we[k] = _window(night, i, v[1], v[4])
        hi[k] = we[k] - night.shortest_visit_s[i]
        if sp > 0:
            for o in (o for o in others if o[0] == i):
                if o[1] <= v[1]:
                    lo[k] = max(lo[k], o[1] + sp)
                else:
                    hi[k] = min(hi[k], o[1] - sp)
    last: dict[int, int] = {}
    for k, v in enumerate(run):
        i = v[0]
        if i in last and night.spacing_s[i] > 0:
            a = last[i]
            mid = (run[a][1] + v[1] - night.spacing_s[i]) / 2
            hi[a] = min(hi[a], mid)
            lo[k] = max(lo[k], mid + night.spacing_s[i])
        last[i] = k
    return lo, hi, we


def _front(parts: list[tuple]) -> tuple[np.ndarray, ...]:
    """The states no earlier-ending state beats, from (end, value, visit, state, start)."""
    e, v, fj, fs, st = (np.concatenate([p[c] for p in parts]) for c in range(5))
    order = np.lexsort((-v, e))
    e, v, fj, fs, st = e[order], v[order], fj[order], fs[order], st[order]
    keep = v > np.r_[-np.inf, np.maximum.accumulate(v)[:-1]] + 1e-12
    return e[keep], v[keep], fj[keep], fs[keep], st[keep]


def _best_times(night: PlanNight, run: list[tuple], others: list[tuple], weight: np.ndarray,
                keep: np.ndarray, prev: int, free: float, until: float,
                own: bool, skip: int) -> list[tuple] | None:
    """The run's visits (in that order) at their best starts after ``free`` (the end of the
    visit of target ``prev`` before, -1 for none), ending by ``until``; None when a visit of
    ``keep`` finds no start."""
    n = len(run)
    tg = np.array([v[0] for v in run])
    lo, hi, we = _bounds(night, run, others)
    grid = night.t0 + STEP_S * np.arange(np.ceil((free - night.t0) / STEP_S - 1e-9),
                                         np.floor((until - night.t0) / STEP_S + 1e-9) + 1)
    setup = night.setup_s
    droppable = ~np.asarray(keep, bool)[tg]
    states: list[tuple] = []
    for k in range(n):
        i = int(tg[k])
        cand = grid[(grid >= lo[k] - _EPS_S) & (grid <= hi[k] + _EPS_S)]
        if own:
            near = np.abs(cand - run[k][1]) <= AROUND_S
            cand = np.unique(np.r_[cand[near], run[k][1]])
        parts = []
        for j in range(k - 1, max(k - 2 - skip, -2), -1):
            if j >= 0:
                e_j, v_j = states[j][0], states[j][1]  # sorted by end, value rising
                at = np.searchsorted(e_j, cand + _EPS_S, side="right") - 1
                ok = at >= 0
                s, back = cand[ok], at[ok]
                got = v_j[back]
                p = np.full(s.size, tg[j])
            else:
                s = cand[cand >= free - _EPS_S]
                got, back = np.zeros(s.size), np.full(s.size, -1)
                p = np.full(s.size, prev)
            if p.size and p[0] >= 0:
                a2_0, a1_0 = night.pointing_at(p, s)
                a2_1, a1_1 = night.pointing_at(np.full(s.size, i), s)
                slew = night.slew.slew_s(a2_0, a1_0, a2_1, a1_1)
            else:
                slew = np.full(s.size, night.slew.settle_s)
            end = s + slew + setup + night.exposure_s[i]
            airmass = night.airmass_at(np.full(s.size, i), end - night.exposure_s[i] / 2)
            good = (end <= min(we[k], until) + _EPS_S) & (airmass <= night.max_airmass[i])
            worth = got + merit(weight[i], airmass, night.best_airmass[i])
            parts.append((end[good], worth[good], np.full(int(good.sum()), j), back[good],
                          s[good]))
            if j >= 0 and not droppable[j]:
                break
        states.append(_front(parts))
        if states[-1][0].size == 0 and not droppable[k]:
            return None
    best_k, best_s, best_v = -1, -1, -np.inf
    for k in range(n - 1, max(n - 2 - skip, -2), -1):
        if k < 0:  # every visit of the run left out
            best_v = max(best_v, 0.0)
            break
        if states[k][1].size and states[k][1][-1] > best_v:
            best_k, best_s, best_v = k, states[k][1].size - 1, float(states[k][1][-1])
        if not droppable[k]:
            break
    if best_v == -np.inf:
        return None
    chosen = []
    k, s = best_k, best_s
    while k >= 0:
        end, start = float(states[k][0][s]), float(states[k][4][s])
        i = int(tg[k])
        exp_start = end - night.exposure_s[i]
        chosen.append((i, start, exp_start - setup - start, exp_start, end))
        k, s = int(states[k][2][s]), int(states[k][3][s])
    return chosen[::-1]


def retime_run(night: PlanNight, visits: list[tuple], a: int, b: int, run: list[tuple],
               weight: np.ndarray, keep: np.ndarray, own: bool = False,
               skip: int = MAX_SKIP) -> list[tuple] | None:
    """``visits[:a]``, the visits ``run`` (those of ``visits[a:b]`` in a new order) at their
    best starts, and ``visits[b:]``, the visit at ``b`` with its new slew; None if a visit of
    ``keep`` finds no start or the visit after breaks a rule."""
    prev = visits[a - 1][0] if a else -1
    free = visits[a - 1][4] if a else night.t0
    others = visits[:a] + visits[b:]
    if b >= len(visits):
        got = _best_times(night, run, others, weight, keep, prev, free, night.t1, own, skip)
        return None if got is None else [*visits[:a], *got]
    # The visit after keeps its exposure start, its slew from the run's last target: the
    # run may end by that less the setup and the settle time, by its current start, or by
    # that less the longest slew (always room), tried in that order.
    x = visits[b][3] - night.setup_s
    for until in (x - night.slew.settle_s, visits[b][1], x - night.slew.longest_s()):
        got = _best_times(night, run, others, weight, keep, prev, free, until, own, skip)
        if got is None:
            return None
        joined = join(night, visits, a, b, got)
        if joined is not None:
            return joined
    return None


def retime_plan(night: PlanNight, visits: list[tuple], weight: np.ndarray,
                keep: np.ndarray, skip: int = MAX_SKIP) -> list[tuple]:
    """The whole plan re-timed in its order, each visit within ``AROUND_S`` of its start
    (never worth less: its own starts are among the candidates)."""
    visits = sorted(visits, key=lambda v: (v[1], v[0]))
    got = retime_run(night, visits, 0, len(visits), visits, weight, keep, own=True, skip=skip)
    return visits if got is None else got


def exchange(night: PlanNight, visits: list[tuple], weight: np.ndarray, level: np.ndarray,
             deadline: float = np.inf) -> list[tuple]:
    """Move each of the ``MOVED`` visits of ``level`` furthest from their best airmass (more
    than ``MOVE_ABOVE`` above it) up to ``REACH`` places earlier or later, the visits
    between and ``MARGIN`` on each side re-timed (:func:`retime_run`); keep each move that
    raises the plan's value.  Stops at ``deadline`` (``time.monotonic``)."""
    visits = sorted(visits, key=lambda v: (v[1], v[0]))
    if not visits:
        return visits
    value = plan_value(night, visits, weight)
    for v in furthest_from_best(night, visits, level, MOVE_ABOVE, MOVED):
        if v not in visits:
            continue
        best, best_value = None, value
        k = visits.index(v)
        for p in range(max(k - REACH, 0), min(k + REACH, len(visits) - 1) + 1):
            if time.monotonic() > deadline:
                return visits
            lo, hi = min(k, p), max(k, p)
            if p == k or any(w[0] == v[0] for w in visits[lo:hi + 1] if w is not v):
                continue
            a, b = max(lo - MARGIN, 0), min(hi + 1 + MARGIN, len(visits))
            run = visits[a:b]
            run.remove(v)
            run.insert(p - a, v)
            got = retime_run(night, visits, a, b, run, weight, level)
            got_value = -np.inf if got is None else plan_value(night, got, weight)
            if got_value > best_value + 1e-9:
                best, best_value = got, got_value
        if best is not None:
            visits, value = best, best_value
    return visits


def loosen_top(night: PlanNight, visits: list[tuple], weight: np.ndarray,
               level: np.ndarray) -> list[tuple]:
    """The plan re-timed (:func:`retime_plan`) as if the visits below ``level`` weighed only
    ``LOWER_SHARE`` of their weight, up to ``WIDE_SKIP`` of them left out in a row: the
    level's visits nearer their best airmass, with the lower visits that were not in their
    way.  A start for a refill of the lower levels (the caller compares the refilled plan's
    value)."""
    light = np.where(level, weight, weight * LOWER_SHARE)
    return retime_plan(night, visits, light, level, WIDE_SKIP)
