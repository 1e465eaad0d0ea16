"""DEM sampling: bilinear, block by block, nodata and outside flagged, other CRS handled by transforming points."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import rasterio
from rasterio.transform import from_origin

from geosect.io.dem import dem_info, sample_dem

X0, Y0, CELL = 500_000.0, 4_900_000.0, 100.0


def plane(x, y):
    # a plane is reproduced exactly by bilinear interpolation (a property of the method, no source needed)
    return 250.0 + 0.01 * (x - X0) - 0.02 * (Y0 - y)


@pytest.fixture
def dem(tmp_path: Path) -> Path:
    w, h = 64, 48
    cols, rows = np.meshgrid(np.arange(w), np.arange(h))
    xc = X0 + (cols + 0.5) * CELL
    yc = Y0 - (rows + 0.5) * CELL
    z = plane(xc, yc).astype("float32")
    z[10:12, 40:42] = -9999.0
    p = tmp_path / "dem.tif"
    with rasterio.open(p, "w", driver="GTiff", width=w, height=h, count=1, dtype="float32", crs="EPSG:32624",
                       transform=from_origin(X0, Y0, CELL, CELL), nodata=-9999.0, tiled=True, blockxsize=16,
                       blockysize=16) as ds:
        ds.write(z, 1)
    return p


def test_info(dem: Path) -> None:
    info = dem_info(dem)
    assert info.block_shape == (16, 16) and info.cell == CELL and info.crs.to_epsg() == 32624


def test_bilinear_reproduces_plane(dem: Path, rng: np.random.Generator) -> None:
    x = rng.uniform(X0 + 60, X0 + 64 * CELL - 60, 2000)
    y = rng.uniform(Y0 - 48 * CELL + 60, Y0 - 60, 2000)
    z, why = sample_dem(dem, x, y)
    ok = why == ""
    assert ok.sum() > 1900  # a few fall next to the nodata patch
    np.testing.assert_allclose(z[ok], plane(x[ok], y[ok]), atol=1e-3)
    assert np.isnan(z[~ok]).all() and set(why[~ok]) == {"dem_nodata"}


def test_outside_and_nan(dem: Path) -> None:
    z, why = sample_dem(dem, [X0 - 500, np.nan, X0 + 1000], [Y0 - 1000, Y0 - 1000, Y0 - 1000])
    assert list(why) == ["outside_dem", "outside_dem", ""]
    assert np.isnan(z[:2]).all() and np.isfinite(z[2])


def test_points_in_another_crs(dem: Path) -> None:
    from pyproj import Transformer

    x = np.array([X0 + 1234.5, X0 + 4321.0])
    y = np.array([Y0 - 2345.0, Y0 - 3456.7])
    lon, lat = Transformer.from_crs(32624, 4326, always_xy=True).transform(x, y)
    z, why = sample_dem(dem, lon, lat, points_crs="EPSG:4326")
    np.testing.assert_allclose(z, plane(x, y), atol=1e-3)


def test_reads_only_touched_blocks(dem: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    windows = []
    orig = rasterio.io.DatasetReader.read

    def spy(self, *a, **kw):
        windows.append(kw.get("window"))
        return orig(self, *a, **kw)

    monkeypatch.setattr(rasterio.io.DatasetReader, "read", spy)
    # 500 points inside one 16x16 block (block row 1, column 0), and 3 in another
    rng = np.random.default_rng(1)
    x = np.r_[rng.uniform(X0 + 200, X0 + 1400, 500), [X0 + 3300] * 3]
    y = np.r_[rng.uniform(Y0 - 2900, Y0 - 1800, 500), [Y0 - 300] * 3]
    sample_dem(dem, x, y)
    assert len(windows) == 2  # one read per touched block, not one per point
    assert all(w is not None and w.width <= 17 and w.height <= 17 for w in windows)
