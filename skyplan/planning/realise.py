"""From chosen reservations to visits with real slews, then more visits in the idle gaps.

Visits are ``(target, start, slew, exposure_start, end)`` tuples in time order, as in
:mod:`skyplan.planning.dispatch`.  Every step here keeps the rules (no overlap, the whole
visit inside one window, spacing, repeats, airmass ceilings) and never lowers the plan's
value: realising keeps each exposure where the model put it, and a gap is only ever given an
extra visit.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from skyplan.planning.merit import merit

if TYPE_CHECKING:
    from skyplan.planning.model import PlanNight
    from skyplan.planning.timeindexed import TimeModel

_EPS_S = 1e-6
_FIXED_POINT_STEPS = 3


def slew_into(night: PlanNight, prev: int, i: int, exposure_start: float) -> tuple[float, float]:
    """(start, slew) of a visit of ``i`` whose exposure starts at ``exposure_start``.

    The slew is taken at the moment it begins (the dispatch module's convention), so the
    start solves ``start = exposure_start - setup - slew(prev -> i, at start)``: a fixed
    point, reached in a few steps because pointings move slowly next to the mount.
    """
    if prev < 0:
        slew = night.slew.settle_s
        return exposure_start - night.setup_s - slew, slew
    start = exposure_start - night.setup_s - night.slew.longest_s()
    for _ in range(_FIXED_POINT_STEPS):
        slew = slew_at(night, prev, i, start)
        start = exposure_start - night.setup_s - slew
    slew = slew_at(night, prev, i, start)
    return exposure_start - night.setup_s - slew, slew


def slew_at(night: PlanNight, prev: int, i: int, t: float) -> float:
    """The slew model between two targets at time ``t``, in plain floats (a hot path).

    The same arithmetic as :meth:`SlewModel.slew_s` over :meth:`PlanNight.pointing_at`: linear
    interpolation on the grid, the mount's axes, axis 1 unwrapped and the shorter way round,
    the slower axis, a German mount's flip between targets on opposite sides of the meridian.
    """
    u = (t - night.t0) / night.step_s
    k = min(max(int(u // 1), 0), night.slot_unix.size - 2)
    f = min(max(u - k, 0.0), 1.0)
    a2, a1 = night.axis2, night.axis1
    p0 = a2[prev, k] * (1.0 - f) + a2[prev, k + 1] * f
    p1 = a2[i, k] * (1.0 - f) + a2[i, k + 1] * f
    q0 = (a1[prev, k] * (1.0 - f) + a1[prev, k + 1] * f) % 360.0
    q1 = (a1[i, k] * (1.0 - f) + a1[i, k + 1] * f) % 360.0
    d1 = abs(q1 - q0) % 360.0
    d1 = min(d1, 360.0 - d1)
    m = night.slew
    flip = m.flip_s if m.german and (q0 >= 180.0) != (q1 >= 180.0) else 0.0
    return float(max(d1 / m.rate_az_deg_s, abs(p1 - p0) / m.rate_alt_deg_s) + m.settle_s + flip)


def realise(
    night: PlanNight, model: TimeModel, chosen: np.ndarray, pad_s: float | None = None
) -> list[tuple]:
    """Each chosen variable as a visit whose exposure starts where the model put it.

    With the longest slew as the model's allowance (the default) every visit fits there.
    With a shorter allowance a visit whose slew is longer starts when the previous one ends,
    its exposure later than planned; it is dropped if it then leaves its window, its airmass
    ceiling or its spacing.
    """
    order = chosen[np.lexsort((model.var_target[chosen], model.var_slot[chosen]))]
    pad = night.slew.longest_s() if pad_s is None else float(pad_s)
    visits: list[tuple] = []
    starts: dict[int, list[float]] = {}
    prev, free = -1, night.t0
    own = {int(i): night.win_target == i for i in np.unique(model.var_target[order])}
    for v in order:
        i = int(model.var_target[v])
        exp_start = model.t0 + model.var_slot[v] * model.step_s + pad + night.setup_s
        start, slew = slew_into(night, prev, i, exp_start)
        if start < free:
            start = free
            slew = night.slew.settle_s if prev < 0 else slew_at(night, prev, i, start)
        exp_start = start + slew + night.setup_s
        end = exp_start + night.exposure_s[i]
        ws, we = night.win_start[own[i]], night.win_end[own[i]]
        inside = (ws <= start + _EPS_S) & (we >= end - _EPS_S)
        mid = np.array([end - night.exposure_s[i] / 2])
        ceiling = night.airmass_at(np.array([i]), mid)[0] <= night.max_airmass[i]
        spaced = all(abs(start - s) >= night.spacing_s[i] - _EPS_S for s in starts.get(i, ()))
        if not (inside.any() and ceiling and spaced):
            continue
        visits.append((i, start, slew, exp_start, end))
        starts.setdefault(i, []).append(start)
        prev, free = i, end
    return visits


def fill_gaps(night: PlanNight, visits: list[tuple], weight: np.ndarray) -> list[tuple]:
    """Give idle gaps extra visits, the highest merit first, while any fits.

    A candidate starts as early as the gap and one of its windows allow, with the slew from
    the visit before; it must end inside that window, keep its target's spacing and airmass
    ceiling, and leave the next visit (exposure unmoved) room for its new slew.
    """
    visits = sorted(visits, key=lambda v: (v[1], v[0]))
    n = night.n
    wt, ws, we = night.win_target, night.win_start, night.win_end
    count = np.bincount([v[0] for v in visits], minlength=n)
    starts = [[v[1] for v in visits if v[0] == i] for i in range(n)]
    k = 0  # the gap before visits[k]
    while k <= len(visits):
        left = count < np.where(night.active, night.repeats, 0)
        use = left[wt]
        if not use.any():
            break
        prev = visits[k - 1][0] if k else -1
        lo = visits[k - 1][4] if k else night.t0
        nxt = visits[k] if k < len(visits) else None
        hi = nxt[1] if nxt is not None else night.t1
        # The next visit cannot start earlier than its exposure start minus setup and settle.
        room_end = nxt[3] - night.setup_s - night.slew.settle_s if nxt is not None else hi
        cand = np.flatnonzero(use & (ws < room_end) & (we > lo))
        if cand.size == 0:
            k += 1
            continue
        i = wt[cand]
        start = np.maximum(ws[cand], lo)
        slew = (
            np.full(cand.shape, night.slew.settle_s)
            if prev < 0
            else _slew_many(night, prev, i, start)
        )
        exp_start = start + slew + night.setup_s
        end = exp_start + night.exposure_s[i]
        ok = (end <= we[cand] + _EPS_S) & (end <= room_end + _EPS_S)
        airmass = night.airmass_at(i, exp_start + night.exposure_s[i] / 2)
        ok &= airmass <= night.max_airmass[i]
        value = merit(weight[i], airmass, night.best_airmass[i])
        pick = -1
        for j in np.flatnonzero(ok)[np.lexsort((i[ok], -value[ok]))]:
            t = int(i[j])
            if any(abs(start[j] - s) < night.spacing_s[t] - _EPS_S for s in starts[t]):
                continue
            if nxt is not None:
                s_next = slew_into(night, t, nxt[0], nxt[3])[0]
                if s_next < end[j] - _EPS_S or not _inside(night, nxt[0], s_next, nxt[4]):
                    continue
                others = [s for s in starts[nxt[0]] if s != nxt[1]]
                others += [float(start[j])] if t == nxt[0] else []
                if any(abs(s_next - s) < night.spacing_s[nxt[0]] - _EPS_S for s in others):
                    continue
            pick = j
            break
        if pick < 0:
            k += 1
            continue
        j = pick
        t = int(i[j])
        visits.insert(k, (t, float(start[j]), float(slew[j]), float(exp_start[j]), float(end[j])))
        if nxt is not None:
            s_next, slew_next = slew_into(night, t, nxt[0], nxt[3])
            visits[k + 1] = (nxt[0], s_next, slew_next, nxt[3], nxt[4])
            own_starts = starts[nxt[0]]
            own_starts[own_starts.index(nxt[1])] = s_next
        count[t] += 1
        starts[t].append(float(start[j]))
        k += 1
    return visits


def _inside(night: PlanNight, i: int, start: float, end: float) -> bool:
    """The block [start, end] lies inside one window of target i."""
    own = night.win_target == i
    ws, we = night.win_start[own], night.win_end[own]
    return bool(np.any((ws <= start + _EPS_S) & (we >= end - _EPS_S)))


def _slew_many(night: PlanNight, prev: int, i: np.ndarray, start: np.ndarray) -> np.ndarray:
    alt0, az0 = night.pointing_at(np.full(i.shape, prev), start)
    alt1, az1 = night.pointing_at(i, start)
    return night.slew.slew_s(alt0, az0, alt1, az1)


def plan_value(night: PlanNight, visits: list[tuple], weight: np.ndarray) -> float:
    """The objective of realised visits: the sum of their merits."""
    if not visits:
        return 0.0
    i = np.array([v[0] for v in visits], dtype=int)
    mid = np.array([v[3] for v in visits]) + night.exposure_s[i] / 2
    return float(merit(weight[i], night.airmass_at(i, mid), night.best_airmass[i]).sum())


def compact(night: PlanNight, visits: list[tuple]) -> list[tuple]:
    """Every visit as early as its window, its spacing and the visit before allow.

    Gathers the idle time into fewer, longer gaps that :func:`fill_gaps` can use.  A visit
    keeps its window; one that would end later than before (a longer slew) or pass its
    airmass ceiling stays put.
    """
    visits = sorted(visits, key=lambda v: (v[1], v[0]))
    out: list[tuple] = []
    starts: dict[int, list[float]] = {}
    prev, free = -1, night.t0
    for i, start, slew, exp_start, end in visits:
        own = (night.win_target == i) & (night.win_start <= start + _EPS_S) & (
            night.win_end >= end - _EPS_S
        )
        opens = float(night.win_start[own].max()) if own.any() else start
        new = max(free, opens, *(s + night.spacing_s[i] for s in starts.get(i, ())))
        new_slew = night.slew.settle_s if prev < 0 else slew_at(night, prev, i, new)
        new_end = new + new_slew + night.setup_s + night.exposure_s[i]
        mid = np.array([new_end - night.exposure_s[i] / 2])
        low = night.airmass_at(np.array([i]), mid)[0] <= night.max_airmass[i]
        if new < start - _EPS_S and new_end <= end + _EPS_S and low:
            start, slew, end = new, new_slew, new_end
            exp_start = end - night.exposure_s[i]
        out.append((i, start, slew, exp_start, end))
        starts.setdefault(i, []).append(start)
        prev, free = i, end
    return out


def swap_neighbours(night: PlanNight, visits: list[tuple], weight: np.ndarray) -> list[tuple]:
    """Exchange two consecutive visits when that raises their summed merit.

    The pair keeps the first one's start; the second of the new order follows at once, with
    its slew from the first; the visit after the pair keeps its exposure time and gets its
    new slew.  Every rule is checked for the moved visits; sweeps in time order until nothing
    changes (at most ``_SWAP_SWEEPS``).
    """
    visits = sorted(visits, key=lambda v: (v[1], v[0]))
    for _ in range(_SWAP_SWEEPS):
        changed = False
        for k in range(len(visits) - 1):
            pair = _swapped(night, visits, k, weight)
            if pair is not None:
                visits[k : k + 3 if k + 2 < len(visits) else k + 2] = pair
                changed = True
        if not changed:
            break
    return visits


_SWAP_SWEEPS = 3


def _swapped(night: PlanNight, visits: list[tuple], k: int, weight: np.ndarray):
    """The pair k, k+1 in the other order (and the visit after it), or None if no better."""
    a, b = visits[k], visits[k + 1]
    if a[0] == b[0]:
        return None
    prev = visits[k - 1][0] if k else -1
    nxt = visits[k + 2] if k + 2 < len(visits) else None
    if nxt is not None and nxt[0] in (a[0], b[0]):
        return None  # keeps the spacing checks below independent of each other
    placed = []
    t, before = a[1], prev
    for i in (b[0], a[0]):
        slew = night.slew.settle_s if before < 0 else slew_at(night, before, i, t)
        end = t + slew + night.setup_s + night.exposure_s[i]
        placed.append((i, t, slew, end - night.exposure_s[i], end))
        t, before = end, i
    tail = []
    if nxt is not None:
        s_next, slew_next = slew_into(night, a[0], nxt[0], nxt[3])
        if s_next < t - _EPS_S or not _inside(night, nxt[0], s_next, nxt[4]):
            return None
        if night.spacing_s[nxt[0]] > 0:
            others = [w[1] for w in visits if w[0] == nxt[0] and w is not nxt]
            if any(abs(s_next - s) < night.spacing_s[nxt[0]] - _EPS_S for s in others):
                return None
        tail = [(nxt[0], s_next, slew_next, nxt[3], nxt[4])]
    elif t > night.t1 + _EPS_S:
        return None
    for v in placed:
        i, start, end = v[0], v[1], v[4]
        if not _inside(night, i, start, end):
            return None
        if night.spacing_s[i] > 0:
            others = [w[1] for w in visits if w[0] == i and w not in (a, b)]
            if any(abs(start - s) < night.spacing_s[i] - _EPS_S for s in others):
                return None
    old = plan_value(night, [a, b], weight)
    new_i = np.array([placed[0][0], placed[1][0]])
    mid = np.array([placed[0][3], placed[1][3]]) + night.exposure_s[new_i] / 2
    airmass = night.airmass_at(new_i, mid)
    if np.any(airmass > night.max_airmass[new_i]):
        return None
    if float(merit(weight[new_i], airmass, night.best_airmass[new_i]).sum()) <= old + 1e-9:
        return None
    return placed + tail
