"""Stages: build the section line; place stations and shots on it with their DEM heights."""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..errors import InputError
from ..io.tables import write_csv
from ..io.dem import sample_dem
from ..io.points import add_flag
from ..pipeline import Context, register

__all__ = ["build_line", "place_points", "POINT_COLUMNS"]

POINT_COLUMNS = ["id", "easting", "northing", "lon", "lat", "elevation_m", "dem_elevation_m", "chainage_m",
                 "crossline_m", "status", "flags"]


@register("line", "building the section line", needs=("crs",), provides=("line",), in_check=True)
def build_line(ctx: Context) -> None:
    from ..line import SurveyLine

    s = ctx.settings.line
    method = s.method
    if method == "file":
        e, n = ctx.artefacts["line_vertices"]
        line = SurveyLine(e, n, name="section")
        how = f"from the file {ctx.settings.line.file.name}"
    else:
        st = ctx.artefacts.get("stations")
        if st is None:
            raise InputError("the line is built from the stations, but no stations were read",
                             file=ctx.settings.source, key="line.method", fix="add a [stations] section.")
        ok = st["status"].to_numpy() == "ok"
        e, n = st.loc[ok, "easting"].to_numpy(), st.loc[ok, "northing"].to_numpy()
        if ok.sum() < 2:
            raise InputError("fewer than two usable stations to build the line from", file=ctx.settings.source,
                             key="line.method", fix="check the stations file, or give a line file.")
        if method == "fit":
            line = SurveyLine.fit(e, n)
            how = f"straight best fit (orthogonal regression) through {ok.sum()} stations"
        else:
            line = SurveyLine.smoothed(e, n, smoothing_m=s.smoothing_km * 1e3, spacing_m=s.spacing_km * 1e3)
            how = (f"smoothed through {ok.sum()} stations in file order (smoothing {s.smoothing_km:g} km, "
                   f"vertices every {s.spacing_km:g} km)")
    line = line.oriented(s.direction)
    ctx.artefacts["line"] = line
    sec = ctx.report.section("Section line")
    ch, ang = line.bends(s.bend_threshold_deg)
    sec.kv({"made": how, "direction": s.direction, "length": f"{line.length / 1e3:.3f} km (grid distance)",
            "vertices": len(line.vertices[0]),
            f"bends sharper than {s.bend_threshold_deg:g}°": len(ch)})
    if len(ch):
        sec.table(["chainage (km)", "turn (°, + = right)"], [(f"{c / 1e3:.2f}", f"{a:+.1f}") for c, a in zip(ch, ang)])
    from ..geodesy import grid_vs_ground

    gg = grid_vs_ground(line, ctx.artefacts["crs"].crs)
    ctx.artefacts["grid_vs_ground"] = gg
    sec.kv({"length on the ellipsoid (geodesic)": f"{gg['ellipsoid_length_m'] / 1e3:.3f} km",
            "grid − ellipsoid": f"{gg['grid_length_m'] - gg['ellipsoid_length_m']:+.1f} m "
                                f"({(gg['grid_length_m'] / gg['ellipsoid_length_m'] - 1) * 1e6:+.0f} ppm)",
            "point scale factor along the line": f"{gg['scale_factor_min']:.6f} to {gg['scale_factor_max']:.6f} "
                                                 f"(largest at chainage {gg['chainage_of_max_m'] / 1e3:.1f} km)"})


def _dem_heights(ctx: Context, f: pd.DataFrame) -> tuple[np.ndarray, np.ndarray]:
    dem = ctx.artefacts.get("dem")
    n = len(f)
    if dem is None:
        return np.full(n, np.nan), np.full(n, "", dtype=object)
    return sample_dem(dem.path, f["easting"].to_numpy(), f["northing"].to_numpy(), ctx.artefacts["crs"].crs,
                      band=ctx.settings.dem.band)


def _place(ctx: Context, name: str) -> pd.DataFrame:
    s = ctx.settings
    line = ctx.artefacts["line"]
    f = ctx.artefacts[name].copy()
    placed = line.place(f["easting"].to_numpy(), f["northing"].to_numpy(), far_off_line_m=s.line.far_off_line_km * 1e3,
                        ambiguity_m=s.line.ambiguity_m)
    f["chainage_m"] = placed["chainage_m"].to_numpy()
    f["crossline_m"] = placed["crossline_m"].to_numpy()
    cur = f["flags"].astype(str).to_numpy(dtype=object)
    new = placed["flags"].astype(str).to_numpy(dtype=object)
    flags = pd.Series(np.where(cur == "", new, np.where(new == "", cur, cur + ";" + new)), index=f.index)
    z, why = _dem_heights(ctx, f)
    usable = f["status"].to_numpy() == "ok"
    f["dem_elevation_m"] = np.where(usable, z, np.nan)
    flags = add_flag(flags, usable & (why == "outside_dem"), "outside_dem")
    flags = add_flag(flags, usable & (why == "dem_nodata"), "dem_nodata")
    f["flags"] = flags.to_numpy(dtype=object)
    unusable = ~usable
    f.loc[unusable, ["chainage_m", "crossline_m"]] = np.nan
    return f


def _write_points(ctx: Context, f: pd.DataFrame, filename: str) -> None:
    extra = [c for c in f.columns if c not in POINT_COLUMNS and c not in ("x_src", "y_src")]
    cols = POINT_COLUMNS + extra
    write_csv(ctx.output(filename), f[cols])


def _height_qc(ctx: Context, name: str, f: pd.DataFrame) -> None:
    s = ctx.settings
    sec = ctx.report.section(f"Placed {name}")
    ok = f["status"] == "ok"
    flags = f["flags"].astype(str)
    sec.kv({
        "usable": f"{int(ok.sum())} of {len(f)}",
        "chainage range": (f"{np.nanmin(f.loc[ok, 'chainage_m']) / 1e3:.2f} to "
                           f"{np.nanmax(f.loc[ok, 'chainage_m']) / 1e3:.2f} km") if ok.any() else "-",
        "largest |crossline|": f"{np.nanmax(np.abs(f.loc[ok, 'crossline_m'])) / 1e3:.2f} km" if ok.any() else "-",
        "beyond the line ends": int(flags.str.contains("beyond_line_end").sum()),
        f"farther than {s.line.far_off_line_km:g} km from the line": int(flags.str.contains("far_off_line").sum()),
        "ambiguous nearest point (inside of a sharp bend)": int(flags.str.contains("ambiguous_foot").sum()),
        "outside the DEM or on nodata": int(flags.str.contains("outside_dem|dem_nodata").sum()),
    })
    spec = getattr(s, name)
    if s.dem is None:
        sec.text("No DEM: surveyed elevations are not checked.")
        return
    ref_pts, ref_dem = spec.height_reference, s.dem.height_reference
    both = ok & np.isfinite(f["elevation_m"]) & np.isfinite(f["dem_elevation_m"])
    if ref_pts is None or not both.any():
        sec.text("Surveyed elevations not compared with the DEM (no surveyed elevations).")
    elif ref_pts != ref_dem:
        sec.text(f"Surveyed elevations (above the {ref_pts}) and DEM heights (above the {ref_dem}) have different "
                 "height references: not compared. Convert one of them with a geoid model first.")
    else:
        d = (f.loc[both, "elevation_m"] - f.loc[both, "dem_elevation_m"]).to_numpy()
        worst = f.loc[both].iloc[int(np.argmax(np.abs(d)))]
        sec.text(f"Surveyed minus DEM elevation (both above the {ref_pts}), {both.sum()} points: median "
                 f"{np.median(d):+.1f} m, RMS {np.sqrt(np.mean(d ** 2)):.1f} m, largest {d[np.argmax(np.abs(d))]:+.1f} m "
                 f"at {worst['id']}.")


@register("place", "placing stations and shots", needs=("line",), provides=("placed_stations", "placed_shots"),
          in_check=True)
def place_points(ctx: Context) -> None:
    for name in ("stations", "shots"):
        if ctx.artefacts.get(name) is None:
            continue
        f = _place(ctx, name)
        ctx.artefacts[f"placed_{name}"] = f
        _height_qc(ctx, name, f)


@register("write_points", "writing stations.csv and shots.csv", needs=("line",))
def write_points(ctx: Context) -> None:
    for name in ("stations", "shots"):
        f = ctx.artefacts.get(f"placed_{name}")
        if f is not None:
            _write_points(ctx, f, f"{name}.csv")
