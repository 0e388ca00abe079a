"""A count bound that charges the slews, for small nights (a yardstick, not a planning method).

The count bound of the planner (:func:`skyplan.planning.bound.count_bound`) charges each
visit its settle time only, so where slews are a good part of a visit it may allow visits no
plan can have.  This bound keeps the network of :mod:`exact_counts` (a node is "free from
grid time ``k`` on, pointed at target ``q``"; the pointing state carries the slew) but maps
*every* plan onto it, whatever its start times, as the relaxed time-indexed model does:

* a visit starting at ``s`` maps to grid time ``k = ceil((s - t0) / g)``;
* its visit arc from ``q`` lands at ``k + floor(d_lo / g)``, ``d_lo`` = the least slew from
  ``q`` to ``i`` over the starts in ``(t_{k-1}, t_k]`` plus setup and exposure; since
  ``ceil(a) + floor(b) <= ceil(a + b)`` and the next visit starts after this one ends, the
  next visit's grid time is at or after the landing (Sousa & Wolsey 1992's argument, with
  the slew kept);
* the arc exists when some start in the slot can keep the window (start inside it, end by
  its end with ``d_lo``) and the air mass of the relaxed model's variable ``(i, k)``
  (the lowest over every middle of exposure a start in the slot can reach) is within the
  target's ceiling;
* two starts of a target at least the spacing ``sp`` apart are at least
  ``ceil(sp / g) - 1`` grid times apart, so at most one start lies in any run of that many.

The least slew over a slot is exact for the night's slew model (alt-azimuth mount without a
cable wrap, :meth:`SlewModel.slew_s`): when ``g`` divides the night's sampling step, both
pointings are linear in time over the slot, so each axis's difference is linear; its size
(the circular distance for azimuth) is least at an end of the slot unless it passes zero
inside, where the least is 0.  The slew is increasing in both, so the least slew is the
model's slew of those least differences.

Every plan is then a path of this network with at least its visits at every level, so the
optimum of its LP relaxation (or HiGHS's proven dual bound of the integer program) bounds the
visits at priority ``level`` or above of every plan keeping at least ``floors[q]`` visits at
each higher priority ``q``.  It is at most :func:`count_bound` on the same grid (a path's
visits never share a grid time, so they are a solution of the relaxed model too).  Its size
grows with targets² × grid times: nights of tens of targets and an hour or two.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass

import numpy as np
from exact_counts import GridArcs, _Program, _reachable

from skyplan.planning import timeindexed
from skyplan.planning.model import PlanNight

_TOL = 1e-9


def _least_size(d_a: np.ndarray, d_b: np.ndarray, circular: bool) -> np.ndarray:
    """Least |d| over a slot where d is linear from d_a to d_b (circular: the distance to the
    nearest multiple of 360)."""
    if circular:
        turns_a, turns_b = np.floor(d_a / 360.0), np.floor(d_b / 360.0)
        crosses = turns_a != turns_b  # passes a multiple of 360 inside (or at an end)
        ends = np.minimum(_circular(d_a), _circular(d_b))
    else:
        crosses = np.sign(d_a) != np.sign(d_b)
        ends = np.minimum(np.abs(d_a), np.abs(d_b))
    return np.where(crosses, 0.0, ends)


def _circular(d: np.ndarray) -> np.ndarray:
    d = np.abs(d) % 360.0
    return np.minimum(d, 360.0 - d)


def least_slew_s(night: PlanNight, src: np.ndarray, tgt: np.ndarray, t_a: np.ndarray,
                 t_b: np.ndarray) -> np.ndarray:
    """The least slew from ``src`` to ``tgt`` over the starts in [t_a, t_b], an interval
    inside one step of the night's sampling (see the module docstring)."""
    slew = night.slew
    d1 = [night._sample(night.axis1, tgt, t) - night._sample(night.axis1, src, t)
          for t in (t_a, t_b)]
    d2 = [night._sample(night.axis2, tgt, t) - night._sample(night.axis2, src, t)
          for t in (t_a, t_b)]
    lo1, lo2 = _least_size(*d1, circular=True), _least_size(*d2, circular=False)
    return np.maximum(lo1 / slew.rate_az_deg_s, lo2 / slew.rate_alt_deg_s) + slew.settle_s


def slew_arcs(night: PlanNight, step_s: float) -> GridArcs:
    """The relaxed network's visit arcs (see the module docstring)."""
    ratio = night.step_s / step_s
    if abs(ratio - round(ratio)) > 1e-9 or night.slew.equatorial or night.slew.wrap_deg:
        raise ValueError("the grid must divide the night's step; alt-azimuth mounts without "
                         "a cable wrap only")
    g, t0, n = step_s, night.t0, night.n
    model = timeindexed.relaxed_model(night, g, np.ones(n))  # (target, slot) within limits
    wt, ws, we = night.win_target, night.win_start, night.win_end
    # each variable's windows: the target's last one starting by the slot's end, and the one
    # before it (windows are disjoint, so at most these two hold starts in one slot)
    span = night.t1 - t0 + 1.0
    s_hi = t0 + model.var_slot * g
    key = np.searchsorted(wt * span + (ws - t0), model.var_target * span + (s_hi - t0) + 1e-6,
                          side="right") - 1
    tgt, slot, win = (np.concatenate([a, a]) for a in (model.var_target, model.var_slot, key))
    win[:model.size] -= 1
    ok = (win >= 0) & (wt[np.maximum(win, 0)] == tgt)
    tgt, slot, win = tgt[ok], slot[ok], win[ok]
    shortest = night.shortest_visit_s[tgt]
    first = np.maximum(t0 + (slot - 1) * g, np.maximum(ws[win], t0))
    last = np.minimum(t0 + slot * g, we[win] - shortest)
    ok = first <= last + 1e-6
    tgt, slot, win, first, last = tgt[ok], slot[ok], win[ok], first[ok], last[ok]
    parts = []
    for q in range(n + 1):
        if q < n and not night.active[q]:
            continue
        if q == n:
            slew = np.full(tgt.size, night.slew.settle_s)
        else:
            slew = least_slew_s(night, np.full(tgt.size, q), tgt, first, last)
        d_lo = slew + night.setup_s + night.exposure_s[tgt]
        keep = first + d_lo <= we[win] + 1e-6
        land = slot + np.floor(d_lo / g + _TOL).astype(int)
        parts.append((np.full(keep.sum(), q), tgt[keep], slot[keep], land[keep], slew[keep]))
    src, target, start, land, slew = (np.concatenate([p[j] for p in parts]) for j in range(5))
    steps = int(math.ceil((night.t1 - t0) / g - _TOL)) + 1
    arcs = GridArcs(src, target, start, np.minimum(land, steps), slew, np.zeros(src.size), n,
                    steps, t0, g)
    return _reachable(arcs, night.repeats)


@dataclass(frozen=True)
class SlewBound:
    bound: float  # the most visits at the level or above (not rounded); inf if not solved
    columns: int
    seconds: float
    status: str


def slew_count_bound(night: PlanNight, level: int, floors: dict[int, int], step_s: float,
                     time_limit_s: float = 120.0, integer: bool = False) -> SlewBound:
    """The most visits at priority ``level`` or above of any plan with at least
    ``floors[q]`` visits at each priority ``q`` (module docstring); LP relaxation, or the
    integer program's proven dual bound when ``integer``."""
    arcs = slew_arcs(night, step_s)
    if arcs.src.size == 0:
        return SlewBound(0.0, 0, 0.0, "empty")
    prog = _Program(night, arcs, spacing_less=1)
    for q, c in floors.items():
        if c > 0:
            prog.keep_at_least(_only_level(prog, q), c)
    cost = prog.count_of(level)
    h = prog.h
    h.changeColsCost(prog.n_cols, np.arange(prog.n_cols, dtype=np.int32), cost)
    h.setOptionValue("time_limit", float(time_limit_s))
    h.setOptionValue("presolve", "on")
    h.setOptionValue("solver", "ipm")  # far quicker than simplex on these networks
    wall = time.perf_counter()
    # the LP relaxation first (a bound by itself); then, if asked, the integer program, whose
    # proven dual bound is kept when lower
    integrality = prog.lp.integrality_
    h.changeColsIntegrality(prog.n_cols, np.arange(prog.n_cols, dtype=np.int32),
                            np.full(prog.n_cols, prog.highs.HighsVarType.kContinuous))
    h.run()
    status = h.modelStatusToString(h.getModelStatus())
    bound = float(h.getInfo().objective_function_value) if status == "Optimal" else math.inf
    if status == "Infeasible":
        return SlewBound(-math.inf, prog.n_cols, time.perf_counter() - wall, status)
    if integer and math.isfinite(bound) and bound - math.floor(bound + 1e-6) > 1e-6:
        h.changeColsIntegrality(prog.n_cols, np.arange(prog.n_cols, dtype=np.int32),
                                np.asarray(integrality))
        h.setOptionValue("time_limit", max(time_limit_s - (time.perf_counter() - wall), 1.0))
        h.setOptionValue("solver", "choose")
        h.run()
        status = h.modelStatusToString(h.getModelStatus())
        bound = min(bound, float(h.getInfo().mip_dual_bound))
    return SlewBound(bound, prog.n_cols, time.perf_counter() - wall, status)


def _only_level(prog: _Program, q: int) -> np.ndarray:
    c = np.zeros(prog.n_cols)
    c[prog.a:prog.a + prog.nx] = prog.night.priority[prog.x_target] == q
    return c
