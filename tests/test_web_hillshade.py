"""The offline basemap: Horn's gradient, Lambertian shading, the Web Mercator warp (synthetic DEMs)."""

from __future__ import annotations

import io
import math

import numpy as np
import pytest
import rasterio
from PIL import Image
from pyproj import Transformer
from rasterio.transform import from_origin

from geosect.errors import CRSError, InputError
from geosect.web.hillshade import horn_gradient, hillshade_overlay, hypsometric_tint, shade


def _grid(h=9, w=11, cell=30.0):
    x = (np.arange(w) + 0.5) * cell  # east
    y = -(np.arange(h) + 0.5) * cell  # north decreases with the row index
    return np.meshgrid(x, y)


def test_horn_gradient_exact_on_a_plane():
    # Horn (1981), "Hill shading and the reflectance map", Proc. IEEE 69(1): the weighted
    # 3x3 differences reproduce the slope of a plane exactly.
    X, Y = _grid()
    z = 0.12 * X - 0.37 * Y + 500.0
    gx, gy = horn_gradient(z, 30.0, 30.0)
    assert np.allclose(gx[1:-1, 1:-1], 0.12)
    assert np.allclose(gy[1:-1, 1:-1], -0.37)


def test_horn_gradient_exact_on_a_quadratic_and_per_row_dx():
    # Central differences are exact for quadratics: d(c x^2)/dx = 2 c x (Horn 1981, same weights).
    X, Y = _grid(cell=20.0)
    z = 0.004 * X**2 + 0.2 * Y
    gx, gy = horn_gradient(z, 20.0, 20.0)
    assert np.allclose(gx[1:-1, 1:-1], 2 * 0.004 * X[1:-1, 1:-1])
    assert np.allclose(gy[1:-1, 1:-1], 0.2)
    # per-row cell widths (a geographic grid): each row divides by its own dx
    dx = np.linspace(20.0, 40.0, z.shape[0])[:, None]
    X2 = np.cumsum(np.broadcast_to(dx, z.shape), axis=1) - dx / 2
    gx2, _ = horn_gradient(0.3 * X2, dx, 20.0)
    assert np.allclose(gx2[1:-1, 1:-1], 0.3)


@pytest.mark.parametrize("gx,gy,az,alt", [(0.0, 0.0, 315, 45), (0.5, 0.0, 270, 30), (-0.3, 0.8, 315, 45),
                                          (0.2, -0.6, 135, 60), (3.0, 0.0, 90, 20)])
def test_shade_matches_the_slope_aspect_formula(gx, gy, az, alt):
    # The usual hillshade formula (e.g. Burrough & McDonnell, Principles of Geographical
    # Information Systems, 1998, ch. 8; from memory):
    #   cos(zenith) cos(slope) + sin(zenith) sin(slope) cos(azimuth - aspect),
    # aspect = azimuth of steepest descent, clockwise from north.
    slope = math.atan(math.hypot(gx, gy))
    aspect = math.atan2(-gx, -gy)
    zen = math.radians(90 - alt)
    expect = math.cos(zen) * math.cos(slope) + math.sin(zen) * math.sin(slope) * math.cos(math.radians(az) - aspect)
    got = float(shade(np.array(gx), np.array(gy), az, alt))
    assert got == pytest.approx(max(expect, 0.0), abs=1e-12)


def test_tint_is_a_ramp_in_range():
    z = np.array([[0.0, 500.0, 1000.0, np.nan]])
    rgb = hypsometric_tint(z, 0.0, 1000.0)
    assert rgb.shape == (1, 4, 3)
    assert np.all((rgb[0, :3] >= 0) & (rgb[0, :3] <= 1))
    assert not np.allclose(rgb[0, 0], rgb[0, 2])  # low and high differ


def _write(path, z, crs, transform, nodata=-9999.0):
    with rasterio.open(path, "w", driver="GTiff", height=z.shape[0], width=z.shape[1], count=1,
                       dtype="float32", crs=crs, transform=transform, nodata=nodata) as d:
        d.write(z.astype("float32"), 1)
    return path


def _rgba(hs):
    return np.asarray(Image.open(io.BytesIO(hs.png_bytes)).convert("RGBA"))


def test_geographic_dem_lands_on_mercator_rows(tmp_path):
    # A band of nodata at a known latitude must appear at the Web Mercator row of that latitude
    # (reference: pyproj EPSG:4326 -> EPSG:3857), not at the row a linear-in-latitude image would use.
    h, w = 400, 200
    north, west, res = 62.0, 5.0, 0.06  # 62 N .. 38 N
    z = np.add.outer(np.linspace(2000, 100, h), np.linspace(0, 300, w))
    band = (38.0 + 15.0, 38.0 + 14.4)  # 53.0 N .. 52.4 N
    lat_c = north - (np.arange(h) + 0.5) * res
    z[(lat_c <= band[0]) & (lat_c >= band[1])] = -9999.0
    path = _write(tmp_path / "geo.tif", z, "EPSG:4326", from_origin(west, north, res, res))
    hs = hillshade_overlay(path, palette_colours=None)
    img = _rgba(hs)
    assert hs.west == pytest.approx(west, abs=1e-6) and hs.east == pytest.approx(west + w * res, abs=1e-6)
    assert hs.north == pytest.approx(north, abs=1e-3) and hs.south == pytest.approx(north - h * res, abs=1e-3)
    to_m = Transformer.from_crs("EPSG:4326", "EPSG:3857", always_xy=True)
    _, y_n = to_m.transform(west, hs.north)
    _, y_s = to_m.transform(west, hs.south)
    _, y_band = to_m.transform(west, np.mean(band))
    expected_row = (y_n - y_band) / (y_n - y_s) * img.shape[0]
    col = img[:, img.shape[1] // 2, 3]
    clear = np.flatnonzero(col == 0)
    got_row = clear.mean()
    linear_row = (north - np.mean(band)) / (h * res) * img.shape[0]
    assert abs(got_row - expected_row) < 2.0
    assert abs(linear_row - expected_row) > 10.0  # the check can tell the two apart


def test_projected_dem_bounds_transparency_and_decimation(tmp_path):
    h, w = 600, 800
    X, Y = np.meshgrid(np.arange(w), np.arange(h))
    z = 1200 + 300 * np.sin(X / 40.0) * np.cos(Y / 55.0)
    z[:50, :60] = -9999.0
    t = from_origin(500_000.0, 5_200_000.0, 25.0, 25.0)
    path = _write(tmp_path / "utm.tif", z, "EPSG:32632", t)
    hs = hillshade_overlay(path, max_pixels=100_000)
    img = _rgba(hs)
    assert img.shape[0] * img.shape[1] <= 1.3 * 100_000  # decimated read, then warped
    # Bounds contain the DEM's corners transformed with pyproj (the reference).
    to_ll = Transformer.from_crs("EPSG:32632", "EPSG:4326", always_xy=True)
    xs = [500_000.0, 500_000.0 + w * 25.0]
    ys = [5_200_000.0 - h * 25.0, 5_200_000.0]
    lon, lat = to_ll.transform(np.repeat(xs, 2), np.tile(ys, 2))
    tol = 0.002
    assert hs.west <= min(lon) + tol and hs.east >= max(lon) - tol
    assert hs.south <= min(lat) + tol and hs.north >= max(lat) - tol
    assert hs.east - hs.west < (max(lon) - min(lon)) * 1.1
    # nodata corner (north-west) and the outside of the rotated footprint are transparent;
    # the middle is opaque
    assert img[2, 2, 3] == 0
    assert img[img.shape[0] // 2, img.shape[1] // 2, 3] == 255
    assert hs.data_url().startswith("data:image/png;base64,")


def test_errors_name_the_file(tmp_path):
    with pytest.raises(InputError, match="does not exist"):
        hillshade_overlay(tmp_path / "nope.tif")
    bad = tmp_path / "bad.tif"
    bad.write_text("not a raster")
    with pytest.raises(InputError, match="cannot be read") as e:
        hillshade_overlay(bad)
    assert "bad.tif" in str(e.value)
    nocrs = tmp_path / "nocrs.tif"
    with rasterio.open(nocrs, "w", driver="GTiff", height=4, width=4, count=1, dtype="float32") as d:
        d.write(np.ones((4, 4), "float32"), 1)
    with pytest.raises(CRSError, match="no coordinate reference system"):
        hillshade_overlay(nocrs)
    empty = _write(tmp_path / "empty.tif", np.full((5, 5), -9999.0), "EPSG:32632", from_origin(0, 100, 10, 10))
    with pytest.raises(InputError, match="no valid cell"):
        hillshade_overlay(empty)
