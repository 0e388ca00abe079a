"""Night plan: the order and times of visits, from per-target windows and airmass curves.

No astronomy happens here.  The caller gives a uniform slot grid over the usable night, the
windows of every target, and each target's airmass, altitude and azimuth sampled on that grid;
this module decides which visits to make and when.  Time is POSIX seconds UTC ("unix").

A visit is one block ``[start, end]``: the slew, then the setup, then the exposure.  Every plan
obeys three rules, whatever the method:

* visits never overlap, and the whole block lies inside one window of its target;
* consecutive repeats of a target start at least ``spacing_s`` apart (start to start);
* a target flagged as near the Sun is never placed unless the options allow it.

Quality is lexicographic: more visits of the highest priority first, then of the next
priority, and so on; then the lowest total airmass excess ``airmass_mid - best_airmass``.
The airmass slack (``PlanOptions.airmass_slack``, default 0.15) bounds what a count may cost:
below the top priority of the targets that can be placed, a visit is made only at airmass
``<= best_airmass * (1 + slack)``; a target left out by that rule although an idle gap of the
plan could hold it gets the reason ``"poor_airmass"``.  The top priority has no ceiling.

Choices made here (documented once, relied on everywhere):

* The slot grid samples the usable night including both ends, so the night is
  ``[slot_unix[0], slot_unix[-1]]``; windows are clipped to it.  Between samples, airmass,
  altitude and azimuth are interpolated linearly in time (azimuth along the shorter arc).
* Slew time between two pointings is ``max(|d az| / rate_az, |d alt| / rate_alt) + settle``,
  with ``|d az|`` taken the shorter way round (the mount is assumed free to turn either way).
  Both pointings are taken at the moment the slew begins; between visits the telescope keeps
  tracking the previous target.
* The first visit of the night costs the settle time only: the telescope is assumed to be
  pointed at it during twilight, before the usable night begins.
* A visit's airmass is the airmass at the middle of its exposure.

How the dispatch plan is made (``"optimal"`` starts from it, see :mod:`skyplan.planning.solver`
and docs/planning.md for the objective both are judged by):

1. Reservations on a coarser slot grid (:mod:`skyplan.planning.optimiser`), about 5 minutes (a
   whole number of the request's steps).  A reserved visit covers ``ceil((allowance + setup +
   exposure) / step)`` slots, the allowance being the median slew between targets that are
   up at the same time (:func:`typical_slew_s`); the forward pass absorbs the rarer longer
   slews.  Visits are reserved greedily, in priority order, each at its cheapest free start.
2. A forward pass (:func:`_forward`) walks the night with the actual slews.  A reserved visit
   starts at its slot, up to one block earlier when the telescope would otherwise stand idle,
   or later when the previous visit overran; a reservation that no longer fits its window
   goes back to the pool.  The gaps are filled greedily (highest priority first, then the
   visit nearest the best airmass it can still reach).
3. An improvement pass (:func:`_improve`) moves every visit inside its free gap toward its
   lowest airmass.

``"optimal"`` returns the plan worth the most among the dispatch plan and the plans realised
from the time-indexed models, with the gap of that plan against a proven upper bound.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from skyplan import notices
from skyplan.errors import InputError, InputErrors
from skyplan.planning.optimiser import SlotModel, build_slot_model, reserve_greedy

METHODS = ("dispatch", "optimal")
REASONS = ("no_window", "too_short", "no_room", "below_priority_cut", "near_sun", "poor_airmass")
AIRMASS_SLACK = 0.15  # default of PlanOptions.airmass_slack

_EPS_S = 1e-6  # tolerance on time comparisons, seconds
# The reservations' slot step and slew allowance (measured on the synthetic nights) and the
# improvement sweeps.
_IP_STEP_S = 300.0
_ALLOWANCE_QUANTILE = 0.5
_SWEEPS = 3


@dataclass(frozen=True)
class SlewModel:
    """Mount speeds: azimuth and altitude rates (deg/s) and a settle time after every slew."""

    rate_az_deg_s: float
    rate_alt_deg_s: float
    settle_s: float

    def slew_s(
        self, alt0_deg: np.ndarray, az0_deg: np.ndarray, alt1_deg: np.ndarray, az1_deg: np.ndarray
    ) -> np.ndarray:
        """Slew time between pointings: the slower axis decides, azimuth the shorter way round."""
        daz = np.abs(np.asarray(az1_deg) - np.asarray(az0_deg)) % 360.0
        daz = np.minimum(daz, 360.0 - daz)
        dalt = np.abs(np.asarray(alt1_deg) - np.asarray(alt0_deg))
        return np.maximum(daz / self.rate_az_deg_s, dalt / self.rate_alt_deg_s) + self.settle_s

    def longest_s(self) -> float:
        """Worst-case slew between two pointings above the horizon (180 deg az or 90 deg alt)."""
        return max(180.0 / self.rate_az_deg_s, 90.0 / self.rate_alt_deg_s) + self.settle_s


@dataclass(frozen=True)
class PlanRequest:
    """The facts a plan is made from; arrays are indexed by target (N), slot (S), window (K)."""

    slot_unix: np.ndarray  # [S] uniform grid over the usable night, both ends included
    win_target: np.ndarray  # [K] target index of each window
    win_start_unix: np.ndarray  # [K]
    win_end_unix: np.ndarray  # [K]
    exposure_s: np.ndarray  # [N] one exposure block
    repeats: np.ndarray  # [N] >= 1
    spacing_s: np.ndarray  # [N] minimum time between the starts of consecutive repeats
    priority: np.ndarray  # [N] int, higher = more important
    best_airmass: np.ndarray  # [N] lowest airmass inside the target's windows tonight
    sun_flag: np.ndarray  # [N] True = near the Sun
    airmass: np.ndarray  # [N, S] inf or NaN below the horizon
    alt_deg: np.ndarray  # [N, S]
    az_deg: np.ndarray  # [N, S]
    setup_s: float  # fixed overhead of every visit, after the slew
    slew: SlewModel


@dataclass(frozen=True)
class PlanOptions:
    """How to plan: method, optimiser time limit, priority cut, Sun override, airmass slack.

    ``airmass_slack``: below the top priority, visits only at airmass <= best * (1 + slack);
    ``None`` turns the rule off.
    """

    method: str = "dispatch"
    time_limit_s: float = 2.0
    priority_cut: int | None = None  # targets with priority below this are not placed
    allow_near_sun: bool = False
    airmass_slack: float | None = AIRMASS_SLACK


@dataclass(frozen=True)
class Visit:
    """One planned observation; ``repeat`` counts from 1 in time order for its target."""

    target: int
    repeat: int
    start_unix: float
    slew_s: float
    setup_s: float
    exposure_start_unix: float
    end_unix: float
    airmass_mid: float


@dataclass(frozen=True)
class PlanMetrics:
    """Figures of merit of a plan.

    ``objective`` is the plan's own score, the sum over visits of ``airmass_mid - best_airmass``
    (the same quantity for both methods).  ``solver_objective``, ``dual_bound`` and ``gap`` are
    what HiGHS proved for the last stage of the integer program (the nominal airmass excess of
    the pruned slot model); they are ``None`` for dispatch or when that stage was not reached.
    ``proven_optimal`` is True only when the optimised plan is returned and every stage was
    solved to optimality (over the pruned slot model) within the time limit.
    """

    placed: int  # targets with at least one visit
    possible: int  # targets allowed and with a window long enough for one visit
    airmass_excess: float  # mean airmass of visits / mean of their best airmass - 1; NaN if none
    idle_minutes: float  # between the first possible start and the last end, not in any visit
    objective: float
    solver_objective: float | None
    dual_bound: float | None
    gap: float | None
    method: str
    proven_optimal: bool
    visits: int = 0  # visits placed
    visits_possible: int = 0  # repeats asked of the targets counted in ``possible``


@dataclass(frozen=True)
class Plan:
    """The visits of one night in time order, and every target not (fully) placed, with why."""

    visits: list[Visit]
    not_placed: dict[int, str]  # target -> one of REASONS
    missing_repeats: dict[int, int]  # placed targets that got fewer repeats than asked
    metrics: PlanMetrics = field(repr=False)
    repeats_short: dict[int, tuple[int, int]] = field(default_factory=dict)  # (got, asked)


def make_plan(request: PlanRequest, options: PlanOptions | None = None) -> Plan:
    """Plan one night: choose the visits and their times.

    Deterministic for the same inputs while every solve ends inside the time limit (HiGHS with
    fixed options); one stopped by the limit returns the best found by then, which depends on
    the machine's speed and load (the gap then says how far the plan may be from the best).
    """
    options = options or PlanOptions()
    if options.method not in METHODS:
        raise InputError(f"unknown method {options.method!r}; use one of {METHODS}", field="method")
    if not options.time_limit_s >= 0:
        raise InputError("the time limit must be >= 0 seconds", field="time_limit_s")
    if options.airmass_slack is not None and not 0 <= options.airmass_slack < 100:
        raise InputError("the airmass slack must be a fraction >= 0", field="airmass_slack")
    night = _Night(request, options)
    model = build_slot_model(night, _IP_STEP_S, typical_slew_s(night, _ALLOWANCE_QUANTILE))
    greedy = reserve_greedy(model)
    dispatch = _improve(night, _forward(night, model, greedy))
    if options.method == "dispatch":
        return _finish(night, dispatch, "dispatch", None)
    from skyplan.planning import solver

    typical = typical_slew_s(night, _ALLOWANCE_QUANTILE)
    outcome = solver.optimise(night, dispatch, options.time_limit_s, _improve, typical)
    if not outcome.solved:
        notices.add("the optimiser found no plan in time; the plan was made by dispatch")
    elif outcome.method == "dispatch":
        notices.add("the dispatch plan was worth more than the optimised one and was kept")
    return _finish(night, outcome.visits, outcome.method, outcome)


class _Night:
    """Validated inputs and the derived quantities every method needs."""

    def __init__(self, req: PlanRequest, opt: PlanOptions) -> None:
        self.slot_unix = np.asarray(req.slot_unix, dtype=float)
        s = self.slot_unix.size
        if s < 2 or not np.all(np.isfinite(self.slot_unix)):
            raise ValueError("slot_unix needs at least two finite samples")
        self.t0, self.t1 = float(self.slot_unix[0]), float(self.slot_unix[-1])
        self.step_s = (self.t1 - self.t0) / (s - 1)
        if self.step_s <= 0 or np.ptp(np.diff(self.slot_unix)) > 1e-6 * self.step_s:
            raise ValueError("slot_unix must be a uniform, increasing grid")
        self.exposure_s = _per_target(req.exposure_s, float, "exposure_s")
        n = self.n = self.exposure_s.size
        self.repeats = _per_target(req.repeats, int, "repeats", n)
        self.spacing_s = _per_target(req.spacing_s, float, "spacing_s", n)
        self.priority = _per_target(req.priority, int, "priority", n)
        self.best_airmass = _per_target(req.best_airmass, float, "best_airmass", n)
        sun = _per_target(req.sun_flag, bool, "sun_flag", n)
        _check_values(self, req)
        self.airmass = _fill_nonfinite(_grid(req.airmass, "airmass", n, s))
        self.alt_deg = _grid(req.alt_deg, "alt_deg", n, s)
        self.az_unwrapped = np.degrees(np.unwrap(np.radians(_grid(req.az_deg, "az_deg", n, s))))
        if not (np.all(np.isfinite(self.alt_deg)) and np.all(np.isfinite(self.az_unwrapped))):
            raise ValueError("alt_deg and az_deg must be finite")
        self.setup_s = float(req.setup_s)
        self.slew = req.slew
        self.shortest_visit_s = req.slew.settle_s + self.setup_s + self.exposure_s

        wt = np.asarray(req.win_target, dtype=int).ravel()
        ws = np.maximum(np.asarray(req.win_start_unix, dtype=float).ravel(), self.t0)
        we = np.minimum(np.asarray(req.win_end_unix, dtype=float).ravel(), self.t1)
        if not (wt.size == ws.size == we.size) or np.any((wt < 0) | (wt >= n)):
            raise ValueError("window arrays must have one length and valid target indices")
        keep = we > ws
        self.has_window = np.bincount(wt[keep], minlength=n) > 0
        long_enough = keep & (we - ws >= self.shortest_visit_s[wt] - _EPS_S)
        self.has_room = np.bincount(wt[long_enough], minlength=n) > 0

        self.cut = np.zeros(n, bool)
        if opt.priority_cut is not None:
            self.cut = self.priority < opt.priority_cut
        self.sun_blocked = sun & (not opt.allow_near_sun)
        self.active = self.has_room & ~self.cut & ~self.sun_blocked
        if not np.all(self.best_airmass[self.active] > 0):
            raise ValueError("best_airmass must be a positive number for every target placed")
        self.max_airmass = np.full(n, np.inf)
        if opt.airmass_slack is not None and self.active.any():
            self.slack_applies = self.active & (self.priority < self.priority[self.active].max())
            self.max_airmass[self.slack_applies] = self.best_airmass[self.slack_applies] * (
                1.0 + opt.airmass_slack
            )
        else:
            self.slack_applies = np.zeros(n, bool)
        use = long_enough & self.active[wt]
        order = np.lexsort((ws[use], wt[use]))
        self.win_target, self.win_start, self.win_end = (
            wt[use][order],
            ws[use][order],
            we[use][order],
        )

    # -- interpolation on the slot grid ------------------------------------------------------
    def _index(self, t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        u = (np.asarray(t, dtype=float) - self.t0) / self.step_s
        k = np.clip(np.floor(u).astype(int), 0, self.slot_unix.size - 2)
        return k, np.clip(u - k, 0.0, 1.0)

    def _sample(self, grid: np.ndarray, i: np.ndarray, t: np.ndarray) -> np.ndarray:
        k, f = self._index(t)
        return grid[i, k] * (1.0 - f) + grid[i, k + 1] * f

    def airmass_at(self, i: np.ndarray, t: np.ndarray) -> np.ndarray:
        return self._sample(self.airmass, i, t)

    def pointing_at(self, i: np.ndarray, t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        return self._sample(self.alt_deg, i, t), self._sample(self.az_unwrapped, i, t) % 360.0


def typical_slew_s(night: _Night, quantile: float) -> float:
    """A quantile of the slews between targets both inside a window, at nine times of night."""
    s = night.slot_unix.size
    times = night.slot_unix[np.linspace(0, s - 1, 9).round().astype(int)]
    inside = (night.win_start[:, None] <= times + _EPS_S) & (
        night.win_end[:, None] >= times - _EPS_S
    )
    slews = []
    for k, t in enumerate(times):
        i = np.unique(night.win_target[inside[:, k]])
        if i.size < 2:
            continue
        alt, az = night.pointing_at(i, np.full(i.shape, t))
        a, b = np.triu_indices(i.size, 1)
        slews.append(night.slew.slew_s(alt[a], az[a], alt[b], az[b]))
    if not slews:
        return night.slew.longest_s()
    return float(np.quantile(np.concatenate(slews), quantile))


def _per_target(values, kind, name: str, n: int | None = None) -> np.ndarray:
    arr = np.asarray(values).ravel().astype(kind)
    if n is not None and arr.size != n:
        raise ValueError(f"{name} has {arr.size} entries, expected one per target ({n})")
    return arr


def _grid(values, name: str, n: int, s: int) -> np.ndarray:
    arr = np.asarray(values, dtype=float)
    if arr.shape != (n, s):
        raise ValueError(f"{name} must have shape ({n}, {s}), got {arr.shape}")
    return arr


def _check_values(night: _Night, req: PlanRequest) -> None:
    """Per-target values the user can get wrong: one InputError per bad target and field."""
    problems = []
    for name, values, bad, want in (
        ("exposure_s", night.exposure_s, ~(night.exposure_s > 0), "a positive number of seconds"),
        ("repeats", night.repeats, night.repeats < 1, "at least 1"),
        ("spacing_s", night.spacing_s, ~(night.spacing_s >= 0), "zero or more seconds"),
    ):
        bad |= ~np.isfinite(values)
        problems += [
            InputError(f"target {i}: {values[i]} is not {want}", field=name)
            for i in np.flatnonzero(bad)
        ]
    if not (req.setup_s >= 0 and req.slew.settle_s >= 0):
        problems.append(InputError("setup and settle times must be >= 0", field="setup_s"))
    if not (req.slew.rate_az_deg_s > 0 and req.slew.rate_alt_deg_s > 0):
        problems.append(InputError("slew rates must be > 0", field="slew"))
    if len(problems) == 1:
        raise problems[0]
    if problems:
        raise InputErrors(problems)


def _fill_nonfinite(grid: np.ndarray) -> np.ndarray:
    """Replace inf/NaN samples by the nearest finite sample along time (earlier one first).

    Interpolation at a window edge may touch a sample below the horizon; the finite neighbour
    is the honest value there.  Rows with no finite sample become a large sentinel.
    """
    ok = np.isfinite(grid)
    s = grid.shape[1]
    idx = np.arange(s)
    prev = np.maximum.accumulate(np.where(ok, idx, -1), axis=1)
    nxt = np.minimum.accumulate(np.where(ok, idx, s)[:, ::-1], axis=1)[:, ::-1]
    use_prev = (prev >= 0) & ((nxt >= s) | (idx - prev <= nxt - idx))
    src = np.where(use_prev, prev, np.minimum(nxt, s - 1))
    out = np.take_along_axis(grid, src, axis=1)
    return np.where(np.isfinite(out), out, 1e3)


def _forward(night: _Night, model: SlotModel, chosen: np.ndarray) -> list[tuple]:
    """Walk the night forward: realise the reserved visits and fill the gaps between them.

    At each free moment ``t``, among the visits that can start now and end before the next
    reservation (window, spacing and repeats all respected), the highest priority is placed,
    then the smallest regret (airmass at mid-exposure minus the lowest airmass the target can
    still reach in its windows), then the lowest index.  When nothing fits before the next
    reservation, that reserved visit starts now if it is at most one block early and still
    valid, else at its slot.  A reservation that would break a rule (impossible with the
    worst-case allowance; kept as a guard) goes back to the pool.  Returns
    ``(target, start, slew, exposure_start, end)`` tuples in time order.
    """
    n = night.n
    order = np.lexsort((model.var_target[chosen], model.var_slot[chosen]))
    res_i = model.var_target[chosen][order]
    res_t = model.slot_unix[model.var_slot[chosen][order]]
    res_early = model.var_block[chosen][order] * model.step_s
    remaining = np.where(night.active, night.repeats, 0) - np.bincount(res_i, minlength=n)
    upcoming = {int(i): list(res_t[res_i == i]) for i in np.unique(res_i)}
    next_res = np.full(n, np.inf)
    for i, times in upcoming.items():
        next_res[i] = times[0]
    last_start = np.full(n, -np.inf)
    wt, ws, we = night.win_target, night.win_start, night.win_end
    future_best = _future_best(night)
    visits: list[tuple] = []
    prev = -1
    t = float(ws.min()) if ws.size else night.t1

    def timing(i: np.ndarray, start: float) -> tuple[np.ndarray, np.ndarray]:
        if prev < 0:
            slew = np.full(i.shape, night.slew.settle_s)
        else:
            alt0, az0 = night.pointing_at(np.array([prev]), np.array([start]))
            alt1, az1 = night.pointing_at(i, np.full(i.shape, start))
            slew = night.slew.slew_s(alt0, az0, alt1, az1)
        return slew, start + slew + night.setup_s + night.exposure_s[i]

    def valid(i: np.ndarray, start: float, end: np.ndarray, deadline: float) -> np.ndarray:
        """Visits of targets i over [start, end]: inside a window, spaced, before deadline."""
        end_of = np.full(n, np.inf)
        end_of[i] = end
        inside = (ws <= start + _EPS_S) & (we >= end_of[wt] - _EPS_S)
        ok = np.zeros(n, bool)
        ok[wt[inside]] = True
        ok &= start >= last_start + night.spacing_s - _EPS_S
        ok &= start <= next_res - night.spacing_s + _EPS_S
        low = night.airmass_at(i, end - night.exposure_s[i] / 2) <= night.max_airmass[i]
        return ok[i] & low & (end <= deadline + _EPS_S)

    def place(i: int, start: float, slew: float, end: float) -> None:
        nonlocal prev, t
        visits.append((i, start, slew, end - night.exposure_s[i], end))
        last_start[i] = start
        prev, t = i, end

    k = 0
    while True:
        deadline = res_t[k] if k < res_t.size else night.t1
        cand = np.flatnonzero(remaining > 0)
        slew, end = timing(cand, t)
        ok = valid(cand, t, end, deadline)
        if ok.any():
            cand, slew, end = cand[ok], slew[ok], end[ok]
            mid = end - night.exposure_s[cand] / 2
            regret = night.airmass_at(cand, mid) - future_best[cand, _slot_after(night, t)]
            j = np.lexsort((cand, regret, -night.priority[cand]))[0]
            remaining[cand[j]] -= 1
            place(int(cand[j]), t, float(slew[j]), float(end[j]))
            continue
        opens = ws[(ws > t + _EPS_S) & (remaining[wt] > 0)]
        release = last_start + night.spacing_s
        release = release[(release > t + _EPS_S) & (remaining > 0)]
        t_next = min((float(e.min()) for e in (opens, release) if e.size), default=np.inf)
        if k >= res_t.size or res_t[k] > t_next:
            if not np.isfinite(t_next):
                break
            t = t_next
            continue
        i, slot_t = int(res_i[k]), float(res_t[k])
        upcoming[i].pop(0)
        next_res[i] = upcoming[i][0] if upcoming[i] else np.inf
        early = 0.0 < slot_t - t <= res_early[k]
        for start in (t, slot_t) if early else (max(t, slot_t),):
            slew, end = timing(np.array([i]), start)
            if valid(np.array([i]), start, end, night.t1)[0]:
                place(i, start, float(slew[0]), float(end[0]))
                break
        else:
            remaining[i] += 1
        k += 1
    return visits


def _improve(night: _Night, raw: list[tuple]) -> list[tuple]:
    """Local search: move each visit inside its free gap toward its lowest airmass.

    A visit may start anywhere between the end of the previous visit and the latest start
    that still ends by the next one's start (on a grid of half the slot step, plus both
    ends).  Its own slew is recomputed from the previous target; the next visit's slew is
    unchanged, because it is taken at the next visit's start, from the previous target's
    pointing then.  A move is kept only if the visit stays inside one window, keeps the
    spacing from its target's other visits and its airmass ceiling, and lowers its airmass
    at mid-exposure.  Sweeps run in time order until nothing moves or ``sweeps`` are done.
    """
    visits = sorted(raw, key=lambda v: (v[1], v[0]))
    wt, ws, we = night.win_target, night.win_start, night.win_end
    for _ in range(_SWEEPS):
        moved = False
        for k, (i, start, _slew, _exp, end) in enumerate(visits):
            lo = visits[k - 1][4] if k else float(ws[wt == i].min())
            hi = visits[k + 1][1] if k + 1 < len(visits) else night.t1
            if hi - lo <= end - start + _EPS_S:
                continue
            starts = np.unique(np.r_[np.arange(lo, hi, night.step_s / 2), hi, start])
            if k:
                prev = np.array([visits[k - 1][0]])
                alt0, az0 = night.pointing_at(prev, starts)
                alt1, az1 = night.pointing_at(np.array([i]), starts)
                slew = night.slew.slew_s(alt0, az0, alt1, az1)
            else:
                slew = np.full(starts.shape, night.slew.settle_s)
            ends = starts + slew + night.setup_s + night.exposure_s[i]
            own = wt == i
            ok = (ends <= hi + _EPS_S) & np.any(
                (ws[own] <= starts[:, None] + _EPS_S) & (we[own] >= ends[:, None] - _EPS_S), axis=1
            )
            for j, v in enumerate(visits):
                if v[0] == i and j != k:
                    ok &= np.abs(starts - v[1]) >= night.spacing_s[i] - _EPS_S
            am = night.airmass_at(np.full(starts.shape, i), ends - night.exposure_s[i] / 2)
            ok &= am <= night.max_airmass[i]
            current = night.airmass_at(np.array([i]), np.array([end - night.exposure_s[i] / 2]))
            if not ok.any():
                continue
            b = np.flatnonzero(ok)[np.argmin(am[ok])]
            if am[b] < current[0] - 1e-9:
                exp_start = float(ends[b] - night.exposure_s[i])
                visits[k] = (i, float(starts[b]), float(slew[b]), exp_start, float(ends[b]))
                moved = True
        if not moved:
            break
    return visits


def _rank(night: _Night, visits: list[tuple]) -> tuple:
    """Lexicographic value of realised visits: counts by priority (highest first), then airmass."""
    target = np.array([v[0] for v in visits], dtype=int)
    mid = np.array([v[3] for v in visits]) + night.exposure_s[target] / 2
    excess = float(np.sum(night.airmass_at(target, mid) - night.best_airmass[target]))
    counts = [int(np.sum(night.priority[target] == p)) for p in np.unique(night.priority)[::-1]]
    return (*counts, -excess)


def _future_best(night: _Night) -> np.ndarray:
    """[N, S+1]: lowest airmass sampled inside a window of the target at or after each slot."""
    s = night.slot_unix.size
    covered = (night.slot_unix >= night.win_start[:, None] - _EPS_S) & (
        night.slot_unix <= night.win_end[:, None] + _EPS_S
    )
    inside = np.zeros((night.n, s), bool)
    np.logical_or.at(inside, night.win_target, covered)
    masked = np.where(inside, night.airmass, np.inf)
    out = np.full((night.n, s + 1), np.inf)
    out[:, :s] = np.minimum.accumulate(masked[:, ::-1], axis=1)[:, ::-1]
    return out


def _slot_after(night: _Night, t: float) -> int:
    return int(np.clip(np.ceil((t - night.t0) / night.step_s - 1e-9), 0, night.slot_unix.size))


def _fits_in_a_gap(night: _Night, raw: list[tuple], targets: np.ndarray) -> np.ndarray:
    """Which targets could take one visit in an idle gap of the plan, whatever its airmass.

    For every gap (before the first visit, between two, after the last) and every window of
    a target, the visit starts as early as both allow; it fits if it ends inside the window
    and leaves the next visit its exposure start (the next slew then begins from this target).
    """
    fits = np.zeros(targets.size, bool)
    use = np.isin(night.win_target, targets)
    wt, ws, we = night.win_target[use], night.win_start[use], night.win_end[use]
    gaps = [(-1, night.t0), *((v[0], v[4]) for v in raw)]
    for (prev, lo), after in zip(gaps, [*raw, None], strict=True):
        start = np.maximum(ws, lo)
        if prev < 0:
            slew = np.full(wt.shape, night.slew.settle_s)
        else:
            alt0, az0 = night.pointing_at(np.full(wt.shape, prev), start)
            alt1, az1 = night.pointing_at(wt, start)
            slew = night.slew.slew_s(alt0, az0, alt1, az1)
        end = start + slew + night.setup_s + night.exposure_s[wt]
        ok = end <= we + _EPS_S
        if after is not None:
            j, t_next, exp_next = after[0], after[1], after[3]
            alt0, az0 = night.pointing_at(wt, np.full(wt.shape, t_next))
            alt1, az1 = night.pointing_at(np.full(wt.shape, j), np.full(wt.shape, t_next))
            slew_next = night.slew.slew_s(alt0, az0, alt1, az1)
            ok &= t_next + slew_next + night.setup_s <= exp_next + _EPS_S
            ok &= end <= t_next + _EPS_S
        fits |= np.isin(targets, wt[ok])
    return fits


def _finish(night: _Night, raw: list[tuple], method: str, solve) -> Plan:
    """Number the repeats, give every unplaced target its reason, and compute the metrics."""
    raw = sorted(raw, key=lambda v: (v[1], v[0]))
    target = np.array([v[0] for v in raw], dtype=int)
    mid = np.array([v[3] for v in raw]) + night.exposure_s[target] / 2
    am = night.airmass_at(target, mid)
    count = np.zeros(night.n, int)
    visits = []
    for (i, start, slew, exp_start, end), am_mid in zip(raw, am.tolist(), strict=True):
        count[i] += 1
        times = (float(start), float(slew), night.setup_s, float(exp_start), float(end))
        visits.append(Visit(int(i), int(count[i]), *times, am_mid))
    reason = np.select(
        [night.cut, night.sun_blocked, ~night.has_window, ~night.has_room],
        ["below_priority_cut", "near_sun", "no_window", "too_short"],
        "no_room",
    )
    left_out = np.flatnonzero((count == 0) & night.slack_applies)
    reason[left_out[_fits_in_a_gap(night, raw, left_out)]] = "poor_airmass"
    not_placed = {int(i): str(reason[i]) for i in np.flatnonzero(count == 0)}
    short = (count > 0) & (count < night.repeats)
    missing = {int(i): int(night.repeats[i] - count[i]) for i in np.flatnonzero(short)}

    best = night.best_airmass[target]
    excess = float(am.mean() / best.mean() - 1.0) if visits else float("nan")
    idle = 0.0
    if visits:
        busy = sum(v.end_unix - v.start_unix for v in visits)
        idle = (visits[-1].end_unix - float(night.win_start.min()) - busy) / 60.0
    metrics = PlanMetrics(
        placed=int(np.count_nonzero(count)),
        possible=int(np.count_nonzero(night.active)),
        airmass_excess=excess,
        idle_minutes=idle,
        objective=float(np.sum(am - best)),
        solver_objective=None if solve is None else solve.value,
        dual_bound=None if solve is None else solve.bound,
        gap=None if solve is None else solve.gap,
        method=method,
        proven_optimal=bool(solve is not None and solve.gap is not None and solve.gap <= 1e-4),
        visits=len(visits),
        visits_possible=int(np.sum(np.where(night.active, night.repeats, 0))),
    )
    got = {int(i): (int(count[i]), int(night.repeats[i])) for i in np.flatnonzero(short)}
    return Plan(visits, not_placed, missing, metrics, got)
