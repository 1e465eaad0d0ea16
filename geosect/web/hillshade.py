"""The offline basemap of the map page: a shaded, tinted DEM in Web Mercator.

The DEM is read (decimated when large), shaded with Horn's (1981) gradient
estimator and Lambert's cosine law, tinted by elevation with our own colour
ramp, warped to EPSG:3857 (the projection Leaflet draws in, so the image lies
correctly under the vectors) and encoded as PNG with transparent nodata.
"""

from __future__ import annotations

import base64
import io
import math
import os
from dataclasses import dataclass

import numpy as np

from ..errors import CRSError, InputError

__all__ = ["Hillshade", "hillshade_overlay", "horn_gradient", "shade", "hypsometric_tint"]

#: Mean Earth radius in metres (IUGG value R1 = 6 371 008.8 m; Moritz 2000,
#: "Geodetic Reference System 1980", J. Geodesy 74; from memory).  Used only to
#: turn degree cells of a geographic DEM into metres for shading.
EARTH_RADIUS_M = 6_371_008.8

#: Web Mercator stops at this latitude (degrees), where it becomes square.
MERCATOR_MAX_LAT = 85.0511287798066

# Our own hypsometric ramp: (fraction of the elevation range, r, g, b in 0..1).
_TINT = np.array(
    [
        [0.00, 0.36, 0.55, 0.38],
        [0.20, 0.56, 0.68, 0.44],
        [0.45, 0.83, 0.80, 0.56],
        [0.70, 0.68, 0.55, 0.40],
        [0.88, 0.62, 0.58, 0.55],
        [1.00, 0.96, 0.96, 0.95],
    ]
)


@dataclass(frozen=True)
class Hillshade:
    """A PNG image and the lon/lat box it covers (degrees, EPSG:4326).

    The image is in Web Mercator (EPSG:3857) rows and columns, so that it can be
    stretched over ``[[south, west], [north, east]]`` by Leaflet's image overlay.
    """

    png_bytes: bytes
    south: float
    west: float
    north: float
    east: float

    def data_url(self) -> str:
        """The image as a ``data:image/png;base64,…`` URL."""
        return "data:image/png;base64," + base64.b64encode(self.png_bytes).decode("ascii")


def horn_gradient(z: np.ndarray, dx: float | np.ndarray, dy: float) -> tuple[np.ndarray, np.ndarray]:
    """Surface gradient by Horn's weighted 3×3 differences.

    Horn, B. K. P. (1981), "Hill shading and the reflectance map", Proc. IEEE
    69(1), 14–47: with the neighbourhood ``a b c / d e f / g h i`` (row 0 north),

    .. math::
        \\partial z/\\partial x = ((c + 2f + i) - (a + 2d + g)) / (8\\,dx), \\quad
        \\partial z/\\partial y = ((a + 2b + c) - (g + 2h + i)) / (8\\,dy)

    Edges repeat the border cells.  NaN spreads to the neighbours.

    Parameters
    ----------
    z : ndarray, shape (rows, cols)
        Elevations in metres, row 0 the northern edge.
    dx : float or ndarray of shape (rows, 1)
        East–west cell size in metres (per row for a geographic grid).
    dy : float
        North–south cell size in metres.

    Returns
    -------
    dz_dx_east, dz_dy_north : ndarray
        Slopes (dimensionless), positive uphill to the east and to the north.
    """
    p = np.pad(np.asarray(z, dtype=float), 1, mode="edge")
    a, b, c = p[:-2, :-2], p[:-2, 1:-1], p[:-2, 2:]
    d, f = p[1:-1, :-2], p[1:-1, 2:]
    g, h, i = p[2:, :-2], p[2:, 1:-1], p[2:, 2:]
    gx = ((c + 2 * f + i) - (a + 2 * d + g)) / (8.0 * np.asarray(dx, dtype=float))
    gy = ((a + 2 * b + c) - (g + 2 * h + i)) / (8.0 * float(dy))
    return gx, gy


def shade(
    gx: np.ndarray, gy: np.ndarray, azimuth_deg: float = 315.0, altitude_deg: float = 45.0
) -> np.ndarray:
    """Lambertian brightness in 0..1 of a surface with gradient ``(gx, gy)``.

    Brightness is the cosine of the angle between the surface normal
    ``(-gx, -gy, 1)/|…|`` and the direction to the sun (azimuth clockwise from
    north, altitude above the horizon), clipped at 0 for faces turned away
    (Horn 1981, section on the reflectance map of a Lambertian surface).
    """
    az = math.radians(azimuth_deg)
    alt = math.radians(altitude_deg)
    sun = (math.sin(az) * math.cos(alt), math.cos(az) * math.cos(alt), math.sin(alt))
    num = -gx * sun[0] - gy * sun[1] + sun[2]
    return np.clip(num / np.sqrt(1.0 + gx * gx + gy * gy), 0.0, 1.0)


def hypsometric_tint(z: np.ndarray, lo: float, hi: float) -> np.ndarray:
    """Colour by elevation with our own ramp: greens low, tans, browns, white high.

    Returns an array of shape ``z.shape + (3,)`` in 0..1 (NaN where ``z`` is NaN).
    """
    frac = (np.asarray(z, dtype=float) - lo) / (hi - lo if hi > lo else 1.0)
    frac = np.clip(frac, 0.0, 1.0)
    return np.stack([np.interp(frac, _TINT[:, 0], _TINT[:, k]) for k in (1, 2, 3)], axis=-1)


def _open(dem_path: str | os.PathLike):
    import rasterio

    if not os.path.exists(dem_path):
        raise InputError(
            f"the DEM file '{dem_path}' does not exist",
            file=dem_path,
            fix="check the DEM path in the project file (relative paths start at the project folder)",
        )
    try:
        return rasterio.open(dem_path)
    except rasterio.errors.RasterioIOError as exc:
        raise InputError(
            f"the DEM cannot be read as a raster ({exc})",
            file=dem_path,
            fix="give a GeoTIFF (or another GDAL raster) with elevations in metres",
        ) from None


def hillshade_overlay(
    dem_path: str | os.PathLike,
    *,
    max_pixels: int = 1_500_000,
    azimuth_deg: float = 315.0,
    altitude_deg: float = 45.0,
    z_factor: float = 1.0,
    palette_colours: int | None = 256,
) -> Hillshade:
    """Shade and tint a DEM, warp it to Web Mercator and encode it as PNG.

    Parameters
    ----------
    dem_path : path
        A north-up raster of elevations in metres (any CRS with a definition).
    max_pixels : int
        Read at most about this many cells (decimated with averaging beyond).
    azimuth_deg, altitude_deg : float
        Sun direction: degrees clockwise from north, degrees above the horizon.
    z_factor : float
        Vertical exaggeration of the shading (1 = true relief).
    palette_colours : int or None
        Quantise the PNG to this many colours (keeps the page small); None keeps
        full RGBA.

    Returns
    -------
    Hillshade
        PNG bytes (transparent outside the data) and the lon/lat bounds in degrees.

    Raises
    ------
    InputError
        File missing or unreadable, rotated grid, no valid cell, beyond ±85° latitude.
    CRSError
        The DEM has no coordinate reference system.
    """
    from affine import Affine
    from PIL import Image
    from pyproj import Transformer
    from rasterio.enums import Resampling
    from rasterio.warp import reproject, transform_bounds

    with _open(dem_path) as src:
        if src.crs is None:
            raise CRSError(
                "the DEM has no coordinate reference system",
                file=dem_path,
                fix="write the CRS into the file (for example with rasterio or GDAL: EPSG code of the grid)",
            )
        t = src.transform
        if t.b != 0 or t.d != 0:
            raise InputError(
                "the DEM grid is rotated; only north-up grids are supported",
                file=dem_path,
                fix="resample the DEM to a north-up grid",
            )
        factor = max(1.0, math.sqrt(src.width * src.height / float(max_pixels)))
        w = max(2, int(math.ceil(src.width / factor)))
        h = max(2, int(math.ceil(src.height / factor)))
        band = src.read(1, out_shape=(h, w), masked=True, resampling=Resampling.average)
        transform = t @ Affine.scale(src.width / w, src.height / h)
        crs = src.crs
        bounds = src.bounds
    z = np.ma.filled(band.astype(float), np.nan)
    if not np.isfinite(z).any():
        raise InputError("the DEM has no valid cell (all nodata)", file=dem_path, fix="check the DEM's nodata value")

    rows = np.arange(h)
    if crs.is_geographic:
        lat = transform.f + (rows + 0.5) * transform.e
        if np.nanmax(np.abs([bounds.bottom, bounds.top])) > MERCATOR_MAX_LAT:
            raise InputError(
                f"the DEM reaches latitude {max(abs(bounds.bottom), abs(bounds.top)):.2f}°, beyond the "
                f"±{MERCATOR_MAX_LAT:.2f}° of Web Mercator",
                file=dem_path,
                fix="crop the DEM to the survey area",
            )
        deg = math.pi / 180.0 * EARTH_RADIUS_M
        dx = (abs(transform.a) * deg * np.cos(np.radians(lat)))[:, None]
        dy = abs(transform.e) * deg
    else:
        try:
            unit = crs.linear_units_factor[1]
        except Exception:  # CRS without a linear unit: assume metres
            unit = 1.0
        dx, dy = abs(transform.a) * unit, abs(transform.e) * unit
    if transform.e > 0:  # south-up rows: flip so that row 0 is north
        z = z[::-1]
        transform = transform @ Affine.translation(0, h) @ Affine.scale(1, -1)
        if np.ndim(dx):
            dx = dx[::-1]

    gx, gy = horn_gradient(z * z_factor, dx, dy)
    if transform.a < 0:  # east-to-west columns
        gx = -gx
    light = shade(gx, gy, azimuth_deg, altitude_deg)
    lo, hi = np.nanpercentile(z, [1.0, 99.5])
    rgb = hypsometric_tint(z, lo, hi) * (0.35 + 0.65 * light)[..., None]
    valid = np.isfinite(z) & np.isfinite(light)
    rgba = np.zeros((4, h, w), dtype=np.uint8)
    rgba[:3] = np.moveaxis(np.round(np.nan_to_num(rgb) * 255.0), -1, 0).astype(np.uint8)
    rgba[3] = np.where(valid, 255, 0)
    rgba[:3, ~valid] = 0

    # Target grid: the DEM's footprint in Web Mercator, about as many cells as were read.
    dst_crs = "EPSG:3857"
    src_box = (
        min(transform.c, transform.c + w * transform.a),
        transform.f + h * transform.e,
        max(transform.c, transform.c + w * transform.a),
        transform.f,
    )
    L, B, R, T = transform_bounds(crs, dst_crs, *src_box, densify_pts=21)
    aspect = (R - L) / (T - B)
    dst_w = max(2, int(round(math.sqrt(w * h * aspect))))
    dst_h = max(2, int(round(w * h / dst_w)))
    dst_t = Affine((R - L) / dst_w, 0.0, L, 0.0, -(T - B) / dst_h, T)
    out = np.zeros((4, dst_h, dst_w), dtype=np.uint8)
    reproject(
        source=rgba,
        destination=out,
        src_transform=transform,
        src_crs=crs,
        dst_transform=dst_t,
        dst_crs=dst_crs,
        resampling=Resampling.bilinear,
    )
    to_ll = Transformer.from_crs(dst_crs, "EPSG:4326", always_xy=True)
    west, north = to_ll.transform(dst_t.c, dst_t.f)
    east, south = to_ll.transform(dst_t.c + dst_w * dst_t.a, dst_t.f + dst_h * dst_t.e)

    img = Image.fromarray(np.ascontiguousarray(np.moveaxis(out, 0, -1)), "RGBA")
    if palette_colours:
        img = img.quantize(colors=int(palette_colours), method=Image.Quantize.FASTOCTREE)
    buf = io.BytesIO()
    img.save(buf, format="PNG", optimize=False, compress_level=9 if palette_colours else 6)
    return Hillshade(buf.getvalue(), float(south), float(west), float(north), float(east))
