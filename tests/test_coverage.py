"""Tests of coverage per interface (geosect.coverage), the coverage stage and the fold figure.

Every survey here is invented (synthetic straight lines in UTM zone 33N, made-up shot and station
positions); expected values are hand counts of constructed cases or are recomputed from the cited formulas.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as hst
from matplotlib.lines import Line2D
from matplotlib.text import Text
from pyproj import CRS

from geosect.config import ModelSettings, Settings
from geosect.coverage import (WIDE_ANGLE_DEPTH_FACTORS, bin_edges, critical_distances, design_check, find_gaps,
                              fold_per_bin, gaps_after_adding, interface_coverage, largest_gap, rank_by_gap,
                              sampled_span, wide_angle)
from geosect.crs import WorkingCRS, to_lonlat
from geosect.line import SurveyLine
from geosect.model import Interface, Layer, LayeredModel
from geosect.pipeline import Context, Progress
from geosect.plot.coverage import draw_coverage, save_coverage
from geosect.plot.fonts import MIN_FONT_PT
from geosect.report import Report

UTM33 = CRS.from_epsg(32633)
E0, N0 = 450_000.0, 5_100_000.0  # invented line start, near the zone's central meridian


# --------------------------------------------------------------------------- helpers


def _line(length_km: float) -> SurveyLine:
    return SurveyLine([E0, E0 + length_km * 1e3], [N0, N0], name="synthetic")


def _points(line: SurveyLine, chainage_km, prefix: str, elevation_m=None) -> pd.DataFrame:
    ch = np.asarray(chainage_km, float) * 1e3
    e, n = line.position(ch)
    lon, lat = to_lonlat(UTM33, e, n)
    elev = np.full(ch.size, np.nan) if elevation_m is None else np.broadcast_to(elevation_m, ch.shape).astype(float)
    return pd.DataFrame({"id": [f"{prefix}{k:03d}" for k in range(ch.size)], "easting": e, "northing": n,
                         "lon": lon, "lat": lat, "elevation_m": elev, "dem_elevation_m": np.nan, "chainage_m": ch,
                         "crossline_m": 0.0, "status": "ok", "flags": ""})


def _context(tmp_path: Path, line, shots, stations, model, phases, **cov) -> Context:
    s = Settings()
    s.model = ModelSettings(file=tmp_path / "model.toml", earth="auto")  # the model object is given directly
    s.rays.phases = list(phases)
    for k, v in cov.items():
        setattr(s.coverage, k, v)
    out = tmp_path / "out"
    out.mkdir(exist_ok=True)
    ctx = Context(s, out, Report("synthetic test survey"), Progress(quiet=True))
    ctx.artefacts.update(line=line, crs=WorkingCRS(UTM33, "test"), placed_shots=shots, placed_stations=stations,
                         model=model)
    return ctx


@pytest.fixture
def run_rays():
    """The real rays stage."""
    from geosect.stages import rays

    return rays.compute_rays


def _run(ctx, run_rays):
    from geosect.stages.coverage import compute_coverage

    run_rays(ctx)
    compute_coverage(ctx)
    return ctx.artefacts["coverage"]


def _two_layer(h_m=10e3, v1=4000.0, v2=6000.0) -> LayeredModel:
    return LayeredModel.flat([0.0, h_m], [v1, v2], names=["surface", "basement"])


# --------------------------------------------------------------------------- fold, span, gaps


def test_bin_edges_cover_the_range_on_the_origin_grid():
    e = bin_edges(-1200.0, 9100.0, 2000.0)
    assert e[0] <= -1200.0 and e[-1] >= 9100.0
    np.testing.assert_allclose(np.diff(e), 2000.0)
    assert np.all(np.mod(e, 2000.0) == 0.0)
    assert bin_edges(0.0, 0.0, 500.0).size == 2  # always one bin at least
    with pytest.raises(ValueError):
        bin_edges(0.0, 1.0, 0.0)


@settings(max_examples=40, deadline=None)
@given(hst.lists(hst.floats(-5e3, 105e3, allow_nan=False), min_size=0, max_size=300),
       hst.sampled_from([500.0, 1000.0, 2500.0]))
def test_fold_counts_like_numpy_histogram(ch, bin_m):
    # reference: numpy.histogram's bin convention (half-open bins, the last one closed)
    ch = np.array(ch, float)
    edges = bin_edges(0.0, 100e3, bin_m)
    expected, _ = np.histogram(ch, bins=edges)
    np.testing.assert_array_equal(fold_per_bin(ch, edges), expected)


def test_gaps_have_the_points_on_either_side_as_ends():
    ch = np.array([3e3, 1e3, np.nan, 2e3, 9e3, 9.5e3, 20e3])
    s, e = find_gaps(ch, 5e3)
    np.testing.assert_array_equal(s, [3e3, 9.5e3])
    np.testing.assert_array_equal(e, [9e3, 20e3])
    assert largest_gap(ch) == (9.5e3, 20e3)
    assert sampled_span(ch) == (1e3, 20e3)
    # against a required extent, the stretches to its ends count too
    s, e = find_gaps(ch, 5e3, extent_m=(-10e3, 30e3))
    np.testing.assert_array_equal(s, [-10e3, 3e3, 9.5e3, 20e3])
    np.testing.assert_array_equal(e, [1e3, 9e3, 20e3, 30e3])
    assert find_gaps([5.0], 1.0)[0].size == 0
    assert math.isnan(largest_gap([])[0])


def test_flat_layer_fold_is_hand_countable_and_gaps_exact(tmp_path, run_rays):
    # Two shots at 0.5 and 40.5 km, stations at 2.5-18.5 km and 30.5-38.5 km (every 4 km) on a 40 km line.
    # Over a flat reflector with source and receiver at the same depth the reflection point lies halfway
    # (common-midpoint geometry; Kearey, Brooks & Hill, An Introduction to Geophysical Exploration, 3rd ed., ch. 4),
    # so the points are (s + r) / 2:
    #   shot 0.5:  1.5 3.5 5.5 7.5 9.5 | 15.5 17.5 19.5
    #   shot 40.5: 21.5 23.5 25.5 27.5 29.5 | 35.5 37.5 39.5
    # counted by hand in 5 km bins: [2, 3, 0, 3, 2, 3, 0, 3]; gaps longer than 5.5 km: 9.5-15.5 and 29.5-35.5.
    line = _line(40.0)
    shots = _points(line, [0.5, 40.5], "S")
    stations = _points(line, [2.5, 6.5, 10.5, 14.5, 18.5, 30.5, 34.5, 38.5], "R")
    ctx = _context(tmp_path, line, shots, stations, _two_layer(), ["reflection:basement"], bin_km=5.0, gap_km=5.5,
                   candidates=0)
    out = _run(ctx, run_rays)
    cov = out.survey["reflection:basement"]
    np.testing.assert_array_equal(out.edges_m, np.arange(0.0, 40e3 + 1, 5e3))
    np.testing.assert_array_equal(cov.fold, [2, 3, 0, 3, 2, 3, 0, 3])
    np.testing.assert_allclose(cov.gap_start_m, [9.5e3, 29.5e3], atol=1e-3)
    np.testing.assert_allclose(cov.gap_end_m, [15.5e3, 35.5e3], atol=1e-3)
    assert cov.span_m == pytest.approx((1.5e3, 39.5e3), abs=1e-3)
    table = pd.read_csv(tmp_path / "out" / "coverage.csv")
    assert list(table.columns) == ["layout", "interface", "phase", "bin_start_m", "bin_end_m", "fold"]
    np.testing.assert_array_equal(table["fold"], cov.fold)
    assert set(table["interface"]) == {"basement"}
    text = ctx.report.render()
    assert "## Coverage per interface" in text and "## Survey design" in text
    assert "9.50 | 15.50 | 6.00" in text  # the gap table, in km
    assert (tmp_path / "out" / "coverage.png").stat().st_size > 0
    assert (tmp_path / "out" / "coverage.svg").read_text().lstrip().startswith("<?xml")


def test_wide_angle_count_matches_the_two_layer_critical_distance(tmp_path, run_rays):
    # x_c = 2 h tan(asin(v1 / v2)): Kearey, Brooks & Hill, An Introduction to Geophysical Exploration, 3rd ed.,
    # ch. 5 (two-layer refraction).  h = 10 km, 4 -> 6 km/s gives about 17.9 km.
    h, v1, v2 = 10e3, 4000.0, 6000.0
    xc = 2 * h * math.tan(math.asin(v1 / v2))
    line = _line(60.0)
    shots = _points(line, [0.0, 30.0, 60.0], "S")
    stations = _points(line, np.arange(0.25, 60.0, 1.0), "R")
    ctx = _context(tmp_path, line, shots, stations, _two_layer(h, v1, v2), ["reflection:basement"],
                   bin_km=2.0, gap_km=5.0, candidates=3)
    out = _run(ctx, run_rays)
    rows = ctx.artefacts["reflection_points"]
    off = rows["offset_m"].to_numpy(float)
    w = out.survey["reflection:basement"].wide
    assert w.critical_m == pytest.approx(xc, rel=1e-9)
    assert w.count == int((off > xc).sum()) > 0
    assert w.offset_min_m == pytest.approx(off[off > xc].min())
    assert w.offset_max_m == pytest.approx(off.max())
    assert out.design["reflection:basement"].reaches_critical
    wide_direct = wide_angle(off, xc)
    assert wide_direct.count == w.count
    # no gap longer than 5 km: no candidate station is tried
    assert out.candidates == {}
    assert "no gap longer than 5 km, no added station needed" in ctx.report.render()


def test_critical_distance_legs_from_elevated_sources_and_receivers():
    # Each leg of the critical ray crosses the top layer at the critical angle: x_c = (h - z_s) tan(theta_c) +
    # (h - z_r) tan(theta_c), the two-layer formula of Kearey, Brooks & Hill (3rd ed., ch. 5) with each leg's own
    # thickness (points above the datum lie in the top layer, which continues upward).
    h, v1, v2 = 12e3, 5000.0, 6500.0
    m = _two_layer(h, v1, v2)
    rng = np.random.default_rng(7)
    zs, zr = -rng.uniform(0, 2500, 40), -rng.uniform(0, 3000, 40)
    tan_c = math.tan(math.asin(v1 / v2))
    got = critical_distances(m, "basement", zs, zr)
    np.testing.assert_allclose(got, (h - zs) * tan_c + (h - zr) * tan_c, rtol=1e-9)
    # no head wave under a slower layer: no critical distance
    slow = LayeredModel.flat([0.0, h], [6000.0, 5000.0], names=["surface", "lvz"])
    assert np.isnan(critical_distances(slow, "lvz", [0.0], [0.0])).all()
    assert wide_angle([50e3], np.nan).count == 0


def test_critical_distance_with_a_source_below_the_first_interface():
    # Three constant layers; the legs of the critical ray of the deepest interface cross each layer above it at the
    # angle asin(v_i / v_3): x_c = sum of (layer thickness along each leg) * tan(theta_i), the multilayer form in
    # Kearey, Brooks & Hill (3rd ed., ch. 5).  A shot 1.5 km deep (below the first interface at 1 km) makes the legs
    # kink inside the depth range, which is sampled densely.
    v = np.array([3000.0, 5000.0, 7000.0])
    m = LayeredModel.flat([0.0, 1e3, 9e3], v, names=["surface", "top2", "base"])
    tan = np.tan(np.arcsin(v[:2] / v[2]))
    zs = np.array([1.5e3, 1.5e3, 0.0, -400.0, 1.01e3])
    zr = np.array([0.0, -800.0, 0.0, -400.0, 0.0])

    def leg(z):
        return np.where(z < 1e3, (1e3 - z) * tan[0] + 8e3 * tan[1], (9e3 - z) * tan[1])

    got = critical_distances(m, "base", zs, zr, depth_samples=65)
    # within one layer the legs are straight in depth, so linear interpolation is exact; only a depth between the
    # two samples around the kink (1.01 km) is approximate
    np.testing.assert_allclose(got[:4], (leg(zs) + leg(zr))[:4], rtol=1e-9)
    assert got[4] == pytest.approx(leg(zs[4]) + leg(zr[4]), rel=2e-3)


def test_critical_distance_interpolated_over_depth_in_a_gradient_layer():
    # With a gradient in the top layer each leg is no longer straight in depth; the interpolated legs must agree
    # with the model's critical distance computed pair by pair.
    m = LayeredModel.flat([0, 20e3, 35e3], [5000, 6300, 8000], names=["surface", "conrad", "moho"],
                          gradients=[0.03, 0.01, 0.0])
    rng = np.random.default_rng(3)
    zs, zr = -rng.uniform(0, 3000, 12), -rng.uniform(0, 3000, 12)
    for name in ("conrad", "moho"):
        one_by_one = [m.critical_distance(name, source_depth_m=a, receiver_depth_m=b) for a, b in zip(zs, zr)]
        np.testing.assert_allclose(critical_distances(m, name, zs, zr), one_by_one, rtol=1e-5)


def test_critical_distance_of_a_2d_model_uses_the_column_under_the_midpoint():
    # A basement deepening from 8 to 12 km over 100 km; the pair's column is the one at the centre of its 2 km
    # midpoint group, where x_c = 2 h tan(asin(v1/v2)) (Kearey, Brooks & Hill, 3rd ed., ch. 5).
    itfs = [Interface("surface", [0.0], [0.0]), Interface("basement", [0.0, 100e3], [8e3, 12e3])]
    lays = [Layer("cover", 4500.0, 4500.0, vpvs=1.75), Layer("basement rock", 6200.0, None, vpvs=1.73)]
    m = LayeredModel(itfs, lays)
    mid = np.array([1.0e3, 25.3e3, 50.0e3, 99.9e3])
    centre = (np.floor(mid / 2e3) + 0.5) * 2e3
    h = 8e3 + 4e3 * centre / 100e3
    expected = 2 * h * math.tan(math.asin(4500.0 / 6200.0))
    got = critical_distances(m, "basement", np.zeros(4), np.zeros(4), midpoint_chainage_m=mid)
    np.testing.assert_allclose(got, expected, rtol=1e-9)
    with pytest.raises(ValueError):
        critical_distances(m, "basement", [0.0], [0.0])


def test_design_check_against_the_depth_rule_of_thumb():
    # The 4-5 x depth rule for wide-angle offsets: common practice, no source.
    assert WIDE_ANGLE_DEPTH_FACTORS == (4.0, 5.0)
    edges = bin_edges(0, 100e3, 5e3)

    def verdict(max_off):
        cov = interface_coverage("reflection:moho", [10e3, 20e3], [1e3, max_off], np.nan, edges, 5e3)
        return design_check(cov, interface_depth_m=11e3, surface_depth_m=1e3)  # 10 km below the stations

    assert verdict(55e3).verdict == "yes"
    assert verdict(45e3).verdict == "about"
    assert verdict(30e3).verdict == "no"
    d = verdict(30e3)
    assert d.depth_m == 10e3 and d.targets_m == (40e3, 50e3) and d.ratio == pytest.approx(3.0)
    assert not d.reaches_critical


# --------------------------------------------------------------------------- candidate stations


def _brute_largest(existing, added):
    """Largest gap inside the existing span after adding points: sort everything and take the longest step."""
    p = np.unique(existing[np.isfinite(existing)])
    a = added[np.isfinite(added) & (added > p[0]) & (added < p[-1])]
    return float(np.diff(np.unique(np.concatenate([p, a]))).max())


@settings(max_examples=40, deadline=None)
@given(hst.lists(hst.floats(0, 100e3, allow_nan=False), min_size=2, max_size=60, unique=True),
       hst.integers(1, 6), hst.integers(1, 8), hst.integers(0, 2 ** 31 - 1), hst.sampled_from([1, 4, 32]))
def test_gap_after_adding_equals_sorting_everything(existing, n_cand, n_shot, seed, keep):
    rng = np.random.default_rng(seed)
    ex = np.array(existing)
    added = rng.uniform(-10e3, 110e3, (n_cand, n_shot))
    added[rng.random(added.shape) < 0.2] = np.nan
    g = gaps_after_adding(ex, added, gap_m=5e3, keep=keep)
    brute = np.array([_brute_largest(ex, row) for row in added])
    np.testing.assert_allclose(g.largest_m[g.exact], brute[g.exact], rtol=0, atol=1e-6)
    assert np.all(g.largest_m >= brute - 1e-6)  # where not exact, an upper bound
    np.testing.assert_allclose(g.end_m - g.start_m, g.largest_m, atol=1e-6)
    assert g.before_m[1] - g.before_m[0] == pytest.approx(np.diff(np.unique(ex)).max())


def test_ranking_picks_an_off_centre_station_that_beats_the_gap_centre(tmp_path, run_rays):
    # Shots only on the west (1, 11, 21, 31 km); stations at 1-49 km and at 119 and 121 km.  Reflection points of a
    # flat reflector lie at (s + r) / 2 (common-midpoint geometry, Kearey, Brooks & Hill, 3rd ed., ch. 4), so the
    # survey has no point between 40 and 60 km.  A station at c adds points c/2 + {0.5, 5.5, 10.5, 15.5} km: one at
    # the gap's centre (50 km) adds only 40.5 km inside it, while one near 80-88 km spreads all four across it.
    line = _line(120.0)
    shots = _points(line, [1.0, 11.0, 21.0, 31.0], "S")
    stations = _points(line, np.r_[np.arange(1.0, 50.0, 2.0), 119.0, 121.0], "R")
    ctx = _context(tmp_path, line, shots, stations, _two_layer(15e3, 5000.0, 7000.0), ["reflection:basement"],
                   gap_km=6.0, bin_km=5.0, candidate_spacing_km=2.0, candidates=3)
    out = _run(ctx, run_rays)
    cov = out.survey["reflection:basement"]
    assert cov.largest_m == pytest.approx((40e3, 60e3), abs=1e-3)
    t = out.candidates["reflection:basement"]
    best = t.iloc[0]
    centre = t.iloc[(t["chainage_m"] - 50e3).abs().argmin()]
    assert centre["chainage_m"] == 50e3
    assert abs(best["chainage_m"] - 50e3) >= 20e3  # far from the gap's centre
    assert best["new_largest_gap_m"] < centre["new_largest_gap_m"]
    # recompute both from the midpoint rule, independently of the model solve
    existing = ctx.artefacts["reflection_points"]["point_chainage_m"].to_numpy(float)
    s_km = np.array([1.0, 11.0, 21.0, 31.0]) * 1e3
    for row in (best, centre):
        assert row["new_largest_gap_m"] == pytest.approx(_brute_largest(existing, (s_km + row["chainage_m"]) / 2),
                                                         abs=1e-3)
    assert centre["new_largest_gap_m"] == pytest.approx(60e3 - 40.5e3, abs=1e-3)
    # the order is the documented one: the smallest largest gap first
    assert np.all(np.diff(t["new_largest_gap_m"].to_numpy()) >= -1e-9)
    text = ctx.report.render()
    assert "largest gap now 20.0 km (40.0 to 60.0 km)" in text
    cand = pd.read_csv(tmp_path / "out" / "candidates.csv")
    assert len(cand) == 61 and cand["rank"].iloc[0] == 1


def test_rank_by_gap_breaks_ties_by_total_gap_then_chainage():
    from geosect.coverage import GapShrink

    g = GapShrink((0.0, 10.0), np.array([5.0, 5.0, 4.0, 5.0]), np.zeros(4), np.zeros(4),
                  np.array([3.0, 1.0, 9.0, 1.0]), np.zeros(4, np.int64), np.ones(4, bool))
    assert rank_by_gap(g, [0.0, 30.0, 10.0, 20.0]).tolist() == [2, 3, 1, 0]


def test_stage_without_reflection_phases_says_so(tmp_path, run_rays):
    line = _line(20.0)
    ctx = _context(tmp_path, line, _points(line, [0.0], "S"), _points(line, [5.0, 15.0], "R"), _two_layer(),
                   ["head:basement"])
    out = _run(ctx, run_rays)
    assert out.survey == {}
    assert "no interface to cover" in ctx.report.render()


def test_stage_with_no_reflection_point_reports_dashes(tmp_path, run_rays):
    # every pair beyond [rays] max_offset_km: the rows stay (status beyond_max_offset), no reflection point
    line = _line(30.0)
    ctx = _context(tmp_path, line, _points(line, [0.0], "S"), _points(line, [10.0, 20.0], "R"), _two_layer(),
                   ["reflection:basement"], candidates=2)
    ctx.settings.rays.max_offset_km = 1.0
    out = _run(ctx, run_rays)
    cov = out.survey["reflection:basement"]
    assert cov.n_points == 0 and cov.fold.sum() == 0 and cov.n_gaps == 0
    assert np.isnan(cov.span_m[0]) and cov.wide.count == 0
    assert out.design["reflection:basement"].verdict == "no"
    text = ctx.report.render()
    assert "fewer than two reflection points" in text
    assert set(ctx.artefacts["rays"]["status"]) == {"beyond_max_offset"}


# --------------------------------------------------------------------------- figure


def _cov(phase, ch, gap_m=4e3):
    edges = bin_edges(0.0, 40e3, 5e3)
    ch = np.asarray(ch, float)
    return interface_coverage(phase, ch, np.full(ch.size, 10e3), np.nan, edges, gap_m, label=phase.split(":")[-1])


def test_figure_draws_one_fold_line_per_interface_with_its_data(tmp_path):
    a = _cov("reflection:conrad", [1e3, 2e3, 3e3, 12e3, 13e3, 30e3])
    b = _cov("reflection:moho", np.arange(500.0, 40e3, 700.0))
    plan = _cov("reflection:moho", np.arange(250.0, 40e3, 350.0))
    fig = draw_coverage([a, b], {"denser plan": [plan]}, title="synthetic test")
    fig.canvas.draw()
    assert len(fig.axes) == 2
    for ax, cov in zip(fig.axes, (a, b)):
        lines = [ln for ln in ax.get_lines() if ln.get_gid() == f"fold:{cov.phase}"]
        assert len(lines) == 1
        np.testing.assert_allclose(lines[0].get_xdata(), cov.edges_m / 1e3)
        np.testing.assert_array_equal(lines[0].get_ydata()[:-1], cov.fold)
        gaps = [p for p in ax.patches if p.get_gid() == f"gap:{cov.phase}"]
        assert len(gaps) == cov.n_gaps
        assert "km" in ax.get_ylabel()
    assert a.n_gaps == 2  # 3-12 km and 13-30 km
    plan_lines = [ln for ln in fig.axes[1].get_lines() if ln.get_gid() == "fold:reflection:moho:denser plan"]
    assert len(plan_lines) == 1
    np.testing.assert_array_equal(plan_lines[0].get_ydata()[:-1], plan.fold)
    assert fig.axes[-1].get_xlabel() == "chainage (km)"
    texts = [t for t in fig.findobj(Text) if t.get_text()]
    assert texts and min(t.get_fontsize() for t in texts) >= MIN_FONT_PT
    paths = save_coverage(fig, tmp_path / "coverage.png", tmp_path / "coverage.svg")
    assert [p.name for p in paths] == ["coverage.png", "coverage.svg"]
    assert (tmp_path / "coverage.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert not list(tmp_path.glob(".coverage*"))  # no temporary files left behind
    assert all(isinstance(ln, Line2D) for ln in fig.axes[0].get_lines())
    assert [ax.get_yscale() for ax in fig.axes] == ["linear", "linear"]


def test_figure_fold_axis_turns_logarithmic_for_a_dense_spot():
    dense = _cov("reflection:moho", np.r_[np.full(500, 12.5e3), np.arange(1e3, 40e3, 1.5e3)])
    fig = draw_coverage([dense])
    assert fig.axes[0].get_yscale() == "symlog"
    line = next(ln for ln in fig.axes[0].get_lines() if ln.get_gid() == "fold:reflection:moho")
    np.testing.assert_array_equal(line.get_ydata()[:-1], dense.fold)
