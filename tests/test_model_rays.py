"""1D rays beyond the textbook cases: deep sources, turning branches, paths, statuses.

Models are synthetic (invented numbers).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import quad

from geosect.model import LayeredModel


def _x_t(p, v_of_z, za, zb, turning=False, gradient=None):
    """Ray integrals x = int p v / sqrt(1 - p^2 v^2) dz, t = int dz / (v sqrt(1 - p^2 v^2)) by
    quadrature (Shearer, Introduction to Seismology, 2nd ed., ch. 4); 'alg' weights take the
    inverse-square-root end of a turning ray exactly."""
    if turning:
        # near the turning depth zb, 1 - p^2 v^2 ~ (zb - z): integrate f(z) (zb - z)^(-1/2)
        def cos_sq_over(z):
            if zb - z < 1e-6:   # the limit at the turning point, 2 p^2 v dv/dz with v = 1/p
                return 2 * p * gradient
            return (1 - (p * v_of_z(z)) ** 2) / (zb - z)
        wx = quad(lambda z: p * v_of_z(z) / np.sqrt(cos_sq_over(z)), za, zb, weight="alg",
                  wvar=(0, -0.5), epsabs=1e-12)[0]
        wt = quad(lambda z: 1 / (v_of_z(z) * np.sqrt(cos_sq_over(z))), za, zb, weight="alg",
                  wvar=(0, -0.5), epsabs=1e-14)[0]
        return wx, wt
    x = quad(lambda z: p * v_of_z(z) / np.sqrt(1 - (p * v_of_z(z)) ** 2), za, zb, epsabs=1e-12)[0]
    t = quad(lambda z: 1 / (v_of_z(z) * np.sqrt(1 - (p * v_of_z(z)) ** 2)), za, zb, epsabs=1e-14)[0]
    return x, t


@pytest.fixture(scope="module")
def cover_over_gradient():
    # 3 km of 4.5 km/s cover over a basement with v = 5.6 km/s + 0.04/s * (z - 3 km)
    return LayeredModel.flat([0.0, 3e3], [4500.0, 5600.0], gradients=[0.0, 0.04],
                             names=["surface", "basement"], layer_names=["cover", "basement"])


def test_deep_source_direct_wave_that_first_dives(cover_over_gradient):
    # A hypocentre in the gradient basement: at long offsets the direct ray leaves it downwards,
    # bottoms where v = 1/p and comes up through the cover (the second branch).
    zs = 8e3
    v = lambda z: 5600.0 + 0.04 * (z - 3e3)  # noqa: E731
    for p in (0.9 / v(zs), 0.99 / v(zs), 1 / v(zs) * 0.999 * (v(zs) / v(14e3))):
        zt = 3e3 + (1 / p - 5600.0) / 0.04
        x_up, t_up = _x_t(p, v, 3e3, zs)
        x_cov = 3e3 * p * 4500 / np.sqrt(1 - (p * 4500) ** 2)
        t_cov = 3e3 / (4500 * np.sqrt(1 - (p * 4500) ** 2))
        if zt > zs:
            x_d, t_d = _x_t(p, v, zs, zt, turning=True, gradient=0.04)
            x, t = x_cov + x_up + 2 * x_d, t_cov + t_up + 2 * t_d
        else:
            x, t = x_cov + x_up, t_cov + t_up
        r = cover_over_gradient.solve(x, "direct", source_depth_m=zs)
        assert float(r.time_s) == pytest.approx(t, rel=1e-9)
        assert float(r.p_s_per_m) == pytest.approx(p, rel=1e-6)
        # and the same with source and receiver swapped
        r2 = cover_over_gradient.solve(x, "direct", receiver_depth_m=zs)
        assert float(r2.time_s) == pytest.approx(t, rel=1e-9)


def test_paths_of_each_kind(cover_over_gradient):
    m = cover_over_gradient
    for phase, x, zs in (("head:basement", 30e3, 0.0), ("turning:basement", 40e3, 0.0),
                         ("direct", 60e3, 8e3), ("reflection:basement", 5e3, 1e3)):
        r = m.solve([x], phase, source_depth_m=zs, path=True)
        assert r.status[0] == "ok", phase
        px = r.path_distance_m[0][np.isfinite(r.path_distance_m[0])]
        pz = r.path_depth_m[0][np.isfinite(r.path_depth_m[0])]
        assert px[0] == pytest.approx(0.0, abs=1e-6) and pz[0] == pytest.approx(zs, abs=1e-6)
        assert px[-1] == pytest.approx(x, abs=1e-3) and pz[-1] == pytest.approx(0.0, abs=1e-6)
        assert np.all(np.diff(px) >= -1e-6), phase        # the ray moves away from the source
        # straight pieces between path points never beat the ray time (Fermat) by more
        # than the chord shortcut of the curved parts allows
        seg = np.hypot(np.diff(px), np.diff(pz))
        v = m.velocity(0.0, 0.5 * (pz[1:] + pz[:-1]))
        assert np.sum(seg / v) == pytest.approx(float(r.time_s[0]), rel=2e-3), phase
    head = m.solve([30e3], "head:basement", path=True)
    assert np.nanmax(head.path_depth_m) == pytest.approx(3e3)


def test_statuses_for_bad_rows():
    m = LayeredModel.flat([0.0, 2e3], [3000.0, 4000.0], gradients=[0.5, 0.0])
    r = m.solve([np.nan, 1e3, 1e3], "reflection:interface1", receiver_depth_m=[0.0, -7000.0, 0.0])
    # 3000 + 0.5 * (-7000) < 0: the top layer's law continued upward has no velocity there
    assert list(r.status) == ["bad_offset", "outside_model", "ok"]
    assert np.isnan(r.time_s[:2]).all()


def test_first_arrival_prefers_the_simpler_phase_on_ties():
    m = LayeredModel.flat([0, 20e3, 35e3], [5800, 6500, 8040], names=["surface", "conrad", "moho"])
    r = m.solve([30e3], "first", spherical=True)
    assert r.arrival[0] == "P:direct"
