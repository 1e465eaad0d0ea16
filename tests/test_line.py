"""Tests of geosect.line.SurveyLine.

All lines and points here are synthetic (invented numbers).  The hand-checkable
cases are worked out on paper in the comments; the random cases are compared
with shapely 2 (GEOS), an independent implementation of the same geometry.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import shapely
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from geosect.errors import LineError
from geosect.line import SurveyLine

SETTINGS = settings(max_examples=40, deadline=None)


# -- helpers -------------------------------------------------------------------


def random_line(seed: int, m: int, max_turn_deg: float = 100.0) -> SurveyLine | None:
    """A synthetic crooked line (random walk of headings), or None if it crosses itself."""
    rng = np.random.default_rng(seed)
    heading = rng.uniform(0, 2 * np.pi) + np.cumsum(np.radians(rng.uniform(-max_turn_deg, max_turn_deg, m - 1)))
    step = rng.uniform(20.0, 300.0, m - 1)
    x = 500_000.0 + np.concatenate([[0.0], np.cumsum(step * np.cos(heading))])
    y = 5_200_000.0 + np.concatenate([[0.0], np.cumsum(step * np.sin(heading))])
    try:
        return SurveyLine(x, y)
    except LineError:
        return None


def meander_line(seed: int, m: int) -> SurveyLine:
    """A synthetic crooked line whose heading stays within 80 degrees of east (never crosses itself)."""
    rng = np.random.default_rng(seed)
    heading = np.clip(np.cumsum(rng.normal(0.0, 0.3, m - 1)), -1.4, 1.4)
    step = rng.uniform(20.0, 300.0, m - 1)
    x = 600_000.0 + np.concatenate([[0.0], np.cumsum(step * np.cos(heading))])
    y = 4_900_000.0 + np.concatenate([[0.0], np.cumsum(step * np.sin(heading))])
    return SurveyLine(x, y)


def points_around(line: SurveyLine, seed: int, n: int, spread: float = 150.0):
    rng = np.random.default_rng(seed + 1)
    s = rng.uniform(-0.1, 1.1, n) * line.length
    xl = rng.normal(0.0, spread, n)
    return line.position(s, xl)


# -- construction ------------------------------------------------------------------


def test_duplicates_and_zero_length_segments_are_dropped():
    line = SurveyLine([0, 0, 10, 10, 10, 20], [0, 0, 0, 0, 0, 5])
    e, n = line.vertices
    assert e.tolist() == [0, 10, 20]
    assert n.tolist() == [0, 0, 5]
    assert line.vertex_chainage.tolist() == [0, 10, 10 + math.hypot(10, 5)]


@pytest.mark.parametrize("e,n", [([5.0], [5.0]), ([1.0, 1.0, 1.0], [2.0, 2.0, 2.0]), ([], [])])
def test_fewer_than_two_distinct_vertices_refused(e, n):
    with pytest.raises(LineError, match="at least 2") as err:
        SurveyLine(e, n)
    assert "Fix:" in str(err.value)


def test_nan_vertex_refused_with_its_index():
    with pytest.raises(LineError, match="vertex 1"):
        SurveyLine([0.0, np.nan, 10.0], [0.0, 1.0, 2.0])
    with pytest.raises(LineError, match="non-finite"):
        SurveyLine([0.0, 5.0, 10.0], [0.0, np.inf, 2.0])


def test_self_intersection_refused_and_located():
    # segment (10,10)->(5,-5) crosses the first segment y=0 where
    # 10 - 5 * t = x and 10 - 15 t = 0, so t = 2/3 and x = 20/3 = 6.667
    with pytest.raises(LineError, match=r"E=6\.667, N=0\.000") as err:
        SurveyLine([0, 10, 10, 5], [0, 0, 10, -5])
    assert "segment 0" in str(err.value) and "segment 2" in str(err.value)
    assert "Fix:" in str(err.value)


def test_closed_ring_and_touching_and_fold_back_refused():
    with pytest.raises(LineError, match="crosses or touches"):
        SurveyLine([0, 10, 10, 0, 0], [0, 0, 10, 10, 0])  # closed square
    with pytest.raises(LineError, match=r"E=5\.000, N=0\.000"):
        SurveyLine([0, 10, 10, 5], [0, 0, 10, 0])  # last vertex touches the first segment
    with pytest.raises(LineError, match="turns back"):
        SurveyLine([0, 10, 4], [0, 0, 0])  # folds back along itself


def test_line_close_to_itself_but_not_touching_is_accepted():
    line = SurveyLine([0, 10, 10, 0], [0, 0, 0.01, 0.01])  # a 1 cm hairpin
    assert line.length == pytest.approx(20.01)


# -- the right-angle bend, by hand -----------------------------------------------------

# Synthetic line: east 1000 m, then north 1000 m (a left turn of 90 degrees at (1000, 0)).
LEFT = SurveyLine([0.0, 1000.0, 1000.0], [0.0, 0.0, 1000.0])
# The mirror image: east, then south (a right turn).
RIGHT = SurveyLine([0.0, 1000.0, 1000.0], [0.0, 0.0, -1000.0])


def test_left_bend_outside_point_is_on_the_right():
    # (1100, -100): both segments' projections clamp to the vertex, distance
    # sqrt(100^2 + 100^2); the outside of a left turn is the right side (+).
    ch, xl = LEFT.locate([1100.0, 1100.0, 1000.0], [-100.0, 0.0, -50.0])
    assert ch.tolist() == [1000.0, 1000.0, 1000.0]
    np.testing.assert_allclose(xl, [math.hypot(100, 100), 100.0, 50.0])
    # (1100, 0) lies on the extension of the first segment: a cross product with
    # that segment alone would say 0; the bisector rule says right, 100 m.


def test_right_bend_outside_point_is_on_the_left():
    ch, xl = RIGHT.locate([1100.0, 1100.0], [100.0, 0.0])
    assert ch.tolist() == [1000.0, 1000.0]
    np.testing.assert_allclose(xl, [-math.hypot(100, 100), -100.0])


def test_inside_points_and_ties_go_to_lower_chainage():
    # (500, 50): foot (500, 0), left of an eastward segment -> -50.
    # (900, 100): feet (900, 0) at chainage 900 and (1000, 100) at 1100, both 100 m
    # away; the tie goes to the lower chainage.
    ch, xl = LEFT.locate([500.0, 900.0, 950.0], [50.0, 100.0, 300.0])
    np.testing.assert_allclose(ch, [500.0, 900.0, 1300.0])
    # (950, 300) is 50 m west of the northward leg: left, -50
    np.testing.assert_allclose(xl, [-50.0, -100.0, -50.0])
    # on the right-turn line the inside is the right side (west of a southward leg)
    ch, xl = RIGHT.locate([500.0, 950.0], [-50.0, -300.0])
    np.testing.assert_allclose(ch, [500.0, 1300.0])
    np.testing.assert_allclose(xl, [50.0, 50.0])


def test_point_exactly_on_a_vertex_and_on_the_line():
    ch, xl = LEFT.locate([1000.0, 0.0, 1000.0, 400.0], [0.0, 0.0, 1000.0, 0.0])
    assert ch.tolist() == [1000.0, 0.0, 2000.0, 400.0]
    assert xl.tolist() == [0.0, 0.0, 0.0, 0.0]


def test_beyond_each_end_extrapolates_along_end_segment():
    # before the start: along the first (eastward) segment, 200 m back, 30 m north = left
    # past the end: along the last (northward) segment, 300 m on, 10 m west = left
    ch, xl = LEFT.locate([-200.0, 990.0], [30.0, 1300.0])
    np.testing.assert_allclose(ch, [-200.0, 2300.0])
    np.testing.assert_allclose(xl, [-30.0, -10.0])
    e, n = LEFT.position(ch, xl)
    np.testing.assert_allclose(e, [-200.0, 990.0])
    np.testing.assert_allclose(n, [30.0, 1300.0])


def test_place_status_and_flags():
    e = [500.0, np.nan, -200.0, 500.0, 900.0, np.inf]
    n = [50.0, 3.0, 30.0, -800.0, 100.0, 0.0]
    t = LEFT.place(e, n, far_off_line_m=500.0, ambiguity_m=10.0)
    assert list(t.columns) == ["chainage_m", "crossline_m", "status", "flags"]
    assert t["status"].tolist() == ["ok", "bad_coordinates", "ok", "ok", "ok", "bad_coordinates"]
    assert t["flags"].tolist() == ["", "", "beyond_line_end", "far_off_line", "ambiguous_foot", ""]
    assert np.isnan(t["chainage_m"][1]) and np.isnan(t["crossline_m"][5])
    t2 = LEFT.place([-900.0], [-600.0], far_off_line_m=500.0)
    assert t2["flags"][0] == "beyond_line_end;far_off_line"


def test_hairpin_inside_is_ambiguous():
    # A synthetic U: east 1000 m, north 100 m, west 1000 m.  The point (500, 50) is
    # 50 m from the first leg (chainage 500) and 50 m from the last (chainage 1600).
    line = SurveyLine([0.0, 1000.0, 1000.0, 0.0], [0.0, 0.0, 100.0, 100.0])
    t = line.place([500.0, 500.0, 500.0, 500.0], [50.0, 45.0, 10.0, -20.0], ambiguity_m=15.0)
    assert t["chainage_m"][0] == 500.0
    # 45 -> distances 45 and 55 (within 15 m): ambiguous; 10 -> 10 and 90: not;
    # -20 is outside the U: 20 and 120, not.
    assert t["flags"].tolist() == ["ambiguous_foot", "ambiguous_foot", "", ""]


def test_gentle_bend_inside_is_not_ambiguous():
    # 5-degree bend; a point 100 m inside on the bisector has two feet about
    # 100 * tan(2.5 deg) = 4.4 m either side of the vertex, both 100 m away: the same
    # stretch of line (closer than the 2 * ambiguity_m gap), so no flag.
    a = math.radians(5.0)
    line = SurveyLine([0.0, 1000.0, 1000.0 + 1000.0 * math.cos(a)], [0.0, 0.0, 1000.0 * math.sin(a)])
    bis = math.radians(90.0 + 2.5)
    t = line.place([1000.0 + 100.0 * math.cos(bis)], [100.0 * math.sin(bis)], ambiguity_m=10.0)
    assert t["flags"][0] == ""
    # but a sharp bend, seen from far inside, is
    t = LEFT.place([800.0], [200.0], ambiguity_m=10.0)
    assert t["flags"][0] == "ambiguous_foot"


def test_locate_broadcasts_and_keeps_shape():
    ch, xl = LEFT.locate(np.array([[100.0, 200.0], [300.0, 400.0]]), 10.0)
    assert ch.shape == (2, 2)
    np.testing.assert_allclose(ch, [[100, 200], [300, 400]])
    np.testing.assert_allclose(xl, -10.0)


# -- describing the line --------------------------------------------------------------


def test_bends_azimuth_and_turns():
    ch, ang = LEFT.bends(20.0)
    np.testing.assert_allclose(ch, [1000.0])
    np.testing.assert_allclose(ang, [-90.0])  # left turn is negative
    ch, ang = RIGHT.bends(20.0)
    np.testing.assert_allclose(ang, [90.0])
    assert LEFT.bends(95.0)[0].size == 0
    np.testing.assert_allclose(LEFT.azimuth([0.0, 999.0, 1000.0, 1500.0, 5000.0]), [90, 90, 0, 0, 0])
    np.testing.assert_allclose(RIGHT.azimuth([1500.0]), [180.0])


def test_oriented_and_reversed():
    line = SurveyLine([0.0, 100.0, 50.0], [500.0, 300.0, 0.0])  # runs north to south
    assert line.oriented("south-north").start == (50.0, 0.0)
    assert line.oriented("north-south") is line
    assert line.oriented("west-east").start == (0.0, 500.0)
    assert line.oriented("east-west").start == (50.0, 0.0)
    assert line.oriented("as-given") is line
    with pytest.raises(LineError, match="south-north"):
        line.oriented("up")
    r = line.reversed()
    assert r.length == pytest.approx(line.length)
    np.testing.assert_allclose(r.vertex_chainage, line.length - line.vertex_chainage[::-1])


def test_resample_includes_both_ends():
    s, e, n = LEFT.resample(300.0)
    np.testing.assert_allclose(s, [0, 300, 600, 900, 1200, 1500, 1800, 2000])
    assert (e[0], n[0]) == (0.0, 0.0) and (e[-1], n[-1]) == (1000.0, 1000.0)
    np.testing.assert_allclose(e[4], 1000.0)
    np.testing.assert_allclose(n[4], 200.0)
    s, _, _ = LEFT.resample(500.0)
    np.testing.assert_allclose(s, [0, 500, 1000, 1500, 2000])


def test_swath_polygon_and_in_swath_agree():
    # straight line: flat-capped buffer is a 2 w by L rectangle (plane geometry)
    straight = SurveyLine([0.0, 1000.0], [0.0, 0.0])
    assert straight.swath(50.0).area == pytest.approx(2 * 50.0 * 1000.0)
    line = random_line(7, 30, max_turn_deg=40.0)
    assert line is not None
    poly = line.swath(120.0)
    e, n = points_around(line, 3, 4000, spread=200.0)
    inside_poly = shapely.contains_xy(poly, e, n)
    ours = line.in_swath(e, n, 120.0)
    # they may differ only on the boundary (the polygon's round joins are polygonised)
    d = line.distance(e, n)
    differ = inside_poly != ours
    assert np.all(np.abs(d[differ] - 120.0) < 1.0)
    assert differ.mean() < 0.01


def test_signature_round_trip_and_same_as():
    line = random_line(11, 25, max_turn_deg=30.0)
    assert line is not None
    d = line.to_dict()
    again = SurveyLine.from_dict(d)
    assert again.same_as(d) and line.same_as(again)
    e, n = line.vertices
    assert SurveyLine(e + 0.4, n).same_as(line.to_dict(include_vertices=False), tol_m=1.0)
    assert not SurveyLine(e + 5.0, n).same_as(d, tol_m=1.0)
    moved = n.copy()
    moved[len(moved) // 2] += 40.0
    assert not SurveyLine(e, moved).same_as(d)
    bad = dict(d, vertex_hash="0" * 16)
    with pytest.raises(LineError, match="vertex hash"):
        SurveyLine.from_dict(bad)
    with pytest.raises(LineError, match="no vertices"):
        SurveyLine.from_dict(line.to_dict(include_vertices=False))


# -- fitted and smoothed lines ------------------------------------------------------------


def test_orthogonal_regression_beats_y_on_x_on_a_steep_line():
    # Synthetic points about a line 80 degrees from east, with isotropic noise.
    # Ordinary least squares of y on x is biased towards flatter slopes when x
    # itself is noisy (attenuation; Fuller 1987, "Measurement Error Models", sec. 1.1);
    # the principal axis is not (Golub & Van Loan 2013, "Matrix Computations",
    # 4th ed., sec. 6.3).
    rng = np.random.default_rng(42)
    ang = math.radians(80.0)
    t = np.linspace(0, 5000, 200)
    e = 300_000 + t * math.cos(ang) + rng.normal(0, 60, t.size)
    n = 4_100_000 + t * math.sin(ang) + rng.normal(0, 60, t.size)
    line = SurveyLine.fit(e, n)
    tx = line.end[0] - line.start[0]
    ty = line.end[1] - line.start[1]
    tls_err = abs(math.degrees(math.atan2(ty, tx)) - 80.0)
    slope = np.cov(e, n)[0, 1] / np.var(e, ddof=1)
    ols_err = abs(math.degrees(math.atan(slope)) - 80.0)
    assert tls_err < 0.5
    assert ols_err > 3 * tls_err
    # direction follows the order of the points, and the span covers the projections
    assert line.end[1] > line.start[1]
    ch, _ = line.locate(e, n)
    assert ch.min() == pytest.approx(0.0, abs=1e-6) and ch.max() == pytest.approx(line.length, abs=1e-6)
    wide = SurveyLine.fit(e, n, margin_m=250.0)
    assert wide.length == pytest.approx(line.length + 500.0)


def test_fit_ignores_nan_and_refuses_a_single_point():
    line = SurveyLine.fit([0.0, np.nan, 100.0], [0.0, 5.0, 0.0])
    assert line.length == pytest.approx(100.0)
    with pytest.raises(LineError, match="at least 2"):
        SurveyLine.fit([1.0, 1.0], [2.0, 2.0])


def test_smoothed_line_follows_a_noisy_arc():
    # Synthetic stations every 25 m on an arc of radius 20 km, with 15 m of
    # crossline scatter; a 300 m Gaussian smoothing should bring the line back to
    # within a few metres of the arc (the noise averaged over ~ 300 / 25 * 2.5 = 30
    # stations: 15 / sqrt(30) ~ 3 m standard error).
    rng = np.random.default_rng(5)
    R = 20_000.0
    phi = np.arange(0, 10_000, 25.0) / R
    r = R + rng.normal(0, 15.0, phi.size)
    e = 400_000 + r * np.cos(phi)
    n = 5_000_000 + r * np.sin(phi)
    line = SurveyLine.smoothed(e, n, smoothing_m=300.0, spacing_m=100.0)
    ve, vn = line.vertices
    radial = np.hypot(ve - 400_000, vn - 5_000_000) - R
    assert np.max(np.abs(radial)) < 12.0
    assert np.sqrt(np.mean(radial ** 2)) < 5.0
    assert np.allclose(np.diff(line.vertex_chainage), np.diff(line.vertex_chainage)[0], rtol=0.05)
    assert np.diff(line.vertex_chainage)[0] == pytest.approx(100.0, rel=0.05)
    # the ends are not pulled in: the line still spans the stations
    ch, _ = line.locate(e, n)
    assert ch[0] < 60.0 and ch[-1] > line.length - 60.0
    with pytest.raises(LineError, match="smoothing_m"):
        SurveyLine.smoothed(e, n, smoothing_m=0.0, spacing_m=100.0)


# -- against shapely, and invariants ---------------------------------------------------------


@SETTINGS
@given(seed=st.integers(0, 10_000), m=st.integers(2, 40))
def test_agrees_with_shapely_where_the_foot_is_unique(seed, m):
    # Reference: shapely 2 (GEOS) line_locate_point and distance.
    line = random_line(seed, m)
    assume(line is not None)
    e, n = points_around(line, seed, 300)
    t = line.place(e, n, ambiguity_m=1e-3, ambiguity_gap_m=0.0)
    ls = shapely.LineString(np.column_stack(line.vertices))
    pts = shapely.points(e, n)
    ref_s = shapely.line_locate_point(ls, pts)
    ref_d = shapely.distance(ls, pts)
    ch = t["chainage_m"].to_numpy()
    xl = t["crossline_m"].to_numpy()
    on_line = (ch >= 0) & (ch <= line.length)
    np.testing.assert_allclose(np.abs(xl[on_line]), ref_d[on_line], atol=1e-6)
    unique = on_line & (t["flags"] == "").to_numpy()
    np.testing.assert_allclose(ch[unique], ref_s[unique], atol=1e-6)


@SETTINGS
@given(seed=st.integers(0, 10_000), m=st.integers(2, 40))
def test_position_inverts_locate_away_from_vertices(seed, m):
    line = random_line(seed, m)
    assume(line is not None)
    e, n = points_around(line, seed, 300)
    ch, xl = line.locate(e, n)
    vc = line.vertex_chainage
    gap = np.min(np.abs(ch[:, None] - vc[None, 1:-1]), axis=1) if vc.size > 2 else np.full(ch.size, np.inf)
    ok = gap > 1e-6
    ee, nn = line.position(ch[ok], xl[ok])
    np.testing.assert_allclose(ee, e[ok], atol=1e-6)
    np.testing.assert_allclose(nn, n[ok], atol=1e-6)


@SETTINGS
@given(seed=st.integers(0, 10_000), m=st.integers(2, 40))
def test_chainage_never_decreases_along_the_line(seed, m):
    line = random_line(seed, m)
    assume(line is not None)
    s = np.sort(np.random.default_rng(seed).uniform(0, line.length, 500))
    e, n = line.position(s)
    ch, xl = line.locate(e, n)
    assert np.all(np.diff(ch) >= -1e-9)
    np.testing.assert_allclose(ch, s, atol=1e-6)
    np.testing.assert_allclose(xl, 0.0, atol=1e-6)


@SETTINGS
@given(seed=st.integers(0, 10_000), m=st.integers(2, 40))
def test_reversing_maps_s_to_L_minus_s_and_flips_crossline(seed, m):
    line = random_line(seed, m)
    assume(line is not None)
    e, n = points_around(line, seed, 300)
    t = line.place(e, n, ambiguity_m=1e-6, ambiguity_gap_m=0.0)  # exclude near-ties (they go to the lower chainage)
    keep = ~t["flags"].str.contains("ambiguous_foot").to_numpy()
    ch_r, xl_r = line.reversed().locate(e[keep], n[keep])
    np.testing.assert_allclose(ch_r, line.length - t["chainage_m"].to_numpy()[keep], atol=1e-6)
    np.testing.assert_allclose(xl_r, -t["crossline_m"].to_numpy()[keep], atol=1e-6)


def test_large_line_matches_brute_force():
    # Many vertices (deeper search tree): compare with an exhaustive search in numpy.
    line = meander_line(123, 3000)
    e, n = points_around(line, 9, 400, spread=400.0)
    x, y = line.vertices
    ax, ay = x[:-1], y[:-1]
    dx, dy = np.diff(x), np.diff(y)
    L2 = dx * dx + dy * dy
    t = np.clip(((e[:, None] - ax) * dx + (n[:, None] - ay) * dy) / L2, 0, 1)
    d = np.hypot(e[:, None] - ax - t * dx, n[:, None] - ay - t * dy)
    np.testing.assert_allclose(line.distance(e, n), d.min(axis=1), atol=1e-6)


def test_empty_input_and_docstring_examples():
    t = LEFT.place([], [])
    assert len(t) == 0 and list(t.columns) == ["chainage_m", "crossline_m", "status", "flags"]
    ch, xl = LEFT.locate(np.array([]), np.array([]))
    assert ch.size == 0 and xl.size == 0
    # the >>> examples in the docstrings of the line, binning and geodesy modules
    import doctest

    import geosect.binning
    import geosect.geodesy
    import geosect.line

    for mod in (geosect.line, geosect.binning, geosect.geodesy):
        res = doctest.testmod(mod)
        assert res.attempted > 0 and res.failed == 0, mod.__name__
