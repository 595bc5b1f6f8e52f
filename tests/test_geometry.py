"""Geometry: sky offsets, deprojection, spacings and their errors.

References: astropy.coordinates (SkyCoord.separation, rotation matrices) as the
reference library; the definition of the parsec (IAU 2015 Resolution B2:
1 pc = 648000/pi au, so 1 arcsec at 1 pc subtends 1 au); analytic lattices.
"""

from __future__ import annotations

import astropy.units as u
import numpy as np
import pytest
from astropy.coordinates import SkyCoord
from astropy.coordinates.matrix_utilities import rotation_matrix

from infer.catalog.geometry import (
    angular_to_length,
    clump_spacings,
    deproject,
    deprojection_matrix,
    mean_position,
    project_to_sky,
    sky_offsets,
)


@pytest.mark.parametrize("dec0", [-75.0, -30.0, 0.0, 30.0, 60.0, 85.0])
@pytest.mark.parametrize("distance", [50.0, 140.0, 400.0])
def test_projected_separations_match_skycoord(dec0, distance):
    # reference library: SkyCoord.separation (great-circle) times the distance
    rng = np.random.default_rng(7)
    center = SkyCoord(123.4 * u.deg, dec0 * u.deg)
    pts = center.spherical_offsets_by(rng.uniform(-60, 60, 12) * u.arcsec,
                                      rng.uniform(-60, 60, 12) * u.arcsec)
    east, north = sky_offsets(pts.ra, pts.dec, center=center)
    x = angular_to_length(east, distance * u.pc).to_value(u.au)
    y = angular_to_length(north, distance * u.pc).to_value(u.au)
    i, j = np.triu_indices(12, k=1)
    ours = np.hypot(x[i] - x[j], y[i] - y[j])
    ref = pts[i].separation(pts[j]).to_value(u.rad) * (distance * u.pc).to_value(u.au)
    # the offset frame distorts separations by O(theta^2) ~ (1 arcmin)^2 ~ 1e-7
    np.testing.assert_allclose(ours, ref, rtol=1e-6)


def test_mean_position_centre_gives_same_separations():
    rng = np.random.default_rng(3)
    ra = 359.99 + rng.uniform(-0.02, 0.02, 6)       # straddles RA = 0
    dec = 10 + rng.uniform(-0.02, 0.02, 6)
    ra = np.mod(ra, 360) * u.deg
    dec = dec * u.deg
    e1, n1 = sky_offsets(ra, dec)
    e2, n2 = sky_offsets(ra, dec, center=SkyCoord(0.0 * u.deg, 10.0 * u.deg))
    d1 = np.hypot(e1[0] - e1[1:], n1[0] - n1[1:])
    d2 = np.hypot(e2[0] - e2[1:], n2[0] - n2[1:])
    np.testing.assert_allclose(d1.value, d2.value, rtol=1e-6)
    c = mean_position(SkyCoord(ra, dec))
    assert abs(((c.ra.deg + 180) % 360) - 180) < 0.05      # near RA 0, not near 180


def test_east_and_north_are_positive():
    # the sky's orientation: RA increases to the east, Dec to the north
    east, north = sky_offsets([10.001, 10.0] * u.deg, [-30.0, -29.999] * u.deg,
                              center=SkyCoord(10.0 * u.deg, -30.0 * u.deg))
    assert east[0] > 0 and abs(north[0]) < 1e-3 * u.arcsec
    assert north[1] > 0 and abs(east[1]) < 1e-3 * u.arcsec
    # an RA step of 0.001 deg at Dec -30 spans 3.6 arcsec * cos(30 deg)
    assert east[0].to_value(u.arcsec) == pytest.approx(3.6 * np.cos(np.radians(30)), rel=1e-5)


def test_one_arcsec_at_one_parsec_is_one_au():
    # definition of the parsec (IAU 2015 Resolution B2)
    assert angular_to_length(1 * u.arcsec, 1 * u.pc).to_value(u.au) == pytest.approx(1.0, rel=1e-12)
    assert angular_to_length(0.5 * u.arcsec, 140 * u.pc).to_value(u.au) == pytest.approx(70.0, rel=1e-12)


def _observed_circle(radius, inc_deg, pa_deg, n=16):
    """A circle in an inclined disk seen on the sky, built with astropy rotations.

    Disk frame: x' along the line of nodes (the major axis), z' the disk normal.
    Tilt about x' by the inclination, keep the two sky-plane components, then
    turn the major axis to the position angle (east of north).
    """
    phi = np.linspace(0, 2 * np.pi, n, endpoint=False)
    disk = np.vstack([radius * np.cos(phi), radius * np.sin(phi), np.zeros(n)])
    tilted = rotation_matrix(inc_deg * u.deg, "x") @ disk
    major, minor = tilted[0], tilted[1]              # tilted[2] is along the line of sight
    pa = np.radians(pa_deg)
    east = major * np.sin(pa) + minor * np.cos(pa)
    north = major * np.cos(pa) - minor * np.sin(pa)
    return east, north


@pytest.mark.parametrize("inc", [0.0, 20.0, 45.0, 70.0, 85.0])
@pytest.mark.parametrize("pa", [0.0, 37.0, 90.0, 145.0, 270.0])
def test_deprojected_circle_is_a_circle(inc, pa):
    east, north = _observed_circle(80.0, inc, pa)
    x, y = deproject(east * u.au, north * u.au, inclination=inc * u.deg, position_angle=pa * u.deg)
    np.testing.assert_allclose(np.hypot(x.value, y.value), 80.0, rtol=1e-10)


def test_deprojection_with_wrong_angle_is_not_a_circle():
    # the circle test can fail: a position angle off by 90 deg leaves an ellipse
    east, north = _observed_circle(80.0, 50.0, 30.0)
    x, y = deproject(east * u.au, north * u.au, inclination=50 * u.deg, position_angle=120 * u.deg)
    r = np.hypot(x.value, y.value)
    assert r.max() / r.min() > 1.5


def test_major_axis_kept_minor_axis_stretched():
    pa, inc = np.radians(30.0), 60.0
    major = np.array([np.sin(pa), np.cos(pa)])       # unit vector east of north
    minor = np.array([np.cos(pa), -np.sin(pa)])
    m = deprojection_matrix(inc * u.deg, 30 * u.deg)
    np.testing.assert_allclose(m @ major, major, atol=1e-12)
    np.testing.assert_allclose(m @ minor, minor / np.cos(np.radians(inc)), atol=1e-12)


def test_project_to_sky_inverts_deprojection():
    rng = np.random.default_rng(1)
    x, y = rng.normal(size=(2, 10)) * u.au
    sx, sy = project_to_sky(x, y, inclination=40 * u.deg, position_angle=200 * u.deg)
    bx, by = deproject(sx, sy, inclination=40 * u.deg, position_angle=200 * u.deg)
    np.testing.assert_allclose(bx.value, x.value, atol=1e-12)
    np.testing.assert_allclose(by.value, y.value, atol=1e-12)


def _connected(n, pairs):
    parent = list(range(n))

    def find(a):
        while parent[a] != a:
            a = parent[a]
        return a

    for a, b in pairs:
        parent[find(a)] = find(b)
    return len({find(k) for k in range(n)}) == 1


@pytest.mark.parametrize("angle", [0.0, 30.0])
def test_mst_of_square_lattice(angle):
    a = 3.7
    i, j = np.meshgrid(np.arange(5), np.arange(4))
    x, y = a * i.ravel(), a * j.ravel()
    t = np.radians(angle)
    x, y = x * np.cos(t) - y * np.sin(t), x * np.sin(t) + y * np.cos(t)
    sp = clump_spacings(x * u.au, y * u.au)
    assert len(sp.lengths) == 19                     # N - 1 edges
    np.testing.assert_allclose(sp.lengths.to_value(u.au), a, rtol=1e-12)
    assert _connected(20, sp.pairs)
    np.testing.assert_array_equal(sp.errors.value, 0.0)


@pytest.mark.parametrize("n", [5, 8, 13])
def test_mst_of_ring(n):
    r = 80.0
    phi = 2 * np.pi * np.arange(n) / n + 0.3
    sp = clump_spacings(r * np.cos(phi) * u.au, r * np.sin(phi) * u.au)
    assert len(sp.lengths) == n - 1
    # chord of a regular N-gon
    np.testing.assert_allclose(sp.lengths.to_value(u.au), 2 * r * np.sin(np.pi / n), rtol=1e-12)
    assert _connected(n, sp.pairs)


def test_nearest_neighbour_of_lattice():
    a = 2.0
    i, j = np.meshgrid(np.arange(4), np.arange(3))
    sp = clump_spacings(a * i.ravel() * u.au, a * j.ravel() * u.au, method="nearest")
    assert len(sp.lengths) == 12                     # one per clump
    np.testing.assert_allclose(sp.lengths.value, a)
    assert np.all(sp.pairs[:, 0] == np.arange(12))
    assert np.all(sp.pairs[:, 0] != sp.pairs[:, 1])


def test_spacing_error_two_points():
    # s = |x1 - x2| along x: ds^2 = sx1^2 + sx2^2; errors across the edge do not count
    sp = clump_spacings([0, 10] * u.au, [0, 0] * u.au, x_err=[0.3, 0.4] * u.au,
                        y_err=[5.0, 5.0] * u.au)
    assert sp.errors[0].to_value(u.au) == pytest.approx(0.5, rel=1e-12)


def test_spacing_errors_match_monte_carlo_when_inclined():
    # linear propagation against a seeded Monte Carlo through the deprojection
    rng = np.random.default_rng(11)
    inc, pa = 55 * u.deg, 25 * u.deg
    sky = rng.uniform(-50, 50, size=(2, 6))
    sx_err = np.full(6, 0.05)
    sy_err = np.linspace(0.02, 0.08, 6)
    dx, dy = deproject(sky[0] * u.au, sky[1] * u.au, inclination=inc, position_angle=pa)
    sp = clump_spacings(dx, dy, x_err=sx_err * u.au, y_err=sy_err * u.au,
                        matrix=deprojection_matrix(inc, pa))
    n_draw = 20000
    ex = sky[0] + sx_err * rng.standard_normal((n_draw, 6))
    ey = sky[1] + sy_err * rng.standard_normal((n_draw, 6))
    m = deprojection_matrix(inc, pa)
    px, py = m[0, 0] * ex + m[0, 1] * ey, m[1, 0] * ex + m[1, 1] * ey
    i, j = sp.pairs[:, 0], sp.pairs[:, 1]
    draws = np.hypot(px[:, i] - px[:, j], py[:, i] - py[:, j])
    # 20000 draws: the sample std is good to ~0.5 %; curvature terms are ~(0.1/10)^2
    np.testing.assert_allclose(draws.std(axis=0), sp.errors.to_value(u.au), rtol=0.03)


def test_unknown_method_and_too_few_points():
    with pytest.raises(ValueError, match="mst"):
        clump_spacings([0, 1] * u.au, [0, 1] * u.au, method="delaunay")
    with pytest.raises(ValueError, match="two"):
        clump_spacings([0] * u.au, [0] * u.au)
