"""End to end on the synthetic sample project: `geosect demo` then `geosect build`, outputs checked."""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pytest

from geosect.cli.main import main


@pytest.fixture(scope="module")
def built(tmp_path_factory: pytest.TempPathFactory) -> Path:
    root = tmp_path_factory.mktemp("sample") / "survey"
    assert main(["-q", "demo", str(root)]) == 0
    # keep the suite fast: every borehole shot and bad row, but only every 12th vibrator point
    shots = (root / "shots.csv").read_text().splitlines()
    keep = [ln for k, ln in enumerate(shots) if not ln.startswith("VP") or k % 12 == 0]
    (root / "shots.csv").write_text("\n".join(keep) + "\n")
    assert main(["-q", "build", str(root)]) == 0
    return root


def test_outputs_exist(built: Path) -> None:
    out = built / "out"
    for name in ("stations.csv", "shots.csv", "rays.csv", "geometry.gpkg", "report.md", "section.png",
                 "section.svg", "section.pdf", "map.html", "coverage.csv"):
        assert (out / name).exists(), name
    assert not list(out.glob(".*")), "no temporary files left behind"


def test_every_input_row_reaches_the_output(built: Path) -> None:
    for name, idcol in (("stations", "code"), ("shots", "shot")):
        src = pd.read_csv(built / f"{name}.csv", dtype=str, keep_default_na=False)
        out = pd.read_csv(built / "out" / f"{name}.csv", dtype={"id": str}, keep_default_na=False)
        assert len(out) == len(src)
        assert list(out["id"]) == [s if s else f"row{i + 1}" for i, s in enumerate(src[idcol])]
        assert set(out.columns) >= {"id", "easting", "northing", "lon", "lat", "elevation_m", "dem_elevation_m",
                                    "chainage_m", "crossline_m", "status", "flags"}


def test_deliberately_bad_rows_are_flagged(built: Path) -> None:
    st = pd.read_csv(built / "out" / "stations.csv", keep_default_na=False).set_index("row")
    assert (st["status"] == "bad_coordinates").sum() == 1
    assert (st["status"] == "duplicate_id").sum() == 1
    assert (st["status"] == "swapped_coordinates").sum() == 1
    sh = pd.read_csv(built / "out" / "shots.csv", keep_default_na=False)
    assert (sh["status"] == "bad_depth").sum() == 1
    # fan shots are far off the line: flagged, not dropped
    assert sh["flags"].str.contains("far_off_line").sum() >= 2
    report = (built / "out" / "report.md").read_text()
    assert "swapped\\_coordinates" in report and "bad\\_depth" in report


def test_geometry_layers(built: Path) -> None:
    import pyogrio

    layers = {name for name, _ in pyogrio.list_layers(built / "out" / "geometry.gpkg")}
    assert {"line", "stations", "shots", "midpoints", "reflection_points", "bins"} <= layers


def test_rays_table(built: Path) -> None:
    from geosect.stages.rays import RAY_COLUMNS

    rays = pd.read_csv(built / "out" / "rays.csv", keep_default_na=False, low_memory=False)
    assert list(rays.columns[: len(RAY_COLUMNS)]) == RAY_COLUMNS
    st = pd.read_csv(built / "out" / "stations.csv", keep_default_na=False)
    sh = pd.read_csv(built / "out" / "shots.csv", keep_default_na=False)
    phases = 4  # the sample project asks for four phases
    assert len(rays) == (st["status"] == "ok").sum() * (sh["status"] == "ok").sum() * phases
    ok = rays[rays["status"] == "ok"]
    assert set(ok["phase"]) == {"reflection:conrad", "reflection:moho", "head:moho", "direct"}
    refl = ok[ok["phase"].str.startswith("reflection")]
    assert (refl["point_depth_m"].astype(float) > 10e3).all()
    assert (refl["fresnel_inline_m"].astype(float) > 0).all()
    assert (rays.loc[rays["status"] != "ok", "time_s"] == "").all()  # no number where there is no ray


def test_check_exits_zero_and_prints_summary(built: Path, capsys: pytest.CaptureFixture) -> None:
    assert main(["check", str(built)]) == 0
    out = capsys.readouterr().out
    assert "UTM zone 24N" in out and "swapped\\_coordinates" in out and "project is usable" in out
