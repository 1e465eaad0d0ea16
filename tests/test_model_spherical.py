"""Spherical-Earth 1D travel times against obspy's TauP and the spherical ray integrals.

The reference models are iasp91 (Kennett & Engdahl 1991, "Traveltimes for global
earthquake location and phase identification", Geophys. J. Int. 105, 429-465) as
TauP holds it, and an invented (synthetic) gradient crust put on top of TauP's
iasp91 mantle.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import quad

obspy_taup = pytest.importorskip("obspy.taup")
from obspy.taup import TauPyModel  # noqa: E402

from geosect.model import Interface, Layer, LayeredModel  # noqa: E402

R_KM = 6371.0


def _deg(km):
    # TauP measures distance in degrees of a 6371 km sphere
    return np.asarray(km) / (R_KM * np.pi / 180.0)


@pytest.fixture(scope="module")
def taup():
    return TauPyModel("iasp91")


@pytest.fixture(scope="module")
def iasp91_crust(taup):
    """Our model built from exactly the velocity layers TauP uses for iasp91 (top 3)."""
    lay = taup.model.s_mod.v_mod.layers
    crust = lay[lay["top_depth"] < 35.0]
    mantle = lay[lay["top_depth"] == 35.0][0]
    itfs = [Interface("surface", [0.0], [0.0]), Interface("conrad", [0.0], [crust[1]["top_depth"] * 1e3],
                                                          role="conrad"),
            Interface("moho", [0.0], [mantle["top_depth"] * 1e3], role="moho")]
    layers = []
    for i, row in enumerate(crust):
        layers.append(Layer(f"crust{i + 1}", row["top_p_velocity"] * 1e3, row["bot_p_velocity"] * 1e3,
                            vs_top_ms=row["top_s_velocity"] * 1e3, vs_bottom_ms=row["bot_s_velocity"] * 1e3))
    g_p = (mantle["bot_p_velocity"] - mantle["top_p_velocity"]) / (mantle["bot_depth"] - mantle["top_depth"])
    g_s = (mantle["bot_s_velocity"] - mantle["top_s_velocity"]) / (mantle["bot_depth"] - mantle["top_depth"])
    layers.append(Layer("mantle", mantle["top_p_velocity"] * 1e3, None, vp_gradient_per_s=g_p,
                        vs_top_ms=mantle["top_s_velocity"] * 1e3, vs_gradient_per_s=g_s))
    return LayeredModel(itfs, layers, name="iasp91 crust (from TauP)")


def test_taup_layers_are_the_published_crust(iasp91_crust):
    # Kennett & Engdahl (1991): 0-20 km 5.8 km/s, 20-35 km 6.5 km/s, mantle from 8.04 km/s
    np.testing.assert_allclose(iasp91_crust.velocity(0.0, [0.0, 19.9e3, 20e3, 34.9e3, 35e3]),
                               [5800.0, 5800.0, 6500.0, 6500.0, 8040.0])


def _taup_times(taup, km, phase, source_km=0.0):
    out = []
    for d in _deg(km):
        arr = taup.get_travel_times(source_km, float(d), phase_list=[phase])
        out.append(min(a.time for a in arr) if arr else np.nan)
    return np.array(out)


def test_moho_reflection_matches_taup(iasp91_crust, taup):
    km = np.array([50.0, 80.0, 110.0, 150.0, 200.0, 250.0, 300.0])
    # in TauP, 'PvmP' is the reflection from the top of the Moho ('PmP' is another path)
    ref = _taup_times(taup, km, "PvmP")
    r = iasp91_crust.solve(km * 1e3, "reflection:moho", spherical=True)
    np.testing.assert_allclose(r.time_s, ref, atol=1e-3)
    # the spherical ray parameter (s/rad) against TauP's (s/rad; TauP gives it in s/rad)
    p_ref = [taup.get_travel_times(0.0, float(d), ["PvmP"])[0].ray_param for d in _deg(km)]
    np.testing.assert_allclose(r.p_s_per_rad, p_ref, rtol=1e-4)
    # horizontal slowness at the surface = p / R
    np.testing.assert_allclose(r.p_s_per_m, r.p_s_per_rad / (R_KM * 1e3), rtol=1e-14)


def test_moho_s_reflection_matches_taup(iasp91_crust, taup):
    km = np.array([60.0, 150.0, 280.0])
    ref = _taup_times(taup, km, "SvmS")
    np.testing.assert_allclose(iasp91_crust.traveltime(km * 1e3, "S:reflection:moho", spherical=True),
                               ref, atol=1e-3)


def test_moho_head_wave_matches_taup(iasp91_crust, taup):
    xc = iasp91_crust.critical_distance("moho", spherical=True)
    assert 80e3 < xc < 86e3                     # "about 83 km"
    # TauP has no Pn just below our critical distance and has one just above it
    assert not taup.get_travel_times(0.0, float(_deg(xc / 1e3 - 0.5)), ["Pn"])
    assert taup.get_travel_times(0.0, float(_deg(xc / 1e3 + 0.5)), ["Pn"])
    km = np.array([50.0, 70.0, 90.0, 120.0, 180.0, 250.0, 300.0])
    ref = _taup_times(taup, km, "Pn")
    t = iasp91_crust.traveltime(km * 1e3, "head:moho", spherical=True)
    assert np.all(np.isnan(t[:2])) and np.all(np.isnan(ref[:2]))
    np.testing.assert_allclose(t[2:], ref[2:], atol=1e-3)
    ref_s = _taup_times(taup, km[3:], "Sn")
    np.testing.assert_allclose(iasp91_crust.traveltime(km[3:] * 1e3, "S:head:moho", spherical=True),
                               ref_s, atol=1e-3)


def test_flat_earth_error_at_250_km(iasp91_crust, taup):
    # the flat-Earth head wave is late by about 0.1 s at 250 km against the sphere
    ref = _taup_times(taup, [250.0], "Pn")[0]
    flat = float(iasp91_crust.traveltime(250e3, "head:moho"))
    sph = float(iasp91_crust.traveltime(250e3, "head:moho", spherical=True))
    assert sph == pytest.approx(ref, abs=1e-3)
    assert 0.05 < flat - ref < 0.2


def test_direct_wave_matches_taup(iasp91_crust, taup):
    km = np.array([10.0, 40.0, 80.0, 120.0])
    r = iasp91_crust.solve(km * 1e3, "direct", spherical=True)
    for d, t, p in zip(_deg(km), r.time_s, r.p_s_per_rad):
        arr = taup.get_travel_times(0.0, float(d), ["Pg"])
        best = min(arr, key=lambda a: abs(a.ray_param - p))   # the branch in the top shell
        assert t == pytest.approx(best.time, abs=1e-3)


def test_deep_source_reflection_matches_taup(iasp91_crust, taup):
    km = np.array([60.0, 140.0])
    ref = _taup_times(taup, km, "PvmP", source_km=12.0)
    t = iasp91_crust.traveltime(km * 1e3, "reflection:moho", source_depth_m=12e3, spherical=True)
    np.testing.assert_allclose(t, ref, atol=1e-3)


# --- gradient crust ------------------------------------------------------------------

@pytest.fixture(scope="module")
def gradient_crust():
    itfs = [Interface("surface", [0.0], [0.0]), Interface("conrad", [0.0], [15e3], role="conrad"),
            Interface("moho", [0.0], [35e3], role="moho")]
    lays = [Layer("upper", 5000.0, 6000.0, vs_top_ms=2890.0, vs_bottom_ms=3470.0),
            Layer("lower", 6300.0, 6700.0, vs_top_ms=3640.0, vs_bottom_ms=3870.0),
            Layer("mantle", 8040.0, None, vp_gradient_per_s=5.0 / 42.5e3, vs_top_ms=4470.0,
                  vs_gradient_per_s=15.0 / 42.5e3)]
    return LayeredModel(itfs, lays, name="synthetic gradient crust")


def _sph_leg(p, r_top, r_bot, v_of_r):
    """Ray integrals of a spherical Earth for one shell (Shearer, Introduction to Seismology,
    2nd ed., sec. 4.4, recalled from memory): with eta = r/v,
    Delta = int p dr / (r sqrt(eta^2 - p^2)),  T = int eta^2 dr / (r sqrt(eta^2 - p^2))."""
    def eta(r):
        return r / v_of_r(r)
    d = quad(lambda r: p / (r * np.sqrt(eta(r) ** 2 - p**2)), r_bot, r_top, epsabs=1e-14, epsrel=1e-12)[0]
    t = quad(lambda r: eta(r) ** 2 / (r * np.sqrt(eta(r) ** 2 - p**2)), r_bot, r_top,
             epsabs=1e-12, epsrel=1e-12)[0]
    return d, t


def test_gradient_crust_reflection_against_spherical_integrals(gradient_crust):
    R = R_KM * 1e3
    shells = [(R, R - 15e3, lambda r: 5000.0 + (6000.0 - 5000.0) * (R - r) / 15e3),
              (R - 15e3, R - 35e3, lambda r: 6300.0 + 400.0 * (R - r - 15e3) / 20e3)]
    p_max = (R - 35e3) / 6700.0
    for frac in (0.2, 0.6, 0.9, 0.98):
        p = frac * p_max
        legs = [_sph_leg(p, a, b, v) for a, b, v in shells]
        delta = 2 * sum(d for d, _ in legs)
        t = 2 * sum(tt for _, tt in legs)
        r = gradient_crust.solve(R * delta, "reflection:moho", spherical=True)
        assert float(r.time_s) == pytest.approx(t, abs=2e-6)
        assert float(r.p_s_per_rad) == pytest.approx(p, rel=1e-6)


@pytest.fixture(scope="module")
def taup_gradient(tmp_path_factory, taup):
    """TauP built from an .nd file: the synthetic gradient crust over TauP's iasp91 mantle."""
    from obspy.taup.taup_create import build_taup_model

    folder = tmp_path_factory.mktemp("taup")
    lines = ["0.0 5.000 2.890 2.6", "15.0 6.000 3.470 2.8", "15.0 6.300 3.640 2.9",
             "35.0 6.700 3.870 3.0", "mantle"]
    cores = {2889.0: "outer-core", 5153.5: "inner-core"}
    for row in taup.model.s_mod.v_mod.layers:
        if row["top_depth"] < 35.0:
            continue
        if row["top_depth"] in cores and cores[row["top_depth"]] not in lines:
            lines.append(cores[row["top_depth"]])
        for end in ("top", "bot"):
            lines.append(f"{row[end + '_depth']} {row[end + '_p_velocity']} "
                         f"{row[end + '_s_velocity']} {row[end + '_density']}")
    path = folder / "synthetic_gradient.nd"
    path.write_text("\n".join(lines) + "\n")
    build_taup_model(str(path), output_folder=str(folder), verbose=False)
    return TauPyModel(str(folder / "synthetic_gradient.npz"))


def test_gradient_crust_against_taup(gradient_crust, taup_gradient):
    km = np.array([50.0, 100.0, 200.0])
    ref = _taup_times(taup_gradient, km, "PvmP")
    t = gradient_crust.traveltime(km * 1e3, "reflection:moho", spherical=True)
    np.testing.assert_allclose(t, ref, atol=1e-3)
    ref = _taup_times(taup_gradient, km[1:], "Pn")
    np.testing.assert_allclose(gradient_crust.traveltime(km[1:] * 1e3, "head:moho", spherical=True),
                               ref, atol=1e-3)
    # the upper-crust turning wave is TauP's first Pg
    ref = _taup_times(taup_gradient, km[:2], "Pg")
    np.testing.assert_allclose(gradient_crust.traveltime(km[:2] * 1e3, "first", spherical=True),
                               ref, atol=1e-3)
