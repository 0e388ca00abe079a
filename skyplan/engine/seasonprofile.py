"""The horizon profile as a set of hour angles, once per block of nights.

A fixed target's altitude and azimuth at hour angle H depend on its declination alone, so
the hour angles at which it stands above the profile (and above the altitude limits,
whichever is higher, as ``windows`` compares them) are the same on every night but for the
slow drift of its apparent place.  They are sampled once per block of nights, at the
block's middle night (the error budget is in ``docs/accuracy.md``):

* only the targets whose declination takes them through the part of the sky where the
  profile stands above the altitude limits (a band of declinations found once from the
  profile, spherical trigonometry: Meeus 1998, eq. 13.6 inverted) are sampled;
* for each, two ranges of hour angle where its altitude lies between the limits and the
  profile's highest point (the half arcs of Meeus 1998, eq. 15.1);
* samples every :data:`PROFILE_STEP_RAD` of hour angle (one minute of time, finer than
  ``windows``' five), edges refined by bisection (:func:`skyplan.engine.events.refine`) on
  the ``windows`` margin itself (:func:`skyplan.engine.limitintervals.profile_margin`).
"""

from __future__ import annotations

import numpy as np

from skyplan.engine import airmass as am
from skyplan.engine import events
from skyplan.engine.hourangleset import HourAngleSet, gaps, wrap
from skyplan.engine.limitintervals import half_arc, profile_margin
from skyplan.engine.sky import SIDEREAL_RATE, Sky
from skyplan.inputs.limits import Limits

PROFILE_STEP_RAD = np.radians(0.25)  # hour-angle step of the profile's samples (1 min)
PROFILE_TOL_S = 0.01  # the profile's edges, refined to


def threshold(limits: Limits) -> float:
    """The apparent altitude the profile is compared with, as in ``windows``."""
    low = limits.min_alt_deg
    if limits.max_airmass is not None:
        low = max(low, am.altitude_for_airmass(limits.max_airmass, limits.airmass_model))
    return low


def _profile_decs(site, lat_deg: float, low: float) -> tuple[float, float]:
    """The declinations that pass through the part of the sky where the profile stands
    above ``low`` (apparent altitude), with half a degree to spare."""
    prof = site.horizon
    az = np.unique(np.concatenate([np.arange(0.0, 360.0, 0.1), prof.az_deg]))
    top = prof.altitude_at(az)
    az = az[top > low]
    if len(az) == 0:
        return 1.0, -1.0
    f = np.linspace(0.0, 1.0, 24)[None, :]
    alt = np.radians((low - 1.0) + f * (top[top > low][:, None] + 2.0 - low))
    phi, a = np.radians(lat_deg), np.radians(az)[:, None]
    sin_dec = np.sin(phi) * np.sin(alt) + np.cos(phi) * np.cos(alt) * np.cos(a)
    dec = np.degrees(np.arcsin(np.clip(sin_dec, -1.0, 1.0)))
    return float(dec.min()) - 0.5, float(dec.max()) + 0.5


def profile_set(sky: Sky, limits: Limits) -> HourAngleSet:
    """The hour angles at which each target stands above the horizon profile (or the
    altitude limits, whichever is higher), from the night of ``sky``."""
    n = len(sky.ra)
    prof = sky.site.horizon
    low = threshold(limits)
    if not limits.use_horizon_profile or prof is None or float(np.max(prof.alt_deg)) <= low:
        return HourAngleSet.whole(n)
    lat = sky.site.lat_deg
    dec_lo, dec_hi = _profile_decs(sky.site, lat, low)
    d = np.degrees(sky.dec)
    cand = np.flatnonzero((d >= dec_lo) & (d <= dec_hi))
    a_lo = half_arc(lat, sky.dec[cand], sky.true_alt(low) - 0.2)
    a_hi = half_arc(lat, sky.dec[cand], sky.true_alt(float(np.max(prof.alt_deg))) + 0.2)
    keep = (a_lo >= 0) & (a_hi <= np.pi)  # reaches the band, and is not always above it
    cand, a_lo, a_hi = cand[keep], np.minimum(a_lo[keep], np.pi), np.maximum(a_hi[keep], 0.0)
    # two ranges of hour angle per target, where the altitude lies in the band
    rows = np.concatenate([cand, cand])
    lo = np.concatenate([-a_lo, a_hi])
    hi = np.concatenate([-a_hi, a_lo])
    bad_r, bad_lo, bad_hi = _profile_bad(sky, low, rows, lo, hi)
    return _allowed(n, bad_r, bad_lo, bad_hi)


def _profile_bad(sky: Sky, low: float, rows, lo, hi):
    """Intervals of hour angle inside [lo, hi] (per entry) where the target is below the
    profile: sampled every :data:`PROFILE_STEP_RAD` at most (:func:`_sampled_margin`),
    edges refined by bisection on the ``windows`` margin."""
    margin = profile_margin(sky, low)
    h_mid = wrap(sky.era_local(sky.t_mid) - sky.ra)

    def at(r, h):  # the instant of the night of ``sky`` with hour angle h
        return sky.t_mid + (h - h_mid[r]) / SIDEREAL_RATE

    counts = np.clip(np.ceil((hi - lo) / PROFILE_STEP_RAD), 4, 2048).astype(int)
    counts = 2 ** np.ceil(np.log2(counts)).astype(int)
    out_r, out_lo, out_hi = [np.zeros(0, np.int64)], [np.zeros(0)], [np.zeros(0)]
    for size in np.unique(counts):  # a few sample counts, each vectorised over targets
        sel = np.flatnonzero(counts == size)
        r = rows[sel]
        f = np.linspace(0.0, 1.0, size + 1)[None, :]
        h = lo[sel][:, None] + f * (hi[sel] - lo[sel])[:, None]
        ok = _sampled_margin(sky, low, r, h) >= 0
        i, j = np.nonzero(ok[:, 1:] != ok[:, :-1])
        up = ok[i, j + 1]
        t = events.refine(margin, r[i], at(r[i], h[i, j]), at(r[i], h[i, j + 1]), up,
                          tol_s=PROFILE_TOL_S)
        x = h_mid[r[i]] + (t - sky.t_mid) * SIDEREAL_RATE
        # bad intervals open at a start that is bad or where the margin turns negative
        o_e = np.concatenate([np.flatnonzero(~ok[:, 0]), i[~up]])
        o_t = np.concatenate([h[~ok[:, 0], 0], x[~up]])
        c_e = np.concatenate([np.flatnonzero(~ok[:, -1]), i[up]])
        c_t = np.concatenate([h[~ok[:, -1], -1], x[up]])
        so, sc = np.lexsort((o_t, o_e)), np.lexsort((c_t, c_e))
        out_r.append(r[o_e[so]])
        out_lo.append(o_t[so])
        out_hi.append(c_t[sc])
    return np.concatenate(out_r), np.concatenate(out_lo), np.concatenate(out_hi)


def _sampled_margin(sky: Sky, low: float, rows, h) -> np.ndarray:
    """The profile margin at hour angles ``h`` (rows × samples) for the sampling stage:
    altitude and azimuth by spherical trigonometry (Meeus 1998, eqs. 13.5–13.6) without
    polar motion and diurnal aberration (< 1″), then refraction as ``windows``."""
    phi = np.radians(sky.site.lat_deg)
    dec = sky.dec[rows][:, None]
    sin_alt = np.sin(phi) * np.sin(dec) + np.cos(phi) * np.cos(dec) * np.cos(h)
    alt = np.degrees(np.arcsin(np.clip(sin_alt, -1.0, 1.0)))
    az = np.degrees(np.arctan2(-np.cos(dec) * np.sin(h),
                               np.sin(dec) * np.cos(phi) - np.cos(dec) * np.cos(h) * np.sin(phi)))
    top = sky.site.horizon.altitude_at(az % 360.0)
    return alt + sky.refract(alt) - np.maximum(top, low)


def _allowed(n: int, bad_r, bad_lo, bad_hi) -> HourAngleSet:
    """The circle less the bad intervals of each row, as a packed set."""
    return HourAngleSet(*gaps(n, bad_r, bad_lo, bad_hi, -np.pi, np.pi)).packed()
