"""The best visit counts of a small night, exactly, on a grid of visit starts (a yardstick).

Not a planning method: an integer program that is exact for the planner's rules when every
visit starts on a grid of step ``g`` (1 minute by default) from the night's start, so that
the counts it finds on small nights say how far the planner (below) and the count bound
(above) are from the best plan.

**The model: a path through a time-expanded network.**  A node ``(q, k)`` is "the telescope
is free from grid time ``t_k = t0 + k g`` on, pointed at target ``q``" (or at nothing, before
the first visit).  Arcs:

* wait: ``(q, k) -> (q, k + 1)``: the telescope stays on ``q`` (a slew starting later is
  measured from ``q``'s place then);
* visit: ``(p, k) -> (i, l)``: a visit of ``i`` starts at ``t_k``; its slew is the night's
  slew model from ``p`` to ``i`` at ``t_k`` (:meth:`SlewModel.slew_s` on
  :meth:`PlanNight.pointing_at`; settle only when nothing came before), so it ends at
  ``e = t_k + slew + setup + exposure``, and ``l`` is the first grid time at or after ``e``
  (the next visit may start there).  The arc exists only when the whole visit
  ``[t_k, e]`` lies inside one window of ``i`` and the air mass at the middle of the
  exposure is within ``i``'s ceiling (the airmass slack).

One unit of flow leaves ``(nothing, 0)``; a path is exactly a plan whose starts are on the
grid, with the real slew at the real time between consecutive visits (the pointing state is
the node), so no slew is approximated.  Start variables ``x[i, k]`` (the sum of the visit
arcs of ``i`` at ``k``) carry the per-target rules: at most ``repeats`` of them, and, for the
spacing, at most one in any run of grid times shorter than the spacing (the starts of a
target closer than the spacing pairwise conflict; those conflicts form an interval graph,
whose cliques are these runs).  This is the arc-time-indexed view of sequence-dependent
scheduling (Pessoa, Uchoa, Poggi de Aragão & Rodrigues 2010, "Exact algorithm over an
arc-time-indexed formulation for parallel machine scheduling problems", Math. Programming
Computation 2), with the machine's state the last target instead of the last job.

**Lexicographic counts.**  Maximise the visits at the top priority; keep at least that many
and maximise the visits at the next level; and so on (the level-by-level order the planner's
weights ask for).  Each stage is warm-started with the previous plan and solved by HiGHS
with one thread and a time limit; its MIP gap is reported: a count is exact (the best on the
grid) only when the gap is 0, and it is always the count of a feasible plan.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass

import numpy as np

from skyplan.planning import merit
from skyplan.planning.model import PlanNight

_EPS_S = 1e-6


@dataclass(frozen=True)
class GridArcs:
    """The visit arcs of a night on a start grid (state ``n`` is "nothing yet")."""

    src: np.ndarray  # [A] state before the visit: a target, or n
    target: np.ndarray  # [A]
    start: np.ndarray  # [A] grid index of the start
    land: np.ndarray  # [A] grid index from which the next visit may start
    slew_s: np.ndarray  # [A]
    merit: np.ndarray  # [A] the visit's merit (docs/planning.md) with the planner's weights
    n: int
    steps: int  # grid times 0 .. steps; starts at 0 .. steps - 1
    t0: float
    step_s: float


def grid_arcs(night: PlanNight, step_s: float = 60.0) -> GridArcs:
    """Every visit arc of the network (see the module docstring), vectorised per grid time."""
    n = night.n
    starts = np.arange(night.t0, night.t1, step_s)
    weight = merit.priority_weights(night.priority, night.active)
    wt, ws, we = night.win_target, night.win_start, night.win_end
    exposure = night.exposure_s
    parts = []
    for k, t in enumerate(starts):
        open_ = np.flatnonzero((ws <= t + _EPS_S) & (we > t))
        if open_.size == 0:
            continue
        i = wt[open_]
        src = np.arange(n + 1)
        pi, ki = np.repeat(src, open_.size), np.tile(np.arange(open_.size), n + 1)
        tgt = i[ki]
        tt = np.full(tgt.size, t)
        first = pi == n
        a0, z0 = night.pointing_at(np.where(first, tgt, pi), tt)
        a1, z1 = night.pointing_at(tgt, tt)
        slew = np.where(first, night.slew.settle_s, night.slew.slew_s(a0, z0, a1, z1))
        end = t + slew + night.setup_s + exposure[tgt]
        mid = end - exposure[tgt] / 2
        x = night.airmass_at(tgt, mid)
        ok = (end <= we[open_][ki] + _EPS_S) & (x <= night.max_airmass[tgt])
        land = np.ceil((end - night.t0 - 1e-9) / step_s).astype(int)
        value = merit.merit(weight[tgt], x, night.best_airmass[tgt])
        parts.append((pi[ok], tgt[ok], np.full(ok.sum(), k), land[ok], slew[ok], value[ok]))
    cols = [np.concatenate([p[j] for p in parts]) if parts else np.zeros(0) for j in range(6)]
    src, tgt, start, land = (c.astype(int) for c in cols[:4])
    # a target's windows are disjoint, so each (source, target, start) has one arc
    return _reachable(GridArcs(src, tgt, start, land, cols[4], cols[5], n, starts.size,
                               night.t0, step_s), night.repeats)


def _reachable(arcs: GridArcs, repeats: np.ndarray) -> GridArcs:
    """Drop arcs no plan uses: leaving a target's state before any visit of it can have
    ended, or a second visit of a target asked once right after its first."""
    earliest = np.full(arcs.n + 1, np.iinfo(np.int64).max)
    np.minimum.at(earliest, arcs.target, arcs.land)
    earliest[arcs.n] = 0
    keep = (arcs.start >= earliest[arcs.src]) & ~(
        (arcs.src == arcs.target) & (repeats[arcs.target] == 1))
    return GridArcs(arcs.src[keep], arcs.target[keep], arcs.start[keep], arcs.land[keep],
                    arcs.slew_s[keep], arcs.merit[keep], arcs.n, arcs.steps, arcs.t0,
                    arcs.step_s)


@dataclass(frozen=True)
class Stage:
    """One solve: what was maximised, the plan's count, the solver's bound, the MIP gap."""

    level: int | None  # visits at priority >= level; None: the merit
    value: float
    bound: float
    gap: float
    seconds: float
    status: str


@dataclass(frozen=True)
class ExactResult:
    visits: list[tuple]  # (target, start, slew, exposure start, end), realised
    stages: list[Stage]
    columns: int

    @property
    def exact(self) -> bool:
        return all(s.gap <= 1e-9 for s in self.stages)


class _Program:
    """The network as a HiGHS model: visit arcs, wait arcs, start variables, rules."""

    def __init__(self, night: PlanNight, arcs: GridArcs, spacing_less: int = 0) -> None:
        """``spacing_less``: the spacing runs are that many grid times shorter (a relaxation's
        mapping of starts, :mod:`slew_bound`)."""
        from highspy import _core as highs

        self.highs, self.arcs, self.night = highs, arcs, night
        n, steps = arcs.n, arcs.steps
        a = arcs.src.size
        # start variables: one per (target, start) pair that has an arc
        pair = arcs.target * steps + arcs.start
        self.pairs, arc_pair = np.unique(pair, return_inverse=True)
        self.x_target, self.x_start = self.pairs // steps, self.pairs % steps
        nx = self.pairs.size
        # wait arcs (q, k) -> (q, k + 1) from each state's first possible time
        earliest = np.full(n + 1, steps)
        np.minimum.at(earliest, arcs.target, arcs.land)
        earliest[n] = 0
        runs = np.maximum(steps - earliest, 0)
        wq = np.repeat(np.arange(n + 1), runs)
        wk = np.repeat(np.minimum(earliest, steps), runs) + _ramp(runs)
        nw = wq.size
        self.n_cols = a + nx + nw

        def node(q, k):  # the conservation row of node (q, k), k < steps
            return q * steps + k

        rows, cols, vals = [], [], []
        lo, hi = [], []
        # flow conservation: out - in = 1 at (nothing, 0), 0 elsewhere (k < steps)
        n_nodes = (n + 1) * steps
        r_out = node(arcs.src, arcs.start)
        rows += [r_out, node(wq, wk)]
        cols += [np.arange(a), a + nx + np.arange(nw)]
        vals += [np.ones(a), np.ones(nw)]
        into = arcs.land < steps
        rows += [node(arcs.target[into], arcs.land[into]), node(wq[wk + 1 < steps],
                                                                 wk[wk + 1 < steps] + 1)]
        cols += [np.flatnonzero(into), a + nx + np.flatnonzero(wk + 1 < steps)]
        vals += [-np.ones(into.sum()), -np.ones(int(np.sum(wk + 1 < steps)))]
        rhs = np.zeros(n_nodes)
        rhs[node(n, 0)] = 1.0
        lo.append(rhs)
        hi.append(rhs)
        r = n_nodes
        # x[i, k] = the visit arcs of i at k
        rows += [r + arc_pair, r + np.arange(nx)]
        cols += [np.arange(a), a + np.arange(nx)]
        vals += [np.ones(a), -np.ones(nx)]
        lo.append(np.zeros(nx))
        hi.append(np.zeros(nx))
        r += nx
        # repeats
        tg = np.unique(self.x_target)
        rows.append(r + np.searchsorted(tg, self.x_target))
        cols.append(a + np.arange(nx))
        vals.append(np.ones(nx))
        lo.append(np.full(tg.size, -highs.kHighsInf))
        hi.append(night.repeats[tg].astype(float))
        r += tg.size
        # spacing: at most one start of a target in any run shorter than its spacing
        run = np.ceil((night.spacing_s - _EPS_S) / arcs.step_s).astype(int) - spacing_less
        lead = np.flatnonzero((run[self.x_target] > 1) & (night.repeats[self.x_target] > 1))
        if lead.size:
            end = np.searchsorted(self.pairs, self.pairs[lead] + run[self.x_target[lead]])
            width = end - lead
            lead, width = lead[width > 1], width[width > 1]
            rows.append(r + np.repeat(np.arange(lead.size), width))
            cols.append(a + np.repeat(lead, width) + _ramp(width))
            vals.append(np.ones(width.sum()))
            lo.append(np.full(lead.size, -highs.kHighsInf))
            hi.append(np.ones(lead.size))
            r += lead.size
        self.n_rows = r
        r_, c_, v_ = np.concatenate(rows), np.concatenate(cols), np.concatenate(vals)
        order = np.argsort(c_, kind="stable")
        lp = highs.HighsLp()
        lp.num_col_, lp.num_row_ = self.n_cols, r
        lp.col_cost_ = np.zeros(self.n_cols)
        lp.col_lower_ = np.zeros(self.n_cols)
        lp.col_upper_ = np.ones(self.n_cols)
        lp.row_lower_ = np.concatenate(lo)
        lp.row_upper_ = np.concatenate(hi)
        lp.a_matrix_.format_ = highs.MatrixFormat.kColwise
        lp.a_matrix_.start_ = np.searchsorted(c_[order], np.arange(self.n_cols + 1))
        lp.a_matrix_.index_ = r_[order]
        lp.a_matrix_.value_ = v_[order]
        lp.integrality_ = ([highs.HighsVarType.kInteger] * (a + nx)
                           + [highs.HighsVarType.kContinuous] * nw)
        lp.sense_ = highs.ObjSense.kMaximize
        self.lp, self.a, self.nx = lp, a, nx
        self.h = highs._Highs()
        for key, value in (("output_flag", False), ("threads", 1), ("mip_rel_gap", 0.0),
                           ("mip_abs_gap", 0.0), ("random_seed", 0),
                           ("presolve", "off")):
            self.h.setOptionValue(key, value)
        self.h.passModel(lp)

    def count_of(self, level: int) -> np.ndarray:
        """The objective counting visits at priority >= level, over all columns."""
        c = np.zeros(self.n_cols)
        c[self.a:self.a + self.nx] = self.night.priority[self.x_target] >= level
        return c

    def solve(self, cost: np.ndarray, limit_s: float, level: int | None,
              warm: np.ndarray | None) -> tuple[Stage, np.ndarray | None]:
        highs, h = self.highs, self.h
        h.changeColsCost(self.n_cols, np.arange(self.n_cols, dtype=np.int32), cost)
        h.setOptionValue("time_limit", float(limit_s))
        if warm is not None:
            sol = highs.HighsSolution()
            sol.col_value = list(warm)
            sol.value_valid = True
            h.setSolution(sol)
        wall = time.perf_counter()
        h.run()
        wall = time.perf_counter() - wall
        info, status = h.getInfo(), h.getModelStatus()
        if info.primal_solution_status != 2:
            return Stage(level, math.nan, math.nan, math.inf, wall, str(status)), None
        x = np.round(np.asarray(h.getSolution().col_value), 6)
        value = float(cost @ x)
        bound = float(info.mip_dual_bound)
        if level is not None:  # a count is whole: exact once the bound is below value + 1
            bound = math.floor(bound + 1e-6)
        gap = max(bound - value, 0.0) / max(abs(value), 1.0)
        return Stage(level, value, bound, gap, wall, h.modelStatusToString(status)), x

    def merit_cost(self) -> np.ndarray:
        cost = np.zeros(self.n_cols)
        cost[:self.a] = self.arcs.merit
        return cost

    def keep_at_least(self, cost: np.ndarray, least: float) -> None:
        cols = np.flatnonzero(cost).astype(np.int32)
        self.h.addRow(float(least) - 1e-6, self.highs.kHighsInf, cols.size, cols, cost[cols])

    def visits(self, x: np.ndarray) -> list[tuple]:
        """The chosen visit arcs as visits (target, start, slew, exposure start, end)."""
        arcs, night = self.arcs, self.night
        chosen = np.flatnonzero(x[:self.a] > 0.5)
        chosen = chosen[np.argsort(arcs.start[chosen], kind="stable")]
        out = []
        for v in chosen:
            i = int(arcs.target[v])
            start = arcs.t0 + arcs.start[v] * arcs.step_s
            exp_start = start + float(arcs.slew_s[v]) + night.setup_s
            out.append((i, float(start), float(arcs.slew_s[v]), exp_start,
                        exp_start + float(night.exposure_s[i])))
        return out


def _ramp(count: np.ndarray) -> np.ndarray:
    return np.arange(count.sum()) - np.repeat(np.cumsum(count) - count, count)


def exact_counts(night: PlanNight, step_s: float = 60.0, limit_s: float = 60.0,
                 merit_limit_s: float = 0.0,
                 level_limits: dict[int, float] | None = None) -> ExactResult:
    """The lexicographic visit counts (top priority first) of the best plan on the grid.

    Each stage keeps at least the counts of the stages before it; ``level_limits`` gives
    some levels' stages their own time limit.  With ``merit_limit_s`` > 0, a last stage
    maximises the plan's merit (docs/planning.md) keeping every count.
    """
    arcs = grid_arcs(night, step_s)
    if arcs.src.size == 0:
        return ExactResult([], [], 0)
    prog = _Program(night, arcs)
    levels = sorted(set(night.priority[arcs.target].tolist()), reverse=True)
    stages, x = [], None
    for p in levels:
        cost = prog.count_of(p)
        stage, got = prog.solve(cost, (level_limits or {}).get(p, limit_s), p, x)
        stages.append(stage)
        if got is None:
            break
        x = got
        prog.keep_at_least(cost, round(stage.value))
    if merit_limit_s > 0 and x is not None:
        stage, got = prog.solve(prog.merit_cost(), merit_limit_s, None, x)
        stages.append(stage)
        x = got if got is not None else x
    return ExactResult(prog.visits(x) if x is not None else [], stages, prog.n_cols)


def exact_merit(night: PlanNight, step_s: float = 60.0, limit_s: float = 60.0) -> ExactResult:
    """The plan of highest merit (docs/planning.md) on the grid, counts left free."""
    arcs = grid_arcs(night, step_s)
    if arcs.src.size == 0:
        return ExactResult([], [], 0)
    prog = _Program(night, arcs)
    stage, x = prog.solve(prog.merit_cost(), limit_s, None, None)
    return ExactResult(prog.visits(x) if x is not None else [], [stage], prog.n_cols)
