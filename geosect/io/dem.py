"""The digital elevation model: open, describe, and sample at points by bilinear interpolation.

Sampling reads only the raster blocks that the points touch (one windowed read per
touched block, never one read per point and never the whole bounding box), and
interpolates all points of a block at once.  Points in another CRS are transformed
into the DEM's CRS; the raster is never warped.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np
from pyproj import CRS

from ..crs import transform
from ..errors import InputError

__all__ = ["DemInfo", "dem_info", "sample_dem"]


@dataclass(frozen=True)
class DemInfo:
    path: Path
    crs: CRS
    width: int
    height: int
    cell_x: float
    cell_y: float
    bounds: tuple[float, float, float, float]  # left, bottom, right, top (DEM CRS)
    nodata: float | None
    block_shape: tuple[int, int]

    @property
    def cell(self) -> float:
        """The larger cell size in the DEM's units."""
        return max(abs(self.cell_x), abs(self.cell_y))


def _open(path: Path):
    import rasterio

    try:
        return rasterio.open(path)
    except Exception as exc:
        raise InputError(f"cannot open the DEM ({str(exc)[:200]})", file=path, key="dem.file",
                         fix="give a raster GDAL reads, such as a GeoTIFF.") from None


def dem_info(path: str | Path, band: int = 1) -> DemInfo:
    """Describe a DEM; refuses one without a CRS or with too few bands."""
    path = Path(path)
    with _open(path) as ds:
        if ds.crs is None:
            raise InputError("the DEM has no coordinate reference system", file=path, key="dem.file",
                             fix="assign one with `gdal_edit.py -a_srs EPSG:xxxx` or export it with its CRS.")
        if band > ds.count:
            raise InputError(f"the DEM has {ds.count} band(s), band {band} asked for", file=path, key="dem.band",
                             fix=f"set band to a number from 1 to {ds.count}.")
        if ds.transform.b != 0 or ds.transform.d != 0:
            raise InputError("the DEM is rotated (its geotransform has shear terms)", file=path, key="dem.file",
                             fix="warp it to a north-up grid first.")
        bs = ds.block_shapes[band - 1]
        return DemInfo(path, CRS.from_user_input(ds.crs), ds.width, ds.height, ds.transform.a, ds.transform.e,
                       tuple(ds.bounds), ds.nodata, (int(bs[0]), int(bs[1])))


def sample_dem(path: str | Path, x: np.ndarray, y: np.ndarray, points_crs: CRS | None = None, *,
               band: int = 1) -> tuple[np.ndarray, np.ndarray]:
    """Bilinear DEM heights at points.

    Parameters
    ----------
    path : DEM file.
    x, y : arrays of point coordinates (easting, northing) in ``points_crs``
        (the DEM's CRS when None).
    band : raster band, 1-based.

    Returns
    -------
    z : heights in the DEM's units (NaN outside the DEM, at nodata, or for NaN points).
    reason : array of str, '' where sampled, 'outside_dem' or 'dem_nodata' otherwise.

    Notes
    -----
    Pixel centres carry the values.  A point between the outermost pixel centres and
    the raster edge takes the edge value (clamped), so the whole raster footprint is
    covered.  Any of the four neighbours being nodata makes the sample NaN.
    """
    path = Path(path)
    x = np.asarray(x, float).ravel()
    y = np.asarray(y, float).ravel()
    info = dem_info(path, band)
    if points_crs is not None and not CRS.from_user_input(points_crs).equals(info.crs):
        x, y = transform(CRS.from_user_input(points_crs), info.crs, x, y)
    n = x.size
    z = np.full(n, np.nan)
    reason = np.full(n, "", dtype=object)
    finite = np.isfinite(x) & np.isfinite(y)
    reason[~finite] = "outside_dem"
    import rasterio
    from rasterio.windows import Window

    with rasterio.open(path) as ds:
        inv = ~ds.transform
        col_f, row_f = inv * (x[finite], y[finite])
        col_f = np.asarray(col_f) - 0.5  # pixel-centre coordinates
        row_f = np.asarray(row_f) - 0.5
        idx = np.flatnonzero(finite)
        inside = (col_f >= -0.5) & (col_f <= ds.width - 0.5) & (row_f >= -0.5) & (row_f <= ds.height - 0.5)
        reason[idx[~inside]] = "outside_dem"
        idx, col_f, row_f = idx[inside], col_f[inside], row_f[inside]
        if idx.size == 0:
            return z, reason
        col_f = np.clip(col_f, 0, ds.width - 1)
        row_f = np.clip(row_f, 0, ds.height - 1)
        c0 = np.minimum(np.floor(col_f).astype(np.int64), max(ds.width - 2, 0))
        r0 = np.minimum(np.floor(row_f).astype(np.int64), max(ds.height - 2, 0))
        bh, bw = info.block_shape
        block = (r0 // bh) * (ds.width // bw + 1) + (c0 // bw)
        order = np.argsort(block, kind="stable")
        blocks, starts = np.unique(block[order], return_index=True)
        ends = np.append(starts[1:], order.size)
        nodata = ds.nodata
        for s, e in zip(starts, ends):  # one read per touched block
            sel = order[s:e]
            rr0, cc0 = r0[sel], c0[sel]
            wr0, wc0 = int(rr0.min()), int(cc0.min())
            wr1 = min(int(rr0.max()) + 2, ds.height)
            wc1 = min(int(cc0.max()) + 2, ds.width)
            arr = ds.read(band, window=Window(wc0, wr0, wc1 - wc0, wr1 - wr0), masked=False).astype(float)
            if nodata is not None:
                arr[arr == nodata] = np.nan
            arr[~np.isfinite(arr)] = np.nan
            lr = rr0 - wr0
            lc = cc0 - wc0
            lr1 = np.minimum(lr + 1, arr.shape[0] - 1)
            lc1 = np.minimum(lc + 1, arr.shape[1] - 1)
            fr = row_f[sel] - rr0
            fc = col_f[sel] - cc0
            v = (arr[lr, lc] * (1 - fr) * (1 - fc) + arr[lr, lc1] * (1 - fr) * fc
                 + arr[lr1, lc] * fr * (1 - fc) + arr[lr1, lc1] * fr * fc)
            z[idx[sel]] = v
            reason[idx[sel][~np.isfinite(v)]] = "dem_nodata"
    return z, reason
