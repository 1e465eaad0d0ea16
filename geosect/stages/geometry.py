"""Stage: assemble ``geometry.gpkg`` from what the build produced, replacing the old file whole."""

from __future__ import annotations

import geopandas as gpd
import numpy as np
import pandas as pd
from shapely import LineString, points

from ..io.atomic import atomic_path
from ..pipeline import Context, register

__all__ = ["write_geometry"]

LAYERS = ("line", "stations", "shots", "midpoints", "reflection_points", "bins")


def _points(df: pd.DataFrame, e: str, n: str, crs) -> gpd.GeoDataFrame:
    ex, nx = df[e].to_numpy(float), df[n].to_numpy(float)
    geom = points(np.column_stack([ex, nx]))
    bad = ~(np.isfinite(ex) & np.isfinite(nx))
    geom = np.where(bad, None, geom)  # rows without coordinates keep their place, with no geometry
    return gpd.GeoDataFrame(df.reset_index(drop=True), geometry=list(geom), crs=crs)


def geometry_layers(ctx: Context) -> dict[str, gpd.GeoDataFrame]:
    crs = ctx.artefacts["crs"].crs
    line = ctx.artefacts["line"]
    out: dict[str, gpd.GeoDataFrame] = {}
    e, n = line.vertices
    lines = [{"name": "section", "length_m": line.length}]
    geoms = [LineString(np.column_stack([e, n]))]
    bl = ctx.artefacts.get("binning_line")
    if bl is not None and bl is not line:
        be, bn = bl.vertices
        lines.append({"name": "binning", "length_m": bl.length})
        geoms.append(LineString(np.column_stack([be, bn])))
    out["line"] = gpd.GeoDataFrame(lines, geometry=geoms, crs=crs)
    for name in ("stations", "shots"):
        f = ctx.artefacts.get(f"placed_{name}")
        if f is not None:
            out[name] = _points(f.drop(columns=[c for c in ("x_src", "y_src") if c in f.columns]),
                                "easting", "northing", crs)
    mp = ctx.artefacts.get("midpoints")
    if mp is not None and len(mp):
        out["midpoints"] = _points(mp, "midpoint_easting", "midpoint_northing", crs)
    rp = ctx.artefacts.get("reflection_points")
    if rp is not None and len(rp):
        out["reflection_points"] = _points(rp, "point_easting", "point_northing", crs)
    bins = ctx.artefacts.get("bins")
    if bins is not None and len(bins):
        out["bins"] = bins
    return out


@register("geometry", "writing geometry.gpkg", needs=("line",))
def write_geometry(ctx: Context) -> None:
    layers = geometry_layers(ctx)
    target = ctx.output("geometry.gpkg")
    with atomic_path(target) as tmp:
        for name, gdf in layers.items():
            gdf.to_file(tmp, layer=name, driver="GPKG")
    sec = ctx.report.section("Outputs")
    sec.text("geometry.gpkg layers: " + ", ".join(f"{k} ({len(v)})" for k, v in layers.items()) + ".")
    missing = [k for k in LAYERS if k not in layers]
    if missing:
        sec.text("Not written (no data from this build): " + ", ".join(missing) + ".")
