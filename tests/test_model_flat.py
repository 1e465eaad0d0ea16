"""Flat-Earth 1D travel times against textbook formulas and invariants.

All models here are synthetic (invented numbers).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import quad

from geosect.model import LayeredModel
from geosect.model.oned import leg_time_to_point

V1, V2, H = 5800.0, 6500.0, 20e3


@pytest.fixture(scope="module")
def two_layer():
    return LayeredModel.flat([0.0, H], [V1, V2], names=["surface", "base"])


@pytest.fixture(scope="module")
def crust():
    # the three-layer example of design.md section 5
    return LayeredModel.flat([0, 20e3, 35e3], [5800, 6500, 8040],
                             names=["surface", "mid-crust", "moho"])


# --- two-layer textbook formulas -------------------------------------------------
# Kearey, Brooks & Hill, An Introduction to Geophysical Exploration, 3rd ed. (2002),
# ch. 5 (refraction, two horizontal layers) and ch. 4 (reflection hyperbola).
# Equation numbers are not quoted because they are recalled from memory; the
# formulas are the standard ones.

def test_critical_distance_two_layer(two_layer):
    ic = np.arcsin(V1 / V2)
    expected = 2 * H * np.tan(ic)                       # x_crit = 2 z tan(i_c)
    assert two_layer.critical_distance("base") == pytest.approx(expected, rel=1e-12)


def test_crossover_distance_two_layer(two_layer):
    expected = 2 * H * np.sqrt((V2 + V1) / (V2 - V1))   # x_cross = 2 z sqrt((V2+V1)/(V2-V1))
    assert two_layer.crossover_distance("base") == pytest.approx(expected, rel=1e-6)


def test_head_wave_intercept_time(two_layer):
    ic = np.arcsin(V1 / V2)
    ti = 2 * H * np.cos(ic) / V1                        # intercept time 2 z cos(i_c)/V1
    x = np.linspace(80e3, 300e3, 12)
    t = two_layer.traveltime(x, "head:base")
    np.testing.assert_allclose(t - x / V2, ti, rtol=0, atol=1e-9)


def test_reflection_hyperbola(two_layer):
    x = np.concatenate([[0.0, 1.0, 100.0], np.linspace(1e3, 400e3, 50)])
    t = two_layer.traveltime(x, "reflection:base")
    expected = np.sqrt(x**2 / V1**2 + 4 * H**2 / V1**2)   # t^2 = x^2/V1^2 + 4h^2/V1^2
    np.testing.assert_allclose(t, expected, rtol=1e-12, atol=1e-11)


def test_reflection_touches_head_wave_at_critical_distance(two_layer):
    xc = 2 * H * np.tan(np.arcsin(V1 / V2))
    r = two_layer.solve(xc, "reflection:base")
    h = two_layer.traveltime(xc, "head:base")
    # same time, and the reflection's slope dt/dx = p equals 1/V2 there
    assert float(r.time_s) == pytest.approx(float(h), abs=1e-9)
    assert float(r.p_s_per_m) == pytest.approx(1 / V2, rel=1e-9)
    # beyond it the head wave comes first; below it there is none
    x = np.array([xc * 1.2, xc * 2, xc * 4])
    assert np.all(two_layer.traveltime(x, "head:base") < two_layer.traveltime(x, "reflection:base"))
    r0 = two_layer.solve(0.9 * xc, "head:base")
    assert np.isnan(r0.time_s) and r0.status == "below_critical_distance"


def test_direct_wave_straight(two_layer):
    x = np.linspace(0, 80e3, 9)
    np.testing.assert_allclose(two_layer.traveltime(x, "direct"), x / V1, rtol=1e-14)
    # source at depth in the top layer: the straight line (elementary geometry)
    t = two_layer.traveltime(x, "direct", source_depth_m=3000.0, receiver_depth_m=-500.0)
    np.testing.assert_allclose(t, np.hypot(x, 3500.0) / V1, rtol=1e-13)


def test_receiver_above_flat_top_extends_top_layer(two_layer):
    # design.md section 2: a station at -2000 m sees the top layer's velocity from -2000 m down
    x = np.array([0.0, 10e3, 40e3])
    t = two_layer.traveltime(x, "direct", receiver_depth_m=-2000.0)
    np.testing.assert_allclose(t, np.hypot(x, 2000.0) / V1, rtol=1e-13)
    t = two_layer.traveltime(x, "reflection:base", receiver_depth_m=-2000.0)
    # image-source geometry in one constant layer: vertical path 2H + 2000 m
    np.testing.assert_allclose(t, np.hypot(x, 2 * H + 2000.0) / V1, rtol=1e-12)


def test_head_wave_with_buried_endpoints(two_layer):
    # Each leg's slant path crosses (H - z) of the top layer: t = x/V2 + (2H - zs - zr) cos(ic)/V1
    # (Kearey, Brooks & Hill 2002, ch. 5, generalised to sources below the surface;
    # common practice, no separate source).
    zs, zr = 1500.0, -800.0
    ic = np.arcsin(V1 / V2)
    x = np.array([100e3, 200e3])
    t = two_layer.traveltime(x, "head:base", source_depth_m=zs, receiver_depth_m=zr)
    np.testing.assert_allclose(t, x / V2 + (2 * H - zs - zr) * np.cos(ic) / V1, atol=1e-9)


def test_multilayer_head_wave(crust):
    # t = x/V_n + sum_i 2 h_i cos(theta_i)/V_i with sin(theta_i) = V_i/V_n
    # (Kearey, Brooks & Hill 2002, ch. 5, multilayer case).
    v = np.array([5800.0, 6500.0])
    h = np.array([20e3, 15e3])
    vn = 8040.0
    ti = np.sum(2 * h * np.sqrt(1 - (v / vn) ** 2) / v)
    x = np.array([150e3, 250e3])
    np.testing.assert_allclose(crust.traveltime(x, "head:moho"), x / vn + ti, atol=1e-9)


def test_multilayer_reflection_parametric(crust):
    # Snell's law in flat layers: x(p) = sum 2 h_i tan(theta_i), t(p) = sum 2 h_i/(v_i cos theta_i)
    # (Kearey, Brooks & Hill 2002, ch. 4, reflection from the base of several layers).
    v = np.array([5800.0, 6500.0])
    h = np.array([20e3, 15e3])
    p = np.linspace(0.0, 0.999 / 6500.0, 25)
    sin = p[:, None] * v[None, :]
    cos = np.sqrt(1 - sin**2)
    x = np.sum(2 * h * sin / cos, axis=1)
    t = np.sum(2 * h / (v * cos), axis=1)
    r = crust.solve(x, "reflection:moho")
    np.testing.assert_allclose(r.time_s, t, rtol=1e-11)
    np.testing.assert_allclose(r.p_s_per_m, p, rtol=1e-7, atol=1e-12)
    # incidence angle at the reflector (from vertical, in the layer above)
    np.testing.assert_allclose(r.incidence_deg, np.degrees(np.arcsin(p * 6500.0)), atol=1e-5)
    # reflection point half way for a symmetric pair
    np.testing.assert_allclose(r.point_distance_m, x / 2, rtol=1e-9, atol=1e-6)


# --- linear velocity gradient ----------------------------------------------------


def test_gradient_direct_wave_closed_form():
    # t = (2/g) asinh(g x / (2 v0)) for a surface source and receiver in v = v0 + g z
    # (a standard result, e.g. Shearer, Introduction to Seismology, 2nd ed., ch. 4).
    v0, g = 4000.0, 0.08
    m = LayeredModel.flat([0.0], [v0], gradients=[g], names=["surface"])
    x = np.array([0.0, 500.0, 5e3, 30e3, 120e3])
    expected = (2 / g) * np.arcsinh(g * x / (2 * v0))
    np.testing.assert_allclose(m.traveltime(x, "direct"), expected, rtol=1e-12)
    # the same ray as a turning wave in the half-space
    np.testing.assert_allclose(m.traveltime(x[1:], "turning:layer1"), expected[1:], rtol=1e-9)


def test_gradient_direct_wave_between_depths():
    # Two points in v = v0 + g z: T = (1/g) acosh(1 + g^2 R^2 / (2 v1 v2)), R the straight
    # distance (the circular-ray result, e.g. Shearer, Introduction to Seismology, 2nd ed.,
    # ch. 4; recalled from memory, and it reduces to the asinh form above for z1 = z2 = 0).
    v0, g = 3000.0, 0.5
    m = LayeredModel.flat([0.0, 30e3], [v0, 30000.0], gradients=[g, 0.0])
    z1, z2 = 400.0, 2500.0
    x = np.array([0.0, 2e3, 10e3])
    v1, v2 = v0 + g * z1, v0 + g * z2
    expected = np.arccosh(1 + g**2 * (x**2 + (z2 - z1) ** 2) / (2 * v1 * v2)) / g
    t = m.traveltime(x, "direct", source_depth_m=z1, receiver_depth_m=z2)
    np.testing.assert_allclose(t, expected, rtol=1e-12)


def _quad_leg(p, v0, g, z_a, z_b):
    """X and T of a ray crossing v = v0 + g z from z_a to z_b, by numerical quadrature."""
    def v(z):
        return v0 + g * z
    x = quad(lambda z: p * v(z) / np.sqrt(1 - (p * v(z)) ** 2), z_a, z_b, epsabs=1e-12)[0]
    t = quad(lambda z: 1 / (v(z) * np.sqrt(1 - (p * v(z)) ** 2)), z_a, z_b, epsabs=1e-14)[0]
    return x, t


def test_gradient_layer_reflection_against_quadrature():
    # The ray integrals x = int p v / sqrt(1 - p^2 v^2) dz, t = int dz / (v sqrt(1 - p^2 v^2))
    # (Shearer, Introduction to Seismology, 2nd ed., ch. 4), evaluated by scipy quadrature.
    v0, g, h = 5000.0, 0.05, 12e3
    m = LayeredModel.flat([0.0, h], [v0, 7500.0], gradients=[g, 0.0], names=["surface", "base"])
    vb = v0 + g * h
    for p in (0.0, 0.3 / vb, 0.8 / vb, 0.97 / vb):
        x, t = _quad_leg(p, v0, g, 0.0, h)
        r = m.solve(2 * x, "reflection:base")
        assert float(r.time_s) == pytest.approx(2 * t, rel=1e-9)


def test_gradient_reflection_ends_at_grazing_offset():
    # Above a reflector with a gradient, the reflection reaches only the offset of the ray
    # grazing the reflector (p = 1/v_bottom); beyond it there is no reflection.
    v0, g, h = 5000.0, 0.05, 12e3
    m = LayeredModel.flat([0.0, h], [v0, 7500.0], gradients=[g, 0.0], names=["surface", "base"])
    vb = v0 + g * h
    x_max = 2 * _quad_leg(1 / vb * (1 - 1e-12), v0, g, 0.0, h)[0]
    r = m.solve([0.98 * x_max, 1.02 * x_max], "reflection:base")
    assert list(r.status) == ["ok", "no_ray"]


def test_turning_wave_below_constant_layer():
    # Constant layer over a gradient half-space; check against quadrature of the ray integrals.
    v1, h, v2, g = 4500.0, 3e3, 6000.0, 0.02
    m = LayeredModel.flat([0.0, h], [v1, v2], gradients=[0.0, g], layer_names=["cover", "basement"])
    p = 0.95 / v2
    zt = (1 / p - v2) / g
    x1 = h * p * v1 / np.sqrt(1 - (p * v1) ** 2)
    t1 = h / (v1 * np.sqrt(1 - (p * v1) ** 2))
    x2, t2 = _quad_leg(p, v2, g, 0.0, zt)
    x, t = 2 * (x1 + x2), 2 * (t1 + t2)
    r = m.solve(x, "turning:basement")
    assert float(r.time_s) == pytest.approx(t, rel=1e-8)
    assert float(r.p_s_per_m) == pytest.approx(p, rel=1e-6)


def test_first_arrival_is_minimum(crust):
    x = np.linspace(0, 300e3, 61)
    r = crust.solve(x, "first")
    phases = ["direct", "head:mid-crust", "head:moho", "reflection:mid-crust", "reflection:moho"]
    stack = np.vstack([crust.traveltime(x, ph) for ph in phases])
    np.testing.assert_allclose(r.time_s, np.nanmin(stack, axis=0), rtol=1e-13)
    assert r.arrival[0] == "P:direct"
    assert r.arrival[-1] == "P:head:moho"


# --- statuses ---------------------------------------------------------------------


def test_no_head_wave_under_slower_layer():
    m = LayeredModel.flat([0, 5e3, 12e3], [6000, 5000, 7000], names=["surface", "lvz", "deep"])
    assert any("no head wave along 'lvz'" in n for n in m.notes)
    r = m.solve([50e3, 100e3], "head:lvz")
    assert list(r.status) == ["not_head_wave_interface"] * 2
    assert np.isfinite(m.traveltime(100e3, "head:deep"))


def test_endpoint_below_reflector(crust):
    r = crust.solve([10e3, 10e3], "reflection:mid-crust", source_depth_m=[25e3, 5e3])
    assert list(r.status) == ["endpoint_below_interface", "ok"]


def test_deep_source_direct_wave_upgoing(crust):
    # A source in layer 2 and a receiver at the surface: the upgoing ray obeys Snell's law;
    # check x(p), t(p) from the sums over the two layers crossed (Kearey, Brooks & Hill 2002,
    # ch. 4, the same sums as for a reflection leg).
    zs = 28e3
    v = np.array([5800.0, 6500.0])
    h = np.array([20e3, zs - 20e3])
    for p in (0.0, 0.5 / 6500.0, 0.95 / 6500.0):
        sin = p * v
        x = np.sum(h * sin / np.sqrt(1 - sin**2))
        t = np.sum(h / (v * np.sqrt(1 - sin**2)))
        assert float(crust.traveltime(x, "direct", source_depth_m=zs)) == pytest.approx(t, rel=1e-10)


# --- invariants -------------------------------------------------------------------

depths = st.floats(min_value=-2500.0, max_value=15e3, allow_nan=False)
offsets = st.floats(min_value=0.0, max_value=250e3, allow_nan=False)


@settings(max_examples=40, deadline=None)
@given(x=offsets, zs=depths, zr=depths)
def test_reciprocity(crust, x, zs, zr):
    # swapping source and receiver (with their depths) leaves every time unchanged
    for ph in ("direct", "reflection:moho", "head:moho", "head:mid-crust", "first"):
        a = crust.traveltime(x, ph, source_depth_m=zs, receiver_depth_m=zr)
        b = crust.traveltime(x, ph, source_depth_m=zr, receiver_depth_m=zs)
        if np.isnan(a):
            assert np.isnan(b)
        else:
            assert b == pytest.approx(a, rel=1e-10, abs=1e-9)


@settings(max_examples=30, deadline=None)
@given(x=st.floats(min_value=0.0, max_value=200e3), shift=st.floats(min_value=-5e3, max_value=5e3),
       zs=st.floats(min_value=0.0, max_value=10e3))
def test_fermat_reflection_point(crust, x, shift, zs):
    # Fermat's principle: the specular path is the quickest through any point of the reflector.
    r = crust.solve(x, "reflection:moho", source_depth_m=zs)
    xp = float(r.point_distance_m)
    col = crust.to_column("P")
    t1, _ = leg_time_to_point(col, xp + shift, 35e3, zs)
    t2, _ = leg_time_to_point(col, x - xp - shift, 35e3, 0.0)
    assert float(t1 + t2) >= float(r.time_s) - 1e-9
    # and the legs through the specular point add up to the reflection time
    s1, _ = leg_time_to_point(col, xp, 35e3, zs)
    s2, _ = leg_time_to_point(col, x - xp, 35e3, 0.0)
    assert float(s1 + s2) == pytest.approx(float(r.time_s), abs=1e-8)


@settings(max_examples=20, deadline=None)
@given(x=st.floats(min_value=0.0, max_value=60e3), shift=st.floats(min_value=-3e3, max_value=3e3))
def test_fermat_one_layer_straight_lines(two_layer, x, shift):
    # In one constant layer the legs are straight lines: elementary geometry.
    r = two_layer.solve(x, "reflection:base")
    xp = float(r.point_distance_m)
    broken = (np.hypot(xp + shift, H) + np.hypot(x - xp - shift, H)) / V1
    assert broken >= float(r.time_s) - 1e-10


@settings(max_examples=25, deadline=None)
@given(dz=st.floats(min_value=0.0, max_value=19e3))
def test_deeper_source_zero_offset_reflection(crust, dz):
    # zero offset: a source dz deeper in the top layer shortens the time by dz / v1
    t0 = crust.traveltime(0.0, "reflection:moho")
    t1 = crust.traveltime(0.0, "reflection:moho", source_depth_m=dz)
    assert float(t0 - t1) == pytest.approx(dz / 5800.0, rel=1e-12, abs=1e-12)


def test_ray_path_ends(crust):
    r = crust.solve([30e3, 120e3], "reflection:moho", path=True, source_depth_m=500.0)
    px, pz = r.path_distance_m, r.path_depth_m
    np.testing.assert_allclose(px[:, 0], 0.0, atol=1e-9)
    np.testing.assert_allclose(pz[:, 0], 500.0)
    last = np.array([row[np.isfinite(row)][-1] for row in px])
    np.testing.assert_allclose(last, [30e3, 120e3], atol=1e-6)
    assert np.nanmax(pz) == pytest.approx(35e3)


def test_s_waves_scale_with_vpvs():
    # one vp/vs for every layer scales all velocities by 1/k, so every S time is k times the
    # P time at the same offset (the ray geometry is unchanged)
    k = 1.76
    m = LayeredModel.flat([0, 15e3, 33e3], [5900, 6600, 8100], names=["surface", "conrad", "moho"],
                          vpvs=k, gradients=[0.02, 0.01, 0.0])
    x = np.linspace(0.0, 250e3, 26)
    for ph in ("direct", "reflection:moho", "head:moho", "head:conrad", "first"):
        tp = m.traveltime(x, ph, source_depth_m=2e3)
        ts = m.traveltime(x, "S:" + ph, source_depth_m=2e3)
        np.testing.assert_allclose(ts, k * tp, rtol=1e-10)
    # S velocities given directly: the gradient keeps each layer's vs/vp
    m2 = LayeredModel.flat([0, 10e3], [5000, 6000], vs_ms=[2900, 3400], gradients=[0.05, 0.0])
    assert m2.velocity(0.0, 5e3, wave="S") == pytest.approx(2900 + 0.05 * 2900 / 5000 * 5e3)
