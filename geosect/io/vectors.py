"""Readers for lines and polygons: the section line file, geology polygons, fault traces."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
from pyproj import CRS

from ..crs import parse_crs, transform
from ..errors import InputError
from .points import _numbers, _pick_column, read_frame

__all__ = ["read_line_vertices", "read_vector"]


def _file_crs(df, stated: str | None, path: Path, section: str) -> CRS:
    if df.crs is None and stated is None:
        raise InputError("the file has no coordinate reference system and none is stated", file=path,
                         key=f"{section}.coordinates_crs",
                         fix=f'state it in the project file: [{section}] coordinates_crs = "EPSG:4326" '
                         "(or the file's real CRS).")
    return CRS.from_user_input(df.crs) if df.crs is not None else parse_crs(stated, file=str(path),
                                                                         key=f"{section}.coordinates_crs")


def read_line_vertices(path: Path, *, layer: str | None, coordinates_crs: str | None, columns: dict,
                       working: CRS, section: str = "line") -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Vertices of a line file in the working CRS and in lon/lat.

    A vector file must hold one line (several parts are joined when they connect end
    to end); a table lists the vertices in order (x and y columns).

    Returns ``easting, northing, lon, lat``.
    """
    path = Path(path)
    df = read_frame(path, layer=layer, key=f"{section}.file")
    if "geometry" in getattr(df, "columns", []) and hasattr(df, "crs"):
        import shapely

        crs = _file_crs(df, coordinates_crs, path, section)
        geoms = [g for g in df.geometry if g is not None and not g.is_empty]
        lines = [g for g in geoms if g.geom_type in ("LineString", "MultiLineString")]
        if not lines:
            raise InputError("the file holds no line", file=path, key=f"{section}.file",
                             fix="give a file with one LineString feature (the survey line).")
        merged = shapely.line_merge(shapely.union_all(lines)) if len(lines) > 1 or \
            lines[0].geom_type == "MultiLineString" else lines[0]
        if merged.geom_type != "LineString":
            n = len(getattr(merged, "geoms", []))
            raise InputError(f"the file holds {n} separate lines that do not join end to end", file=path,
                             key=f"{section}.file",
                             fix="keep only the survey line in the file, or join its parts into one line.")
        xy = np.asarray(merged.coords)[:, :2]
        x, y = xy[:, 0], xy[:, 1]
    else:
        if coordinates_crs is None:
            raise InputError("a table of line vertices carries no CRS and none is stated", file=path,
                             key=f"{section}.coordinates_crs",
                             fix=f'state [{section}] coordinates_crs = "EPSG:4326" (or the projected CRS).')
        crs = parse_crs(coordinates_crs, file=str(path), key=f"{section}.coordinates_crs")
        xc = _pick_column(df.columns, "x", columns, path, section, True)
        yc = _pick_column(df.columns, "y", columns, path, section, True)
        x, bx = _numbers(df[xc])
        y, by = _numbers(df[yc])
        bad = np.flatnonzero(bx | by | ~np.isfinite(x) | ~np.isfinite(y))
        if bad.size:
            raise InputError("a line vertex has no valid coordinates", file=path, row=int(bad[0]) + 1,
                             fix="every vertex of the line needs both coordinates.")
    e, n = transform(crs, working, x, y)
    lon, lat = transform(crs, CRS.from_epsg(4326), x, y)
    if not (np.isfinite(e).all() and np.isfinite(n).all()):
        raise InputError("some line vertices cannot be transformed into the working CRS", file=path,
                         key=f"{section}.file", fix="check the line's CRS and coordinates.")
    return e, n, lon, lat


def read_vector(spec, section: str, working: CRS, *, roles: tuple[str, ...]):
    """Read geology polygons or fault traces into the working CRS.

    Returns a GeoDataFrame with the mapped roles as columns (``unit``, ``age``, ... or
    ``name``, ``strike``, ``dip``), ``status`` and ``flags``; numeric roles
    (strike, dip) become floats with NaN where missing.
    """
    import geopandas as gpd

    path = Path(spec.file)
    df = read_frame(path, layer=spec.layer, key=f"{section}.file")
    if "geometry" not in getattr(df, "columns", []):
        raise InputError("not a vector file (no geometry)", file=path, key=f"{section}.file",
                         fix="give a GeoPackage, Shapefile, GeoJSON or KML file.")
    crs = _file_crs(df, spec.coordinates_crs, path, section)
    gdf = gpd.GeoDataFrame(df, geometry="geometry", crs=crs).to_crs(working)
    out = gpd.GeoDataFrame({"row": np.arange(1, len(gdf) + 1)}, geometry=gdf.geometry.values, crs=working)
    status = np.array(["ok"] * len(gdf), dtype=object)
    empty = gdf.geometry.isna().to_numpy() | gdf.geometry.is_empty.to_numpy()
    status[empty] = "bad_geometry"
    invalid = ~empty & ~gdf.geometry.is_valid.to_numpy()
    flags = np.where(invalid, "invalid_geometry", "").astype(object)
    attrs = pd.DataFrame(gdf.drop(columns="geometry"))
    numeric = {"strike", "dip"}
    for role in roles:
        col = _pick_column(list(attrs.columns), role, spec.columns, path, section, False)
        if col is None:
            out[role] = np.nan if role in numeric else ""
            continue
        if role in numeric:
            vals, bad = _numbers(attrs[col].astype(str).replace({"None": "", "nan": ""}))
            out[role] = vals
            flags = np.where(bad, np.where(flags == "", f"bad_{role}", flags + f";bad_{role}"), flags)
        else:
            out[role] = attrs[col].astype(str).replace({"None": "", "nan": ""}).to_numpy(dtype=object)
    out["status"] = status
    out["flags"] = flags
    return out
