"""Reservations on the slot grid: a priority-ordered greedy and a lexicographic integer program.

The slot model lists every variable ``(target, start slot)`` whose reserved block, a whole
number of slots long, fits inside one window of the target, and its cost: the nominal airmass
excess ``airmass_mid - best_airmass`` if the visit started there.  A set of chosen variables is
feasible when

* no slot is covered by two blocks,
* a target has at most ``repeats`` visits, and
* two visits of one target start at least ``spacing_slots`` apart.

The integer program is the time-indexed formulation of machine scheduling (Sousa & Wolsey
1992, "A time indexed formulation of non-preemptive single machine scheduling problems",
Math. Programming 54): binary ``x[v] = 1`` when variable ``v`` is chosen, one capacity row per
slot.  Repeats of a target share the target's variables (``sum x <= repeats``) instead of having
one copy per repeat, which removes the symmetry between interchangeable repeats; the spacing
rule becomes "at most one start in any ``spacing_slots`` consecutive slots".

Priorities are lexicographic: first the number of visits at the highest priority is maximised;
then, with that count held, their summed cost ``E``, which the later stages may raise by at
most ``TOP_EXCESS_TOLERANCE`` (0.003 airmass) per top-priority visit; then, each held in turn,
the count of the next priority, and so on; last, with every count held, the sum of all the
costs is minimised.  One weighted objective could say the same only with weights that grow
geometrically with the number of levels, which hides the airmass term below the solver's
tolerances; solving in stages keeps every objective in small integers or airmass units.  Each
stage for priority ``p`` only needs the variables with priority ``>= p``.

Why the top priority's airmass comes before the lower counts: below the top, the airmass
slack already bounds what a visit may cost, while the top priority has no ceiling.  Without
that stage the lower counts, maximised first, pushed the top priority off its best airmass
(synthetic nights: top-priority excess 8.0 %, dispatch 2.8 %); weighting the last stage by
priority (2^rank, 4^rank) did not help (7.7-8.3 %), the counts being held by then.  Held
exactly, the top priority's excess kept a low-priority target with a short window at dusk out
of a night with hours of room (every top-priority target being best at dusk too); the
tolerance, 0.003 airmass per visit, admits it (0.0025 is the least that does) and costs the
top priority little.

Only part of the variables go to the solver (:func:`prune`: a fair share of every target's
cheapest starts, the greedy solutions always kept), so "optimal" means optimal over that
pruned model.  Measured on the synthetic 200-target nights of
``benchmarks/bench_scheduling.py`` (2 CPUs) on the 4-minute grid the planner uses there, the
full model has 4 600-6 100 variables (2-minute grid: 15 000-19 000, no good solution in
20 s); pruned to 1 500, the stages take 0.8-1.5 s of CPU in all, most ending at the root
node.  HiGHS runs with fixed options and a node limit, so a solve that ends inside the time
limit is reproducible.

Exact dynamic programming over visit orders needs a state per subset of targets (2^N); it is
used only in the tests, as brute force on tiny cases.
"""

from __future__ import annotations

import time
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from skyplan.planning.model import PlanNight

_MIN_SHARE = 4  # starts every target keeps when pruning, whatever the budget
# Airmass per top-priority visit by which the later stages may raise the top priority's held
# excess (measured on the synthetic nights, see the module docstring).
TOP_EXCESS_TOLERANCE = 0.003


@dataclass(frozen=True)
class SlotModel:
    """Candidate reservations (M variables) and per-target block, spacing, repeats, priority."""

    var_target: np.ndarray  # [M] int, sorted by (target, slot)
    var_slot: np.ndarray  # [M] int, first slot of the block
    var_block: np.ndarray  # [M] int, slots covered by the block
    var_cost: np.ndarray  # [M] nominal airmass excess of the visit
    spacing_slots: np.ndarray  # [N] minimum start-to-start distance of repeats, in slots
    repeats: np.ndarray  # [N]
    priority: np.ndarray  # [N]
    n_slots: int
    relative_to: np.ndarray  # [M] best airmass of each variable's target, for relative excess
    slot_unix: np.ndarray  # [n_slots] start time of every slot of this model's grid
    step_s: float  # the grid's step

    def subset(self, keep: np.ndarray) -> SlotModel:
        """The same model restricted to the variables ``keep`` (sorted indices)."""
        return SlotModel(
            self.var_target[keep],
            self.var_slot[keep],
            self.var_block[keep],
            self.var_cost[keep],
            self.spacing_slots,
            self.repeats,
            self.priority,
            self.n_slots,
            self.relative_to[keep],
            self.slot_unix,
            self.step_s,
        )


@dataclass(frozen=True)
class SolveResult:
    """The chosen variables and what HiGHS proved about the last stage it solved."""

    chosen: np.ndarray  # indices into the model's variables
    objective: float | None  # final stage: summed nominal airmass excess
    dual_bound: float | None
    gap: float | None
    proven_optimal: bool  # every stage solved to optimality


def build_slot_model(
    night: PlanNight, step_s: float | None = None, allowance_s: float | None = None
) -> SlotModel:
    """Every (target, start slot) whose whole reserved block fits inside one window.

    The model's grid takes every k-th sample of the night's grid, ``k = round(step_s /
    night step)`` (every sample by default).  A block is ``ceil((allowance + setup +
    exposure) / step)`` slots, the allowance being the slew allowed before the visit (the
    slew model's worst case by default); at the first slot of the night the settle time
    replaces it.  The cost, the airmass excess at mid-exposure, assumes a slew equal to the
    allowance.  Starts whose airmass at mid-exposure exceeds the target's airmass ceiling
    (``night.max_airmass``) are left out.
    """
    stride = 1 if step_s is None else max(1, int(round(step_s / night.step_s)))
    slot_unix = night.slot_unix[::stride]
    step, n_slots, t0 = night.step_s * stride, slot_unix.size, night.t0
    allowance = night.slew.longest_s() if allowance_s is None else float(allowance_s)
    settle = night.slew.settle_s
    work = night.setup_s + night.exposure_s
    block = np.ceil((allowance + work) / step - 1e-9).astype(int)
    short = np.ceil((settle + work) / step - 1e-9).astype(int)
    wt, ws, we = night.win_target, night.win_start, night.win_end
    first = np.ceil((ws - t0) / step - 1e-9).astype(int)
    end = np.floor((we - t0) / step + 1e-9).astype(int)  # last slot a block may reach
    count = np.maximum(end - np.minimum(short, block)[wt] - first + 1, 0)
    var_target = np.repeat(wt, count)
    var_slot = np.repeat(first, count) + ramp(count)
    var_block = np.where(var_slot == 0, short[var_target], block[var_target])
    slew = np.where(var_slot == 0, settle, allowance)
    mid = slot_unix[var_slot] + slew + night.setup_s + night.exposure_s[var_target] / 2
    airmass = night.airmass_at(var_target, mid)
    ok = (var_slot + var_block <= np.repeat(end, count)) & (
        airmass <= night.max_airmass[var_target]
    )
    key, pick = np.unique(var_target[ok] * n_slots + var_slot[ok], return_index=True)
    var_target, var_slot = key // n_slots, key % n_slots
    return SlotModel(
        var_target=var_target,
        var_slot=var_slot,
        var_block=var_block[ok][pick],
        var_cost=airmass[ok][pick] - night.best_airmass[var_target],
        spacing_slots=np.ceil(night.spacing_s / step - 1e-9).astype(int),
        repeats=night.repeats,
        priority=night.priority,
        n_slots=n_slots,
        relative_to=night.best_airmass[var_target],
        slot_unix=slot_unix,
        step_s=step,
    )


def reserve_greedy(
    model: SlotModel, fixed: np.ndarray | None = None, by_priority: bool = True
) -> np.ndarray:
    """Priority-ordered reservation: each visit takes the free start where its cost is lowest.

    Targets are taken by priority (highest first), then by how few start slots they have (the
    most constrained first), then by index; with ``by_priority=False`` the fewest start slots
    come first and priority only breaks ties.  Each repeat of a target in turn reserves its
    cheapest free feasible start (the earliest on ties).  ``fixed`` variables are kept as
    already reserved.  Returns the chosen variable indices, sorted.
    """
    n = model.repeats.size
    chosen = [] if fixed is None else [int(v) for v in fixed]
    occupied = np.zeros(model.n_slots + 1, bool)
    done = np.zeros(n, int)
    taken: dict[int, list[int]] = {}
    for v in chosen:
        i, s = int(model.var_target[v]), int(model.var_slot[v])
        occupied[s : s + model.var_block[v]] = True
        done[i] += 1
        taken.setdefault(i, []).append(s)
    counts = np.bincount(model.var_target, minlength=n)
    first = np.cumsum(counts) - counts
    targets = np.flatnonzero(counts)
    rank, few = -model.priority[targets], counts[targets]
    targets = targets[np.lexsort((targets, few, rank) if by_priority else (targets, rank, few))]
    for i in targets:
        own = slice(first[i], first[i] + counts[i])
        slots, d, cost = model.var_slot[own], model.var_block[own], model.var_cost[own]
        sp = max(model.spacing_slots[i], 1)
        for _ in range(model.repeats[i] - done[i]):
            busy = np.concatenate(([0], np.cumsum(occupied)))
            free = busy[slots + d] == busy[slots]
            for s in taken.get(i, []):
                free &= np.abs(slots - s) >= sp
            if not free.any():
                break
            j = np.flatnonzero(free)[np.argmin(cost[free])]
            occupied[slots[j] : slots[j] + d[j]] = True
            taken.setdefault(i, []).append(int(slots[j]))
            chosen.append(int(first[i] + j))
    return np.array(sorted(chosen), dtype=int)


def prune(model: SlotModel, keep: np.ndarray, max_vars: int) -> np.ndarray:
    """Variables worth giving the solver: a fair share of every target's cheapest starts.

    Starts are ranked by relative airmass excess ``cost / best`` (stable order, so ties go to
    the earlier variable).  Every target first keeps its cheapest ``max_vars // targets``
    starts (at least its cheapest few), so a target whose every start is dear (one setting at
    dusk, say) is still offered to the solver; the room left goes to the cheapest remaining
    starts of any target.  The ``keep`` variables (greedy solutions) always stay, so the
    solver's optimum over the pruned model is never worse than any of them.  Returns the kept
    variable indices, sorted.
    """
    m = model.var_target.size
    if m <= max_vars:
        return np.arange(m)
    chosen = np.zeros(m, bool)
    chosen[keep] = True
    rel = model.var_cost / model.relative_to
    order = np.lexsort((rel, model.var_target))  # by target, then cheapest first
    tgt = model.var_target[order]
    rank = np.arange(m) - np.searchsorted(tgt, tgt, side="left")
    share = max(max_vars // max(np.unique(tgt).size, 1), _MIN_SHARE)
    chosen[order[rank < share]] = True
    room = max(max_vars - int(chosen.sum()), 0)
    by_cost = np.argsort(rel, kind="stable")
    by_cost = by_cost[~chosen[by_cost]]
    chosen[by_cost[:room]] = True
    return np.flatnonzero(chosen)


def solve_lexicographic(
    model: SlotModel,
    time_limit_s: float,
    node_limit: int | None = None,
    top_tolerance: float = TOP_EXCESS_TOLERANCE,
) -> SolveResult | None:
    """Solve the staged integer program with HiGHS (``scipy.optimize.milp``) within the limit.

    HiGHS runs with fixed options (its defaults: relative gap 1e-4, fixed random seed), so a
    solve that finishes inside the limit is reproducible.  The stages, in order: the count of
    the top priority; the top priority's airmass excess ``E``, after which the later stages
    keep it ``<= E + top_tolerance * (top-priority visits)``; the counts of the other
    priorities; the total airmass excess.  Each stage but the last gets an equal share of the
    time left, the last two shares.  A stage stopped by its time limit holds its best value
    found so far.  If the time runs out before the last stage, the priorities already settled
    keep their solver placements and the rest is reserved by
    :func:`reserve_greedy`.  Returns ``None`` if the solver produced no solution at all.
    """
    deadline = time.monotonic() + max(time_limit_s, 0.0)  # the import counts too
    from scipy.optimize import Bounds, LinearConstraint, milp

    m = model.var_target.size
    if m == 0:
        return SolveResult(np.zeros(0, int), 0.0, 0.0, 0.0, True)
    a, ub = _constraint_matrix(model)
    var_priority = model.priority[model.var_target]
    levels = np.unique(var_priority)[::-1]
    top_vars = var_priority == levels[0]
    # (kind, level); level None: every priority.
    stages = [("count", levels[0]), ("airmass", levels[0]), *(("count", p) for p in levels[1:])]
    stages.append(("airmass", None))
    held: list[tuple[np.ndarray, float, float]] = []  # (row, lower, upper) held from a stage
    settled_level = None  # lowest priority whose count is held
    best_x: np.ndarray | None = None
    proven = True
    for done, (kind, level) in enumerate(stages):
        left = deadline - time.monotonic()
        if left <= 0:
            proven = False
            break
        last = level is None
        share = left if last else left / (len(stages) - done + 1)
        cols = np.ones(m, bool) if last else var_priority >= level
        rows = [LinearConstraint(a[:, cols], -np.inf, ub)]
        for row, lower, upper in held:
            rows.append(LinearConstraint(row[cols][None, :], lower, upper))
        if kind == "count":
            c = -(var_priority[cols] == level).astype(float)
        else:
            c = model.var_cost[cols]
        res = milp(
            c,
            constraints=rows,
            integrality=np.ones(int(cols.sum())),
            bounds=Bounds(0, 1),
            options={
                "time_limit": share,
                "node_limit": node_limit,
                "disp": False,
                "presolve": True,
            },
        )
        if res.x is None:
            proven = False
            break
        x = np.zeros(m)
        x[cols] = np.round(res.x)
        best_x = x
        proven &= res.status == 0
        if kind == "count":
            row = (var_priority == level).astype(float)
            held.append((row, float(row @ x), np.inf))
            settled_level = level
            continue
        if not last:
            row = np.where(top_vars, model.var_cost, 0.0)
            upper = float(row @ x) + top_tolerance * float(np.sum(x[top_vars]))
            held.append((row, -np.inf, upper + 1e-9))
            continue
        return SolveResult(
            chosen=np.flatnonzero(x > 0.5),
            objective=float(res.fun),
            dual_bound=_finite(getattr(res, "mip_dual_bound", None)),
            gap=_finite(getattr(res, "mip_gap", None)),
            proven_optimal=bool(proven),
        )
    if best_x is None:
        return None
    settled = np.zeros(m, bool) if settled_level is None else var_priority >= settled_level
    chosen = reserve_greedy(model, fixed=np.flatnonzero((best_x > 0.5) & settled))
    return SolveResult(chosen, None, None, None, False)


def ramp(count: np.ndarray) -> np.ndarray:
    """0, 1, ..., count[0]-1, 0, 1, ..., count[1]-1, ... (vectorised)."""
    return np.arange(count.sum()) - np.repeat(np.cumsum(count) - count, count)


def _finite(value) -> float | None:
    return float(value) if value is not None and np.isfinite(value) else None


class _Rows:
    """A sparse ``A x <= ub`` built row block by row block."""

    def __init__(self) -> None:
        self.r: list[np.ndarray] = []
        self.c: list[np.ndarray] = []
        self.ub: list[np.ndarray] = []
        self.n = 0

    def add(self, row: np.ndarray, col: np.ndarray, ub: np.ndarray) -> None:
        self.r.append(row + self.n)
        self.c.append(col)
        self.ub.append(np.asarray(ub, dtype=float))
        self.n += len(ub)


def _constraint_matrix(model: SlotModel) -> tuple:
    """Capacity, repeat-count and spacing rows ``A x <= ub``: (A as CSC, ub)."""
    from scipy.sparse import coo_array

    tgt, slot = model.var_target, model.var_slot
    m = tgt.size
    rows = _Rows()
    # Repeats: sum over a target's variables <= repeats.
    targets, group = np.unique(tgt, return_inverse=True)
    rows.add(group, np.arange(m), model.repeats[targets])
    # Capacity: every slot is covered by at most one block.
    d = model.var_block
    covered = np.repeat(slot, d) + ramp(d)
    rows.add(covered, np.repeat(np.arange(m), d), np.ones(model.n_slots))
    # Spacing: at most one start of a target in any window of spacing_slots slots.  Only needed
    # when repeats > 1 and the spacing exceeds the block (otherwise capacity already enforces it).
    sp = model.spacing_slots[tgt]
    need = (model.repeats[tgt] > 1) & (sp > d)
    if need.any():
        key = tgt * (model.n_slots + 1) + slot
        reach = tgt * (model.n_slots + 1) + np.minimum(slot + sp, model.n_slots)
        end = np.searchsorted(key, reach)
        first_row = np.ones(m, bool)
        first_row[1:] = (end[1:] > end[:-1]) | (tgt[1:] != tgt[:-1])
        lead = np.flatnonzero(need & first_row & (end - np.arange(m) > 1))
        width = end[lead] - lead
        row = np.repeat(np.arange(lead.size), width)
        col = np.repeat(lead, width) + ramp(width)
        rows.add(row, col, np.ones(lead.size))
    r, c = np.concatenate(rows.r), np.concatenate(rows.c)
    a = coo_array((np.ones(r.size), (r, c)), shape=(rows.n, m)).tocsc()
    return a, np.concatenate(rows.ub)
