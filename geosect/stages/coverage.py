"""Stage: coverage of each interface, the survey-design check, candidate stations and planned layouts.

Writes ``coverage.csv`` (``layout, interface, phase, bin_start_m, bin_end_m,
fold``: the survey and every planned layout), ``candidates.csv`` (every candidate
station position, ranked per interface), ``plans.csv`` (one row per layout and
interface, when plans are given), ``coverage.png`` and ``coverage.svg``, and the
report sections "Coverage per interface", "Survey design" and "Planned layouts".
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..coverage import WIDE_ANGLE_DEPTH_FACTORS, DesignCheck, InterfaceCoverage, bin_edges, design_check
from ..io.tables import write_csv
from ..model.phases import parse_phase
from ..pipeline import Context, register
from ..planning import (LayoutCoverage, candidate_stations, evaluate_layout, layout_from_plan, rank_candidates,
                        summary_table, survey_coverage)
from ..report import md_escape

__all__ = ["compute_coverage", "CoverageOutcome", "phase_label", "reflection_phases", "COVERAGE_COLUMNS"]

COVERAGE_COLUMNS = ["layout", "interface", "phase", "bin_start_m", "bin_end_m", "fold"]
#: A candidate is listed in the report only if it shortens the largest gap by at least this much, m (the report's
#: precision, 0.1 km).
MIN_SHRINK_M = 100.0
SURVEY = "survey"


@dataclass
class CoverageOutcome:
    """What the coverage stage leaves in ``ctx.artefacts['coverage']``."""

    edges_m: np.ndarray
    survey: dict[str, InterfaceCoverage]
    design: dict[str, DesignCheck]
    candidates: dict[str, pd.DataFrame] = field(default_factory=dict)
    plans: list[LayoutCoverage] = field(default_factory=list)


def phase_label(model, phase: str) -> str:
    """A label for a reflection phase: its interface, the wave when S, and the IASPEI code where the model has one.

    >>> from geosect.model import LayeredModel
    >>> m = LayeredModel.flat([0, 35e3], [6000, 8000], names=["surface", "moho"])
    >>> phase_label(m, "reflection:moho"), phase_label(m, "S:reflection:moho")
    ('moho (PmP)', 'moho, S (SmS)')
    """
    ph = parse_phase(phase)
    base = ph.target if ph.wave == "P" else f"{ph.target}, S"
    try:
        code = model.iaspei_label(phase)
    except Exception:  # noqa: BLE001 - a label is a nicety, never a failure
        code = None
    return f"{base} ({code})" if code else base


def reflection_phases(settings_phases, table: pd.DataFrame | None) -> list[str]:
    """The reflection phases asked for in ``[rays] phases``, then any other found in the table, in order."""
    out = [p for p in settings_phases if parse_phase(p).kind == "reflection"]
    if table is not None and len(table) and "phase" in table.columns:
        for p in pd.unique(table["phase"]):
            if p not in out and parse_phase(p).kind == "reflection":
                out.append(p)
    return out


def _km(x: float, nd: int = 1) -> str:
    return f"{x / 1e3:.{nd}f}" if np.isfinite(x) else "-"


def _range_km(a: float, b: float, nd: int = 1) -> str:
    return f"{_km(a, nd)} to {_km(b, nd)}" if np.isfinite(a) and np.isfinite(b) else "-"


def _design_depth(model, cov: InterfaceCoverage, line_length: float) -> float:
    """Depth of the interface (m below the datum) where the survey samples it: the median under the span."""
    a, b = cov.span_m
    if not np.isfinite(a):
        a, b = 0.0, line_length
    ch = np.linspace(a, b, 101)
    return float(np.median(model.interface_depth(cov.interface, ch)))


def _surface_depth(ctx: Context) -> float:
    from .rays import _receiver_depth

    st = ctx.artefacts.get("placed_stations")
    if st is None or not len(st):
        return 0.0
    ok = st[st["status"] == "ok"]
    return float(np.median(_receiver_depth(ok.reset_index(drop=True)))) if len(ok) else 0.0


def _fold_rows(layout: str, covs: dict[str, InterfaceCoverage]) -> pd.DataFrame:
    parts = [pd.DataFrame({"layout": layout, "interface": c.interface, "phase": p, "bin_start_m": c.edges_m[:-1],
                           "bin_end_m": c.edges_m[1:], "fold": c.fold}) for p, c in covs.items()]
    return pd.concat(parts, ignore_index=True) if parts else pd.DataFrame(columns=COVERAGE_COLUMNS)


@register("coverage", "coverage per interface and survey design", needs=("reflection_points", "model"),
          provides=("coverage",))
def compute_coverage(ctx: Context) -> None:
    s = ctx.settings
    cs = s.coverage
    model = ctx.artefacts["model"]
    line = ctx.artefacts["line"]
    crs = ctx.artefacts["crs"].crs
    rp = ctx.artefacts["reflection_points"]
    rays = ctx.artefacts.get("rays")
    shots = ctx.artefacts.get("placed_shots")
    stations = ctx.artefacts.get("placed_stations")
    topo = ctx.artefacts.get("topography")
    earth = getattr(s.model, "earth", "auto") if s.model is not None else "auto"
    gap_m, bin_m = cs.gap_km * 1e3, cs.bin_km * 1e3
    phases = reflection_phases(s.rays.phases, rp)
    sec = ctx.report.section("Coverage per interface")
    if not phases:
        sec.text("No reflection phase was computed (`[rays] phases` has none): there is no interface to cover.")
        ctx.artefacts["coverage"] = CoverageOutcome(np.array([0.0, line.length]), {}, {})
        return
    labels = {p: phase_label(model, p) for p in phases}

    layouts = []
    for i, plan in enumerate(s.plans):
        layouts.append(layout_from_plan(plan, line, crs, key=f"plans[{i}]", topography=topo,
                                        dem=ctx.artefacts.get("dem"), dem_band=s.dem.band if s.dem else 1,
                                        far_off_line_m=s.line.far_off_line_km * 1e3))
    pts = rp["point_chainage_m"].to_numpy(float) if len(rp) else np.empty(0)
    pts = pts[np.isfinite(pts)]
    reach = [0.0, line.length] + ([float(pts.min()), float(pts.max())] if pts.size else [])
    for lay in layouts:  # the bins cover the planned points too, so every fold is drawn on the same bins
        for f in (lay.stations, lay.shots):
            c = f["chainage_m"].to_numpy(float) if len(f) else np.empty(0)
            if np.isfinite(c).any():
                reach += [float(np.nanmin(c)), float(np.nanmax(c))]
    edges = bin_edges(min(reach), max(reach), bin_m)

    survey = survey_coverage(rp, model, phases, edges_m=edges, gap_m=gap_m, shots=shots, stations=stations,
                             labels=labels, earth=earth)
    solve_kw = dict(settings=s, tracers=ctx.artefacts.setdefault("_tracers", {}))  # solved as the rays stage does
    surface = _surface_depth(ctx)
    design = {p: design_check(c, _design_depth(model, c, line.length), surface) for p, c in survey.items()}

    ranking: dict[str, pd.DataFrame] = {}
    gapped = [p for p in phases if survey[p].n_gaps > 0]  # only an interface with a gap needs another station
    if cs.candidates > 0 and gapped and shots is not None and len(shots):
        cands = candidate_stations(line, crs, cs.candidate_spacing_km * 1e3, topography=topo)
        by_phase = {p: rp.loc[rp["phase"] == p, "point_chainage_m"].to_numpy(float) for p in gapped}
        ranking = rank_candidates(by_phase, shots, cands, model, gapped, line, crs, gap_m=gap_m, **solve_kw)

    results = [LayoutCoverage(SURVEY, int((stations["status"] == "ok").sum()) if stations is not None else 0,
                              int((shots["status"] == "ok").sum()) if shots is not None else 0,
                              _survey_pairs(ctx, rays), survey, "survey")]
    for lay in ctx.progress.iter(layouts, len(layouts), "planned layouts"):
        results.append(evaluate_layout(lay, model, phases, line, crs, edges_m=edges, gap_m=gap_m, labels=labels,
                                       **solve_kw))

    out = ctx.artefacts["coverage"] = CoverageOutcome(edges, survey, design, ranking, results[1:])
    _write(ctx, out, results)
    _report_coverage(ctx, out, gap_m, bin_m)
    _report_design(ctx, out, cs)
    if layouts:
        _report_plans(ctx, results, layouts, phases, labels)


def _survey_pairs(ctx: Context, rays: pd.DataFrame | None) -> int:
    mid = ctx.artefacts.get("midpoints")
    if mid is not None:
        return int(len(mid))
    if rays is not None and len(rays):
        return int(rays[["shot_id", "station_id"]].drop_duplicates().shape[0])
    return 0


def _write(ctx: Context, out: CoverageOutcome, results: list[LayoutCoverage]) -> None:
    from ..plot.coverage import draw_coverage, save_coverage

    fold = pd.concat([_fold_rows(r.name, r.coverages) for r in results], ignore_index=True)
    write_csv(ctx.output("coverage.csv"), fold[COVERAGE_COLUMNS])
    if out.candidates:
        cand = pd.concat([t.assign(phase=p, rank=np.arange(1, len(t) + 1)) for p, t in out.candidates.items()],
                         ignore_index=True)
        cols = ["phase", "rank", "id", "chainage_m", "easting", "northing", "new_largest_gap_m", "gap_start_m",
                "gap_end_m", "shrink_m", "total_gap_m", "new_points", "exact"]
        write_csv(ctx.output("candidates.csv"), cand[cols])
    if out.plans:
        write_csv(ctx.output("plans.csv"), summary_table(results))
    fig = draw_coverage(list(out.survey.values()), {r.name: list(r.coverages.values()) for r in out.plans},
                        title=f"{ctx.settings.project.name}: reflection-point coverage")
    save_coverage(fig, ctx.output("coverage.png"), ctx.output("coverage.svg"),
                  title=f"{ctx.settings.project.name}: coverage")


def _report_coverage(ctx: Context, out: CoverageOutcome, gap_m: float, bin_m: float) -> None:
    sec = ctx.report.section("Coverage per interface")
    sec.text(f"Reflection points per {bin_m / 1e3:g} km of chainage on each interface (coverage.csv, "
             f"coverage.png); gaps are stretches longer than {gap_m / 1e3:g} km between consecutive reflection "
             "points. Wide angle: offsets beyond the interface's critical distance (computed for each pair's "
             "source and receiver depths; under a 2D model in the 1D column under the midpoint).")
    rows = []
    for c in out.survey.values():
        w = c.wide
        crit = "none (no head wave)" if not np.isfinite(w.critical_m) else (
            _km(w.critical_m) if w.critical_max_m - w.critical_min_m < 50.0
            else f"{_km(w.critical_min_m)} to {_km(w.critical_max_m)}")
        rows.append((md_escape(c.label), c.n_points, _range_km(*c.span_m), int((c.fold > 0).sum()),
                     int(c.fold.max()) if c.fold.size else 0, c.n_gaps,
                     f"{_km(c.largest_gap_m)} ({_range_km(*c.largest_m)})" if np.isfinite(c.largest_gap_m) else "-",
                     crit, w.count, _range_km(w.offset_min_m, w.offset_max_m)))
    sec.table(["interface", "reflection points", "span (km)", "bins with points", "largest fold",
               f"gaps > {gap_m / 1e3:g} km", "largest gap (km)", "critical distance (km)", "wide-angle pairs",
               "their offsets (km)"], rows, escape=False)
    gaps = [(md_escape(c.label), _km(a, 2), _km(b, 2), _km(b - a, 2)) for c in out.survey.values()
            for a, b in zip(c.gap_start_m, c.gap_end_m)]
    if gaps:
        sec.text(f"Gaps longer than {gap_m / 1e3:g} km:")
        sec.table(["interface", "from (km)", "to (km)", "length (km)"], gaps[:60], escape=False)
        if len(gaps) > 60:
            sec.text(f"... and {len(gaps) - 60} more.")


def _report_design(ctx: Context, out: CoverageOutcome, cs) -> None:
    sec = ctx.report.section("Survey design")
    f_lo, f_hi = WIDE_ANGLE_DEPTH_FACTORS
    sec.text(f"An interface is recorded at wide angle by offsets of about {f_lo:g}–{f_hi:g} times its depth "
             "(a rule of thumb of refraction survey design: common practice, no source) and, strictly, by offsets "
             "beyond its critical distance. Depths are below the median station level, under the sampled span.")
    rows = []
    verdict = {"yes": f"yes (≥ {f_hi:g}×)", "about": f"about ({f_lo:g}–{f_hi:g}×)", "no": "no"}
    for p, d in out.design.items():
        c = out.survey[p]
        rows.append((md_escape(c.label), _km(d.depth_m), f"{_km(d.targets_m[0])}–{_km(d.targets_m[-1])}",
                     _km(d.max_offset_m), f"{d.ratio:.1f}×" if np.isfinite(d.ratio) else "-",
                     verdict[d.verdict], _km(d.critical_m) if np.isfinite(d.critical_m) else "none",
                     "yes" if d.reaches_critical else "no"))
    sec.table(["interface", "depth (km)", f"{f_lo:g}–{f_hi:g}× depth (km)", "largest offset (km)",
               "offset / depth", "reaches it", "critical distance (km)", "offsets beyond it"], rows, escape=False)
    if cs.candidates <= 0:
        return
    if out.candidates:
        sec.text(f"Candidate stations every {cs.candidate_spacing_km:g} km along the section line (on the line, at "
                 "the topography's height where known), each solved with every usable shot; ranked by the largest "
                 "gap left on the interface once its reflection points are added (candidates.csv lists all).")
    for p, c in out.survey.items():
        t = out.candidates.get(p)
        if t is None:
            why = ("fewer than two reflection points, no gap to shrink" if c.n_points < 2 else
                   f"no gap longer than {c.gap_m / 1e3:g} km, no added station needed" if c.n_gaps == 0 else
                   "no usable shots to try candidate stations with")
            sec.text(f"{md_escape(c.label)}: {why}.")
            continue
        a, b = t.attrs.get("before_m", (np.nan, np.nan))
        best = t[t["shrink_m"] >= MIN_SHRINK_M].head(cs.candidates)
        head = f"{md_escape(c.label)}: largest gap now {_km(b - a)} km ({_range_km(a, b)} km)."
        if not len(best):
            sec.text(head + f" No single added station shortens it by {MIN_SHRINK_M / 1e3:g} km or more.")
            continue
        sec.text(head)
        sec.table(["rank", "candidate", "chainage (km)", "easting", "northing", "largest gap after (km)",
                   "shrinks by (km)", "new points in span"],
                  [(k + 1, md_escape(r.id), _km(r.chainage_m, 2), f"{r.easting:.0f}", f"{r.northing:.0f}",
                    f"{_km(r.new_largest_gap_m)} ({_range_km(r.gap_start_m, r.gap_end_m)})"
                    + ("" if r.exact else " or less"), _km(r.shrink_m), r.new_points)
                   for k, r in enumerate(best.itertuples(index=False))], escape=False)


def _report_plans(ctx: Context, results: list[LayoutCoverage], layouts, phases, labels) -> None:
    sec = ctx.report.section("Planned layouts")
    sec.text("Each planned layout is computed like the survey (pair geometry, the model's rays, reflection points "
             "on the line) with no per-pair output; plans.csv holds these numbers per layout and interface.")
    head = ["layout", "stations", "shots", "pairs"]
    for p in phases:
        lab = md_escape(labels[p])
        head += [f"{lab}: span (km)", f"{lab}: largest gap (km)", f"{lab}: wide angle"]
    rows = []
    for r in results:
        row = [md_escape(r.name if r.origin != "survey" else "survey (as placed)"), r.n_stations, r.n_shots,
               r.n_pairs]
        for p in phases:
            c = r.coverages[p]
            row += [_range_km(*c.span_m), _km(c.largest_gap_m), "yes" if c.wide.reached else "no"]
        rows.append(row)
    sec.table(head, rows, escape=False)
    notes = []
    for lay in layouts:
        if len(lay.unused):
            counts = lay.unused["status"].value_counts().to_dict()
            notes.append(f"{md_escape(lay.name)}: {len(lay.unused)} rows not used ("
                         + ", ".join(f"{md_escape(k)} {v}" for k, v in counts.items()) + ")")
        fl = pd.concat([lay.stations["flags"], lay.shots["flags"]]).astype(str) if len(lay.stations) else None
        if fl is not None:
            fl = fl.str.split(";").explode()
            fl = fl[fl != ""]
            if len(fl):
                notes.append(f"{md_escape(lay.name)}: flags " + ", ".join(
                    f"{md_escape(k)} {v}" for k, v in fl.value_counts().items()))
    if notes:
        sec.bullets(notes)
