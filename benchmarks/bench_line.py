"""Benchmark: placing points on a crooked line, geosect against shapely 2.

Synthetic crooked lines of 10^3 and 10^4 vertices (meandering random walks that
never cross themselves) and 10^4 .. 10^6 points scattered about them.  For each
case the same points are placed by ``SurveyLine.locate`` and by shapely's
``line_locate_point`` + ``distance`` (the baseline, measured in the same run;
on a subsample where shapely would need more than the time budget, its time
scaled linearly to all points).  Prints microseconds per point, the speed ratio
and the largest chainage difference where the nearest foot is unique.

Usage::

    python benchmarks/bench_line.py            # full run (a few minutes)
    python benchmarks/bench_line.py --quick    # small run (seconds)
"""

from __future__ import annotations

import argparse
import time

import numpy as np
import shapely

from geosect.line import SurveyLine


def meander(m: int, seed: int, step: float = 100.0) -> SurveyLine:
    """A synthetic crooked line whose heading stays within 80 degrees of a base direction."""
    rng = np.random.default_rng(seed)
    heading = np.clip(np.cumsum(rng.normal(0.0, 0.25, m - 1)), -1.4, 1.4) + 0.4
    d = rng.uniform(0.3, 1.7, m - 1) * step
    x = 450_000.0 + np.concatenate([[0.0], np.cumsum(d * np.cos(heading))])
    y = 5_100_000.0 + np.concatenate([[0.0], np.cumsum(d * np.sin(heading))])
    return SurveyLine(x, y, name=f"bench-{m}")


def scatter(line: SurveyLine, n: int, seed: int, spread: float = 300.0):
    rng = np.random.default_rng(seed)
    s = rng.uniform(-0.02, 1.02, n) * line.length
    return line.position(s, rng.normal(0.0, spread, n))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="small run: fewer points, 2 s shapely budget")
    ap.add_argument("--budget", type=float, default=None, help="seconds allowed for shapely per case")
    args = ap.parse_args()
    sizes = [10**4, 10**5] if args.quick else [10**4, 10**5, 10**6]
    budget = args.budget or (2.0 if args.quick else 20.0)

    print(f"{'vertices':>8} {'points':>8} {'geosect us/pt':>14} {'shapely us/pt':>14} {'ratio':>8} "
          f"{'shapely n':>9} {'max |ds| m':>11} {'place us/pt':>12}")
    for m in (10**3, 10**4):
        line = meander(m, seed=m)
        line.locate([0.0], [0.0])  # compile / load the kernels outside the timing
        ls = shapely.LineString(np.column_stack(line.vertices))
        shapely.prepare(ls)
        # shapely's cost per point does not depend on how many points: probe it
        pe, pn = scatter(line, 200, seed=1)
        t0 = time.perf_counter()
        shapely.line_locate_point(ls, shapely.points(pe, pn))
        shapely.distance(ls, shapely.points(pe, pn))
        probe = (time.perf_counter() - t0) / 200
        for n in sizes:
            e, n_ = scatter(line, n, seed=n + m)
            t0 = time.perf_counter()
            ch, xl = line.locate(e, n_)
            ours = (time.perf_counter() - t0) / n
            t0 = time.perf_counter()
            line.place(e, n_, far_off_line_m=1000.0)
            place = (time.perf_counter() - t0) / n
            ns = int(min(n, max(100, budget / probe)))
            pts = shapely.points(e[:ns], n_[:ns])
            t0 = time.perf_counter()
            ref_s = shapely.line_locate_point(ls, pts)
            ref_d = shapely.distance(ls, pts)
            theirs = (time.perf_counter() - t0) / ns
            # compare where the foot is unique: no second foot within 1 mm of distance
            amb = line.ambiguous(e[:ns], n_[:ns], ambiguity_m=1e-3, gap_m=0.0)
            unique = ~amb & (ch[:ns] >= 0) & (ch[:ns] <= line.length)
            ds = float(np.max(np.abs(ch[:ns][unique] - ref_s[unique]))) if unique.any() else float("nan")
            dd = float(np.max(np.abs(np.abs(xl[:ns][unique]) - ref_d[unique]))) if unique.any() else float("nan")
            assert dd < 1e-6, f"distance differs from shapely by {dd} m"
            print(f"{m:>8} {n:>8} {ours * 1e6:>14.3f} {theirs * 1e6:>14.2f} {theirs / ours:>8.0f} "
                  f"{ns:>9} {ds:>11.2e} {place * 1e6:>12.3f}")


if __name__ == "__main__":
    main()
