"""Tests of the 2D two-point ray tracer (geosect.model.raytrace2d).

Every model here is synthetic (invented depths and velocities).  Expected
values are recomputed from the formula or library named beside each check.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq

from geosect.errors import InputError
from geosect.model import Interface, Layer, LayeredModel
from geosect.model.flattening import (EARTH_RADIUS_M, flatten_depth, flatten_velocity,
                                      unflatten_depth)
from geosect.model.raytrace2d import (RESULT_COLUMNS, LayerLaw, RayTracer2D, TraceModel,
                                      trace_shot)

HYP = settings(max_examples=8, deadline=None)


def const_model(interfaces, velocities, names=None, layer_names=None, vpvs=1.73):
    """A TraceModel of constant layers; interfaces as (chainage, depth) node pairs."""
    n = len(velocities)
    names = names or ["surface"] + [f"i{k}" for k in range(1, n)]
    layer_names = layer_names or [f"l{k}" for k in range(n)]
    vp = [LayerLaw.linear(v) for v in velocities]
    vs = [LayerLaw.linear(v / vpvs) for v in velocities]
    return TraceModel(names, layer_names, [(np.atleast_1d(c), np.atleast_1d(z))
                                           for c, z in interfaces], vp, vs)


# ---------------------------------------------------------------------------
# flat layers: the 1D solver and textbook formulas
# ---------------------------------------------------------------------------


def test_flat_constant_layers_equal_1d_solver_and_hyperbola():
    # Two constant layers: the reflection hyperbola t^2 = (x^2 + 4 h^2) / v1^2
    # (Telford, Geldart & Sheriff, Applied Geophysics, 2nd ed., section 4.3 -- the
    # section number from memory), and the project's exact 1D solver, to 0.1 ms.
    h, v1, v2 = 2500.0, 3200.0, 4500.0
    m = LayeredModel.flat([0.0, h], [v1, v2], names=["surface", "base"])
    x = np.linspace(-12e3, 12e3, 121)
    r = trace_shot(m, 0.0, 0.0, x, np.zeros_like(x), "reflection:base", n_rays=61)
    assert (r.status == "ok").all()
    np.testing.assert_allclose(r.time_s, np.sqrt(x ** 2 + 4 * h ** 2) / v1, atol=1e-4)
    np.testing.assert_allclose(r.time_s, m.traveltime(np.abs(x), "reflection:base"), atol=1e-4)
    # reflection point halfway between source and receiver, on the reflector
    np.testing.assert_allclose(r.point_chainage_m, x / 2, atol=1.0)
    np.testing.assert_allclose(r.point_depth_m, h, atol=1e-6)
    # incidence angle: tan(i) = (x / 2) / h (same construction)
    np.testing.assert_allclose(r.incidence_deg, np.degrees(np.arctan(np.abs(x) / 2 / h)), atol=0.05)


def test_flat_gradient_layers_equal_1d_solver():
    # Layers with vertical gradients, P and S, reflections and turning rays:
    # against LayeredModel.traveltime (exact 1D integrals) to 0.1 ms.
    m = LayeredModel.flat([0.0, 2000.0, 5000.0], [2000.0, 3000.0, 4000.0],
                          names=["surface", "base", "deep"], gradients=[0.5, 0.3, 0.1])
    x = np.linspace(-20e3, 20e3, 161)
    x = x[np.abs(np.abs(x) - 15e3) > 100]  # keep off the critical distance of 'deep'
    tracer = RayTracer2D(m)
    for ph in ("reflection:deep", "reflection:base", "S:reflection:deep", "turning:layer2",
               "turning:layer3"):
        r = tracer.trace(0.0, 0.0, x, np.zeros_like(x), ph, n_rays=61)
        t1 = m.traveltime(np.abs(x), ph)
        ok = r.status == "ok"
        # the same receivers have rays (except the zero-offset turning ray of length 0)
        np.testing.assert_array_equal(ok | (x == 0), np.isfinite(t1) | (x == 0))
        np.testing.assert_allclose(r.time_s[ok], t1[ok], atol=1e-4)
        assert np.isnan(r.time_s[~ok]).all()


def test_linear_gradient_turning_ray_closed_form():
    # v = v0 + g z, surface source and receivers: t = (2/g) asinh(g x / (2 v0)) and
    # turning depth z = (v0/g) (sqrt(1 + (g x / (2 v0))^2) - 1)  (Shearer,
    # Introduction to Seismology, ch. 4, from memory; the turning point lies midway).
    v0, g = 3000.0, 0.8
    m = TraceModel.flat([0.0], [v0], gradients=[g], names=["surface"], layer_names=["crust"])
    xs = 5000.0
    x = np.array([500.0, 3000.0, 10e3, 25e3, 60e3])
    r = trace_shot(m, xs, 0.0, xs + x, np.zeros_like(x), "turning:crust", n_rays=61, tol_m=0.01)
    assert (r.status == "ok").all()
    y = g * x / (2 * v0)
    np.testing.assert_allclose(r.time_s, 2 / g * np.arcsinh(y), atol=1e-6)
    # (the point belongs to the final ray, which emerges within tol_m of the receiver)
    np.testing.assert_allclose(r.point_depth_m, v0 / g * (np.sqrt(1 + y ** 2) - 1), atol=0.01)
    np.testing.assert_allclose(r.point_chainage_m, xs + x / 2, atol=0.01)


def test_turning_ray_shadow_beyond_layer_bottom():
    # A gradient layer of thickness H over a half-space: turning rays exist only up
    # to the distance of the ray that turns at its bottom,
    # x_max = (2 v0 / g) sqrt((1 + g H / v0)^2 - 1) (from the turning-depth formula
    # above, solved for x); beyond it 'no_ray' and NaN, never an extrapolated time.
    v0, g, H = 2500.0, 0.6, 3000.0
    m = TraceModel.flat([0.0, H], [v0, 7000.0], gradients=[g, 0.0], names=["surface", "base"],
                        layer_names=["sediments", "basement"])
    x_max = 2 * v0 / g * np.sqrt((1 + g * H / v0) ** 2 - 1)
    x = np.array([0.5, 0.9, 0.99, 1.01, 1.2, 2.0]) * x_max
    r = trace_shot(m, 0.0, 0.0, x, np.zeros_like(x), "turning:sediments", n_rays=61)
    inside = x < x_max
    assert (r.status[inside] == "ok").all()
    assert (r.status[~inside] == "no_ray").all()
    assert np.isnan(r.time_s[~inside]).all() and np.isfinite(r.time_s[inside]).all()
    assert (r.n_branches[~inside] == 0).all()


def test_borehole_source_shortens_zero_offset_time():
    # A shot d below the surface in a constant top layer: the vertical reflection time
    # drops by d / v1 (elementary geometry; common practice, no source), and the
    # 1D solver agrees with the source depth given.
    h, v1, d = 1800.0, 2400.0, 45.0
    m = LayeredModel.flat([0.0, h], [v1, 3900.0], names=["surface", "base"])
    x = np.array([0.0, 800.0, 2500.0])
    r0 = trace_shot(m, 0.0, 0.0, x, np.zeros(3), "reflection:base", n_rays=61)
    r1 = trace_shot(m, 0.0, d, x, np.zeros(3), "reflection:base", n_rays=61)
    assert r0.time_s[0] - r1.time_s[0] == pytest.approx(d / v1, abs=1e-6)
    np.testing.assert_allclose(r1.time_s, m.traveltime(x, "reflection:base", source_depth_m=d),
                               atol=1e-4)


def test_s_waves_scale_with_vpvs():
    # Constant vp/vs everywhere: S rays follow the P paths, times scale by vp/vs
    # (Snell's law is unchanged when all velocities scale; common practice, no source).
    m = LayeredModel.flat([0.0, 1500.0, 4000.0], [2500.0, 3500.0, 5000.0],
                          names=["surface", "a", "b"], gradients=[0.2, 0.1, 0.0], vpvs=1.8)
    x = np.linspace(-6e3, 6e3, 25)
    tr = RayTracer2D(m)
    rp = tr.trace(0.0, 0.0, x, np.zeros_like(x), "reflection:b", n_rays=61)
    rs = tr.trace(0.0, 0.0, x, np.zeros_like(x), "S:reflection:b", n_rays=61)
    np.testing.assert_allclose(rs.time_s, 1.8 * rp.time_s, rtol=1e-6)
    np.testing.assert_allclose(rs.point_chainage_m, rp.point_chainage_m, atol=1.0)


# ---------------------------------------------------------------------------
# dipping reflector: the image-source construction
# ---------------------------------------------------------------------------


@pytest.mark.parametrize("dip_deg", [12.0, -20.0, 30.0])
def test_dipping_plane_reflector_image_source(dip_deg):
    # Constant velocity over a plane dipping reflector z = z0 + x tan(dip).  The
    # reflected ray comes from the image of the source mirrored in the plane:
    # t = |S' R| / v, and the reflection point is where S'R meets the plane
    # (Telford, Geldart & Sheriff, Applied Geophysics, 2nd ed., section 4.3 -- the
    # section number from memory).
    # Receivers on both sides: shooting up-dip and down-dip.
    v, z0 = 3000.0, 3000.0
    tan = np.tan(np.radians(dip_deg))
    cx = np.array([-50e3, 50e3])
    m = const_model([(0.0, 0.0), (cx, z0 + cx * tan)], [v, 5000.0], names=["surface", "refl"])
    xs = 0.0
    xr = np.array([-4000.0, -1500.0, -300.0, 700.0, 2500.0, 4500.0])
    r = trace_shot(m, xs, 0.0, xr, np.zeros_like(xr), "reflection:refl", n_rays=121, tol_m=0.01)
    # image of S = (xs, 0) in the line z = z0 + x tan: unit normal n, signed distance d
    n = np.array([-tan, 1.0]) / np.hypot(tan, 1.0)
    s = np.array([xs, 0.0])
    p0 = np.array([0.0, z0])
    img = s - 2 * np.dot(s - p0, n) * n
    rr = np.column_stack([xr, np.zeros_like(xr)])
    t_exp = np.hypot(*(rr - img).T) / v
    # where S'R meets the plane: S' + u (R - S'), with (P - p0) . n = 0
    u = -np.dot(img - p0, n) / ((rr - img) @ n)
    pt = img + u[:, None] * (rr - img)
    # only receivers whose ray exists (image construction valid on the plane: 0 < u < 1)
    exists = (u > 0) & (u < 1) & (pt[:, 1] > 100.0)
    assert (r.status[exists] == "ok").all()
    np.testing.assert_allclose(r.time_s[exists], t_exp[exists], atol=1e-6)
    np.testing.assert_allclose(r.point_chainage_m[exists], pt[exists, 0], atol=0.05)
    np.testing.assert_allclose(r.point_depth_m[exists], pt[exists, 1], atol=0.05)


# ---------------------------------------------------------------------------
# a tight syncline: several branches, found independently by brute force
# ---------------------------------------------------------------------------

XC, W, A, ZF, VS = 0.0, 3000.0, 1200.0, 2000.0, 2500.0


def trough(x):
    """Depth of a cosine trough reflector (synthetic), and its slope."""
    x = np.asarray(x, float)
    inside = np.abs(x - XC) < W / 2
    ph = 2 * np.pi * (x - XC) / W
    z = np.where(inside, ZF + A * (1 + np.cos(ph)) / 2, ZF)
    dz = np.where(inside, -A * np.pi / W * np.sin(ph), 0.0)
    return z, dz


def stationary_paths(xs, xr):
    """Specular reflection points of S -> reflector -> R by brute force (constant velocity).

    Every stationary point of the path length L(xi) = |S P(xi)| + |P(xi) R| along
    the reflector is found from sign changes of dL/dxi on a dense grid, refined by
    Brent's method, and kept when both legs stay above the reflector (a ray that
    meets the reflector earlier is reflected there instead).  Fermat's principle:
    each such point is a reflected ray.
    """
    def dL(xi):
        z, dz = trough(xi)
        d1 = np.hypot(xi - xs, z)
        d2 = np.hypot(xi - xr, z)
        return ((xi - xs) + z * dz) / d1 + ((xi - xr) + z * dz) / d2

    grid = np.linspace(-8000.0, 8000.0, 32001) + 0.1234  # no grid point on a symmetry axis
    f = dL(grid)
    idx = np.flatnonzero(np.sign(f[:-1]) * np.sign(f[1:]) < 0)
    pts = []
    for k in idx:
        xi = brentq(lambda q: float(dL(q)), grid[k], grid[k + 1], xtol=1e-9)
        z = float(trough(xi)[0])
        ok = True
        for (ax, az) in ((xs, 0.0), (xr, 0.0)):
            u = np.linspace(0.0, 1.0, 4001)[1:-1]
            lx = ax + u * (xi - ax)
            lz = az + u * (z - az)
            if np.any(lz > trough(lx)[0] + 1e-6):
                ok = False
        if ok:
            pts.append((xi, (np.hypot(xi - xs, z) + np.hypot(xi - xr, z)) / VS))
    return pts


def test_syncline_branches_match_brute_force():
    # The trough's radius of curvature at its bottom, 1 / z'' = 2 W^2 / (A (2 pi)^2)
    # (about 380 m), is far less than its depth, so its focus lies below the surface
    # and receivers over the centre see three reflections ("bow tie").
    cx = np.linspace(-3000.0, 3000.0, 241)
    m = const_model([(0.0, 0.0), (cx, trough(cx)[0])], [VS, 4000.0], names=["surface", "trough"])
    xs = 0.0
    xr = np.linspace(-2500.0, 2500.0, 41)
    r = trace_shot(m, xs, 0.0, xr, np.zeros_like(xr), "reflection:trough", n_rays=181,
                   smooth=True, smooth_tol_m=0.002, tol_m=0.1)
    checked = 0
    multi = 0
    for k, x in enumerate(xr):
        pts = stationary_paths(xs, x)
        xi = np.sort([p[0] for p in pts])
        if xi.size > 1 and np.diff(xi).min() < 60.0:
            continue  # too close to a caustic for a fair count
        checked += 1
        assert r.n_branches[k] == len(pts), (x, pts)
        if pts:
            assert r.status[k] == "ok"
            assert r.time_s[k] == pytest.approx(min(p[1] for p in pts), abs=1e-4)
            multi += len(pts) > 1
    assert checked > 30 and multi > 5


def test_smoothing_removes_false_gaps_of_kinked_reflector():
    # A broad, gentle anticline given by few nodes: the polyline's kinks make gaps
    # and overlaps in the reflected rays (false caustics); the PCHIP spline gives one
    # ray per receiver everywhere (the smooth reflector has no caustic: its radius of
    # curvature, at least 1 / z''max, exceeds its depth -- common practice, no source).
    cx = np.linspace(-20e3, 20e3, 11)
    cz = 4000.0 - 600.0 * np.exp(-(cx / 9000.0) ** 2)
    m = const_model([(0.0, 0.0), (cx, cz)], [3000.0, 4500.0], names=["surface", "dome"])
    xr = np.linspace(-6000.0, 6000.0, 241)
    kinked = trace_shot(m, 0.0, 0.0, xr, np.zeros_like(xr), "reflection:dome", n_rays=121)
    smooth = trace_shot(m, 0.0, 0.0, xr, np.zeros_like(xr), "reflection:dome", n_rays=121,
                        smooth=True)
    assert ((kinked.status != "ok") | (kinked.n_branches > 1)).any()
    assert (smooth.status == "ok").all() and (smooth.n_branches == 1).all()


# ---------------------------------------------------------------------------
# a model with lateral change: closed form for a constant gradient vector
# ---------------------------------------------------------------------------


def test_constant_gradient_vector_closed_form():
    # v = v0 + gx x + gz z (lateral change: Runge-Kutta integration).  For a
    # constant velocity gradient the two-point time is
    # T = acosh(1 + |g|^2 r^2 / (2 v1 v2)) / |g|, r the distance between the points
    # (a standard result for linear velocity; stated from memory -- for gx = 0 it is
    # Shearer's (2 / g) asinh(g x / (2 v0)) above, which the algebra confirms).
    v0, gx, gz = 3000.0, 0.05, 0.6
    X = np.array([-1e6, 1e6])
    law = LayerLaw(X, v0 + gx * X, v0 + gx * X + 1000 * gz, 0.0, 1000.0)
    m = TraceModel(["surface"], ["crust"], [(np.zeros(1), np.zeros(1))], [law], [law])
    xr = np.linspace(-40e3, 40e3, 81)
    xr = xr[xr != 0]
    r = trace_shot(m, 0.0, 0.0, xr, np.zeros_like(xr), "turning:crust", n_rays=61)
    g = np.hypot(gx, gz)
    t_exp = np.arccosh(1 + g ** 2 * xr ** 2 / (2 * v0 * (v0 + gx * xr))) / g
    assert (r.status == "ok").all()
    np.testing.assert_allclose(r.time_s, t_exp, atol=2e-6)
    # for gx = 0 the formula is the asinh one (checks the statement above)
    y = gz * 7000.0 / (2 * v0)
    assert np.arccosh(1 + 2 * y ** 2) / gz == pytest.approx(2 / gz * np.arcsinh(y), rel=1e-12)


# ---------------------------------------------------------------------------
# a 2D model with topography, gradients and lateral change: invariants
# ---------------------------------------------------------------------------


def crust2d():
    """An invented 2D crust with topography (synthetic numbers)."""
    xt = np.linspace(0.0, 60e3, 241)
    elev = 500.0 + 1200.0 * np.exp(-((xt - 30e3) / 8e3) ** 2) + 60.0 * np.sin(xt / 1500.0)
    itf = [Interface("surface", [0.0], [0.0]),
           Interface("mid", [0.0, 25e3, 40e3, 60e3], [8e3, 9e3, 12e3, 11e3]),
           Interface("moho", [0.0, 28e3, 34e3, 60e3], [30e3, 31e3, 38e3, 39e3])]
    lay = [Layer("upper", [5200.0, 5800.0, 5500.0], [6000.0, 6300.0, 6100.0], [0.0, 30e3, 60e3],
                 vpvs=1.73),
           Layer("lower", [6400.0, 6600.0], [6900.0, 7100.0], [0.0, 60e3], vpvs=1.78),
           Layer("mantle", 8000.0, None, None, vp_gradient_per_s=0.003, vpvs=1.75)]
    m = LayeredModel(itf, lay, top="dem", name="test crust (synthetic)")
    m.set_topography(xt, elev)
    return m, xt, elev


def test_adapter_reproduces_model_velocity():
    # TraceModel.from_model keeps the model's own velocity law exactly
    # (LayeredModel.velocity as reference, including points above the DEM).
    m, xt, elev = crust2d()
    tm = TraceModel.from_model(m)
    rng = np.random.default_rng(3)
    x = rng.uniform(-2e3, 62e3, 4000)
    z = rng.uniform(-1800.0, 50e3, 4000)
    for wave in ("P", "S"):
        ref = m.velocity(x, z, wave)
        good = np.isfinite(ref)
        np.testing.assert_allclose(tm.velocity(x, z, wave)[good], ref[good], rtol=1e-12)
    # S velocities given directly rather than by vp/vs
    m2 = LayeredModel.flat([0.0, 3000.0, 9000.0], [4000.0, 5500.0, 7000.0],
                           vs_ms=[2300.0, 3100.0, 4000.0], gradients=[0.3, 0.1, 0.02])
    tm2 = TraceModel.from_model(m2)
    np.testing.assert_allclose(tm2.velocity(x, z, "S"), m2.velocity(x, z, "S"), rtol=1e-12)


@pytest.fixture(scope="module")
def crust_tracer():
    m, xt, elev = crust2d()
    stations = np.linspace(0.0, 60e3, 121)
    sz = -np.interp(stations, xt, elev)
    return RayTracer2D(m, surface_chainage_m=stations, surface_depth_m=sz), stations, sz


@HYP
@given(i=st.integers(0, 120), j=st.integers(0, 120),
       ph=st.sampled_from(["reflection:moho", "reflection:mid", "S:reflection:mid",
                           "turning:upper"]))
def test_reciprocity(crust_tracer, i, j, ph):
    # Swapping source and receiver gives the same time (reciprocity; Cerveny 2001,
    # Seismic Ray Theory, ch. 3 -- from memory).  Sources and receivers at stations.
    tr, x, z = crust_tracer
    a = tr.trace(x[i], z[i], x[j:j + 1], z[j:j + 1], ph, n_rays=61, tol_m=0.05)
    b = tr.trace(x[j], z[j], x[i:i + 1], z[i:i + 1], ph, n_rays=61, tol_m=0.05)
    if a.status[0] == "ok" and b.status[0] == "ok":
        assert a.time_s[0] == pytest.approx(b.time_s[0], abs=2e-6)
        # the reflection point is not stationary like the time: with the default
        # 2 km Runge-Kutta steps it moves by metres over a 60 km path
        assert a.point_chainage_m[0] == pytest.approx(b.point_chainage_m[0], abs=15.0)


def test_receivers_on_steep_topography_have_their_own_elevation(crust_tracer):
    # Paths end at the receivers themselves (their chainage and elevation), on the
    # steep flank of the invented range.
    tr, x, z = crust_tracer
    sel = slice(30, 60)
    r = tr.trace(x[45], z[45], x[sel], z[sel], "reflection:mid", n_rays=61, return_paths=True,
                 tol_m=0.5)
    ok = r.status == "ok"
    assert ok.sum() > 20
    ends = np.array([p[-1] for p, good in zip(r.paths, ok) if good])
    np.testing.assert_allclose(ends[:, 0], x[sel][ok], atol=0.5)
    np.testing.assert_allclose(ends[:, 1], z[sel][ok], atol=0.5)
    starts = np.array([p[0] for p, good in zip(r.paths, ok) if good])
    np.testing.assert_allclose(starts, np.tile([x[45], z[45]], (ok.sum(), 1)), atol=1e-9)
    assert (r.flags[ok] != "receiver_off_surface").all()


def test_topography_constant_velocity_image_source():
    # Receivers at their own elevations over a flat reflector at depth D in a
    # constant medium: t = |S' R| / v with S' the source mirrored in the reflector,
    # R = (x_r, -elevation_r) (image construction, Telford, Geldart & Sheriff,
    # section 4.3; the top layer's law continues up to each receiver).
    v, D = 4000.0, 5000.0
    xt = np.linspace(-10e3, 10e3, 401)
    elev = 900.0 + 700.0 * np.tanh(xt / 1500.0)      # a steep step in the relief
    m = LayeredModel([Interface("surface", [0.0], [0.0]), Interface("base", [0.0], [D])],
                     [Layer("rock", v, v, vpvs=1.73), Layer("below", 6000.0, None, None, vpvs=1.73)],
                     top="dem")
    m.set_topography(xt, elev)
    xr = np.linspace(-6000.0, 6000.0, 49)
    zr = -np.interp(xr, xt, elev)
    xs, zs = -500.0, -float(np.interp(-500.0, xt, elev))
    r = trace_shot(m, xs, zs, xr, zr, "reflection:base", n_rays=61)
    t_exp = np.hypot(xr - xs, zr - (2 * D - zs)) / v
    assert (r.status == "ok").all()
    np.testing.assert_allclose(r.time_s, t_exp, atol=1e-5)


def path_vertices_on(path, ifx, ifz, tol=1e-6):
    """Indices of inner path vertices lying on the interface polyline."""
    z_if = np.interp(path[:, 0], ifx, ifz)
    return [k for k in range(1, len(path) - 1) if abs(path[k, 1] - z_if[k]) < tol]


@HYP
@given(s1=st.floats(-0.06, 0.06), s2=st.floats(-0.08, 0.08),
       v=st.lists(st.floats(1500.0, 7000.0), min_size=2, max_size=2),
       xs=st.floats(-3000.0, 3000.0))
def test_snell_at_every_crossing(s1, s2, v, xs):
    # Constant layers between kinked dipping interfaces: at every crossing of every
    # traced ray sin(i1)/v1 = sin(i2)/v2 in the interface's own frame, and the angle
    # of reflection equals the angle of incidence at the reflector (Snell's law,
    # e.g. Shearer, Introduction to Seismology, ch. 4).  Angles come from the path
    # vertices, slopes from the interface nodes, velocities from the model.
    c1 = np.array([-30e3, 0.0, 30e3])
    z1 = np.maximum(1500.0 + np.array([-30e3 * s1, 0.0, 15e3 * s1]), 300.0)
    c2 = np.array([-30e3, -2000.0, 30e3])
    z2 = np.maximum(4000.0 + np.array([-28e3 * s2, 0.0, 22e3 * s2]), z1.max() + 500.0)
    m = const_model([(0.0, 0.0), (c1, z1), (c2, z2)], v + [8000.0],
                    names=["surface", "a", "b"])
    xr = np.linspace(xs - 6000.0, xs + 6000.0, 13)
    r = trace_shot(m, xs, 0.0, xr, np.zeros_like(xr), "reflection:b", n_rays=61,
                   return_paths=True)
    checked = 0
    for path, good in zip(r.paths, r.status == "ok"):
        if not good:
            continue
        for ifx, ifz, refl in ((c1, z1, False), (c2, z2, True)):
            for k in path_vertices_on(path, ifx, ifz):
                x = path[k, 0]
                seg = np.clip(np.searchsorted(ifx, x) - 1, 0, len(ifx) - 2)
                slope = (ifz[seg + 1] - ifz[seg]) / (ifx[seg + 1] - ifx[seg])
                tang = np.array([1.0, slope]) / np.hypot(1.0, slope)
                din = (path[k] - path[k - 1]) / np.linalg.norm(path[k] - path[k - 1])
                dout = (path[k + 1] - path[k]) / np.linalg.norm(path[k + 1] - path[k])
                above = float(m.velocity(x, path[k, 1] - 1.0))
                below = float(m.velocity(x, path[k, 1] + 1.0))
                if refl:
                    assert np.dot(din, tang) == pytest.approx(np.dot(dout, tang), abs=1e-7)
                else:
                    v_in, v_out = (above, below) if din[1] > 0 else (below, above)
                    assert np.dot(din, tang) / v_in == pytest.approx(np.dot(dout, tang) / v_out,
                                                                     rel=1e-7, abs=1e-12)
                checked += 1
    if (r.status == "ok").any():
        assert checked > 0


def test_fermat_moving_reflection_point_lengthens_time():
    # Fermat: the reflected path is stationary -- here the least time -- among
    # broken paths through points of the reflector; moving the reflection point
    # along a plane reflector with the neighbouring vertices fixed lengthens it
    # (Fermat's principle; the sum of distances to two fixed points above a line
    # is convex along it -- common practice, no source).
    m = const_model([(0.0, 0.0), (np.array([-20e3, 20e3]), np.array([1200.0, 2000.0])),
                     (np.array([-20e3, 20e3]), np.array([4500.0, 3500.0]))],
                    [2200.0, 3400.0, 5000.0], names=["surface", "a", "b"])
    xr = np.array([-5000.0, -1000.0, 2000.0, 6000.0])
    r = trace_shot(m, 500.0, 0.0, xr, np.zeros(4), "reflection:b", n_rays=61, return_paths=True,
                   tol_m=0.01)
    tang = np.array([40e3, -1000.0]) / np.hypot(40e3, -1000.0)
    v2 = 3400.0
    for path, t in zip(r.paths, r.time_s):
        k = int(np.argmax(path[:, 1]))          # the reflection point is the deepest vertex
        p, a, b = path[k], path[k - 1], path[k + 1]
        base = (np.linalg.norm(p - a) + np.linalg.norm(b - p)) / v2
        for delta in (-200.0, -20.0, 20.0, 200.0):
            q = p + delta * tang
            assert (np.linalg.norm(q - a) + np.linalg.norm(b - q)) / v2 > base
        # and the path's own time is the traced time
        seg = np.diff(path, axis=0)
        mid = path[:-1] + 0.5 * seg
        vel = m.velocity(mid[:, 0], mid[:, 1])
        assert np.sum(np.hypot(*seg.T) / vel) == pytest.approx(t, abs=1e-5)


# ---------------------------------------------------------------------------
# a pinch-out
# ---------------------------------------------------------------------------


def test_pinch_out_no_crash_and_right_paths():
    # Layer 'l1' thins to nothing at chainage 5 km; beyond, 'a' and 'b' coincide.
    # Rays that reach the missing layer reflect from the merged interface with the
    # top layer above: there t = |S' R| / v0 (image source in the flat interface at
    # 2 km; Telford, Geldart & Sheriff, section 4.3).  Turning rays of the missing
    # layer do not exist there.
    v0 = 2500.0
    m = const_model([(0.0, 0.0), (np.array([0.0, 5000.0]), np.array([1000.0, 2000.0])),
                     (0.0, 2000.0)], [v0, 3500.0, 5000.0], names=["surface", "a", "b"])
    xr = np.linspace(-4000.0, 20000.0, 97)
    for ph in ("reflection:b", "reflection:a", "turning:l1", "S:reflection:b"):
        r = trace_shot(m, 12000.0, 0.0, xr, np.zeros_like(xr), ph, n_rays=61)
        assert set(r.status) <= {"ok", "no_ray"}
        assert np.isnan(r.time_s[r.status == "no_ray"]).all()
    for ph in ("reflection:b", "reflection:a"):
        r = trace_shot(m, 12000.0, 0.0, xr, np.zeros_like(xr), ph, n_rays=61)
        far = (r.status == "ok") & (r.point_chainage_m > 7000.0)
        assert far.sum() > 20
        t_exp = np.hypot(xr - 12000.0, 2 * 2000.0) / v0
        np.testing.assert_allclose(r.time_s[far], t_exp[far], atol=1e-6)
    r = trace_shot(m, 12000.0, 0.0, xr, np.zeros_like(xr), "turning:l1", n_rays=61)
    assert (r.status == "no_ray").all()


# ---------------------------------------------------------------------------
# Earth flattening against TauP
# ---------------------------------------------------------------------------


def test_flattening_matches_taup_iasp91_moho_reflection():
    # The Moho reflection of the iasp91 crust on a spherical Earth: obspy's TauP
    # (phase 'PvmP' and 'SvmS') as reference, to 1 ms, with our model built from
    # the very layers TauP uses (Kennett & Engdahl 1991: 0-20 km 5.8 km/s,
    # 20-35 km 6.5 km/s).  Chainage is arc length at the surface, R = 6371 km.
    # Without flattening the flat-Earth times are off by far more.
    from obspy.taup import TauPyModel

    taup = TauPyModel("iasp91")
    lay = taup.model.s_mod.v_mod.layers
    R = taup.model.radius_of_planet * 1e3
    assert R == EARTH_RADIUS_M
    tops = [float(lay[k]["top_depth"]) * 1e3 for k in range(3)]
    vp = [float(lay[k]["top_p_velocity"]) * 1e3 for k in range(3)]
    vs = [float(lay[k]["top_s_velocity"]) * 1e3 for k in range(3)]
    assert lay[0]["top_p_velocity"] == lay[0]["bot_p_velocity"]
    names = ["surface", "conrad", "moho"]
    laws_p = [LayerLaw.linear(v) for v in vp]
    laws_s = [LayerLaw.linear(v) for v in vs]
    m = TraceModel(names, ["upper", "lower", "mantle"], [(0.0, t) for t in tops], laws_p, laws_s)
    dist = np.array([60e3, 120e3, 200e3, 300e3])
    tracer = RayTracer2D(m, flatten=True)
    flat = RayTracer2D(m)
    for ph, tp in (("reflection:moho", "PvmP"), ("S:reflection:moho", "SvmS")):
        r = tracer.trace(0.0, 0.0, dist, np.zeros_like(dist), ph, n_rays=61, tol_m=0.1)
        rf = flat.trace(0.0, 0.0, dist, np.zeros_like(dist), ph, n_rays=61, tol_m=0.1)
        ref = []
        for d in dist:
            arr = taup.get_travel_times(source_depth_in_km=0.0, receiver_depth_in_km=0.0,
                                        distance_in_degree=np.degrees(d / R), phase_list=[tp])
            ref.append(arr[0].time)
        ref = np.array(ref)
        np.testing.assert_allclose(r.time_s, ref, atol=1e-3)
        assert abs(rf.time_s[-1] - ref[-1]) > 0.02
        # the reflection point is on the Moho, in true depth
        np.testing.assert_allclose(r.point_depth_m, tops[2], atol=1e-3)


@HYP
@given(z=st.floats(-5000.0, 700e3))
def test_flattening_formulas(z):
    # z_f = -R ln((R - z)/R), v_f = v R/(R - z) (Mueller 1971, from memory) and the
    # inverse; recomputed with plain logarithms.
    R = EARTH_RADIUS_M
    zf = float(flatten_depth(z))
    assert zf == pytest.approx(-R * np.log((R - z) / R), rel=1e-12, abs=1e-9)
    assert float(unflatten_depth(zf)) == pytest.approx(z, rel=1e-12, abs=1e-6)
    assert float(flatten_velocity(6000.0, z)) == pytest.approx(6000.0 * R / (R - z), rel=1e-14)


def test_flattening_2d_model_runs_and_is_small_at_short_offsets(crust_tracer):
    # On a 2D model flattening changes short-offset times only a little (the
    # correction grows with offset^2 / R; common practice, no source).
    tr, x, z = crust_tracer
    m, xt, elev = crust2d()
    flat = RayTracer2D(m, surface_chainage_m=x, surface_depth_m=z, flatten=True)
    a = tr.trace(x[50], z[50], x[40:60], z[40:60], "reflection:moho", n_rays=61)
    b = flat.trace(x[50], z[50], x[40:60], z[40:60], "reflection:moho", n_rays=61)
    ok = (a.status == "ok") & (b.status == "ok")
    assert ok.sum() > 10
    d = np.abs(a.time_s[ok] - b.time_s[ok])
    assert (d < 0.02).all() and (d > 0).any()


# ---------------------------------------------------------------------------
# statuses, flags, errors, output
# ---------------------------------------------------------------------------


def test_statuses_flags_and_errors():
    m = LayeredModel.flat([0.0, 1000.0, 3000.0], [2000.0, 3000.0, 4000.0],
                          names=["surface", "a", "b"])
    x = np.array([100.0, np.nan, 500.0])
    r = trace_shot(m, 0.0, 0.0, x, [0.0, 0.0, np.nan], "reflection:b", n_rays=31)
    assert list(r.status) == ["ok", "bad_position", "bad_position"]
    # a source below the reflector
    r = trace_shot(m, 0.0, 2000.0, [500.0], [0.0], "reflection:a", n_rays=31)
    assert r.status[0] == "no_ray" and "source_below_target" in r.flags[0]
    # turning rays in a constant layer: none, with NaN times
    r = trace_shot(m, 0.0, 0.0, [500.0, 4000.0], [0.0, 0.0], "turning:layer2", n_rays=31)
    assert (r.status == "no_ray").all() and np.isnan(r.time_s).all()
    with pytest.raises(InputError, match="no interface 'moho'"):
        trace_shot(m, 0.0, 0.0, [500.0], [0.0], "reflection:moho")
    with pytest.raises(InputError, match="no layer"):
        trace_shot(m, 0.0, 0.0, [500.0], [0.0], "turning:mantle")
    with pytest.raises(InputError, match="head"):
        trace_shot(m, 0.0, 0.0, [500.0], [0.0], "head:b")
    with pytest.raises(InputError, match="top surface"):
        trace_shot(m, 0.0, 0.0, [500.0], [0.0], "reflection:surface")
    r = trace_shot(m, np.nan, 0.0, [500.0], [0.0], "reflection:b")
    assert r.status[0] == "bad_source"
    df = trace_shot(m, 0.0, 0.0, [500.0, 900.0], [0.0, 0.0], "reflection:b", n_rays=31).to_frame()
    assert list(df.columns) == list(RESULT_COLUMNS) and len(df) == 2


def test_receiver_off_the_recording_surface_is_flagged_and_corrected():
    # A tracer whose recording surface is the datum, receivers 20 m below it in a
    # constant layer: the flag is set, and the time is that of the ray to the
    # receiver itself, sqrt(x^2 + (2h - 20)^2) / v (image source, as above).
    h, v = 1500.0, 3000.0
    m = LayeredModel.flat([0.0, h], [v, 5000.0], names=["surface", "base"])
    tr = RayTracer2D(m, surface_chainage_m=[-1e4, 1e4], surface_depth_m=[0.0, 0.0])
    x = np.array([200.0, 1000.0])
    r = tr.trace(0.0, 0.0, x, [20.0, 20.0], "reflection:base", n_rays=61, tol_m=0.01)
    assert all("receiver_off_surface" in f for f in r.flags)
    np.testing.assert_allclose(r.time_s, np.hypot(x, 2 * h - 20.0) / v, atol=5e-5)


def test_smoothing_keeps_flat_extensions_and_touching_interfaces_apart():
    # Interfaces with nodes only between 20 and 30 km, flat beyond, touching at a
    # node (a pinch-out); a shot over the flat part far from the nodes: smoothing
    # must change nothing there (the spline is flat beyond its end nodes, and
    # smoothed interfaces that touch cannot cross), so times agree with the
    # image-source time in the flat two-interface stack (elementary geometry:
    # straight legs, Snell at the flat interface -- checked against the unsmoothed
    # tracer, whose flat-layer times equal the 1D solver above).
    c = np.array([20e3, 25e3, 30e3])
    za = np.array([1500.0, 2600.0, 1800.0])
    zb = np.array([2400.0, 2600.0, 3500.0])
    m = const_model([(0.0, 0.0), (c, za), (c, zb)], [2500.0, 3300.0, 5200.0],
                    names=["surface", "a", "b"])
    xr = np.linspace(-2000.0, 9000.0, 23)
    plain = trace_shot(m, 3000.0, 0.0, xr, np.zeros_like(xr), "reflection:b", n_rays=91)
    smooth = trace_shot(m, 3000.0, 0.0, xr, np.zeros_like(xr), "reflection:b", n_rays=91,
                        smooth=True)
    flat = LayeredModel.flat([0.0, 1500.0, 2400.0], [2500.0, 3300.0, 5200.0],
                             names=["surface", "a", "b"])
    t1 = flat.traveltime(np.abs(xr - 3000.0), "reflection:b")
    assert (plain.status == "ok").all() and (smooth.status == "ok").all()
    np.testing.assert_allclose(plain.time_s, t1, atol=1e-6)
    np.testing.assert_allclose(smooth.time_s, t1, atol=1e-6)
    assert (smooth.n_branches == 1).all()


def test_source_above_the_surface_in_a_laterally_varying_layer():
    # A source 25 m above a flat surface (the top layer's law continues upward),
    # a layer whose velocity changes very slightly along the line (so rays are
    # integrated by Runge-Kutta), a flat reflector at D: t = |S' R| / v with S'
    # the source mirrored in the reflector (image construction as above; the
    # lateral change of 1e-7 /s alters times by well under 1e-5 s).
    v0, D = 3000.0, 2500.0
    X = np.array([-1e5, 1e5])
    law = LayerLaw(X, v0 + 1e-7 * X, v0 + 1e-7 * X, 0.0, 1000.0)
    fast = LayerLaw.linear(5000.0)
    m = TraceModel(["surface", "refl"], ["rock", "below"], [(0.0, 0.0), (0.0, D)],
                   [law, fast], [law, fast])
    xr = np.linspace(-5000.0, 5000.0, 21)
    r = trace_shot(m, 0.0, -25.0, xr, np.zeros_like(xr), "reflection:refl", n_rays=61)
    assert (r.status == "ok").all()
    np.testing.assert_allclose(r.time_s, np.hypot(xr, 2 * D + 25.0) / v0, atol=1e-5)
