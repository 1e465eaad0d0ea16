"""Tests of travel-time picks (geosect.picks), the picks stage and the reduced travel-time figure.

Every pick, shot, station and model here is invented (synthetic); expected values are recomputed from the
cited formulas or reference libraries beside each check.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as hst
from matplotlib.text import Text
from pyproj import Geod

from geosect.config import load_settings
from geosect.errors import InputError
from geosect.model import LayeredModel
from geosect.picks import (DEFAULT_UNCERTAINTY_S, PICK_COLUMNS, check_picks, largest_residuals, misfits,
                           read_picks, reduced_time, summarise_misfits, translate_phase)
from geosect.pipeline import Context, Progress, run_stages, stages
from geosect.plot.fonts import MIN_FONT_PT
from geosect.plot.traveltimes import draw_traveltimes, reduction_label, save_traveltimes, signed_distance
from geosect.report import Report

from conftest import write_tiny_project

# a two-layer crust-over-mantle model (invented numbers): 30 km of 6.0 km/s over 8.0 km/s
H, V1, V2 = 30e3, 6000.0, 8000.0
TWO = LayeredModel.flat([0.0, H], [V1, V2], names=["surface", "moho"])
THIN = LayeredModel.flat([0.0, 8e3], [V1, V2], names=["surface", "moho"])  # for the short test line
THREE = LayeredModel.flat([0.0, 18e3, 34e3], [5900.0, 6600.0, 8050.0], names=["surface", "conrad", "moho"])


def head_wave_time(x, h=H, v1=V1, v2=V2):
    """Kearey, Brooks & Hill, An Introduction to Geophysical Exploration, 3rd ed. (2002), ch. 5, the two-layer
    case of refraction: t = x / v2 + 2 h cos(ic) / v1 with sin(ic) = v1 / v2 (equation number not checked)."""
    ic = math.asin(v1 / v2)
    return np.asarray(x, float) / v2 + 2.0 * h * math.cos(ic) / v1


def _model_table(model, shot, stations, offsets, phases, line_sign=None):
    """A rays-like table of model times from our 1D solver: shot × stations × phases."""
    parts = []
    offsets = np.asarray(offsets, float)
    sign = np.ones_like(offsets) if line_sign is None else np.asarray(line_sign, float)
    for p in phases:
        sol = model.solve(offsets, p)
        parts.append(pd.DataFrame({"shot_id": shot, "station_id": stations, "phase": p, "offset_m": offsets,
                                   "line_offset_m": sign * offsets, "time_s": sol.time_s, "status": sol.status}))
    return pd.concat(parts, ignore_index=True)


# --------------------------------------------------------------------------- residuals


def test_head_wave_residual_equals_the_known_offset() -> None:
    offsets = np.array([150e3, 180e3, 210e3, 240e3])
    stations = [f"R{i}" for i in range(offsets.size)]
    delta = np.array([0.125, -0.250, 0.0, 0.040])  # known offsets of the picks from the true time, s
    raw = pd.DataFrame({"shot": "S1", "station": stations, "phase": "Pn",
                        "time_s": head_wave_time(offsets) + delta, "uncertainty_s": 0.05})
    picks = check_picks(raw, model=TWO, shot_ids=["S1"], station_ids=stations)
    assert (picks["status"] == "ok").all() and (picks["phase"] == "head:moho").all()
    table = misfits(picks, _model_table(TWO, "S1", stations, offsets, ["head:moho"]), model=TWO)
    np.testing.assert_allclose(table["residual_s"], delta, atol=1e-6)
    np.testing.assert_allclose(table["normalised_residual"], delta / 0.05, atol=2e-5)
    np.testing.assert_allclose(table["model_time_s"], head_wave_time(offsets), atol=1e-6)
    assert (table["code"] == "Pn").all()


def test_no_model_time_before_the_critical_distance() -> None:
    """The head wave begins at x_crit = 2 h tan(ic) (Kearey, Brooks & Hill, 3rd ed., ch. 5): a pick nearer
    than that has no model time and keeps its row."""
    x_crit = 2 * H * math.tan(math.asin(V1 / V2))
    offsets = np.array([0.5 * x_crit, 1.5 * x_crit])
    raw = pd.DataFrame({"shot_id": "S1", "station_id": ["A", "B"], "phase": "head:moho", "time_s": [10.0, 20.0]})
    table = misfits(check_picks(raw, model=TWO), _model_table(TWO, "S1", ["A", "B"], offsets, ["head:moho"]))
    assert table["status"].tolist() == ["no_model_time", "ok"]
    assert table["model_status"].iloc[0] != "ok" and np.isnan(table["residual_s"].iloc[0])
    assert np.isfinite(table["residual_s"].iloc[1])


def test_phases_match_in_their_short_form_and_missing_rows_say_not_computed() -> None:
    raw = pd.DataFrame({"shot_id": "S1", "station_id": ["A", "B"], "phase": ["P:direct", "direct"],
                        "time_s": [5.0, 6.0]})
    mt = pd.DataFrame({"shot_id": ["S1"], "station_id": ["A"], "phase": ["direct"], "offset_m": [30e3],
                       "line_offset_m": [30e3], "time_s": [5.0], "status": ["ok"]})
    table = misfits(check_picks(raw), mt)
    assert table["residual_s"].iloc[0] == pytest.approx(0.0)
    assert table["status"].tolist() == ["ok", "no_model_time"]
    assert table["model_status"].tolist() == ["ok", "not_computed"]


# --------------------------------------------------------------------------- chi-square


@settings(max_examples=25, deadline=None)
@given(hst.lists(hst.tuples(hst.floats(-2.0, 2.0), hst.floats(0.01, 0.5)), min_size=1, max_size=40),
       hst.floats(0.2, 5.0))
def test_chi_square_per_pick_from_its_definition(rows, scale) -> None:
    """Reduced chi-square of a model not fitted to the data: χ²/N = Σ (r_i/σ_i)² / N with N degrees of freedom
    (Bevington & Robinson, Data Reduction and Error Analysis for the Physical Sciences, 3rd ed., ch. 11; from
    memory).  Scaling every σ by k divides it by k²."""
    r = np.array([a for a, _ in rows])
    s = np.array([b for _, b in rows])
    n = r.size
    raw = pd.DataFrame({"shot_id": "S", "station_id": [f"R{i}" for i in range(n)], "phase": "direct",
                        "time_s": 10.0 + r, "uncertainty_s": s})
    mt = pd.DataFrame({"shot_id": "S", "station_id": [f"R{i}" for i in range(n)], "phase": "direct",
                       "offset_m": 1e4, "line_offset_m": 1e4, "time_s": 10.0, "status": "ok"})
    summ = summarise_misfits(misfits(check_picks(raw), mt)).set_index("phase")
    expect = float(np.sum((r / s) ** 2) / n)
    assert summ.loc["direct", "chi2_per_pick"] == pytest.approx(expect, rel=1e-9, abs=1e-12)
    assert summ.loc["direct", "rms_s"] == pytest.approx(math.sqrt(np.mean(r * r)), rel=1e-9, abs=1e-12)
    assert summ.loc["direct", "mean_residual_s"] == pytest.approx(r.mean(), abs=1e-9)
    assert summ.loc["direct", "max_abs_residual_s"] == pytest.approx(np.abs(r).max(), abs=1e-9)
    assert summ.loc["all", "picks"] == n
    raw["uncertainty_s"] = s * scale
    scaled = summarise_misfits(misfits(check_picks(raw), mt)).set_index("phase")
    assert scaled.loc["direct", "chi2_per_pick"] == pytest.approx(expect / scale ** 2, rel=1e-9, abs=1e-12)


def test_summary_per_phase_and_largest_residuals() -> None:
    raw = pd.DataFrame({"shot_id": "S", "station_id": ["A", "B", "C", "A"],
                        "phase": ["direct", "direct", "direct", "reflection:moho"],
                        "time_s": [10.1, 9.8, 10.0, 20.5], "uncertainty_s": [0.1, 0.1, 0.2, 0.05]})
    mt = pd.DataFrame({"shot_id": "S", "station_id": ["A", "B", "C", "A"],
                       "phase": ["direct", "direct", "direct", "reflection:moho"], "offset_m": 1e4,
                       "line_offset_m": 1e4, "time_s": [10.0, 10.0, 10.0, 20.0], "status": "ok"})
    table = misfits(check_picks(raw, model=TWO), mt, model=TWO)
    summ = summarise_misfits(table, model=TWO).set_index("phase")
    assert summ.loc["direct", "picks"] == 3 and summ.loc["reflection:moho", "picks"] == 1
    assert summ.loc["reflection:moho", "label"] == "PmP (reflection:moho)"
    # by hand: z = 1, -2, 0 -> χ²/N = 5/3; all four: (1 + 4 + 0 + 100) / 4
    assert summ.loc["direct", "chi2_per_pick"] == pytest.approx(5 / 3)
    assert summ.loc["all", "chi2_per_pick"] == pytest.approx(105 / 4)
    top = largest_residuals(table, 2)
    assert top["phase"].tolist() == ["reflection:moho", "direct"]
    assert top["normalised_residual"].iloc[0] == pytest.approx(10.0)
    assert "large_residual" in table["flags"].iloc[3] and "large_residual" not in table["flags"].iloc[0]


# --------------------------------------------------------------------------- statuses


BAD_ROWS = """\
shot,station,phase,time_s,sigma_s
S1,R1,direct,5.000,0.05
S9,R1,direct,5.1,0.05
,R1,direct,5.1,0.05
S1,R9,direct,5.2,0.05
S1,R2,refraction:moho,7.0,0.05
S1,R2,reflection:nowhere,7.0,0.05
S1,R2,S,7.0,0.05
S1,R2,direct,abc,0.05
S1,R2,direct,,0.05
S1,R2,direct,-1.5,0.05
S1,R3,direct,6.0,0.05
S1,R3,P:direct,6.1,0.05
S1,R3,reflection:MOHO,9.0,
S1,R4,direct,6.5,-0.1
S1,R4,PmP,9.5,zero
"""


def test_every_bad_row_kind_gets_its_status(tmp_path: Path) -> None:
    path = tmp_path / "picks.csv"
    path.write_text(BAD_ROWS)
    t = read_picks(path, columns={"uncertainty_s": "sigma_s"}, model=TWO, shot_ids=["S1"],
                   station_ids=["R1", "R2", "R3", "R4"])
    assert list(t.columns) == PICK_COLUMNS
    assert t["row"].tolist() == list(range(1, 16))  # nothing dropped, input order
    assert t["status"].tolist() == [
        "ok", "unknown_shot", "unknown_shot", "unknown_station", "unknown_phase", "unknown_phase",
        "unknown_phase", "bad_time", "bad_time", "bad_time", "ok", "duplicate_pick", "ok", "ok", "ok"]
    f = t["flags"].tolist()
    assert "missing_shot_id" in f[2]
    assert f[4] == "unreadable_phase" and f[5] == "interface_not_in_model" and f[6] == "unreadable_phase"
    assert f[7] == "time_not_a_number" and f[8] == "time_missing" and f[9] == "negative_time"
    assert "duplicate_pick" in f[10]  # the first of two keeps ok and is flagged
    assert t["phase"].iloc[12] == "reflection:moho"  # unique case-insensitive interface name
    assert "default_uncertainty" in f[12] and t["uncertainty_s"].iloc[12] == DEFAULT_UNCERTAINTY_S
    assert "bad_uncertainty" in f[13] and t["uncertainty_s"].iloc[13] == DEFAULT_UNCERTAINTY_S
    assert "bad_uncertainty" in f[14] and t["phase"].iloc[14] == "reflection:moho"
    assert t["phase_given"].iloc[14] == "PmP"


def test_file_faults_raise_with_the_key(tmp_path: Path) -> None:
    path = tmp_path / "picks.csv"
    path.write_text("shot,station,phase,arrival_sec\nS1,R1,direct,5.0\n")
    with pytest.raises(InputError) as err:
        read_picks(path)
    assert err.value.key == "picks.columns.time_s" and "arrival_sec" in err.value.fix
    with pytest.raises(InputError) as err:
        read_picks(path, columns={"time_s": "arival_sec"})
    assert "did you mean 'arrival_sec'" in err.value.fix
    assert read_picks(path, columns={"time_s": "arrival_sec"})["time_s"].iloc[0] == 5.0
    gpkg = tmp_path / "picks.gpkg"
    gpkg.write_bytes(b"")
    with pytest.raises(InputError):
        read_picks(gpkg)


def test_semicolon_table_and_uncertainty_column_absent(tmp_path: Path) -> None:
    path = tmp_path / "picks.txt"
    path.write_text("SHOT;Station;Phase;Time\nS1;R1;Pg;5.0\nS1;R2;Pg;6.0\n")
    t = read_picks(path, delimiter=";", model=THREE)
    assert (t["status"] == "ok").all() and (t["phase"] == "direct").all()
    assert (t["uncertainty_s"] == DEFAULT_UNCERTAINTY_S).all() and (t["flags"] == "").all()


# --------------------------------------------------------------------------- IASPEI codes


@pytest.mark.parametrize("code, ours", [("Pg", "direct"), ("Sg", "S:direct"), ("Pb", "head:conrad"),
                                        ("Sb", "S:head:conrad"), ("Pn", "head:moho"), ("Sn", "S:head:moho"),
                                        ("PmP", "reflection:moho"), ("SmS", "S:reflection:moho"),
                                        ("PMP", "reflection:moho"), ("pn", "head:moho")])
def test_iaspei_codes_translate_with_the_model_roles(code: str, ours: str) -> None:
    """IASPEI standard phase list (Storchak et al., 2003, Seismol. Res. Lett. 74(6); codes from memory): Pg
    upper crust, Pb along the mid-crustal boundary, Pn along the crust-mantle boundary, PmP reflected from it."""
    phase, why = translate_phase(code, THREE)
    assert (phase, why) == (ours, "")
    assert THREE.iaspei_label(phase).lower() == code.lower()  # the model gives the code back


def test_iaspei_codes_need_roles_and_follow_the_interface_names() -> None:
    plain = LayeredModel.flat([0, 20e3, 35e3], [5800, 6500, 8040], names=["surface", "top2", "base2"], roles={})
    assert translate_phase("PmP", plain) == (None, "code_needs_model_roles")
    assert translate_phase("Pg", plain) == (None, "code_needs_model_roles")
    assert translate_phase("reflection:base2", plain) == ("reflection:base2", "")
    named = LayeredModel.flat([0, 20e3, 35e3], [5800, 6500, 8040], names=["surface", "K", "M"],
                              roles={"K": "conrad", "M": "moho"})
    assert translate_phase("PmP", named) == ("reflection:M", "")
    assert translate_phase("Pb", named) == ("head:K", "")
    # a model with a Moho but no mid-crustal boundary has no Pb
    assert translate_phase("Pb", TWO) == (None, "code_needs_model_roles")
    t = check_picks(pd.DataFrame({"shot_id": "S", "station_id": "R", "phase": ["PmP", "Pn"], "time_s": 1.0}),
                    model=plain)
    assert t["status"].tolist() == ["unknown_phase"] * 2 and (t["flags"] == "code_needs_model_roles").all()


# --------------------------------------------------------------------------- the figure


def _figure_table():
    offsets = np.array([-180e3, -150e3, -120e3, 130e3, 160e3, 190e3])
    stations = [f"R{i}" for i in range(offsets.size)]
    rng = np.random.default_rng(4)
    noise = rng.normal(0.0, 0.05, offsets.size)
    raw = pd.DataFrame({"shot_id": "S1", "station_id": stations, "phase": "Pn",
                        "time_s": head_wave_time(np.abs(offsets)) + noise, "uncertainty_s": 0.05})
    mt = _model_table(TWO, "S1", stations, np.abs(offsets), ["head:moho"], line_sign=np.sign(offsets))
    return misfits(check_picks(raw, model=TWO), mt, model=TWO), mt, offsets


def _by_gid(fig, gid):
    hits = [a for a in fig.findobj() if getattr(a, "get_gid", lambda: None)() == gid]
    assert len(hits) == 1, gid
    return hits[0]


@pytest.mark.parametrize("vred", [8000.0, 6000.0])
def test_figure_draws_picks_at_their_reduced_times(vred: float) -> None:
    """Reduced time t − |x|/v_red (common practice, no source): the drawn y data of the picks, the model line
    and the residuals equal it, recomputed here; the y label states v_red."""
    table, mt, offsets = _figure_table()
    fig = draw_traveltimes(table, mt, reduction_velocity_ms=vred, distance="offset", model=TWO)
    pts = _by_gid(fig, "picks:S1:head:moho")
    np.testing.assert_allclose(pts.get_xdata(), offsets / 1e3)
    np.testing.assert_allclose(pts.get_ydata(), table["time_s"] - np.abs(offsets) / vred, atol=1e-12)
    line = _by_gid(fig, "model:S1:head:moho")
    order = np.argsort(offsets)
    np.testing.assert_allclose(line.get_ydata(), head_wave_time(np.abs(offsets[order])) - np.abs(offsets[order]) / vred,
                               atol=1e-6)
    res = _by_gid(fig, "residuals:S1:head:moho")
    np.testing.assert_allclose(res.get_ydata(), table["time_s"] - head_wave_time(np.abs(offsets)), atol=1e-6)
    ylabels = [ax.get_ylabel() for ax in fig.findobj(lambda a: hasattr(a, "get_ylabel"))]
    assert f"t − x/{vred / 1e3:.1f} km/s (s)" in ylabels
    # the legend names the phase with its IASPEI code
    texts = [t.get_text() for t in fig.findobj(Text)]
    assert "Pn (head:moho)" in texts


def test_figure_text_sizes_and_files(tmp_path: Path) -> None:
    table, mt, _ = _figure_table()
    fig = draw_traveltimes(table, mt, distance="offset", model=TWO, title="synthetic test")
    fig.draw_without_rendering()
    sizes = [t.get_fontsize() for t in fig.findobj(Text) if t.get_visible() and t.get_text().strip()]
    assert sizes and min(sizes) >= MIN_FONT_PT
    written = save_traveltimes(fig, tmp_path / "tt.png", tmp_path / "tt.svg")
    assert [p.name for p in written] == ["tt.png", "tt.svg"]
    from PIL import Image

    with Image.open(tmp_path / "tt.png") as im:
        assert tuple(round(d) for d in im.info["dpi"]) == (300, 300)
    assert "t − x/8.0 km/s (s)" in (tmp_path / "tt.svg").read_text()  # text stays text in the SVG


def test_reduction_label_and_distance_sign() -> None:
    assert reduction_label(8000.0) == "t − x/8.0 km/s (s)" and reduction_label(7750.0) == "t − x/7.75 km/s (s)"
    f = pd.DataFrame({"offset_m": [1000.0, 2000.0, 3000.0], "line_offset_m": [-900.0, 1800.0, np.nan]})
    np.testing.assert_array_equal(signed_distance(f, "offset")[:2], [-1000.0, 2000.0])
    assert np.isnan(signed_distance(f, "offset")[2])
    np.testing.assert_array_equal(signed_distance(f, "line")[:2], [-900.0, 1800.0])
    assert reduced_time(20.0, -80e3, 8000.0) == pytest.approx(10.0)


# --------------------------------------------------------------------------- the stage


SHOTS = "shot,lon,lat,elev_m,depth_m\nS1,-38.29,43.905,0,0\nS2,-38.06,44.20,0,0\n"
TOML = """
[shots]
file = "shots.csv"
coordinates_crs = "EPSG:4326"
height_reference = "geoid"
[shots.columns]
id = "shot"
elevation = "elev_m"
depth = "depth_m"
[model]
file = "model.toml"
earth = "flat"
[picks]
file = "picks.csv"
reduction_velocity_kms = 8.0
"""


def test_stage_computes_phases_missing_from_rays(tmp_path: Path) -> None:
    """The picked head wave is not in [rays] phases: the stage computes it; with picks built from the textbook
    head-wave time at the pyproj geodesic offset (WGS 84) plus a known shift, every residual is that shift."""
    rows = [f"R{i:02d},{-38.29 + 0.03 * i:.4f},{43.905 + 0.045 * i:.4f},0" for i in range(12)]
    root = write_tiny_project(tmp_path / "p", toml_extra=TOML, stations_rows=rows)
    (root / "shots.csv").write_text(SHOTS)
    (root / "model.toml").write_text("# placeholder: the test sets the model object directly\n")
    geod = Geod(ellps="WGS84")
    lon = np.array([float(r.split(",")[1]) for r in rows])
    lat = np.array([float(r.split(",")[2]) for r in rows])
    _, _, dist = geod.inv(np.full(lon.size, -38.29), np.full(lon.size, 43.905), lon, lat)
    far = dist > 2 * 8e3 * math.tan(math.asin(V1 / V2)) + 2e3
    shift = 0.2
    lines = ["shot_id,station_id,phase,time_s,uncertainty_s"]
    lines += [f"S1,R{i:02d},Pn,{head_wave_time(d, h=8e3) + shift:.6f},0.1" for i, d in enumerate(dist) if far[i]]
    lines += ["S1,R01,Pn,3.0,0.1", "S1,R01,Pg,abc,0.1", "S7,R02,Pg,3.0,0.1"]
    (root / "picks.csv").write_text("\n".join(lines) + "\n")

    s = load_settings(root)
    s.rays.phases = ["direct"]
    ctx = Context(s, root / "out", Report("t"), Progress(quiet=True))
    (root / "out").mkdir()
    by = {st.name: st for st in stages()}
    run_stages(ctx, [by[n] for n in ("inputs", "line", "place")])
    ctx.artefacts["model"] = THIN
    run_stages(ctx, [by["rays"]])
    paths_before = list(ctx.artefacts.get("ray_paths", []))
    res = run_stages(ctx, [by["picks"]])
    assert res.ran == ["picks"]
    out = pd.read_csv(root / "out" / "misfits.csv")
    assert len(out) == len(lines) - 1  # every pick row
    ok = out[out["status"] == "ok"]
    assert len(ok) == int(far.sum()) > 3
    np.testing.assert_allclose(ok["residual_s"], shift, atol=2e-3)  # mm-level offsets through the working CRS
    np.testing.assert_allclose(ok["offset_m"], dist[far], atol=0.5)
    assert out["status"].iloc[-3:].tolist() == ["no_model_time", "bad_time", "unknown_shot"]
    assert (root / "out" / "traveltimes.png").exists() and (root / "out" / "traveltimes.svg").exists()
    assert list(ctx.artefacts.get("ray_paths", [])) == paths_before  # no paths added for the section
    text = ctx.report.render()
    assert "## Picks and misfits" in text and "Pn (head:moho)" in text and "χ²/N" in text
    assert "computed for the picks (head:moho)" in text


def test_stage_is_skipped_without_picks(tiny_project: Path) -> None:
    s = load_settings(tiny_project)
    ctx = Context(s, tiny_project / "out", Report("t"), Progress(quiet=True))
    res = run_stages(ctx, [st for st in stages() if st.name == "picks"])
    assert res.skipped["picks"] == "no [picks] section in the project file"


# --------------------------------------------------------------------------- synthetic sample picks


def test_synthetic_sample_picks(tmp_path: Path) -> None:
    import tomllib

    from geosect.demo import write_demo
    from geosect.demo_picks import PICKS_TOML, synthetic_picks_csv
    from geosect.model import read_model

    root = tmp_path / "sample"
    write_demo(root)  # writes picks.csv and names it in geosect.toml
    assert tomllib.loads((root / "geosect.toml").read_text())["picks"] == tomllib.loads(PICKS_TOML)["picks"]
    (root / "picks.csv").unlink()  # the project file names picks.csv, which does not exist now
    text = synthetic_picks_csv(root)
    assert not list(root.glob(".geosect-picks-*"))  # the temporary project file is gone
    (root / "picks.csv").write_text(text)
    spec = tomllib.loads(PICKS_TOML)["picks"]
    raw = pd.read_csv(root / "picks.csv", dtype=str, keep_default_na=False)
    assert list(raw.columns) == ["shot", "station", "phase", "time_s", "sigma_s"]
    assert set(raw["phase"]) == {"Pg", "PmP", "Pn"}
    assert raw["shot"].str.startswith("SP").all() and raw["station"].str.startswith("TR").all()
    assert "SP05" not in set(raw["shot"])  # its depth is not a number: the shot is not usable
    assert not {"TR018", "TR052"} & set(raw["station"])  # no latitude / swapped coordinates
    model = read_model(root / "model.toml")
    picks = read_picks(root / "picks.csv", columns=spec["columns"], model=model,
                       shot_ids=pd.read_csv(root / "shots.csv", dtype=str)["shot"],
                       station_ids=pd.read_csv(root / "stations.csv", dtype=str)["code"])
    assert picks["status"].value_counts().to_dict() == {"ok": len(picks) - 1, "bad_time": 1}
    assert picks.loc[picks["status"] == "bad_time", "flags"].item() == "time_not_a_number"
    assert set(picks["phase"]) == {"direct", "reflection:moho", "head:moho"}
    assert (picks["uncertainty_s"] > 0).all() and len(picks) > 300
