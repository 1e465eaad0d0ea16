"""Planned layouts and candidate stations, computed like the real survey.

A *layout* is a set of stations and shots, placed on the section line like the
survey's own (``id, easting, northing, lon, lat, elevation_m, dem_elevation_m,
chainage_m, crossline_m, status, flags``; shots also ``depth_m``).  It comes from

* a plan's table of points (:func:`layout_from_table`: columns ``kind`` =
  station or shot, ``x``, ``y``, optional ``id`` and ``depth``), or
* spacings along the section line (:func:`layout_along_line`: stations every
  ``station_spacing_km`` and shots every ``shot_spacing_km`` between ``start_km``
  and ``end_km``, on the line, at the height of the topography where it is known
  and at the datum otherwise).

Its source–receiver pairs go through the same steps as the survey's in the rays
stage, using that stage's own functions: chunks of whole shots, pair geometry
(:func:`geosect.pairs.pair_geometry`), source and receiver depths from the
heights, the Earth chosen per chunk, and the row builder (exact 1D solutions, or
for a 2D model the 2D ray tracer, with the reflection point placed on the line).
Only what coverage needs is kept: nothing is written per pair.

:func:`rank_candidates` tries one added station at each of many positions along
the line: all usable shots × all candidates are solved in one call per phase, and
the largest gap of each interface is recomputed with each candidate's reflection
points (:func:`geosect.coverage.gaps_after_adding`).
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from .coverage import InterfaceCoverage, critical_distances, gaps_after_adding, interface_coverage, rank_by_gap
from .errors import ConfigError, InputError
from .model.phases import parse_phase
from .pairs import pair_geometry

__all__ = [
    "Layout",
    "LayoutCoverage",
    "layout_along_line",
    "layout_from_table",
    "layout_from_plan",
    "candidate_stations",
    "iter_reflections",
    "solve_reflections",
    "evaluate_layout",
    "survey_coverage",
    "rank_candidates",
    "summary_table",
    "STATION_KINDS",
    "SHOT_KINDS",
]

#: Values of a plan table's ``kind`` column read as a station or a shot (any case).
STATION_KINDS = ("station", "receiver")
SHOT_KINDS = ("shot", "source")

_POINT_COLUMNS = ["id", "easting", "northing", "lon", "lat", "elevation_m", "dem_elevation_m", "chainage_m",
                  "crossline_m", "status", "flags"]
_KEEP = ["shot_id", "station_id", "offset_m", "midpoint_chainage_m", "point_chainage_m", "point_depth_m",
         "source_depth_m", "receiver_depth_m", "spherical"]


@dataclass
class Layout:
    """Stations and shots of one layout, placed on the section line.

    Attributes
    ----------
    name : str
        Shown in the report.
    stations, shots : pandas.DataFrame
        Placed points (see the module docstring); rows with a status other than
        ``ok`` are kept and not used.
    origin : str
        ``'spacings'``, ``'file'`` or ``'survey'``.
    unused : pandas.DataFrame
        Rows of a plan table that are neither a station nor a shot (status
        ``unknown_kind``) or otherwise unusable, kept to be counted.
    """

    name: str
    stations: pd.DataFrame
    shots: pd.DataFrame
    origin: str = "spacings"
    unused: pd.DataFrame = field(default_factory=pd.DataFrame)

    @property
    def n_stations(self) -> int:
        """Usable stations."""
        return int((self.stations["status"] == "ok").sum()) if len(self.stations) else 0

    @property
    def n_shots(self) -> int:
        """Usable shots."""
        return int((self.shots["status"] == "ok").sum()) if len(self.shots) else 0

    @property
    def n_pairs(self) -> int:
        """Usable shots × usable stations."""
        return self.n_stations * self.n_shots


@dataclass
class LayoutCoverage:
    """Coverage of one layout: counts and one :class:`~geosect.coverage.InterfaceCoverage` per reflection phase."""

    name: str
    n_stations: int
    n_shots: int
    n_pairs: int
    coverages: dict[str, InterfaceCoverage]
    origin: str = "spacings"


# --------------------------------------------------------------------------- layouts


def _points_along(line, crs, prefix: str, start_m: float, end_m: float, spacing_m: float,
                  topography: pd.DataFrame | None) -> pd.DataFrame:
    """Points every ``spacing_m`` on the line from ``start_m`` to ``end_m`` (both metres, inclusive)."""
    from .crs import to_lonlat

    n = int(np.floor((end_m - start_m) / spacing_m + 1e-9)) + 1 if end_m >= start_m else 0
    ch = start_m + spacing_m * np.arange(n, dtype=float)
    e, nn = line.position(ch)
    lon, lat = to_lonlat(crs, e, nn) if n else (np.empty(0), np.empty(0))
    flags = np.full(n, "", dtype=object)
    beyond = (ch < 0.0) | (ch > line.length)
    flags[beyond] = "beyond_line_end"
    dem = np.full(n, np.nan)
    if topography is not None and len(topography) and n:
        tc = topography["chainage_m"].to_numpy(float)
        tz = topography["elevation_m"].to_numpy(float)
        dem = np.interp(ch, tc, tz)
        dem[(ch < tc.min()) | (ch > tc.max())] = np.nan
        off = ~np.isfinite(dem)
        flags[off] = np.where(flags[off] == "", "outside_dem", flags[off] + ";outside_dem")
    width = max(3, len(str(max(n, 1))))
    return pd.DataFrame({
        "id": [f"{prefix}{k + 1:0{width}d}" for k in range(n)], "easting": e, "northing": nn, "lon": lon,
        "lat": lat, "elevation_m": np.full(n, np.nan), "dem_elevation_m": dem, "chainage_m": ch,
        "crossline_m": np.zeros(n), "status": np.full(n, "ok", dtype=object), "flags": flags,
    })


def layout_along_line(line, crs, *, name: str, station_spacing_m: float, shot_spacing_m: float,
                      start_m: float = 0.0, end_m: float | None = None, shot_depth_m: float = 0.0,
                      topography: pd.DataFrame | None = None, key: str = "plans") -> Layout:
    """Stations and shots at regular spacings along the section line.

    Parameters
    ----------
    line : SurveyLine
        The section line.
    crs : pyproj.CRS
        The working CRS (for longitude and latitude, which geodesic offsets use).
    name : str
        Layout name; point ids are ``<name>-R001`` (stations) and ``<name>-S001`` (shots).
    station_spacing_m, shot_spacing_m : float
        Spacings along the line, in metres.
    start_m, end_m : float
        Chainage of the first point and the last possible one, in metres (default: the
        whole line).  The first station and the first shot are at ``start_m``.
    shot_depth_m : float
        Source depth below ground, in metres.
    topography : pandas.DataFrame, optional
        ``chainage_m, elevation_m`` along the line (the topography artefact); the
        points take its height (``dem_elevation_m``); without it they lie at the
        datum.
    key : str
        Where the plan sits in the project file, for messages.

    Raises
    ------
    ConfigError
        For a non-positive spacing or an end before the start.
    """
    end = line.length if end_m is None else float(end_m)
    for what, v in (("station_spacing_km", station_spacing_m), ("shot_spacing_km", shot_spacing_m)):
        if not (v is not None and v > 0):
            raise ConfigError(f"plan '{name}': {what} is {v!r}", key=f"{key}.{what}",
                              fix="give a positive spacing in km.")
    if not end > start_m:
        raise ConfigError(f"plan '{name}' ends at {end / 1e3:.3f} km, not after its start at {start_m / 1e3:.3f} km",
                          key=f"{key}.end_km", fix=f"give end_km larger than start_km (the line is "
                          f"{line.length / 1e3:.3f} km long).")
    stations = _points_along(line, crs, f"{name}-R", float(start_m), end, float(station_spacing_m), topography)
    shots = _points_along(line, crs, f"{name}-S", float(start_m), end, float(shot_spacing_m), topography)
    shots["depth_m"] = float(shot_depth_m)
    return Layout(name, stations, shots, "spacings")


def layout_from_table(plan, line, crs, *, key: str = "plans", dem=None, dem_band: int = 1,
                      topography: pd.DataFrame | None = None, far_off_line_m: float | None = None,
                      ambiguity_m: float = 50.0) -> Layout:
    """Stations and shots of a plan's table (or vector file) of points.

    Parameters
    ----------
    plan : PlanInput
        ``file``, ``coordinates_crs``, ``columns`` (roles id, x, y, kind, depth) and
        ``shot_depth_m`` (the depth of shots whose row gives none).
    line, crs :
        The section line and the working CRS.
    key : str
        Where the plan sits in the project file, for messages.
    dem : DemInfo, optional
        The DEM (``dem.path``): points take its height.  Otherwise the topography
        along the line, at their chainage, when given.
    far_off_line_m, ambiguity_m :
        As for the survey's points (:meth:`SurveyLine.place`).

    Returns
    -------
    Layout
        Rows whose kind is neither a station nor a shot get status ``unknown_kind``
        and go to ``unused`` with the other unusable rows.

    Raises
    ------
    InputError
        For an unreadable file, a missing coordinate or kind column, or a table with no CRS.
    """
    from .crs import from_lonlat
    from .io.points import add_flag, read_points, set_status

    t = read_points(plan, "plan points", extras=("kind", "depth"), section=key, numeric_extras=("depth",))
    f = t.frame.copy()
    if "kind" not in f.columns:
        raise InputError(f"plan '{plan.name}': the table has no kind column", file=plan.file, key=f"{key}.columns",
                         fix="add a column kind with 'station' or 'shot' in every row, or name it: "
                             f"[{key}.columns] kind = \"<column>\".")
    e, n = from_lonlat(crs, f["lon"].to_numpy(float), f["lat"].to_numpy(float))
    f["easting"], f["northing"] = e, n
    placed = line.place(e, n, far_off_line_m=far_off_line_m, ambiguity_m=ambiguity_m)
    usable = f["status"].to_numpy() == "ok"
    f["chainage_m"] = np.where(usable, placed["chainage_m"].to_numpy(), np.nan)
    f["crossline_m"] = np.where(usable, placed["crossline_m"].to_numpy(), np.nan)
    flags = f["flags"].astype(str)
    for word in ("beyond_line_end", "far_off_line", "ambiguous_foot"):
        flags = add_flag(flags, usable & placed["flags"].str.contains(word).to_numpy(), word)
    if dem is not None:
        from .io.dem import sample_dem

        z, why = sample_dem(dem.path, e, n, crs, band=dem_band)
        flags = add_flag(flags, usable & (why != ""), "outside_dem")
    elif topography is not None and len(topography):
        tc = topography["chainage_m"].to_numpy(float)
        z = np.interp(f["chainage_m"].to_numpy(float), tc, topography["elevation_m"].to_numpy(float))
        z[~((f["chainage_m"] >= tc.min()) & (f["chainage_m"] <= tc.max())).to_numpy()] = np.nan
        flags = add_flag(flags, usable & ~np.isfinite(z), "outside_dem")
    else:
        z = np.full(len(f), np.nan)
    f["dem_elevation_m"] = np.where(usable, z, np.nan)
    f["flags"] = flags.to_numpy(dtype=object)
    kind = f["kind"].astype(str).str.strip().str.lower()
    is_st = kind.isin(STATION_KINDS).to_numpy()
    is_sh = kind.isin(SHOT_KINDS).to_numpy()
    f["status"] = set_status(f["status"], ~(is_st | is_sh), "unknown_kind").to_numpy(dtype=object)
    depth = f["depth_m"].to_numpy(float)
    f["depth_m"] = np.where(np.isfinite(depth), depth, float(plan.shot_depth_m))
    cols = _POINT_COLUMNS + ["kind", "row"]
    ok_rows = f["status"].to_numpy() == "ok"
    stations = f.loc[is_st, cols].reset_index(drop=True)
    shots = f.loc[is_sh, cols + ["depth_m"]].reset_index(drop=True)
    unused = f.loc[~ok_rows, cols].reset_index(drop=True)
    return Layout(plan.name, stations, shots, "file", unused)


def layout_from_plan(plan, line, crs, *, key: str = "plans", topography: pd.DataFrame | None = None, dem=None,
                     dem_band: int = 1, far_off_line_m: float | None = None) -> Layout:
    """The layout of a :class:`~geosect.config.PlanInput`: its table when it names one, else its spacings."""
    if plan.file is not None:
        return layout_from_table(plan, line, crs, key=key, dem=dem, dem_band=dem_band, topography=topography,
                                 far_off_line_m=far_off_line_m)
    if plan.station_spacing_km is None or plan.shot_spacing_km is None:
        raise ConfigError(f"plan '{plan.name}' has neither a file nor both spacings", key=key,
                          fix="give file = \"plan.csv\", or station_spacing_km and shot_spacing_km.")
    return layout_along_line(line, crs, name=plan.name, station_spacing_m=plan.station_spacing_km * 1e3,
                             shot_spacing_m=plan.shot_spacing_km * 1e3, start_m=plan.start_km * 1e3,
                             end_m=None if plan.end_km is None else plan.end_km * 1e3,
                             shot_depth_m=plan.shot_depth_m, topography=topography, key=key)


def candidate_stations(line, crs, spacing_m: float, *, topography: pd.DataFrame | None = None,
                       start_m: float = 0.0, end_m: float | None = None) -> pd.DataFrame:
    """Candidate station positions every ``spacing_m`` along the section line (metres), placed like stations.

    On the line (crossline 0), from ``start_m`` to ``end_m`` (default the whole line),
    at the height of the topography where given (else at the datum).  Ids ``C001``, ...
    """
    end = line.length if end_m is None else float(end_m)
    return _points_along(line, crs, "C", float(start_m), end, float(spacing_m), topography)


# --------------------------------------------------------------------------- solving


def _depths(points: pd.DataFrame, source: bool) -> np.ndarray:
    """Depths below the datum (m) as the rays stage takes them: minus the height, plus a shot's depth."""
    from .stages import rays

    pts = points.reset_index(drop=True)
    return rays._source_depths(pts) if source else rays._receiver_depth(pts)


def _settings_for(settings, earth: str | None, max_offset_m: float | None, offset_mismatch: float | None):
    """A shallow copy of the settings with the Earth, offset limit and mismatch asked for (defaults otherwise)."""
    import copy

    from .config import ModelSettings, Settings

    s = copy.copy(settings) if settings is not None else Settings()
    s.rays = copy.copy(s.rays)
    if s.model is None:
        s.model = ModelSettings(file=Path("."), earth=earth or "auto")
    elif earth is not None:
        s.model = copy.copy(s.model)
        s.model.earth = earth
    if max_offset_m is not None:
        s.rays.max_offset_km = max_offset_m / 1e3
    if offset_mismatch is not None:
        s.rays.offset_mismatch = offset_mismatch
    return s


def iter_reflections(shots: pd.DataFrame, stations: pd.DataFrame, model, phases: Sequence[str], line, crs, *,
                     settings=None, earth: str | None = None, max_offset_m: float | None = None,
                     offset_mismatch: float | None = None, chunk_pairs: int = 500_000,
                     tracers: dict | None = None) -> Iterator[tuple[str, pd.DataFrame]]:
    """Solve every usable shot × usable station pair as the rays stage does; yield ``(phase, rows)`` per chunk.

    The pairs go through the rays stage's own steps (chunks of whole shots, pair
    geometry, the Earth chosen per chunk, the row builder of
    :mod:`geosect.stages.rays`: exact 1D solutions, or for a 2D model the 2D ray
    tracer), so a layout is computed exactly like the survey; nothing is written.

    Parameters
    ----------
    shots, stations : pandas.DataFrame
        Placed points (``id, easting, northing, lon, lat, chainage_m, crossline_m,
        elevation_m, dem_elevation_m, status``; shots may have ``depth_m``, below
        ground, m).
    model : LayeredModel
        1D or 2D.
    phases : sequence of str
        Phases to solve.
    line : SurveyLine
        The section line.
    crs : pyproj.CRS
        The working CRS.
    settings : Settings, optional
        The project's settings (``[rays]`` and ``[model] earth``); defaults otherwise.
    earth : {'auto', 'flat', 'spherical'}, optional
        Overrides ``[model] earth``: 'auto' is spherical for a chunk whose largest
        offset exceeds 100 km.
    max_offset_m, offset_mismatch : float, optional
        Override ``[rays] max_offset_km`` (in metres here) and ``offset_mismatch``.
    chunk_pairs : int
        At most this many pairs per chunk (whole shots), as the rays stage.
    tracers : dict, optional
        A cache of 2D ray tracers to share with the rays stage
        (``ctx.artefacts['_tracers']``).

    Yields
    ------
    phase : str
    rows : pandas.DataFrame
        The rays stage's columns (``shot_id, station_id, phase, offset_m, ...,
        point_chainage_m, point_depth_m, ..., status, flags, method``) plus
        ``source_depth_m, receiver_depth_m`` and ``spherical``, in shot-major order.
    """
    from .crs import WorkingCRS
    from .pairs import iter_pair_chunks
    from .pipeline import Context, Progress
    from .report import Report
    from .stages import rays

    s = _settings_for(settings, earth, max_offset_m, offset_mismatch)
    ctx = Context(s, Path("."), Report("planning (scratch)"), Progress(quiet=True))  # writes nothing
    ctx.artefacts.update(line=line, crs=WorkingCRS(crs, "working CRS"), placed_shots=shots, _path_shots=set())
    if tracers is not None:
        ctx.artefacts["_tracers"] = tracers
    parsed = {p: parse_phase(p) for p in phases}
    max_off = None if s.rays.max_offset_km is None else s.rays.max_offset_km * 1e3
    for sh, st, si, ri in iter_pair_chunks(shots, stations, None, max_pairs=chunk_pairs):  # chunks of shots
        geom = pair_geometry(sh, st, si, ri, line, offset_mismatch=s.rays.offset_mismatch, max_offset_m=max_off)
        zs = rays._source_depths(sh)[si]
        zr = rays._receiver_depth(st)[ri]
        off = geom["offset_m"].to_numpy()
        spherical = rays._earth(ctx, float(np.nanmax(off)) if len(off) else 0.0)
        ends = (sh["easting"].to_numpy(float)[si], sh["northing"].to_numpy(float)[si],
                st["easting"].to_numpy(float)[ri], st["northing"].to_numpy(float)[ri])
        for p in phases:
            rows = rays._phase_rows(ctx, model, p, parsed[p], geom, ends, zs, zr, spherical, crs)
            rows["source_depth_m"] = zs
            rows["receiver_depth_m"] = zr
            rows["spherical"] = spherical
            yield p, rows


def solve_reflections(shots: pd.DataFrame, stations: pd.DataFrame, model, phases: Sequence[str], line, crs,
                      **kw) -> dict[str, pd.DataFrame]:
    """All of :func:`iter_reflections` at once: one table per phase (shot-major order)."""
    parts: dict[str, list[pd.DataFrame]] = {p: [] for p in phases}
    for p, rows in iter_reflections(shots, stations, model, phases, line, crs, **kw):
        parts[p].append(rows)
    return {p: (pd.concat(v, ignore_index=True) if v else pd.DataFrame(columns=_KEEP + ["phase", "status"]))
            for p, v in parts.items()}


def _coverage_of(model, phase: str, rows: pd.DataFrame, edges_m, gap_m: float,
                 label: str | None) -> InterfaceCoverage:
    ph = parse_phase(phase)
    ch = rows["point_chainage_m"].to_numpy(float)
    has = np.isfinite(ch)
    r = rows.loc[has]
    xc = critical_distances(model, ph.target, r["source_depth_m"].to_numpy(float),
                            r["receiver_depth_m"].to_numpy(float), wave=ph.wave,
                            midpoint_chainage_m=r["midpoint_chainage_m"].to_numpy(float),
                            spherical=r["spherical"].to_numpy(bool))
    return interface_coverage(phase, ch[has], r["offset_m"].to_numpy(float), xc, edges_m, gap_m,
                              interface=ph.target, label=label)


def evaluate_layout(layout: Layout, model, phases: Sequence[str], line, crs, *, edges_m, gap_m: float,
                    labels: Mapping[str, str] | None = None, **kw) -> LayoutCoverage:
    """Coverage of a layout's reflection phases, computed like the survey's (nothing written per pair).

    Parameters
    ----------
    layout : Layout
    model, phases, line, crs :
        As :func:`iter_reflections`; ``phases`` should be reflections.
    edges_m : array_like
        Chainage bin edges, in metres (the survey's, so the folds line up).
    gap_m : float
        Gap threshold, in metres.
    labels : mapping, optional
        Phase → label.
    **kw :
        Passed to :func:`iter_reflections` (``settings``, ``earth``, ``tracers``, ...).
    """
    labels = dict(labels or {})
    keep: dict[str, list[pd.DataFrame]] = {p: [] for p in phases}
    for p, rows in iter_reflections(layout.shots, layout.stations, model, phases, line, crs, **kw):
        keep[p].append(rows.loc[np.isfinite(rows["point_chainage_m"].to_numpy(float)), _KEEP])
    covs = {}
    for p in phases:
        rows = pd.concat(keep[p], ignore_index=True) if keep[p] else pd.DataFrame(columns=_KEEP)
        covs[p] = _coverage_of(model, p, rows, edges_m, gap_m, labels.get(p))
    return LayoutCoverage(layout.name, layout.n_stations, layout.n_shots, layout.n_pairs, covs, layout.origin)


def survey_coverage(reflection_points: pd.DataFrame, model, phases: Sequence[str], *, edges_m, gap_m: float,
                    shots: pd.DataFrame | None = None, stations: pd.DataFrame | None = None,
                    labels: Mapping[str, str] | None = None, earth: str = "auto") -> dict[str, InterfaceCoverage]:
    """Coverage of the real survey from the rays stage's reflection points.

    Parameters
    ----------
    reflection_points : pandas.DataFrame
        Rows of ``rays`` with a reflection point (``shot_id, station_id, phase,
        offset_m, midpoint_chainage_m, point_chainage_m``, and ``method``, whose
        ``_spherical`` or ``_flattened`` ending says the row was solved on a sphere).
    model, phases, edges_m, gap_m, labels :
        As :func:`evaluate_layout`.
    shots, stations : pandas.DataFrame, optional
        The placed shots and stations, for the source and receiver depths that the
        critical distances need (depth 0 for pairs whose points are not found).
    earth : {'auto', 'flat', 'spherical'}
        Used only when the rows carry no ``method``.
    """
    labels = dict(labels or {})
    rp = reflection_points
    n = len(rp)
    zs = np.zeros(n)
    zr = np.zeros(n)
    if shots is not None and len(shots) and n:
        zmap = pd.Series(_depths(shots, True), index=shots["id"].to_numpy())
        zs = rp["shot_id"].map(zmap[~zmap.index.duplicated()]).fillna(0.0).to_numpy(float)
    if stations is not None and len(stations) and n:
        zmap = pd.Series(_depths(stations, False), index=stations["id"].to_numpy())
        zr = rp["station_id"].map(zmap[~zmap.index.duplicated()]).fillna(0.0).to_numpy(float)
    if n and "method" in rp.columns:
        sph = rp["method"].astype(str).str.endswith(("_spherical", "_flattened")).to_numpy()
    elif earth == "auto" and n:
        from .stages.rays import SPHERICAL_FROM_M

        sph = np.full(n, float(np.nanmax(rp["offset_m"].to_numpy(float))) > SPHERICAL_FROM_M)
    else:
        sph = np.full(n, earth == "spherical")
    col = (lambda c: rp[c].to_numpy()) if n else (lambda c: np.empty(0))
    full = pd.DataFrame({"phase": col("phase"), "offset_m": col("offset_m"),
                         "midpoint_chainage_m": col("midpoint_chainage_m"), "point_chainage_m": col("point_chainage_m"),
                         "source_depth_m": zs, "receiver_depth_m": zr, "spherical": sph})
    return {p: _coverage_of(model, p, full[full["phase"] == p], edges_m, gap_m, labels.get(p)) for p in phases}


def rank_candidates(points_m: Mapping[str, np.ndarray], shots: pd.DataFrame, candidates: pd.DataFrame, model,
                    phases: Sequence[str], line, crs, *, gap_m: float, **kw) -> dict[str, pd.DataFrame]:
    """Rank candidate station positions by how much each shrinks the largest gap of each interface.

    Every usable shot is solved with every candidate as a receiver, all in one
    chunk (for a 1D model one solve per phase for all candidates × shots together;
    a 2D model is traced shot by shot, all candidates at once); each candidate's
    reflection points are added to the survey's and the largest gap recomputed
    (:func:`geosect.coverage.gaps_after_adding`).

    Parameters
    ----------
    points_m : mapping
        Phase → chainages of the survey's reflection points on that interface, in metres.
    shots : pandas.DataFrame
        The survey's placed shots.
    candidates : pandas.DataFrame
        Placed candidate stations (see :func:`candidate_stations`).
    model, phases, line, crs :
        As :func:`iter_reflections`.
    gap_m : float
        Gap threshold, in metres.
    **kw :
        Passed to :func:`iter_reflections` (``settings``, ``earth``, ``tracers``, ...).

    Returns
    -------
    dict
        Phase → table of all usable candidates, best first: ``id, chainage_m,
        easting, northing, new_largest_gap_m, gap_start_m, gap_end_m, shrink_m,
        total_gap_m, new_points, exact``; its ``attrs['before_m']`` holds the ends
        of the largest gap now.
    """
    cand = candidates[candidates["status"] == "ok"].reset_index(drop=True)
    n_sh = int((shots["status"] == "ok").sum())
    n_c = len(cand)
    solved = solve_reflections(shots, cand, model, phases, line, crs, chunk_pairs=max(1, n_sh * n_c), **kw)
    out = {}
    for p in phases:
        rows = solved[p]
        if n_sh == 0 or n_c == 0:
            pch = np.full((n_c, 0), np.nan)
        else:
            pch = rows["point_chainage_m"].to_numpy(float).reshape(n_sh, n_c).T  # (candidates, shots)
        g = gaps_after_adding(points_m.get(p, np.empty(0)), pch, gap_m=gap_m)
        order = rank_by_gap(g, cand["chainage_m"].to_numpy(float))
        t = pd.DataFrame({"id": cand["id"].to_numpy(), "chainage_m": cand["chainage_m"].to_numpy(float),
                          "easting": cand["easting"].to_numpy(float), "northing": cand["northing"].to_numpy(float),
                          "new_largest_gap_m": g.largest_m, "gap_start_m": g.start_m, "gap_end_m": g.end_m,
                          "shrink_m": g.shrink_m, "total_gap_m": g.total_gap_m, "new_points": g.inside,
                          "exact": g.exact}).iloc[order].reset_index(drop=True)
        t.attrs["before_m"] = g.before_m
        out[p] = t
    return out


def summary_table(results: Sequence[LayoutCoverage]) -> pd.DataFrame:
    """One row per layout × reflection phase: counts, span covered, largest gap, wide-angle offsets.

    Columns ``layout, stations, shots, pairs, phase, interface, span_start_m,
    span_end_m, covered_m, largest_gap_m, gaps, max_offset_m, critical_distance_m,
    wide_angle_pairs, wide_angle_reached``.
    """
    rows = []
    for r in results:
        for p, c in r.coverages.items():
            rows.append({"layout": r.name, "stations": r.n_stations, "shots": r.n_shots, "pairs": r.n_pairs,
                         "phase": p, "interface": c.interface, "span_start_m": c.span_m[0],
                         "span_end_m": c.span_m[1], "covered_m": c.covered_m, "largest_gap_m": c.largest_gap_m,
                         "gaps": c.n_gaps, "max_offset_m": c.max_offset_m, "critical_distance_m": c.wide.critical_m,
                         "wide_angle_pairs": c.wide.count, "wide_angle_reached": "yes" if c.wide.reached else "no"})
    cols = ["layout", "stations", "shots", "pairs", "phase", "interface", "span_start_m", "span_end_m", "covered_m",
            "largest_gap_m", "gaps", "max_offset_m", "critical_distance_m", "wide_angle_pairs", "wide_angle_reached"]
    return pd.DataFrame(rows, columns=cols)
