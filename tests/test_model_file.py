"""The model file (TOML, km and km/s): round trips and error messages.

Models and files here are synthetic (invented names and numbers).
"""

from __future__ import annotations

import numpy as np
import pytest

from geosect.errors import InputError, ModelError
from geosect.model import Interface, Layer, LayeredModel
from geosect.model.modelfile import model_from_toml, model_to_toml, read_model, write_model

SIG = dict(start_e=512345.5, start_n=4871234.25, end_e=601000.0, end_n=4999000.0, length_m=161234.5)


def _two_d():
    itfs = [Interface("surface", [0.0], [0.0]),
            Interface("conrad", [0.0, 80e3, 160e3], [16e3, 18.5e3, 23e3], role="conrad"),
            Interface("moho", [0.0, 75e3, 85e3, 160e3], [32e3, 33e3, 47e3, 50e3], role="moho")]
    lays = [Layer("upper crust", [5500.0, 5800.0, 5900.0], [6100.0, 6200.0, 6250.0],
                  chainage_m=[0.0, 80e3, 160e3], vpvs=1.71),
            Layer("lower crust", 6500.0, 6900.0, vs_top_ms=3700.0, vs_bottom_ms=3900.0),
            Layer("mantle", 8050.0, None, vp_gradient_per_s=0.0012, vs_top_ms=4500.0,
                  vs_gradient_per_s=0.0006)]
    return LayeredModel(itfs, lays, top="dem", line_signature=SIG, name="Vessa synthetic",
                        note="synthetic test model")


def _same_model(a: LayeredModel, b: LayeredModel):
    assert a.interface_names == b.interface_names and a.layer_names == b.layer_names
    assert a.top == b.top and a.name == b.name and a.note == b.note
    assert [i.role for i in a.interfaces] == [i.role for i in b.interfaces]
    if a.line_signature is None:
        assert b.line_signature is None
    else:
        for k, v in a.line_signature.items():
            assert b.line_signature[k] == pytest.approx(v, rel=1e-15)
    ch = np.linspace(-10e3, 200e3, 57)
    z = np.linspace(-2e3, 80e3, 57)
    for name in a.interface_names:
        np.testing.assert_allclose(b.interface_depth(name, ch), a.interface_depth(name, ch), rtol=1e-14)
    for wave in ("P", "S"):
        np.testing.assert_allclose(b.velocity(ch[:, None], z[None, :], wave),
                                   a.velocity(ch[:, None], z[None, :], wave), rtol=1e-14)


def test_round_trip_2d(tmp_path):
    m = _two_d()
    path = write_model(m, tmp_path / "crust.toml", comment="synthetic model for a test")
    text = path.read_text()
    assert text.startswith("# synthetic model for a test")
    assert "depth_km" in text and "vp_top_kms" in text and "chainage_km" in text
    back = read_model(path)
    _same_model(m, back)
    # a second round trip gives the same text
    assert model_to_toml(back, comment="synthetic model for a test") == text


def test_round_trip_1d_and_dem_top_kept():
    m = LayeredModel.flat([0, 20e3, 35e3], [5800, 6500, 8040], names=["surface", "mid-crust", "moho"],
                          gradients=[0.01, 0.0, 0.001])
    _same_model(m, model_from_toml(model_to_toml(m)))
    d = _two_d()
    d.set_topography([0.0, 50e3, 160e3], [300.0, 2500.0, 800.0])
    back = model_from_toml(model_to_toml(d))
    assert back.interface_depth("surface", 50e3) == 0.0      # the file keeps the placeholder top
    assert not back.topography_set


LAYER_OK = """
[geosect_model]
version = 1
surface = "datum"

[[layer]]
name = "cover"
vp_top_kms = 4.0
vp_bottom_kms = 4.5
vpvs = 1.8
[layer.top]
name = "surface"
depth_km = 0.0

[[layer]]
name = "basement"
vp_top_kms = 6.0
vpvs = 1.73
[layer.top]
name = "base"
depth_km = 2.5
"""


def test_minimal_file_reads():
    m = model_from_toml(LAYER_OK, source="minimal.toml")
    assert m.interface_depth("base", 0.0) == 2500.0
    assert m.velocity(0.0, 1250.0) == pytest.approx(4250.0)
    assert m.name == "minimal"


@pytest.mark.parametrize("old,new,key,words", [
    ('vp_bottom_kms = 4.5', 'vp_botom_kms = 4.5', "layer[1].vp_botom_kms", "did you mean 'vp_bottom_kms'"),
    ('depth_km = 2.5', 'depth_m = 2.5', "layer[2].top.depth_m", "did you mean 'depth_km'"),
    ('surface = "datum"', 'surface = "datun"', "geosect_model.surface", "did you mean 'datum'"),
    ('vpvs = 1.73', 'vpvs = "1.73"', "layer[2].vpvs", "not a number"),
    ('version = 1', 'version = 7', "geosect_model.version", "layout version 7"),
    ('vp_top_kms = 6.0', 'vp_top_kms = 6.0\nvp_bottom_kms = 6.5', "layer[2].vp_bottom_kms",
     "half-space"),
    ('depth_km = 2.5', 'depth_km = [2.5, 3.0]', "layer[2].top.chainage_km", "no chainage_km"),
    ('vpvs = 1.8', 'vpvs = 1.1', "layer[1].vpvs", "vp/vs"),
    ('vp_top_kms = 4.0', 'vp_top_kms = -4.0', "layer[1].vp_top_kms", "must be positive"),
    ('name = "base"', 'name = "base"\nrole = "moon"', "layer[2].top.role", "not one of conrad, moho"),
])
def test_file_faults_name_file_and_key(old, new, key, words):
    text = LAYER_OK.replace(old, new, 1)
    with pytest.raises(ModelError) as e:
        model_from_toml(text, source="bad.toml")
    msg = str(e.value)
    assert msg.startswith(f"bad.toml, key '{key}'"), msg
    assert words in msg
    assert "Fix:" in msg


def test_crossing_interfaces_in_file_name_the_key():
    text = LAYER_OK.replace('depth_km = 2.5', 'chainage_km = [0.0, 10.0]\ndepth_km = [2.5, -1.0]')
    with pytest.raises(ModelError) as e:
        model_from_toml(text, source="cross.toml")
    msg = str(e.value)
    assert "key 'layer[2].top.depth_km'" in msg
    assert "'base' crosses interface 'surface'" in msg and "chainage" in msg


def test_not_toml_and_missing_file(tmp_path):
    with pytest.raises(InputError, match="not valid TOML"):
        model_from_toml("[geosect_model\nversion = 1", source="x.toml")
    with pytest.raises(InputError, match="model file not found"):
        read_model(tmp_path / "nope.toml")


def test_examples_in_docs_read():
    # the TOML examples of docs/model-file.md stay valid
    import re
    from pathlib import Path

    doc = Path(__file__).resolve().parents[1] / "docs" / "model-file.md"
    blocks = re.findall(r"```toml\n(.*?)```", doc.read_text(), re.S)
    assert len(blocks) == 2
    two_d, one_d = (model_from_toml(b, source="model-file.md") for b in blocks)
    assert not two_d.is_1d and two_d.top == "dem" and two_d.line_signature["length_m"] == 120.4e3
    assert two_d.interface_with_role("moho") == "moho"
    assert one_d.is_1d
    assert float(one_d.traveltime(0.0, "reflection:moho")) == pytest.approx(
        2 * (20e3 / 5800 + 15e3 / 6500), rel=1e-12)
