"""The plan of a night with nothing (left) to observe: no visits, every target explained.

Written instead of nothing so that a script reading the plan file of tonight never finds
the plan of an earlier night there (``plan --out`` with exit status 3).
"""

from __future__ import annotations

import numpy as np

from skyplan.planning import build, model, replan


def empty_night_plan(res, priority: np.ndarray, overheads: build.Overheads,
                     options: model.PlanOptions,
                     rest: replan.Progress | None = None) -> build.NightPlan:
    """A NightPlan without visits for the night of ``res``, with why each target is out."""
    n = len(res.names)
    wins = replan.rest_windows(res.windows, rest, overheads.spacing_s)
    todo = replan.remaining(overheads.repeats, n, rest)
    gone = replan.left_out(res, wins, todo, rest, overheads.repeats)
    has = np.zeros(n, bool)
    has[wins.rows] = True
    codes = np.empty(n, dtype=object)
    texts = np.empty(n, dtype=object)
    kind = _reason_kind(res)
    for k in np.unique(kind):  # a dozen kinds at most; each explained once, as build does
        members = kind == k
        codes[members], texts[members] = build.window_reason(res, int(np.flatnonzero(members)[0]))
    codes[has], texts[has] = "too_short", build.SCHEDULER_TEXT["too_short"]
    for i, (code, text) in gone.items():  # the targets done or passed: a night's log
        codes[i], texts[i] = code, text
    order = np.lexsort((np.arange(n), -np.asarray(priority, dtype=np.int64)))
    missing = [(int(i), str(codes[i]), str(texts[i])) for i in order]
    metrics = model.PlanMetrics(
        placed=0, possible=0, airmass_excess=float("nan"), idle_minutes=0.0, objective=0.0,
        solver_objective=None, dual_bound=None, gap=None, method=options.method,
        proven_optimal=False)
    return build.NightPlan([], missing, metrics, overheads, res, priority)


def _reason_kind(res) -> np.ndarray:
    """Targets with the same kind get the same reason from ``build.window_reason``: never up, near
    the Sun, or the limit (other than darkness) that takes the most minutes."""
    keys = [k for k in res.lost_s if k != "dark"]
    n = len(res.names)
    worst = (np.argmax(np.vstack([res.lost_s[k] for k in keys]), axis=0) if keys and n
             else np.zeros(n, np.int64))
    never = np.asarray(res.status) == "never_up"
    return np.where(never, -2, np.where(np.asarray(res.near_sun, bool), -1, worst))
