"""LayeredModel: phases, validation messages, velocities, columns, two-way time.

All models here are synthetic (invented numbers and names).
"""

from __future__ import annotations

import numpy as np
import pytest

from geosect.errors import InputError, ModelError
from geosect.model import Interface, Layer, LayeredModel, Phase, parse_phase


def _two_d(**over):
    """A small invented 2D model: sediments, crust with a Moho ramp, mantle."""
    itfs = [
        Interface("surface", [0.0], [0.0]),
        Interface("basement", [0.0, 40e3, 60e3], [3e3, 3e3, 0.0]),
        Interface("moho", [0.0, 45e3, 55e3, 100e3], [32e3, 32e3, 48e3, 48e3], role="moho"),
    ]
    lays = [
        Layer("sediments", 3000.0, 4000.0, vpvs=1.9),
        Layer("crust", [6000.0, 6200.0], [6600.0, 6800.0], chainage_m=[0.0, 100e3], vpvs=1.73),
        Layer("mantle", 8000.0, None, vp_gradient_per_s=0.002, vpvs=1.78),
    ]
    kw = dict(top="dem")
    kw.update(over)
    return LayeredModel(itfs, lays, **kw)


# --- phases -----------------------------------------------------------------------

def test_parse_phase_forms():
    assert parse_phase("S:reflection:moho") == Phase("S", "reflection", "moho")
    assert parse_phase("reflection:moho") == Phase("P", "reflection", "moho")
    assert parse_phase("p:HEAD:Moho") == Phase("P", "head", "Moho")
    assert parse_phase("first") == Phase("P", "first", None)
    assert parse_phase("S:direct").wave == "S"
    assert str(parse_phase("turning:lower crust")) == "P:turning:lower crust"


@pytest.mark.parametrize("bad", ["", "reflect:moho", "reflection", "head:", "direct:moho",
                                 "X:reflection:moho", "P", "first:x"])
def test_parse_phase_errors_list_forms(bad):
    with pytest.raises(InputError) as e:
        parse_phase(bad)
    assert "accepted forms" in str(e.value)
    assert "reflection:<interface>" in str(e.value)


def test_iaspei_labels():
    m = LayeredModel.flat([0, 18e3, 34e3], [5900, 6600, 8050],
                          names=["surface", "conrad", "moho"],
                          layer_names=["upper", "lower", "mantle"])
    assert m.role_of("moho") == "moho" and m.role_of("conrad") == "conrad"
    labels = {ph: m.iaspei_label(ph) for ph in
              ["direct", "S:direct", "reflection:moho", "S:reflection:moho", "head:moho",
               "S:head:moho", "head:conrad", "turning:lower", "turning:upper", "turning:mantle",
               "reflection:conrad", "first"]}
    assert labels == {"direct": "Pg", "S:direct": "Sg", "reflection:moho": "PmP",
                      "S:reflection:moho": "SmS", "head:moho": "Pn", "S:head:moho": "Sn",
                      "head:conrad": "Pb", "turning:lower": "Pb", "turning:upper": "Pg",
                      "turning:mantle": "Pn", "reflection:conrad": None, "first": None}
    plain = LayeredModel.flat([0, 1e3], [2000, 3000], names=["top", "base"])
    assert plain.iaspei_label("head:base") is None


def test_unknown_interface_suggests_closest():
    m = LayeredModel.flat([0, 20e3, 35e3], [5800, 6500, 8040], names=["surface", "mid-crust", "moho"])
    with pytest.raises(InputError) as e:
        m.traveltime(10e3, "reflection:mohо")  # Cyrillic o: a typo
    assert "did you mean 'moho'" in str(e.value)
    with pytest.raises(InputError, match="model top"):
        m.traveltime(10e3, "head:surface")


# --- validation -------------------------------------------------------------------

def test_crossing_interfaces_named_with_chainage():
    itfs = [Interface("surface", [0.0], [0.0]),
            Interface("upper", [0.0, 50e3], [10e3, 10e3]),
            Interface("lower", [0.0, 20e3, 50e3], [15e3, 8e3, 15e3])]
    lays = [Layer("a", 5000.0, 5000.0, vpvs=1.7), Layer("b", 6000.0, 6000.0, vpvs=1.7),
            Layer("c", 7000.0, None, vpvs=1.7)]
    with pytest.raises(ModelError) as e:
        LayeredModel(itfs, lays)
    msg = str(e.value)
    assert "'lower' crosses interface 'upper'" in msg and "chainage 20.000 km" in msg
    assert "Fix:" in msg and "pinch-out" in msg


def test_touching_interfaces_allowed():
    m = _two_d()
    assert m.interface_depth("basement", 70e3) == 0.0     # pinched out against the surface
    assert not m.is_1d


def test_vertical_jump_rejected():
    itfs = [Interface("surface", [0.0], [0.0]),
            Interface("fault", [0.0, 30e3, 30e3, 60e3], [5e3, 5e3, 9e3, 9e3])]
    lays = [Layer("a", 5000.0, 5500.0, vpvs=1.7), Layer("b", 6000.0, None, vpvs=1.7)]
    with pytest.raises(ModelError) as e:
        LayeredModel(itfs, lays)
    msg = str(e.value)
    assert "'fault' has a vertical jump at chainage 30.000 km" in msg
    assert "steep ramp" in msg


def test_negative_velocity_named_with_chainage():
    itfs = [Interface("surface", [0.0], [0.0]), Interface("base", [0.0], [5e3])]
    lays = [Layer("cover", [5000.0, -10.0], [5500.0, 5500.0], chainage_m=[0.0, 12e3], vpvs=1.7),
            Layer("deep", 6000.0, None, vpvs=1.7)]
    with pytest.raises(ModelError) as e:
        LayeredModel(itfs, lays)
    msg = str(e.value)
    assert "layer 'cover'" in msg and "-0.01 km/s" in msg and "chainage 12.000 km" in msg
    assert "positive" in msg


def test_other_validation_messages():
    with pytest.raises(ModelError, match="half-space"):
        LayeredModel([Interface("s", [0.0], [0.0])], [Layer("hs", 5000.0, 6000.0, vpvs=1.7)])
    with pytest.raises(ModelError, match="vp/vs"):
        LayeredModel.flat([0, 1e3], [3000, 4000], vpvs=1.1)
    with pytest.raises(ModelError, match="two interfaces have the role 'moho'"):
        LayeredModel.flat([0, 1e3, 2e3], [3000, 4000, 5000], names=["s", "a", "b"],
                          roles={"a": "moho", "b": "moho"})
    with pytest.raises(ModelError, match="top surface 'sea'"):
        _two_d(top="sea")


def test_notes_for_slower_layer():
    m = LayeredModel.flat([0, 3e3, 9e3], [6000, 5200, 6800], names=["surface", "lvz", "base"],
                          layer_names=["lid", "soft", "floor"])
    assert m.notes == ["no head wave along 'lvz': layer 'soft' below is slower than layer 'lid' "
                       "above (5.200 km/s against 6.000 km/s)"]


# --- velocity, columns ------------------------------------------------------------

def test_velocity_vectorised_and_linear_in_depth():
    m = _two_d()
    ch = np.array([0.0, 0.0, 0.0, 50e3, 100e3, 100e3])
    z = np.array([-1000.0, 1500.0, 3e3, 10e3, 48e3, 60e3])
    v = m.velocity(ch, z)
    # linear in depth between the layer's top and bottom values (common practice, no source)
    crust_50 = (6100.0 + (6700.0 - 6100.0) * (10e3 - 1.5e3) / (40e3 - 1.5e3))
    expected = [3000.0 - 1000.0 * (1000.0 / 3e3),     # above the top: the top layer's law
                3500.0, 6000.0, crust_50, 8000.0, 8000.0 + 0.002 * 12e3]
    np.testing.assert_allclose(v, expected, rtol=1e-12)
    np.testing.assert_allclose(m.velocity(0.0, 2000.0, wave="S"), (3000 + 1000 * 2 / 3) / 1.9)


def test_column_and_two_d_refusal():
    m = _two_d()
    with pytest.raises(ModelError) as e:
        m.traveltime(10e3, "reflection:moho")
    assert "column(chainage_m)" in str(e.value)
    c = m.column(50e3)
    assert c.is_1d
    assert c.interface_depth("moho", 0.0) == pytest.approx(40e3)
    assert c.interface_depth("basement", 0.0) == pytest.approx(1.5e3)
    t = c.traveltime(0.0, "reflection:moho")
    # vertical two-way time through the column, layer by layer: 2 ln(vb/va)/g per gradient layer
    # (velocities are given at each layer's top and bottom, so the gradient is per thickness)
    g1 = (4000.0 - 3000.0) / 1.5e3
    v2t, v2b = 6100.0, 6700.0
    g2 = (v2b - v2t) / (40e3 - 1.5e3)
    t_sed = np.log(4000.0 / 3000.0) / g1
    t_crust = np.log(v2b / v2t) / g2
    assert float(t) == pytest.approx(2 * (t_sed + t_crust), rel=1e-12)


def test_vertical_twt_to_depth():
    m = LayeredModel.flat([0, 2e3], [2000, 4000], gradients=[0.5, 0.0])
    # in v = v0 + g z the depth after one-way time t is z = v0 (exp(g t) - 1)/g
    # (integrating dz/dt = v; elementary)
    t_one = np.array([0.0, 0.2, 0.5])
    z = m.vertical_twt_to_depth(0.0, 2 * t_one)
    np.testing.assert_allclose(z, 2000.0 * np.expm1(0.5 * t_one) / 0.5, rtol=1e-12)
    t_layer = np.log(3000.0 / 2000.0) / 0.5
    z2 = m.vertical_twt_to_depth([0.0, 0.0], 2 * (t_layer + np.array([0.1, 1.0])))
    np.testing.assert_allclose(z2, 2e3 + 4000.0 * np.array([0.1, 1.0]), rtol=1e-12)
    assert np.isnan(m.vertical_twt_to_depth(0.0, -1.0))
    # inverse of the vertical reflection time
    assert float(m.vertical_twt_to_depth(0.0, m.traveltime(0.0, "reflection:interface1"))) == \
        pytest.approx(2e3, rel=1e-12)


def test_set_topography():
    m = _two_d()
    ch = np.linspace(0, 100e3, 11)
    elev = 500.0 + 20.0 * ch / 1000.0
    m.set_topography(ch, elev)
    assert m.interface_depth("surface", 50e3) == pytest.approx(-1500.0)
    with pytest.raises(ModelError) as e:
        m.set_topography([0.0, 10e3], [100.0, -5000.0])
    assert "reaches below interface 'basement'" in str(e.value)
    flat = LayeredModel.flat([0, 1e3], [2000, 3000])
    with pytest.raises(ModelError, match="flat top"):
        flat.set_topography([0.0, 1.0], [0.0, 0.0])


def test_check_line():
    sig = dict(start_e=500000.0, start_n=4870000.0, end_e=560000.0, end_n=4950000.0,
               length_m=102000.0)
    m = _two_d(line_signature=sig)
    assert m.check_line(dict(sig)) is True
    moved = dict(sig, end_e=560250.0)
    with pytest.raises(ModelError) as e:
        m.check_line(moved, tol_m=1.0)
    assert "model was made on another section line" in str(e.value)
    assert "end_e differs by 250.0 m" in str(e.value)
    assert "Fix:" in str(e.value)
    assert _two_d().check_line(sig) is False
