"""The primary's RIC frame and the screening volumes, pinned by hand-built geometry.

Source: the definition of the radial / in-track / cross-track frame (Vallado, Fundamentals of
Astrodynamics and Applications, the RSW frame): R along the position, C along the orbit normal
r x v, I = C x R completing the right-handed triad (in-track is perpendicular to R in the
orbit plane, not along the velocity of an eccentric orbit).  Every expected number below is
written out by hand from that definition; nothing is built with the function under test.
"""

from __future__ import annotations

import numpy as np
import pytest

from screener.screening.ric import ric_basis, to_ric
from screener.screening.volume import Volume

R0 = np.array([7000.0, 0.0, 0.0])
V0 = np.array([0.0, 7.5, 0.0])
ONE_MM_KM = 1e-6


@pytest.mark.parametrize("offset_km,expected_ric_km", [
    ((0.0, 1.0, 0.0), (0.0, 1.0, 0.0)),      # 1 km ahead along +y (the velocity): in-track +1
    ((0.0, -1.0, 0.0), (0.0, -1.0, 0.0)),    # behind: in-track -1
    ((1.0, 0.0, 0.0), (1.0, 0.0, 0.0)),      # 1 km farther from the Earth: radial +1
    ((0.0, 0.0, 1.0), (0.0, 0.0, 1.0)),      # along r x v = +z: cross-track +1
    ((0.0, 0.0, -2.0), (0.0, 0.0, -2.0)),
    ((0.3, -0.4, 1.2), (0.3, -0.4, 1.2)),
])
def test_circular_equatorial_basis(offset_km, expected_ric_km):
    got = to_ric(np.array(offset_km), R0, V0)
    assert np.allclose(got, expected_ric_km, atol=ONE_MM_KM)


def test_basis_rows_written_out():
    B = ric_basis(R0, V0)
    assert np.allclose(B, [[1, 0, 0], [0, 1, 0], [0, 0, 1]], atol=1e-15)
    # polar orbit over the y axis moving north: R = +y, C = y x z = +x, I = C x R = +z
    B = ric_basis(np.array([0.0, 7000.0, 0.0]), np.array([0.0, 0.0, 7.5]))
    assert np.allclose(B, [[0, 1, 0], [0, 0, 1], [1, 0, 0]], atol=1e-15)
    # retrograde equatorial: C = r x v / |r x v| = (0, 0, -1), R = (1, 0, 0),
    # I = C x R = (0, -1, 0): in-track is still the direction of motion
    B = ric_basis(R0, np.array([0.0, -7.5, 0.0]))
    assert np.allclose(B, [[1, 0, 0], [0, -1, 0], [0, 0, -1]], atol=1e-15)


def test_eccentric_orbit_in_track_is_not_the_velocity_direction():
    """With a radial velocity component, a point 1 km along v has a radial part v_r/|v|."""
    v = np.array([1.0, 7.5, 0.0])
    vhat = v / np.sqrt(1.0 + 7.5**2)
    got = to_ric(vhat * 1.0, R0, v)
    assert np.allclose(got, [1.0 / np.sqrt(57.25), 7.5 / np.sqrt(57.25), 0.0], atol=ONE_MM_KM)
    # in-track unit vector stays +y, perpendicular to the position
    assert np.allclose(ric_basis(R0, v)[1], [0.0, 1.0, 0.0], atol=1e-15)


def test_inclined_case_by_hand():
    """i = 45 deg, at the ascending node on +x: v = 7.5 (0, cos 45, sin 45)."""
    c = np.sqrt(0.5)
    v = 7.5 * np.array([0.0, c, c])
    # h = r x v = 7000*7.5*(0, -c, c) -> C = (0, -c, c); I = C x R = (0, c, c)
    assert np.allclose(to_ric(np.array([0.0, -c, c]), R0, v), [0, 0, 1], atol=1e-12)
    assert np.allclose(to_ric(np.array([0.0, c, c]), R0, v), [0, 1, 0], atol=1e-12)
    assert np.allclose(to_ric(np.array([0.0, 0.0, 1.0]), R0, v), [0, c, c], atol=1e-12)


@pytest.mark.parametrize("ric_km,inside", [
    ((1.9, 0.0, 0.0), True), ((2.1, 0.0, 0.0), False), ((-2.1, 0.0, 0.0), False),
    ((0.0, 24.9, 0.0), True), ((0.0, -25.1, 0.0), False), ((0.0, 0.0, 24.9), True),
    ((1.5, 15.0, 0.0), True),     # 0.75^2 + 0.6^2 = 0.9225
    ((1.5, 18.0, 0.0), False),    # 0.5625 + 0.5184 = 1.0809
    ((1.0, 10.0, 20.0), False),   # 0.25 + 0.16 + 0.64 = 1.05
    ((1.0, 10.0, 19.0), True),    # 0.25 + 0.16 + 0.5776 = 0.9876
])
def test_ric_ellipsoid_accepts_and_rejects_hand_placed_points(ric_km, inside):
    assert bool(Volume.ellipsoid(2.0, 25.0, 25.0).contains(np.array(ric_km))) is inside


@pytest.mark.parametrize("ric_km,inside", [
    ((1.9, 24.0, -24.0), True), ((2.1, 0.0, 0.0), False), ((0.0, 25.5, 0.0), False),
    ((-1.99, -24.99, 24.99), True), ((0.0, 0.0, -25.01), False),
])
def test_ric_box_accepts_and_rejects_hand_placed_points(ric_km, inside):
    assert bool(Volume.box(2.0, 25.0, 25.0).contains(np.array(ric_km))) is inside


def test_sphere_and_bounding_radii():
    s = Volume.sphere(5.0)
    assert s.contains(np.array([3.0, 4.0, 0.0]))          # exactly on the surface
    assert not s.contains(np.array([3.0, 4.0, 0.1]))
    assert Volume.ellipsoid(2, 25, 10).bounding_radius_km == 25.0
    assert Volume.box(2, 25, 10).bounding_radius_km == pytest.approx(np.sqrt(4 + 625 + 100))
