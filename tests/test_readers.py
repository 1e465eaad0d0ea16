"""Point readers: every format, bad rows kept with a status, missing CRS refused."""

from __future__ import annotations

from pathlib import Path
from types import SimpleNamespace

import geopandas as gpd
import numpy as np
import pandas as pd
import pytest
from shapely.geometry import Point

from geosect.errors import InputError
from geosect.io.points import read_points


def spec(file: Path, **kw):
    base = dict(file=file, layer=None, coordinates_crs=None, height_reference="geoid", delimiter=None, columns={})
    base.update(kw)
    return SimpleNamespace(**base)


ROWS = [
    ("K01", -38.10, 44.00, 100.0),
    ("K02", -38.05, 44.02, 110.0),
    ("K03", -38.00, 44.05, 120.0),
    ("K04", -37.95, 44.07, 130.0),
    ("K05", -37.90, 44.10, 140.0),
]


def _csv(tmp_path: Path, extra: list[str] = (), sep: str = ",", name: str = "st.csv") -> Path:
    lines = [sep.join(["code", "lon", "lat", "elev_m"])]
    lines += [sep.join(map(str, r)) for r in ROWS] + list(extra)
    p = tmp_path / name
    p.write_text("\n".join(lines) + "\n")
    return p


def test_csv_good_rows(tmp_path: Path) -> None:
    t = read_points(spec(_csv(tmp_path), coordinates_crs="EPSG:4326"), "stations")
    f = t.frame
    assert list(f["id"]) == [r[0] for r in ROWS]
    assert (f["status"] == "ok").all()
    np.testing.assert_allclose(f["lon"], [r[1] for r in ROWS])
    np.testing.assert_allclose(f["elevation_m"], [r[3] for r in ROWS])


def test_tsv_is_read(tmp_path: Path) -> None:
    t = read_points(spec(_csv(tmp_path, sep="\t", name="st.tsv"), coordinates_crs="EPSG:4326"), "stations")
    assert len(t.frame) == 5 and (t.frame["status"] == "ok").all()


def test_bad_rows_stay_with_status(tmp_path: Path) -> None:
    extra = ["K06,-37.85,,150",          # missing latitude
             "K02,-37.80,44.15,160",     # duplicate id
             "K08,44.16,-37.75,170",     # latitude and longitude swapped
             "K09,abc,44.2,180",         # not a number
             "K10,-37.70,95.0,190"]      # latitude out of range (and not a swap)
    t = read_points(spec(_csv(tmp_path, extra), coordinates_crs="EPSG:4326"), "stations")
    f = t.frame.set_index("row")
    assert len(f) == 10  # nothing dropped
    assert f.loc[6, "status"] == "bad_coordinates" and "missing_coordinate" in f.loc[6, "flags"]
    assert f.loc[7, "status"] == "duplicate_id"
    assert "duplicate_id" in f.loc[2, "flags"] and f.loc[2, "status"] == "ok"
    assert f.loc[8, "status"] == "swapped_coordinates"
    assert f.loc[9, "status"] == "bad_coordinates" and "coordinate_not_a_number" in f.loc[9, "flags"]
    assert f.loc[10, "status"] == "bad_coordinates"
    assert np.isnan(f.loc[6, "lon"]) and np.isnan(f.loc[8, "lon"])
    counts = t.counts()
    assert counts["ok"] == 5 and counts["bad_coordinates"] == 3


def test_table_without_crs_is_refused(tmp_path: Path) -> None:
    with pytest.raises(InputError) as e:
        read_points(spec(_csv(tmp_path)), "stations")
    assert "coordinates_crs" in e.value.message and "st.csv" in e.value.message


def test_mapped_column_missing(tmp_path: Path) -> None:
    with pytest.raises(InputError, match="did you mean 'elev_m'"):
        read_points(spec(_csv(tmp_path), coordinates_crs="EPSG:4326", columns={"elevation": "elev"}), "stations")


def _gdf(crs="EPSG:4326") -> gpd.GeoDataFrame:
    return gpd.GeoDataFrame({"code": [r[0] for r in ROWS], "elev_m": [r[3] for r in ROWS]},
                            geometry=[Point(r[1], r[2]) for r in ROWS], crs=crs)


@pytest.mark.parametrize("suffix,driver", [(".gpkg", "GPKG"), (".geojson", "GeoJSON"), (".shp", "ESRI Shapefile"),
                                           (".kml", "KML")])
def test_vector_formats(tmp_path: Path, suffix: str, driver: str) -> None:
    p = tmp_path / f"st{suffix}"
    kw = {"layer": "stations"} if driver == "GPKG" else {}
    _gdf().to_file(p, driver=driver, **kw)
    columns = {"id": "Name"} if driver == "KML" else {"id": "code"}
    if driver == "KML":  # KML keeps the name in 'Name'
        g = _gdf().rename(columns={"code": "Name"})
        g.to_file(p, driver="KML")
    t = read_points(spec(p, layer=kw.get("layer"), columns=columns), "stations")
    f = t.frame
    assert list(f["id"]) == [r[0] for r in ROWS]
    np.testing.assert_allclose(f["lat"], [r[2] for r in ROWS], atol=1e-9)


def test_geopackage_wrong_layer(tmp_path: Path) -> None:
    p = tmp_path / "st.gpkg"
    _gdf().to_file(p, layer="stations", driver="GPKG")
    with pytest.raises(InputError, match="layers in the file: stations"):
        read_points(spec(p, layer="stns"), "stations")


def test_vector_without_crs_is_refused(tmp_path: Path) -> None:
    p = tmp_path / "st.geojson"
    g = _gdf()
    g = g.set_crs(None, allow_override=True)
    g.to_file(p, driver="GeoJSON")
    # GeoJSON without a crs member is read as WGS 84 by GDAL (RFC 7946), so use a shapefile without .prj
    p = tmp_path / "st.shp"
    g.to_file(p, driver="ESRI Shapefile")
    assert not (tmp_path / "st.prj").exists()
    with pytest.raises(InputError) as e:
        read_points(spec(p), "stations")
    assert "no coordinate reference system" in e.value.message and "coordinates_crs" in e.value.message


def test_projected_table(tmp_path: Path) -> None:
    from pyproj import Transformer

    tf = Transformer.from_crs(4326, 32624, always_xy=True)
    e, n = tf.transform([r[1] for r in ROWS], [r[2] for r in ROWS])
    df = pd.DataFrame({"name": [r[0] for r in ROWS], "easting": e, "northing": n})
    p = tmp_path / "st.csv"
    df.to_csv(p, index=False)
    t = read_points(spec(p, coordinates_crs="EPSG:32624"), "stations")
    np.testing.assert_allclose(t.frame["lon"], [r[1] for r in ROWS], atol=1e-9)
    assert t.frame["elevation_m"].isna().all()  # no elevation column: NaN, not invented
