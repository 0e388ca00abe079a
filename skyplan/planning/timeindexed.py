"""Time-indexed models of the night: a padded one to plan with, a relaxed one to bound with.

Both are the time-indexed formulation of single-machine scheduling (Sousa & Wolsey 1992, "A
time indexed formulation of non-preemptive single machine scheduling problems", Math.
Programming 54): a binary ``x[v]`` per variable ``v = (target, start slot)`` on a grid of
step ``g`` from the night's start ``t0``, at most one block on every slot, at most
``repeats`` visits per target, at most one start of a target in any ``spacing`` slots; the
objective is the summed merit (:mod:`skyplan.planning.merit`) of the chosen variables.

**Padded model** (what the plan is made from).  A variable starting at ``s_j = t0 + j g``
reserves ``ceil((A + setup + exposure) / g)`` slots, ``A`` being the longest slew between two
pointings above the horizon (:meth:`SlewModel.longest_s`), and the whole reservation lies in
one window.  Its exposure is placed at ``s_j + A + setup``; whatever the real slew from the
previous target (at most ``A``), the visit starts ``slew + setup`` before that exposure, after
``s_j``, so it never overlaps its neighbours and stays inside the window.  The merit of the
variable is the merit of that exposure exactly: a realised plan is worth at least the model's
objective.  Spacing: realised starts lie in ``[s_j, s_j + A - settle]``, so two starts of a
target keep ``ceil((spacing + A - settle) / g)`` slots apart.

**Relaxed model** (the upper bound).  Every realised plan maps onto it: round each visit's
start ``s`` up to the grid, ``j = ceil((s - t0) / g)``, and shorten its block to
``floor(d / g)`` slots, ``d = settle + setup + exposure`` being the shortest a visit can be.
Two visits in time order, ``s2 >= s1 + d1``, then satisfy ``j1 + floor(d1 / g) <= j2``
(because ``ceil(a) + floor(b) <= ceil(a + b)``), so the blocks stay disjoint; a start in
``[ws, we - d]`` maps into ``[ceil(ws), ceil(we - d)]``; spacing ``>= sp`` maps to starts at
least ``ceil(sp / g) - 1`` slots apart.  The merit of a variable is the highest a visit
starting in ``(s_j - g, s_j]`` can have: the lowest airmass of the linear interpolation over
every mid-exposure time such a visit can reach (slews from settle to ``A``), found at the
ends of that interval and the grid samples inside.  Hence the optimum of this model, and its
linear-programming relaxation above it, bound the value of every plan obeying the rules.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

import numpy as np

from skyplan.planning.merit import merit

if TYPE_CHECKING:
    from skyplan.planning.model import PlanNight

_TOL = 1e-9


@dataclass(frozen=True)
class TimeModel:
    """Variables (target, start slot), their blocks and merits, and per-target rules."""

    var_target: np.ndarray  # [M] sorted by (target, slot)
    var_slot: np.ndarray  # [M]
    var_block: np.ndarray  # [M] slots reserved, from var_slot on
    var_merit: np.ndarray  # [M]
    spacing_slots: np.ndarray  # [N] least distance between two starts of a target, in slots
    repeats: np.ndarray  # [N]
    t0: float
    step_s: float
    # Relaxed model only: the shortest duration (s) of each variable's visit, for the time rows.
    var_duration: np.ndarray | None = None

    @property
    def size(self) -> int:
        return int(self.var_target.size)


def ramp(count: np.ndarray) -> np.ndarray:
    """0, 1, ..., count[0]-1, 0, 1, ..., count[1]-1, ... (vectorised)."""
    return np.arange(count.sum()) - np.repeat(np.cumsum(count) - count, count)


def padded_model(
    night: PlanNight, step_s: float, weight: np.ndarray, pad_s: float | None = None,
    only: np.ndarray | None = None,
) -> TimeModel:
    """The model plans are made from (see the module docstring).

    ``pad_s``: the slew allowance, the longest slew by default (the proven case); a shorter
    one gives a denser model whose realisation may have to push or drop visits.  ``only``:
    a mask of the targets to model (default every target).
    """
    pad = night.slew.longest_s() if pad_s is None else float(pad_s)
    t0, g = night.t0, step_s
    wt, ws, we = night.win_target, night.win_start, night.win_end
    if only is not None:
        keep = np.asarray(only, bool)[wt]
        wt, ws, we = wt[keep], ws[keep], we[keep]
    span = pad + night.setup_s + night.exposure_s
    lo = np.ceil((ws - t0) / g - _TOL).astype(int)
    hi = np.floor((we - span[wt] - t0) / g + _TOL).astype(int)
    count = np.maximum(hi - lo + 1, 0)
    tgt = np.repeat(wt, count)
    slot = np.repeat(lo, count) + ramp(count)
    mid = t0 + slot * g + pad + night.setup_s + night.exposure_s[tgt] / 2
    airmass = night.airmass_at(tgt, mid)
    ok = airmass <= night.max_airmass[tgt]
    value = merit(weight[tgt], airmass, night.best_airmass[tgt])
    block = np.ceil(span / g - _TOL).astype(int)
    spacing = np.where(
        night.spacing_s > 0,
        np.ceil((night.spacing_s + pad - night.slew.settle_s) / g - _TOL),
        0,
    ).astype(int)
    return _assemble(night, tgt[ok], slot[ok], block, value[ok], spacing, g)


def relaxed_model(night: PlanNight, step_s: float, weight: np.ndarray,
                  only: np.ndarray | None = None) -> TimeModel:
    """The relaxation whose optimum bounds every plan (see the module docstring); ``only``:
    a mask of the targets to model (default every target)."""
    pad, settle = night.slew.longest_s(), night.slew.settle_s
    t0, g, setup = night.t0, step_s, night.setup_s
    wt, ws, we = night.win_target, night.win_start, night.win_end
    if only is not None:
        keep = np.asarray(only, bool)[wt]
        wt, ws, we = wt[keep], ws[keep], we[keep]
    shortest = settle + setup + night.exposure_s
    latest = we - shortest[wt]  # latest start inside each window
    lo = np.ceil((ws - t0) / g - _TOL).astype(int)
    hi = np.floor((latest - t0) / g).astype(int) + 1
    count = np.maximum(hi - lo + 1, 0)
    win = np.repeat(np.arange(wt.size), count)
    tgt = wt[win]
    slot = np.repeat(lo, count) + ramp(count)
    s_j = t0 + slot * g
    half = night.exposure_s[tgt] / 2
    first = np.maximum(s_j - g, ws[win])
    last = np.minimum(s_j, latest[win])
    keep = first <= last + 1e-6
    tgt, slot, win = tgt[keep], slot[keep], win[keep]
    mid_lo = first[keep] + settle + setup + half[keep]
    mid_hi = np.minimum(last[keep] + pad + setup + half[keep], we[win] - half[keep])
    mid_hi = np.maximum(mid_hi, mid_lo)
    airmass = _lowest_between(night, tgt, mid_lo, mid_hi, g + pad)
    ok = airmass <= night.max_airmass[tgt] + 1e-12
    value = merit(weight[tgt], airmass, night.best_airmass[tgt])
    block = np.floor((shortest - 1e-6) / g).astype(int)
    spacing = np.maximum(np.ceil(night.spacing_s / g - _TOL).astype(int) - 1, 0)
    model = _assemble(night, tgt[ok], slot[ok], block, value[ok], spacing, g)
    return replace(model, var_duration=shortest[model.var_target])


LOWEST_CHUNK = 40_000  # variables whose samples are evaluated at once (bounds the temporaries)


def _lowest_between(night: PlanNight, tgt, t_lo, t_hi, longest_s: float) -> np.ndarray:
    """Lowest airmass of the linear interpolation over [t_lo, t_hi]: ends and inner samples.

    Evaluated ``LOWEST_CHUNK`` variables at a time; each variable's value is computed alone,
    so the chunks change nothing but the size of the temporaries.
    """
    out = np.empty(tgt.size)
    for a in range(0, tgt.size, LOWEST_CHUNK):
        b = a + LOWEST_CHUNK
        out[a:b] = _lowest_chunk(night, tgt[a:b], t_lo[a:b], t_hi[a:b], longest_s)
    return out


def _lowest_chunk(night: PlanNight, tgt, t_lo, t_hi, longest_s: float) -> np.ndarray:
    m = int(math.ceil(longest_s / night.step_s)) + 2
    base = np.floor((t_lo - night.t0) / night.step_s)
    times = night.t0 + (base[:, None] + np.arange(m)[None, :]) * night.step_s
    times = np.clip(times, t_lo[:, None], t_hi[:, None])
    times = np.concatenate([times, t_hi[:, None]], axis=1)
    rows = np.repeat(tgt[:, None], times.shape[1], axis=1)
    return night.airmass_at(rows.ravel(), times.ravel()).reshape(times.shape).min(axis=1)


def _assemble(night, tgt, slot, block, value, spacing, g) -> TimeModel:
    """Sort by (target, slot) and keep the best merit of duplicate (target, slot) pairs."""
    order = np.lexsort((-value, slot, tgt))
    tgt, slot, value = tgt[order], slot[order], value[order]
    first = np.ones(tgt.size, bool)
    first[1:] = (tgt[1:] != tgt[:-1]) | (slot[1:] != slot[:-1])
    tgt, slot, value = tgt[first], slot[first], value[first]
    return TimeModel(
        var_target=tgt,
        var_slot=slot,
        var_block=block[tgt],
        var_merit=value,
        spacing_slots=spacing,
        repeats=np.where(night.active, night.repeats, 0),
        t0=night.t0,
        step_s=g,
    )


def constraint_columns(model: TimeModel) -> tuple:
    """``A x <= ub`` in compressed columns: (column starts, row indices, values, ub, rows)."""
    tgt, slot, block = model.var_target, model.var_slot, model.var_block
    m = tgt.size
    rows, cols, ubs = [], [], []
    n_rows = 0
    # At most `repeats` visits per target.
    targets, group = np.unique(tgt, return_inverse=True)
    rows.append(group)
    cols.append(np.arange(m))
    ubs.append(model.repeats[targets].astype(float))
    n_rows += targets.size
    # At most one block on every slot.
    n_slots = int((slot + block).max()) if m else 0
    cover = np.repeat(slot, block) + ramp(block)
    rows.append(n_rows + cover)
    cols.append(np.repeat(np.arange(m), block))
    ubs.append(np.ones(n_slots))
    n_rows += n_slots
    # At most one start of a target in any `spacing` consecutive slots (beyond its block).
    sp = model.spacing_slots[tgt]
    need = (model.repeats[tgt] > 1) & (sp > block)
    if need.any():
        key = tgt * (n_slots + 1) + slot
        end = np.searchsorted(key, tgt * (n_slots + 1) + np.minimum(slot + sp, n_slots))
        lead = np.flatnonzero(need & (end - np.arange(m) > 1))
        width = end[lead] - lead
        rows.append(n_rows + np.repeat(np.arange(lead.size), width))
        cols.append(np.repeat(lead, width) + ramp(width))
        ubs.append(np.ones(lead.size))
        n_rows += lead.size
    vals = [np.ones(x.size) for x in rows]
    if model.var_duration is not None:
        r, c, v, ub = _time_rows(model, n_slots)
        rows.append(n_rows + r)
        cols.append(c)
        vals.append(v)
        ubs.append(ub)
        n_rows += ub.size
    r, c, v = np.concatenate(rows), np.concatenate(cols), np.concatenate(vals)
    order = np.argsort(c, kind="stable")
    start = np.searchsorted(c[order], np.arange(m + 1))
    return start, r[order], v[order], np.concatenate(ubs), n_rows


TIME_ROW_SPAN_S = 7200.0  # length of the spans of the time rows
TIME_ROW_EVERY_S = 3600.0  # and their spacing


def _time_rows(model: TimeModel, n_slots: int) -> tuple:
    """Rows bounding the time taken by visits that start in a span of slots.

    Visits starting (realised) in ``(s_a - g, s_b]`` do not overlap, so all but the last end
    by ``s_b``: their shortest durations add up to at most ``s_b - s_a + g + d_max``, ``d_max``
    the longest among them.  Without these rows, visits shorter than one slot would take no
    room in the relaxed model at all.  One row per span of ``TIME_ROW_SPAN_S`` every
    ``TIME_ROW_EVERY_S``, and one for the whole night.
    """
    g = model.step_s
    span = max(int(round(TIME_ROW_SPAN_S / g)), 1)
    every = max(int(round(TIME_ROW_EVERY_S / g)), 1)
    firsts = [(a, min(a + span, n_slots) - 1) for a in range(0, n_slots, every)]
    firsts.append((0, n_slots - 1))
    rows, cols, vals, ubs = [], [], [], []
    d = model.var_duration
    for k, (a, b) in enumerate(firsts):
        inside = np.flatnonzero((model.var_slot >= a) & (model.var_slot <= b))
        if inside.size == 0:
            ubs.append(0.0)
            continue
        rows.append(np.full(inside.size, k))
        cols.append(inside)
        vals.append(d[inside])
        ubs.append((b - a + 1) * g + float(d[inside].max()))
    if not rows:
        return np.zeros(0, int), np.zeros(0, int), np.zeros(0), np.asarray(ubs, float)
    return np.concatenate(rows), np.concatenate(cols), np.concatenate(vals), np.asarray(ubs)


@dataclass(frozen=True)
class Solution:
    chosen: np.ndarray  # indices of the chosen variables (none for a relaxation)
    objective: float  # summed merit of the chosen variables, or the relaxation's optimum
    bound: float  # the solver's proven upper bound on this model's optimum (inf: unknown)
    optimal: bool  # solved to optimality (a MIP: within the relative gap MIP_GAP)
    found: bool  # the solver returned a solution
    x: np.ndarray  # the solver's values of the variables (empty without a solution)
    slot_price: np.ndarray  # LP only: the capacity rows' duals, >= 0 (empty otherwise)


MIP_GAP = 1e-4


def solve(model: TimeModel, time_limit_s: float, integer: bool, floors=(),
          rows=()) -> Solution:
    """Maximise the summed merit with HiGHS (``highspy``): a MIP, or its LP relaxation.

    Options are fixed (one thread, HiGHS's fixed random seed, relative gap ``MIP_GAP``), so a
    solve that ends inside its time limit is reproducible.  ``floors``: pairs (mask of the
    variables, least count): rows asking at least that many of those variables, after the
    model's own rows.  ``rows``: triples (coefficient of each variable, lower, upper): any
    other linear rows, after those.
    """
    m = model.size
    if m == 0:
        return Solution(np.zeros(0, int), 0.0, 0.0, True, True, np.zeros(0), np.zeros(0))
    from highspy import _core as highs  # the bare solver object: no banner on stdout

    start, index, value, ub, n_rows = constraint_columns(model)
    lp = highs.HighsLp()
    lp.num_col_, lp.num_row_ = m, n_rows
    lp.col_cost_ = -model.var_merit
    lp.col_lower_ = np.zeros(m)
    lp.col_upper_ = np.ones(m)
    lp.row_lower_ = np.full(n_rows, -highs.kHighsInf)
    lp.row_upper_ = ub
    lp.a_matrix_.format_ = highs.MatrixFormat.kColwise
    lp.a_matrix_.start_ = start
    lp.a_matrix_.index_ = index
    lp.a_matrix_.value_ = value
    if integer:
        lp.integrality_ = [highs.HighsVarType.kInteger] * m
    h = highs._Highs()
    for key, value in (
        ("output_flag", False),
        ("threads", 1),
        ("time_limit", max(float(time_limit_s), 1e-3)),
        ("mip_rel_gap", MIP_GAP),
    ):
        h.setOptionValue(key, value)
    h.passModel(lp)
    for mask, least in floors:
        cols = np.flatnonzero(mask).astype(np.int32)
        h.addRow(float(least), highs.kHighsInf, cols.size, cols, np.ones(cols.size))
    for coef, lower, upper in rows:
        cols = np.flatnonzero(coef).astype(np.int32)
        h.addRow(float(max(lower, -highs.kHighsInf)), float(min(upper, highs.kHighsInf)),
                 cols.size, cols, np.asarray(coef, float)[cols])
    h.run()
    info = h.getInfo()
    optimal = h.getModelStatus() == highs.HighsModelStatus.kOptimal
    x = np.asarray(h.getSolution().col_value)
    none = np.zeros(0)
    if not integer:
        if not optimal:
            return Solution(np.zeros(0, int), 0.0, math.inf, False, False, none, none)
        bound = float(-info.objective_function_value)
        first = np.unique(model.var_target).size  # the capacity rows follow the repeat rows
        n_slots = int((model.var_slot + model.var_block).max())
        dual = np.asarray(h.getSolution().row_dual)[first : first + n_slots]
        return Solution(np.zeros(0, int), bound, bound, True, True, x, np.maximum(-dual, 0.0))
    if x.size != m or not (optimal or info.primal_solution_status == 2):
        return Solution(np.zeros(0, int), 0.0, math.inf, False, False, none, none)
    chosen = np.flatnonzero(x > 0.5)
    bound = -float(info.mip_dual_bound)
    return Solution(chosen, float(model.var_merit[chosen].sum()), bound, optimal, True, x, none)


def round_down(model: TimeModel, x: np.ndarray) -> np.ndarray:
    """A feasible integer solution from a fractional one: variables by value, then merit.

    Each variable in turn (largest ``x`` first, then the highest merit, then the lowest
    index) is taken if its slots are free, its target has repeats left and the spacing holds;
    the variables with ``x = 0`` follow, so the result is also maximal.  Returns the chosen
    indices, sorted.
    """
    m = model.size
    if m == 0:
        return np.zeros(0, int)
    order = np.lexsort((np.arange(m), -model.var_merit, -np.round(x, 6)))
    n_slots = int((model.var_slot + model.var_block).max()) + 1
    busy = np.zeros(n_slots, bool)
    left = model.repeats.copy()
    taken: dict[int, list[int]] = {}
    chosen = []
    for v in order.tolist():
        i = int(model.var_target[v])
        if left[i] <= 0:
            continue
        s, d = int(model.var_slot[v]), int(model.var_block[v])
        if busy[s : s + d].any():
            continue
        sp = max(int(model.spacing_slots[i]), d, 1)
        if any(abs(s - o) < sp for o in taken.get(i, ())):
            continue
        busy[s : s + d] = True
        left[i] -= 1
        taken.setdefault(i, []).append(s)
        chosen.append(v)
    return np.array(sorted(chosen), dtype=int)
