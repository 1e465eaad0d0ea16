"""Tests of the depth-section figure (geosect.plot.section).

The figure is checked through what was drawn (artists and their data), not pixels.
All data below are SYNTHETIC: an invented line ("Vellar Ridge transect") with invented
names and numbers.

Run this file as a script to render the synthetic section to /tmp/section_check.png.
"""

from __future__ import annotations

import math
import re
import sys
import xml.etree.ElementTree as ET
from pathlib import Path

import matplotlib

matplotlib.use("Agg")

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from matplotlib.figure import Figure
from matplotlib.text import Text

from geosect.errors import ConfigError, InputError, ModelError
from geosect.plot import colours as gc
from geosect.plot.fonts import MIN_FONT_PT, PRESETS
from geosect.plot.section import (
    Horizon,
    Interface,
    RayPath,
    SectionData,
    SectionOptions,
    VelocityGrid,
    _smallest_font,
    apparent_dip_deg,
    draw_section,
    save_section,
)


# --------------------------------------------------------------------------------------
# a synthetic section (invented line, invented names, invented numbers)
# --------------------------------------------------------------------------------------
def make_synthetic_section(seed: int = 7) -> SectionData:
    """A 180 km synthetic line across an invented range, with a Moho dipping to the NNE."""
    rng = np.random.default_rng(seed)
    L = 180e3
    tx = np.arange(0.0, L + 1.0, 250.0)
    xk = tx / 1e3
    elev = (350.0 + 2300.0 * np.exp(-(((xk - 82.0) / 28.0) ** 2)) + 700.0 * np.exp(-(((xk - 124.0) / 10.0) ** 2))
            + 120.0 * np.sin(xk / 3.1) * np.exp(-(((xk - 90.0) / 50.0) ** 2)))
    elev[(xk > 150.0) & (xk < 153.0)] = np.nan  # a gap in the (synthetic) DEM

    def moho_km(x):
        return 33.0 + 13.0 * x / 180.0 + 3.0 * np.exp(-(((x - 85.0) / 25.0) ** 2))

    def mid_km(x):
        return 17.0 + 2.0 * np.sin(x / 40.0)

    gx = np.arange(0.0, L + 1.0, 1000.0)
    gz = np.arange(-4000.0, 60001.0, 500.0)
    X, Z = np.meshgrid(gx / 1e3, gz / 1e3)
    vp = np.where(Z < mid_km(X), 5.6 + 0.025 * Z, np.where(Z < moho_km(X), 6.5 + 0.012 * (Z - mid_km(X)), 8.05))
    surface = -np.interp(X, xk, np.nan_to_num(elev, nan=400.0)) / 1e3
    vp = np.where(Z < surface, np.nan, vp) * 1000.0

    interfaces = [
        Interface("midcrust", "mid-crust", gx, mid_km(gx / 1e3) * 1e3),
        Interface("moho", "Moho", gx, moho_km(gx / 1e3) * 1e3),
    ]

    # stations and shots
    st_ch = np.sort(rng.uniform(1e3, 178e3, 40))
    st_xl = rng.normal(0.0, 2500.0, st_ch.size)
    st_el = np.interp(st_ch, tx, np.nan_to_num(elev, nan=400.0)) + rng.normal(0, 30, st_ch.size)
    status = np.array(["ok"] * st_ch.size, dtype=object)
    status[[5, 23]] = "outside_dem"
    stations = pd.DataFrame({"id": [f"VR{i:03d}" for i in range(st_ch.size)], "chainage_m": st_ch,
                             "elevation_m": st_el, "crossline_m": st_xl, "kind": "3C", "status": status})
    sh_ch = np.array([8e3, 48e3, 92e3, 131e3, 172e3])
    shots = pd.DataFrame({"id": [f"S{i}" for i in range(sh_ch.size)], "chainage_m": sh_ch,
                          "elevation_m": np.interp(sh_ch, tx, np.nan_to_num(elev, nan=400.0)),
                          "crossline_m": [200.0, -1200.0, 3500.0, -600.0, 7000.0], "depth_m": 30.0,
                          "kind": "borehole", "status": "ok"})

    # synthetic PmP rays: straight legs to the Moho below the midpoint (illustration only)
    rays, pts = [], []
    for s in sh_ch:
        rec = st_ch[np.abs(st_ch - s) > 15e3][::3]
        mid = 0.5 * (s + rec)
        zm = moho_km(mid / 1e3) * 1e3
        zs = -np.interp(s, tx, np.nan_to_num(elev, nan=400.0))
        zr = -np.interp(rec, tx, np.nan_to_num(elev, nan=400.0))
        rays += [RayPath("reflection:moho", "PmP", [s, m, r], [zs, z, zz]) for m, r, z, zz in zip(mid, rec, zm, zr)]
        # Fresnel half-width of a zero-offset reflection: sqrt(lambda*z/2), lambda = 6.3 km/s / 8 Hz
        fres = np.sqrt(6300.0 / 8.0 * zm / 2.0)
        pts.append(pd.DataFrame({"phase": "reflection:moho", "chainage_m": mid, "depth_m": zm,
                                 "fresnel_inline_m": fres}))
        far = rec[np.abs(rec - s) > 120e3]
        for r in far:  # synthetic head-wave paths along the Moho
            d = np.sign(r - s)
            x1, x2 = s + d * 25e3, r - d * 25e3
            rays.append(RayPath("head:moho", "Pn", [s, x1, x2, r],
                                [zs, moho_km(x1 / 1e3) * 1e3, moho_km(x2 / 1e3) * 1e3, -np.interp(r, tx, elev)]))
    rp = pd.concat(pts, ignore_index=True)

    hx = np.arange(20e3, 140e3, 1e3)
    basement = Horizon("Top basement", hx, (3.0 + 2.0 * np.sin(hx / 30e3)) * 1e3, uncertainty_m=np.full(hx.size, 450.0),
                       source="chainage-twt", note="converted from two-way time with the model's vertical velocities")
    dx = np.arange(60e3, 170e3, 2e3)
    detach = Horizon("Kaldra detachment", dx, (9.0 + 0.04 * (dx / 1e3 - 60.0)) * 1e3, source="map-lines")

    geology = pd.DataFrame({
        "start_m": np.array([0, 25, 48, 70, 95, 110, 140]) * 1e3,
        "end_m": np.array([25, 48, 70, 95, 110, 140, 180]) * 1e3,
        "unit": ["Orsan Flysch", "Tirel Limestone", "Calvo Schist", "Merel Gneiss", "Tirel Limestone",
                 "Sava Granite", "Dunmore Molasse"],
        "age": ["Paleogene", "Jurassic", "Permian", "Proterozoic", "Jurassic", "Carboniferous", "Neogene"],
        "color": [None, None, None, None, None, "#e8a0a0", None],
    })
    faults = pd.DataFrame({"chainage_m": [25e3, 70e3, 95e3, 140e3],
                           "name": ["Orsan Thrust", "Kaldra Fault", "Merel Shear Zone", "Sava Line"],
                           "apparent_dip_deg": [35.0, 60.0, np.nan, 80.0], "dips_toward": ["+", "-", "+", "+"]})
    bends = pd.DataFrame({"chainage_m": [62e3, 118e3], "angle_deg": [18.0, 32.0]})
    n_ev = 45
    hypo = pd.DataFrame({"chainage_m": rng.uniform(30e3, 160e3, n_ev), "depth_m": rng.uniform(2e3, 24e3, n_ev),
                         "magnitude": np.round(rng.uniform(0.8, 4.6, n_ev), 1),
                         "crossline_m": rng.uniform(-15e3, 15e3, n_ev)})
    return SectionData(
        title="Vellar Ridge transect (synthetic example)",
        line_length_m=L, start_label="SSW", end_label="NNE", start_azimuth_deg=21.0, end_azimuth_deg=34.0,
        topo_chainage_m=tx, topo_elevation_m=elev, geology=geology, faults=faults, interfaces=interfaces,
        velocity=VelocityGrid(gx, gz, vp), rays=rays, reflection_points=rp, horizons=[basement, detach],
        stations=stations, shots=shots, bends=bends, hypocentres=hypo, swath_m=15e3,
        caption="Synthetic data. Hypocentres within ±15 km of the line projected perpendicularly onto it.",
    )


@pytest.fixture(scope="module")
def synth() -> SectionData:
    return make_synthetic_section()


def _by_gid(fig: Figure, gid: str) -> list:
    return [a for a in fig.findobj(lambda a: a.get_gid() == gid)]


def _draw(ax):
    ax.figure.canvas.draw()
    return ax


# --------------------------------------------------------------------------------------
# what was drawn
# --------------------------------------------------------------------------------------
def test_topography_line_equals_input(synth):
    ax = draw_section(synth, SectionOptions(size="double-column"))
    (line,) = [a for a in ax.lines if a.get_gid() == "topography"]
    np.testing.assert_allclose(line.get_xdata() * 1e3, synth.topo_chainage_m)
    np.testing.assert_allclose(-line.get_ydata() * 1e3, synth.topo_elevation_m, equal_nan=True)


def test_every_station_and_shot_at_its_chainage(synth):
    ax = draw_section(synth, SectionOptions(size="single-column"))
    (sta,) = _by_gid(ax.figure, "stations")
    np.testing.assert_allclose(np.sort(sta.get_offsets()[:, 0] * 1e3), np.sort(synth.stations["chainage_m"]))
    (shot,) = _by_gid(ax.figure, "shots")
    np.testing.assert_allclose(np.sort(shot.get_offsets()[:, 0] * 1e3), np.sort(synth.shots["chainage_m"]))
    # they stand on the topography (interpolated at their chainage)
    topo = np.interp(synth.stations["chainage_m"], synth.topo_chainage_m, synth.topo_elevation_m)
    good = np.isfinite(topo)
    np.testing.assert_allclose(-sta.get_offsets()[good, 1] * 1e3, topo[good])
    # stations with a status other than 'ok' are drawn hollow, in another edge colour
    bad = (synth.stations["status"] != "ok").to_numpy()
    assert np.all(sta.get_facecolors()[bad, 3] == 0) and np.all(sta.get_facecolors()[~bad, 3] > 0)


def test_dense_stations_get_smaller_symbols():
    # 30 stations 100 m apart in one cluster, 5 far apart (synthetic)
    ch = np.concatenate([np.arange(30) * 100.0 + 50e3, [5e3, 20e3, 90e3, 120e3, 150e3]])
    st = pd.DataFrame({"id": [f"D{i}" for i in range(ch.size)], "chainage_m": ch, "elevation_m": 500.0,
                       "crossline_m": 0.0, "kind": "1C", "status": "ok"})
    ax = draw_section(SectionData(line_length_m=160e3, stations=st), SectionOptions(size="double-column"))
    (sc,) = _by_gid(ax.figure, "stations")
    size = np.sqrt(sc.get_sizes())
    assert np.all(size[:30] < size[30:].min())
    assert np.allclose(size[30:], size[30:].max())


@pytest.mark.parametrize("ve", [1.0, 2.5])
def test_stated_exaggeration_equals_axes_aspect(synth, ve):
    ax = _draw(draw_section(synth, SectionOptions(size="double-column", exaggeration=ve)))
    (txt,) = _by_gid(ax.figure, "vertical-exaggeration")
    stated = float(re.search(r"×\s*([0-9.]+)", txt.get_text()).group(1))
    # display distance of 1 km in x and in y, from the data transform
    p = ax.transData.transform([[0.0, 0.0], [1.0, 1.0]])
    dx, dy = abs(p[1, 0] - p[0, 0]), abs(p[1, 1] - p[0, 1])
    assert stated == pytest.approx(ve)
    assert dy / dx == pytest.approx(stated, rel=1e-6)
    # the y axis grows downward (depth) and the right-hand axis shows elevation = -depth
    lo, hi = ax.get_ylim()
    assert lo > hi


@pytest.mark.parametrize("size", list(PRESETS))
def test_no_text_smaller_than_6pt(synth, size):
    ax = _draw(draw_section(synth, SectionOptions(size=size)))
    fig = ax.figure
    assert _smallest_font(fig) >= MIN_FONT_PT >= 6.0
    # and the figure has the preset's width (and fixed height for the full page)
    w, h = fig.get_size_inches() * 25.4
    assert w == pytest.approx(PRESETS[size].width_mm)
    if PRESETS[size].height_mm:
        assert h == pytest.approx(PRESETS[size].height_mm)


def test_hypocentre_legend_states_swath(synth):
    ax = draw_section(synth, SectionOptions(size="double-column"))
    (leg,) = _by_gid(ax.figure, "legend:seismicity")
    assert "±15 km" in leg.get_title().get_text()
    (sc,) = _by_gid(ax.figure, "hypocentres")
    sizes = sc.get_sizes()
    mags = synth.hypocentres["magnitude"].to_numpy()
    # larger events get larger symbols
    assert np.all(np.diff(sizes[np.argsort(mags)]) >= 0)


def test_reflection_points_and_fresnel_bars(synth):
    ax = draw_section(synth, SectionOptions(size="double-column"))
    (pts,) = _by_gid(ax.figure, "reflection-points:reflection:moho")
    rp = synth.reflection_points
    np.testing.assert_allclose(np.sort(pts.get_xdata() * 1e3), np.sort(rp["chainage_m"]))
    (bars,) = _by_gid(ax.figure, "fresnel:reflection:moho")
    half = np.array([abs(seg[1, 0] - seg[0, 0]) / 2 for seg in bars.get_segments()]) * 1e3
    np.testing.assert_allclose(np.sort(half), np.sort(rp["fresnel_inline_m"]), rtol=1e-9)
    # coverage band only along the Moho, where the points fall
    cov = _by_gid(ax.figure, "coverage:moho")
    assert len(cov) == 1 and not _by_gid(ax.figure, "coverage:midcrust")
    segs = cov[0].get_segments()
    xs = np.concatenate([s[:, 0] for s in segs])
    assert xs.min() <= rp["chainage_m"].min() / 1e3 and xs.max() >= rp["chainage_m"].max() / 1e3


def test_rays_per_phase_and_limit(synth):
    ax = draw_section(synth, SectionOptions(size="double-column", max_rays=12))
    n = 0
    colours = set()
    for phase in ("reflection:moho", "head:moho"):
        (ln,) = _by_gid(ax.figure, f"rays:{phase}")
        n += int(np.sum(np.isnan(ln.get_xdata())))  # one NaN closes each ray
        colours.add(ln.get_color())
    assert 2 <= n <= 13 and len(colours) == 2
    ax = draw_section(synth, SectionOptions(size="double-column", show_rays=False, phases=["PmP"]))
    assert not [a for a in ax.lines if str(a.get_gid()).startswith("rays:")]
    assert not _by_gid(ax.figure, "reflection-points:head:moho")


def test_faults_drawn_at_apparent_dip(synth):
    ax = draw_section(synth, SectionOptions(size="double-column", exaggeration=2.0))
    (lc,) = _by_gid(ax.figure, "faults")
    segs = lc.get_segments()
    f = synth.faults.dropna(subset=["apparent_dip_deg"]).reset_index(drop=True)
    assert len(segs) == len(f)
    for seg, (_, row) in zip(segs, f.iterrows()):
        (x0, z0), (x1, z1) = seg
        assert x0 * 1e3 == pytest.approx(row.chainage_m)
        # depth grows by tan(apparent dip) per unit of chainage, toward the side it dips to
        slope = (z1 - z0) / (x1 - x0) if row.apparent_dip_deg < 89.99 else np.inf
        expected = math.tan(math.radians(row.apparent_dip_deg)) * (1 if row.dips_toward == "+" else -1)
        assert slope == pytest.approx(expected, rel=1e-9)
        assert z1 == pytest.approx(15.0)


def test_geology_strip_and_fault_labels(synth):
    ax = _draw(draw_section(synth, SectionOptions(size="double-column", geology_colours="age")))
    (bars,) = _by_gid(ax.figure, "geology")
    assert len(bars.get_paths()) == len(synth.geology)
    jurassic = matplotlib.colors.to_rgba(gc.AGE_COLOURS["jurassic"])
    faces = [tuple(c) for c in bars.get_facecolors()]
    assert faces[1] == pytest.approx(jurassic) and faces[4] == pytest.approx(jurassic)
    labels = [t.get_text() for t in ax.figure.findobj(Text) if str(t.get_gid()).startswith("fault-label:")]
    assert sorted(labels) == sorted(synth.faults["name"])
    bends = [t.get_text() for t in ax.figure.findobj(Text) if t.get_gid() == "bend-label"]
    assert sorted(bends) == ["18°", "32°"]
    ends = {t.get_gid(): t.get_text() for t in ax.figure.findobj(Text) if str(t.get_gid()).startswith("end-")}
    assert ends["end-label:left"] == "SSW" and ends["end-label:right"] == "NNE"
    assert "021°" in ends["end-azimuth:left"] and "034°" in ends["end-azimuth:right"]


def test_header_labels_do_not_overlap(synth):
    ax = _draw(draw_section(synth, SectionOptions(size="single-column")))
    r = ax.figure.canvas.get_renderer()
    boxes = [t.get_window_extent(r) for t in ax.figure.findobj(Text)
             if str(t.get_gid()).startswith(("fault-label", "bend-label", "interface-label"))]
    assert boxes
    for i, a in enumerate(boxes):
        for b in boxes[i + 1:]:
            assert not a.overlaps(b)


def test_horizons_band_and_time_note(synth):
    ax = draw_section(synth, SectionOptions(size="full-page"))
    (band,) = _by_gid(ax.figure, "horizon-band:Top basement")
    assert band is not None
    (cap,) = _by_gid(ax.figure, "caption")
    text = cap.get_text().replace("\n", " ")
    assert "† Top basement: converted from two-way time" in text
    assert text.startswith("Synthetic data.")
    (leg,) = _by_gid(ax.figure, "legend:interp")
    assert any("Top basement†" in t.get_text() for t in leg.get_texts())


def test_only_topography_draws(synth):
    data = SectionData(topo_chainage_m=synth.topo_chainage_m, topo_elevation_m=synth.topo_elevation_m)
    for size in PRESETS:
        ax = _draw(draw_section(data, SectionOptions(size=size, depth_max_km=None)))
        assert _by_gid(ax.figure, "topography")
        assert _smallest_font(ax.figure) >= 6.0


def test_empty_section_draws():
    ax = _draw(draw_section(SectionData()))
    assert ax.get_xlim() == (0.0, 1.0)


def test_draw_on_given_axes(synth):
    fig = Figure(figsize=(7, 4))
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    FigureCanvasAgg(fig)
    ax = fig.add_subplot(111)
    out = _draw(draw_section(synth, SectionOptions(exaggeration=2.0), ax=ax))
    assert out is ax
    p = ax.transData.transform([[0.0, 0.0], [1.0, 1.0]])
    assert abs(p[1, 1] - p[0, 1]) / abs(p[1, 0] - p[0, 0]) == pytest.approx(2.0, rel=1e-6)
    (leg,) = _by_gid(fig, "legend:seismicity")
    assert "±15 km" in leg.get_title().get_text()
    # the stations on the caller's axes too
    (sta,) = _by_gid(fig, "stations")
    assert sta.axes is ax and len(sta.get_offsets()) == len(synth.stations)


def test_auto_depth_from_model(synth):
    ax = draw_section(synth, SectionOptions(depth_max_km=None, size="double-column"))
    bottom = ax.get_ylim()[0]
    assert 60.0 <= bottom <= 70.0  # the grid reaches 60 km


def test_top_raised_for_high_ground():
    x = np.linspace(0, 50e3, 201)
    data = SectionData(line_length_m=50e3, topo_chainage_m=x, topo_elevation_m=5200.0 * np.sin(np.pi * x / 50e3))
    ax = draw_section(data, SectionOptions(size="double-column", depth_min_km=-4, depth_max_km=20))
    assert ax.get_ylim()[1] < -5.2
    (cap,) = _by_gid(ax.figure, "caption")
    assert "raised" in cap.get_text()


# --------------------------------------------------------------------------------------
# files
# --------------------------------------------------------------------------------------
def test_save_section_writes_three_valid_files(synth, tmp_path):
    paths = save_section(synth, tmp_path / "out", SectionOptions(size="single-column"))
    names = sorted(p.name for p in paths)
    assert names == ["section.pdf", "section.png", "section.svg"]
    png = (tmp_path / "out" / "section.png").read_bytes()
    assert png[:8] == b"\x89PNG\r\n\x1a\n"
    # PNG IHDR: width and height at 300 dpi for an 89 mm wide figure
    width = int.from_bytes(png[16:20], "big")
    assert width == pytest.approx(89.0 / 25.4 * 300, abs=2)
    root = ET.parse(tmp_path / "out" / "section.svg").getroot()
    texts = [e for e in root.iter() if e.tag.endswith("}text") or e.tag == "text"]
    assert texts, "SVG should keep text as <text> elements"
    assert any("Vellar Ridge" in "".join(e.itertext()) for e in texts)
    assert (tmp_path / "out" / "section.pdf").read_bytes()[:5] == b"%PDF-"
    # no temporary files left behind
    assert sorted(p.name for p in (tmp_path / "out").iterdir()) == names


# --------------------------------------------------------------------------------------
# errors
# --------------------------------------------------------------------------------------
@pytest.mark.parametrize(
    "kwargs, key",
    [({"size": "poster"}, "section.size"), ({"colormap": "no-such-map"}, "section.colormap"),
     ({"exaggeration": 0}, "section.exaggeration"), ({"geology_colours": "rainbow"}, "section.geology_colours"),
     ({"depth_max_km": -10.0}, "section.depth_max_km")],
)
def test_bad_options_raise_config_error(kwargs, key):
    with pytest.raises(ConfigError) as e:
        draw_section(SectionData(), SectionOptions(**kwargs))
    assert e.value.key == key and "Fix:" in str(e.value)


def test_bad_inputs_raise_input_errors():
    with pytest.raises(InputError, match="topography"):
        SectionData(topo_chainage_m=[0, 1, 2], topo_elevation_m=[0, 1])
    with pytest.raises(ModelError, match="shape"):
        VelocityGrid([0, 1, 2], [0, 1], np.zeros((3, 2)))
    with pytest.raises(InputError, match="column 'chainage_m'"):
        SectionData(stations=pd.DataFrame({"id": ["a"]}))
    with pytest.raises(InputError, match="source"):
        Horizon("h", [0, 1], [0, 1], source="guess")


# --------------------------------------------------------------------------------------
# apparent dip
# --------------------------------------------------------------------------------------
# Ragan, D. M., Structural Geology: An Introduction to Geometrical Techniques (Cambridge
# University Press), the apparent-dip equation tan(delta_a) = tan(delta) * sin(beta), beta the
# angle between the strike and the section line (cited from memory; edition and equation
# number not checked).
def test_apparent_dip_hand_cases():
    # line along strike: the plane shows no dip in the section
    d, s = apparent_dip_deg(50.0, 30.0, 30.0)
    assert float(d) == pytest.approx(0.0, abs=1e-9) and s == ""
    d, s = apparent_dip_deg(50.0, 30.0, 210.0)
    assert float(d) == pytest.approx(0.0, abs=1e-9)
    # line perpendicular to strike: the true dip; right-hand rule, dip direction = strike + 90
    d, s = apparent_dip_deg(50.0, 30.0, 120.0)
    assert float(d) == pytest.approx(50.0) and s == "+"
    d, s = apparent_dip_deg(50.0, 30.0, 300.0)
    assert float(d) == pytest.approx(50.0) and s == "-"
    # 45 degrees between line and strike, recomputed from the cited formula
    d, s = apparent_dip_deg(40.0, 0.0, 45.0)
    assert float(d) == pytest.approx(math.degrees(math.atan(math.tan(math.radians(40.0)) * math.sin(math.radians(45.0)))))
    assert s == "+"
    # vertical and horizontal planes
    assert float(apparent_dip_deg(90.0, 0.0, 20.0)[0]) == pytest.approx(90.0)
    assert float(apparent_dip_deg(0.0, 0.0, 90.0)[0]) == pytest.approx(0.0)


def test_apparent_dip_vectorised_and_invalid_rows():
    d, s = apparent_dip_deg(np.array([30.0, np.nan, 120.0, 45.0]), 10.0, np.array([100.0, 100.0, 100.0, 280.0]))
    assert d.shape == (4,) and s.shape == (4,)
    assert d[0] == pytest.approx(30.0) and np.isnan(d[1]) and np.isnan(d[2])
    assert s.tolist() == ["+", "", "", "-"]


@settings(max_examples=60, deadline=None)
@given(dip=st.floats(0, 90), strike=st.floats(0, 360), az=st.floats(0, 360))
def test_apparent_dip_invariants(dip, strike, az):
    d, s = apparent_dip_deg(dip, strike, az)
    d2, s2 = apparent_dip_deg(dip, strike, az + 180.0)
    assert -1e-9 <= float(d) <= dip + 1e-9  # never steeper than the true dip
    assert float(d2) == pytest.approx(float(d), abs=1e-9)  # reversing the line flips only the sense
    if float(d) > 1e-6:
        assert {str(s), str(s2)} == {"+", "-"}
    # the formula itself, tan(da) = tan(d) |sin(az - strike)| (Ragan, as above)
    if dip < 89.0:
        expect = math.degrees(math.atan(math.tan(math.radians(dip)) * abs(math.sin(math.radians(az - strike)))))
        assert float(d) == pytest.approx(expect, abs=1e-7)


# --------------------------------------------------------------------------------------
# colours
# --------------------------------------------------------------------------------------
def _lightness(rgb: np.ndarray) -> np.ndarray:
    """CIE L* of sRGB colours: IEC 61966-2-1 linearisation, Y row of its matrix, CIE 15:2004 L*."""
    lin = np.where(rgb <= 0.04045, rgb / 12.92, ((rgb + 0.055) / 1.055) ** 2.4)
    y = lin @ np.array([0.2126, 0.7152, 0.0722])
    return np.where(y > (6 / 29) ** 3, 116 * np.cbrt(y) - 16, y * (29 / 3) ** 3)


def test_crust_colormap_lightness_is_monotonic_and_even():
    cmap = gc.crust_colormap(256)
    L = _lightness(cmap(np.linspace(0, 1, 256))[:, :3])
    steps = np.diff(L)
    assert np.all(steps < 0)  # slow (light) to fast (dark)
    assert steps.max() / steps.min() < 1.5 and steps.min() / steps.max() > 0.66  # near-even steps
    assert L[0] > 90 and L[-1] > 45  # light enough for overlays


def test_geology_colour_rules():
    units = ["A", "B", "C", "A"]
    ages = ["Late Jurassic", "Sandstone age?", "Permo-Triassic", "Neogene"]
    cols = [None, "#123456", "not a colour", None]
    auto = gc.geology_colours(units, ages, cols, "auto")
    assert auto["A"] == gc.AGE_COLOURS["upper jurassic"]  # the first interval of a unit decides
    assert auto["B"] == "#123456"
    assert auto["C"] == gc.AGE_COLOURS["triassic"]
    pal = gc.geology_colours(units, ages, cols, "palette")
    assert list(pal.values()) == list(gc.GEOLOGY_PALETTE[:3])
    col = gc.geology_colours(units, ages, cols, "column")
    assert col["B"] == "#123456" and col["A"] in gc.GEOLOGY_PALETTE and col["C"] in gc.GEOLOGY_PALETTE
    assert gc.age_colour("Palaeozoic") == gc.AGE_COLOURS["paleozoic"]
    assert gc.age_colour("Paleoproterozoic") == gc.AGE_COLOURS["paleoproterozoic"]
    assert gc.age_colour(None) is None and gc.age_colour("") is None


def render_check(path: str | Path = "/tmp/section_check.png", **options) -> Path:
    """Render the synthetic section to a PNG for a look by eye."""
    data = make_synthetic_section()
    opts = SectionOptions(**options)
    ax = draw_section(data, opts)
    ax.figure.savefig(path, dpi=200)
    return Path(path)


if __name__ == "__main__":
    size = sys.argv[1] if len(sys.argv) > 1 else "double-column"
    print(render_check(size=size))
