"""Tests for skyplan.render.projection: the zenith-centred stereographic projection of the sky.

References:
- Snyder, J. P. (1987), Map Projections — A Working Manual, USGS Prof. Paper 1395, ch. 21
  (from memory): the stereographic projection is conformal and maps circles on the sphere
  that miss the centre of projection to circles; polar aspect r = 2 R tan(z / 2).
- Calabretta, M. R. & Greisen, E. W. (2002), A&A 395, 1077, sect. 5.1.4 "STG" (from memory),
  as implemented by astropy.modeling.projections.Sky2Pix_Stereographic (reference library).
- Chart orientation "north up, east left, as seen looking up at the sky": common practice
  for sky charts.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from skyplan.render.projection import horizon_radius, project, project_circle, unproject

ALT = st.floats(-80.0, 90.0, allow_nan=False)
AZ = st.floats(0.0, 360.0, allow_nan=False, exclude_max=True)
FAST = settings(max_examples=150, deadline=None)


def unit_vector(alt_deg, az_deg):
    """(east, north, up) unit vector of a horizon direction."""
    alt = np.radians(alt_deg)
    az = np.radians(az_deg)
    return np.stack([np.cos(alt) * np.sin(az), np.cos(alt) * np.cos(az), np.sin(alt)], axis=-1)


def alt_az_of(v):
    """Horizon coordinates of (east, north, up) vectors, well conditioned everywhere."""
    e, n, u = v[..., 0], v[..., 1], v[..., 2]
    alt = np.degrees(np.arctan2(u, np.hypot(e, n)))
    az = np.mod(np.degrees(np.arctan2(e, n)), 360.0)
    return alt, az


def local_frame(alt_deg, az_deg):
    """Unit vectors towards local north (along the vertical, towards the zenith) and towards
    increasing azimuth at a point of the sky."""
    alt = math.radians(alt_deg)
    az = math.radians(az_deg)
    up = np.array([-math.sin(alt) * math.sin(az), -math.sin(alt) * math.cos(az), math.cos(alt)])
    along = np.array([math.cos(az), -math.sin(az), 0.0])
    return up, along


def sky_circle(center_alt, center_az, radius_deg, n=64):
    """n points of the small circle of angular radius radius_deg about a point."""
    c = unit_vector(center_alt, center_az)
    a, b = local_frame(center_alt, center_az)
    t = np.linspace(0.0, 2.0 * np.pi, n, endpoint=False)[:, None]
    rho = math.radians(radius_deg)
    return math.cos(rho) * c + math.sin(rho) * (np.cos(t) * a + np.sin(t) * b)


def test_zenith_maps_to_centre_and_horizon_to_2r():
    # Snyder 1987 ch. 21 (from memory): polar aspect r = 2 R tan(z/2); z = 0 -> 0, z = 90° -> 2R.
    az = np.linspace(0.0, 359.0, 37)
    for radius in (1.0, 3.7):
        x, y = project(np.full_like(az, 90.0), az, radius)
        np.testing.assert_allclose(np.hypot(x, y), 0.0, atol=1e-15)
        x, y = project(np.zeros_like(az), az, radius)
        np.testing.assert_allclose(np.hypot(x, y), 2.0 * radius, rtol=1e-15)
        assert horizon_radius(radius) == 2.0 * radius


def test_north_up_east_left():
    # Common practice for sky charts held overhead: north up, east to the left.
    x, y = project([0.0, 0.0, 0.0, 0.0], [0.0, 90.0, 180.0, 270.0])
    np.testing.assert_allclose(x, [0.0, -2.0, 0.0, 2.0], atol=1e-15)
    np.testing.assert_allclose(y, [2.0, 0.0, -2.0, 0.0], atol=1e-15)


def test_matches_astropy_stg_projection():
    # Calabretta & Greisen 2002 STG via astropy: R_theta = (180/pi) 2 cos(theta)/(1+sin(theta)),
    # x = R sin(phi), y = -R cos(phi).  Our chart is the same map turned by 180°: with
    # R = 180/pi we must get exactly minus astropy's (x, y) for phi = az, theta = alt.
    from astropy.modeling.projections import Sky2Pix_Stereographic

    rng = np.random.default_rng(7)
    alt = rng.uniform(-70.0, 90.0, 500)
    az = rng.uniform(0.0, 360.0, 500)
    ref_x, ref_y = Sky2Pix_Stereographic()(az, alt)
    x, y = project(alt, az, 180.0 / math.pi)
    np.testing.assert_allclose(x, -ref_x, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(y, -ref_y, rtol=1e-12, atol=1e-12)


@FAST
@given(ALT, AZ, st.floats(0.1, 10.0))
def test_inverse_of_forward_is_identity(alt, az, radius):
    x, y = project(alt, az, radius)
    alt2, az2 = unproject(x, y, radius)
    assert abs(alt2 - alt) <= 1e-12
    # Compare directions on the sphere, which stays meaningful at the zenith.
    assert np.linalg.norm(unit_vector(alt2, az2) - unit_vector(alt, az)) <= 1e-12
    assert 0.0 <= az2 < 360.0
    if alt < 89.0:
        assert abs((az2 - az + 180.0) % 360.0 - 180.0) <= 1e-12


@FAST
@given(st.floats(-20.0, 20.0), st.floats(-20.0, 20.0))
def test_forward_of_inverse_is_identity(x, y):
    alt, az = unproject(x, y)
    x2, y2 = project(alt, az)
    assert math.hypot(x2 - x, y2 - y) <= 1e-12 * max(1.0, math.hypot(x, y))


def test_vectorised_shapes_broadcast():
    alt = np.linspace(0.0, 90.0, 4)[:, None]
    az = np.linspace(0.0, 300.0, 5)[None, :]
    x, y = project(alt, az)
    assert x.shape == y.shape == (4, 5)
    alt2, az2 = unproject(x, y)
    assert alt2.shape == az2.shape == (4, 5)
    np.testing.assert_allclose(alt2, np.broadcast_to(alt, (4, 5)), atol=1e-12)


def test_centre_unprojects_to_zenith():
    alt, az = unproject(0.0, 0.0)
    assert alt == 90.0 and az == 0.0


@FAST
@given(
    st.floats(-60.0, 90.0),
    AZ,
    st.floats(0.5, 120.0),
)
def test_small_circle_projects_to_circle(center_alt, center_az, radius_deg):
    # Snyder 1987 ch. 21 (from memory): circles not through the nadir map to circles.
    if (90.0 - center_alt) + radius_deg > 170.0:  # stay clear of the nadir
        center_alt = 90.0 - (170.0 - radius_deg)
    alt, az = alt_az_of(sky_circle(center_alt, center_az, radius_deg))
    x, y = project(alt, az)
    # Algebraic (Kasa) fit x^2 + y^2 + D x + E y + F = 0 on centred, scaled coordinates.
    mx, my = x.mean(), y.mean()
    scale = np.sqrt(np.mean((x - mx) ** 2 + (y - my) ** 2))
    u, v = (x - mx) / scale, (y - my) / scale
    a = np.column_stack([u, v, np.ones_like(u)])
    (d, e, f), *_ = np.linalg.lstsq(a, -(u**2 + v**2), rcond=None)
    cu, cv = -d / 2.0, -e / 2.0
    r_fit = math.sqrt(cu**2 + cv**2 - f) * scale
    cx, cy = mx + cu * scale, my + cv * scale
    residual = np.abs(np.hypot(x - cx, y - cy) - r_fit)
    assert residual.max() <= 1e-9 * r_fit
    # The analytic image agrees with the fit.
    c = project_circle(center_alt, center_az, radius_deg)
    assert abs(c.radius - r_fit) <= 1e-9 * r_fit
    assert math.hypot(c.x - cx, c.y - cy) <= 1e-9 * r_fit
    assert np.abs(np.hypot(x - c.x, y - c.y) - c.radius).max() <= 1e-9 * c.radius


def test_altitude_circles_are_centred():
    # An altitude circle is a small circle about the zenith: centre 0, radius 2R tan(z/2).
    for alt in (0.0, 15.0, 30.0, 75.0):
        c = project_circle(90.0, 0.0, 90.0 - alt, 2.0)
        assert math.hypot(c.x, c.y) <= 1e-15
        assert c.radius == pytest.approx(4.0 * math.tan(math.radians(90.0 - alt) / 2.0), rel=1e-15)


def test_circle_through_nadir_is_refused():
    with pytest.raises(ValueError, match="nadir"):
        project_circle(-30.0, 10.0, 60.0)
    with pytest.raises(ValueError, match="radius"):
        project_circle(10.0, 10.0, 0.0)


def _plane_tangent(point, direction, h=1e-3):
    """d/dt of the projected great circle cos(t) P + sin(t) D at t = 0, by the five-point
    central difference (error O(h^4))."""

    def at(t):
        x, y = project(*alt_az_of(math.cos(t) * point + math.sin(t) * direction))
        return np.array([x, y])

    return (at(-2 * h) - 8 * at(-h) + 8 * at(h) - at(2 * h)) / (12 * h)


def _angle(a, b):
    cross = a[0] * b[1] - a[1] * b[0]
    return math.atan2(abs(cross), float(np.dot(a, b)))


@FAST
@given(
    st.floats(-60.0, 80.0),
    AZ,
    st.floats(0.0, 2.0 * math.pi),
    st.floats(0.0, 2.0 * math.pi),
)
def test_angles_between_curves_are_kept(alt, az, theta1, theta2):
    # Snyder 1987 ch. 21 (from memory): the stereographic projection is conformal.
    p = unit_vector(alt, az)
    up, along = local_frame(alt, az)
    d1 = math.cos(theta1) * up + math.sin(theta1) * along
    d2 = math.cos(theta2) * up + math.sin(theta2) * along
    on_sky = math.atan2(np.linalg.norm(np.cross(d1, d2)), float(np.dot(d1, d2)))
    on_chart = _angle(_plane_tangent(p, d1), _plane_tangent(p, d2))
    assert abs(on_chart - on_sky) <= 1e-9
