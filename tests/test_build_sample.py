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
    assert main(["-q", "build", str(root)]) == 0
    return root


def test_outputs_exist(built: Path) -> None:
    out = built / "out"
    for name in ("stations.csv", "shots.csv", "geometry.gpkg", "report.md", "section.png", "section.svg",
                 "section.pdf", "map.html"):
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
    assert {"line", "stations", "shots", "bins"} <= layers


def test_check_exits_zero_and_prints_summary(built: Path, capsys: pytest.CaptureFixture) -> None:
    assert main(["check", str(built)]) == 0
    out = capsys.readouterr().out
    assert "UTM zone 24N" in out and "swapped\\_coordinates" in out and "project is usable" in out
