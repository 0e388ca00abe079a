"""The plan made followable by the mount: pier sides, flips and the cable wrap along the night.

The planner estimates slews between two pointings (:class:`skyplan.planning.model.SlewModel`);
what a German mount's flip or an alt-azimuth mount's cable wrap costs depends on the mount's
state, which only a walk through the plan in time order knows.  :func:`follow` walks the
visits, keeps the state and gives every visit its slew from that state:

* German equatorial: a visit may use the pier-west side when it ends by hour angle
  +past_west, the pier-east side when it starts at or after −past_east (the windows the
  planner got are already cut into those pieces, so at least one side holds).  The side of
  the visit before is kept when it holds; otherwise the mount flips, and the flip time is
  added to the slew.  The slew is in hour angle and declination.
* Alt-azimuth with a cable wrap: the azimuth axis reads the target's azimuth plus a whole
  number of turns; the reading is chosen so that the visit's whole azimuth track stays inside
  the wrap, nearest the axis's reading when the slew begins
  (:func:`skyplan.engine.mount.wrap_turns`), and the slew turns the axis by the difference.

A visit keeps its exposure start when its slew fits before it; otherwise it starts when the
visit before ends and its exposure comes later, and it is dropped if it then leaves its
window, its air-mass ceiling or its spacing.  With neither a German mount nor a wrap the
plan is returned unchanged.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from skyplan.engine.mount import axes_slew_s, wrap_turns

if TYPE_CHECKING:
    from skyplan.planning.model import PlanNight

_EPS_S = 1e-6
_FIXED_POINT_STEPS = 4
WEST, EAST = 0, 1


@dataclass(frozen=True)
class MountState:
    """Per visit of a followed plan: the pier side (German mounts; -1 otherwise) and the
    azimuth axis's readings at the start and the end of the exposure (altaz with a wrap;
    NaN otherwise)."""

    side: np.ndarray
    axis_az_start_deg: np.ndarray
    axis_az_end_deg: np.ndarray


def needs_walk(night: PlanNight) -> bool:
    """Whether the mount's state changes slews: a German mount or a cable wrap."""
    return night.slew.german or night.slew.wrap_deg is not None


def follow(night: PlanNight, visits: list[tuple]) -> list[tuple]:
    """The visits ``(target, start, slew, exposure_start, end)`` with their slews from the
    mount's state, re-timed or dropped where a slew no longer fits (see the module's text)."""
    if not needs_walk(night):
        return visits
    return _walk(night, sorted(visits, key=lambda v: (v[1], v[0])))[0]


def settle(night: PlanNight, visits: list[tuple], weight: np.ndarray) -> list[tuple]:
    """The plan as the mount follows it (:func:`follow`), with the time the walk freed given
    extra visits (:func:`realise.fill_gaps`) and followed again when that raises the plan's
    value.  A plan is valued and compared only in this form, so the value and gap reported
    are those of the plan the user gets; with neither a German mount nor a wrap the plan is
    returned unchanged.  One refill: a second and third found little and took the time the
    optimiser's later steps use better (1 000 targets, one-turn wrap, two nights: values
    0.6 % and 2.0 % lower with three, 0.2–0.4 s longer)."""
    if not needs_walk(night):
        return visits
    from skyplan.planning import realise

    best = follow(night, visits)
    filled = realise.fill_gaps(night, best, weight)
    if len(filled) == len(best):
        return best
    again = follow(night, filled)
    if realise.plan_value(night, again, weight) > realise.plan_value(night, best, weight) + 1e-9:
        return again
    return best


def states(night: PlanNight, visits: list[tuple]) -> MountState:
    """The mount's state along a followed plan (in time order): the same walk as
    :func:`follow`, which leaves a followed plan as it is."""
    n = len(visits)
    if not needs_walk(night):
        return MountState(np.full(n, -1), np.full(n, np.nan), np.full(n, np.nan))
    mount = _Mount(night)
    side, az0, az1 = [], [], []
    for i, start, _slew, exp_start, end in sorted(visits, key=lambda v: (v[1], v[0])):
        got = mount.slew(i, start, end)
        if got is None:
            raise ValueError("the plan was not followed before its mount's state was asked")
        _record(night, mount, i, exp_start, end, got, side, az0, az1)
    return MountState(np.array(side, dtype=int), np.array(az0), np.array(az1))


def _record(night: PlanNight, mount: _Mount, i: int, exp_start: float, end: float, got,
            side: list, az0: list, az1: list) -> None:
    side.append(got[1])
    if night.slew.wrap_deg is not None:
        az0.append(_at(night, night.az_unwrapped, i, exp_start) + 360.0 * got[2])
        az1.append(_at(night, night.az_unwrapped, i, end) + 360.0 * got[2])
    else:
        az0.append(np.nan)
        az1.append(np.nan)
    mount.prev, mount.side, mount.turns = i, got[1], got[2]


def _at(night: PlanNight, grid: np.ndarray, i: int, t: float) -> float:
    u = (t - night.t0) / night.step_s
    k = min(max(int(u // 1), 0), night.slot_unix.size - 2)
    f = min(max(u - k, 0.0), 1.0)
    return float(grid[i, k] * (1.0 - f) + grid[i, k + 1] * f)


def _wrapped_ha(night: PlanNight, i: int, t: float) -> float:
    return (_at(night, night.ha_unwrapped, i, t) + 180.0) % 360.0 - 180.0


def _sides(night: PlanNight, i: int, start: float, end: float) -> tuple[bool, bool]:
    """(pier west holds, pier east holds) for a visit of ``i`` over [start, end]."""
    east_rad, west_rad = night.slew.past_meridian_rad
    h0 = _wrapped_ha(night, i, start)
    h1 = h0 + _at(night, night.ha_unwrapped, i, end) - _at(night, night.ha_unwrapped, i, start)
    return (h1 <= np.degrees(west_rad) + 1e-9,
            h0 >= -np.degrees(east_rad) - 1e-9 and h1 < 180.0)


def _track(night: PlanNight, i: int, start: float, end: float) -> tuple[float, float, float]:
    """(azimuth at start, lowest, highest) of the continuous azimuth over [start, end]: the
    interpolation's ends and the grid's samples strictly between them."""
    first = _at(night, night.az_unwrapped, i, start)
    last = _at(night, night.az_unwrapped, i, end)
    k0 = max(int(np.floor((start - night.t0) / night.step_s)) + 1, 0)
    k1 = min(int(np.ceil((end - night.t0) / night.step_s)) - 1, night.slot_unix.size - 1)
    while k0 <= k1 and night.slot_unix[k0] <= start:
        k0 += 1
    while k1 >= k0 and night.slot_unix[k1] >= end:
        k1 -= 1
    if k0 > k1:
        return first, min(first, last), max(first, last)
    inner = night.az_unwrapped[i, k0:k1 + 1]
    return first, min(first, last, float(inner.min())), max(first, last, float(inner.max()))


class _Mount:
    """The mount's state while walking: the last target, its side and azimuth turns."""

    def __init__(self, night: PlanNight) -> None:
        self.night = night
        self.prev, self.side, self.turns = -1, -1, 0.0

    def slew(self, i: int, start: float, end: float) -> tuple[float, int, float] | None:
        """(slew, side, turns) of a visit of ``i`` over [start, end]; None if the mount
        cannot follow it (no side holds, no wrap reading fits)."""
        night, m = self.night, self.night.slew
        side, turns, flip = -1, 0.0, 0.0
        if m.german:
            west, east = _sides(night, i, start, end)
            if not (west or east):
                return None
            if self.side in (WEST, EAST) and (west, east)[self.side]:
                side = self.side
            elif west and east:
                side = WEST if _wrapped_ha(night, i, start) < 0 else EAST
            else:
                side = WEST if west else EAST
            flip = m.flip_s if self.prev >= 0 and side != self.side else 0.0
        if m.wrap_deg is not None:
            az_start, lo, hi = _track(night, i, start, end)
            present = (0.5 * sum(m.wrap_deg) if self.prev < 0 else
                       _at(night, night.az_unwrapped, self.prev, start) + 360.0 * self.turns)
            k = float(wrap_turns(az_start, lo, hi, present, *m.wrap_deg))
            if not np.isfinite(k):
                return None
            turns = k
        if self.prev < 0:
            return m.settle_s, side, turns
        if m.wrap_deg is not None:
            d1 = az_start + 360.0 * turns - present
        else:
            d1 = (_at(night, night.axis1, i, start) - _at(night, night.axis1, self.prev, start)
                  + 180.0) % 360.0 - 180.0
        d2 = _at(night, night.axis2, i, start) - _at(night, night.axis2, self.prev, start)
        base = float(axes_slew_s(d1, d2, m.rate_az_deg_s, m.rate_alt_deg_s, m.settle_s))
        return base + flip, side, turns


def _walk(night: PlanNight, visits: list[tuple]):
    """Walk the plan; returns (kept visits, sides, axis azimuth at exposure start and end)."""
    mount = _Mount(night)
    kept: list[tuple] = []
    side: list[int] = []
    az0: list[float] = []
    az1: list[float] = []
    starts: dict[int, list[float]] = {}
    free = night.t0
    for i, start, slew, exp_start, end in visits:
        got = _fit(night, mount, i, slew, exp_start, end, free, starts.get(i, []))
        if got is None:
            continue
        start, exp_start, end, state = got
        kept.append((i, start, exp_start - night.setup_s - start, exp_start, end))
        starts.setdefault(i, []).append(start)
        _record(night, mount, i, exp_start, end, state, side, az0, az1)
        free = end
    return kept, side, az0, az1


def _fit(night: PlanNight, mount: _Mount, i: int, slew: float, exp_start: float, end: float,
         free: float, own_starts: list[float]):
    """(start, exposure start, end, mount.slew's answer) of the visit timed for the mount's
    state, or None when it no longer fits.  The answer is the one for exactly that start and
    end, so that :func:`states` finds it again."""
    lead = night.setup_s
    t = exp_start - lead - slew
    for _ in range(_FIXED_POINT_STEPS):
        got = mount.slew(i, t, end)
        if got is None:
            break
        t, was = exp_start - lead - got[0], t
        if t == was:
            break
    got = mount.slew(i, t, end)
    if got is not None:  # a millisecond's margin absorbs the fixed point's last step
        t = exp_start - lead - got[0] - 1e-3
        got = mount.slew(i, t, end)
    if got is not None and got[0] <= exp_start - lead - t and t >= free - _EPS_S:
        return t, exp_start, end, got
    t = max(free, t)
    exposure = float(night.exposure_s[i])
    got = mount.slew(i, t, t + night.slew.longest_s() + lead + exposure)
    for _ in range(_FIXED_POINT_STEPS):
        if got is None:
            return None
        again = mount.slew(i, t, t + got[0] + lead + exposure)
        if again == got:
            break
        got = again
    else:
        return None
    new_exp = t + got[0] + lead
    new_end = new_exp + exposure
    own = night.win_target == i
    inside = np.any((night.win_start[own] <= t + _EPS_S)
                    & (night.win_end[own] >= new_end - _EPS_S))
    mid = np.array([new_exp + exposure / 2.0])
    low = night.airmass_at(np.array([i]), mid)[0] <= night.max_airmass[i]
    spaced = all(abs(t - s) >= night.spacing_s[i] - _EPS_S for s in own_starts)
    if not (inside and low and spaced):
        return None
    return t, new_exp, new_end, got
