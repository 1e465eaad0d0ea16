"""Benchmark: exact 1D reflection times for a million offsets against TauP's cost per ray.

Run with ``python benchmarks/bench_1d.py [--n 1000000] [--taup-calls 40]``.

The model is the iasp91 crust (Kennett & Engdahl 1991: 0-20 km 5.8 km/s, 20-35 km
6.5 km/s, mantle 8.04 km/s).  geosect solves the Moho reflection for ``n`` offsets
between 0 and 300 km at once, on a flat and on a spherical Earth.  TauP
(obspy.taup, model "iasp91") computes the same phase ('PvmP') one distance per
call; a few dozen calls give its cost per ray, scaled to ``n`` rays.  Both are
timed in this run, so the printed ratios do not depend on the machine.  The
goal is ``n = 10**6`` offsets well under one second.
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from geosect.model import LayeredModel


def best_of(fn, repeat: int = 3) -> float:
    """Shortest wall time of ``repeat`` calls, seconds."""
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=1_000_000, help="number of offsets")
    ap.add_argument("--taup-calls", type=int, default=40, help="TauP calls to time")
    args = ap.parse_args()

    model = LayeredModel.flat([0, 20e3, 35e3], [5800, 6500, 8040],
                              names=["surface", "mid-crust", "moho"])
    x = np.linspace(0.0, 300e3, args.n)
    # warm-up: compiles the kernels (numba caches them on disk after the first run)
    model.traveltime(x[:100], "reflection:moho")
    model.traveltime(x[:100], "reflection:moho", spherical=True)

    t_flat = best_of(lambda: model.traveltime(x, "reflection:moho"))
    t_sph = best_of(lambda: model.traveltime(x, "reflection:moho", spherical=True))

    t_taup = float("nan")
    try:
        from obspy.taup import TauPyModel
    except ImportError:  # pragma: no cover - obspy is a test dependency
        TauPyModel = None
    if TauPyModel is not None:
        taup = TauPyModel("iasp91")
        deg = np.linspace(50.0, 300.0, args.taup_calls) / (6371.0 * np.pi / 180.0)
        taup.get_travel_times(0.0, float(deg[0]), phase_list=["PvmP"])  # warm-up
        t0 = time.perf_counter()
        for d in deg:  # TauP takes one distance per call
            taup.get_travel_times(0.0, float(d), phase_list=["PvmP"])
        t_taup = (time.perf_counter() - t0) / deg.size

    taup_n = t_taup * args.n
    print(f"Moho reflection, {args.n:,} offsets (0-300 km), iasp91 crust")
    print(f"  geosect flat Earth      {t_flat:8.3f} s   {1e9 * t_flat / args.n:8.1f} ns/ray")
    print(f"  geosect spherical Earth {t_sph:8.3f} s   {1e9 * t_sph / args.n:8.1f} ns/ray")
    print(f"  TauP (per call, scaled) {taup_n:8.1f} s   {1e9 * t_taup:8.1f} ns/ray "
          f"({args.taup_calls} calls timed)")
    print(f"  ratio TauP / geosect:   flat {taup_n / t_flat:10.0f}x   "
          f"spherical {taup_n / t_sph:10.0f}x")
    goal = "met" if max(t_flat, t_sph) < 1.0 else "NOT met"
    print(f"  goal (10^6 offsets well under 1 s): {goal} for n = {args.n:,}")


if __name__ == "__main__":
    main()
