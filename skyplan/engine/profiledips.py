"""The horizon profile's narrow peaks and gaps: what passes between two samples.

``windows`` samples each fixed target's margin against the profile, alt − max(P(A), h₀),
every few minutes and refines its sign changes; a peak of the profile (a pole, a gap between
buildings) that a target passes behind between two positive samples leaves no sign change
there, nor does a narrow gap in it that a target shows through between two hidden samples.
Over a step [t₀, t₁] in which the target's azimuth runs from A₀ to A₁, the margin is at least

    min(alt(t₀), alt(t₁)) − ε − max(max over [A₀ − δ, A₁ + δ] of P, h₀)

and at most max(alt(t₀), alt(t₁)) + ε − max(min over the same arc of P, h₀): bounds from the
profile's highest and lowest points over the azimuths the step sweeps (the profile is
piecewise linear, so that is its value at the arc's ends or at a vertex inside it).  ε and
δ cover how far altitude and azimuth can bend beyond their values at the samples within a
step: about ½ ω² (Δt/2)² for a 5-minute step (0.003°, ω the Earth's rotation rate), a few
times that in azimuth at the altitudes where a profile stands; :data:`BEND_DEG` is wider
than both, and shrinks with the square of the step as the parts get shorter.  Steps whose
bound does not keep the sign both samples have are split in :data:`SPLIT` and the same test
repeats on the parts, down to the refinement tolerance, so every dip or glimpse longer than
that is found; its edges are refined by bisection (:func:`skyplan.engine.events.refine`).
Only the steps that meet the band of altitudes where the profile matters (from the limit to
its highest point, found in closed form) are looked at.
"""

from __future__ import annotations

import numpy as np

from skyplan.engine import events
from skyplan.engine.intervals import Intervals, complement, intersect
from skyplan.engine.limitintervals import altitude_intervals, below_altitude_intervals
from skyplan.engine.sky import Sky

SPLIT = 8  # parts a doubtful step is split into
BEND_DEG = 0.05  # ε and δ: altitude and azimuth bending within a 5-minute step, widened
BEND_STEP_S = 300.0


def _vertex_tables(az_deg: np.ndarray, alt_deg: np.ndarray):
    """The profile's vertices over two turns, with sparse tables of running maxima and
    minima (level k: the extreme of 2**k vertices from each)."""
    az2 = np.concatenate([az_deg, az_deg + 360.0])
    highs, lows = [np.concatenate([alt_deg, alt_deg])], [np.concatenate([alt_deg, alt_deg])]
    width = 1
    while 2 * width <= az2.size:
        highs.append(np.maximum(highs[-1][:-width], highs[-1][width:]))
        lows.append(np.minimum(lows[-1][:-width], lows[-1][width:]))
        width *= 2
    return az2, highs, lows


def profile_range(prof, lo_deg: np.ndarray, hi_deg: np.ndarray, tables=None):
    """The profile's lowest and highest altitude over each azimuth arc [lo, hi] (degrees,
    hi ≥ lo, hi − lo < 360): from its values at the arc's ends and its vertices inside."""
    lo = np.mod(np.asarray(lo_deg, float), 360.0)
    hi = lo + (np.asarray(hi_deg, float) - np.asarray(lo_deg, float))
    p_lo, p_hi = prof.altitude_at(lo), prof.altitude_at(np.mod(hi, 360.0))
    low, high = np.minimum(p_lo, p_hi), np.maximum(p_lo, p_hi)
    az2, highs, lows = tables if tables is not None else _vertex_tables(prof.az_deg,
                                                                         prof.alt_deg)
    a = np.searchsorted(az2, lo, side="left")
    b = np.searchsorted(az2, hi, side="right")  # vertices a .. b-1 lie inside
    has = b > a
    if np.any(has):
        a, b = a[has], b[has]
        k = np.floor(np.log2(b - a)).astype(int)
        top, bottom = np.empty(a.size), np.empty(a.size)
        for level in np.unique(k).tolist():  # at most log2(vertices) levels
            sel = k == level
            end = b[sel] - 2 ** level
            top[sel] = np.maximum(highs[level][a[sel]], highs[level][end])
            bottom[sel] = np.minimum(lows[level][a[sel]], lows[level][end])
        high[has] = np.maximum(high[has], top)
        low[has] = np.minimum(low[has], bottom)
    return low, high


def _doubtful(sky: Sky, prof, threshold: float, rows, t0, t1, tables, ends=None):
    """For steps [t0, t1] of targets ``rows``: which change sign between their ends, which
    agree at both ends but whose bounds (module text) do not rule out a change between
    them, and the sign at the start (clear of the profile or not).  ``ends``: the places
    (alt0, az0, alt1, az1) at the ends when known."""
    if ends is None:
        alt0, az0, _ = sky.horizon(rows, t0)
        alt1, az1, _ = sky.horizon(rows, t1)
    else:
        alt0, az0, alt1, az1 = ends
    up0 = alt0 - np.maximum(prof.altitude_at(az0), threshold) >= 0
    up1 = alt1 - np.maximum(prof.altitude_at(az1), threshold) >= 0
    bend = BEND_DEG * ((t1 - t0) / BEND_STEP_S) ** 2  # bending grows with the step squared
    sweep = (az1 - az0 + 180.0) % 360.0 - 180.0  # the shorter way round
    lo = np.where(sweep >= 0, az0, az0 + sweep) - bend
    low, high = profile_range(prof, lo, lo + np.abs(sweep) + 2.0 * bend, tables)
    # clear at both ends: may it dip behind the highest point?  Hidden at both: may it
    # show above the lowest?
    dip = up0 & up1 & (np.minimum(alt0, alt1) - bend <= np.maximum(high, threshold))
    show = ~up0 & ~up1 & (np.maximum(alt0, alt1) + bend >= np.maximum(low, threshold))
    return up0 != up1, dip | show, up0


def dips(sky: Sky, rows: np.ndarray, threshold: float, grid: np.ndarray,
         tol_s: float) -> tuple[Intervals, Intervals]:
    """For fixed targets ``rows``, what sampling on ``grid`` misses against the profile (or
    ``threshold``, apparent degrees): the dips behind it between two samples that clear it,
    and the glimpses above it between two that do not (see the module text)."""
    prof = sky.site.horizon
    tables = _vertex_tables(prof.az_deg, prof.alt_deg)
    span = (float(grid[0]), float(grid[-1]))
    band = intersect(altitude_intervals(sky, rows, threshold - 0.5, span),
                     below_altitude_intervals(sky, rows, float(np.max(prof.alt_deg)) + 0.5,
                                              span))
    # the steps each piece of the band meets, each (row, step) once
    k0 = np.clip(np.searchsorted(grid, band.start, side="right") - 1, 0, grid.size - 2)
    k1 = np.clip(np.searchsorted(grid, band.end, side="left"), k0 + 1, grid.size - 1)
    m = grid.size
    count = k1 - k0
    within = np.arange(int(count.sum())) - np.repeat(np.cumsum(count) - count, count)
    key = np.repeat(band.rows * m + k0, count) + within  # sorted: the band is
    if key.size == 0:
        return Intervals.empty(), Intervals.empty()
    key = key[np.concatenate([[True], key[1:] != key[:-1]])]
    ri, ci = key // m, key % m
    r, t0, t1 = ri, grid[ci], grid[ci + 1]
    # each sample once, though most are the end of two steps: a step's end is the next
    # step's start unless a gap follows, where it is a sample of its own
    gap = np.concatenate([key[1:] != key[:-1] + 1, [True]])
    e0 = np.arange(key.size) + np.concatenate([[0], np.cumsum(gap)[:-1]])
    e1 = e0 + 1
    flat = np.empty(key.size + int(gap.sum()), np.int64)
    flat[e0] = key
    flat[e0[gap] + 1] = key[gap] + 1
    alt, az, _ = sky.horizon(flat // m, grid[flat % m])
    # the sampled steps' own sign changes are the coarse intervals' edges: only the steps
    # whose ends agree are looked into, each by its parts (``step``: which one it is in)
    _, doubt, clear = _doubtful(sky, prof, threshold, r, t0, t1, tables,
                                (alt[e0], az[e0], alt[e1], az[e1]))
    r, t0, t1, clear = r[doubt], t0[doubt], t1[doubt], clear[doubt]
    step = np.arange(r.size)
    found: list[tuple] = []
    while r.size and float(np.max(t1 - t0)) > tol_s:
        edges = t0[:, None] + (t1 - t0)[:, None] * np.linspace(0.0, 1.0, SPLIT + 1)[None, :]
        r, step = np.repeat(r, SPLIT), np.repeat(step, SPLIT)
        t0, t1 = edges[:, :-1].ravel(), edges[:, 1:].ravel()
        change, doubt, up0 = _doubtful(sky, prof, threshold, r, t0, t1, tables)
        found.append((r[change], step[change], t0[change], t1[change], ~up0[change]))
        r, step, t0, t1 = r[doubt], step[doubt], t0[doubt], t1[doubt]
    if not found or sum(f[0].size for f in found) == 0:
        return Intervals.empty(), Intervals.empty()
    br, bstep, blo, bhi, bup = (np.concatenate([f[j] for f in found]) for j in range(5))

    def margin(rr, t):
        alt, az, _ = sky.horizon(rr, t)
        return alt - np.maximum(prof.altitude_at(az), threshold)

    t = events.refine(margin, br, blo, bhi, bup, tol_s=tol_s)
    # inside one step whose ends agree the changes alternate, the first against the ends'
    # sign: pair the 1st with the 2nd, the 3rd with the 4th ...
    order = np.lexsort((t, bstep))
    br, bstep, t = br[order], bstep[order], t[order]
    first = np.searchsorted(bstep, bstep, side="left")
    opens = np.flatnonzero(((np.arange(bstep.size) - first) % 2 == 0)[:-1]
                           & (bstep[:-1] == bstep[1:]))
    out = []
    for kind in (True, False):  # dips (ends clear), glimpses (ends hidden)
        sel = opens[clear[bstep[opens]] == kind]
        out.append(Intervals.build(br[sel], t[sel], t[sel + 1]))
    return out[0], out[1]


def without_dips(sky: Sky, rows: np.ndarray, threshold: float, coarse: Intervals,
                 span: tuple[float, float]) -> Intervals:
    """``coarse`` (the sampled profile intervals of fixed targets ``rows``) less the dips
    and with the glimpses between its samples."""
    grid = sky.grid[(sky.grid >= span[0]) & (sky.grid <= span[1])]
    grid = np.unique(np.concatenate([[span[0]], grid, [span[1]]]))
    dip, glimpse = dips(sky, rows, threshold, grid, sky.tol_s)
    out = coarse
    if len(dip):
        out = intersect(out, complement(dip, np.unique(out.rows), span[0], span[1]))
    if len(glimpse):  # inside steps where ``coarse`` has nothing: disjoint from it
        out = out.union_rows(glimpse)
    return out
