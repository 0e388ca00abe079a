"""Plans built around time-critical visits: placed first, at their times, then the rest.

For each time-critical target of the catalogue (:mod:`skyplan.inputs.ephemerides`) the
night's occurrences come from :mod:`skyplan.engine.timedevents`, and each becomes one visit:

* an event (transit, eclipse): ingress − B .. egress + B, B the baseline
  (`--baseline`, default :data:`skyplan.defaults.TIMED_BASELINE_MIN`); ingress..egress
  must lie in one window of the target (every limit holds), and the baselines are cut to
  that window;
* a ``fixed_start`` request: its start and its exposure, which must lie in one window;
* a ``fixed_window`` request or a phase span: one exposure inside it and inside a window,
  placed where the target stands highest (a window's edge, or its transit).

Overlapping time-critical visits go by priority (then the earlier).  The visits taken block
their time, with the setup and the longest slew the mount can make (a flip included) before
them and the longest slew after them, and the night's other targets
are planned in what is left by the usual objective (:func:`skyplan.planning.build.make_night_plan`);
the time-critical targets are not planned again there.  On an alt-azimuth mount with a cable
wrap a visit is taken only where its whole azimuth track fits inside the wrap on one turn.
Every time-critical target that got no visit is listed with why.  Loops run over tonight's
few occurrences, never the catalogue.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
from zoneinfo import ZoneInfo

import numpy as np

from skyplan.engine import mountwindows, timedevents
from skyplan.engine.catch import within
from skyplan.engine.intervals import Intervals, complement, intersect
from skyplan.engine.mount import wrap_turns
from skyplan.errors import NothingObservable
from skyplan.inputs.ephemerides import Ephemerides
from skyplan.planning import build, emptynight, model, mountfit, replan

FIT_TOL_S = 1.0  # window edges are found to 0.5 s
WRAP_STEP_S = 60.0  # a visit's azimuth track is sampled this often to find its extent
WRAP_REASON = ("its track would run past an end of the cable wrap (see the mount's "
               "az_min_deg and az_max_deg)")


@dataclasses.dataclass(frozen=True)
class TimedVisits:
    """The time-critical visits taken tonight and the targets that got none."""

    rows: np.ndarray  # target of each visit
    start: np.ndarray  # exposure start (POSIX s)
    end: np.ndarray
    epoch: np.ndarray  # NaN for fixed-time requests
    refused: dict[int, tuple[str, str]]  # target -> (reason code, explanation)


def _placements(res, rows, s, e, need):
    """For each span [s, e] at least ``need`` long, three starts: at the span's start, at its
    end, and centred on the target's transit (clipped to the span); with the altitude at
    mid-exposure of each.  Arrays of shape (spans, 3)."""
    latest = e - need
    cands = np.stack([s, latest, np.clip(res.transit[rows] - need / 2, s, latest)], axis=1)
    cands = np.where(np.isfinite(cands), cands, s[:, None])
    alt, _, _ = res.sky.horizon(np.repeat(rows, 3), (cands + need[:, None] / 2).ravel())
    return cands, alt.reshape(-1, 3)


def wrap_turns_of(res, wrap: tuple[float, float], row: int, start: float,
                  end: float) -> tuple[float, float, float]:
    """For one visit of target ``row`` on an alt-azimuth mount with the cable wrap ``wrap``:
    the whole turns k putting its whole azimuth track inside the wrap, nearest the wrap's
    middle (NaN when none does; :func:`skyplan.engine.mount.wrap_turns`), and the azimuth at
    the exposure's start and end on the track's continuous reading (degrees)."""
    n = max(int(np.ceil((end - start) / WRAP_STEP_S)), 1) + 1
    az = np.degrees(np.unwrap(np.radians(
        res.sky.horizon(np.full(n, row), np.linspace(start, end, n))[1])))
    k = float(wrap_turns(az[0], az.min(), az.max(), 0.5 * (wrap[0] + wrap[1]), *wrap))
    return k, float(az[0]), float(az[-1])


def timed_visits(res, timed: Ephemerides, priority: np.ndarray, exposure_s: np.ndarray,
                 lead_s: float, baseline_s: float, after: float = -np.inf,
                 windows: Intervals | None = None,
                 wrap: tuple[float, float] | None = None) -> TimedVisits:
    """Tonight's time-critical visits (see the module docstring); ``lead_s`` is kept free
    before each (setup and slew); nothing starts before ``after`` (a re-plan's start).
    ``windows``: where a visit may lie (default the targets' windows; for a German mount its
    pier-side pieces, so that no visit meets the flip).  ``wrap``: an alt-azimuth mount's
    cable wrap, which must hold each visit's whole azimuth track."""

    def fits(row: int, start: float, end: float) -> bool:
        return wrap is None or bool(np.isfinite(wrap_turns_of(res, wrap, row, start, end)[0]))

    night = res.night
    occ = timedevents.occurrences(timed, res.ra_deg, res.dec_deg, res.sky.site,
                                  night.span_start, night.span_end, exposure_s)
    tonight = (occ.mid >= night.span_start) & (occ.mid < night.span_end)
    tonight |= occ.kind == "phase"
    occ = occ.take(np.flatnonzero(tonight))
    event = occ.kind == "event"
    exact = event | ((occ.kind == "fixed") & ~np.isfinite(timed.fixed_end[occ.rows]))
    lo = np.where(event, occ.start - baseline_s, occ.start)
    hi = np.where(event, occ.end + baseline_s, occ.end)
    wins = res.windows if windows is None else windows
    p, a, b = _holding(wins.clip(after, np.inf), occ, exact, lo, hi)
    # which would hold but for the mount's pier sides (to say why they were not taken)
    flip_only = np.zeros(len(occ.rows), dtype=bool)
    if windows is not None:
        flip_only[_holding(res.windows.clip(after, np.inf), occ, exact, lo, hi)[0]] = True
        flip_only[p] = False
    fixed_start = exact[p] & ~event[p]
    a = np.where(fixed_start, np.maximum(a, occ.start[p]), a)
    b = np.where(fixed_start, np.minimum(b, occ.end[p]), b)

    # the exact visits first, by priority; then each windowed one in the time left
    busy_a: list[float] = []
    busy_b: list[float] = []
    chosen: list[tuple[int, float, float]] = []  # (occurrence, start, end)
    refused: dict[int, tuple[str, str]] = {}
    pr = np.asarray(priority)[occ.rows]
    for q in np.lexsort((occ.start, -pr, ~exact)).tolist():  # tonight's few occurrences
        mine = np.flatnonzero(p == q)
        if mine.size == 0:
            continue
        if exact[q]:
            k = mine[0]
            clash = [j for j in range(len(busy_a)) if a[k] - lead_s < busy_b[j]
                     and busy_a[j] - lead_s < b[k]]
            if not clash and not fits(int(occ.rows[q]), float(a[k]), float(b[k])):
                refused.setdefault(int(occ.rows[q]), ("timed_not_observable", WRAP_REASON))
                continue
            if not clash:
                chosen.append((q, float(a[k]), float(b[k])))
                busy_a.append(float(a[k]))
                busy_b.append(float(b[k]))
                continue
            other = str(res.names[occ.rows[chosen[clash[0]][0]]])
        else:
            free = _free(a[mine], b[mine], np.array(busy_a) - lead_s, np.array(busy_b) + lead_s)
            need = occ.need_s[q]
            free = free[free[:, 1] - free[:, 0] >= need - FIT_TOL_S]
            if len(free):
                rows_q = np.full(len(free), occ.rows[q])
                start, alt = _placements(res, rows_q, free[:, 0], free[:, 1],
                                         np.full(len(free), need))
                start, alt = start.ravel(), alt.ravel()
                # the highest placement whose track the mount can follow
                best = next((j for j in np.argsort(-alt, kind="stable").tolist()
                             if fits(int(occ.rows[q]), float(start[j]), float(start[j] + need))),
                            None)
                if best is None:
                    refused.setdefault(int(occ.rows[q]), ("timed_not_observable", WRAP_REASON))
                    continue
                chosen.append((q, float(start[best]), float(start[best] + need)))
                busy_a.append(float(start[best]))
                busy_b.append(float(start[best] + need))
                continue
            other = "others"
        refused.setdefault(int(occ.rows[q]), (
            "timed_conflict", f"overlaps the time-critical visit of {other}" if other !=
            "others" else "its usable time is taken by other time-critical visits"))
    chosen.sort(key=lambda c: c[1])
    q_taken = np.array([c[0] for c in chosen], dtype=np.int64)
    rows = occ.rows[q_taken]
    a = np.array([c[1] for c in chosen])
    b = np.array([c[2] for c in chosen])
    got = set(rows.tolist())
    zone = ZoneInfo(night.zone)
    for i in np.flatnonzero(timed.timed).tolist():
        if i in got or i in refused:
            continue
        mine = np.flatnonzero(occ.rows == i)
        if mine.size == 0:
            refused[i] = ("no_event_tonight", "no event, phase span or fixed time tonight")
            continue
        j = mine[0]
        if exact[j] and occ.start[j] < after:
            refused[i] = ("passed", "its time-critical visit begins before the start")
            continue
        span = f"{_hhmm(occ.start[j], zone)}–{_hhmm(occ.end[j], zone)}"
        what = {"event": f"its event {span} (epoch {int(occ.epoch[j])}) is not wholly "
                "inside a window", "phase": f"its phase span {span} holds no window long "
                "enough for one exposure"}.get(occ.kind[j], f"its time {span} is not "
                                               "observable under the limits")
        if flip_only[mine].any():
            which = (f"event {span} (epoch {int(occ.epoch[j])})" if occ.kind[j] == "event"
                     else f"time {span}")
            what = (f"its {which} would need a meridian flip in the middle (see the mount's "
                    "past_meridian limits)")
        refused[i] = ("timed_not_observable", what)
    return TimedVisits(rows, a, b, occ.epoch[q_taken], refused)


def _holding(wins: Intervals, occ, exact: np.ndarray, lo: np.ndarray, hi: np.ndarray):
    """(occurrence, start, end) of each part of a window that can hold an occurrence: the
    whole of an exact one (event, fixed start), or one exposure of the others."""
    parts = within(wins, occ.rows, lo, hi)
    p = parts.rows
    core_a = np.where(exact[p], occ.start[p], parts.start)
    core_b = np.where(exact[p], occ.end[p], parts.end)
    holds = np.where(exact[p], (parts.start <= core_a + FIT_TOL_S)
                     & (parts.end >= core_b - FIT_TOL_S),
                     parts.end - parts.start >= occ.need_s[p] - FIT_TOL_S)
    return p[holds], parts.start[holds], parts.end[holds]


def _free(a: np.ndarray, b: np.ndarray, busy_a: np.ndarray, busy_b: np.ndarray) -> np.ndarray:
    """The parts of the spans [a, b] outside every busy span, as (k, 2) rows.  Each span is
    cut on its own: spans may overlap (a German mount's two pier-side pieces), and a part
    must stay inside one of them."""
    k = len(a)
    spans = Intervals.build(np.arange(k), a, b)
    if len(busy_a):
        lo, hi = float(min(a.min(), busy_a.min())) - 1.0, float(max(b.max(), busy_b.max())) + 1.0
        gaps = complement(Intervals.build(np.zeros(len(busy_a), np.int64), busy_a, busy_b),
                          np.zeros(1), lo, hi)
        spans = intersect(spans, Intervals.build(
            np.repeat(np.arange(k), len(gaps)), np.tile(gaps.start, k), np.tile(gaps.end, k)))
    return np.stack([spans.start, spans.end], axis=1)


def _hhmm(unix: float, zone) -> str:
    return dt.datetime.fromtimestamp(float(unix), zone).strftime("%H:%M")


def _without(windows: Intervals, rows_out: np.ndarray, busy_a, busy_b) -> Intervals:
    """The windows with the rows ``rows_out`` removed and the busy spans cut out."""
    mask = np.ones(int(windows.rows.max(initial=-1)) + 1, dtype=bool)
    mask[rows_out[rows_out < mask.size]] = False
    w = windows.take_rows(mask) if len(windows) else windows
    if len(busy_a) == 0 or len(w) == 0:
        return w
    lo = float(min(w.start.min(), np.min(busy_a))) - 1.0
    hi = float(max(w.end.max(), np.max(busy_b))) + 1.0
    free = complement(Intervals.build(np.zeros(len(busy_a), np.int64), busy_a, busy_b),
                      np.zeros(1), lo, hi)
    rows = np.unique(w.rows)
    return intersect(w, Intervals(np.repeat(rows, len(free)), np.tile(free.start, rows.size),
                                  np.tile(free.end, rows.size)))


def make_timed_plan(res, priority: np.ndarray, exposure_s: np.ndarray,
                    overheads: build.Overheads, options: model.PlanOptions, *,
                    rest: replan.Progress | None = None,
                    timed: Ephemerides | None = None) -> build.NightPlan:
    """:func:`skyplan.planning.build.make_night_plan` with the time-critical visits of
    ``timed`` placed first (the module docstring); the same plan when nothing is timed."""
    if timed is None or not timed.timed.any():
        return build.make_night_plan(res, priority, exposure_s, overheads, options, rest=rest)
    exp = np.where(np.isfinite(exposure_s), exposure_s, overheads.default_exposure_s)
    mount = res.sky.site.mount
    slew = overheads.for_mount(mount).slew_model(mount)
    lead = overheads.for_mount(mount).setup_s + slew.longest_s()  # flip time included
    wins = None
    if slew.german:  # a visit lies wholly on one side of the pier
        p = mountwindows.pier_pieces(res.sky, res.windows, *slew.past_meridian_rad, res.span)
        wins = Intervals.build(p.rows, p.start, p.end)
    after = -np.inf if rest is None or rest.start_unix is None else \
        rest.start_unix + overheads.setup_s
    tv = timed_visits(res, timed, priority, exp, lead, overheads.timed_baseline_s, after,
                      wins, slew.wrap_deg)
    if rest is not None:  # re-planning: nothing before the start, nothing done again
        start = -np.inf if rest.start_unix is None else rest.start_unix
        live = (tv.start - overheads.setup_s >= start) & (rest.done[tv.rows] == 0)
        refused = dict(tv.refused)
        for i in sorted(set(tv.rows[~live].tolist()) - set(tv.rows[live].tolist())):
            refused[i] = (("done", "done already") if rest.done[i] > 0 else
                          ("passed", "its time-critical visit begins before the start"))
        tv = TimedVisits(tv.rows[live], tv.start[live], tv.end[live], tv.epoch[live], refused)
    trimmed = dataclasses.replace(res, windows=_without(res.windows, np.flatnonzero(
        timed.timed), tv.start - lead, tv.end + slew.longest_s()))
    try:
        made = build.make_night_plan(trimmed, priority, exposure_s, overheads, options,
                                     rest=rest)
    except NothingObservable:
        if len(tv.rows) == 0:
            raise
        made = emptynight.empty_night_plan(trimmed, priority, overheads, options, rest)
    timed_rows = set(np.flatnonzero(timed.timed).tolist())
    had = set(np.unique(res.windows.rows).tolist())
    has = set(np.unique(trimmed.windows.rows).tolist())
    missing = []
    for i, code, text in made.not_placed:
        if i in timed_rows:
            continue
        if i in had and i not in has and code not in ("done", "passed"):
            code, text = "taken_by_timed", "its windows are taken by time-critical visits"
        missing.append((i, code, text))
    missing += [(i, code, text) for i, (code, text) in tv.refused.items()]
    missing.sort(key=lambda m: (-int(priority[m[0]]), m[0]))
    visits = sorted([*made.visits, *_describe(res, tv, priority, overheads)],
                    key=lambda v: v.exposure_start)
    visits = [dataclasses.replace(v, seq=k + 1) for k, v in enumerate(visits)]
    got = len(set(tv.rows.tolist()))
    m = made.metrics
    metrics = dataclasses.replace(m, placed=m.placed + got, possible=m.possible + got,
                                  visits=m.visits + len(tv.rows),
                                  visits_possible=m.visits_possible + len(tv.rows))
    return dataclasses.replace(made, visits=visits, not_placed=missing, windows=res,
                               metrics=metrics)


def _describe(res, tv: TimedVisits, priority, overheads) -> list:
    """The time-critical visits as the plan's visits, marked ``timed``."""
    if len(tv.rows) == 0:
        return []
    repeat = np.zeros(len(tv.rows), dtype=int)
    for k in range(len(tv.rows)):  # tonight's few visits: their count per target
        repeat[k] = int(np.sum(tv.rows[:k] == tv.rows[k])) + 1
    visits = [model.Visit(k, int(repeat[k]), float(tv.start[k] - overheads.setup_s), 0.0,
                          overheads.setup_s, float(tv.start[k]), float(tv.end[k]), np.nan)
              for k in range(len(tv.rows))]
    described = build.describe_visits(res, visits, tv.rows, priority, tv.end - tv.start,
                                      overheads, _mount_states(res, tv, overheads))
    return [dataclasses.replace(v, timed=True, epoch_number=None if not np.isfinite(e)
                                else int(e)) for v, e in zip(described, tv.epoch, strict=True)]



def _mount_states(res, tv: TimedVisits, overheads) -> mountfit.MountState | None:
    """The mount's state along each time-critical visit.  A German mount: the side whose
    hour-angle range holds the whole exposure (the visits were placed inside one), the usual
    side (west while the target is east of the meridian) when both do.  An alt-azimuth mount
    with a cable wrap: the axis's readings at the exposure's start and end, on the turn that
    keeps the whole track inside the wrap nearest its middle (:func:`wrap_turns_of`)."""
    mount = res.sky.site.mount
    slew = overheads.for_mount(mount).slew_model(mount)
    n = len(tv.rows)
    if not (slew.german or slew.wrap_deg is not None) or n == 0:
        return None
    side = np.full(n, -1, dtype=np.int8)
    az0, az1 = np.full(n, np.nan), np.full(n, np.nan)
    if slew.german:
        past_east, past_west = slew.past_meridian_rad
        ha0 = _wrapped(res.sky.horizon(tv.rows, tv.start)[2])
        ha1 = _wrapped(res.sky.horizon(tv.rows, tv.end)[2])
        west_ok = (ha1 >= ha0) & (ha1 <= past_west + 1e-6)
        east_ok = (ha1 >= ha0) & (ha0 >= -past_east - 1e-6)
        usual_east = ha0 > 0
        east = east_ok & (usual_east | ~west_ok)
        side = np.where(east, 1, np.where(west_ok, 0, -1)).astype(np.int8)
    if slew.wrap_deg is not None:
        for j in range(n):  # tonight's few time-critical visits
            k, a0, a1 = wrap_turns_of(res, slew.wrap_deg, int(tv.rows[j]),
                                      float(tv.start[j]), float(tv.end[j]))
            az0[j], az1[j] = a0 + 360.0 * k, a1 + 360.0 * k
    return mountfit.MountState(side, az0, az1)


def _wrapped(ha: np.ndarray) -> np.ndarray:
    """Hour angle in [−π, π)."""
    return (np.asarray(ha) + np.pi) % (2.0 * np.pi) - np.pi
