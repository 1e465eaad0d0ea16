"""Stage: the linked map and section page ``map.html``."""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..crs import to_lonlat
from ..pipeline import Context, register

__all__ = ["write_map_page", "map_data"]


def _lonlat_frame(ctx: Context, f: pd.DataFrame, e: str, n: str) -> pd.DataFrame:
    lon, lat = to_lonlat(ctx.artefacts["crs"].crs, f[e].to_numpy(float), f[n].to_numpy(float))
    out = f.copy()
    out["lon"], out["lat"] = lon, lat
    return out


def _points(ctx: Context, name: str) -> pd.DataFrame | None:
    f = ctx.artefacts.get(f"placed_{name}")
    if f is None:
        return None
    elev = f["elevation_m"].where(np.isfinite(f["elevation_m"]), f["dem_elevation_m"])
    out = pd.DataFrame({"id": f["id"], "lon": f["lon"], "lat": f["lat"], "chainage_m": f["chainage_m"],
                        "crossline_m": f["crossline_m"], "elevation_m": elev, "status": f["status"],
                        "flags": f["flags"], "kind": f["kind"] if "kind" in f else ""})
    return out[np.isfinite(out["lon"]) & np.isfinite(out["lat"])].reset_index(drop=True)


def map_data(ctx: Context):
    from ..web.page import MapData
    from ..web.svg import SectionPanel

    s = ctx.settings
    crs = ctx.artefacts["crs"].crs
    line = ctx.artefacts["line"]
    ch, e, n = line.resample(max(line.length / 4000.0, 25.0))
    lon, lat = to_lonlat(crs, e, n)
    line_df = pd.DataFrame({"lon": lon, "lat": lat, "chainage_m": ch})
    mp = ctx.artefacts.get("midpoints")
    if mp is None:
        mp = ctx.artefacts.get("bin_pairs")
    midpoints = None
    if mp is not None and len(mp):
        m = _lonlat_frame(ctx, mp, "midpoint_easting", "midpoint_northing")
        midpoints = pd.DataFrame({"lon": m["lon"], "lat": m["lat"], "chainage_m": m["midpoint_chainage_m"]})
    rp = ctx.artefacts.get("reflection_points")
    refl = None
    if rp is not None and len(rp):
        ok = rp[rp["status"] == "ok"]
        refl = pd.DataFrame({"id": ok["shot_id"].astype(str) + "|" + ok["station_id"].astype(str) + "|" + ok["phase"],
                             "phase": ok["phase"], "lon": ok["point_lon"], "lat": ok["point_lat"],
                             "chainage_m": ok["point_chainage_m"], "depth_m": ok["point_depth_m"]})
    bins = ctx.artefacts.get("bins")
    if bins is not None:
        bins = bins.to_crs(4326)
    swath_m = s.section.swath_km * 1e3
    swath = None
    if swath_m > 0:
        import geopandas as gpd

        swath = gpd.GeoSeries([line.swath(swath_m)], crs=crs).to_crs(4326).iloc[0]
    geology = ctx.artefacts.get("geology")
    if geology is not None:
        geology = geology[geology["status"] == "ok"].to_crs(4326)
        colours = ctx.artefacts.get("geology_colours")
        if colours is None:
            from ..plot.colours import geology_colours

            colours = geology_colours(list(geology["unit"]), list(geology["age"]), list(geology["color"]),
                                      mode=s.section.geology_colours)
        geology = geology.assign(color=geology["unit"].map(colours))
    faults = ctx.artefacts.get("faults")
    if faults is not None:
        faults = faults[faults["status"] == "ok"].to_crs(4326)
    hyp = ctx.artefacts.get("hypocentres")
    hypo = None
    if hyp is not None:
        h = hyp[hyp["status"] == "ok"]
        hypo = pd.DataFrame({"lon": h["lon"], "lat": h["lat"], "depth_m": h["depth_km"] * 1e3,
                             "magnitude": h["magnitude"], "time": h.get("time", "")})
    hill = None
    if ctx.settings.dem is not None:
        from ..web.hillshade import hillshade_overlay

        hill = hillshade_overlay(ctx.settings.dem.file)
    sd = ctx.artefacts.get("section_data")
    panel = None
    if sd is not None:
        panel = SectionPanel(topo_chainage_m=sd.topo_chainage_m, topo_elevation_m=sd.topo_elevation_m,
                             interfaces=[(i.name, i.chainage_m, i.depth_m) for i in sd.interfaces],
                             depth_max_m=None)
    else:
        topo = ctx.artefacts.get("topography")
        if topo is not None:
            panel = SectionPanel(topo_chainage_m=topo["chainage_m"], topo_elevation_m=topo["elevation_m"])
    return MapData(title=s.project.name, line=line_df, tick_km=s.map.chainage_tick_km,
                   stations=_points(ctx, "stations"), shots=_points(ctx, "shots"), midpoints=midpoints,
                   reflection_points=refl, bins=bins, swath=swath, swath_m=swath_m, geology=geology,
                   faults=faults, hypocentres=hypo, hillshade=hill, section=panel)


@register("map", "writing the linked map page", needs=("line",), provides=("map_file",))
def write_map_page(ctx: Context) -> None:
    from ..web.page import write_map

    data = map_data(ctx)
    path = write_map(data, ctx.output("map.html"), max_midpoints=ctx.settings.map.max_midpoints)
    ctx.artefacts["map_file"] = path
    sec = ctx.report.section("Map page")
    size = path.stat().st_size
    sec.kv({"file": path.name, "size": f"{size / 1e6:.2f} MB",
            "offline basemap": "hillshade of the project DEM" if data.hillshade is not None else "none (no DEM)",
            "web tiles": "offered as an optional layer" if ctx.settings.map.web_tiles else "off"})
