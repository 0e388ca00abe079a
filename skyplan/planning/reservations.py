"""Reservations on a slot grid: the first step of the dispatch plan.

The slot model lists every variable ``(target, start slot)`` whose reserved block, a whole
number of slots long, fits inside one window of the target, and its cost: the nominal airmass
excess ``airmass_mid - best_airmass`` if the visit started there.  A set of chosen variables is
feasible when

* no slot is covered by two blocks,
* a target has at most ``repeats`` visits, and
* two visits of one target start at least ``spacing_slots`` apart.

:func:`reserve_greedy` chooses such a set in priority order, each visit at its cheapest free
start; :mod:`skyplan.planning.dispatch` then realises the reservations with the real slews.
The optimising method works on its own time-indexed models (:mod:`skyplan.planning.solver`).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from skyplan.planning.timeindexed import ramp

if TYPE_CHECKING:
    from skyplan.planning.model import PlanNight


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
