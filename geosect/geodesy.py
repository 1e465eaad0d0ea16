"""Grid against ground: how the working projection stretches the survey line.

Chainage is measured in the projected working CRS (grid metres).  Distances on
the ground differ by the projection's point scale factor (a few parts in 10^4
in a UTM zone) and, at height, by the elevation factor.  This module reports
those differences for the QC report and computes geodesic offsets on the
ellipsoid.  It is the only geometry module that uses pyproj.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pyproj

from .errors import CRSError, LineError
from .line import SurveyLine

__all__ = ["grid_vs_ground", "geodesic_offset"]


def _projected_crs(crs: Any) -> pyproj.CRS:
    try:
        c = pyproj.CRS.from_user_input(crs)
    except pyproj.exceptions.CRSError as exc:
        raise CRSError(f"cannot read the coordinate reference system {crs!r} ({exc}).",
                       fix="give an EPSG code such as 'EPSG:32633', or a WKT or PROJ string") from exc
    if not c.is_projected:
        raise CRSError(f"the CRS {c.name!r} is not projected, so grid lengths have no meaning in it.",
                       fix="use a projected working CRS in metres, for example the UTM zone of the survey")
    return c


def grid_vs_ground(line: SurveyLine, crs: Any, *, step_m: float = 1000.0, height_m: float = 0.0) -> dict:
    """Compare the line's grid length with its length on the ellipsoid.

    The line is densified (its vertices plus a point every ``step_m``), each
    point is transformed to the CRS's geographic CRS, and the ellipsoidal
    length is the sum of the geodesic distances between neighbours
    (``pyproj.Geod.line_lengths`` on the CRS's ellipsoid).  Point scale factors
    come from ``pyproj.Proj(crs).get_factors`` at the same points.

    Parameters
    ----------
    line : SurveyLine
        In metres of ``crs``.
    crs : anything ``pyproj.CRS.from_user_input`` reads
        The projected working CRS.
    step_m : float
        Densification step along the line, metres.
    height_m : float
        Mean height of the line above the ellipsoid, metres: the ground length is
        the ellipsoidal length times ``(R + h) / R`` with R the Gaussian mean
        radius of curvature at the line's mean latitude (the elevation factor of
        survey practice; common practice, no source).  0 compares with the
        ellipsoid itself.

    Returns
    -------
    dict
        ``grid_length_m``, ``ellipsoid_length_m``, ``ground_length_m`` (at
        ``height_m``), ``relative_difference`` ((grid - ground) / ground),
        ``scale_factor_min``, ``scale_factor_max`` (smallest and largest point
        scale along the line, over the meridian and parallel scales),
        ``chainage_of_max_m``, ``n_points``.
    """
    if not isinstance(line, SurveyLine):
        raise LineError(f"grid_vs_ground needs a SurveyLine, got {type(line).__name__}.",
                        fix="build the line with SurveyLine(easting, northing)")
    if not (math.isfinite(step_m) and step_m > 0):
        raise LineError(f"step_m must be a positive number of metres, got {step_m!r}.", fix="use e.g. 1000")
    c = _projected_crs(crs)
    s = np.union1d(line.vertex_chainage, np.arange(0.0, line.length, step_m))
    s = np.append(s[s < line.length], line.length)
    e, n = line.position(s)
    to_geo = pyproj.Transformer.from_crs(c, c.geodetic_crs, always_xy=True)
    lon, lat = to_geo.transform(e, n)
    if not (np.all(np.isfinite(lon)) and np.all(np.isfinite(lat))):
        raise CRSError(f"part of line '{line.name}' lies outside the area where {c.name!r} can be inverted.",
                       fix="check that the line's coordinates are in the working CRS (easting, northing in metres)")
    geod = c.get_geod()
    ell = float(np.sum(geod.line_lengths(lon, lat)))
    a = geod.a
    e2 = geod.es
    phi = math.radians(float(np.mean(lat)))
    w = math.sqrt(1.0 - e2 * math.sin(phi) ** 2)
    radius = a * math.sqrt(1.0 - e2) / (w * w)  # sqrt(M N), Gaussian mean radius
    ground = ell * (radius + height_m) / radius
    f = pyproj.Proj(c).get_factors(lon, lat)
    h = np.asarray(f.meridional_scale, dtype=float)
    k = np.asarray(f.parallel_scale, dtype=float)
    kmax = np.maximum(h, k)
    kmin = np.minimum(h, k)
    grid = line.length
    return {
        "grid_length_m": grid,
        "ellipsoid_length_m": ell,
        "ground_length_m": ground,
        "relative_difference": (grid - ground) / ground,
        "scale_factor_min": float(kmin.min()),
        "scale_factor_max": float(kmax.max()),
        "chainage_of_max_m": float(s[int(np.argmax(kmax))]),
        "n_points": int(s.size),
    }


def geodesic_offset(lon1: Any, lat1: Any, lon2: Any, lat2: Any, *, ellps: str = "WGS84",
                    geod: pyproj.Geod | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Geodesic distance and forward azimuth between pairs of points.

    Parameters
    ----------
    lon1, lat1, lon2, lat2 : array_like
        Degrees (broadcast together).
    ellps : str
        Ellipsoid name known to PROJ (``"WGS84"``, ``"GRS80"``, ...), used unless
        ``geod`` is given.
    geod : pyproj.Geod, optional
        A ready ellipsoid, e.g. ``CRS.get_geod()``.

    Returns
    -------
    distance_m : ndarray
        Geodesic distance on the ellipsoid, metres (pyproj.Geod.inv, Karney's
        algorithm).
    azimuth_deg : ndarray
        Forward azimuth at the first point, degrees clockwise from north in
        [0, 360).  NaN where an input is non-finite or a latitude is beyond ±90.

    Examples
    --------
    >>> d, az = geodesic_offset(0.0, 0.0, 1.0, 0.0)
    >>> round(float(d), 3), float(az)
    (111319.491, 90.0)
    """
    g = geod if geod is not None else pyproj.Geod(ellps=ellps)
    a, b, c, d = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in (lon1, lat1, lon2, lat2)))
    shape = a.shape
    a, b, c, d = (np.ascontiguousarray(v.ravel()) for v in (a, b, c, d))
    ok = np.isfinite(a) & np.isfinite(b) & np.isfinite(c) & np.isfinite(d) & (np.abs(b) <= 90) & (np.abs(d) <= 90)
    dist = np.full(a.size, np.nan)
    az = np.full(a.size, np.nan)
    if ok.any():
        az1, _, s12 = g.inv(a[ok], b[ok], c[ok], d[ok])
        dist[ok] = s12
        az[ok] = np.mod(az1, 360.0)
    return dist.reshape(shape), az.reshape(shape)
