"""Upper bounds: on the value of any plan (Lagrangian), and on the visits per priority.

**Value.**  An upper bound on the value of any plan by Lagrangian relaxation of the slot
capacities.

For the relaxed time-indexed model (:func:`skyplan.planning.timeindexed.relaxed_model`) and
any prices ``lambda_s >= 0`` on its slots,

    L(lambda) = sum_s lambda_s + sum_i max_{S_i} sum_{v in S_i} (merit_v - sum_{s in v} lambda_s)

is an upper bound on the model's optimum (Fisher 1981, "The Lagrangian relaxation method for
solving integer programming problems", Management Science 27, eq. 2-3), ``S_i`` ranging over
sets of at most ``repeats_i`` variables of target ``i`` (the spacing rule is dropped too,
which can only raise the bound).  The best ``S_i`` is the ``repeats_i`` largest positive
reduced merits, so ``L`` costs one pass over the variables.  Prices start from the LP duals
of a coarser model and improve by subgradient steps with Polyak's step length (Held, Wolfe &
Crowder 1974, "Validation of subgradient optimization", Math. Programming 6); every
iterate's ``L`` is a valid bound, the lowest is kept.

**Visits per priority, level by level** (:func:`count_bound`).  The relaxed model maps
every plan onto a solution with the same visits (see :mod:`skyplan.planning.timeindexed`),
so the optimum of its linear-programming relaxation with the count of the visits at
priority ``p`` or above as objective bounds that count for every plan.  That alone is loose:
the plans worth the most keep their higher priorities first, and the most visits at ``p``
or above come from giving up higher ones for short lower ones.  So rows ask, for every
level ``q`` above ``p``, at least ``c_q`` visits at priority ``q`` (the counts of the plan
being judged): the optimum then bounds the visits at ``p`` or above of every plan that keeps
at least as many visits at each higher level, the plans a lexicographic order of the
priorities prefers.  Still a relaxation (no slew beyond the settle time), so not reachable
when visits are short.

**Airmass excess of one level** (:func:`excess_floor`).  The same mapping carries every
plan's visits at one priority level, alone, onto a solution of the relaxed model restricted
to that level (dropping the other visits keeps every rule), each variable at the lowest
relative excess ``r = X / X_best - 1`` any visit mapped onto it can have.  So the least mean
``r`` over the solutions with at least ``k`` variables (and one of each target asked for)
bounds from below the mean excess at that level of every plan with at least ``k`` visits
there.  The least ratio is found by Dinkelbach's method (1967, "On nonlinear fractional
programming", Management Science 13): ``g(f) = min sum (r_v - f) x_v`` is solved as an
integer program for a falling sequence of ``f``, each the mean of the previous solution,
until it no longer falls.  Certified at every step: ``g`` falls with slope ``-sum x <=
-k_low`` (``k_low`` the fewest variables any solution has), so if ``lb <= 0`` is the
solver's proven lower bound on ``g(f)``, every solution has mean at least
``f + lb / k_low``; a time limit only loosens the floor.

**The levels together** (:func:`joint_excess_floor`).  The same mapping carries a whole plan,
every level at once, onto a solution of the relaxed model, each variable again at its least
excess.  A plan with at least ``c_q`` visits at each priority ``q`` and a mean excess of at
most ``cap`` at every level but ``p`` maps onto a solution with at least ``c_q`` variables
of each level and ``sum_{v in q} (r_v - cap) x_v <= 0`` for each ``q != p`` (each ``r_v`` is
at most its visit's excess).  So the least mean ``r`` at level ``p`` over such solutions,
found and certified by the same Dinkelbach steps with these rows added, is a floor under
level ``p``'s mean excess for every such plan: when it passes ``cap``, no plan keeping those
counts has every level within ``cap``.
"""

from __future__ import annotations

import math
from dataclasses import replace
from typing import TYPE_CHECKING

import numpy as np

from skyplan.planning import merit, timeindexed
from skyplan.planning.model import EPS_S
from skyplan.planning.timeindexed import TimeModel, ramp

if TYPE_CHECKING:
    from skyplan.planning.model import PlanNight


def lagrangian_bound(model: TimeModel, price: np.ndarray, lower: float, steps: int) -> float:
    """The lowest ``L(lambda)`` over ``steps`` subgradient steps from ``price`` (>= 0).

    ``lower``: the value of a known plan, the target of Polyak's step.  ``price`` is
    resized to the model's slots (missing slots at 0).
    """
    m = model.size
    if m == 0:
        return 0.0
    n_slots = int((model.var_slot + model.var_block).max())
    lam = np.zeros(n_slots)
    lam[: min(price.size, n_slots)] = np.maximum(price[:n_slots], 0.0)
    tgt, slot, block = model.var_target, model.var_slot, model.var_block
    cover = np.repeat(slot, block) + ramp(block)
    owner = np.repeat(np.arange(m), block)
    best = np.inf
    scale, stall = 1.0, 0
    for _ in range(max(steps, 1)):
        cum = np.concatenate(([0.0], np.cumsum(lam)))
        reduced = model.var_merit - (cum[slot + block] - cum[slot])
        order = np.lexsort((-reduced, tgt))
        t_sorted = tgt[order]
        rank = np.arange(m) - np.searchsorted(t_sorted, t_sorted, side="left")
        take = order[(rank < model.repeats[t_sorted]) & (reduced[order] > 0)]
        value = float(lam.sum() + reduced[take].sum())
        if value < best - 1e-9 * abs(best) if np.isfinite(best) else True:
            best, stall = value, 0
        else:
            stall += 1
            if stall >= 3:
                scale, stall = scale / 2, 0
        chosen = np.zeros(m, bool)
        chosen[take] = True
        use = np.bincount(cover[chosen[owner]], minlength=n_slots)
        grad = 1.0 - use  # dL/dlambda
        grad[(lam <= 0) & (grad > 0)] = 0.0  # projected: prices stay >= 0
        norm = float(grad @ grad)
        if norm == 0.0 or value - lower <= 1e-9 * max(abs(value), 1.0):
            break
        lam = np.maximum(lam - scale * (value - lower) / norm * grad, 0.0)
    return best


def excess_floor(night: PlanNight, level: int, visits: int, step_s: float,
                 must: np.ndarray | None = None, time_limit_s: float = 60.0) -> float:
    """The least mean relative airmass excess of the visits at priority ``level`` of any
    plan with at least ``visits`` of them (and a visit of each target in ``must``), see
    above; ``nan`` when the linear-programming relaxation is not solved (no such solution,
    or the time limit)."""
    must = np.asarray(must if must is not None else [], int)
    if visits <= 0 and must.size == 0:
        return 0.0
    model = timeindexed.relaxed_model(night, step_s, np.ones(night.n))
    keep = night.priority[model.var_target] == level
    excess = _least_excess(model)[keep]
    duration = None if model.var_duration is None else model.var_duration[keep]
    alone = replace(model, var_target=model.var_target[keep], var_slot=model.var_slot[keep],
                    var_block=model.var_block[keep], var_duration=duration)
    rows = [(np.ones(alone.size, bool), max(visits, 1))]
    rows += [(alone.var_target == i, 1) for i in must]
    k_low = max(visits, must.size, 1)
    f, floor = 0.0, 0.0
    for step in range(DINKELBACH_STEPS):
        priced = replace(alone, var_merit=f - excess)
        got = timeindexed.solve(priced, time_limit_s, integer=True, floors=rows)
        if not got.found:
            got = timeindexed.solve(priced, time_limit_s, integer=False, floors=rows)
            if not got.found:
                return math.nan if f == 0.0 else floor
        floor = max(floor, f + min(-got.bound, 0.0) / k_low)
        if got.chosen.size == 0:
            break
        ratio = float(excess[got.chosen].sum() / got.chosen.size)
        if step and ratio >= f - 1e-12:
            break
        f = ratio
    return floor


DINKELBACH_STEPS = 12


def _least_excess(model: TimeModel) -> np.ndarray:
    """Each variable's least relative excess, from its merit at weight 1 (merit inverted)."""
    q = 1.0 - (1.0 - model.var_merit) / merit.AIRMASS_SHARE
    return np.maximum((1.0 / q - 1.0) / merit.AIRMASS_STEEPNESS, 0.0)


def joint_excess_floor(night: PlanNight, level: int, counts: dict[int, int], cap: float,
                       step_s: float, time_limit_s: float = 60.0) -> float:
    """The least mean relative airmass excess at priority ``level`` of any plan with at
    least ``counts[q]`` visits at each priority ``q`` and a mean excess of at most ``cap``
    at every other priority with ``counts[q] > 0`` (see above); ``nan`` when no solution of
    the relaxation is found (none exists, or the time limit)."""
    k_low = counts.get(level, 0)
    if k_low <= 0:
        return 0.0
    model = timeindexed.relaxed_model(night, step_s, np.ones(night.n))
    excess = _least_excess(model)
    priority = night.priority[model.var_target]
    mine = priority == level
    floors = [(priority == q, c) for q, c in sorted(counts.items()) if c > 0]
    rows = [(np.where(priority == q, excess - cap, 0.0), -np.inf, 0.0)
            for q, c in sorted(counts.items()) if c > 0 and q != level]
    f, floor = 0.0, 0.0
    for step in range(DINKELBACH_STEPS):
        priced = replace(model, var_merit=np.where(mine, f - excess, 0.0))
        got = timeindexed.solve(priced, time_limit_s, integer=True, floors=floors, rows=rows)
        if not got.found:
            got = timeindexed.solve(priced, time_limit_s, integer=False, floors=floors,
                                    rows=rows)
            if not got.found:
                return math.nan if f == 0.0 else floor
        floor = max(floor, f + min(-got.bound, 0.0) / k_low)
        chosen = got.chosen[mine[got.chosen]]
        if chosen.size == 0:
            break
        ratio = float(excess[chosen].sum() / chosen.size)
        if step and ratio >= f - 1e-12:
            break
        f = ratio
    return floor


def visits_fit(night: PlanNight, targets: np.ndarray, chunk: int = 256) -> bool:
    """False when no plan can hold every visit asked of ``targets`` (a mask) tonight.

    The interval condition of single-machine scheduling with release times and deadlines
    (Horn 1974, "Some simple scheduling algorithms", Naval Research Logistics Quarterly 21:
    with pre-emption it is also sufficient): the work that must lie inside an interval
    ``[s, e]`` cannot exceed ``e - s``.  Each target's visits must lie between its first
    window's start ``a`` and its last window's end ``b``, each at least ``settle + setup +
    exposure`` long, so the targets with ``s <= a`` and ``b <= e`` need that times their
    repeats inside ``[s, e]``.  Every pair of a start ``a`` and an end ``b`` is tried, the
    starts ``chunk`` at a time.  True does not prove that every visit fits.
    """
    idx = np.flatnonzero(np.asarray(targets, bool) & night.active)
    if idx.size == 0:
        return True
    first = np.full(night.n, np.inf)
    last = np.full(night.n, -np.inf)
    np.minimum.at(first, night.win_target, night.win_start)
    np.maximum.at(last, night.win_target, night.win_end)
    order = idx[np.argsort(last[idx], kind="stable")]
    a, b = first[order], last[order]
    work = (night.shortest_visit_s * night.repeats)[order]
    starts = np.unique(a)
    for k in range(0, starts.size, chunk):
        s = starts[k:k + chunk, None]
        need = np.cumsum(np.where(a[None, :] >= s, work[None, :], 0.0), axis=1)
        inside = b[None, :] - s  # the interval [s, b_j], the ends in increasing order
        if np.any((need > inside + EPS_S) & (need > 0.0)):  # (b_j < s: no interval, no need)
            return False
    return True


def count_bound(night: PlanNight, level: int, floors: dict[int, int], step_s: float,
                time_limit_s: float = 120.0) -> float:
    """The most visits at priority ``level`` or above of any plan with at least
    ``floors[q]`` visits at each priority ``q`` (see above); ``inf`` if the solve fails."""
    model = timeindexed.relaxed_model(night, step_s, np.ones(night.n))
    priority = night.priority[model.var_target]
    counted = replace(model, var_merit=(priority >= level).astype(float))
    rows = [(priority == q, c) for q, c in sorted(floors.items()) if c > 0]
    got = timeindexed.solve(counted, time_limit_s, integer=False, floors=rows)
    return got.bound if got.found else float("inf")
