"""Benchmark of the map page: file size and offline load time in headless Chromium.

Invented data (geosect.web.synthetic) with 10^3 and 10^4 stations, the page's
maximum of 5000 midpoints and 5000 reflection points, geology, faults, bins,
hypocentres and a small synthetic DEM hillshade.  Every request that is not
file:// or data: is aborted.  The baseline, measured in the same run, is the
smallest page (title and line only: Leaflet, our scripts, an empty section).

Goals: at 10^4 stations, < 2 MB and < 1.5 s from navigation to "ready".

Run:  /work/venv/bin/python benchmarks/bench_web.py [--repeat 3]
"""

from __future__ import annotations

import argparse
import statistics
import tempfile
import time
from pathlib import Path

from playwright.sync_api import sync_playwright

from geosect.web import MapData, hillshade_overlay, write_map
from geosect.web.synthetic import synthetic_dem, synthetic_map_data

CHROMIUM = "/usr/bin/chromium"
ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update",
        "--disable-sync", "--no-first-run"]
GOAL_BYTES = 2_000_000
GOAL_SECONDS = 1.5


def _offline(route):
    if route.request.url.startswith(("file://", "data:")):
        route.continue_()
    else:
        route.abort()


def load_times(browser, path: Path, repeat: int) -> tuple[float, float]:
    """Median wall time (s) from goto to ready, and median in-page time (s) at ready."""
    wall, inpage = [], []
    for _ in range(repeat):
        page = browser.new_page(viewport={"width": 1400, "height": 820})
        page.route("**/*", _offline)
        t0 = time.perf_counter()
        page.goto(path.as_uri())
        page.wait_for_function("window.geosect && window.geosect.ready === true", timeout=60_000)
        wall.append(time.perf_counter() - t0)
        inpage.append(page.evaluate("window.geosect.timing.ready") / 1000.0)
        page.close()
    return statistics.median(wall), statistics.median(inpage)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=3, help="loads per page (median is reported)")
    ap.add_argument("--keep", type=Path, default=None, help="write the pages into this folder and keep them")
    args = ap.parse_args()
    if args.keep is None:
        with tempfile.TemporaryDirectory(prefix="bench-web-") as tmp:
            run(Path(tmp), args.repeat)
    else:
        run(args.keep, args.repeat)


def run(out: Path, repeat: int) -> None:
    """Build the pages into ``out``, load each ``repeat`` times, print the table."""
    out.mkdir(parents=True, exist_ok=True)
    hs = hillshade_overlay(synthetic_dem(out / "dem.tif"))

    pages: list[tuple[str, Path, float]] = []
    base = synthetic_map_data(5, 1)
    t = time.perf_counter()
    p = write_map(MapData(title=base.title, line=base.line), out / "baseline.html")
    pages.append(("baseline (line only)", p, time.perf_counter() - t))
    for n in (1_000, 10_000):
        data = synthetic_map_data(n, max(10, n // 100), hillshade=hs, n_midpoints=60_000)
        t = time.perf_counter()
        p = write_map(data, out / f"map-{n}.html")
        pages.append((f"{n} stations", p, time.perf_counter() - t))

    with sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=CHROMIUM, args=ARGS)
        rows = []
        for name, path, build_s in pages:
            wall, inpage = load_times(browser, path, repeat)
            rows.append((name, path.stat().st_size, build_s, wall, inpage))
        browser.close()

    b_size, b_wall = rows[0][1], rows[0][3]
    print(f"{'page':<22}{'size MB':>9}{'x base':>8}{'build s':>9}{'load s':>8}{'x base':>8}{'in-page s':>11}")
    for name, size, build_s, wall, inpage in rows:
        print(f"{name:<22}{size / 1e6:>9.3f}{size / b_size:>8.2f}{build_s:>9.3f}{wall:>8.3f}{wall / b_wall:>8.2f}{inpage:>11.3f}")
    name, size, _, wall, _ = rows[-1]
    print(f"goal at 10^4 stations: size < {GOAL_BYTES / 1e6:.1f} MB: {'met' if size < GOAL_BYTES else 'NOT met'}; "
          f"load < {GOAL_SECONDS} s: {'met' if wall < GOAL_SECONDS else 'NOT met'}")
    print("(machine load affects the seconds; the ratios to the baseline less so)")


if __name__ == "__main__":
    main()
