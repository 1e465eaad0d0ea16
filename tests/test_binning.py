"""Tests of geosect.binning (synthetic geometry, invented numbers)."""

from __future__ import annotations

import math

import numpy as np
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st

from geosect.binning import BinGrid, bin_pairs, binning_line, midpoints
from geosect.errors import LineError
from geosect.line import SurveyLine


def test_midpoints_by_hand():
    me, mn = midpoints([0.0, 100.0], [0.0, 50.0], [200.0, 100.0], [10.0, -50.0])
    assert me.tolist() == [100.0, 100.0]
    assert mn.tolist() == [5.0, 0.0]


def test_grid_edges_and_bin_of():
    line = SurveyLine([0.0, 100.0], [0.0, 0.0])
    g = BinGrid(line, 25.0)
    assert g.n_bins == 4
    np.testing.assert_allclose(g.edges, [0, 25, 50, 75, 100])
    assert g.bin_of([0.0, 24.999, 25.0, 99.0, 100.0, 100.1, -0.1, np.nan]).tolist() == [0, 0, 1, 3, 3, -1, -1, -1]
    g2 = BinGrid(line, 30.0, origin_m=-10.0)  # bins [-10, 20), [20, 50), [50, 80), [80, 110)
    assert g2.n_bins == 4
    assert g2.bin_of([-5.0, 0.0, 19.9, 20.0, 100.0]).tolist() == [-1, 0, 0, 1, 3]
    s, e, n = g2.centres()
    np.testing.assert_allclose(s, [5, 35, 65, 95])
    np.testing.assert_allclose(e, s)
    with pytest.raises(LineError, match="bin width"):
        BinGrid(line, 0.0)
    with pytest.raises(LineError, match="origin"):
        BinGrid(line, 10.0, origin_m=150.0)
    with pytest.raises(LineError, match="origin"):
        BinGrid(line, 10.0, origin_m=-10.0)


def test_fold_on_a_straight_split_spread_by_hand():
    # Synthetic straight line along east, receivers every 10 m at 0..100 m, shots at
    # 0 and 100 m.  Midpoints of shot 0: 0, 5, ..., 50; of shot 100: 50, 55, ..., 100.
    # Bins of 10 m from 0: bin 0 [0, 10) gets 0, 5 (shot 0) -> 2; ...; bin 4 [40, 50)
    # gets 40, 45 -> 2; bin 5 [50, 60) gets 50, 55 (shot 100) and 50 (shot 0) -> 3;
    # bins 6..8 get 2 each; bin 9 [90, 100] gets 90, 95, 100 -> 3.
    line = SurveyLine([0.0, 100.0], [0.0, 0.0])
    g = BinGrid(line, 10.0)
    rx = np.arange(0.0, 101.0, 10.0)
    se = np.concatenate([np.zeros(11), np.full(11, 100.0)])
    re = np.concatenate([rx, rx])
    sn = np.zeros(22)
    rn = np.full(22, 8.0)  # receivers 8 m north (left): midpoints 4 m left of the line
    res = bin_pairs(g, se, sn, re, rn)
    assert res.fold.tolist() == [2, 2, 2, 2, 2, 3, 2, 2, 2, 3]
    assert res.fold.sum() == 22 and res.n_outside == 0
    np.testing.assert_allclose(res.crossline_mean_m, -4.0)
    np.testing.assert_allclose(res.crossline_std_m, 0.0, atol=1e-12)
    np.testing.assert_allclose(res.crossline_max_abs_m, 4.0)
    t = res.pairs_frame()
    assert (t["status"] == "ok").all() and (t["flags"] == "").all()
    b = res.bins_frame()
    assert b["fold"].tolist() == res.fold.tolist()
    np.testing.assert_allclose(b["chainage_m"], np.arange(5.0, 100.0, 10.0))


def test_crossline_scatter_by_hand_and_outside_pairs():
    line = SurveyLine([0.0, 100.0], [0.0, 0.0])
    g = BinGrid(line, 50.0)
    # bin 0 midpoints at crossline +3 (south) and -1 (north): mean 1, population std 2
    me = np.array([10.0, 20.0, 70.0, 150.0, np.nan])
    mn = np.array([-3.0, 1.0, 0.0, 0.0, 0.0])
    res = bin_pairs(g, me, mn, me, mn)  # source = receiver: the midpoint is the point itself
    assert res.fold.tolist() == [2, 1]
    np.testing.assert_allclose(res.crossline_mean_m, [1.0, 0.0])
    np.testing.assert_allclose(res.crossline_std_m, [2.0, 0.0])
    np.testing.assert_allclose(res.crossline_max_abs_m, [3.0, 0.0])
    assert res.n_outside == 1 and res.n_bad == 1
    t = res.pairs_frame()
    assert t["status"].tolist() == ["ok", "ok", "ok", "ok", "bad_coordinates"]
    assert t["flags"].tolist() == ["", "", "", "outside_bins", ""]
    assert t["bin"].tolist() == [0, 0, 1, -1, -1]


@settings(max_examples=20, deadline=None)
@given(seed=st.integers(0, 10_000), chunk=st.integers(1, 500))
def test_chunked_equals_unchunked(seed, chunk):
    rng = np.random.default_rng(seed)
    line = SurveyLine([0.0, 800.0, 1500.0, 2600.0], [0.0, 120.0, -60.0, 300.0])
    g = BinGrid(line, 25.0, origin_m=-5.0)
    n = 1200
    se = rng.uniform(-100, 2700, n)
    sn = rng.normal(0, 200, n)
    re = rng.uniform(-100, 2700, n)
    rn = rng.normal(0, 200, n)
    a = bin_pairs(g, se, sn, re, rn, chunk=10**7)
    b = bin_pairs(g, se, sn, re, rn, chunk=chunk)
    c = bin_pairs(g, se, sn, re, rn, chunk=chunk, keep_pairs=False)
    assert np.array_equal(a.fold, b.fold) and np.array_equal(a.fold, c.fold)
    assert np.array_equal(a.bin, b.bin)
    np.testing.assert_array_equal(a.crossline_max_abs_m, b.crossline_max_abs_m)
    np.testing.assert_allclose(a.crossline_mean_m, b.crossline_mean_m, rtol=1e-10, atol=1e-9)
    np.testing.assert_allclose(a.crossline_std_m, c.crossline_std_m, rtol=1e-10, atol=1e-9)
    # and the merged statistics equal a direct per-bin computation
    for k in np.flatnonzero(a.fold > 0)[:10]:
        x = a.crossline_m[a.bin == k]
        assert a.crossline_std_m[k] == pytest.approx(np.std(x), rel=1e-10, abs=1e-9)
        assert a.crossline_max_abs_m[k] == np.max(np.abs(x))
    assert c.bin is None and c.fold.sum() + c.n_outside + c.n_bad == n


def test_bin_polygons_follow_a_bent_line():
    # Synthetic line: east 100 m, then north 100 m; 40 m bins from 0: the bin
    # [80, 120) contains the corner.
    line = SurveyLine([0.0, 100.0, 100.0], [0.0, 0.0, 100.0])
    g = BinGrid(line, 40.0)
    polys = g.polygons(5.0)
    assert len(polys) == g.n_bins == 5
    assert all(p.is_valid for p in polys)
    # outlines tile the 10 m wide band: total area = 10 * length (plane geometry; the
    # mitre at the corner adds the outer 5 x 5 square and removes the inner one)
    assert sum(p.area for p in polys) == pytest.approx(10.0 * 200.0)
    corner = polys[2]
    # the corner bin holds the outer corner of the band (mitre point 105, -5) and
    # points just either side of the vertex on the line
    assert corner.distance(shapely.Point(105.0, -5.0)) < 1e-9
    assert corner.contains(shapely.Point(99.0, 2.0)) and corner.contains(shapely.Point(101.0, 10.0))
    # a rectangle from bin start to bin end would not hold (100, 15): this polygon does
    assert corner.contains(shapely.Point(100.0, 15.0))
    # neighbours share an edge, no overlaps
    for a, b in zip(polys[:-1], polys[1:]):
        assert a.intersection(b).length == pytest.approx(10.0)
        assert a.intersection(b).area == pytest.approx(0.0, abs=1e-9)
    # midpoints binned by chainage fall inside their bin's polygon
    rng = np.random.default_rng(0)
    s = rng.uniform(0, line.length, 300)
    xl = rng.uniform(-4.9, 4.9, 300)
    e, n = line.position(s, xl)
    res = bin_pairs(g, e, n, e, n)
    inside = np.array([polys[k].covers(shapely.Point(x, y)) for k, x, y in zip(res.bin, e, n)])
    assert inside.all()


def test_binning_line_recovers_a_smooth_crooked_line():
    # Synthetic crooked acquisition: stations and shots scattered about a gentle
    # S-curve; the midpoints' smoothed line should lie close to the curve.
    rng = np.random.default_rng(3)
    t = np.linspace(0, 20_000, 2001)
    curve_e = 500_000 + t
    curve_n = 4_000_000 + 800 * np.sin(t / 6000)
    section = SurveyLine.fit(curve_e, curve_n)
    n = 20000
    i = rng.integers(0, t.size, n)
    me = curve_e[i] + rng.normal(0, 40, n)
    mn = curve_n[i] + rng.normal(0, 40, n)
    bl = binning_line(me, mn, section, smoothing_m=500.0, spacing_m=100.0)
    ve, vn = bl.vertices
    truth = SurveyLine(curve_e, curve_n)
    # crossline distance from the true curve (the binning line may run a few tens of
    # metres past the curve's ends, where the scattered midpoints do)
    _, xl = truth.locate(ve, vn)
    assert np.max(np.abs(xl)) < 15.0
    # same direction as the section line
    assert bl.start[0] < bl.end[0]
    assert bl.length == pytest.approx(truth.length, rel=0.01)
