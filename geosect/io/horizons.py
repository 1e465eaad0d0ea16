"""Readers for interpreted horizons: chainage–depth and chainage–two-way-time tables, depth grids, map lines.

Each returns plain arrays along the section line: ``chainage_m``, ``depth_m`` (or
``twt_s`` for time tables, converted by the caller with the model), and an optional
``uncertainty_m``.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import InputError
from .points import _numbers, _pick_column, read_frame

__all__ = ["HorizonSamples", "read_horizon_table", "sample_depth_grid", "project_map_lines"]


@dataclass
class HorizonSamples:
    chainage_m: np.ndarray
    depth_m: np.ndarray | None = None
    twt_s: np.ndarray | None = None
    uncertainty_m: np.ndarray | None = None
    n_bad_rows: int = 0


def read_horizon_table(path: Path, kind: str, columns: dict, key: str) -> HorizonSamples:
    """A table of chainage (km) with depth (km) or two-way time (s), and optional uncertainty (km)."""
    df = read_frame(path, key=f"{key}.file")
    if "geometry" in getattr(df, "columns", []):
        raise InputError(f"a '{kind}' horizon must be a table", file=path, key=f"{key}.kind",
                         fix="give a CSV table, or set kind = \"map-lines\" for a vector file.")
    ch_col = _pick_column(list(df.columns), "chainage_km", columns, path, key, True)
    ch, bad_c = _numbers(df[ch_col])
    if kind == "chainage-depth":
        vcol = _pick_column(list(df.columns), "depth_km", columns, path, key, True)
    else:
        vcol = _pick_column(list(df.columns), "twt_s", columns, path, key, True)
    v, bad_v = _numbers(df[vcol])
    ucol = _pick_column(list(df.columns), "uncertainty_km", columns, path, key, False)
    u = _numbers(df[ucol])[0] if ucol else None
    ok = np.isfinite(ch) & np.isfinite(v)
    order = np.argsort(ch[ok], kind="stable")
    out = HorizonSamples(chainage_m=ch[ok][order] * 1e3, n_bad_rows=int((~ok).sum()))
    if kind == "chainage-depth":
        out.depth_m = v[ok][order] * 1e3
    else:
        out.twt_s = v[ok][order]
    if u is not None:
        out.uncertainty_m = u[ok][order] * 1e3
    return out


def sample_depth_grid(path: Path, line, working_crs, *, spacing_m: float = 1000.0, scale_to_m: float = 1e3
                      ) -> HorizonSamples:
    """A depth grid (raster of depth in km by default) sampled along the line, bilinear."""
    from .dem import sample_dem

    ch, e, n = line.resample(spacing_m)
    z, _ = sample_dem(path, e, n, working_crs)
    return HorizonSamples(chainage_m=ch, depth_m=z * scale_to_m)


def project_map_lines(path: Path, layer: str | None, line, working_crs, swath_m: float, columns: dict,
                      key: str) -> HorizonSamples:
    """Vertices of map lines with a depth attribute (km) projected onto the section line within the swath."""
    import geopandas as gpd
    import shapely

    df = read_frame(path, layer=layer, key=f"{key}.file")
    if "geometry" not in getattr(df, "columns", []):
        raise InputError("a 'map-lines' horizon must be a vector file", file=path, key=f"{key}.kind",
                         fix="give a GeoPackage/GeoJSON/Shapefile with lines and a depth_km attribute.")
    if df.crs is None:
        raise InputError("the file has no coordinate reference system", file=path, key=f"{key}.file",
                         fix="write the file with its CRS (GeoPackage and GeoJSON carry one).")
    gdf = gpd.GeoDataFrame(df, geometry="geometry").to_crs(working_crs)
    dcol = _pick_column(list(gdf.columns), "depth_km", columns, path, key, True)
    depth, _ = _numbers(gdf[dcol].astype(str))
    coords, idx = shapely.get_coordinates(gdf.geometry.values, return_index=True)
    ch, xl = line.locate(coords[:, 0], coords[:, 1])
    keep = (np.abs(xl) <= swath_m) & np.isfinite(depth[idx])
    order = np.argsort(ch[keep], kind="stable")
    return HorizonSamples(chainage_m=ch[keep][order], depth_m=depth[idx][keep][order] * 1e3)
