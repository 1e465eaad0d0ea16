"""The section panel SVG: element ids, placement, axes, escaping (synthetic data)."""

from __future__ import annotations

import math
import re
import xml.etree.ElementTree as ET

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from geosect.web.escape import dom_ids
from geosect.web.svg import SectionPanel, nice_ticks, section_svg

NS = {"s": "http://www.w3.org/2000/svg"}


def _stations(n=12, seed=1):
    rng = np.random.default_rng(seed)
    ch = np.sort(rng.uniform(500.0, 59_500.0, n))
    el = rng.uniform(300.0, 2400.0, n)
    ids = [f"R{i:03d}" for i in range(n)]
    return pd.DataFrame({"dom_id": dom_ids("st", ids), "chainage_m": ch, "elevation_m": el, "status": "ok"})


def _parse(markup: str) -> ET.Element:
    # Reference: expat (XML 1.0) -- the inline SVG is also well-formed XML.
    return ET.fromstring(markup)


def _move(d: str) -> tuple[float, float]:
    m = re.match(r"M(-?[0-9.]+),(-?[0-9.]+)", d)
    return float(m.group(1)), float(m.group(2))


def test_one_element_per_station_with_stable_ids():
    stn = _stations()
    s = section_svg(None, chainage_range_m=(0.0, 60_000.0), stations=stn)
    root = _parse(s.markup)
    paths = root.findall(".//s:g[@id='gs-st']/s:path", NS)
    assert [p.get("id") for p in paths] == stn["dom_id"].tolist()
    assert s.counts["st"] == len(stn)
    # the same input gives the same markup (stable ids and coordinates)
    assert section_svg(None, chainage_range_m=(0.0, 60_000.0), stations=stn).markup == s.markup


def test_points_lie_where_the_mapping_says():
    # Linear axes (common practice, no source): chainage -> x, depth (= -elevation) -> y.
    stn = _stations()
    rp = pd.DataFrame(
        {
            "dom_id": dom_ids("rp", ["a", "b", "c"]),
            "chainage_m": [1000.0, 30_000.0, 59_000.0],
            "depth_m": [12_000.0, 33_000.0, 41_000.0],
            "colour": ["#112233", "#445566", "#778899"],
        }
    )
    s = section_svg(SectionPanel(depth_max_m=45_000.0), chainage_range_m=(0.0, 60_000.0), stations=stn,
                    reflection_points=rp)
    root = _parse(s.markup)
    assert s.x0 + (0.0 - s.ch0_m) * s.sx == pytest.approx(s.left)
    assert s.x0 + (60_000.0 - s.ch0_m) * s.sx == pytest.approx(s.right)
    assert s.y0 + (45_000.0 - s.d0_m) * s.sy == pytest.approx(s.bottom)
    for p, (_, row) in zip(root.findall(".//s:g[@id='gs-st']/s:path", NS), stn.iterrows()):
        x, y = _move(p.get("d"))
        assert x == pytest.approx(s.x0 + (row.chainage_m - s.ch0_m) * s.sx, abs=0.051)
        assert y == pytest.approx(s.y0 + (-row.elevation_m - s.d0_m) * s.sy, abs=0.051)
    circles = root.findall(".//s:g[@id='gs-rp']//s:circle", NS)
    assert [c.get("fill") for c in circles] == rp["colour"].tolist()
    for c, (_, row) in zip(circles, rp.iterrows()):
        assert float(c.get("cx")) == pytest.approx(s.x0 + (row.chainage_m - s.ch0_m) * s.sx, abs=0.051)
        assert float(c.get("cy")) == pytest.approx(s.y0 + (row.depth_m - s.d0_m) * s.sy, abs=0.051)


def test_missing_elevation_uses_topography_and_missing_chainage_is_skipped():
    tch = np.array([0.0, 20_000.0, 40_000.0])
    tel = np.array([500.0, 1500.0, 900.0])
    stn = pd.DataFrame(
        {"dom_id": ["st-a", "st-b", "st-c"], "chainage_m": [10_000.0, np.nan, 30_000.0],
         "elevation_m": [np.nan, 100.0, 700.0], "status": ["ok", "bad_coordinates", "no_ray"]}
    )
    s = section_svg(SectionPanel(tch, tel), chainage_range_m=(0.0, 40_000.0), stations=stn)
    root = _parse(s.markup)
    paths = root.findall(".//s:g[@id='gs-st']/s:path", NS)
    assert [p.get("id") for p in paths] == ["st-a", "st-c"]
    _, y = _move(paths[0].get("d"))
    expected_el = np.interp(10_000.0, tch, tel)  # reference: linear interpolation of the profile
    assert y == pytest.approx(s.y0 + (-expected_el - s.d0_m) * s.sy, abs=0.051)
    assert paths[1].get("class") == "bad"  # a status other than 'ok' is drawn hollow
    assert paths[0].get("class") is None


def test_axes_in_km_and_labels():
    s = section_svg(SectionPanel(depth_max_m=40_000.0), chainage_range_m=(0.0, 47_000.0))
    root = _parse(s.markup)
    texts = [t.text for t in root.findall(".//s:g[@id='gs-axes']/s:text", NS)]
    assert "chainage (km)" in texts and "depth below datum (km)" in texts
    for v in ("0", "10", "20", "30", "40"):
        assert texts.count(v) >= 1
    ticks = root.findall(".//s:g[@id='gs-axes']/s:text[@class='gs-tick']", NS)
    x_ticks = {t.text: float(t.get("x")) for t in ticks if t.get("text-anchor") == "middle"}
    assert x_ticks["20"] == pytest.approx(s.x0 + (20_000.0 - s.ch0_m) * s.sx, abs=0.06)


def test_interface_breaks_at_nan_and_names_are_escaped():
    name = "moho</text><script>alert(1)</script> & \"co\""
    ch = np.linspace(0, 50_000.0, 11)
    dep = np.full(11, 35_000.0)
    dep[4:6] = np.nan  # two finite runs
    s = section_svg(SectionPanel(interfaces=[(name, ch, dep)]), chainage_range_m=(0.0, 50_000.0))
    root = _parse(s.markup)
    assert not root.findall(".//s:script", NS)
    path = root.find(".//s:path[@class='gs-iface']", NS)
    assert path.get("data-name") == name
    assert path.get("d").count("M") == 2
    label = root.find(".//s:text[@class='gs-iname']", NS)
    assert label.text == name


def test_bad_range_falls_back():
    s = section_svg(None, chainage_range_m=(5.0, 5.0))
    assert s.right > s.left and math.isfinite(s.sx)


@settings(max_examples=60, deadline=None)
@given(st.floats(-1e4, 1e4), st.floats(1e-3, 1e5))
def test_nice_ticks_property(lo, span):
    # "Nice numbers" for axes: steps of 1, 2 or 5 x 10^k inside the range (common practice, no source).
    hi = lo + span
    t = nice_ticks(lo, hi)
    assert t.size >= 2
    step = np.diff(t)
    # ticks lie in the range, up to a rounding allowance of 1e-9 step at each end
    assert t[0] >= lo - 1e-9 * step[0] - 1e-12 and t[-1] <= hi + 1e-9 * step[0] + 1e-12
    assert np.allclose(step, step[0], rtol=1e-6)
    mant = step[0] / 10 ** math.floor(math.log10(step[0]))
    assert min(abs(mant - m) for m in (1.0, 2.0, 5.0, 10.0)) < 1e-6
