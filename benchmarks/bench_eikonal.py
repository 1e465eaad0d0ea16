"""Benchmark: fast-marching travel times on a 300 km x 60 km section, per shot.

A synthetic three-layer crust (tops 0, 20 and 35 km; 5.8, 6.5 and 8.04 km/s,
optionally a gradient in the top layer) with one shot at chainage 0 and a
receiver every kilometre along the surface.  For each grid spacing the script
measures, in a fresh child process each time (so that memory is that of one
shot):

* wall time per shot of ``first`` (multistage), ``first`` with
  ``method='grid'`` (one march), ``head:moho`` and ``reflection:moho``;
* the peak resident memory added by the shot (RSS) and the bytes of the
  arrays the time field keeps;
* the accuracy against the exact 1D solver (``LayeredModel.traveltime``):
  largest error in ms and whether every receiver meets the target of 0.1 % of
  the travel time or 10 ms, whichever is larger.

The baseline, measured in the same run on the same grid, is the shortest-path
method (Dijkstra on the 8-connected node graph, ``scipy.sparse.csgraph``): the
ratio columns give its time over ours and its error over ours.

Usage::

    python benchmarks/bench_eikonal.py            # spacings 1000, 500, 250 m (about a minute)
    python benchmarks/bench_eikonal.py --full     # also 125 m
    python benchmarks/bench_eikonal.py --gradient # 0.01 /s in the top layer
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import textwrap

CHILD = textwrap.dedent(r"""
    import json, resource, sys, time
    import numpy as np
    from geosect.model import LayeredModel
    from geosect.model import eikonal as E

    h, grad = float(sys.argv[1]), float(sys.argv[2])
    m = LayeredModel.flat([0, 20e3, 35e3], [5800, 6500, 8040], names=["surface", "mid-crust", "moho"],
                          gradients=[grad, 0.0, 0.0])
    sec = E.LayerSection.from_model(m)
    x = np.arange(0.0, 300e3 + 1.0, 1000.0)
    kw = dict(spacing_m=h, chainage_range_m=(0.0, 300e3), max_depth_m=60e3)
    # load the compiled kernels outside the timing (a tiny grid)
    E.time_field(sec, 0.0, 0.0, "first", spacing_m=5000.0).read([1e4], 0.0)
    rss0 = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    out = {}
    for phase, method in (("first", "multistage"), ("first", "grid"), ("head:moho", "multistage"),
                          ("reflection:moho", "multistage")):
        t0 = time.perf_counter()
        fld = E.time_field(sec, 0.0, 0.0, phase, method=method, **kw)
        r = fld.read(x, 0.0)
        dt = time.perf_counter() - t0
        ref = m.traveltime(x, phase)
        ok = (r.status == "ok") & np.isfinite(ref)
        err = np.abs(r.time_s[ok] - ref[ok])
        target = np.maximum(1e-3 * ref[ok], 0.010)
        held = sum(st.T.nbytes + st.region.nbytes for st in
                   list(fld._solver._D.values()) + list(fld._solver._U.values())
                   + list(fld._solver._R.values()) + [fld._solver._grid_stage] if st is not None)
        key = phase if method == "multistage" else "first(grid)"
        out[key] = dict(time_s=dt, max_err_ms=1e3 * float(err.max()), n=int(ok.sum()),
                        meets=bool(np.all(err <= target)), held_mb=held / 1e6,
                        status_agree=int(np.sum(r.status == np.where(np.isfinite(ref), "ok", r.status))))
        del fld
    out["rss_mb"] = (resource.getrusage(resource.RUSAGE_SELF).ru_maxrss - rss0) / 1024.0
    out["shape"] = list(E.time_field(sec, 0.0, 0.0, "direct", **kw).shape)
    print(json.dumps(out))
""")

BASELINE = textwrap.dedent(r"""
    import json, sys, time
    import numpy as np
    from scipy import sparse
    from scipy.sparse.csgraph import dijkstra
    from geosect.model import LayeredModel

    h, grad = float(sys.argv[1]), float(sys.argv[2])
    m = LayeredModel.flat([0, 20e3, 35e3], [5800, 6500, 8040], names=["surface", "mid-crust", "moho"],
                          gradients=[grad, 0.0, 0.0])
    xg = np.arange(0.0, 300e3 + 0.5 * h, h)
    zg = np.arange(0.0, 60e3 + 0.5 * h, h)
    nz, nx = zg.size, xg.size
    t0 = time.perf_counter()
    X, Z = np.meshgrid(xg, zg)
    s = 1.0 / m.velocity(X, Z)
    idx = np.arange(nz * nx).reshape(nz, nx)
    rows, cols, w = [], [], []
    for dj, di in ((0, 1), (1, 0), (1, 1), (1, -1)):
        if di >= 0:
            a = idx[0:nz - dj, 0:nx - di]
            b = idx[dj:nz, di:nx]
        else:
            a = idx[0:nz - dj, -di:nx]
            b = idx[dj:nz, 0:nx + di]
        sa = s.ravel()[a.ravel()]
        sb = s.ravel()[b.ravel()]
        rows.append(a.ravel())
        cols.append(b.ravel())
        w.append(0.5 * (sa + sb) * h * np.hypot(dj, di))
    G = sparse.coo_matrix((np.concatenate(w), (np.concatenate(rows), np.concatenate(cols))),
                          shape=(nz * nx, nz * nx)).tocsr()
    d = dijkstra(G, directed=False, indices=0)
    dt = time.perf_counter() - t0
    x = np.arange(0.0, 300e3 + 1.0, 1000.0)
    ti = np.interp(x, xg, d[:nx])
    ref = m.traveltime(x, "first")
    print(json.dumps(dict(time_s=dt, max_err_ms=1e3 * float(np.max(np.abs(ti - ref))))))
""")


def run(script: str, h: float, grad: float) -> dict:
    res = subprocess.run([sys.executable, "-c", script, str(h), str(grad)], capture_output=True,
                         text=True, check=True)
    return json.loads(res.stdout.strip().splitlines()[-1])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--full", action="store_true", help="also the 125 m grid")
    ap.add_argument("--gradient", type=float, default=0.0,
                    help="velocity gradient in the top layer, 1/s (default 0)")
    args = ap.parse_args()
    spacings = [1000.0, 500.0, 250.0] + ([125.0] if args.full else [])
    print("synthetic 3-layer section 300 km x 60 km, one shot, 301 surface receivers; "
          f"top-layer gradient {args.gradient} /s")
    print("accuracy target: 0.1 % of the time or 10 ms (larger); reference LayeredModel.traveltime")
    print(f"{'h m':>6} {'grid':>11} {'phase':>16} {'s/shot':>7} {'max err ms':>10} {'target':>6} "
          f"{'held MB':>7} {'RSS MB':>7} {'dijkstra s':>10} {'t ratio':>7} {'err ratio':>9}")
    for h in spacings:
        ours = run(CHILD, h, args.gradient)
        base = run(BASELINE, h, args.gradient)
        shape = "x".join(str(v) for v in ours["shape"])
        for phase in ("first", "first(grid)", "head:moho", "reflection:moho"):
            r = ours[phase]
            extra = ""
            if phase.startswith("first"):
                extra = (f"{base['time_s']:10.2f} {base['time_s'] / r['time_s']:7.2f} "
                         f"{base['max_err_ms'] / max(r['max_err_ms'], 1e-6):9.1f}")
            print(f"{h:6.0f} {shape:>11} {phase:>16} {r['time_s']:7.2f} {r['max_err_ms']:10.2f} "
                  f"{'yes' if r['meets'] else 'NO':>6} {r['held_mb']:7.1f} {ours['rss_mb']:7.1f} "
                  f"{extra}")
    print("t ratio = Dijkstra time / ours; err ratio = Dijkstra error / ours (first arrivals)")


if __name__ == "__main__":
    main()
