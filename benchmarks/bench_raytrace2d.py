"""Benchmark: 2D two-point ray tracing, shot by shot.

A synthetic 2D model (invented numbers: topography, an upper crust whose
velocity changes along the line, a dipping mid-crustal boundary, a Moho ramp;
every layer with a vertical gradient) and a 120 km line of 1000 receivers on
the topography.  100 shots along the line, three reflections each
(``reflection:conrad``, ``reflection:moho`` and ``S:reflection:conrad``), are
traced with :class:`geosect.model.raytrace2d.RayTracer2D`.

The baseline, measured in the same run, is the exact 1D solver
(``LayeredModel.traveltime``) on a flat 1D model of the same layers, for the
same number of source-receiver pairs; the 2D tracer is also run on that flat
model, and its times are compared with the 1D solver's.

Prints the time per shot, rays per second, and the ratios.  Goal: the whole
benchmark under 30 s on 2 cores.

Usage::

    python benchmarks/bench_raytrace2d.py            # 100 shots
    python benchmarks/bench_raytrace2d.py --quick    # 10 shots
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from geosect.model import Interface, Layer, LayeredModel
from geosect.model.raytrace2d import RayTracer2D

LENGTH = 120e3
PHASES = ("reflection:conrad", "reflection:moho", "S:reflection:conrad")


def synthetic_model() -> tuple[LayeredModel, np.ndarray, np.ndarray]:
    """An invented 2D crustal model with topography (synthetic), and the topography."""
    xt = np.linspace(0.0, LENGTH, 481)
    elev = 700.0 + 900.0 * np.exp(-((xt - 70e3) / 18e3) ** 2) + 40.0 * np.sin(xt / 2500.0)
    itf = [
        Interface("surface", [0.0], [0.0]),
        Interface("conrad", [0.0, 40e3, 80e3, LENGTH], [15e3, 16e3, 21e3, 20e3], "conrad"),
        Interface("moho", [0.0, 50e3, 62e3, LENGTH], [31e3, 32e3, 46e3, 48e3], "moho"),
    ]
    lay = [
        Layer("upper crust", [5400.0, 5900.0, 5700.0], [6100.0, 6250.0, 6200.0],
              [0.0, 60e3, LENGTH], vpvs=1.72),
        Layer("lower crust", [6500.0, 6600.0], [6900.0, 7000.0], [0.0, LENGTH], vpvs=1.78),
        Layer("mantle", 8000.0, None, None, vp_gradient_per_s=0.002, vpvs=1.76),
    ]
    m = LayeredModel(itf, lay, top="dem", name="benchmark transect (synthetic)")
    m.set_topography(xt, elev)
    return m, xt, elev


def flat_model() -> LayeredModel:
    """A flat model with the same layers (for the 1D baseline)."""
    return LayeredModel.flat([0.0, 17e3, 38e3], [5700.0, 6550.0, 8000.0],
                             names=["surface", "conrad", "moho"], gradients=[0.03, 0.02, 0.002],
                             vpvs=[1.72, 1.78, 1.76])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="10 shots instead of 100")
    ap.add_argument("--receivers", type=int, default=1000)
    args = ap.parse_args()
    n_shots = 10 if args.quick else 100

    model, xt, elev = synthetic_model()
    rx = np.linspace(0.0, LENGTH, args.receivers)
    rz = -np.interp(rx, xt, elev)
    shots = np.linspace(1e3, LENGTH - 1e3, n_shots)
    tracer = RayTracer2D(model, surface_chainage_m=rx, surface_depth_m=rz)

    # warm-up (compilation) outside the timing
    t0 = time.perf_counter()
    tracer.trace(shots[0], float(np.interp(shots[0], rx, rz)), rx[:50], rz[:50], PHASES[0],
                 n_rays=31)
    warm = time.perf_counter() - t0

    t0 = time.perf_counter()
    rays = 0
    ok = 0
    pairs = 0
    for xs in shots:
        zs = float(np.interp(xs, rx, rz))
        for ph in PHASES:
            r = tracer.trace(xs, zs, rx, rz, ph)
            rays += r.n_traced
            ok += int((r.status == "ok").sum())
            pairs += rx.size
    t2d = time.perf_counter() - t0

    # flat case: 2D tracer against the exact 1D solver, same number of pairs
    flat = flat_model()
    tracer_flat = RayTracer2D(flat)
    zero = np.zeros_like(rx)
    t0 = time.perf_counter()
    worst = 0.0
    for xs in shots[: max(n_shots // 10, 1)]:
        for ph in PHASES:
            r = tracer_flat.trace(xs, 0.0, rx, zero, ph)
            t1 = flat.traveltime(np.abs(rx - xs), ph)
            both = np.isfinite(t1) & (r.status == "ok")
            if both.any():
                worst = max(worst, float(np.max(np.abs(r.time_s[both] - t1[both]))))
    tflat_real = time.perf_counter() - t0
    tflat2d = tflat_real * (n_shots / max(n_shots // 10, 1))
    t0 = time.perf_counter()
    for xs in shots:
        for ph in PHASES:
            flat.traveltime(np.abs(rx - xs), ph)
    t1d = time.perf_counter() - t0

    print(f"2D model, {n_shots} shots x {rx.size} receivers x {len(PHASES)} phases "
          f"({pairs} source-receiver pairs, {ok} with a ray)")
    print(f"  compile/warm-up            {warm:8.2f} s (not counted)")
    print(f"  2D tracer, 2D model        {t2d:8.2f} s   {1e3 * t2d / (n_shots * len(PHASES)):7.1f} ms "
          f"per shot and phase   {rays / t2d:10.0f} rays/s   ({rays / pairs:.2f} rays per pair)")
    print(f"  2D tracer, flat model      {tflat2d:8.2f} s   (scaled from {max(n_shots // 10, 1)} "
          f"shots; largest difference from the 1D solver {worst * 1e6:.3f} us)")
    print(f"  1D solver, flat model      {t1d:8.2f} s")
    print(f"  ratio 2D model / 1D solver {t2d / t1d:8.1f}x slower")
    print(f"  ratio flat 2D / 1D solver  {tflat2d / t1d:8.1f}x slower")
    print(f"  total (as run)             {warm + t2d + tflat_real + t1d:8.2f} s (goal: under 30 s)")


if __name__ == "__main__":
    main()
