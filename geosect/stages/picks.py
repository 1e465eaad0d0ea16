"""Stage: compare travel-time picks with the model (misfits.csv, traveltimes.png/.svg, "Picks and misfits").

The picks of ``[picks] file`` are read and checked (:func:`geosect.picks.read_picks`), joined with the
model times of the rays stage and, where the rays table has no row for a picked pair and phase (a phase
not in ``[rays] phases``, or a pair left out by ``[rays] pairs_file``), with times computed here by the
rays stage's own machinery (:func:`model_times`).  Every pick row goes to ``misfits.csv`` with its status.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pandas as pd

from ..io.tables import write_csv
from ..pairs import pair_geometry
from ..io.points import add_flag
from ..picks import (DEFAULT_UNCERTAINTY_S, MISFIT_COLUMNS, PICK_STATUSES, canonical_phase, largest_residuals,
                     misfits, phase_label, read_picks, summarise_misfits)
from ..pipeline import Context, register
from ..report import md_escape
from .rays import EXTRA_COLUMNS, RAY_COLUMNS, _earth, _phase_rows, _receiver_depth, _source_depths

__all__ = ["compare_picks", "model_times", "extra_model_times", "PAIRS_PER_CALL"]

#: Largest number of pairs solved in one call of the rays-stage solver (groups of whole shots).
PAIRS_PER_CALL = 200_000


def _shot_groups(si: np.ndarray, max_pairs: int):
    """Slices of a shot-sorted index array: groups of whole shots with at most ``max_pairs`` pairs (or one shot)."""
    starts = np.flatnonzero(np.r_[True, si[1:] != si[:-1]])
    bounds = np.r_[starts, si.size]
    a = 0
    while a < len(starts):  # a loop over groups of shots
        b = a + 1
        while b < len(starts) and bounds[b + 1] - bounds[a] <= max_pairs:
            b += 1
        yield slice(bounds[a], bounds[b])
        a = b


def model_times(ctx: Context, pairs: pd.DataFrame, phase: str, *, spherical: bool | None = None,
                max_pairs: int = PAIRS_PER_CALL) -> pd.DataFrame:
    """Model times of one phase for chosen (shot, station) pairs, by the rays stage's machinery.

    Parameters
    ----------
    ctx : Context
        A build context with ``placed_shots``, ``placed_stations``, ``line``, ``crs`` and ``model``.
    pairs : DataFrame
        ``shot_id, station_id``; pairs naming a shot or station that is unknown or not usable are left out.
    phase : str
        Our phase name.
    spherical : bool, optional
        Earth curvature for 1D times (and the flattening of 2D reflections); by default as the rays stage
        decides it (``[model] earth``, ``'auto'``: spherical when the largest offset exceeds 100 km).
    max_pairs : int
        Pairs solved per call, in groups of whole shots.

    Returns
    -------
    DataFrame
        Rows of the rays table (:data:`~geosect.stages.rays.RAY_COLUMNS` and its extra columns), shot by
        shot; no ray paths are kept for the section figure.
    """
    from ..model.phases import parse_phase

    shots = ctx.artefacts["placed_shots"]
    stations = ctx.artefacts["placed_stations"]
    sh = shots[shots["status"] == "ok"].reset_index(drop=True)
    st = stations[stations["status"] == "ok"].reset_index(drop=True)
    si = pd.Index(sh["id"].astype(str)).get_indexer(pairs["shot_id"].astype(str))
    ri = pd.Index(st["id"].astype(str)).get_indexer(pairs["station_id"].astype(str))
    keep = (si >= 0) & (ri >= 0)
    si, ri = si[keep], ri[keep]
    order = np.lexsort((ri, si))
    si, ri = si[order], ri[order]
    cols = RAY_COLUMNS + EXTRA_COLUMNS
    if si.size == 0:
        return pd.DataFrame(columns=cols)
    s = ctx.settings
    max_off = None if s.rays.max_offset_km is None else s.rays.max_offset_km * 1e3
    # a view of the context that keeps no ray paths (the section figure shows the [rays] phases only)
    quiet = replace(ctx, artefacts={**ctx.artefacts, "_path_shots": set()})
    model = ctx.artefacts["model"]
    crs = ctx.artefacts["crs"].crs
    ph = parse_phase(phase)
    zs_all, zr_all = _source_depths(sh), _receiver_depth(st)
    out = []
    for part in _shot_groups(si, max_pairs):  # a loop over groups of shots
        a, b = si[part], ri[part]
        geom = pair_geometry(sh, st, a, b, ctx.artefacts["line"], offset_mismatch=s.rays.offset_mismatch,
                             max_offset_m=max_off)
        off = geom["offset_m"].to_numpy()
        sph = _earth(ctx, float(np.nanmax(off)) if len(off) else 0.0) if spherical is None else spherical
        ends = (sh["easting"].to_numpy()[a], sh["northing"].to_numpy()[a], st["easting"].to_numpy()[b],
                st["northing"].to_numpy()[b])
        rows = _phase_rows(quiet, model, phase, ph, geom, ends, zs_all[a], zr_all[b], sph, crs)
        out.append(rows[cols])
    if "_tracers" in quiet.artefacts:  # share the ray tracers built here with later stages
        ctx.artefacts.setdefault("_tracers", quiet.artefacts["_tracers"])
    return pd.concat(out, ignore_index=True)


def _rays_spherical(rays: pd.DataFrame | None) -> bool | None:
    """Whether the rays stage used a spherical Earth (from its ``method`` column); None when it cannot tell."""
    if rays is None or not len(rays) or "method" not in rays.columns:
        return None
    methods = set(pd.unique(rays["method"].astype(str)))
    if any(m.endswith(("spherical", "flattened")) for m in methods):
        return True
    if methods & {"1d_exact", "2d_ray_tracer"}:
        return False
    return None  # e.g. only first-arrival (eikonal) times, which do not record the Earth used


def extra_model_times(ctx: Context, picks: pd.DataFrame, rays: pd.DataFrame | None) -> pd.DataFrame:
    """Model times the rays table lacks for the usable picks, computed by :func:`model_times`.

    * A picked phase that is not in the rays table: computed for every usable station of each shot that
      has usable picks of it (so the figure can draw its curve).
    * A phase in the rays table but a picked pair that is not (a pairs file left it out): computed for
      those pairs.
    """
    ok = picks[picks["status"] == "ok"]
    if ok.empty:
        return pd.DataFrame(columns=RAY_COLUMNS + EXTRA_COLUMNS)
    have_phases: set[str] = set()
    have = pd.DataFrame(columns=["shot_id", "station_id", "phase"])
    if rays is not None and len(rays):
        canon = {}
        for p in pd.unique(rays["phase"].astype(str)):  # distinct phases only
            try:
                canon[p] = canonical_phase(p)
            except Exception:  # noqa: BLE001 - a phase of the table we cannot read is simply not matched
                canon[p] = p
        have_phases = set(canon.values())
        have = pd.DataFrame({"shot_id": rays["shot_id"].astype(str), "station_id": rays["station_id"].astype(str),
                             "phase": rays["phase"].astype(str).map(canon)})
    stations = ctx.artefacts["placed_stations"]
    usable_st = stations.loc[stations["status"] == "ok", "id"].astype(str).to_numpy()
    earth = ctx.settings.model.earth
    spherical = {"flat": False, "spherical": True}.get(earth) if earth != "auto" else _rays_spherical(rays)
    out = []
    for phase, grp in ok.groupby("phase", sort=False):  # a loop over phases
        if phase not in have_phases:
            shots_here = pd.unique(grp["shot_id"])
            pairs = pd.DataFrame({"shot_id": np.repeat(shots_here, usable_st.size),
                                  "station_id": np.tile(usable_st, shots_here.size)})
        else:
            known = have[have["phase"] == phase]
            m = grp[["shot_id", "station_id"]].merge(known[["shot_id", "station_id"]].drop_duplicates(),
                                                     how="left", indicator=True)
            pairs = m.loc[m["_merge"] == "left_only", ["shot_id", "station_id"]].drop_duplicates()
        if len(pairs):
            rows = model_times(ctx, pairs, phase, spherical=spherical)
            if len(rows):
                out.append(rows)
    return pd.concat(out, ignore_index=True) if out else pd.DataFrame(columns=RAY_COLUMNS + EXTRA_COLUMNS)


def _fmt_s(x: float, nd: int = 3) -> str:
    return f"{x:.{nd}f}" if np.isfinite(x) else "-"


@register("picks", "comparing picks with the model", needs=("settings:picks", "rays"), provides=("misfits",))
def compare_picks(ctx: Context) -> None:
    from ..plot.traveltimes import save_traveltime_pages

    s = ctx.settings
    model = ctx.artefacts["model"]
    shots = ctx.artefacts["placed_shots"]
    stations = ctx.artefacts["placed_stations"]
    picks = read_picks(s.picks.file, columns=s.picks.columns, delimiter=s.picks.delimiter, model=model,
                       shot_ids=shots["id"], station_ids=stations["id"], default_uncertainty_s=_default_uncertainty(ctx))
    rays = ctx.artefacts["rays"]
    picked_shots = set(picks.loc[picks["status"] == "ok", "shot_id"])
    base = rays[rays["shot_id"].astype(str).isin(picked_shots)] if len(rays) else rays
    extra = extra_model_times(ctx, picks, base)
    times = pd.concat([base, extra], ignore_index=True) if len(extra) else base
    table = misfits(picks, times, model=model)
    # picks of a known shot or station that could not be used: say why there is no model time
    usable_shots = set(shots.loc[shots["status"] == "ok", "id"].astype(str))
    usable_st = set(stations.loc[stations["status"] == "ok", "id"].astype(str))
    nm = table["status"].to_numpy() == "no_model_time"
    bad_shot = nm & ~table["shot_id"].isin(usable_shots).to_numpy()
    bad_st = nm & ~table["station_id"].isin(usable_st).to_numpy()
    table["flags"] = add_flag(add_flag(table["flags"], bad_shot, "shot_not_usable"), bad_st, "station_not_usable")
    ctx.artefacts["misfits"] = table
    ctx.artefacts["picks_model_times"] = times
    write_csv(ctx.output("misfits.csv"), table[MISFIT_COLUMNS])

    vred = s.picks.reduction_velocity_kms * 1e3
    distance = "offset" if model.is_1d else "line"
    chainage = dict(zip(shots["id"].astype(str), shots["chainage_m"].to_numpy(float)))
    written = save_traveltime_pages(table, times, ctx.output("traveltimes.png"), ctx.output("traveltimes.svg"),
                                    reduction_velocity_ms=vred, distance=distance, model=model,
                                    shot_chainage_m=chainage, title=s.project.name,
                                    output=ctx.output)
    _report(ctx, picks, table, model, extra, written, vred, distance)


def _report(ctx: Context, picks, table, model, extra, written, vred, distance) -> None:
    s = ctx.settings
    sec = ctx.report.section("Picks and misfits")
    empty_unc = bool(picks["flags"].str.contains("default_uncertainty").any())
    sec.kv({"file": md_escape(s.picks.file.name), "picks": len(table),
            "usable (status ok)": int((table["status"] == "ok").sum()),
            "reduction velocity of the figure": f"{vred / 1e3:g} km/s",
            "figure distance": "signed offset (negative towards lower chainage)" if distance == "offset"
                               else "along-line distance from the shot (receiver minus shot chainage)",
            "figures": ", ".join(md_escape(p.name) for p in written if p.suffix == ".png") or "-"})
    sec.text(f"Picks without an uncertainty take {_default_uncertainty(ctx):g} s ([picks] "
             "default_uncertainty_s)." + (" Some rows had an empty uncertainty and were flagged "
                                            "default_uncertainty." if empty_unc else ""))
    if len(extra):
        ph = ", ".join(md_escape(p) for p in pd.unique(extra["phase"]))
        sec.text(f"{len(extra)} model times not in rays.csv were computed for the picks ({ph}), "
                 "with the same solvers as the rays stage.")
    counts = table["status"].value_counts().to_dict()
    order = [k for k in PICK_STATUSES if k in counts] + sorted(k for k in counts if k not in PICK_STATUSES)
    sec.table(["status", "picks"], [(k, counts[k]) for k in order])
    fl = table["flags"].astype(str).str.split(";").explode()
    fl = fl[fl != ""]
    if len(fl):
        sec.counts("flag", fl.value_counts().to_dict())
    bad = table[~table["status"].isin(["ok"])]
    if len(bad):
        shown = bad.head(30)
        sec.text("Rows that cannot be compared (first 30): " + ", ".join(
            f"row {r} ({md_escape(st)})" for r, st in shown[["row", "status"]].itertuples(index=False)) + ".")
    summ = summarise_misfits(table, model=model)
    sec.text("Per phase, over the usable picks: residual = pick − model; RMS = sqrt(mean residual²); "
             "χ²/N = mean (residual / uncertainty)² (about 1 when the residuals match the uncertainties).")
    sec.table(["phase", "picks", "mean residual (s)", "RMS (s)", "χ²/N", "largest |residual| (s)"],
              [(md_escape(r.label), r.picks, _fmt_s(r.mean_residual_s), _fmt_s(r.rms_s),
                _fmt_s(r.chi2_per_pick, 2), _fmt_s(r.max_abs_residual_s)) for r in summ.itertuples(index=False)],
              escape=False)
    top = largest_residuals(table, 10)
    if len(top):
        sec.text("The 10 largest normalised residuals:")
        sec.table(["row", "shot", "station", "phase", "pick (s)", "model (s)", "residual (s)", "residual / σ"],
                  [(r.row, md_escape(r.shot_id), md_escape(r.station_id), md_escape(phase_label(r.phase, model)),
                    _fmt_s(r.time_s), _fmt_s(r.model_time_s), _fmt_s(r.residual_s), _fmt_s(r.normalised_residual, 1))
                   for r in top.itertuples(index=False)], escape=False)


def _default_uncertainty(ctx: Context) -> float:
    """The default pick uncertainty from the project file ([picks] default_uncertainty_s), s."""
    return float(getattr(ctx.settings.picks, "default_uncertainty_s", DEFAULT_UNCERTAINTY_S))
