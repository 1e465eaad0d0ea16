"""Benchmark: CMP binning of 10^7 source-receiver pairs, chunked.

A synthetic crooked binning line (2000 vertices, about 150 km) with 10 m bins,
and 10^7 invented source-receiver pairs scattered about it.  Reports, for
``bin_pairs`` with ``keep_pairs=False`` and ``True``:

* time per pair (the better of two runs; the machine is shared, so single
  timings vary by tens of per cent), and its ratio to a baseline measured in the same run: the bare
  ``SurveyLine.locate`` of the precomputed midpoints (the irreducible part), so
  the ratio is the cost of midpoints + binning + statistics on top of placing;
* peak memory above the inputs: numpy allocations traced with ``tracemalloc``
  (the numba kernels' own buffers are not traced), and the growth of the
  process's maximum resident set size (``resource.getrusage``).

Usage::

    python benchmarks/bench_binning.py           # 10^7 pairs
    python benchmarks/bench_binning.py --quick   # 10^6 pairs
"""

from __future__ import annotations

import argparse
import resource
import time
import tracemalloc

import numpy as np

from geosect.binning import BinGrid, bin_pairs, midpoints
from geosect.line import SurveyLine


def meander(m: int, seed: int, step: float = 75.0) -> SurveyLine:
    rng = np.random.default_rng(seed)
    heading = np.clip(np.cumsum(rng.normal(0.0, 0.1, m - 1)), -1.0, 1.0)
    d = rng.uniform(0.5, 1.5, m - 1) * step
    x = 350_000.0 + np.concatenate([[0.0], np.cumsum(d * np.cos(heading))])
    y = 4_700_000.0 + np.concatenate([[0.0], np.cumsum(d * np.sin(heading))])
    return SurveyLine(x, y, name="bench-binning")


def rss_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="10^6 pairs instead of 10^7")
    ap.add_argument("--chunk", type=int, default=1_000_000, help="pairs per chunk")
    args = ap.parse_args()
    npairs = 10**6 if args.quick else 10**7

    line = meander(2000, seed=4)
    grid = BinGrid(line, 10.0)
    rng = np.random.default_rng(0)
    s_src = rng.uniform(0, line.length, npairs)
    s_rec = np.clip(s_src + rng.normal(0, 4000.0, npairs), -500, line.length + 500)
    se, sn = line.position(s_src, rng.normal(0, 150.0, npairs))
    re, rn = line.position(s_rec, rng.normal(0, 150.0, npairs))
    del s_src, s_rec
    inputs_mb = 4 * npairs * 8 / 2**20
    print(f"pairs {npairs:,}  bins {grid.n_bins:,}  line {line.length / 1000:.1f} km, {line.n_vertices} vertices, "
          f"inputs {inputs_mb:.0f} MB, chunk {args.chunk:,}")
    bin_pairs(grid, se[:1000], sn[:1000], re[:1000], rn[:1000])  # load the kernels

    # baseline: locate the midpoints, nothing else (chunked the same way)
    base = np.inf
    for _ in range(2):  # the better of two runs (the first also touches fresh memory)
        t0 = time.perf_counter()
        for lo in range(0, npairs, args.chunk):
            me, mn = midpoints(se[lo:lo + args.chunk], sn[lo:lo + args.chunk],
                               re[lo:lo + args.chunk], rn[lo:lo + args.chunk])
            line.locate(me, mn)
        base = min(base, time.perf_counter() - t0)
    del me, mn
    print(f"{'baseline: midpoints + locate':<34} {base:7.2f} s  {base / npairs * 1e9:7.1f} ns/pair")

    for keep in (False, True):
        rss0 = rss_mb()
        tracemalloc.start()
        res = bin_pairs(grid, se, sn, re, rn, chunk=args.chunk, keep_pairs=keep)
        _, peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
        rss1 = rss_mb()
        del res
        dt = np.inf
        for _ in range(2):  # timing without tracemalloc, the better of two runs
            t0 = time.perf_counter()
            res = bin_pairs(grid, se, sn, re, rn, chunk=args.chunk, keep_pairs=keep)
            dt = min(dt, time.perf_counter() - t0)
        kept_mb = (5 * npairs * 8 / 2**20) if keep else 0.0
        label = f"bin_pairs(keep_pairs={keep})"
        print(f"{label:<34} {dt:7.2f} s  {dt / npairs * 1e9:7.1f} ns/pair  ratio to baseline {dt / base:5.2f}  "
              f"traced peak {peak / 2**20:7.0f} MB (per-pair output {kept_mb:.0f} MB, "
              f"temporaries {peak / 2**20 - kept_mb:.0f} MB)  max RSS grew {rss1 - rss0:6.0f} MB")
        assert res.fold.sum() + res.n_outside + res.n_bad == npairs
        del res
    print(f"max RSS of the run {rss_mb():.0f} MB")


if __name__ == "__main__":
    main()
