"""The map page as a file: self-contained, escaped, nothing lost (synthetic data, no browser)."""

from __future__ import annotations

import base64
import hashlib
import json
import re
from html.parser import HTMLParser

import numpy as np
import pandas as pd
import pytest

from geosect.errors import InputError
from geosect.web import MapData, build_page, write_map
from geosect.web.escape import dom_ids
from geosect.web.synthetic import HOSTILE_STRINGS, synthetic_map_data


class _Doc(HTMLParser):
    """Collects elements and script/style bodies as the HTML tokenizer sees them."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.tags: list[tuple[str, dict]] = []
        self.scripts: list[tuple[dict, str]] = []
        self.styles: list[str] = []
        self._in: tuple[str, dict] | None = None
        self._buf: list[str] = []
        self.titles: list[str] = []
        self._title = False

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags.append((tag, a))
        if tag in ("script", "style"):
            self._in, self._buf = (tag, a), []
        if tag == "title":
            self._title = True
            self.titles.append("")

    def handle_endtag(self, tag):
        if self._in and tag == self._in[0]:
            body = "".join(self._buf)
            (self.scripts.append((self._in[1], body)) if tag == "script" else self.styles.append(body))
            self._in = None
        if tag == "title":
            self._title = False

    def handle_data(self, data):
        if self._in:
            self._buf.append(data)
        if self._title:
            self.titles[-1] += data


@pytest.fixture(scope="module")
def hostile():
    data = synthetic_map_data(40, 6, hostile=True)
    html = build_page(data)
    doc = _Doc()
    doc.feed(html)
    return data, html, doc


def _payload(doc: _Doc) -> dict:
    (body,) = [b for a, b in doc.scripts if a.get("type") == "application/json"]
    return json.loads(body)


def test_no_outside_script_or_stylesheet(hostile):
    _, html, doc = hostile
    assert not re.search(r"<script[^>]*\bsrc\s*=\s*[\"']?\s*(https?:)?//", html, re.I)
    assert not re.search(r"<link[^>]*\bhref\s*=\s*[\"']?\s*(https?:)?//", html, re.I)
    assert all("src" not in a for t, a in doc.tags if t == "script")
    assert all(a.get("href", "").startswith("data:") for t, a in doc.tags if t == "link")
    # every outside address in the file is one we know: the optional tile layer, XML
    # namespaces, and two inert strings inside Leaflet's own code
    urls = set(re.findall(r"https?://[^\s\"'<>)]*", html))
    allowed = ("https://tile.openstreetmap.org", "http://www.w3.org/", "https://leafletjs.com",
               "https://bugzilla.mozilla.org/show_bug.cgi")
    assert all(u.startswith(allowed) for u in urls), urls


def test_content_security_policy_hashes_the_inline_scripts(hostile):
    # CSP Level 3 (W3C), hash-source: 'sha256-' + base64(SHA-256 of the element's text).
    _, _, doc = hostile
    (csp,) = [a["content"] for t, a in doc.tags if t == "meta" and a.get("http-equiv") == "Content-Security-Policy"]
    runnable = [b for a, b in doc.scripts if a.get("type") is None]
    assert len(runnable) == 3  # Leaflet, the point layer, the linking script: nothing else
    for body in runnable + doc.styles:
        digest = base64.b64encode(hashlib.sha256(body.encode()).digest()).decode()
        assert f"'sha256-{digest}'" in csp
    assert "default-src 'none'" in csp and "unsafe-inline" not in csp and "unsafe-eval" not in csp


def test_user_text_is_escaped_in_markup(hostile):
    data, html, doc = hostile
    # Reference: the HTML tokenizer (html.parser) sees no injected element.
    assert not [a for t, a in doc.tags if t == "img"]
    assert not [a for t, a in doc.tags if "onerror" in a or "onload" in a]
    assert doc.titles == [data.title, "Depth section"]  # the page's and the SVG's
    # the JSON block holds no '<' at all, so it cannot close its <script>
    (body,) = [b for a, b in doc.scripts if a.get("type") == "application/json"]
    assert "<" not in body and ">" not in body
    assert "window.__pwned" not in "".join(b for a, b in doc.scripts if a.get("type") is None)
    payload = json.loads(body)
    assert HOSTILE_STRINGS["station_id"] in payload["stations"]["id"]
    assert HOSTILE_STRINGS["unit"] in payload["geology"]["legend"]["unit"]


def test_nothing_is_lost_and_ids_match_the_section(hostile):
    data, html, doc = hostile
    p = _payload(doc)
    st = p["stations"]
    assert len(st["id"]) == len(data.stations)
    assert st["id"] == data.stations["id"].tolist()
    # The page derives element ids as prefix + id unless listed in 'x'; they must be the SVG's.
    dom = [st["dom"]["x"].get(str(i), "st-" + sid) for i, sid in enumerate(st["id"])]
    assert dom == dom_ids("st", data.stations["id"]).tolist()
    svg_ids = {a["id"] for t, a in doc.tags if t == "path" and a.get("id", "").startswith("st-")}
    with_ch = data.stations["chainage_m"].notna().to_numpy()
    assert svg_ids == set(np.asarray(dom)[with_ch].tolist())
    # fixed-point coordinates decode to the input within 1e-5 degrees
    lon = [None if q is None else st["lon"]["o"] + q * 10.0 ** -st["lon"]["d"] for q in st["lon"]["q"]]
    ok = data.stations["lon"].notna().to_numpy()
    assert np.allclose(np.array(lon, dtype=float)[ok], data.stations["lon"].to_numpy()[ok], atol=6e-6)
    assert lon[4] is None  # the row without coordinates is kept, not dropped
    assert any("without lon/lat" in n for n in p["notes"])


def test_ticks_lie_on_the_line_every_tick_km(hostile):
    data, _, doc = hostile
    t = _payload(doc)["ticks"]
    line = data.line
    length = line["chainage_m"].iloc[-1]
    assert t["ch"] == pytest.approx(np.arange(0.0, length + 1e-6, 10_000.0).tolist())
    assert t["label"][:3] == ["0 km", "10 km", "20 km"]
    # reference: linear interpolation in the line table
    lat = np.interp(t["ch"], line["chainage_m"], line["lat"])
    lon = np.interp(t["ch"], line["chainage_m"], line["lon"])
    assert np.allclose(np.array(t["a"]), np.column_stack([lat, lon]), atol=2e-6)


def test_thinning_is_stated(tmp_path):
    data = synthetic_map_data(60, 120)  # about 7000 midpoints
    data.tick_km = 0.01  # would be 7500 ticks
    html = build_page(data, max_midpoints=1000, max_reflection_points=200)
    doc = _Doc()
    doc.feed(html)
    p = _payload(doc)
    assert p["midpoints"]["total"] == len(data.midpoints) and len(p["midpoints"]["lon"]["q"]) <= 1000
    assert any(n.startswith(f"Midpoints: 1000 of {len(data.midpoints)} shown") for n in p["notes"])
    # 200 in total, shared equally by the two phases
    assert any("Reflection points, reflection:moho: 100 of" in n for n in p["notes"])
    assert len(p["ticks"]["ch"]) <= 401 and any("Chainage ticks every" in n for n in p["notes"])
    counts = np.bincount(p["refl"]["pi"])
    assert counts.tolist() == [100, 100]


def test_bad_geology_colour_is_grey_and_noted(hostile):
    _, _, doc = hostile
    p = _payload(doc)
    assert "#9a9a9a" in p["geology"]["color"]["c"]
    assert any("unreadable colour" in n for n in p["notes"])


def test_write_map_is_atomic_and_returns_the_path(tmp_path):
    data = synthetic_map_data(10, 2)
    out = write_map(data, tmp_path / "out" / "map.html")
    assert out == tmp_path / "out" / "map.html" and out.read_text().startswith("<!DOCTYPE html>")
    assert sorted(x.name for x in out.parent.iterdir()) == ["map.html"]


def test_csp_can_be_left_out():
    html = build_page(synthetic_map_data(5, 1), content_security_policy=False)
    assert "Content-Security-Policy" not in html


def test_minimal_page_only_title_and_line():
    line = pd.DataFrame({"lon": [9.0, 9.5], "lat": [46.0, 46.2], "chainage_m": [0.0, 43_000.0]})
    html = build_page(MapData(title="Synthetic two-point line", line=line))
    doc = _Doc()
    doc.feed(html)
    p = _payload(doc)
    assert p["stations"] is None and p["hillshade"] is None and p["ticks"]["label"][-1] == "40 km"


@pytest.mark.parametrize(
    "change,match",
    [
        (lambda d: setattr(d, "line", d.line.drop(columns="chainage_m")), "MapData.line.*column 'chainage_m'"),
        (lambda d: setattr(d, "line", d.line.iloc[:1]), "at least two samples"),
        (lambda d: setattr(d, "stations", d.stations.drop(columns="lon")), "column 'lon'"),
        (lambda d: setattr(d, "reflection_points", d.reflection_points.drop(columns="phase")), "column 'phase'"),
        (lambda d: setattr(d, "stations", [1, 2]), "must be a table"),
        (lambda d: setattr(d, "geology", pd.DataFrame({"unit": ["a"]})), "must be a GeoDataFrame"),
    ],
)
def test_input_errors_say_where_and_how(change, match):
    data = synthetic_map_data(8, 2)
    change(data)
    with pytest.raises(InputError, match=match) as e:
        build_page(data)
    assert "Fix:" in str(e.value)


from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

_BASE = synthetic_map_data(3, 1)


def _small(ids, unit, title) -> MapData:
    return MapData(title=title, line=_BASE.line, stations=_BASE.stations.assign(id=ids),
                   geology=_BASE.geology.assign(unit=unit), section=_BASE.section)


def _tags(html: str) -> list[str]:
    doc = _Doc()
    doc.feed(html)
    return [t for t, _ in doc.tags if t != "desc"]  # the SVG <desc> is left out for an empty title


_REF_TAGS = _tags(build_page(_small(["a", "b", "c"], "u", "t"), content_security_policy=False))


@settings(max_examples=20, deadline=None)
@given(ids=st.lists(st.text(max_size=12), min_size=3, max_size=3), unit=st.text(max_size=20),
       title=st.text(max_size=20))
def test_any_text_round_trips_and_adds_no_markup(ids, unit, title):
    # Invariant: whatever the strings, the tokenizer sees the same elements and the data
    # block gives the strings back unchanged (reference: html.parser and json).
    html = build_page(_small(ids, unit, title), content_security_policy=False)
    doc = _Doc()
    doc.feed(html)
    assert [t for t, _ in doc.tags if t != "desc"] == _REF_TAGS
    p = _payload(doc)
    assert p["stations"]["id"] == ids and p["title"] == title
    assert p["geology"]["legend"]["unit"][0] == unit
    dom = [p["stations"]["dom"]["x"].get(str(i), "st-" + s) for i, s in enumerate(ids)]
    svg_ids = [a["id"] for t, a in doc.tags if t == "path" and a.get("id", "").startswith("st-")]
    assert svg_ids == dom and len(set(dom)) == 3
