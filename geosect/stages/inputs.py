"""Stage: read and validate the inputs, choose the working CRS."""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..crs import choose_working_crs, from_lonlat
from ..io.dem import dem_info
from ..io.points import read_points
from ..io.vectors import read_line_vertices, read_vector
from ..pipeline import Context, register
from ..report import md_escape

__all__ = ["read_inputs"]


def _extent(df: pd.DataFrame, e: str = "easting", n: str = "northing") -> str:
    ok = np.isfinite(df[e]) & np.isfinite(df[n])
    if not ok.any():
        return "no valid points"
    return (f"E {df.loc[ok, e].min():.0f} to {df.loc[ok, e].max():.0f} m, "
            f"N {df.loc[ok, n].min():.0f} to {df.loc[ok, n].max():.0f} m")


def _qc_points(ctx: Context, title: str, table, frame: pd.DataFrame, height_ref: str | None) -> None:
    sec = ctx.report.section(f"Input: {title}")
    total = len(frame)
    usable = int((frame["status"] == "ok").sum())
    sec.kv({"file": md_escape(table.source.name), "rows": total, "usable": usable,
            "file CRS": md_escape(table.crs.name), "heights": height_ref or "none given",
            "extent (working CRS)": _extent(frame)})
    sec.counts("status", frame["status"].value_counts().to_dict())
    sec.counts("flag", table.flag_counts())
    bad = frame[(frame["status"] != "ok") | (frame["flags"] != "")]
    if len(bad):
        sec.text(f"Rows with a status or flag ({len(bad)}):")
        sec.table(["row", "id", "status", "flags"],
                  bad[["row", "id", "status", "flags"]].head(50).itertuples(index=False))
        if len(bad) > 50:
            sec.text(f"... and {len(bad) - 50} more (see the output tables).")


@register("inputs", "reading inputs", needs=(), provides=("crs", "stations", "shots", "hypocentres", "geology",
                                                         "faults", "dem", "line_vertices"), in_check=True)
def read_inputs(ctx: Context) -> None:
    s = ctx.settings
    tables = {}
    if s.stations is not None:
        tables["stations"] = read_points(s.stations, "stations", extras=("kind", "time"))
    if s.shots is not None:
        tables["shots"] = read_points(s.shots, "shots")
    hyp = None
    if s.hypocentres is not None:
        hyp = read_points(s.hypocentres, "hypocentres", extras=("depth_km", "magnitude", "time"),
                          numeric_extras=("depth_km", "magnitude"), flag_generated_ids=False)

    # the working CRS: from the project file, or the UTM zone of the data
    usable = {k: t.frame["status"].to_numpy() == "ok" for k, t in tables.items()}
    lons = [t.frame["lon"].to_numpy()[usable[k]] for k, t in tables.items()]
    lats = [t.frame["lat"].to_numpy()[usable[k]] for k, t in tables.items()]
    line_lonlat = None
    if s.line.method == "file" and s.line.file is not None:
        from pyproj import CRS

        _, _, llon, llat = read_line_vertices(s.line.file, layer=s.line.layer, coordinates_crs=s.line.coordinates_crs,
                                              columns=s.line.columns, working=CRS.from_epsg(4326))
        line_lonlat = (llon, llat)
        lons.append(llon)  # the line takes part in choosing the UTM zone
        lats.append(llat)
    working = choose_working_crs(s.project.crs, np.concatenate(lons) if lons else None,
                                 np.concatenate(lats) if lats else None, file=str(s.source))
    ctx.artefacts["crs"] = working
    sec = ctx.report.section("Working CRS")
    sec.kv({"CRS": f"{working.name} ({working.code})", "why": working.reason})

    for name, table in tables.items():
        f = table.frame.copy()
        e, n = from_lonlat(working.crs, f["lon"].to_numpy(), f["lat"].to_numpy())
        f.insert(2, "easting", e)
        f.insert(3, "northing", n)
        ctx.artefacts[name] = f
        ctx.artefacts[f"{name}_table"] = table
        _qc_points(ctx, name, table, f, getattr(getattr(s, name), "height_reference", None))
    if hyp is not None:
        f = hyp.frame.copy()
        e, n = from_lonlat(working.crs, f["lon"].to_numpy(), f["lat"].to_numpy())
        f.insert(2, "easting", e)
        f.insert(3, "northing", n)
        bad_depth = ~np.isfinite(f["depth_km"].to_numpy())
        f.loc[bad_depth & (f["status"] == "ok"), "status"] = "no_depth"
        ctx.artefacts["hypocentres"] = f
        _qc_points(ctx, "hypocentres", hyp, f, f"depths below the {s.hypocentres.depth_reference}")

    if line_lonlat is not None:
        ctx.artefacts["line_vertices"] = from_lonlat(working.crs, *line_lonlat)
    if s.geology is not None:
        g = read_vector(s.geology, "geology", working.crs, roles=("unit", "age", "color", "lithology"))
        ctx.artefacts["geology"] = g
        sec = ctx.report.section("Input: geology")
        sec.kv({"file": md_escape(s.geology.file.name), "polygons": len(g),
                "units": ", ".join(md_escape(u) for u in sorted(set(g["unit"])) if u)})
        sec.counts("status", g["status"].value_counts().to_dict())
    if s.faults is not None:
        fl = read_vector(s.faults, "faults", working.crs, roles=("name", "strike", "dip"))
        ctx.artefacts["faults"] = fl
        sec = ctx.report.section("Input: faults")
        sec.kv({"file": md_escape(s.faults.file.name), "traces": len(fl),
                "with strike and dip": int((np.isfinite(fl["strike"]) & np.isfinite(fl["dip"])).sum())})
    if s.dem is not None:
        info = dem_info(s.dem.file, s.dem.band)
        ctx.artefacts["dem"] = info
        sec = ctx.report.section("Input: DEM")
        sec.kv({"file": md_escape(info.path.name), "CRS": info.crs.name, "size": f"{info.width} x {info.height} cells",
                "cell": f"{abs(info.cell_x):g} x {abs(info.cell_y):g} (DEM units)",
                "heights": f"above the {s.dem.height_reference}",
                "blocks": f"{info.block_shape[0]} x {info.block_shape[1]}"})
