"""The plan's objective: a merit per visit from its priority and its airmass.

A visit of target ``i`` at airmass ``X`` (middle of the exposure) is worth

    merit = w(p_i) * (1 - S * (1 - q(r))),   r = X / X_best,i - 1,   q(r) = 1 / (1 + K r),

where ``X_best,i`` is the lowest airmass of the target inside its windows tonight, so ``r`` is
the relative airmass excess (0 at the target's best; ``X_best >= 1`` always, so the measure
stays well behaved for a target passing the zenith).  ``q`` falls from 1 at the best airmass
to 1/(1 + K r): with ``K = 4``, 0.83 at 5 % above the best and 0.62 at 15 %.  ``S = 0.2`` is
the airmass share of a visit's worth: a visit is worth between ``0.8 w`` (at any airmass)
and ``w`` (at its best), so a visit more always outweighs small airmass losses of a few
visits of the same priority (a target with a short window at dusk is placed when the others
can move), while among plans with the same visits, each is taken as near its best as it can.

``w`` ranks the priority levels present among the targets that can be placed: the lowest
level weighs 1 and each level above weighs ``PRIORITY_BASE`` (10) times the one below, so one
visit outweighs nine visits of the next lower priority; with more than ``MAX_SPREAD_DIGITS``
(6) levels the base shrinks so the top weighs at most 10**6, keeping the solver's numbers in
a safe range.  A plan's value is the sum of its visits' merits; a good plan has the highest
value under the rules (see docs/planning.md).
"""

from __future__ import annotations

import numpy as np

AIRMASS_STEEPNESS = 4.0  # K in q(r)
AIRMASS_SHARE = 0.2  # S in the merit
PRIORITY_BASE = 10.0
MAX_SPREAD_DIGITS = 6


def priority_weights(priority: np.ndarray, active: np.ndarray) -> np.ndarray:
    """w per target from the priority levels of the targets that can be placed (others: 0)."""
    priority = np.asarray(priority)
    out = np.zeros(priority.size)
    if not np.any(active):
        return out
    levels = np.unique(priority[active])
    base = PRIORITY_BASE
    if levels.size > 1:
        base = min(base, 10.0 ** (MAX_SPREAD_DIGITS / (levels.size - 1)))
    rank = np.searchsorted(levels, priority)
    out[active] = base ** rank[active]
    return out


def quality(airmass: np.ndarray, best_airmass: np.ndarray) -> np.ndarray:
    """q(r) = 1 / (1 + K r) with r = X / X_best - 1 clipped at 0 (interpolation noise)."""
    r = np.maximum(np.asarray(airmass, float) / np.asarray(best_airmass, float) - 1.0, 0.0)
    return 1.0 / (1.0 + AIRMASS_STEEPNESS * r)


def merit(weight: np.ndarray, airmass: np.ndarray, best_airmass: np.ndarray) -> np.ndarray:
    """The worth of visits with these weights, airmasses and best airmasses."""
    q = quality(airmass, best_airmass)
    return np.asarray(weight, float) * (1.0 - AIRMASS_SHARE * (1.0 - q))
