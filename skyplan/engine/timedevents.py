"""When the time-critical targets' events happen: epochs, mid-times and spans.

For a periodic target with mid-time T₀ (BJD_TDB) and period P the n-th event is centred
on Tₙ = T₀ + n·P (a linear ephemeris), with the uncertainty propagated from the ephemeris,
σ(Tₙ)² = σ(T₀)² + n²σ(P)² (first-order propagation of errors, T₀ and P taken as
uncorrelated).  Tₙ is turned into UTC for the target's direction by
:func:`skyplan.engine.barycentric.bjd_tdb_to_utc`, and so are ingress and egress, Tₙ ∓ D/2
(the rate of BJD_TDB against UTC differs from 1 by at most 1e-4: 1 s over 3 hours).

A phase window [φ₁, φ₂] spans T₀ + (n + φ₁)P .. T₀ + (n + φ₂)P (φ₂ + 1 when φ₂ < φ₁: the
window wraps through phase 0); a fixed-time request is its start and its exposure, or its
window.  Everything is vectorised over targets and epochs.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from skyplan.engine import barycentric
from skyplan.errors import InputError
from skyplan.inputs.ephemerides import Ephemerides

MAX_OCCURRENCES = 200_000  # events of all targets in one request
_MARGIN_D = 0.02  # BJD_TDB − JD_UTC is within ±0.007 d: epochs are searched this much wider


@dataclass(frozen=True)
class Occurrences:
    """Events, phase spans and fixed-time requests, one entry each (POSIX seconds)."""

    rows: np.ndarray  # the target's index
    kind: np.ndarray  # "event", "phase", "fixed"
    epoch: np.ndarray  # cycle number n (float; NaN for fixed-time requests)
    start: np.ndarray  # ingress; the start of a phase span or of a fixed request
    mid: np.ndarray
    end: np.ndarray  # egress; the end of a phase span or of a fixed request
    mid_sigma_s: np.ndarray  # σ(Tₙ); NaN for fixed-time requests
    need_s: np.ndarray  # an event's length; the exposure inside a phase span or fixed window

    def __len__(self) -> int:
        return len(self.rows)

    def take(self, index) -> Occurrences:
        return Occurrences(*(getattr(self, f)[index] for f in self.__dataclass_fields__))


def _cycles(lo: np.ndarray, hi: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """For each target the whole numbers lo..hi: (target index, n) flattened."""
    count = np.maximum(hi - lo + 1, 0).astype(np.int64)
    if int(count.sum()) > MAX_OCCURRENCES:
        raise InputError(f"the dates hold {int(count.sum())} events or phase spans, more than "
                         f"{MAX_OCCURRENCES}; give a shorter span", field="--to")
    which = np.repeat(np.arange(len(lo)), count)
    step = np.arange(int(count.sum())) - np.repeat(np.cumsum(count) - count, count)
    return which, np.repeat(lo, count) + step


def occurrences(eph: Ephemerides, ra_deg: np.ndarray, dec_deg: np.ndarray, site,
                t_from: float, t_to: float, exposure_s: np.ndarray) -> Occurrences:
    """Every event, phase span and fixed request overlapping [t_from, t_to] (POSIX s).

    ``ra_deg``/``dec_deg``: each target's ICRS place (for the barycentric correction);
    ``exposure_s``: the length of a ``fixed_start`` visit and the time a ``fixed_window``
    must hold.
    """
    parts = []
    jd_from = float(barycentric.unix_to_jd_utc(t_from)) - _MARGIN_D
    jd_to = float(barycentric.unix_to_jd_utc(t_to)) + _MARGIN_D
    periodic = np.flatnonzero((eph.kind == "event") | (eph.kind == "phase"))
    if periodic.size:
        t0 = barycentric.to_bjd_tdb(site, eph.t0_jd[periodic], eph.t0_scale[periodic],
                                    ra_deg[periodic], dec_deg[periodic])
        p = eph.period_d[periodic]
        event = eph.kind[periodic] == "event"
        half = np.where(event, eph.duration_h[periodic] / 48.0, 0.0)  # days
        lo_phase = np.where(event, 0.0, eph.phase_min[periodic])
        hi_phase = np.where(event, 0.0, eph.phase_max[periodic])
        hi_phase = np.where(hi_phase < lo_phase, hi_phase + 1.0, hi_phase)
        n_lo = np.ceil((jd_from - t0 - half) / p - hi_phase)
        n_hi = np.floor((jd_to - t0 + half) / p - lo_phase)
        which, n = _cycles(n_lo, n_hi)
        rows = periodic[which]
        ra, dec = ra_deg[rows], dec_deg[rows]
        a_bjd = t0[which] + (n + lo_phase[which]) * p[which] - half[which]
        b_bjd = t0[which] + (n + hi_phase[which]) * p[which] + half[which]
        start = barycentric.bjd_tdb_to_utc(site, a_bjd, ra, dec)
        end = barycentric.bjd_tdb_to_utc(site, b_bjd, ra, dec)
        centre = n + 0.5 * (lo_phase[which] + hi_phase[which])
        sigma = np.hypot(eph.t0_err_d[rows], centre * eph.period_err_d[rows]) * 86400.0
        need = np.where(event[which], end - start, np.minimum(exposure_s[rows], end - start))
        parts.append((rows, eph.kind[rows], n.astype(float), start, 0.5 * (start + end), end,
                      sigma, need))
    fixed = np.flatnonzero(eph.kind == "fixed")
    if fixed.size:
        start = eph.fixed_start[fixed]
        windowed = np.isfinite(eph.fixed_end[fixed])
        end = np.where(windowed, eph.fixed_end[fixed], start + exposure_s[fixed])
        nan = np.full(fixed.size, np.nan)
        parts.append((fixed, eph.kind[fixed], nan, start, 0.5 * (start + end), end, nan,
                      np.minimum(exposure_s[fixed], end - start)))
    if not parts:
        empty = np.zeros(0)
        return Occurrences(np.zeros(0, np.int64), np.zeros(0, object), *(empty,) * 6)
    columns = [np.concatenate(c) for c in zip(*parts, strict=True)]
    found = Occurrences(columns[0].astype(np.int64), columns[1].astype(object), *columns[2:])
    inside = (found.end > t_from) & (found.start < t_to)
    order = np.lexsort((found.rows[inside], found.start[inside]))
    return found.take(np.flatnonzero(inside)[order])
