"""Stages: load the velocity model; travel times and reflection points for every pair and phase (rays.csv).

The rays stage works through groups of whole shots and appends their rows to
``rays.csv`` (a temporary file renamed at the end), so the solvers' working
memory is bounded by one group.  The rows are also kept in memory for the later
stages (coverage, picks, the figure, the map and the GeoPackage), so the whole
build holds O(pairs × phases) rows: about 0.6 kB a row, 0.2 GB for 3×10^5 rows
(benchmarks/bench_pairs.py).  Tables of more than
:data:`~geosect.io.tables.PARQUET_ROWS` rows are also written as Parquet.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..crs import to_lonlat
from ..errors import InputError
from ..io.atomic import atomic_path
from ..io.tables import PARQUET_ROWS, round_for_output
from ..pairs import iter_pair_chunks, pair_geometry, recorded_pairs
from ..pipeline import Context, register
from ..report import md_escape

__all__ = ["load_model", "compute_rays", "RAY_COLUMNS"]

RAY_COLUMNS = ["shot_id", "station_id", "phase", "offset_m", "line_offset_m", "midpoint_chainage_m", "time_s",
               "point_chainage_m", "point_depth_m", "point_easting", "point_northing", "point_lon", "point_lat",
               "fresnel_inline_m", "fresnel_crossline_m", "status", "flags"]
EXTRA_COLUMNS = ["azimuth_deg", "midpoint_easting", "midpoint_northing", "midpoint_crossline_m", "incidence_deg",
                 "ray_parameter_s_per_km", "elevation_static_s", "method"]

#: Offsets beyond which 'auto' uses the spherical Earth for 1D times (common practice, no source: at 100 km the
#: flat-Earth error of a Moho head wave is a few tens of ms, comparable to a good pick's uncertainty).
SPHERICAL_FROM_M = 100e3

#: The ray fan is refined until neighbouring rays bracketing receivers emerge at most this far apart, m; the
#: two-point search then converges within each bracket to 1 m (a coarser fan is faster; on the sample model
#: 2 km gives the same number of rays with a time as the tracer's default, at about half the cost).
MAX_GAP_M = 2000.0


@register("model", "loading the velocity model", needs=("settings:model", "line"), provides=("model",),
          in_check=True)
def load_model(ctx: Context) -> None:
    from ..model.modelfile import read_model

    s = ctx.settings
    model = read_model(s.model.file)
    line = ctx.artefacts["line"]
    if not model.is_1d:
        model.check_line(line_signature(line), tol_m=max(1.0, 1e-6 * line.length))
    topo = ctx.artefacts.get("topography")
    if model.top == "dem":
        if topo is None:
            raise InputError("the model's top surface is the DEM, but the project has no DEM", file=s.model.file,
                             key="surface", fix="add a [dem] section to the project file, or make the model's "
                             "top surface flat at the datum.")
        ok = np.isfinite(topo["elevation_m"].to_numpy())
        model.set_topography(topo["chainage_m"].to_numpy()[ok], topo["elevation_m"].to_numpy()[ok])
    ctx.artefacts["model"] = model
    sec = ctx.report.section("Velocity model")
    kind = "1D (flat layers)" if model.is_1d else "2D (interfaces and velocities vary along the line)"
    sec.kv({"file": md_escape(s.model.file.name), "kind": kind,
            "interfaces": ", ".join(md_escape(n) for n in model.interface_names),
            "layers": ", ".join(md_escape(n) for n in model.layer_names)})
    notes = list(getattr(model, "notes", []))
    if notes:
        sec.bullets(md_escape(n) for n in notes)
    sec.text("Sources and receivers above a flat model top lie in the top layer, whose velocity law continues "
             "upward to them.")


def line_signature(line) -> dict:
    """The signature a 2D model records of its section line: end points and length, metres."""
    (se, sn), (ee, en) = line.start, line.end
    return {"start_e": se, "start_n": sn, "end_e": ee, "end_n": en, "length_m": line.length}


def _earth(ctx: Context, max_offset: float) -> bool:
    mode = ctx.settings.model.earth
    if mode == "auto":
        return max_offset > SPHERICAL_FROM_M
    return mode == "spherical"


def _fresnel(model, phase, sol, offset_m, zs, zr, freq):
    """Fresnel semi-axes at the reflection points (NaN where there is none)."""
    from ..model.fresnel import fresnel_semi_axes

    return fresnel_semi_axes(model, phase, sol, offset_m, source_depth_m=zs, receiver_depth_m=zr, frequency_hz=freq)


def _solve_1d(model, phase, offset, zs, zr, spherical):
    return model.solve(offset, phase, source_depth_m=zs, receiver_depth_m=zr, spherical=spherical)


def _join(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Join two arrays of ';'-separated flags element by element."""
    a = np.asarray(a, dtype=object)
    b = np.asarray(b, dtype=object)
    return np.where(a == "", b, np.where(b == "", a, a + ";" + b))


def _path_shots(ctx: Context, shots: pd.DataFrame) -> set:
    """Shots whose ray paths are kept for the figure: as set, or up to three spread along the line."""
    chosen = ctx.settings.rays.path_shots
    if chosen is not None:
        return set(chosen)
    ok = shots[(shots["status"] == "ok") & np.isfinite(shots["chainage_m"])]
    if "kind" in ok:
        explosive = ok[ok["kind"].astype(str).str.lower().isin(["borehole", "explosive", "shot"])]
        ok = explosive if len(explosive) else ok
    if ok.empty:
        return set()
    ok = ok.sort_values("chainage_m")
    pick = np.unique(np.round(np.linspace(0, len(ok) - 1, min(3, len(ok)))).astype(int))
    return set(ok["id"].iloc[pick])


def _tracer(ctx: Context, model, flatten: bool):
    from ..model.raytrace2d import RayTracer2D

    cache = ctx.artefacts.setdefault("_tracers", {})
    if flatten not in cache:
        cache[flatten] = RayTracer2D(model, smooth=ctx.settings.rays.smooth_interfaces, flatten=flatten)
    return cache[flatten]


def _solve_2d(ctx: Context, model, p: str, ph, geom: pd.DataFrame, zs, zr, spherical: bool, active):
    """One phase of a 2D model, shot by shot: the ray tracer for reflections and turning rays, the
    multistage eikonal solver for direct and head waves and first arrivals.

    Sources and receivers are placed in the section plane at their chainage (the in-plane offset is the
    along-line offset); their distance from the line is carried by the ``projected_far`` flag.  With the
    DEM on top of the model they are put on the model's surface at that chainage (a borehole shot at its hole
    depth below it), and the difference between their own ground height and the surface is corrected by an
    elevation static, ``Δh·cos(i)/v`` at each end (``i`` the angle of the ray from the vertical there, ``v``
    the velocity at the surface; common practice of static corrections, no source), which is added to the
    time and kept in ``elevation_static_s``.
    """
    n = len(geom)
    vals = {k: np.full(n, np.nan) for k in ("time_s", "p_s_per_m", "point_chainage_m", "point_depth_m",
                                           "incidence_deg", "point_distance_m")}
    vals["elevation_static_s"] = np.zeros(n)
    status = np.full(n, "no_ray", dtype=object)
    flags = np.full(n, "", dtype=object)
    cs = geom["source_chainage_m"].to_numpy()
    cr = geom["receiver_chainage_m"].to_numpy()
    ids = geom["shot_id"].to_numpy()
    starts = np.flatnonzero(np.r_[True, ids[1:] != ids[:-1]])
    bounds = np.r_[starts, n]
    keep_paths = ctx.artefacts.setdefault("_path_shots", _path_shots(ctx, ctx.artefacts["placed_shots"]))
    paths: list = []
    if ph.kind in ("reflection", "turning"):
        method = "2d_ray_tracer" + ("_flattened" if spherical else "")
        tracer = _tracer(ctx, model, spherical)
    else:
        method = "2d_eikonal_multistage"
        from ..model.eikonal import phase_times
    on_dem = model.top == "dem"
    zs_true, zr_true = np.asarray(zs, float), np.asarray(zr, float)
    if on_dem:
        surf_name = model.interface_names[0]
        ground = _ground_depths(ctx, geom)  # the shot's own ground, depth below the datum
        zs = np.asarray(model.interface_depth(surf_name, cs), float) + np.maximum(zs_true - ground, 0.0)
        zr = np.asarray(model.interface_depth(surf_name, cr), float)
        v_s = np.asarray(model.velocity(cs, zs + 1.0, wave=ph.wave), float)
        v_r = np.asarray(model.velocity(cr, zr + 1.0, wave=ph.wave), float)
    counter = ctx.artefacts.get("_counter")
    for a, b in zip(bounds[:-1], bounds[1:]):  # a loop over shots
        if counter is not None:
            counter.add(1)
        sel = np.arange(a, b)[active[a:b]]
        if sel.size == 0:
            continue
        src_ch, src_z = float(cs[a]), float(zs[a])
        if ph.kind in ("reflection", "turning"):
            want = ids[a] in keep_paths
            res = tracer.trace(src_ch, src_z, cr[sel], zr[sel], p, return_paths=want, max_gap_m=MAX_GAP_M)
            vals["time_s"][sel] = res.time_s
            vals["p_s_per_m"][sel] = res.ray_parameter_s_per_m
            vals["point_chainage_m"][sel] = res.point_chainage_m
            vals["point_depth_m"][sel] = res.point_depth_m
            vals["incidence_deg"][sel] = res.incidence_deg
            status[sel] = res.status
            flags[sel] = res.flags
            if on_dem:
                cos_s = np.cos(np.radians(res.takeoff_deg))
                cos_r = np.cos(np.radians(res.emergence_deg))
                vals["elevation_static_s"][sel] = ((zs[sel] - zs_true[sel]) * cos_s / v_s[sel]
                                                   + (zr[sel] - zr_true[sel]) * cos_r / v_r[sel])
            if want and res.paths is not None:
                step = max(1, len(sel) // 40)  # at most about 40 rays per shot and phase for the figure
                for j in range(0, len(sel), step):
                    path = res.paths[j]
                    if path is not None and len(path) > 1:
                        paths.append({"phase": p, "label": None, "chainage_m": path[:, 0], "depth_m": path[:, 1]})
        else:
            t, stt = phase_times(model, src_ch, src_z, cr[sel], zr[sel], p,
                                 spacing_m=ctx.settings.rays.grid_spacing_m)
            vals["time_s"][sel] = t
            status[sel] = stt
            if on_dem:
                # the angle at each end from the apparent slowness dT/dx along the receivers of this shot
                order = np.argsort(cr[sel])
                slow = np.full(sel.size, np.nan)
                if sel.size > 1:
                    with np.errstate(invalid="ignore", divide="ignore"):
                        slow[order] = np.abs(np.gradient(t[order], cr[sel][order]))
                slow = np.where(np.isfinite(slow), slow, 0.0)
                cos_s = np.sqrt(np.clip(1 - (v_s[sel] * slow) ** 2, 0.0, 1.0))
                cos_r = np.sqrt(np.clip(1 - (v_r[sel] * slow) ** 2, 0.0, 1.0))
                vals["elevation_static_s"][sel] = ((zs[sel] - zs_true[sel]) * cos_s / v_s[sel]
                                                   + (zr[sel] - zr_true[sel]) * cos_r / v_r[sel])
    vals["time_s"] = vals["time_s"] + vals["elevation_static_s"]
    return vals, status, flags, method, paths


def _ground_depths(ctx: Context, geom: pd.DataFrame) -> np.ndarray:
    """Depth below the datum of each pair's shot ground (minus its elevation), m."""
    shots = ctx.artefacts["placed_shots"].drop_duplicates("id").set_index("id")
    return _receiver_depth(shots.reset_index())[shots.index.get_indexer(geom["shot_id"])]


def _source_depths(shots: pd.DataFrame) -> np.ndarray:
    """Source depth below the datum, m: minus the elevation (surveyed, else DEM, else 0) plus the hole depth."""
    return _receiver_depth(shots) + np.nan_to_num(shots["depth_m"].to_numpy(float), nan=0.0) \
        if "depth_m" in shots else _receiver_depth(shots)


def _receiver_depth(stations: pd.DataFrame) -> np.ndarray:
    elev = stations["elevation_m"].where(np.isfinite(stations["elevation_m"]), stations["dem_elevation_m"])
    return -np.nan_to_num(elev.to_numpy(float), nan=0.0)


@register("rays", "travel times and reflection points", needs=("placed_stations", "placed_shots", "model"),
          provides=("rays", "midpoints", "reflection_points"))
def compute_rays(ctx: Context) -> None:
    s = ctx.settings
    model = ctx.artefacts["model"]
    line = ctx.artefacts["line"]
    crs = ctx.artefacts["crs"].crs
    shots = ctx.artefacts["placed_shots"]
    stations = ctx.artefacts["placed_stations"]
    recorded = recorded_pairs(s.rays.pairs_file, shots, stations) if s.rays.pairs_file else None
    phases = list(s.rays.phases)
    from ..model.phases import parse_phase

    parsed = {p: parse_phase(p) for p in phases}
    for p, ph in parsed.items():
        if ph.target is not None and ph.target not in model.interface_names + model.layer_names:
            raise InputError(f"phase '{p}' names '{ph.target}', which the model does not have",
                             file=s.source, key="rays.phases",
                             fix="interfaces in the model: " + ", ".join(model.interface_names) + ".")
    max_off = None if s.rays.max_offset_km is None else s.rays.max_offset_km * 1e3
    chunks = list(iter_pair_chunks(shots, stations, recorded))
    target = ctx.output("rays.csv")
    n_rows = 0
    counts: dict[tuple[str, str], int] = {}
    keep_points: list[pd.DataFrame] = []
    keep_mid: list[pd.DataFrame] = []
    spherical_used = set()
    with atomic_path(target) as tmp:
        with open(tmp, "w", newline="") as fh:
            header = True
            n_shots = sum(len(np.unique(c[2])) for c in chunks)
            counter = ctx.progress.counter(n_shots * len(phases), "shot gathers × phases")
            ctx.artefacts["_counter"] = counter
            for sh, st, si, ri in chunks:
                geom = pair_geometry(sh, st, si, ri, line, offset_mismatch=s.rays.offset_mismatch,
                                     max_offset_m=max_off)
                keep_mid.append(geom)
                zs = _source_depths(sh)[si]
                zr = _receiver_depth(st)[ri]
                off = geom["offset_m"].to_numpy()
                spherical = _earth(ctx, float(np.nanmax(off)) if len(off) else 0.0)
                spherical_used.add(spherical)
                ends = (sh["easting"].to_numpy()[si], sh["northing"].to_numpy()[si],
                        st["easting"].to_numpy()[ri], st["northing"].to_numpy()[ri])
                for p in phases:
                    rows = _phase_rows(ctx, model, p, parsed[p], geom, ends, zs, zr, spherical, crs)
                    for st_, n_ in rows["status"].value_counts().items():
                        counts[(p, st_)] = counts.get((p, st_), 0) + int(n_)
                    out = round_for_output(rows[RAY_COLUMNS + EXTRA_COLUMNS])
                    out.to_csv(fh, header=header, index=False)
                    header = False
                    n_rows += len(out)
                    keep_points.append(rows)
                    if model.is_1d:
                        counter.add(len(np.unique(si)))
            counter.done()
            ctx.artefacts.pop("_counter", None)
    rp = pd.concat(keep_points, ignore_index=True) if keep_points else pd.DataFrame(columns=RAY_COLUMNS)
    ctx.artefacts["rays"] = rp
    ctx.artefacts["reflection_points"] = rp[np.isfinite(rp["point_depth_m"].to_numpy(float))].reset_index(drop=True)
    ctx.artefacts["midpoints"] = pd.concat(keep_mid, ignore_index=True) if keep_mid else None
    if n_rows > PARQUET_ROWS:
        try:
            import pyarrow  # noqa: F401

            with atomic_path(ctx.output("rays.parquet")) as tmp:
                rp[RAY_COLUMNS + EXTRA_COLUMNS].to_parquet(tmp, index=False)
        except ImportError:
            ctx.report.section("Rays").text("rays.csv has more than a million rows; install pyarrow "
                                            "(`pip install geosect[parquet]`) to get rays.parquet too.")
    _report(ctx, rp, counts, phases, spherical_used, recorded)
    if not model.is_1d:
        _compare_methods(ctx, model, [p for p in phases if parsed[p].kind == "reflection"], shots, stations)


def _phase_rows(ctx, model, p, ph, geom, ends, zs, zr, spherical, crs) -> pd.DataFrame:
    """The rays.csv rows of one phase for the pairs in ``geom`` (vectorised over the pairs).

    ``ends`` = (source easting, source northing, receiver easting, receiver northing), arrays per pair.
    """
    line = ctx.artefacts["line"]
    off = geom["offset_m"].to_numpy()
    n = len(off)
    flags = geom["flags"].to_numpy(dtype=object).copy()
    status = geom["status"].to_numpy(dtype=object).copy()
    active = status == "ok"
    paths: list = []
    if model.is_1d:
        sol = _solve_1d(model, p, np.where(active, off, 0.0), zs, zr, spherical)
        vals = {k: getattr(sol, k) for k in ("time_s", "p_s_per_m", "point_distance_m", "point_depth_m",
                                              "incidence_deg")}
        vals["elevation_static_s"] = np.zeros(n)  # 1D: sources and receivers at their own depths, no static
        st = sol.status
        method = "1d_exact_spherical" if spherical else "1d_exact"
    else:
        vals, st, more_flags, method, paths = _solve_2d(ctx, model, p, ph, geom, zs, zr, spherical, active)
        flags = _join(flags, more_flags)
    status = np.where(active, st, status)
    for k in vals:
        vals[k] = np.where(status == "ok", vals[k], np.nan)
    has_point = np.isfinite(vals["point_depth_m"])
    if model.is_1d:
        # the reflection point on the map lies on the straight source–receiver segment at the computed distance
        with np.errstate(invalid="ignore", divide="ignore"):
            frac = np.clip(vals["point_distance_m"] / np.where(off > 0, off, np.nan), 0.0, 1.0)
        frac = np.where(off == 0, 0.5, frac)
        se, sn, re_, rn = ends
        pe = np.where(has_point, se + frac * (re_ - se), np.nan)
        pn = np.where(has_point, sn + frac * (rn - sn), np.nan)
        pch = np.full(n, np.nan)
        if has_point.any():
            pch[has_point], _ = line.locate(pe[has_point], pn[has_point])
    else:
        # 2.5D: the point on the section line at its chainage, moved across the line by the crossline
        # distance interpolated between source and receiver (see docs/coverage.md)
        pch = vals["point_chainage_m"]
        cs, cr = geom["source_chainage_m"].to_numpy(), geom["receiver_chainage_m"].to_numpy()
        xs, xr = geom["source_crossline_m"].to_numpy(), geom["receiver_crossline_m"].to_numpy()
        with np.errstate(invalid="ignore", divide="ignore"):
            w = np.clip((pch - cs) / (cr - cs), 0.0, 1.0)
        w = np.where(np.isfinite(w), w, 0.5)
        xl = xs + w * (xr - xs)
        pe, pn = np.full(n, np.nan), np.full(n, np.nan)
        if has_point.any():
            pe[has_point], pn[has_point] = line.position(pch[has_point], xl[has_point])
        far = np.maximum(np.abs(xs), np.abs(xr)) > ctx.settings.rays.projection_limit_km * 1e3
        flags = _join(flags, np.where(far, "projected_far", ""))
        with np.errstate(invalid="ignore"):
            vals["point_distance_m"] = np.abs(pch - cs)
    if paths:
        ctx.artefacts.setdefault("ray_paths", []).extend(paths)
    plon, plat = np.full(n, np.nan), np.full(n, np.nan)
    if has_point.any():
        plon[has_point], plat[has_point] = to_lonlat(crs, pe[has_point], pn[has_point])
    fin = np.full(n, np.nan)
    fxl = np.full(n, np.nan)
    if ph.kind == "reflection" and has_point.any():
        in_plane = off if model.is_1d else np.abs(geom["line_offset_m"].to_numpy())
        fin, fxl = _fresnel(model if model.is_1d else None, p, vals, in_plane, zs, zr,
                            ctx.settings.rays.frequency_hz)
        fin = np.where(has_point, fin, np.nan)
        fxl = np.where(has_point, fxl, np.nan)
    return pd.DataFrame({
        "shot_id": geom["shot_id"], "station_id": geom["station_id"], "phase": p, "offset_m": off,
        "line_offset_m": geom["line_offset_m"], "midpoint_chainage_m": geom["midpoint_chainage_m"],
        "time_s": vals["time_s"], "point_chainage_m": pch, "point_depth_m": vals["point_depth_m"],
        "point_easting": pe, "point_northing": pn, "point_lon": plon, "point_lat": plat,
        "fresnel_inline_m": fin, "fresnel_crossline_m": fxl, "status": status, "flags": flags,
        "azimuth_deg": geom["azimuth_deg"], "midpoint_easting": geom["midpoint_easting"],
        "midpoint_northing": geom["midpoint_northing"], "midpoint_crossline_m": geom["midpoint_crossline_m"],
        "incidence_deg": vals["incidence_deg"], "ray_parameter_s_per_km": vals["p_s_per_m"] * 1e3,
        "elevation_static_s": vals["elevation_static_s"], "method": method,
    })


def _compare_methods(ctx: Context, model, phases: list[str], shots: pd.DataFrame, stations: pd.DataFrame) -> None:
    """Reflection times of the 2D ray tracer against the multistage eikonal scheme, for the path shots.

    Both are computed for the same source and receivers in the section plane (on the model surface, without
    the elevation static), flat Earth; a large difference points to a model or grid problem.
    """
    from ..model.eikonal import phase_times

    if not phases or model.top != "dem":
        return
    sh = shots[(shots["status"] == "ok") & shots["id"].isin(ctx.artefacts.get("_path_shots", set()))]
    st = stations[stations["status"] == "ok"]
    if sh.empty or st.empty:
        return
    surf = model.interface_names[0]
    cr = st["chainage_m"].to_numpy(float)
    zr = np.asarray(model.interface_depth(surf, cr), float)
    hole = np.nan_to_num(sh["depth_m"].to_numpy(float), nan=0.0) if "depth_m" in sh else np.zeros(len(sh))
    tracer = _tracer(ctx, model, False)
    rows = []
    for p in phases:
        diffs = []
        for k, (_, shot) in enumerate(sh.iterrows()):  # a loop over (at most three) shots
            cs = float(shot["chainage_m"])
            zs = float(model.interface_depth(surf, np.array([cs]))[0]) + float(hole[k])
            t_ray = tracer.trace(cs, zs, cr, zr, p, max_gap_m=MAX_GAP_M).time_s
            t_fmm, _ = phase_times(model, cs, zs, cr, zr, p, spacing_m=ctx.settings.rays.grid_spacing_m)
            both = np.isfinite(t_ray) & np.isfinite(t_fmm)
            diffs.append((t_fmm - t_ray)[both])
        d = np.concatenate(diffs) if diffs else np.zeros(0)
        if d.size:
            rows.append((p, len(sh), d.size, f"{np.median(d) * 1e3:+.1f}", f"{np.sqrt(np.mean(d ** 2)) * 1e3:.1f}",
                         f"{np.max(np.abs(d)) * 1e3:.1f}", int((np.abs(d) > 0.020).sum())))
    if rows:
        sec = ctx.report.section("Rays")
        sec.text("Reflection times of the two 2D methods compared (eikonal multistage minus ray tracer, flat Earth, "
                 "the shots whose rays are drawn). Differences of more than a few tens of ms point to a model or "
                 "grid problem (docs/methods-eikonal.md).")
        sec.table(["phase", "shots", "receivers with both", "median (ms)", "RMS (ms)", "largest (ms)",
                   "differing by > 20 ms"], rows, escape=False)
        sec.text("Where they differ by more than 20 ms, look for kinks and steep ramps in the interface: the "
                 "eikonal scheme gives the earliest energy leaving the interface, diffractions from its corners "
                 "included, while the ray tracer follows specular reflections only (on the sample model, shots "
                 "north of the Moho ramp recorded south of it); and for triplications (flag multiple_branches).")


def _report(ctx, rp, counts, phases, spherical_used, recorded) -> None:
    sec = ctx.report.section("Rays")
    n_pairs = rp[["shot_id", "station_id"]].drop_duplicates().shape[0] if len(rp) else 0
    earth = {True: "spherical", False: "flat"}
    sec.kv({"pairs": n_pairs, "phases": ", ".join(phases), "rows in rays.csv": len(rp),
            "Earth": " and ".join(earth[x] for x in sorted(spherical_used)) or "-",
            "pairs from": "the recorded-pairs table" if recorded is not None else "every usable shot with every "
                          "usable station"})
    rows = []
    for p in phases:
        tot = sum(v for (q, _), v in counts.items() if q == p)
        ok = counts.get((p, "ok"), 0)
        other = ", ".join(f"{md_escape(st)} {v}" for (q, st), v in sorted(counts.items()) if q == p and st != "ok")
        rows.append((p, tot, ok, other or "-"))
    sec.table(["phase", "rows", "with a time", "other statuses"], rows, escape=False)
    if recorded is not None:
        bad = recorded[recorded["status"] != "ok"]
        if len(bad):
            sec.text(f"{len(bad)} recorded pairs name an unknown shot or station: "
                     + ", ".join(f"{md_escape(a)}/{md_escape(b)} ({c})" for a, b, c in
                                 bad[["shot_id", "station_id", "status"]].head(20).itertuples(index=False)))
    fl = rp["flags"].astype(str).str.split(";").explode() if len(rp) else pd.Series(dtype=object)
    fl = fl[fl != ""]
    if len(fl):
        sec.counts("flag", fl.value_counts().to_dict())
