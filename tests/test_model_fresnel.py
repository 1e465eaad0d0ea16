"""Fresnel zones: Sheriff's zero-offset radius and the wide-angle half-period zone.

Models are synthetic (invented numbers).
"""

from __future__ import annotations

import numpy as np
import pytest

from geosect.errors import InputError
from geosect.model import LayeredModel
from geosect.model.fresnel import average_velocity, fresnel_radius, fresnel_semi_axes, fresnel_zone


def test_sheriff_radius():
    # Sheriff (1980), "Nomogram for Fresnel-zone calculation", Geophysics 45, 968-972:
    # r = sqrt(z lambda/2 + lambda^2/16), about (V/2) sqrt(t/f) with t the two-way time.
    z = np.array([500.0, 2000.0, 30e3])
    v = np.array([2500.0, 3000.0, 6200.0])
    f = np.array([50.0, 30.0, 8.0])
    lam = v / f
    # the exact form is the half-wavelength circle: (z + lambda/4)^2 = z^2 + r^2
    np.testing.assert_allclose(fresnel_radius(z, v, f), np.sqrt((z + lam / 4) ** 2 - z**2), rtol=1e-12)
    t = 2 * z / v
    np.testing.assert_allclose(fresnel_radius(z, v, f, approximate=True), v / 2 * np.sqrt(t / f),
                               rtol=1e-12)


def test_zero_offset_constant_velocity_is_sheriff_exact():
    m = LayeredModel.flat([0.0, 2000.0], [3000.0, 4000.0], names=["surface", "reflector"])
    z = fresnel_zone(m, 0.0, "reflector", 30.0)
    r = np.sqrt(2000.0 * 100.0 / 2 + 100.0**2 / 16)       # Sheriff (1980), lambda = 3000/30 m
    assert float(z.inline_m) == pytest.approx(r, rel=1e-8)
    assert float(z.crossline_m) == pytest.approx(r, rel=1e-8)
    # a buried source and receiver: z is the depth below them
    z2 = fresnel_zone(m, 0.0, "reflector", 30.0, source_depth_m=500.0, receiver_depth_m=500.0)
    assert float(z2.inline_m) == pytest.approx(float(fresnel_radius(1500.0, 3000.0, 30.0)), rel=1e-8)


def _ellipse_axes(x, z, v, f):
    """In-line and crossline semi-axes of the intersection of the half-period ellipsoid
    (foci at source and receiver, sum of distances = specular path + lambda/2) with the
    reflector plane; derived here from the focal property of the ellipsoid."""
    lam = v / f
    big_a = (np.hypot(x, 2 * z) + lam / 2) / 2
    big_b = np.sqrt(big_a**2 - (x / 2) ** 2)
    k = np.sqrt(1 - z**2 / big_b**2)
    return big_a * k, big_b * k


def test_wide_angle_constant_velocity_ellipse():
    v, zr, f = 3000.0, 2000.0, 30.0
    m = LayeredModel.flat([0.0, zr], [v, 4500.0], names=["surface", "reflector"])
    x = np.array([0.0, 500.0, 2000.0, 4000.0])
    z = fresnel_zone(m, x, "reflector", f)
    ax, ay = _ellipse_axes(x, zr, v, f)
    np.testing.assert_allclose(z.inline_m, ax, rtol=1e-7)
    np.testing.assert_allclose(z.crossline_m, ay, rtol=1e-7)
    # symmetric pair: the zone is centred on the specular point
    np.testing.assert_allclose(z.inline_plus_m, z.inline_minus_m, rtol=1e-7)


def test_layered_zero_offset_symmetric_and_near_sheriff():
    m = LayeredModel.flat([0, 20e3, 35e3], [5800, 6500, 8040], names=["surface", "mid-crust", "moho"])
    z = fresnel_zone(m, 0.0, "moho", 10.0)
    assert float(z.inline_m) == pytest.approx(float(z.crossline_m), rel=1e-9)
    # Sheriff's formula with the average velocity above the reflector is an approximation here
    v_avg = average_velocity(m, "moho")
    assert v_avg == pytest.approx(35e3 / (20e3 / 5800 + 15e3 / 6500), rel=1e-12)
    assert float(z.inline_m) == pytest.approx(float(fresnel_radius(35e3, v_avg, 10.0)), rel=0.01)


def test_semi_axes_for_solved_rays():
    m = LayeredModel.flat([0, 20e3, 35e3], [5800, 6500, 8040], names=["surface", "mid-crust", "moho"])
    x = np.array([0.0, 60e3, 140e3])
    sol = m.solve(x, "reflection:moho")
    fin, fxl = fresnel_semi_axes(m, "reflection:moho", sol, x, frequency_hz=8.0)
    z = fresnel_zone(m, x, "moho", 8.0)
    np.testing.assert_allclose(fin, z.inline_m, rtol=1e-9)
    np.testing.assert_allclose(fxl, z.crossline_m, rtol=1e-9)
    assert np.all(np.diff(fin) > 0)            # the zone stretches in line with offset
    with pytest.raises(InputError, match="no reflection point"):
        fresnel_semi_axes(m, "head:moho", sol, x)


def test_semi_axes_without_model_in_constant_velocity():
    # with no model the fallback is the constant-velocity ellipse, exact in a constant medium
    v, zr, f = 3000.0, 2000.0, 30.0
    m = LayeredModel.flat([0.0, zr], [v, 4500.0], names=["surface", "reflector"])
    x = np.array([0.0, 1500.0, 3000.0])
    sol = m.solve(x, "reflection:reflector")
    fin, fxl = fresnel_semi_axes(None, "reflection:reflector", dict(
        time_s=sol.time_s, point_distance_m=sol.point_distance_m, point_depth_m=sol.point_depth_m),
        x, frequency_hz=f)
    ax, ay = _ellipse_axes(x, zr, v, f)
    np.testing.assert_allclose(fin, ax, rtol=1e-7)
    np.testing.assert_allclose(fxl, ay, rtol=1e-7)
