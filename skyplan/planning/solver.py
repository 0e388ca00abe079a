"""The ``"optimal"`` method: time-indexed models solved by HiGHS, realised, and bounded.

1. The relaxed model's linear-programming optimum (:func:`timeindexed.relaxed_model`) bounds
   the value of every plan that obeys the rules: the upper bound ``U``.
2. The padded model (:func:`timeindexed.padded_model`) is solved: its LP relaxation, rounded
   (:func:`timeindexed.round_down`); when the model is small, also as an integer program
   within the time left, keeping the better.  The solution is realised with the real slews
   (worth at least the model's objective), the idle gaps get extra visits, and every visit
   moves toward its lowest airmass inside its free gap
   (:func:`skyplan.planning.dispatch._improve`).
3. The best of these plans and the dispatch plan, by value, is compacted (every visit as
   early as it can go, :func:`realise.compact`), its gaps filled, neighbours exchanged where
   that raises their merit (:func:`realise.swap_neighbours`) and its visits moved toward their
   best airmass again; the result is kept if it is worth more.
4. The local repair (:mod:`repair`); then, while the top level's mean airmass excess is
   above ``LOOSEN_ABOVE``, the top level re-timed with the lower levels light, the lower
   levels refilled and everything re-timed and moved again (:mod:`retime`), kept when the
   plan's value and the top level's summed merit both rise.
5. Without a mount walk: the whole plan re-timed in its order with the true weights, no
   visit left out (:func:`retime.retime_plan`), its gaps refilled; kept if worth more, and
   repeated (at most ``LAST_RETIMES`` times) while it gains.  The returned plan's gap is
   ``(U - value) / U``: how far, at most, the plan the user gets is from the best plan.

With a German mount or a cable wrap every plan is walked with the mount's state before it is
valued or compared (:func:`mountfit.settle`), so the value and gap returned are those of the
plan the user gets.

Each model's grid step is the night's step times the smallest stride keeping it within its
variable budget (measured, see docs/planning.md), so the models' memory stays bounded however
large the catalogue.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from skyplan.planning import mountfit, realise, repair, retime, timeindexed
from skyplan.planning.bound import lagrangian_bound
from skyplan.planning.merit import priority_weights

if TYPE_CHECKING:
    from skyplan.planning.model import PlanNight

VARIABLE_BUDGET = 6_000
BOUND_VARIABLE_BUDGET = 30_000
BOUND_MIN_STRIDE = 2  # the LP on the night's own grid is many times slower (measured)
MIP_VARIABLES = 1_500  # the padded model is also solved as an integer program up to this size
MIP_SHARE = 0.5  # of the time left
LAGRANGIAN_STEPS = 30
LAST_RETIMES = 3  # the last whole-plan re-timings (measured: a third still gained on 5x nights)
# The Lagrangian bound's model: the night's own grid up to this many variables (estimated from
# the windows' summed length; 5,000 targets on the 38 deg N demo date: 760,000 estimated,
# 444,000 kept, about 90 MiB while built), a coarser grid dividing the bound's above it.
LAGRANGIAN_VARIABLE_BUDGET = 800_000
GOOD_ENOUGH = 0.01  # gap below which the denser model and the finer bound are skipped
REPAIR_SHARE = 0.15  # of the time limit, at most, for the local repair (measured)
LOOSEN_SHARE = 0.2  # of the time limit, at most, for the top level's moves (retime.py)
LOOSEN_ABOVE = 0.02  # ... tried when the top level's mean airmass excess is above this
PROVEN_GAP = 1e-4  # a plan within this relative gap of the bound is reported optimal


@dataclass(frozen=True)
class Outcome:
    visits: list[tuple]  # the returned plan's visits
    method: str  # "optimal", or "dispatch" when the dispatch plan was worth more
    value: float  # the plan's objective (summed merit)
    bound: float | None  # proven upper bound on any plan's value; None if not found in time
    gap: float | None  # (bound - value) / bound
    solved: bool  # the padded model was solved (its plan may still rank below dispatch)


def _better(night, weight, improve, raw, best, method, value, swap=False):
    """Fill (and with ``swap`` reorder) and improve ``raw``; keep it if worth more."""
    raw = realise.fill_gaps(night, raw, weight)
    if swap:
        raw = realise.swap_neighbours(night, raw, weight)
    raw = mountfit.settle(night, improve(night, raw), weight)
    raw_value = realise.plan_value(night, raw, weight)
    if raw_value > value + 1e-9:
        return raw, "optimal", raw_value
    return best, method, value


def top_level(night: PlanNight) -> np.ndarray | None:
    """The targets that can be placed at the highest priority among them; None when every
    target that can be placed has that priority (the whole model is then the top level's)."""
    if not night.active.any():
        return None
    top = night.active & (night.priority == night.priority[night.active].max())
    return None if top.sum() == night.active.sum() else top


def _short(night: PlanNight, visits: list[tuple], level: np.ndarray) -> bool:
    """Some target of ``level`` has fewer visits in ``visits`` than its repeats."""
    count = np.bincount([v[0] for v in visits], minlength=night.n)
    return bool(np.any(level & (count < night.repeats)))


def _top_first(night, weight, top, time_limit_s, pad_s) -> list[tuple] | None:
    """The top priority alone, on a grid as fine as its own budget allows: the padded model
    of its targets (by the integer program when small), realised with slew allowance
    ``pad_s``; lower priorities then fill the idle gaps (:func:`_better`)."""
    deadline = time.monotonic() + time_limit_s
    g = night.step_s * stride_for(night, VARIABLE_BUDGET, top)
    model = timeindexed.padded_model(night, g, weight, pad_s, only=top)
    if model.size == 0:
        return None
    lp = timeindexed.solve(model, max(deadline - time.monotonic(), 0.0), integer=False)
    if not lp.found:
        return None
    chosen = timeindexed.round_down(model, lp.x)
    left = deadline - time.monotonic()
    rounded = float(model.var_merit[chosen].sum())
    if model.size <= MIP_VARIABLES and left > 0 and rounded < lp.bound * (1 - PROVEN_GAP):
        mip = timeindexed.solve(model, MIP_SHARE * left, integer=True)
        if mip.found and mip.objective > rounded:
            chosen = mip.chosen
    return realise.realise(night, model, chosen, pad_s)


def _loosened(night, weight, improve, visits, top, until: float) -> list[tuple]:
    """The top level re-timed with the lower levels light (:func:`retime.loosen_top`), the
    lower levels refilled, then re-timed and moved with their true weights
    (:func:`retime.retime_plan`, :func:`retime.exchange`).  Compacting and exchanging
    neighbours are left out: they move top-level visits off their best for lower ones."""
    raw = retime.loosen_top(night, visits, weight, top)
    raw = improve(night, realise.fill_gaps(night, raw, weight))
    if time.monotonic() > until:
        return raw
    raw = retime.retime_plan(night, raw, weight, top)
    return retime.exchange(night, raw, weight, top, until)


def _level_excess(night, visits, level) -> float:
    """The mean relative airmass excess ``X / X_best - 1`` of the visits of ``level``."""
    tgt = np.array([v[0] for v in visits if level[v[0]]], dtype=int)
    if tgt.size == 0:
        return 0.0
    mid = np.array([v[3] for v in visits if level[v[0]]]) + night.exposure_s[tgt] / 2
    return float(np.mean(night.airmass_at(tgt, mid) / night.best_airmass[tgt] - 1.0))


def _level_value(night, visits, weight, level) -> float:
    """The summed merit of the visits of ``level`` (a mask)."""
    return realise.plan_value(night, [v for v in visits if level[v[0]]], weight)


def _close(bound: float | None, value: float) -> bool:
    """The plan is within ``GOOD_ENOUGH`` of the bound: further work would gain little."""
    return bound is not None and value >= bound * (1.0 - GOOD_ENOUGH)


def stride_for(night: PlanNight, budget: int, only: np.ndarray | None = None) -> int:
    """The smallest stride of the night's grid keeping the variables within ``budget``
    (counting the windows of the ``only`` targets when given)."""
    span = night.win_end - night.win_start
    length = float(np.sum(span if only is None else span[np.asarray(only, bool)[night.win_target]]))
    need = length / night.step_s / max(budget, 1)
    return max(1, int(math.ceil(need)))


def fine_stride(k: int, least: int) -> int:
    """The smallest divisor of ``k`` (the bound's stride) that is at least ``least``."""
    return next((f for f in range(max(least, 1), k + 1) if k % f == 0), k)


def optimise(
    night: PlanNight, dispatch: list[tuple], time_limit_s: float, improve, dense_pad_s: float
) -> Outcome:
    """Plan with the padded models, compare with ``dispatch``, and bound all (see above).

    ``improve(night, visits)``: the local search applied to every realised plan;
    ``dense_pad_s``: the slew allowance of the denser model (a typical slew).
    """
    deadline = time.monotonic() + time_limit_s
    weight = priority_weights(night.priority, night.active)
    dispatch_value = realise.plan_value(night, dispatch, weight)
    if time_limit_s <= 0 or not night.active.any():
        return Outcome(dispatch, "dispatch", dispatch_value, None, None, False)
    g_bound = night.step_s * max(stride_for(night, BOUND_VARIABLE_BUDGET), BOUND_MIN_STRIDE)
    relaxed = timeindexed.relaxed_model(night, g_bound, weight)
    lp = timeindexed.solve(relaxed, max(deadline - time.monotonic(), 0.0), integer=False)
    bound = lp.bound if lp.found else None
    g = night.step_s * stride_for(night, VARIABLE_BUDGET)
    padded = timeindexed.padded_model(night, g, weight)
    left = deadline - time.monotonic()
    relaxed_p = timeindexed.solve(padded, left, integer=False) if left > 0 else None
    best, method, value, solved = dispatch, "dispatch", dispatch_value, False
    if relaxed_p is not None and relaxed_p.found:
        solved = True
        chosen = timeindexed.round_down(padded, relaxed_p.x)
        left = deadline - time.monotonic()
        rounded = float(padded.var_merit[chosen].sum())
        if padded.size <= MIP_VARIABLES and left > 0 and rounded < relaxed_p.bound * (
            1 - PROVEN_GAP
        ):
            mip = timeindexed.solve(padded, MIP_SHARE * left, integer=True)
            if mip.found and mip.objective > rounded:
                chosen = mip.chosen
        raw = realise.realise(night, padded, chosen)
        best, method, value = _better(night, weight, improve, raw, best, method, value)
    top = top_level(night)
    left = deadline - time.monotonic()
    if top is not None and left > 0 and not _close(bound, value) and _short(night, best, top):
        raw = _top_first(night, weight, top, left, dense_pad_s)
        if raw is not None:
            best, method, value = _better(night, weight, improve, raw, best, method, value)
    pad = dense_pad_s
    left = deadline - time.monotonic()
    if left > 0 and pad < night.slew.longest_s() and not _close(bound, value):
        dense = timeindexed.padded_model(night, g, weight, pad)
        relaxed_d = timeindexed.solve(dense, left, integer=False)
        if relaxed_d.found:
            raw = realise.realise(night, dense, timeindexed.round_down(dense, relaxed_d.x), pad)
            best, method, value = _better(night, weight, improve, raw, best, method, value)
    if deadline - time.monotonic() > 0:
        packed = realise.compact(night, best)
        best, method, value = _better(night, weight, improve, packed, best, method, value, True)
    level = top if top is not None else night.active
    if deadline - time.monotonic() > 0:
        until = min(deadline, time.monotonic() + REPAIR_SHARE * time_limit_s)
        raw = repair.insert_missing(night, best, weight, level, until)
        raw = repair.relocate(night, raw, weight, level, until)
        raw = repair.spread_repeats(night, raw, weight, until)
        if raw != sorted(best, key=lambda v: (v[1], v[0])):
            best, method, value = _better(night, weight, improve, raw, best, method, value)
    until = min(deadline, time.monotonic() + LOOSEN_SHARE * time_limit_s)
    took = 0.0  # a round starts only when the time left holds one as long as the last
    while (top is not None and until - time.monotonic() > took and not _close(bound, value)
           and _level_excess(night, best, top) > LOOSEN_ABOVE):
        began = time.monotonic()
        raw = _loosened(night, weight, improve, best, top, until)
        raw = improve(night, realise.fill_gaps(night, raw, weight))
        raw = mountfit.settle(night, raw, weight)
        raw_value = realise.plan_value(night, raw, weight)
        if raw_value <= value + 1e-9 or _level_value(night, raw, weight, top) < _level_value(
                night, best, weight, top) - 1e-9:
            break
        best, method, value = raw, "optimal", raw_value
        took = time.monotonic() - began
    # Not with a German mount or a wrap: the walk keeps each exposure and starts its slew
    # earlier when the mount's slew is longer, and re-timing that again drifts a visit's slew
    # toward the one before it (a time-critical visit, which this plan does not see).
    for _ in range(0 if mountfit.needs_walk(night) else LAST_RETIMES):
        if deadline - time.monotonic() <= 0:
            break
        raw = retime.retime_plan(night, best, weight, night.active, skip=0)
        raw = improve(night, realise.fill_gaps(night, raw, weight))  # no walk needed here
        raw_value = realise.plan_value(night, raw, weight)
        if raw_value <= value + 1e-9:
            break
        best, method, value = raw, "optimal", raw_value
    left = deadline - time.monotonic()
    if bound is not None and left > 0 and lp.slot_price.size and not _close(bound, value):
        k = int(round(g_bound / night.step_s))
        f = fine_stride(k, stride_for(night, LAGRANGIAN_VARIABLE_BUDGET))
        if f < k:
            fine = timeindexed.relaxed_model(night, night.step_s * f, weight)
            price = np.repeat(lp.slot_price / (k // f), k // f)
            bound = min(bound, lagrangian_bound(fine, price, value, LAGRANGIAN_STEPS))
    gap = None
    if bound is not None:
        gap = max((bound - value) / bound, 0.0) if bound > 0 else 0.0
    return Outcome(best, method, value, bound, gap, solved)
