"""Benchmark: 100 shots × 1000 stations × 3 reflection phases on a 2D model with gradients.

A synthetic straight section line of 200 km (UTM zone 33N, invented), 100 shots every
2 km and 1000 stations every 200 m on it with an invented topography (500-2500 m), and
the sample project's 2D model (:func:`geosect.model.sample.sample_model`, synthetic:
interfaces varying along chainage, velocity gradients, the topography on top) with
the phases PmP, PcP-like ``reflection:conrad`` and SmS.  Reported:

* the rays stage (:func:`geosect.stages.rays.compute_rays`: chunks of shots, the 2D
  ray tracer shot by shot, ``rays.csv`` written): time, peak traced numpy memory
  (``tracemalloc``) and the growth of the process's maximum resident set size
  (``resource.getrusage``);
* the same pairs through :func:`geosect.planning.solve_reflections` (the same row
  builder, nothing written), time and memory likewise;
* the baseline, measured in the same run: the same 10^5 offsets and depths solved as one
  call per phase of the flat (1D) model under the middle of the line; the ratios above
  are against it.

The Earth is flat by default; ``--earth auto`` traces chunks whose offsets exceed
100 km through the Earth-flattened model, as ``[model] earth = "auto"`` does.  The rays
stage's memory is traced in a first run and its time taken from a second, untraced one;
the planning path is timed once, untraced.  Usage::

    python benchmarks/bench_pairs.py                 # 100 shots x 1000 stations
    python benchmarks/bench_pairs.py --quick         # 20 shots x 300 stations
    python benchmarks/bench_pairs.py --earth auto
"""

from __future__ import annotations

import argparse
import resource
import tempfile
import time
import tracemalloc
from pathlib import Path

import numpy as np
import pandas as pd
from pyproj import CRS

from geosect.config import ModelSettings, Settings
from geosect.crs import WorkingCRS, to_lonlat
from geosect.line import SurveyLine
from geosect.model.sample import sample_model
from geosect.pairs import pair_geometry, pair_index
from geosect.pipeline import Context, Progress
from geosect.planning import solve_reflections
from geosect.report import Report

PHASES = ["reflection:conrad", "reflection:moho", "S:reflection:moho"]
CRS33 = CRS.from_epsg(32633)


def topography(ch):
    """Invented heights along the line, m."""
    return 1500.0 + 1000.0 * np.sin(np.asarray(ch) / 30e3)


def points(line, ch, prefix, rng) -> pd.DataFrame:
    e, n = line.position(ch)
    lon, lat = to_lonlat(CRS33, e, n)
    elev = topography(ch) + rng.normal(0, 3.0, ch.size)
    return pd.DataFrame({"id": [f"{prefix}{k:04d}" for k in range(ch.size)], "easting": e, "northing": n,
                         "lon": lon, "lat": lat, "elevation_m": elev, "dem_elevation_m": np.nan, "chainage_m": ch,
                         "crossline_m": 0.0, "status": "ok", "flags": ""})


def rss_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def measure(fn, repeats: int = 2):
    """(best time s, traced peak MB, max RSS growth MB) of fn(); the first run is traced, the others timed."""
    rss0 = rss_mb()
    tracemalloc.start()
    fn()
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    grew = rss_mb() - rss0
    best = np.inf
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best, peak / 2**20, grew


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="20 shots x 300 stations")
    ap.add_argument("--earth", choices=("flat", "auto", "spherical"), default="flat", help="Earth shape")
    args = ap.parse_args()
    n_shots, n_st = (20, 300) if args.quick else (100, 1000)
    rng = np.random.default_rng(11)
    line = SurveyLine([420_000.0, 620_000.0], [5_050_000.0, 5_050_000.0], name="bench (synthetic)")
    shots = points(line, np.linspace(0.0, 198e3, n_shots) + 1e3, "S", rng)
    shots["depth_m"] = 30.0
    stations = points(line, np.linspace(0.0, 200e3, n_st), "R", rng)
    model = sample_model(line.length / 1e3)
    tc = np.linspace(0.0, line.length, 801)
    model.set_topography(tc, topography(tc))
    n_pairs = n_shots * n_st
    print(f"{n_shots} shots x {n_st} stations = {n_pairs:,} pairs x {len(PHASES)} phases on {model!r}, "
          f"Earth {args.earth}", flush=True)

    from geosect.stages import rays

    tmp = Path(tempfile.mkdtemp(prefix="bench-pairs-"))
    s = Settings()
    s.model = ModelSettings(file=tmp / "model.toml", earth=args.earth)
    s.rays.phases = PHASES

    tracers: dict = {}  # the 2D ray tracers, built once and shared as in a build

    def rays_stage(sh=shots):
        ctx = Context(s, tmp, Report("bench"), Progress(quiet=True))
        ctx.artefacts.update(line=line, crs=WorkingCRS(CRS33, "bench"), placed_shots=sh,
                             placed_stations=stations, model=model, _tracers=tracers)
        rays.compute_rays(ctx)
        return ctx

    def planning_path(sh=shots):
        return solve_reflections(sh, stations, model, PHASES, line, CRS33, settings=s, tracers=tracers)

    # baseline: the same pairs as one call per phase of the flat model under the middle of the line
    si, ri = pair_index(n_shots, n_st)
    geom = pair_geometry(shots, stations, si, ri, line)
    off = geom["offset_m"].to_numpy()
    zs = -shots["elevation_m"].to_numpy()[si] + 30.0
    zr = -stations["elevation_m"].to_numpy()[ri]
    flat = model.column(100e3)

    def baseline():
        for p in PHASES:
            flat.solve(off, p, source_depth_m=zs, receiver_depth_m=zr, spherical=False)

    baseline()  # load the kernels
    rays_stage(shots.iloc[:2])  # and the other paths' (numba, caches), on two shots
    planning_path(shots.iloc[:2])
    t_base, m_base, r_base = measure(baseline)
    print(f"{'baseline: flat model, one call/phase':<40} {t_base:8.2f} s  {t_base / n_pairs * 1e6:8.2f} us/pair  "
          f"traced peak {m_base:6.0f} MB  max RSS grew {r_base:6.0f} MB", flush=True)
    t, m, r = measure(rays_stage, repeats=1)
    print(f"{'rays stage (writes rays.csv)':<40} {t:8.2f} s  {t / n_pairs * 1e6:8.2f} us/pair  "
          f"ratio to baseline {t / t_base:7.1f}  traced peak {m:6.0f} MB  max RSS grew {r:6.0f} MB", flush=True)
    t0 = time.perf_counter()
    planning_path()
    t = time.perf_counter() - t0
    print(f"{'planning.solve_reflections (no file)':<40} {t:8.2f} s  {t / n_pairs * 1e6:8.2f} us/pair  "
          f"ratio to baseline {t / t_base:7.1f}", flush=True)
    n_rows = sum(1 for _ in open(tmp / "rays.csv")) - 1
    size = (tmp / "rays.csv").stat().st_size / 2**20
    print(f"rays.csv: {n_rows:,} rows, {size:.0f} MB; max RSS of the run {rss_mb():.0f} MB")


if __name__ == "__main__":
    main()
