"""The rest of a night: what the planner is given once part of the night has gone.

Re-planning changes only the inputs of the plan, never the scheduler.  From a
:class:`Progress` (where the night resumes, and which visits are done) this module trims the
windows (nothing before the start, nothing over a done visit, repeats of a target no closer
than the spacing to its last done visit), counts the visits each target still needs
(``repeats - done``, none once done), recomputes the best air mass each target can still
reach, numbers the new visits after the done ones, and says why a target is left out
(``done``, ``passed``).  Without a Progress every function returns its input unchanged, so a
plan of the whole night is exactly what it was.  Names are matched exactly (the catalogue's
``name`` column); POSIX seconds throughout.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from skyplan.engine import airmass as am
from skyplan.engine.intervals import Intervals, complement, intersect


@dataclass(frozen=True)
class Progress:
    """Where the night resumes and what is done, per target of the catalogue."""

    start_unix: float | None  # nothing starts before; None: the whole night
    done: np.ndarray  # [n] visits done per target
    last_start_unix: np.ndarray  # [n] start of the latest done visit, NaN when not known
    busy_start: np.ndarray  # [m] merged spans of the done visits with both times known
    busy_end: np.ndarray
    unknown: tuple[str, ...]  # done names that are not in the programme, first seen order


def progress(names: np.ndarray, start_unix: float | None = None, done_names=(),
             done_start=(), done_end=()) -> Progress:
    """Count the done visits against the catalogue's ``names`` (duplicates in the catalogue:
    the first of the name); ``done_start``/``done_end`` per visit, NaN when not known."""
    names = np.asarray(names, dtype=object).astype(str)
    n = len(names)
    asked = np.asarray(list(done_names), dtype=object).astype(str)
    t0 = np.asarray(list(done_start), dtype=float).reshape(-1)
    t1 = np.asarray(list(done_end), dtype=float).reshape(-1)
    if t0.size == 0:
        t0 = np.full(asked.size, np.nan)
    if t1.size == 0:
        t1 = np.full(asked.size, np.nan)
    order = np.argsort(names, kind="stable")
    pos = np.searchsorted(names[order], asked) if n else np.zeros(asked.size, int)
    pos = np.minimum(pos, max(n - 1, 0))
    found = (names[order][pos] == asked) if n else np.zeros(asked.size, bool)
    rows = order[pos[found]]
    done = np.bincount(rows, minlength=n)
    last = np.full(n, -np.inf)
    np.maximum.at(last, rows, np.where(np.isfinite(t0[found]), t0[found], -np.inf))
    last[~np.isfinite(last)] = np.nan
    missing = asked[~found]
    _, first = np.unique(missing, return_index=True)
    spans = np.isfinite(t0) & np.isfinite(t1)
    busy_start, busy_end = _merged(t0[spans], t1[spans])
    return Progress(start_unix, done, last, busy_start, busy_end,
                    tuple(str(s) for s in missing[np.sort(first)]))


def _merged(start: np.ndarray, end: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Overlapping spans joined into disjoint ones, in time order."""
    if start.size == 0:
        return start, end
    order = np.argsort(start, kind="stable")
    s, e = start[order], end[order]
    reach = np.maximum.accumulate(e)
    new = np.ones(s.size, bool)
    new[1:] = s[1:] > reach[:-1]
    return s[new], np.maximum.reduceat(e, np.flatnonzero(new))


def rest_windows(windows: Intervals, rest: Progress | None, spacing_s: float) -> Intervals:
    """The windows left: from the start on, outside the done visits, and each target's
    next repeat at least ``spacing_s`` after the start of its last done visit."""
    if rest is None:
        return windows
    w = windows
    if rest.start_unix is not None:
        w = w.clip(rest.start_unix, np.inf)
    if rest.busy_start.size and len(w):
        hi = float(max(w.end.max(), rest.busy_end.max())) + 1.0
        lo = float(min(w.start.min(), rest.busy_start.min())) - 1.0
        free = complement(Intervals.build(np.zeros(rest.busy_start.size, np.int64),
                                          rest.busy_start, rest.busy_end), np.zeros(1), lo, hi)
        rows = np.unique(w.rows)
        w = intersect(w, Intervals(np.repeat(rows, len(free)), np.tile(free.start, rows.size),
                                   np.tile(free.end, rows.size)))
    if spacing_s > 0 and len(w):
        after = rest.last_start_unix[w.rows] + spacing_s
        w = Intervals.build(w.rows, np.where(np.isfinite(after), np.maximum(w.start, after),
                                             w.start), w.end)
    return w


def remaining(repeats: int, n: int, rest: Progress | None) -> np.ndarray:
    """Visits each target still needs: ``repeats`` less those done, never below zero."""
    if rest is None:
        return np.full(n, repeats)
    return np.maximum(repeats - rest.done, 0)


def best_airmass_left(res, windows: Intervals) -> np.ndarray:
    """Each target's lowest air mass in the windows left (the engine's figure where its
    windows are whole): at an edge of a window, or at the transit when inside one; bodies
    also at a quarter, half and three quarters of each window."""
    best = np.array(res.best_airmass, dtype=float, copy=True)
    n = len(best)
    cut = np.abs(windows.measure(n) - res.windows.measure(n)) > 1e-6
    if not cut.any() or len(windows) == 0:
        return best
    w = windows.take_rows(cut)
    if len(w) == 0:
        return best
    r = w.rows
    tt = res.transit[r]
    inside = (tt >= w.start) & (tt <= w.end)
    cand_r = [r, r, r[inside]]
    cand_t = [w.start, w.end, tt[inside]]
    moving = np.asarray(res.sky.moving)[r]
    for frac in (0.25, 0.5, 0.75):
        cand_r.append(r[moving])
        cand_t.append(w.start[moving] + frac * (w.end[moving] - w.start[moving]))
    rows, times = np.concatenate(cand_r), np.concatenate(cand_t)
    alt, _, _ = res.sky.horizon(rows, times)
    x = am.airmass(alt, res.limits.airmass_model)
    low = np.full(n, np.inf)
    np.minimum.at(low, rows, np.where(np.isfinite(x), x, np.inf))
    fix = cut & np.isfinite(low)
    best[fix] = low[fix]
    return best


def left_out(res, windows: Intervals, todo: np.ndarray, rest: Progress | None,
             repeats: int) -> dict[int, tuple[str, str]]:
    """Why targets with a window tonight are not planned again: ``done`` (all their visits
    are done) or ``passed`` (no window left after the start and the done visits)."""
    if rest is None:
        return {}
    n = len(todo)
    had = np.zeros(n, bool)
    had[res.windows.rows] = True
    has = np.zeros(n, bool)
    has[windows.rows] = True
    out = {}
    for i in np.flatnonzero(todo == 0):  # the targets done: a night's log, a few hundred
        out[int(i)] = ("done", f"done already ({int(rest.done[i])} of {repeats} visits)")
    for i in np.flatnonzero(had & ~has & (todo > 0)):
        out[int(i)] = ("passed", "its windows tonight are over (before the start or taken "
                       "by the visits done)")
    return out


def renumbered(visits: list, rest: Progress | None, best: np.ndarray) -> list:
    """The planned visits numbered after the done ones, with the best air mass left."""
    if rest is None:
        return visits
    return [dataclasses.replace(v, repeat=v.repeat + int(rest.done[v.target]),
                                best_airmass=float(best[v.target])) for v in visits]


def observable_at(windows: Intervals, todo: np.ndarray, shortest_s: np.ndarray,
                  at_unix: float) -> np.ndarray:
    """Targets that still need a visit and have a window holding one from ``at_unix`` on."""
    inside = (windows.start <= at_unix + 1e-6) & (windows.end - at_unix >= shortest_s[
        windows.rows] - 1e-6)
    now = np.zeros(len(todo), bool)
    now[windows.rows[inside]] = True
    return now & (todo > 0)


NOW_S = 60.0  # a visit whose slew begins within this of the moment asked starts "now"


@dataclass(frozen=True)
class Choice:
    """Why a visit comes first: what the planner weighed, for the person and the script."""

    top_priority: int  # highest priority of the targets still to visit with a window left
    window_end_unix: float  # end of the window that holds the visit (NaN: none found)
    left: int  # visits the target still needs, this one included
    observable_now: int  # targets that could start a visit at the moment asked
    starts_now: bool  # the visit's slew begins within NOW_S of the moment asked
    # Visits that could be made from the moment asked and end before the first visit, which
    # the plan does not make then: (target, end POSIX s, air mass at mid-exposure), the
    # highest priority first, then the lowest air mass relative to the target's best.
    meanwhile: tuple[tuple[int, float, float], ...] = ()


def first_choice(res, windows: Intervals, todo: np.ndarray, priority: np.ndarray,
                 shortest_s: np.ndarray, visit, at_unix: float, *,
                 exposure_s: np.ndarray | None = None, longest_slew_s: float = 0.0,
                 best_airmass: np.ndarray | None = None, listed: int = 3) -> Choice:
    """The facts behind the first visit of a plan made from ``at_unix``.

    ``shortest_s``: each target's visit with no slew beyond the settle time (settle, setup,
    exposure ``exposure_s``).  A visit made meanwhile starts at ``at_unix`` and must end
    ``longest_slew_s`` (the longest slew less the settle time) before the first visit
    begins, so that the first visit keeps its exposure start whatever the slew from there;
    at most ``listed`` are kept, judged against ``best_airmass`` (default the engine's).
    """
    has = np.zeros(len(todo), bool)
    has[windows.rows] = True
    live = has & (todo > 0)
    mine = (windows.rows == visit.target) & (windows.start <= visit.start + 1e-6) & (
        windows.end >= visit.end - 1e-6)
    end = float(windows.end[mine].max()) if mine.any() else float("nan")
    top = int(np.max(priority[live])) if live.any() else int(visit.priority)
    now = observable_at(windows, todo, shortest_s, at_unix)
    starts_now = bool(visit.start - at_unix <= NOW_S)
    spare = todo - (np.arange(len(todo)) == visit.target)
    fits = now & (spare > 0) & (at_unix + shortest_s + longest_slew_s <= visit.start + 1e-6)
    meanwhile: tuple[tuple[int, float, float], ...] = ()
    if fits.any() and not starts_now:
        rows = np.flatnonzero(fits)
        ends = at_unix + shortest_s[rows]
        exp = shortest_s[rows] if exposure_s is None else exposure_s[rows]
        alt, _, _ = res.sky.horizon(rows, ends - exp / 2)
        x = am.airmass(alt, res.limits.airmass_model)
        best = res.best_airmass if best_airmass is None else best_airmass
        order = np.lexsort((rows, x / np.asarray(best)[rows], -np.asarray(priority)[rows]))
        meanwhile = tuple((int(rows[k]), float(ends[k]), float(x[k]))
                          for k in order[:listed])
    return Choice(top, end, int(todo[visit.target]), int(now.sum()), starts_now, meanwhile)
