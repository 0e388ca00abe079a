"""Interval algebra and the shared event search, against brute force and known functions.

References: membership on a boolean grid (brute force, the definition of intersection and
complement); the zeros of sin(ωt + φ) − c, known in closed form (t = (asin c − φ + 2πk)/ω and
(π − asin c − φ + 2πk)/ω).
"""

from __future__ import annotations

import numpy as np
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from skyplan.engine import events
from skyplan.engine.intervals import Intervals, complement, intersect

N_ROWS = 4
SPAN = (0, 40)  # integer end points; probes sit on the half-integers between them
PROBES = np.arange(SPAN[0], SPAN[1]) + 0.5


@st.composite
def interval_sets(draw) -> Intervals:
    """Disjoint intervals with integer ends (possibly touching), a few per row, shuffled."""
    rows, starts, ends = [], [], []
    for row in range(N_ROWS):
        points = sorted(draw(st.lists(st.integers(*SPAN), max_size=8)))
        for a, b in zip(points[0::2], points[1::2]):
            if b > a:
                rows.append(row)
                starts.append(a)
                ends.append(b)
    order = draw(st.permutations(range(len(rows))))
    rows = np.array(rows, dtype=np.int64)[list(order)]
    return Intervals.build(rows, np.array(starts, float)[list(order)],
                           np.array(ends, float)[list(order)])


def membership(iv: Intervals) -> np.ndarray:
    """Boolean grid (row, probe): is the probe inside one of the row's intervals?"""
    inside = (iv.start[:, None] < PROBES[None, :]) & (PROBES[None, :] < iv.end[:, None])
    grid = np.zeros((N_ROWS, len(PROBES)), dtype=bool)
    for k in range(len(iv)):
        grid[iv.rows[k]] |= inside[k]
    return grid


def assert_well_formed(iv: Intervals) -> None:
    """Sorted by row then time, non-empty, disjoint within a row."""
    assert np.all(iv.end > iv.start)
    if len(iv) > 1:
        same = iv.rows[1:] == iv.rows[:-1]
        assert np.all(np.diff(iv.rows) >= 0)
        assert np.all(iv.start[1:][same] >= iv.end[:-1][same])


@settings(max_examples=80, deadline=None)
@given(interval_sets(), interval_sets())
def test_intersection_matches_a_boolean_grid(a: Intervals, b: Intervals) -> None:
    out = intersect(a, b)
    assert_well_formed(out)
    assert np.array_equal(membership(out), membership(a) & membership(b))
    # with integer ends, each unit cell holds one probe: the measure counts covered probes
    np.testing.assert_allclose(out.measure(N_ROWS), membership(out).sum(axis=1))


@settings(max_examples=80, deadline=None)
@given(interval_sets(), st.integers(0, 15), st.integers(25, 40))
def test_complement_matches_a_boolean_grid(a: Intervals, lo: int, hi: int) -> None:
    rows = np.arange(N_ROWS)
    out = complement(a, rows, float(lo), float(hi))
    assert_well_formed(out)
    in_span = (PROBES > lo) & (PROBES < hi)
    assert np.array_equal(membership(out), ~membership(a) & in_span[None, :])
    # a set and its complement fill the span exactly
    np.testing.assert_allclose(out.measure(N_ROWS) + a.clip(lo, hi).measure(N_ROWS), hi - lo)


@settings(max_examples=50, deadline=None)
@given(interval_sets(), st.integers(0, 20), st.integers(20, 40))
def test_clip_and_whole(a: Intervals, lo: int, hi: int) -> None:
    clipped = a.clip(float(lo), float(hi))
    assert_well_formed(clipped)
    in_span = (PROBES > lo) & (PROBES < hi)
    assert np.array_equal(membership(clipped), membership(a) & in_span[None, :])
    whole = Intervals.whole(np.arange(N_ROWS), float(lo), float(hi))
    assert np.array_equal(membership(intersect(a, whole)), membership(clipped))


def test_touching_intervals_do_not_intersect() -> None:
    a = Intervals.build([0], [0.0], [1.0])
    b = Intervals.build([0], [1.0], [2.0])
    assert len(intersect(a, b)) == 0
    assert len(intersect(a, Intervals.empty())) == 0


# ------------------------------------------------------------------ event search


def test_grid_covers_the_span_with_the_step() -> None:
    g = events.grid(100.0, 1000.0, 70.0)
    assert g[0] == 100.0 and g[-1] == 1000.0
    assert np.all(np.diff(g) <= 70.0 + 1e-9)
    assert len(events.grid(5.0, 5.0, 10.0)) == 2


@settings(max_examples=40, deadline=None)
@given(st.lists(st.tuples(st.floats(-np.pi, np.pi), st.floats(-0.95, 0.95)),
                min_size=1, max_size=6))
def test_crossings_of_a_sine_are_found_to_tolerance(params) -> None:
    """Zeros of sin(ωt + φ) − c on [0, 3 periods], refined to 0.25 s, with their direction."""
    period = 86400.0
    omega = 2 * np.pi / period
    phi = np.array([p[0] for p in params])
    c = np.array([p[1] for p in params])
    rows = np.arange(len(params))
    end = 3 * period

    def margin(r, t):
        return np.sin(omega * t + phi[r]) - c[r]

    tol = 0.25
    found = events.find_crossings(margin, rows, events.grid(0.0, end, 600.0), tol_s=tol)
    for r in rows:
        k = np.arange(-2, 6)
        up = (np.arcsin(c[r]) - phi[r] + 2 * np.pi * k) / omega  # sin rising through c
        down = (np.pi - np.arcsin(c[r]) - phi[r] + 2 * np.pi * k) / omega
        for expected, rising in ((up, True), (down, False)):
            # a crossing within a minute of either end is a different (edge) case
            assume(not np.any((np.abs(expected) < 60.0) | (np.abs(expected - end) < 60.0)))
            expected = np.sort(expected[(expected > 0.0) & (expected < end)])
            got = np.sort(found.t[(found.rows == r) & (found.rising == rising)])
            assert len(got) == len(expected)
            assert np.all(np.abs(got - expected) <= tol)
        assert found.start_positive[r] == (margin(np.array([r]), np.array([0.0]))[0] >= 0)


def test_intervals_from_crossings_match_the_sign_of_the_margin() -> None:
    """Where sin(ωt + φ) ≥ c, from crossings, checked on a fine grid (brute force)."""
    period = 1000.0
    omega = 2 * np.pi / period
    phi = np.array([0.3, -2.0, 1.0, 0.0])
    c = np.array([0.2, -0.7, 1.5, -1.5])  # the last two: never / always positive
    rows = np.arange(4)

    def margin(r, t):
        return np.sin(omega * t + phi[r]) - c[r]

    span = (0.0, 2500.0)
    found = events.find_crossings(margin, rows, events.grid(*span, 20.0), tol_s=1e-3)
    r, s, e = events.intervals_from_crossings(found, rows, *span)
    iv = Intervals.build(r, s, e)
    assert_well_formed(iv)
    probe = np.linspace(span[0], span[1], 5001)
    for row in rows:
        sel = iv.rows == row
        inside = np.any((iv.start[sel, None] <= probe) & (probe <= iv.end[sel, None]), axis=0)
        value = margin(np.full(len(probe), row), probe)
        clear = np.abs(value) > 1e-4  # away from the crossings themselves
        assert np.array_equal(inside[clear], value[clear] >= 0)
