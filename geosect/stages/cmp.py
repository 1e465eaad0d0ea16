"""Stage: CMP binning of the source–receiver midpoints along the binning line."""

from __future__ import annotations

import geopandas as gpd
import numpy as np
import pandas as pd

from ..io.tables import write_csv
from ..pipeline import Context, register

__all__ = ["cmp_binning", "pairs_within"]


def pairs_within(shots: pd.DataFrame, stations: pd.DataFrame, max_offset_m: float | None,
                 chunk_pairs: int = 2_000_000) -> tuple[np.ndarray, np.ndarray]:
    """Index arrays of the (usable shot, usable station) pairs whose map distance is at most ``max_offset_m``.

    Works through the shots in groups so that no more than ``chunk_pairs`` distances exist at once.
    """
    se, sn = shots["easting"].to_numpy(), shots["northing"].to_numpy()
    re, rn = stations["easting"].to_numpy(), stations["northing"].to_numpy()
    per = max(1, chunk_pairs // max(len(re), 1))
    out_s, out_r = [], []
    for a in range(0, len(se), per):  # a loop over groups of shots
        b = min(a + per, len(se))
        d = np.hypot(se[a:b, None] - re[None, :], sn[a:b, None] - rn[None, :])
        keep = np.ones_like(d, bool) if max_offset_m is None else d <= max_offset_m
        i, j = np.nonzero(keep)
        out_s.append(i + a)
        out_r.append(j)
    if not out_s:
        return np.zeros(0, np.int64), np.zeros(0, np.int64)
    return np.concatenate(out_s), np.concatenate(out_r)


@register("bins", "CMP binning along the binning line", needs=("placed_stations", "placed_shots"),
          provides=("bins", "binning_line"))
def cmp_binning(ctx: Context) -> None:
    from ..binning import BinGrid, bin_pairs, binning_line

    s = ctx.settings.binning
    line = ctx.artefacts["line"]
    shots = ctx.artefacts["placed_shots"]
    stations = ctx.artefacts["placed_stations"]
    shots = shots[shots["status"] == "ok"].reset_index(drop=True)
    stations = stations[stations["status"] == "ok"].reset_index(drop=True)
    max_off = None if s.max_offset_km is None else s.max_offset_km * 1e3
    si, ri = pairs_within(shots, stations, max_off)
    sec = ctx.report.section("CMP binning")
    if si.size == 0:
        sec.text("No source–receiver pair within the binning offset: no bins.")
        return
    se, sn = shots["easting"].to_numpy()[si], shots["northing"].to_numpy()[si]
    re, rn = stations["easting"].to_numpy()[ri], stations["northing"].to_numpy()[ri]
    if s.line == "smooth":
        me, mn = 0.5 * (se + re), 0.5 * (sn + rn)
        bline = binning_line(me, mn, line, smoothing_m=s.smoothing_km * 1e3, spacing_m=s.spacing_m)
        how = f"smoothed through the midpoint cloud (smoothing {s.smoothing_km:g} km, vertices every {s.spacing_m:g} m)"
    else:
        bline = line
        how = "the section line"
    grid = BinGrid(bline, s.bin_m)
    res = bin_pairs(grid, se, sn, re, rn)
    ctx.artefacts["binning_line"] = bline
    bins = res.bins_frame()
    used = bins[bins["fold"] > 0]
    polys = grid.polygons(s.half_width_m)
    gdf = gpd.GeoDataFrame(bins, geometry=polys, crs=ctx.artefacts["crs"].crs)
    gdf = gdf[gdf["fold"] > 0].reset_index(drop=True)
    ctx.artefacts["bins"] = gdf
    pairs = res.pairs_frame()
    pairs.insert(0, "shot_id", shots["id"].to_numpy()[si])
    pairs.insert(1, "station_id", stations["id"].to_numpy()[ri])
    ctx.artefacts["bin_pairs"] = pairs
    write_csv(ctx.output("bins.csv"), used)
    sec.kv({
        "binning line": how,
        "binning line length": f"{bline.length / 1e3:.2f} km",
        "pairs binned": f"{int((pairs['bin'] >= 0).sum())} of {len(pairs)}"
                        + (f" (pairs up to {s.max_offset_km:g} km map distance)" if max_off else " (all pairs)"),
        "bin length": f"{s.bin_m:g} m",
        "bins with data": f"{len(used)} (chainage {used['start_chainage_m'].min() / 1e3:.2f} to "
                          f"{used['end_chainage_m'].max() / 1e3:.2f} km)" if len(used) else "0",
        "fold": f"median {int(np.median(used['fold']))}, largest {int(used['fold'].max())}" if len(used) else "-",
        "crossline scatter of midpoints": (f"largest per-bin standard deviation {np.nanmax(used['crossline_std_m']):.0f} m, "
                                           f"largest |crossline| {np.nanmax(used['crossline_max_abs_m']):.0f} m")
        if len(used) else "-",
    })
    if res.n_outside:
        sec.text(f"{res.n_outside} midpoints fall beyond the ends of the binning line and have no bin "
                 "(flag outside_bins in the pairs table).")
