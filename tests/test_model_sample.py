"""The sample project's velocity model (synthetic)."""

from __future__ import annotations

import numpy as np
import pytest

from geosect.errors import InputError
from geosect.model.modelfile import model_from_toml
from geosect.model.sample import sample_model_toml

SIG = dict(start_e=498000.0, start_n=4868000.0, end_e=561000.0, end_n=5061000.0, length_m=205300.0)


@pytest.fixture(scope="module")
def model():
    return model_from_toml(sample_model_toml(205.3, SIG), source="sample_model.toml")


def test_says_synthetic_and_reads_back(model):
    text = sample_model_toml(205.3, SIG)
    assert text.splitlines()[0].startswith("# SYNTHETIC")
    assert "invented" in text.splitlines()[1]
    assert not model.is_1d and model.top == "dem"
    assert model.check_line(dict(SIG)) is True
    assert "[section_line]" not in sample_model_toml(205.3, None)


def test_structure(model):
    assert model.interface_with_role("conrad") == "conrad"
    assert model.interface_with_role("moho") == "moho"
    ch = np.linspace(0.0, 205.3e3, 2054)
    moho = model.interface_depth("moho", ch)
    assert moho[0] == pytest.approx(32e3, abs=1.5e3)          # foreland side
    assert moho.max() == pytest.approx(50e3, abs=1.5e3)       # under the belt
    slope = np.degrees(np.arctan(np.abs(np.gradient(moho, ch))))
    j = int(np.argmax(slope))
    assert 0.4 < ch[j] / 205.3e3 < 0.6 and slope[j] > 25.0   # a steep ramp near the middle
    # upper crust: vertical gradient and a lateral change; vp/vs per layer
    v_top = model.velocity(ch, model.interface_depth("surface", ch) + 1.0)
    v_bot = model.velocity(ch, model.interface_depth("conrad", ch) - 1.0)
    assert np.all(v_bot > v_top + 300.0) and np.ptp(v_top) > 200.0
    ratios = [model.velocity(50e3, z) / model.velocity(50e3, z, wave="S") for z in (5e3, 25e3, 60e3)]
    assert len(set(np.round(ratios, 3))) == 3


def test_topography_and_columns(model):
    ch = np.linspace(0.0, 205.3e3, 200)
    elev = 400.0 + 2600.0 * np.exp(-((ch - 110e3) / 30e3) ** 2)   # an invented ridge
    model.set_topography(ch, elev)
    col = model.column(110e3)
    assert col.interface_depth("surface", 0.0) == pytest.approx(-3000.0, abs=1.0)
    t = col.traveltime([0.0, 150e3], "reflection:moho")
    assert np.all(np.isfinite(t))


def test_bad_arguments():
    with pytest.raises(InputError, match="not a positive number"):
        sample_model_toml(-5.0, None)
    with pytest.raises(InputError, match="lacks"):
        sample_model_toml(100.0, {"start_e": 0.0})
