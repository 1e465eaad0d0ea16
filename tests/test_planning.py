"""Tests of planned layouts (geosect.planning) and their comparison with the survey in the coverage stage.

All layouts, tables and topography here are invented for the tests (synthetic).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from pyproj import CRS, Transformer

from geosect.config import ModelSettings, PlanInput, Settings
from geosect.coverage import bin_edges
from geosect.crs import WorkingCRS, to_lonlat
from geosect.errors import ConfigError, InputError
from geosect.line import SurveyLine
from geosect.model import Interface, Layer, LayeredModel
from geosect.pipeline import Context, Progress
from geosect.planning import (candidate_stations, evaluate_layout, iter_reflections, layout_along_line,
                              layout_from_plan, layout_from_table, rank_candidates, solve_reflections, summary_table,
                              survey_coverage)
from geosect.report import Report

UTM33 = CRS.from_epsg(32633)
E0, N0 = 450_000.0, 5_100_000.0


def _line(length_km: float) -> SurveyLine:
    return SurveyLine([E0, E0 + length_km * 1e3], [N0, N0], name="synthetic")


def _flat() -> LayeredModel:
    return LayeredModel.flat([0.0, 20e3], [6000.0, 8000.0], names=["surface", "moho"])


def _points(line, chainage_km, prefix):
    ch = np.asarray(chainage_km, float) * 1e3
    e, n = line.position(ch)
    lon, lat = to_lonlat(UTM33, e, n)
    return pd.DataFrame({"id": [f"{prefix}{k:03d}" for k in range(ch.size)], "easting": e, "northing": n,
                         "lon": lon, "lat": lat, "elevation_m": np.nan, "dem_elevation_m": np.nan, "chainage_m": ch,
                         "crossline_m": 0.0, "status": "ok", "flags": ""})


# --------------------------------------------------------------------------- layouts from spacings


def test_layout_from_spacings_has_the_right_counts_and_positions():
    line = _line(50.0)
    # synthetic topography: 800 m rising 10 m per km, known from 0 to 40 km only
    topo = pd.DataFrame({"chainage_m": np.arange(0.0, 40e3 + 1, 250.0)})
    topo["elevation_m"] = 800.0 + 0.01 * topo["chainage_m"]
    lay = layout_along_line(line, UTM33, name="P1", station_spacing_m=2e3, shot_spacing_m=10e3, start_m=5e3,
                            end_m=45e3, shot_depth_m=25.0, topography=topo)
    # stations at 5, 7, ..., 45 km: (45 - 5) / 2 + 1 = 21; shots at 5, 15, ..., 45 km: 5
    assert (lay.n_stations, lay.n_shots, lay.n_pairs) == (21, 5, 105)
    np.testing.assert_allclose(lay.stations["chainage_m"], 5e3 + 2e3 * np.arange(21))
    np.testing.assert_allclose(lay.shots["chainage_m"], [5e3, 15e3, 25e3, 35e3, 45e3])
    # on the straight east-west line, easting = start + chainage, northing constant, crossline 0
    np.testing.assert_allclose(lay.stations["easting"], E0 + lay.stations["chainage_m"])
    np.testing.assert_allclose(lay.stations["northing"], N0)
    assert (lay.stations["crossline_m"] == 0).all()
    # longitude/latitude against pyproj directly (reference library)
    lon, lat = Transformer.from_crs(UTM33, CRS.from_epsg(4326), always_xy=True).transform(
        lay.shots["easting"].to_numpy(), lay.shots["northing"].to_numpy())
    np.testing.assert_allclose(lay.shots["lon"], lon, atol=1e-12)
    np.testing.assert_allclose(lay.shots["lat"], lat, atol=1e-12)
    # heights from the topography where it is known; beyond 40 km none, and flagged
    ch = lay.stations["chainage_m"].to_numpy()
    known = ch <= 40e3
    np.testing.assert_allclose(lay.stations["dem_elevation_m"].to_numpy()[known], 800.0 + 0.01 * ch[known])
    assert np.isnan(lay.stations["dem_elevation_m"].to_numpy()[~known]).all()
    assert (lay.stations["flags"].to_numpy()[~known] == "outside_dem").all()
    assert (lay.shots["depth_m"] == 25.0).all()
    assert lay.stations["id"].is_unique and lay.stations["id"].iloc[0] == "P1-R001"


def test_layout_defaults_to_the_whole_line_and_refuses_an_end_before_the_start():
    line = _line(50.0)
    plan = PlanInput(name="sparse", station_spacing_km=3.0, shot_spacing_km=25.0)
    lay = layout_from_plan(plan, line, UTM33, key="plans[0]")
    # 0, 3, ..., 48 km: 17 stations; shots at 0, 25, 50 km
    assert lay.n_stations == 17 and lay.stations["chainage_m"].iloc[-1] == 48e3
    np.testing.assert_allclose(lay.shots["chainage_m"], [0.0, 25e3, 50e3])
    assert np.isnan(lay.stations["dem_elevation_m"]).all()  # no topography: at the datum
    with pytest.raises(ConfigError) as err:
        layout_from_plan(PlanInput(name="bad", station_spacing_km=1.0, shot_spacing_km=5.0, start_km=30.0,
                                   end_km=10.0), line, UTM33, key="plans[1]")
    assert "plans[1].end_km" in str(err.value) and "Fix:" in str(err.value)


def test_candidates_every_spacing_on_the_line():
    line = _line(21.0)
    c = candidate_stations(line, UTM33, 2e3)
    np.testing.assert_allclose(c["chainage_m"], np.arange(0.0, 21e3, 2e3))
    np.testing.assert_allclose(c["easting"], E0 + c["chainage_m"])
    assert (c["status"] == "ok").all()


# --------------------------------------------------------------------------- layouts from a table


def _plan_table(tmp_path: Path) -> Path:
    line = _line(50.0)
    e, n = line.position(np.array([5e3, 25e3, 45e3, 30e3, 10e3]))
    lon, lat = to_lonlat(UTM33, e, n)
    rows = ["pid,kind,lon,lat,depth_m",
            f"A1,station,{lon[0]:.8f},{lat[0]:.8f},",
            f"A2,Receiver,{lon[1]:.8f},{lat[1]:.8f},",
            f"B1,shot,{lon[2]:.8f},{lat[2]:.8f},40",
            f"B2,SOURCE,{lon[3]:.8f},{lat[3]:.8f},",
            f"X1,blast,{lon[4]:.8f},{lat[4]:.8f},",
            "X2,station,,,"]
    p = tmp_path / "plan_synthetic.csv"
    p.write_text("\n".join(rows) + "\n")
    return p


def test_layout_from_a_table_keeps_every_row(tmp_path):
    line = _line(50.0)
    plan = PlanInput(name="table plan", file=_plan_table(tmp_path), coordinates_crs="EPSG:4326",
                     columns={"id": "pid"}, shot_depth_m=12.0)
    lay = layout_from_plan(plan, line, UTM33, key="plans[0]")
    assert lay.origin == "file"
    assert lay.n_stations == 2 and lay.n_shots == 2
    assert list(lay.stations["id"]) == ["A1", "A2", "X2"]  # X2 kept, with its status
    np.testing.assert_allclose(lay.stations["chainage_m"].iloc[:2], [5e3, 25e3], atol=1e-3)
    np.testing.assert_allclose(lay.shots["depth_m"], [40.0, 12.0])  # the plan's depth where the row gives none
    st = dict(zip(lay.unused["id"], lay.unused["status"]))
    assert st == {"X1": "unknown_kind", "X2": "bad_coordinates"}


def test_a_table_without_kind_is_refused_with_the_fix(tmp_path):
    p = tmp_path / "no_kind_synthetic.csv"
    p.write_text("id,lon,lat\nA,15.1,46.0\n")
    plan = PlanInput(name="t", file=p, coordinates_crs="EPSG:4326")
    with pytest.raises(InputError) as err:
        layout_from_table(plan, _line(50.0), UTM33, key="plans[2]")
    assert "kind" in str(err.value) and "plans[2]" in str(err.value)


# --------------------------------------------------------------------------- solving like the survey


def test_plan_coverage_is_the_midpoint_count_of_a_flat_reflector():
    # Shots every 10 km and stations every 2 km from 5 to 45 km over a flat reflector: reflection points at the
    # midpoints (s + r) / 2 (common-midpoint geometry; Kearey, Brooks & Hill, An Introduction to Geophysical
    # Exploration, 3rd ed., ch. 4), which fall on every whole km from 5 to 45.
    line = _line(50.0)
    lay = layout_along_line(line, UTM33, name="P", station_spacing_m=2e3, shot_spacing_m=10e3, start_m=5e3,
                            end_m=45e3)
    edges = bin_edges(0.0, 50e3, 5e3, origin_m=2.5e3)  # edges off the whole km, so no point sits on one
    res = evaluate_layout(lay, _flat(), ["reflection:moho"], line, UTM33, edges_m=edges, gap_m=3e3)
    cov = res.coverages["reflection:moho"]
    s = lay.shots["chainage_m"].to_numpy()
    r = lay.stations["chainage_m"].to_numpy()
    mids = ((s[:, None] + r[None, :]) / 2).ravel()
    expected, _ = np.histogram(mids, bins=edges)
    np.testing.assert_array_equal(cov.fold, expected)
    assert cov.n_points == 105
    assert cov.span_m == pytest.approx((5e3, 45e3), abs=1e-3)
    assert cov.largest_gap_m == pytest.approx(1e3, abs=1e-3) and cov.n_gaps == 0
    t = summary_table([res])
    assert t.loc[0, "pairs"] == 105 and t.loc[0, "interface"] == "moho"
    assert t.loc[0, "covered_m"] == pytest.approx(40e3, abs=1e-3)


def test_chunks_of_shots_do_not_change_the_result():
    line = _line(30.0)
    shots, stations = _points(line, [0.0, 7.0, 13.0, 29.0], "S"), _points(line, np.arange(0.5, 30.0, 1.5), "R")
    whole = solve_reflections(shots, stations, _flat(), ["reflection:moho"], line, UTM33)["reflection:moho"]
    parts = pd.concat([rows for _, rows in iter_reflections(shots, stations, _flat(), ["reflection:moho"], line,
                                                            UTM33, chunk_pairs=25)], ignore_index=True)
    assert len(whole) == 4 * 20
    pd.testing.assert_frame_equal(whole, parts)


def test_candidates_are_solved_in_one_call_per_phase(monkeypatch):
    line = _line(40.0)
    model = _flat()
    calls = []
    orig = LayeredModel.solve

    def counting(self, offset_m, phase, **kw):
        calls.append((phase, np.size(offset_m)))
        return orig(self, offset_m, phase, **kw)

    monkeypatch.setattr(LayeredModel, "solve", counting)
    shots = _points(line, [0.0, 10.0, 20.0], "S")
    cands = candidate_stations(line, UTM33, 4e3)  # 11 candidates
    out = rank_candidates({"reflection:moho": np.array([5e3, 6e3, 20e3])}, shots, cands, model,
                          ["reflection:moho"], line, UTM33, gap_m=3e3, earth="flat")
    assert calls == [("reflection:moho", 3 * 11)]
    assert len(out["reflection:moho"]) == 11


def _run_stage(tmp_path, line, shots, stations, model, plans, phases=("reflection:moho",)):
    from geosect.stages import rays
    from geosect.stages.coverage import compute_coverage

    s = Settings()
    s.model = ModelSettings(file=tmp_path / "model.toml")
    s.rays.phases = list(phases)
    s.coverage.candidates = 0
    s.plans = list(plans)
    out = tmp_path / "out"
    out.mkdir(exist_ok=True)
    ctx = Context(s, out, Report("synthetic"), Progress(quiet=True))
    ctx.artefacts.update(line=line, crs=WorkingCRS(UTM33, "test"), placed_shots=shots, placed_stations=stations,
                         model=model)
    rays.compute_rays(ctx)
    compute_coverage(ctx)
    return ctx


def test_a_plan_equal_to_the_survey_gets_the_survey_numbers(tmp_path):
    # The same points through the rays stage (survey) and through planning must give the same coverage; the line
    # is 130 km long so that some shots are solved on a spherical Earth ('auto') in both.
    line = _line(130.0)
    lay = layout_along_line(line, UTM33, name="copy", station_spacing_m=10e3, shot_spacing_m=65e3)
    itfs = [Interface("surface", [0.0], [0.0]), Interface("moho", [0.0, 130e3], [30e3, 40e3], role="moho")]
    model = LayeredModel(itfs, [Layer("crust", 6000.0, 6600.0, vpvs=1.73),
                                Layer("mantle", 8000.0, None, vp_gradient_per_s=0.001, vpvs=1.78)])
    ctx = _run_stage(tmp_path, line, lay.shots, lay.stations, model, [])
    out = ctx.artefacts["coverage"]
    survey = out.survey["reflection:moho"]
    mine = evaluate_layout(lay, model, ["reflection:moho"], line, UTM33, edges_m=out.edges_m, gap_m=5e3)
    plan = mine.coverages["reflection:moho"]
    np.testing.assert_array_equal(plan.fold, survey.fold)
    np.testing.assert_allclose(plan.span_m, survey.span_m, atol=1e-3)
    assert plan.wide.count == survey.wide.count > 0
    assert plan.wide.critical_m == pytest.approx(survey.wide.critical_m)
    rp = ctx.artefacts["reflection_points"]
    again = survey_coverage(rp, model, ["reflection:moho"], edges_m=out.edges_m, gap_m=5e3, shots=lay.shots,
                            stations=lay.stations)
    np.testing.assert_array_equal(again["reflection:moho"].fold, survey.fold)


def test_plans_are_compared_side_by_side_in_the_report(tmp_path):
    line = _line(60.0)
    shots = _points(line, [0.0, 60.0], "S")
    stations = _points(line, np.arange(1.0, 20.0, 2.0), "R")
    plans = [PlanInput(name="dense", station_spacing_km=1.0, shot_spacing_km=10.0),
             PlanInput(name="short", station_spacing_km=2.0, shot_spacing_km=5.0, start_km=20.0, end_km=30.0)]
    ctx = _run_stage(tmp_path, line, shots, stations, _flat(), plans)
    text = ctx.report.render()
    assert "## Planned layouts" in text
    table = [ln for ln in text.splitlines() if ln.startswith("| ")]
    head = next(ln for ln in table if ln.startswith("| layout | stations | shots | pairs"))
    assert "moho (PmP): span (km)" in head and "moho (PmP): wide angle" in head
    dense = next(ln for ln in table if ln.startswith("| dense |")).split(" | ")
    short = next(ln for ln in table if ln.startswith("| short |")).split(" | ")
    assert dense[1:4] == ["61", "7", "427"]
    assert short[1:4] == ["6", "3", "18"]
    # critical distance of this model at the surface: 2 h tan(asin(v1/v2)) = 45.4 km (Kearey, Brooks & Hill,
    # 3rd ed., ch. 5): the dense plan's 60 km offsets pass it, the short plan's 10 km do not
    assert dense[-1].rstrip(" |") == "yes" and short[-1].rstrip(" |") == "no"
    summary = pd.read_csv(tmp_path / "out" / "plans.csv")
    assert list(summary["layout"]) == ["survey", "dense", "short"]
    fold = pd.read_csv(tmp_path / "out" / "coverage.csv")
    assert set(fold["layout"]) == {"survey", "dense", "short"}
    out = ctx.artefacts["coverage"]
    assert [p.name for p in out.plans] == ["dense", "short"]


def test_a_2d_model_plan_goes_through_the_rays_stage_2d_tracer():
    line = _line(60.0)
    itfs = [Interface("surface", [0.0], [0.0]), Interface("moho", [0.0, 60e3], [30e3, 36e3])]
    model = LayeredModel(itfs, [Layer("crust", [6000.0, 6300.0], [6500.0, 6800.0], chainage_m=[0.0, 60e3],
                                      vpvs=1.73), Layer("mantle", 8000.0, None, vpvs=1.78)])
    lay = layout_along_line(line, UTM33, name="2d", station_spacing_m=3e3, shot_spacing_m=30e3)
    rows = solve_reflections(lay.shots, lay.stations, model, ["reflection:moho"], line, UTM33)["reflection:moho"]
    assert len(rows) == lay.n_pairs  # every pair kept, with its status
    assert set(rows["method"]) == {"2d_ray_tracer"}
    ok = (rows["status"] == "ok").to_numpy()
    assert ok.mean() > 0.8
    # a reflection point lies on its reflector
    np.testing.assert_allclose(rows.loc[ok, "point_depth_m"],
                               model.interface_depth("moho", rows.loc[ok, "point_chainage_m"]), atol=1.0)
