"""The data of a night plan: what a plan is asked (:class:`PlanRequest`, :class:`PlanOptions`),
what it gives (:class:`Plan`, :class:`Visit`, :class:`PlanMetrics`), and :class:`PlanNight`,
the request checked and turned into the arrays every planning method works on.

The rules a plan obeys and how it is made are in :mod:`skyplan.planning.dispatch`, the
dispatch reservations in :mod:`skyplan.planning.reservations`, the optimising method in
:mod:`skyplan.planning.solver`.  Time is POSIX seconds UTC.
The slew time between two pointings is ``max(|d axis 1| / rate 1, |d axis 2| / rate 2) + settle``
on the mount's axes (:class:`SlewModel`), axis 1 the shorter way round.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from skyplan.engine.mount import axes_slew_s
from skyplan.errors import InputError, InputErrors

METHODS = ("dispatch", "optimal")
REASONS = ("no_window", "too_short", "no_room", "below_priority_cut", "near_sun", "poor_airmass")
AIRMASS_SLACK = 0.15  # default of PlanOptions.airmass_slack

EPS_S = 1e-6  # tolerance on time comparisons, seconds


@dataclass(frozen=True)
class SlewModel:
    """The mount's speeds and limits as the planner sees them.

    ``rate_az_deg_s``, ``rate_alt_deg_s``: the rates of axis 1 and axis 2 — azimuth and
    altitude for an alt-azimuth mount (``kind`` "altaz", also the model when no mount is
    named), hour angle and declination for the equatorial kinds; ``settle_s`` after every
    slew.  ``flip_s``: added when a German mount changes pier side; ``past_meridian_rad``:
    its (east, west) tracking past the meridian.  ``wrap_deg``: an alt-azimuth mount's
    cable-wrap range (az_min, az_max), or None.
    """

    rate_az_deg_s: float
    rate_alt_deg_s: float
    settle_s: float
    kind: str = "altaz"
    flip_s: float = 0.0
    past_meridian_rad: tuple[float, float] = (0.0, 0.0)
    wrap_deg: tuple[float, float] | None = None

    @property
    def equatorial(self) -> bool:
        """True when the axes are hour angle and declination."""
        return self.kind != "altaz"

    @property
    def german(self) -> bool:
        return self.kind == "german-equatorial"

    def slew_s(
        self, a2_0: np.ndarray, a1_0: np.ndarray, a2_1: np.ndarray, a1_1: np.ndarray
    ) -> np.ndarray:
        """Slew time between pointings given as (axis 2, axis 1) in degrees, the planner's
        estimate: the two-axis model (:func:`skyplan.engine.mount.axes_slew_s`), axis 1 the
        shorter way round (with a cable wrap: see :meth:`wrap_turn_deg`), and for a German
        mount the flip when the two targets lie on opposite sides of the meridian (hour
        angle, axis 1, of opposite signs).  The plan's final slews follow the mount's state
        (:mod:`skyplan.planning.mountfit`).
        """
        a1_0, a1_1 = np.asarray(a1_0, dtype=float), np.asarray(a1_1, dtype=float)
        if self.wrap_deg is not None and not self.equatorial:
            d1 = self.wrap_turn_deg(a1_0, a1_1)
        else:
            d1 = np.abs(a1_1 - a1_0) % 360.0
            d1 = np.minimum(d1, 360.0 - d1)
        d2 = np.asarray(a2_1, dtype=float) - np.asarray(a2_0, dtype=float)
        out = axes_slew_s(d1, d2, self.rate_az_deg_s, self.rate_alt_deg_s, self.settle_s)
        if self.german and self.flip_s > 0:
            out = out + self.flip_s * ((a1_0 % 360.0 >= 180.0) != (a1_1 % 360.0 >= 180.0))
        return out

    def wrap_turn_deg(self, az_0: np.ndarray, az_1: np.ndarray) -> np.ndarray:
        """How far the azimuth axis of a mount with a cable wrap turns between two azimuths,
        as the planner estimates it: the axis starts at the reading of ``az_0`` nearest the
        wrap's middle (a reading is the azimuth plus whole turns) and ends at the reading of
        ``az_1`` nearest that, inside the wrap.  Exact for a wrap of one turn, where each
        azimuth has one reading and a slew across the wrap's end goes the long way round;
        for wider wraps the mount's walk may find a nearer reading."""
        lo, hi = self.wrap_deg
        r0 = az_0 + 360.0 * np.round((0.5 * (lo + hi) - az_0) / 360.0)
        r1 = az_1 + 360.0 * np.round((r0 - az_1) / 360.0)
        r1 = np.where(r1 > hi, r1 - 360.0, np.where(r1 < lo, r1 + 360.0, r1))
        return np.abs(r1 - r0)

    def longest_s(self) -> float:
        """A slew no pointing pair above the horizon exceeds: axis 1 by 180° (the shorter way;
        by the wrap's width for an alt-azimuth mount with a cable wrap), axis 2 by 90° of
        altitude or 180° of declination, plus settle and a German mount's flip."""
        axis1 = 180.0 if self.wrap_deg is None else self.wrap_deg[1] - self.wrap_deg[0]
        axis2 = 180.0 if self.equatorial else 90.0
        return (max(axis1 / self.rate_az_deg_s, axis2 / self.rate_alt_deg_s) + self.settle_s
                + (self.flip_s if self.german else 0.0))


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
    ha_deg: np.ndarray | None = None  # [N, S] hour angle; needed by the equatorial kinds
    dec_deg: np.ndarray | None = None  # [N, S] declination of date; needed likewise


@dataclass(frozen=True)
class PlanOptions:
    """How to plan: method, optimiser time limit, priority cut, Sun override, airmass slack.

    ``airmass_slack``: below the top priority, visits only at airmass <= best * (1 + slack)
    (the top priority too when its visits cannot all fit, :meth:`PlanNight.keep_within_slack`);
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

    ``objective`` is the sum over visits of ``airmass_mid - best_airmass`` (the same quantity
    for both methods).  For ``"optimal"``, ``solver_objective`` is the returned plan's value by
    the merit of docs/planning.md, ``dual_bound`` a proven upper bound on the value of any
    plan that keeps the rules, and ``gap`` = (bound − value) / bound, the gap of the plan the
    user gets; they are ``None`` for dispatch.  ``proven_optimal`` is True only when that gap
    is at most 0.01 %.
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


class PlanNight:
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
        self.ha_unwrapped = self.dec_deg = None
        if req.ha_deg is not None and req.dec_deg is not None:
            self.ha_unwrapped = np.degrees(np.unwrap(np.radians(
                _grid(req.ha_deg, "ha_deg", n, s))))
            self.dec_deg = _grid(req.dec_deg, "dec_deg", n, s)
        if req.slew.equatorial and self.ha_unwrapped is None:
            raise ValueError("an equatorial mount needs ha_deg and dec_deg")
        # the axes the slews are measured on: (axis 1 unwrapped, axis 2)
        self.axis1, self.axis2 = ((self.ha_unwrapped, self.dec_deg) if req.slew.equatorial
                                  else (self.az_unwrapped, self.alt_deg))
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
        long_enough = keep & (we - ws >= self.shortest_visit_s[wt] - EPS_S)
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
        self.airmass_slack = opt.airmass_slack
        use = long_enough & self.active[wt]
        order = np.lexsort((ws[use], wt[use]))
        self.win_target, self.win_start, self.win_end = (
            wt[use][order],
            ws[use][order],
            we[use][order],
        )

    def top_level(self) -> np.ndarray:
        """The targets that can be placed at the highest priority among them (a mask)."""
        if not self.active.any():
            return np.zeros(self.n, bool)
        return self.active & (self.priority == self.priority[self.active].max())

    def keep_within_slack(self, targets: np.ndarray) -> None:
        """Give ``targets`` (a mask) the airmass ceiling ``best * (1 + slack)`` too."""
        if self.airmass_slack is None:
            return
        targets = np.asarray(targets, bool) & self.active
        self.max_airmass[targets] = self.best_airmass[targets] * (1.0 + self.airmass_slack)
        self.slack_applies |= targets

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
        """(axis 2, axis 1 in 0..360) of targets at times: (altitude, azimuth), or
        (declination, hour angle) for an equatorial mount."""
        return self._sample(self.axis2, i, t), self._sample(self.axis1, i, t) % 360.0


TYPICAL_SLEW_TARGETS = 400  # at most this many targets per time in the typical slew's pairs


def typical_slew_s(night: PlanNight, quantile: float) -> float:
    """A quantile of the slews between targets both inside a window, at nine times of night.

    Every pair counts while at most ``TYPICAL_SLEW_TARGETS`` targets are up at a time; above
    that, the pairs of a fixed pseudo-random sample of that many (the quantile of a sample of
    about 80,000 slews), so the cost stays bounded instead of growing with the square of the
    catalogue (5,000 targets: some 90 million pairs, most of a gigabyte).  The sample: the
    targets first in the order of Knuth's multiplicative hash of their index (Knuth, The Art
    of Computer Programming vol. 3, sec. 6.4), which needs no random generator.
    """
    s = night.slot_unix.size
    times = night.slot_unix[np.linspace(0, s - 1, 9).round().astype(int)]
    inside = (night.win_start[:, None] <= times + EPS_S) & (
        night.win_end[:, None] >= times - EPS_S
    )
    slews = []
    for k, t in enumerate(times):
        i = np.unique(night.win_target[inside[:, k]])
        if i.size < 2:
            continue
        if i.size > TYPICAL_SLEW_TARGETS:
            hashed = (i.astype(np.int64) * 2654435761) % 2**32
            i = np.sort(i[np.argsort(hashed, kind="stable")[:TYPICAL_SLEW_TARGETS]])
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


def _check_values(night: PlanNight, req: PlanRequest) -> None:
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
