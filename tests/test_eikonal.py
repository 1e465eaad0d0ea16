"""Tests of the fast-marching travel times (geosect.model.eikonal).

Every model here is synthetic (invented layer depths and velocities).  Expected
values are recomputed from published closed forms, named beside each check, or
from other solvers: the exact 1D solver of geosect (LayeredModel.traveltime) and
the 2D shooting ray tracer (geosect.model.raytrace2d), which are independent
implementations of the same physics.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from geosect.errors import InputError, ModelError
from geosect.model import Interface, Layer, LayeredModel
from geosect.model import eikonal as E
from geosect.model._fmm_kernels import march
from geosect.model.eikonal import (LayerSection, default_spacing_m, first_arrivals, phase_times,
                                   ray_paths, time_field)


def _tol(t, rel=1e-3, floor_s=0.010):
    """The accuracy target of the task: 0.1 % of the time or 10 ms, whichever is larger."""
    return np.maximum(rel * np.abs(t), floor_s)


def _head_multilayer(x, thick, v, n):
    """Head wave along the top of layer n below flat layers (Kearey, Brooks & Hill,
    An Introduction to Geophysical Exploration, 3rd ed., 2002, ch. 5, the multilayer
    case: t = x / v_n + sum_i 2 z_i cos(theta_in) / v_i with sin(theta_in) = v_i / v_n;
    recalled from memory)."""
    t = np.asarray(x, dtype=float) / v[n]
    for i in range(n):
        th = np.arcsin(v[i] / v[n])
        t = t + 2.0 * thick[i] * np.cos(th) / v[i]
    return t


# ----------------------------------------------------------------------------- kernel


def test_kernel_point_source_constant_velocity():
    # straight rays in a constant velocity: t = r / v (common practice, no source)
    nz, nx, h, v = 81, 161, 100.0, 6000.0
    xs, zs = 40 * h + 37.0, 20 * h + 11.0
    X, Z = np.meshgrid(np.arange(nx) * h, np.arange(nz) * h)
    R = np.hypot(X - xs, Z - zs)
    box = (np.abs(X - xs) <= 10 * h) & (np.abs(Z - zs) <= 10 * h)
    T = np.where(box, R / v, np.inf).ravel()
    region = np.where(box, 3, 1).astype(np.int8).ravel()
    n = march(T, region, np.full(nz * nx, 1.0 / v), nz, nx, h, True)
    assert n == nz * nx
    err = T.reshape(nz, nx) - R / v
    assert np.abs(err).max() < 1e-3                       # 1 ms over up to 14 km
    assert np.all(T.reshape(nz, nx)[box] == (R / v)[box])   # fixed seeds kept


@pytest.mark.parametrize("angle_deg", [0.0, 17.0, 45.0, 71.0])
def test_kernel_plane_wave_is_exact(angle_deg):
    # a plane wave T = s (x sin a + z cos a) is linear, so first- and second-order
    # upwind differences are both exact (common practice, no source)
    nz, nx, h, s = 40, 50, 50.0, 1.0 / 5000.0
    a = np.radians(angle_deg)
    X, Z = np.meshgrid(np.arange(nx) * h, np.arange(nz) * h)
    exact = s * (X * np.sin(a) + Z * np.cos(a))
    seed = (X < 2 * h) | (Z < 2 * h)
    T = np.where(seed, exact, np.inf).ravel()
    march(T, np.ones(nz * nx, np.int8), np.full(nz * nx, s), nz, nx, h, True)
    assert np.abs(T.reshape(nz, nx) - exact).max() < 1e-9


def test_kernel_halo_is_never_traversed():
    # a wall of halo nodes (code 2) across the grid: nodes beyond it stay unreached
    nz, nx, h = 20, 30, 10.0
    region = np.ones((nz, nx), np.int8)
    region[:, 15] = 2
    T = np.full((nz, nx), np.inf)
    T[10, 2] = 0.0
    march(T.ravel(), region.ravel(), np.full(nz * nx, 1e-3), nz, nx, h, True)
    assert np.all(np.isfinite(T[:, :16]))     # the wall itself gets extrapolated times
    assert np.all(np.isinf(T[:, 16:]))


# ----------------------------------------------------------------------------- flat layers


def test_direct_and_gradient_half_space():
    # constant gradient v = v0 + g z: t = arccosh(1 + g^2 r^2 / (2 v0 v)) / g
    # (Slotnick, Lessons in Seismic Computing, SEG 1959, the linear-increase case;
    # recalled from memory)
    v0, g = 6000.0, 0.02
    sec = LayerSection.flat([0.0], [v0], ["surface"], gradients=[g])
    x = np.array([0.0, 5e3, 40e3, 120e3, 250e3])
    t, status = first_arrivals(sec, 0.0, 0.0, x, 0.0, spacing_m=1000.0)
    exact = np.arccosh(1.0 + g * g * x * x / (2.0 * v0 * v0)) / g
    assert status.tolist() == ["ok"] * x.size
    np.testing.assert_allclose(t, exact, atol=5e-3)


def test_two_layer_head_wave_and_critical_distance():
    # two layers: t = x / v2 + 2 h cos(ic) / v1, critical distance 2 h tan(ic)
    # (Kearey, Brooks & Hill, 3rd ed., ch. 5, the two-layer case)
    v1, v2, h = 6000.0, 8000.0, 30e3
    sec = LayerSection.flat([0.0, h], [v1, v2], ["surface", "moho"])
    ic = np.arcsin(v1 / v2)
    xc = 2.0 * h * np.tan(ic)
    x = np.array([20e3, xc - 5e3, xc + 5e3, 150e3, 300e3])
    t, status = phase_times(sec, 0.0, 0.0, x, 0.0, "head:moho", spacing_m=1000.0)
    assert status.tolist() == ["below_critical_distance"] * 2 + ["ok"] * 3
    exact = x / v2 + 2.0 * h * np.cos(ic) / v1
    ok = status == "ok"
    assert np.all(np.abs(t[ok] - exact[ok]) <= _tol(exact[ok]))
    assert np.all(np.isnan(t[~ok]))


def test_three_layer_head_waves_and_first_arrivals_at_300_km():
    # the default grid (250 m) on a 300 km line, against the multilayer formula
    # (Kearey, Brooks & Hill, 3rd ed., ch. 5)
    tops = [0.0, 20e3, 35e3]
    v = np.array([5800.0, 6500.0, 8040.0])
    sec = LayerSection.flat(tops, v, ["surface", "mid-crust", "moho"])
    thick = np.diff(tops)
    x = np.linspace(0.0, 300e3, 13)
    assert default_spacing_m(sec) == 250.0
    t_first, st_first = first_arrivals(sec, 0.0, 0.0, x, 0.0)
    exact_first = np.minimum.reduce([x / v[0], _head_multilayer(x, thick, v, 1),
                                     _head_multilayer(x, thick, v, 2)])
    assert np.all(st_first == "ok")
    assert np.all(np.abs(t_first - exact_first) <= _tol(exact_first))
    # the multistage scheme puts interfaces at their depth: it does much better than the target
    assert np.abs(t_first - exact_first).max() < 3e-3
    t_pn, st_pn = phase_times(sec, 0.0, 0.0, x, 0.0, "head:moho")
    exact_pn = _head_multilayer(x, thick, v, 2)
    ok = st_pn == "ok"
    assert ok[-6:].all()
    assert np.all(np.abs(t_pn[ok] - exact_pn[ok]) <= _tol(exact_pn[ok]))


def test_flat_reflection_hyperbola():
    # t = sqrt(x^2 + 4 h^2) / v (Kearey, Brooks & Hill, 3rd ed., ch. 4, single reflector)
    v1, h = 6000.0, 30e3
    sec = LayerSection.flat([0.0, h], [v1, 8000.0], ["surface", "moho"])
    x = np.linspace(0.0, 250e3, 11)
    t, status = phase_times(sec, 0.0, 0.0, x, 0.0, "reflection:moho", spacing_m=1000.0)
    assert np.all(status == "ok")
    np.testing.assert_allclose(t, np.hypot(x, 2 * h) / v1, atol=0.020)


def test_against_exact_1d_solver():
    # geosect's exact 1D solver (closed forms per layer and a root search on the ray
    # parameter) is an independent implementation of the same layered physics
    m = LayeredModel.flat([0, 20e3, 35e3], [5800, 6500, 8040], names=["surface", "mid-crust", "moho"],
                          gradients=[0.01, 0.0, 0.0])
    x = np.linspace(0.0, 200e3, 11)
    for phase in ("first", "direct", "head:mid-crust", "head:moho", "reflection:moho", "S:first"):
        ref = m.solve(x, phase)
        t, status = phase_times(m, 0.0, 0.0, x, 0.0, phase, spacing_m=1000.0)
        both = (status == "ok") & (ref.status == "ok")
        assert both.sum() >= 5, phase
        assert np.all(np.abs(t[both] - ref.time_s[both]) <= _tol(ref.time_s[both])), phase
        # the statuses agree except within 5 km of a critical distance
        far = np.ones(x.size, dtype=bool)
        for name in ("mid-crust", "moho"):
            xc = m.critical_distance(name, wave=phase[0] if phase.startswith("S") else "P")
            far &= np.abs(x - xc) > 5e3
        assert np.all(status[far] == ref.status[far]), phase


def test_deep_source_against_exact_1d_solver():
    # a source in the lower crust: the direct wave is transmitted upward through the
    # mid-crustal interface; the head wave along it does not exist for this source
    m = LayeredModel.flat([0, 20e3, 35e3], [5800, 6500, 8040], names=["surface", "mid-crust", "moho"])
    x = np.linspace(0.0, 300e3, 11)
    for phase in ("direct", "head:moho", "reflection:moho", "first", "head:mid-crust"):
        ref = m.solve(x, phase, source_depth_m=25e3)
        t, status = phase_times(m, 0.0, 25e3, x, 0.0, phase, spacing_m=500.0)
        assert np.all(status == ref.status), phase
        ok = status == "ok"
        assert np.all(np.abs(t[ok] - ref.time_s[ok]) <= _tol(ref.time_s[ok])), phase
    assert np.all(status == "endpoint_below_interface")


def test_turning_wave_in_a_gradient_layer():
    # diving wave through a gradient layer below a constant one, against the exact 1D solver
    m = LayeredModel.flat([0, 10e3], [5000, 6000], names=["surface", "top2"],
                          gradients=[0.0, 0.02], layer_names=["upper", "lower"])
    x = np.linspace(40e3, 200e3, 5)
    ref = m.solve(x, "turning:lower")
    t, status = phase_times(m, 0.0, 0.0, x, 0.0, "turning:lower", spacing_m=500.0)
    assert np.all(status == "ok") and np.all(ref.status == "ok")
    assert np.all(np.abs(t - ref.time_s) <= _tol(ref.time_s))
    # the top layer has no gradient: no turning wave there
    _, st_up = phase_times(m, 0.0, 0.0, x, 0.0, "turning:upper", spacing_m=1000.0)
    assert np.all(st_up == "no_ray")


def test_receivers_at_depth_read_bilinearly():
    # borehole receivers inside a constant layer: straight rays (common practice, no source)
    v = 5500.0
    sec = LayerSection.flat([0.0, 30e3], [v, 8000.0], ["surface", "moho"])
    rx = np.array([3e3, 17.3e3, 41.7e3, 60e3])
    rz = np.array([1234.0, 5678.9, 12e3, 29e3])
    t, status = phase_times(sec, 2e3, 700.0, rx, rz, "direct", spacing_m=500.0)
    assert np.all(status == "ok")
    np.testing.assert_allclose(t, np.hypot(rx - 2e3, rz - 700.0) / v, atol=3e-3)


def test_receiver_next_to_the_source_gets_the_analytic_time():
    sec = LayerSection.flat([0.0, 30e3], [6000.0, 8000.0], ["surface", "moho"])
    fld = time_field(sec, 1000.0, 500.0, "direct", spacing_m=500.0)
    r = fld.read([1000.0, 1300.0], [500.0, 900.0])
    np.testing.assert_allclose(r.time_s, [0.0, 500.0 / 6000.0], atol=1e-12)
    assert r.flags.tolist() == ["near_source", "near_source"]


# ----------------------------------------------------------------------------- 2D structure


def _dipping(alpha_deg=5.0, z0=10e3, v1=5000.0, v2=7000.0):
    a = np.radians(alpha_deg)
    ch = np.array([-20e3, 220e3])
    tops = np.array([[0.0, 0.0], z0 + ch * np.tan(a)])
    return LayerSection(chainage_m=ch, tops_m=tops, vp_top_ms=[v1, v2],
                        interface_names=("surface", "base")), a, z0, v1, v2


def test_dipping_refractor_up_and_down_dip():
    # dipping layer: t = x sin(ic + a) / v1 + 2 h cos(ic) / v1 shooting down-dip and
    # sin(ic - a) up-dip, h the perpendicular depth under the shot (Kearey, Brooks &
    # Hill, 3rd ed., ch. 5, the dipping-layer case)
    sec, a, z0, v1, v2 = _dipping()
    ic = np.arcsin(v1 / v2)
    off = np.array([60e3, 120e3, 200e3])
    t_dn, s_dn = phase_times(sec, 0.0, 0.0, off, 0.0, "head:base", spacing_m=250.0)
    exact_dn = off * np.sin(ic + a) / v1 + 2 * z0 * np.cos(a) * np.cos(ic) / v1
    z_up = z0 + 200e3 * np.tan(a)
    t_up, s_up = phase_times(sec, 200e3, 0.0, 200e3 - off, 0.0, "head:base", spacing_m=250.0)
    exact_up = off * np.sin(ic - a) / v1 + 2 * z_up * np.cos(a) * np.cos(ic) / v1
    assert np.all(s_dn == "ok") and np.all(s_up == "ok")
    assert np.all(np.abs(t_dn - exact_dn) <= _tol(exact_dn))
    assert np.all(np.abs(t_up - exact_up) <= _tol(exact_up))


def test_dipping_reflector_image_source():
    # a plane reflector: the time is the distance from the mirror image of the source
    # divided by v (Kearey, Brooks & Hill, 3rd ed., ch. 4, dipping reflector)
    sec, a, z0, v1, _ = _dipping()
    n = np.array([-np.sin(a), np.cos(a)])
    src = np.array([50e3, 0.0])
    image = src - 2 * np.dot(src - np.array([0.0, z0]), n) * n
    x = np.linspace(0.0, 200e3, 9)
    t, status = phase_times(sec, src[0], 0.0, x, 0.0, "reflection:base", spacing_m=500.0)
    assert np.all(status == "ok")
    np.testing.assert_allclose(t, np.hypot(x - image[0], image[1]) / v1, atol=0.010)


def test_reflection_against_2d_ray_tracer():
    # the task's check: multistage reflections within 20 ms of the 2D ray tracer
    from geosect.model.raytrace2d import trace_shot

    itfs = [Interface("surface", [0.0], [0.0]), Interface("base", [0.0, 200e3], [10e3, 27.5e3])]
    lays = [Layer("upper", 5000.0, 5500.0, vpvs=1.73), Layer("lower", 7000.0, vpvs=1.73)]
    m = LayeredModel(itfs, lays)
    x = np.linspace(5e3, 120e3, 8)
    ref = trace_shot(m, 0.0, 0.0, x, np.zeros_like(x), "reflection:base")
    t, status = phase_times(m, 0.0, 0.0, x, 0.0, "reflection:base", spacing_m=500.0)
    both = (ref.status == "ok") & (status == "ok")
    assert both.sum() >= 6
    assert np.abs(t[both] - ref.time_s[both]).max() < 0.020


def test_air_above_the_dem_is_not_traversed():
    # a V-shaped canyon 5 km deep between source and receiver in a constant layer:
    # the first arrival bends under its tip, t = 2 sqrt(50^2 + 5^2) km / v, instead of
    # the straight 100 km / v through the air (common practice, no source)
    v = 6000.0
    ch = np.array([0.0, 48e3, 50e3, 52e3, 100e3])
    surf = np.array([0.0, 0.0, 5000.0, 0.0, 0.0])
    sec = LayerSection(chainage_m=ch, tops_m=np.array([surf, surf + 30e3]), vp_top_ms=[v, 8000.0],
                       interface_names=("surface", "moho"), open_top=False)
    around = 2 * np.hypot(50e3, 5e3) / v
    for method in ("multistage", "grid"):
        t, status = first_arrivals(sec, 0.0, 0.0, [100e3], 0.0, spacing_m=250.0, method=method)
        assert status[0] == "ok"
        assert abs(t[0] - around) < 0.025
        assert t[0] - 100e3 / v > 0.05


def test_layered_model_with_topography():
    # a receiver above the DEM is read at the surface below it and flagged
    m = LayeredModel.flat([0, 25e3], [6000, 8000], names=["surface", "moho"])
    m = LayeredModel(m.interfaces, m.layers, top="dem")
    ch = np.linspace(0, 100e3, 11)
    m.set_topography(ch, 1500.0 + 0.0 * ch)
    fld = time_field(m, 0.0, -1500.0, "direct", spacing_m=500.0)
    r = fld.read([40e3, 60e3], [-1500.0, -1700.0])
    assert r.status.tolist() == ["ok", "ok"]
    assert r.flags.tolist() == ["", "moved_to_surface"]
    np.testing.assert_allclose(r.time_s, [40e3 / 6000.0, 60e3 / 6000.0], atol=3e-3)
    assert np.isnan(fld.time_grid_s[0]).all()        # the top row is air


# ----------------------------------------------------------------------------- statuses and errors


def test_statuses():
    sec = LayerSection.flat([0.0, 10e3, 30e3], [6000.0, 5000.0, 8000.0],
                            ["surface", "lvz", "moho"])
    # layer below 'lvz' is slower: no head wave along it
    _, st = phase_times(sec, 0.0, 0.0, [50e3, 150e3], 0.0, "head:lvz", spacing_m=1000.0)
    assert st.tolist() == ["not_head_wave_interface"] * 2
    # receiver below the reflector
    _, st = phase_times(sec, 0.0, 0.0, [50e3, 50e3], [0.0, 31e3], "reflection:moho",
                        spacing_m=1000.0)
    assert st.tolist() == ["ok", "endpoint_below_interface"]
    # the refractor lies below the bottom of the grid
    _, st = phase_times(sec, 0.0, 0.0, [150e3], 0.0, "head:moho", spacing_m=1000.0,
                        max_depth_m=25e3)
    assert st.tolist() == ["outside_model"]
    fld = time_field(sec, 0.0, 0.0, "direct", spacing_m=1000.0, chainage_range_m=(-1e3, 60e3))
    r = fld.read([30e3, 90e3, np.nan], [0.0, 0.0, 0.0])
    assert r.status.tolist() == ["ok", "outside_model", "bad_coordinates"]
    assert np.isfinite(r.time_s[0]) and np.isnan(r.time_s[1:]).all()


def test_errors_name_the_fault_and_the_fix():
    sec = LayerSection.flat([0.0, 30e3], [6000.0, 8000.0], ["surface", "moho"])
    with pytest.raises(ModelError, match="no interface 'mohoo'") as e:
        phase_times(sec, 0.0, 0.0, [1e3], 0.0, "head:mohoo")
    assert "'moho'" in str(e.value)
    with pytest.raises(InputError, match="unknown kind"):
        phase_times(sec, 0.0, 0.0, [1e3], 0.0, "refraction:moho")
    with pytest.raises(InputError, match="first arrivals only"):
        time_field(sec, 0.0, 0.0, "head:moho", method="grid")
    with pytest.raises(InputError, match="outside the grid"):
        time_field(sec, 0.0, 1e6, "direct", spacing_m=1000.0)
    with pytest.raises(InputError, match="spacing_m"):
        time_field(sec, 0.0, 0.0, "direct", spacing_m=-5.0)
    with pytest.raises(InputError, match="wave"):
        first_arrivals(sec, 0.0, 0.0, [1e3], 0.0, wave="X")
    with pytest.raises(ModelError, match="interfaces cross"):
        LayerSection(chainage_m=[0.0, 1e3], tops_m=[[0.0, 0.0], [5e3, -1e3]],
                     vp_top_ms=[5000.0, 6000.0])


def test_default_spacing_follows_model_and_frequency():
    sec = LayerSection.flat([0.0, 20e3, 35e3], [5800.0, 6500.0, 8040.0])
    assert default_spacing_m(sec) == E.DEFAULT_SPACING_M
    thin = LayerSection.flat([0.0, 600.0, 35e3], [3000.0, 6000.0, 8040.0])
    assert default_spacing_m(thin) == 100.0          # a quarter of 600 m, rounded down
    # a quarter of the shortest wavelength 3000 / 4 Hz = 750 m is 187.5 m, rounded to 100 m
    assert default_spacing_m(LayerSection.flat([0.0], [3000.0]), frequency_hz=4.0) == 100.0
    with pytest.raises(InputError, match="frequency_hz"):
        default_spacing_m(sec, frequency_hz=0.0)


# ----------------------------------------------------------------------------- rays


def test_head_wave_path_enters_and_leaves_the_refractor_at_the_critical_angle():
    # entry and exit lie h tan(ic) from source and receiver (Kearey, Brooks & Hill,
    # 3rd ed., ch. 5, two-layer ray geometry)
    v1, v2, h = 6000.0, 8000.0, 30e3
    sec = LayerSection.flat([0.0, h], [v1, v2], ["surface", "moho"])
    x = np.array([100e3, 180e3])
    fld = time_field(sec, 0.0, 0.0, "head:moho", spacing_m=500.0, chainage_range_m=(-5e3, 185e3))
    rp = ray_paths(fld, x, 0.0)
    d = h * np.tan(np.arcsin(v1 / v2))
    assert rp.status.tolist() == ["ok", "ok"]
    np.testing.assert_allclose(rp.entry_chainage_m, d, atol=500.0)
    np.testing.assert_allclose(rp.exit_chainage_m, x - d, atol=500.0)
    for i in range(2):
        cx, cz = rp.path(i)
        assert (cx[0], cz[0]) == (0.0, 0.0) and cx[-1] == x[i]
        assert cz.max() == pytest.approx(h)
        # the travel time along the traced path matches the field
        ds = np.hypot(np.diff(cx), np.diff(cz))
        zm = 0.5 * (cz[1:] + cz[:-1])
        t_path = np.sum(ds / np.where(zm < h - 1.0, v1, v2))
        assert t_path == pytest.approx(fld.read(x[i], 0.0).time_s.item(), abs=0.02)


def test_reflection_path_meets_the_flat_reflector_at_the_midpoint():
    # flat reflector, constant velocity: the reflection point is under the midpoint
    sec = LayerSection.flat([0.0, 20e3], [6000.0, 8000.0], ["surface", "base"])
    x = np.array([10e3, 40e3, 80e3])
    fld = time_field(sec, 0.0, 0.0, "reflection:base", spacing_m=500.0,
                     chainage_range_m=(-5e3, 85e3))
    rp = ray_paths(fld, x, 0.0)
    np.testing.assert_allclose(rp.point_chainage_m, x / 2, atol=500.0)
    np.testing.assert_allclose(rp.point_depth_m, 20e3)
    assert np.isnan(rp.entry_chainage_m).all()


# ----------------------------------------------------------------------------- invariants


@settings(max_examples=8, deadline=None)
@given(c=st.floats(0.5, 2.0))
def test_scaling_all_velocities_scales_all_times(c):
    # the eikonal equation is homogeneous in slowness: v -> c v gives t -> t / c
    base = dict(tops_m=[0.0, 12e3, 30e3], names=["surface", "mid", "moho"], gradients=[0.01, 0, 0])
    v = np.array([5500.0, 6400.0, 8000.0])
    a = LayerSection.flat(base["tops_m"], v, base["names"], gradients=base["gradients"])
    b = LayerSection.flat(base["tops_m"], c * v, base["names"],
                          gradients=[c * g for g in base["gradients"]])
    x = np.linspace(0.0, 150e3, 7)
    ta, sa = first_arrivals(a, 0.0, 300.0, x, 0.0, spacing_m=1000.0)
    tb, sb = first_arrivals(b, 0.0, 300.0, x, 0.0, spacing_m=1000.0)
    assert np.all(sa == "ok") and np.all(sb == "ok")
    np.testing.assert_allclose(tb, ta / c, rtol=1e-9, atol=1e-12)


@settings(max_examples=6, deadline=None)
@given(xa=st.floats(2e3, 40e3), xb=st.floats(60e3, 118e3), za=st.floats(0.0, 8e3))
def test_reciprocity_in_a_2d_model(xa, xb, za):
    # swapping source and receiver leaves the first-arrival time unchanged (reciprocity;
    # common practice, no source), here with a dipping Moho and a hill on top
    ch = np.linspace(0.0, 120e3, 13)
    surf = -800.0 * np.exp(-((ch - 70e3) / 15e3) ** 2)
    moho = 25e3 + 0.05 * ch
    sec = LayerSection(chainage_m=ch, tops_m=np.array([surf, moho]), vp_top_ms=[5800.0, 8000.0],
                       vp_gradient_per_s=[0.015, 0.0], interface_names=("surface", "moho"),
                       open_top=False)
    zb = float(np.interp(xb, ch, surf))
    za = float(np.interp(xa, ch, surf)) + za
    t_ab, _ = first_arrivals(sec, xa, za, [xb], zb, spacing_m=500.0)
    t_ba, _ = first_arrivals(sec, xb, zb, [xa], za, spacing_m=500.0)
    assert abs(t_ab[0] - t_ba[0]) < 0.012
