"""The map page in real headless Chromium, offline: it loads, renders, links both ways, runs no data.

Every request that is not ``file://`` or ``data:`` is aborted (and recorded), and the
page is opened from a file URL, as a user would open a shared ``map.html``.  These
tests fail (they do not skip) when playwright or Chromium is missing.

All data are invented (see :mod:`geosect.web.synthetic`).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from playwright.sync_api import sync_playwright  # a missing playwright is a failure, not a skip

from geosect.web import build_page, hillshade_overlay, js_string
from geosect.web.escape import dom_ids
from geosect.web.synthetic import HOSTILE_STRINGS, synthetic_dem, synthetic_map_data
from geosect.io.atomic import write_text

CHROMIUM = "/usr/bin/chromium"
ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update",
        "--disable-sync", "--no-first-run"]


@pytest.fixture(scope="module")
def browser():
    with sync_playwright() as p:
        b = p.chromium.launch(executable_path=CHROMIUM, args=ARGS)
        yield b
        b.close()


@pytest.fixture(scope="module")
def pages(tmp_path_factory):
    """Two invented pages: with the CSP (default) and without it (escaping alone must hold)."""
    d = tmp_path_factory.mktemp("web")
    hs = hillshade_overlay(synthetic_dem(d / "dem.tif"))
    data = synthetic_map_data(40, 6, hostile=True, hillshade=hs)
    with_csp = write_text(d / "map.html", build_page(data))
    without = write_text(d / "map-nocsp.html", build_page(data, content_security_policy=False))
    return data, with_csp, without


class Opened:
    def __init__(self, page, errors, outside):
        self.page, self.errors, self.outside = page, errors, outside

    def js(self, expr, arg=None):
        return self.page.evaluate(expr, arg)


def _open(browser, path) -> Opened:
    page = browser.new_page(viewport={"width": 1400, "height": 820})
    page.set_default_timeout(8000)
    errors: list[str] = []
    outside: list[str] = []
    page.on("console", lambda m: errors.append(m.text) if m.type in ("error", "warning") else None)
    page.on("pageerror", lambda e: errors.append(str(e)))

    def route(r):
        url = r.request.url
        if url.startswith(("file://", "data:")):
            r.continue_()
        else:
            outside.append(url)
            r.abort()

    page.route("**/*", route)
    page.goto(path.as_uri())
    page.wait_for_function("window.geosect && window.geosect.ready === true", timeout=15_000)
    return Opened(page, errors, outside)


@pytest.fixture(scope="module")
def opened(browser, pages):
    o = _open(browser, pages[1])
    yield o
    o.page.close()


def _station(data, sid):
    row = data.stations.set_index("id").loc[sid]
    return row


def _map_point(o, lat, lon):
    """Viewport pixel of a lon/lat on the Leaflet map."""
    return o.js(
        """([lat, lon]) => { const m = window.geosect.map, p = m.latLngToContainerPoint([lat, lon]),
             r = m.getContainer().getBoundingClientRect(); return [r.left + p.x, r.top + p.y]; }""",
        [lat, lon],
    )


def _metres_per_pixel(zoom, lat):
    # Web Mercator ground resolution: 2*pi*6378137 m / (256 * 2^zoom) * cos(lat)
    # (common practice, no source; the EPSG:3857 sphere radius is 6378137 m).
    return 2 * math.pi * 6378137.0 / (256 * 2**zoom) * math.cos(math.radians(lat))


def test_loads_offline_without_errors_and_renders(opened, pages):
    data = pages[0]
    o = opened
    assert o.errors == []
    assert o.outside == []  # nothing outside was even attempted (tiles are off by default)
    assert o.js("document.querySelectorAll('.leaflet-map-pane .leaflet-overlay-pane canvas').length") == 1  # vectors
    # one canvas per kind of point: midpoints, hypocentres, 2 phases, shots, stations
    assert o.js("document.querySelectorAll('.leaflet-map-pane canvas.gs-points').length") == 5  # midpoints off
    assert o.js("!!document.querySelector('.leaflet-image-layer')")  # the DEM hillshade overlay
    n_ch = int(data.stations["chainage_m"].notna().sum())
    assert o.js("document.querySelectorAll('#gs-svg #gs-st path').length") == n_ch
    assert o.js("document.querySelectorAll('#gs-svg #gs-sh path').length") == len(data.shots)
    n_rp = o.js("document.querySelectorAll('#gs-svg #gs-rp circle').length")
    assert n_rp == len(data.reflection_points)
    # the GsPoints layers hold every station with a map position
    n_ll = int(data.stations[["lon", "lat"]].notna().all(axis=1).sum())
    assert o.js("window.geosect.points.filter(p => p.kind === 'st')[0].layer.size()") == n_ll


def test_hover_and_click_on_map_highlight_the_section(opened, pages):
    data = pages[0]
    o = opened
    sid = "ST00012"
    row = _station(data, sid)
    o.js("([lat, lon]) => window.geosect.map.setView([lat, lon], 13, {animate: false})", [row.lat, row.lon])
    x, y = _map_point(o, row.lat, row.lon)
    o.page.mouse.move(x + 40, y + 40)
    o.page.mouse.move(x, y)
    dom = dom_ids("st", [sid])[0]
    o.page.wait_for_function("id => document.getElementById(id).classList.contains('hl')", arg=dom, timeout=3000)
    readout = o.js("document.getElementById('gs-readout').textContent")
    assert sid in readout and f"{row.chainage_m / 1000:.3f} km" in readout
    tip = o.js("document.querySelector('.gs-tip') && document.querySelector('.gs-tip').textContent")
    assert sid in tip and f"{row.crossline_m:.0f} m".replace("-", "\u2212") in tip
    # only one element is highlighted at a time
    assert o.js("document.querySelectorAll('#gs-svg .hl').length") == 1
    o.page.mouse.click(x, y)
    popup = o.page.wait_for_selector(".leaflet-popup-content", timeout=3000).text_content()
    assert sid in popup and "elevation" in popup


def test_mouse_on_section_moves_the_map_cursor(opened, pages):
    data = pages[0]
    o = opened
    line = data.line
    o.js("() => window.geosect.map.closePopup()")
    S = o.js("window.geosect.section")
    target_ch = 31_234.0
    ux = S["x0"] + (target_ch - S["ch0"]) * S["sx"]
    uy = S["y0"] + (9_000.0 - S["d0"]) * S["sy"]
    cx, cy, px_per_unit = o.js(
        """([ux, uy]) => { const s = document.getElementById('gs-svg'), p = s.createSVGPoint();
             p.x = ux; p.y = uy; const q = p.matrixTransform(s.getScreenCTM());
             return [q.x, q.y, s.getScreenCTM().a]; }""",
        [ux, uy],
    )
    o.page.mouse.move(cx, cy)
    o.page.wait_for_function("window.geosect.map.hasLayer(window.geosect.cursor)", timeout=3000)
    got = o.js("(() => { const c = window.geosect.cursor.getLatLng(); return [c.lat, c.lng]; })()")
    # Reference: linear interpolation of the line table at the chainage under the mouse.
    ch_tab = line["chainage_m"].to_numpy()
    lat_exp = np.interp(target_ch, ch_tab, line["lat"])
    lon_exp = np.interp(target_ch, ch_tab, line["lon"])
    # Tolerance: the mouse lands on a whole pixel, so the chainage is known to one pixel;
    # turn that into degrees with the steepest lon/lat change per metre in the line table.
    ch_per_px = 1.0 / (S["sx"] * px_per_unit)
    dlat = np.max(np.abs(np.diff(line["lat"]) / np.diff(ch_tab)))
    dlon = np.max(np.abs(np.diff(line["lon"]) / np.diff(ch_tab)))
    assert abs(got[0] - lat_exp) <= dlat * ch_per_px + 1e-9
    assert abs(got[1] - lon_exp) <= dlon * ch_per_px + 1e-9
    assert o.js("!!document.querySelector('path.gs-cursor')")  # visible on the map
    assert o.js("document.getElementById('gs-vcursor').getAttribute('visibility')") == "visible"
    shown = o.js("document.getElementById('gs-cursor-readout').textContent")
    shown_km = float(shown.split("chainage ")[1].split(" km")[0])
    assert abs(shown_km * 1000.0 - target_ch) <= ch_per_px + 0.5
    # leaving the section hides the cursor
    o.page.mouse.move(5, 5)
    assert not o.js("window.geosect.map.hasLayer(window.geosect.cursor)")


def test_click_on_section_pans_the_map(opened, pages):
    data = pages[0]
    o = opened
    sid = "ST00030"
    row = _station(data, sid)
    o.js("([lat, lon]) => window.geosect.map.setView([lat, lon], 10, {animate: false})",
         [data.line.lat.iloc[0], data.line.lon.iloc[0]])
    o.page.click(f"#{dom_ids('st', [sid])[0]}")
    o.page.wait_for_function(
        """([lat, lon]) => { const c = window.geosect.map.getCenter();
             return Math.abs(c.lat - lat) < 1e-3 && Math.abs(c.lng - lon) < 1e-3; }""",
        arg=[row.lat, row.lon], timeout=5000,
    )
    o.page.wait_for_timeout(400)  # let the pan animation finish
    zoom, clat, clon = o.js("(() => { const m = window.geosect.map, c = m.getCenter(); return [m.getZoom(), c.lat, c.lng]; })()")
    # within two screen pixels at the final zoom (Web Mercator ground resolution)
    tol_m = 2 * _metres_per_pixel(zoom, row.lat)
    dy_m = (clat - row.lat) * 111_195.0
    dx_m = (clon - row.lon) * 111_195.0 * math.cos(math.radians(row.lat))
    assert math.hypot(dx_m, dy_m) < tol_m
    assert zoom >= 12
    assert o.js("window.geosect.selected") == {"kind": "st", "index": int(np.flatnonzero(data.stations.id == sid)[0])}


def test_hover_on_section_rings_the_map_point(opened, pages):
    data = pages[0]
    o = opened
    sid = "SP00003"
    row = data.shots.set_index("id").loc[sid]
    o.page.hover(f"#{dom_ids('sh', [sid])[0]}")
    ring = o.js("(() => { const r = window.geosect.ring; return window.geosect.map.hasLayer(r) ? [r.getLatLng().lat, r.getLatLng().lng] : null; })()")
    assert ring == pytest.approx([row.lat, row.lon], abs=1e-5)
    assert sid in o.js("document.getElementById('gs-readout').textContent")


@pytest.mark.parametrize("which", ["with CSP", "without CSP"])
def test_markup_and_script_in_data_stay_text(browser, pages, which):
    data, with_csp, without = pages
    o = _open(browser, with_csp if which == "with CSP" else without)
    try:
        assert o.errors == [] and o.outside == []
        page = o.page
        # the title and the geology legend show the raw text
        assert page.title() == HOSTILE_STRINGS["title"]
        assert o.js("document.getElementById('gs-title').textContent") == HOSTILE_STRINGS["title"]
        assert HOSTILE_STRINGS["unit"] in o.js("document.querySelector('.gs-legend').textContent")
        label = o.js("Array.from(document.querySelectorAll('#gs-svg .gs-iname')).map(t => t.textContent)")
        assert HOSTILE_STRINGS["interface"] in label
        # hover and click the station and the shot whose ids are markup
        for kind, table, key in (("st", data.stations, "station_id"), ("sh", data.shots, "shot_id")):
            sid = HOSTILE_STRINGS[key]
            row = table.set_index("id").loc[sid]
            o.js("([lat, lon]) => window.geosect.map.setView([lat, lon], 14, {animate: false})", [row.lat, row.lon])
            x, y = _map_point(o, row.lat, row.lon)
            page.mouse.move(x + 30, y + 30)
            page.mouse.move(x, y)
            page.wait_for_function("id => document.getElementById('gs-readout').textContent.includes(id)", arg=sid,
                                   timeout=3000)
            page.mouse.click(x, y)
            popup = page.wait_for_selector(".leaflet-popup-content", timeout=3000)
            assert sid in popup.text_content()
            # click the lower part of the symbol (a shot diamond can sit under a station triangle)
            sel = f"#{dom_ids(kind, [sid])[0]}"
            box = page.locator(sel).bounding_box()
            page.mouse.click(box["x"] + box["width"] / 2, box["y"] + box["height"] * 0.85)
            assert o.js("window.geosect.selected.kind") == kind
            o.js("() => window.geosect.map.closePopup()")
        # the phase name with markup is escaped in the layer control (Leaflet writes labels as HTML)
        names = o.js("Array.from(document.querySelectorAll('.leaflet-control-layers-overlays span span')).map(s => s.textContent)")
        assert any(HOSTILE_STRINGS["phase"] in n for n in names)
        page.wait_for_timeout(200)
        assert o.js("typeof window.__pwned") == "undefined"
        assert o.js("document.querySelectorAll('img[src=\"x\"], [onerror], [onload], i, b').length") == 0
        assert o.js("document.querySelectorAll('script').length") == 4  # data block + our three
        assert o.errors == []
    finally:
        o.page.close()


def test_js_string_means_the_same_in_every_quote(opened):
    # Reference: V8 (Chromium's JavaScript engine) parsing the literals.
    raws = [HOSTILE_STRINGS[k] for k in ("fault", "unit", "shot_id")] + ["a\\b\u2028c\nd${x}`'\""]
    for raw in raws:
        lit = js_string(raw)
        inner = lit[1:-1]
        got = opened.js(f"[{lit}, '{inner}', `{inner}`]")
        assert got == [raw, raw, raw]
    assert opened.js("typeof window.__pwned") == "undefined"
