"""Tests of geosect.geodesy against GeographicLib and the transverse Mercator scale formula.

The survey line is synthetic (invented coordinates in UTM zone 33N, EPSG:32633).
"""

from __future__ import annotations

import math

import numpy as np
import pyproj
import pytest
from geographiclib.geodesic import Geodesic

from geosect.errors import CRSError
from geosect.geodesy import geodesic_offset, grid_vs_ground
from geosect.line import SurveyLine

UTM33 = "EPSG:32633"
# A synthetic 50 km line west of the central meridian (15 E, easting 500 km):
# 30 km east and 40 km north, so its grid length is exactly 50 000 m.
LINE = SurveyLine([420_000.0, 450_000.0], [5_150_000.0, 5_190_000.0], name="synthetic-50km")
WGS84_A = 6378137.0
WGS84_F = 1 / 298.257223563


def tm_scale_snyder(lon_deg, lat_deg, lon0_deg=15.0, k0=0.9996, a=WGS84_A, f=WGS84_F):
    """Point scale of the transverse Mercator projection on the ellipsoid.

    Snyder (1987), "Map Projections - A Working Manual", USGS Professional Paper
    1395, eq. (8-11), p. 61 (equation written from memory):
    k = k0 [1 + (1 + C) A^2/2 + (5 - 4T + 42C + 13C^2 - 28e'^2) A^4/24
            + (61 - 148T + 16T^2) A^6/720],
    A = (lon - lon0) cos(lat), T = tan^2(lat), C = e'^2 cos^2(lat).
    """
    e2 = f * (2 - f)
    ep2 = e2 / (1 - e2)
    phi = np.radians(lat_deg)
    A = np.radians(np.asarray(lon_deg) - lon0_deg) * np.cos(phi)
    T = np.tan(phi) ** 2
    C = ep2 * np.cos(phi) ** 2
    return k0 * (1 + (1 + C) * A**2 / 2 + (5 - 4 * T + 42 * C + 13 * C**2 - 28 * ep2) * A**4 / 24
                 + (61 - 148 * T + 16 * T**2) * A**6 / 720)


def line_lonlat(step=200.0):
    s, e, n = LINE.resample(step)
    t = pyproj.Transformer.from_crs(UTM33, "EPSG:4326", always_xy=True)
    lon, lat = t.transform(e, n)
    return s, lon, lat


def test_snyder_formula_agrees_with_pyproj_factors():
    # a cross-check of the reference formula itself, before using it below
    _, lon, lat = line_lonlat(5000.0)
    f = pyproj.Proj(UTM33).get_factors(lon, lat)
    np.testing.assert_allclose(tm_scale_snyder(lon, lat), f.meridional_scale, rtol=0, atol=1e-9)


def test_ellipsoid_length_matches_geographiclib():
    r = grid_vs_ground(LINE, UTM33, step_m=200.0)
    assert r["grid_length_m"] == pytest.approx(50_000.0, abs=1e-9)
    # Reference: Karney (2013), "Algorithms for geodesics", J. Geodesy 87, 43-55,
    # as implemented in GeographicLib: the same densified path, summed.
    _, lon, lat = line_lonlat(200.0)
    g = Geodesic.WGS84
    ref = sum(g.Inverse(lat[i], lon[i], lat[i + 1], lon[i + 1])["s12"] for i in range(lon.size - 1))
    assert r["ellipsoid_length_m"] == pytest.approx(ref, abs=1e-6)
    # and the single geodesic between the ends is shorter by no more than a few mm
    # (the image of a straight grid line is nearly a geodesic over 50 km)
    direct = g.Inverse(lat[0], lon[0], lat[-1], lon[-1])["s12"]
    assert 0.0 <= r["ellipsoid_length_m"] - direct < 0.01


def test_grid_over_ground_is_the_mean_scale_factor():
    # grid length = integral of k along the ground path, so
    # grid / ground - 1 = mean(k) - 1 with k from Snyder eq. (8-11) (see above),
    # averaged along the line with the trapezoid rule.
    r = grid_vs_ground(LINE, UTM33, step_m=200.0)
    s, lon, lat = line_lonlat(100.0)
    k = tm_scale_snyder(lon, lat)
    kmean = np.trapezoid(k, s) / s[-1]
    assert r["relative_difference"] == pytest.approx(kmean - 1.0, abs=2e-8)
    # the line lies 50-80 km west of the central meridian: k < 1 everywhere
    # (k0 = 0.9996 on the meridian; k = 1 about 180 km from it)
    assert r["relative_difference"] < 0
    # largest scale at the point farthest from the central meridian: the start
    assert r["chainage_of_max_m"] == pytest.approx(0.0)
    assert r["scale_factor_max"] == pytest.approx(float(k[0]), abs=1e-9)
    assert r["scale_factor_min"] == pytest.approx(float(k[-1]), abs=1e-9)


def test_height_factor():
    r0 = grid_vs_ground(LINE, UTM33)
    r2 = grid_vs_ground(LINE, UTM33, height_m=2000.0)
    # at 2 km above the ellipsoid ground distances are longer by about h / R,
    # R ~ 6371 km (mean Earth radius, from memory)
    assert r2["ground_length_m"] / r2["ellipsoid_length_m"] - 1 == pytest.approx(2000.0 / 6_371_000.0, rel=3e-3)
    assert r0["ground_length_m"] == r0["ellipsoid_length_m"]


@pytest.mark.parametrize("bad", ["EPSG:4326", "not a crs"])
def test_unusable_crs_refused(bad):
    with pytest.raises(CRSError) as err:
        grid_vs_ground(LINE, bad)
    assert "Fix:" in str(err.value)


def test_geodesic_offset_matches_geographiclib():
    rng = np.random.default_rng(8)
    lon1 = rng.uniform(5, 25, 50)
    lat1 = rng.uniform(40, 50, 50)
    lon2 = lon1 + rng.uniform(-3, 3, 50)
    lat2 = lat1 + rng.uniform(-2, 2, 50)
    d, az = geodesic_offset(lon1, lat1, lon2, lat2)
    # Reference: GeographicLib (Karney 2013, J. Geodesy 87), WGS84
    for i in range(50):
        ref = Geodesic.WGS84.Inverse(lat1[i], lon1[i], lat2[i], lon2[i])
        assert d[i] == pytest.approx(ref["s12"], abs=1e-6)
        assert az[i] == pytest.approx(ref["azi1"] % 360.0, abs=1e-9)
    assert np.all((az >= 0) & (az < 360))


def test_geodesic_offset_bad_rows_and_ellipsoid():
    d, az = geodesic_offset([10.0, np.nan, 10.0], [45.0, 45.0, 95.0], [10.1, 10.1, 10.1], [45.0, 45.0, 45.0])
    assert np.isfinite(d[0]) and np.isnan(d[1]) and np.isnan(d[2]) and np.isnan(az[2])
    # GRS80 and WGS84 differ in the flattening only (by about 1e-12): metres agree to < 1 mm
    dg, _ = geodesic_offset(10.0, 45.0, 11.0, 46.0, ellps="GRS80")
    dw, _ = geodesic_offset(10.0, 45.0, 11.0, 46.0)
    assert abs(float(dg) - float(dw)) < 1e-3 and dg != dw
