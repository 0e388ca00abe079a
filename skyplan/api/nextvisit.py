"""What to observe now: the first visit of the plan of the rest of the night.

A control script asks this between visits.  The answer is, by construction, the first visit
of :func:`skyplan.plan` made with ``start=at`` and the same ``done`` and settings, so a
script that asks again after every visit follows the re-plan of the rest of the night.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field

import numpy as np

from skyplan.api.night import Night
from skyplan.api.plan import Plan, PlanSettings, plan, plan_settings
from skyplan.api.targets import Targets
from skyplan.api.windows import Windows, windows
from skyplan.inputs.limits import Limits
from skyplan.inputs.sites import Site
from skyplan.notices import as_warnings

STATUSES = ("observe", "wait", "over")


@dataclass(frozen=True, eq=False)
class NextVisit:
    """The answer to "what now?" at ``at`` (an aware datetime).

    ``status``: 'observe' (``visit``, the first of the plan from ``at``, starts within a
    minute of ``at``), 'wait' (the plan's first visit starts later, at ``next_possible``; the
    choice's ``meanwhile`` lists visits that could be made before it, which the plan does not
    make then) or 'over' (nothing left tonight; ``visit`` is None).  ``plan``: the
    plan of the rest of the night from ``at`` (without visits when 'over').
    """

    at: dt.datetime
    status: str
    plan: Plan = field(repr=False)
    choice: object = field(repr=False)  # skyplan.planning.replan.Choice, None when 'over'

    @property
    def visit(self):
        """The engine's record of the visit (see :meth:`Plan.to_records`), or None."""
        return self.plan.visits[0] if self.plan.visits else None

    @property
    def next_possible(self) -> dt.datetime | None:
        """When the visit starts (the slew begins), as an aware UTC datetime; None when over."""
        from skyplan.api.times import aware

        return None if self.visit is None else aware(self.visit.start)

    def to_record(self) -> dict:
        """The document ``skyplan next --format json`` writes."""
        import time

        from skyplan.render import nextview

        return nextview.next_record(self.status, self.at.timestamp(), self.plan.result,
                                    self.choice, self.plan.site, time.time())

    def to_table(self):
        """The few lines ``skyplan next`` prints for a person (a ``render.tables.Sheet``)."""
        from skyplan.render import nextview

        return nextview.next_table(self.status, self.at.timestamp(), self.plan.result,
                                   self.choice, self.plan.site)


@as_warnings
def next_visit(targets: Targets, site: Site, night: Night | None = None,
               limits: Limits | None = None, settings: PlanSettings | None = None, *,
               at: dt.datetime | None = None, done=None, computed: Windows | None = None,
               **options) -> NextVisit:
    """The single best visit to make next, from ``at`` (default: now) with ``done``.

    ``night``: default the night ``at`` belongs to (before local noon, the night that began
    the evening before); ``done``, ``options`` and ``settings`` as for :func:`skyplan.plan`
    (the method defaults to 'optimal', as for :func:`skyplan.plan`, so that the answer is the
    first visit of the plan made from the same moment).
    """
    from skyplan.api.night import night as night_for
    from skyplan.errors import InputError, NothingObservable
    from skyplan.inputs import progress
    from skyplan.planning import replan
    from skyplan.planning.model import SlewModel

    if at is None:
        at = dt.datetime.now(dt.UTC)
    if not isinstance(at, dt.datetime) or at.tzinfo is None:
        raise InputError("give an aware datetime (with a time zone)", field="at")
    if night is None:
        night = night_for(site, progress.night_date_of(at.timestamp(), site.tzinfo))
    chosen = settings if settings is not None else plan_settings(
        **options)
    if computed is None:
        computed = windows(targets, site, night, limits)
    try:
        made = plan(targets, site, night, limits, chosen, computed=computed, start=at,
                    done=done)
    except NothingObservable as exc:
        return NextVisit(at, "over", exc.plan, None)
    if not made.visits:
        return NextVisit(at, "over", made, None)
    res = computed.result
    over = chosen.overheads.for_mount(site.mount)
    todo = replan.remaining(over.repeats, len(res.names), made.rest)
    wins = replan.rest_windows(res.windows, made.rest, over.spacing_s)
    exp = np.where(np.isfinite(targets.exposure_s), targets.exposure_s,
                   over.default_exposure_s)
    slew = SlewModel(over.slew_az_deg_s, over.slew_alt_deg_s, over.settle_s)
    choice = replan.first_choice(res, wins, todo, targets.priority,
                                 exp + over.setup_s + over.settle_s, made.visits[0],
                                 at.timestamp(), exposure_s=exp,
                                 longest_slew_s=slew.longest_s() - over.settle_s,
                                 best_airmass=replan.best_airmass_left(res, wins))
    return NextVisit(at, "observe" if choice.starts_now else "wait", made, choice)
