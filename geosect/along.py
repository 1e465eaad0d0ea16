"""Things along the section line: topography, geology intervals, fault crossings, projected points.

Each function takes the :class:`~geosect.line.SurveyLine` and plain data in the
working CRS and returns tables in chainage (metres).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import shapely
from shapely.geometry import LineString

__all__ = ["topography", "cut_polygons", "line_crossings", "project_points", "compass", "line_geometry"]

_COMPASS = ["N", "NNE", "NE", "ENE", "E", "ESE", "SE", "SSE", "S", "SSW", "SW", "WSW", "W", "WNW", "NW", "NNW"]


def compass(azimuth_deg: float) -> str:
    """The 16-point compass name of an azimuth in degrees clockwise from north.

    >>> compass(0.0), compass(22.5), compass(200.0)
    ('N', 'NNE', 'SSW')
    """
    return _COMPASS[int(np.floor(((azimuth_deg % 360) + 11.25) / 22.5)) % 16]


def line_geometry(line) -> LineString:
    e, n = line.vertices
    return LineString(np.column_stack([e, n]))


def topography(line, dem_path, working_crs, *, spacing_m: float | None = None, band: int = 1):
    """DEM heights sampled along the line.

    The spacing defaults to a third of the DEM cell (finer than the cell, so bilinear
    interpolation shows the DEM's shape).  Only the DEM blocks the line touches are
    read (:func:`geosect.io.dem.sample_dem`); a DEM in another CRS is handled by
    transforming the line's samples into it.

    Returns ``chainage_m, easting, northing, elevation_m`` (NaN outside the DEM).
    """
    from .io.dem import dem_info, sample_dem

    info = dem_info(dem_path, band)
    if spacing_m is None:
        cell = info.cell
        if info.crs.is_geographic:  # degrees → metres, roughly
            cell *= 111_000.0
        spacing_m = max(cell / 3.0, 1.0)
    ch, e, n = line.resample(spacing_m)
    z, _ = sample_dem(dem_path, e, n, working_crs, band=band)
    return pd.DataFrame({"chainage_m": ch, "easting": e, "northing": n, "elevation_m": z})


def cut_polygons(line, polygons, columns: list[str]) -> pd.DataFrame:
    """The intervals of chainage where the line runs inside each polygon.

    Parameters
    ----------
    polygons : GeoDataFrame in the working CRS.
    columns : attribute columns to carry (``unit``, ``age``, ``color``...).

    Returns
    -------
    DataFrame ``start_m, end_m`` and the columns, sorted by ``start_m``.
    """
    geom = line_geometry(line)
    rows = []
    valid = polygons[~(polygons.geometry.isna() | polygons.geometry.is_empty)]
    inter = shapely.intersection(shapely.make_valid(valid.geometry.values), geom)
    for k, piece in enumerate(inter):  # a loop over polygons (few), not over samples
        parts = shapely.get_parts(piece)
        parts = [p for p in parts if p.geom_type == "LineString" and p.length > 0]
        for p in parts:
            c = np.asarray(p.coords)
            ch, _ = line.locate(c[[0, -1], 0], c[[0, -1], 1])
            lo, hi = float(np.min(ch)), float(np.max(ch))
            rows.append({"start_m": lo, "end_m": hi, **{c: valid.iloc[k][c] for c in columns}})
    out = pd.DataFrame(rows, columns=["start_m", "end_m", *columns])
    return out.sort_values("start_m").reset_index(drop=True)


def line_crossings(line, traces, columns: list[str]) -> pd.DataFrame:
    """Where fault traces (or other lines) cross the section line.

    Returns ``chainage_m, easting, northing, trace_azimuth_deg`` (grid azimuth of the trace
    at the crossing, 0–180°) and the columns.
    """
    geom = line_geometry(line)
    rows = []
    valid = traces[~(traces.geometry.isna() | traces.geometry.is_empty)]
    inter = shapely.intersection(valid.geometry.values, geom)
    for k, piece in enumerate(inter):  # a loop over traces (few)
        pts = [p for p in shapely.get_parts(piece) if p.geom_type == "Point"]
        trace = valid.geometry.values[k]
        for p in pts:
            ch, _ = line.locate(np.array([p.x]), np.array([p.y]))
            s = trace.project(p)
            a = trace.interpolate(max(s - 50.0, 0.0))
            b = trace.interpolate(min(s + 50.0, trace.length))
            az = float(np.degrees(np.arctan2(b.x - a.x, b.y - a.y)) % 180.0)
            rows.append({"chainage_m": float(ch[0]), "easting": p.x, "northing": p.y, "trace_azimuth_deg": az,
                         **{c: valid.iloc[k][c] for c in columns}})
    out = pd.DataFrame(rows, columns=["chainage_m", "easting", "northing", "trace_azimuth_deg", *columns])
    return out.sort_values("chainage_m").reset_index(drop=True)


def project_points(line, easting, northing, swath_m: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Chainage, crossline distance and an in-swath mask (``|crossline| <= swath_m`` within the line's ends)."""
    ch, xl = line.locate(np.asarray(easting, float), np.asarray(northing, float))
    with np.errstate(invalid="ignore"):
        inside = (np.abs(xl) <= swath_m) & (ch >= 0) & (ch <= line.length)
    return ch, xl, inside
