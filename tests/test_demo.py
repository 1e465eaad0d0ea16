"""Tests of the synthetic sample project (geosect.demo).

The scenario is invented; these tests check that what it promises is there
(line length, bends, station layout, deliberately bad rows, DEM format and
relief) using reference libraries (pyproj, GeographicLib, shapely, scipy,
rasterio) rather than geosect's own geometry code.
"""

from __future__ import annotations

import json
import re
import tomllib
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import rasterio
import shapely
from pyproj import CRS, Geod, Transformer

from geosect.demo import DEMO_FILES, demo_signature, write_demo
from geosect.errors import InputError

REPO = Path(__file__).resolve().parents[1]
TO_UTM = Transformer.from_crs(4326, 32624, always_xy=True)


@pytest.fixture(scope="module")
def project(tmp_path_factory) -> Path:
    root = tmp_path_factory.mktemp("demo") / "tarvanne"
    written = write_demo(root)
    assert [p.relative_to(root).as_posix() for p in written] == list(DEMO_FILES)
    return root


@pytest.fixture(scope="module")
def road_xy(project) -> np.ndarray:
    fc = json.loads((project / "road.geojson").read_text())
    (feat,) = fc["features"]
    assert feat["geometry"]["type"] == "LineString"
    lon, lat = np.array(feat["geometry"]["coordinates"]).T
    return np.column_stack(TO_UTM.transform(lon, lat))


@pytest.fixture(scope="module")
def road_line(road_xy) -> shapely.LineString:
    return shapely.LineString(road_xy)


@pytest.fixture(scope="module")
def stations(project) -> pd.DataFrame:
    return pd.read_csv(project / "stations.csv", dtype={"lat": str, "lon": str})


@pytest.fixture(scope="module")
def shots(project) -> pd.DataFrame:
    return pd.read_csv(project / "shots.csv", dtype={"depth_m": str})


def _good(frame: pd.DataFrame) -> pd.DataFrame:
    """Rows with usable, unswapped coordinates; first occurrence of each id."""
    lon = pd.to_numeric(frame["lon"], errors="coerce")
    lat = pd.to_numeric(frame["lat"], errors="coerce")
    keep = lon.between(-42.0, -36.0) & lat.between(40.0, 48.0)
    out = frame[keep].copy()
    out["lon"], out["lat"] = lon[keep], lat[keep]
    return out[~out.iloc[:, 0].duplicated()]


def _xy(frame: pd.DataFrame) -> tuple[np.ndarray, np.ndarray]:
    return TO_UTM.transform(frame["lon"].to_numpy(float), frame["lat"].to_numpy(float))


# ----------------------------------------------------------------------------- writing


def test_every_file_written_and_no_temporary_left(project):
    for name in DEMO_FILES:
        assert (project / name).stat().st_size > 0, name
    leftovers = [p.name for p in project.rglob("*") if p.name.startswith(".") or p.suffix == ".xml"]
    assert leftovers == []


def test_refuses_a_non_empty_folder(tmp_path):
    (tmp_path / "notes.txt").write_text("mine")
    with pytest.raises(InputError) as err:
        write_demo(tmp_path)
    assert str(tmp_path) in str(err.value) and "overwrite" in err.value.fix
    assert sorted(p.name for p in tmp_path.iterdir()) == ["notes.txt"]
    write_demo(tmp_path, overwrite=True)
    assert (tmp_path / "notes.txt").read_text() == "mine"  # other files are left alone
    assert (tmp_path / "geosect.toml").is_file()


def test_refuses_a_file_as_folder(tmp_path):
    target = tmp_path / "a_file"
    target.write_text("x")
    with pytest.raises(InputError, match="not a folder"):
        write_demo(target, overwrite=True)


def test_deterministic(project, tmp_path):
    again = tmp_path / "again"
    write_demo(again)
    assert demo_signature(again) == demo_signature(project)
    # text and GeoTIFF files are identical byte for byte
    for name in DEMO_FILES:
        if not name.endswith(".gpkg"):
            assert (again / name).read_bytes() == (project / name).read_bytes(), name


def test_signature_sees_changes(project, tmp_path):
    copy = tmp_path / "copy"
    write_demo(copy)
    before = demo_signature(copy)
    text = (copy / "stations.csv").read_text().replace("TR002,", "TR902,")
    (copy / "stations.csv").write_text(text)
    with rasterio.open(copy / "dem.tif", "r+") as dst:
        band = dst.read(1)
        band[10, 10] += 1.0
        dst.write(band, 1)
    after = demo_signature(copy)
    assert {k for k in before if before[k] != after[k]} == {"stations.csv", "dem.tif"}


def test_signature_of_missing_folder(tmp_path):
    with pytest.raises(InputError, match="no such folder"):
        demo_signature(tmp_path / "nowhere")


def test_committed_sample_project_is_current(project):
    sample = REPO / "sample_project"
    if not sample.is_dir():
        pytest.fail(
            f"{sample} is missing: the repository must hold the sample project. "
            "Run `geosect demo sample_project --overwrite` in the repository root and commit it."
        )
    committed, fresh = demo_signature(sample), demo_signature(project)
    differ = sorted(k for k in set(committed) | set(fresh) if committed.get(k) != fresh.get(k))
    assert not differ, (
        f"sample_project/ differs from a fresh `geosect demo` in {differ}. "
        "Run `geosect demo sample_project --overwrite` and commit the result."
    )


# ----------------------------------------------------------------------------- marked synthetic


def test_says_it_is_synthetic(project):
    readme = (project / "README.txt").read_text()
    assert "SYNTHETIC" in readme and "invented" in readme.lower()
    assert "North Atlantic" in readme
    assert "licensed" in readme and "permit" in readme  # explosive-source cautions
    toml_head = (project / "geosect.toml").read_text().split("[project]")[0]
    assert "SYNTHETIC" in toml_head
    for name in ("dem.tif", "horizons/deep_boundary_depth.tif"):
        with rasterio.open(project / name) as src:
            assert "SYNTHETIC" in src.tags()["TIFFTAG_IMAGEDESCRIPTION"]
    import pyogrio

    info = pyogrio.read_info(project / "geology.gpkg", layer="units")
    assert "synthetic" in info["layer_metadata"]["DESCRIPTION"].lower()
    for name in ("road.geojson", "faults.geojson"):
        fc = json.loads((project / name).read_text())
        assert all("SYNTHETIC" in f["properties"]["note"] for f in fc["features"])


# ----------------------------------------------------------------------------- project file


def test_project_file_schema(project):
    cfg = tomllib.loads((project / "geosect.toml").read_text())
    assert set(cfg) == {
        "project", "stations", "shots", "line", "binning", "dem", "geology", "faults",
        "hypocentres", "horizons", "model", "picks", "rays", "section", "map",
    }
    assert cfg["project"] == {"name": "Tarvanne Range transect (synthetic sample)", "crs": "auto", "output": "out"}
    assert cfg["stations"]["columns"] == {"id": "code", "x": "lon", "y": "lat", "elevation": "elev_m"}
    assert cfg["shots"]["columns"] == {
        "id": "shot", "x": "lon", "y": "lat", "elevation": "elev_m", "depth": "depth_m", "charge": "charge_kg",
    }
    assert cfg["line"] == {
        "method": "file", "file": "road.geojson", "direction": "south-north",
        "far_off_line_km": 10.0, "bend_threshold_deg": 20.0,
    }
    assert cfg["binning"] == {"bin_m": 50.0, "line": "smooth", "smoothing_km": 2.0, "max_offset_km": 12.0}
    assert cfg["model"] == {"file": "model.toml", "earth": "auto"}
    assert cfg["hypocentres"]["columns"] == {
        "x": "lon", "y": "lat", "depth_km": "depth_km", "magnitude": "mag", "time": "time_utc",
    }
    assert [h["kind"] for h in cfg["horizons"]] == ["chainage-depth", "chainage-twt", "depth-grid"]
    assert cfg["rays"] == {
        "phases": ["reflection:conrad", "reflection:moho", "head:moho", "direct"], "frequency_hz": 8.0,
        "grid_spacing_m": 1000.0,
    }
    assert cfg["section"] == {"swath_km": 15.0} and cfg["map"] == {"chainage_tick_km": 10.0}
    # every file it names exists, and its columns are in the files
    files = [cfg[k]["file"] for k in ("stations", "shots", "line", "dem", "geology", "faults", "hypocentres",
                                      "model")]
    files += [h["file"] for h in cfg["horizons"]]
    for f in files:
        assert (project / f).is_file(), f
    for key in ("stations", "shots", "hypocentres"):
        header = (project / cfg[key]["file"]).read_text().splitlines()[0].split(",")
        assert set(cfg[key]["columns"].values()) <= set(header), key


def test_auto_crs_is_utm_24n(stations):
    # pyproj's UTM zone query over the area of the data: the zone that 'auto' must pick.
    good = _good(stations)
    from pyproj.aoi import AreaOfInterest
    from pyproj.database import query_utm_crs_info

    aoi = AreaOfInterest(good.lon.min(), good.lat.min(), good.lon.max(), good.lat.max())
    found = query_utm_crs_info(datum_name="WGS 84", area_of_interest=aoi)
    assert [c.code for c in found if c.name.endswith("N")] == ["32624"]


# ----------------------------------------------------------------------------- the line


def test_line_length(road_xy, project):
    grid_km = shapely.LineString(road_xy).length / 1000.0
    assert 180.0 <= grid_km <= 220.0
    # ground (geodesic) length on WGS 84, pyproj.Geod
    lon, lat = np.array(json.loads((project / "road.geojson").read_text())["features"][0]["geometry"]["coordinates"]).T
    geodesic_km = Geod(ellps="WGS84").line_length(lon, lat) / 1000.0
    assert 180.0 <= geodesic_km <= 220.0
    assert lat[-1] > lat[0]  # drawn south to north, as the project file says


def test_line_trend_and_bends(road_xy):
    d = np.diff(road_xy, axis=0)
    heading = np.degrees(np.arctan2(d[:, 0], d[:, 1]))  # grid azimuth, clockwise from north
    turn = (np.diff(heading) + 180.0) % 360.0 - 180.0
    sharp = np.abs(turn) > 20.0
    assert 3 <= sharp.sum() <= 5
    assert np.all((np.abs(turn[sharp]) >= 30.0) & (np.abs(turn[sharp]) <= 70.0))
    assert np.abs(turn[~sharp]).max() < 5.0  # gentle wiggles between the bends
    assert np.abs(turn[~sharp]).max() > 0.2  # ... but there are wiggles
    # the wiggles never add up to a bend: heading changes over any 2 km between the corners
    ends = np.flatnonzero(sharp)
    for a, b in zip(np.r_[0, ends + 1], np.r_[ends + 1, len(heading)]):
        h = heading[a:b]
        k = max(1, int(2000.0 / np.median(np.hypot(*d.T))))
        assert np.abs(((h[k:] - h[:-k]) + 180.0) % 360.0 - 180.0).max() < 15.0
    # overall SSW -> NNE: azimuth of the chord from first to last vertex
    net = road_xy[-1] - road_xy[0]
    assert 5.0 <= np.degrees(np.arctan2(net[0], net[1])) <= 40.0


# ----------------------------------------------------------------------------- stations


def test_station_bad_rows(stations):
    assert stations.columns.tolist() == ["code", "lon", "lat", "elev_m", "kind", "sensor"]
    assert stations["lat"].isna().sum() == 1 and stations["lon"].isna().sum() == 0
    assert stations["code"].duplicated().sum() == 1
    lon = pd.to_numeric(stations["lon"])
    lat = pd.to_numeric(stations["lat"])
    swapped = lon.between(40.0, 48.0) & lat.between(-42.0, -36.0)
    assert swapped.sum() == 1


def test_station_layout(stations, road_line):
    good = _good(stations)
    assert set(good["kind"]) == {"wide-angle", "geophone"}
    x, y = _xy(good)
    pts = shapely.points(x, y)
    dist = shapely.distance(pts, road_line)
    chain = shapely.line_locate_point(road_line, pts)
    wa = (good["kind"] == "wide-angle").to_numpy()
    ge = ~wa
    codes = stations["code"]
    assert codes[stations.kind == "wide-angle"].str.fullmatch(r"TR\d{3}").all()
    assert codes[stations.kind == "geophone"].str.fullmatch(r"G\d{4}").all()

    n_wa = stations.loc[stations.kind == "wide-angle", "code"].nunique()
    assert 60 <= n_wa <= 90
    assert dist[wa].max() <= 6000.0
    assert 3 <= np.sum((dist[wa] >= 1000.0) & (dist[wa] <= 6000.0)) <= 20  # set back from the road
    gaps = np.diff(np.sort(chain[wa]))
    assert 2000.0 <= np.median(gaps) <= 5000.0 and gaps.min() > 1000.0 and gaps.max() < 7000.0

    n_ge = int(ge.sum())
    assert 200 <= n_ge <= 400
    assert dist[ge].max() < 50.0
    gch = np.sort(chain[ge])
    assert np.all((np.diff(gch) >= 50.0) & (np.diff(gch) <= 100.0))
    assert 15_000.0 <= gch[-1] - gch[0] <= 30_000.0


def test_station_heights_follow_dem(project, stations):
    # Bilinear interpolation of the DEM by scipy's RegularGridInterpolator (cell centres);
    # the survey heights are DEM + noise of at most 3 m, written to 0.1 m.
    from scipy.interpolate import RegularGridInterpolator

    good = _good(stations)
    x, y = _xy(good)
    with rasterio.open(project / "dem.tif") as src:
        z = src.read(1).astype(float)
        t = src.transform
    xc = t.c + t.a * (np.arange(z.shape[1]) + 0.5)
    yc = t.f + t.e * (np.arange(z.shape[0]) + 0.5)
    interp = RegularGridInterpolator((yc[::-1], xc), z[::-1])
    dem_z = interp(np.column_stack([y, x]))
    diff = good["elev_m"].to_numpy(float) - dem_z
    assert np.abs(diff).max() <= 3.06
    assert diff.std() > 0.5  # there is survey noise


# ----------------------------------------------------------------------------- shots


def test_shots(shots, road_line):
    assert shots.columns.tolist() == ["shot", "lon", "lat", "elev_m", "depth_m", "charge_kg", "kind", "time_utc"]
    depth = pd.to_numeric(shots["depth_m"], errors="coerce")
    assert depth.isna().sum() == 1 and shots["depth_m"].isna().sum() == 0  # one non-numeric depth
    bore = shots[shots.kind == "borehole"]
    vib = shots[shots.kind == "vibrator"]
    assert len(bore) + len(vib) == len(shots)
    assert 8 <= len(bore) <= 12 and bore["shot"].str.fullmatch(r"SP\d{2}").all()
    d = depth[bore.index].dropna()
    assert d.between(20.0, 60.0).all()
    assert bore["charge_kg"].between(100.0, 800.0).all()
    x, y = _xy(bore)
    dist = shapely.distance(shapely.points(x, y), road_line)
    fan = dist > 1000.0
    assert 2 <= fan.sum() <= 3
    assert np.all((dist[fan] >= 15_000.0) & (dist[fan] <= 40_000.0))
    # vibrator points: along the dense segment, every 100-200 m, no charge
    assert vib["shot"].str.fullmatch(r"VP\d{4}").all()
    assert (depth[vib.index] == 0.0).all() and vib["charge_kg"].isna().all()
    vx, vy = _xy(vib)
    vp = shapely.points(vx, vy)
    assert shapely.distance(vp, road_line).max() < 50.0
    gaps = np.diff(np.sort(shapely.line_locate_point(road_line, vp)))
    assert np.all((gaps >= 100.0) & (gaps <= 200.0))
    t = pd.to_datetime(shots["time_utc"], utc=True, format="ISO8601")
    assert t.notna().all()


# ----------------------------------------------------------------------------- DEM


def test_dem_format(project, stations, shots):
    path = project / "dem.tif"
    assert path.stat().st_size < 5e6
    with rasterio.open(path) as src:
        assert CRS.from_user_input(src.crs.to_wkt()).to_epsg() == 32624
        assert src.dtypes == ("float32",) and src.nodata == -9999.0
        assert 200.0 <= src.res[0] <= 250.0 and src.res[0] == src.res[1]
        assert src.block_shapes == [(256, 256)] and src.profile["tiled"]
        assert src.compression.name.lower() == "deflate"
        bounds = src.bounds
    # covers every usable station and shot with a margin of at least 10 km
    for frame in (_good(stations), _good(shots)):
        x, y = _xy(frame)
        assert x.min() - bounds.left > 10e3 and bounds.right - x.max() > 10e3
        assert y.min() - bounds.bottom > 10e3 and bounds.top - y.max() > 10e3


def test_dem_relief(project, road_line):
    with rasterio.open(project / "dem.tif") as src:
        z = src.read(1, masked=True)
        t = src.transform
    assert 0 < z.mask.sum() < 0.005 * z.size  # a small hole without data
    assert z.min() >= 0.0 and 2000.0 <= z.max() <= 3500.0
    rows, cols = np.indices(z.shape)
    x = t.c + t.a * (cols + 0.5)
    y = t.f + t.e * (rows + 0.5)
    # the hole lies far from the line
    hole = z.mask
    assert shapely.distance(shapely.points(x[hole], y[hole]), road_line).min() > 20e3
    # along the road: foreland lowlands at the ends, and the road lower than its surroundings
    sub = (slice(None, None, 3), slice(None, None, 3))
    zs, xs, ys = z[sub], x[sub], y[sub]
    ok = ~zs.mask
    pts = shapely.points(xs[ok], ys[ok])
    dist = shapely.distance(pts, road_line)
    ch = shapely.line_locate_point(road_line, pts)
    h = zs.data[ok]
    length = road_line.length
    ends = (dist < 5e3) & ((ch < 15e3) | (ch > length - 15e3))
    assert np.median(h[ends]) < 600.0
    core = (ch > 0.3 * length) & (ch < 0.7 * length)
    on_road = np.median(h[core & (dist < 500.0)])
    flanks = np.median(h[core & (dist > 4e3) & (dist < 10e3)])
    assert on_road < 0.8 * flanks and flanks > 1000.0


# ----------------------------------------------------------------------------- geology, faults


# ICS International Chronostratigraphic Chart (International Commission on Stratigraphy,
# v2023/09), period boundaries in Ma; values from memory, rounded.
ICS_PERIODS = {
    "Neogene": (2.58, 23.03),
    "Paleogene": (23.03, 66.0),
    "Cretaceous": (66.0, 145.0),
    "Jurassic": (145.0, 201.4),
    "Triassic": (201.4, 251.9),
    "Permian": (251.9, 298.9),
    "Carboniferous": (298.9, 358.9),
}


def test_geology(project, road_line):
    import pyogrio

    assert [name for name, _ in pyogrio.list_layers(project / "geology.gpkg")] == ["units"]
    gdf = pyogrio.read_dataframe(project / "geology.gpkg", layer="units")
    assert gdf.crs.to_epsg() == 32624
    assert 6 <= len(gdf) <= 10
    assert {"unit", "age", "age_ma", "lithology"} <= set(gdf.columns)
    assert gdf.geometry.geom_type.eq("Polygon").all() and gdf.geometry.is_valid.all()
    assert gdf["unit"].is_unique
    assert shapely.intersects(gdf.geometry.values, road_line).all()
    # the units tile the map: no two overlap
    assert shapely.area(shapely.intersection_all(gdf.geometry.values)) == 0.0
    total = shapely.area(shapely.union_all(gdf.geometry.values))
    assert total == pytest.approx(gdf.geometry.area.sum(), rel=1e-6)
    for age, ma in zip(gdf["age"], gdf["age_ma"]):
        lo, hi = ICS_PERIODS[age]
        assert lo <= ma <= hi, (age, ma)


def test_faults(project, road_line):
    from geographiclib.geodesic import Geodesic

    fc = json.loads((project / "faults.geojson").read_text())
    feats = fc["features"]
    assert 3 <= len(feats) <= 6
    compass = "N NNE NE ENE E ESE SE SSE S SSW SW WSW W WNW NW NNW".split()
    for f in feats:
        p = f["properties"]
        assert f["geometry"]["type"] == "LineString"
        assert {"name", "strike_deg", "dip_deg", "dip_direction", "kind"} <= set(p)
        assert p["kind"] in ("thrust", "normal") and 0.0 < p["dip_deg"] < 90.0
        lon, lat = np.array(f["geometry"]["coordinates"]).T
        assert np.all((lon > -42.0) & (lon < -36.0) & (lat > 40.0) & (lat < 48.0))  # lon/lat order
        assert shapely.intersects(shapely.LineString(np.column_stack(TO_UTM.transform(lon, lat))), road_line)
        # strike = geodesic azimuth from the first to the last vertex (GeographicLib,
        # Karney 2013, "Algorithms for geodesics", J. Geodesy 87, 43-55)
        azi = Geodesic.WGS84.Inverse(lat[0], lon[0], lat[-1], lon[-1])["azi1"] % 360.0
        assert abs((p["strike_deg"] - azi + 180.0) % 360.0 - 180.0) < 0.1
        # right-hand rule: the fault dips to the right of the strike (common practice, no source)
        dip_az = compass.index(p["dip_direction"]) * 22.5
        assert abs((p["strike_deg"] + 90.0 - dip_az + 180.0) % 360.0 - 180.0) <= 11.25


# ----------------------------------------------------------------------------- catalogue, horizons


def test_hypocentres(project, road_line):
    cat = pd.read_csv(project / "hypocentres.csv")
    assert cat.columns.tolist() == ["time_utc", "lon", "lat", "depth_km", "mag"]
    assert 150 <= len(cat) <= 400
    t = pd.to_datetime(cat["time_utc"], utc=True, format="ISO8601")
    assert t.is_monotonic_increasing
    assert cat["depth_km"].between(2.0, 40.0).all() and 5.0 <= cat["depth_km"].median() <= 20.0
    m = cat["mag"]
    assert m.between(1.0, 4.5).all()
    # Maximum-likelihood b-value, Aki (1965), "Maximum likelihood estimate of b in the
    # formula log N = a - bM and its confidence limits", Bull. Earthq. Res. Inst. 43,
    # 237-239, with Utsu's half-bin correction for magnitudes binned at 0.1.
    b = np.log10(np.e) / (m.mean() - (m.min() - 0.05))
    assert 0.75 <= b <= 1.3
    x, y = TO_UTM.transform(cat["lon"].to_numpy(), cat["lat"].to_numpy())
    dist = shapely.distance(shapely.points(x, y), road_line)
    assert np.mean(dist < 30e3) > 0.5  # clustered under the belt
    assert np.sum(dist > 20e3) >= 10  # some outside any swath


def test_horizons(project, road_line):
    length_km = road_line.length / 1000.0
    a = pd.read_csv(project / "horizons" / "reflector_a.csv")
    assert a.columns.tolist() == ["chainage_km", "depth_km", "uncertainty_km"]
    assert a["chainage_km"].is_monotonic_increasing
    assert a["chainage_km"].min() > 0.0 and a["chainage_km"].max() < length_km  # part of the line
    assert (a["depth_km"] > 0).all() and (a["uncertainty_km"] > 0).all()
    b = pd.read_csv(project / "horizons" / "reflector_b_twt.csv")
    assert b.columns.tolist() == ["chainage_km", "twt_s"]
    assert b["chainage_km"].between(0.0, length_km).all() and (b["twt_s"] > 0).all()
    with rasterio.open(project / "horizons" / "deep_boundary_depth.tif") as src:
        assert src.crs.to_epsg() == 32624
        assert 1500.0 <= src.res[0] <= 2500.0
        v = src.read(1, masked=True)
        assert "depth in km" in src.tags()["TIFFTAG_IMAGEDESCRIPTION"]
    assert 25.0 <= v.min() and v.max() <= 60.0


def test_readme_counts_match_files(project, stations, shots):
    readme = (project / "README.txt").read_text()
    n_wa = stations.loc[stations.kind == "wide-angle", "code"].nunique()
    n_ge = int((stations.kind == "geophone").sum())
    assert re.search(rf"\b{n_wa} wide-angle stations and {n_ge} geophones", readme)
    n_b, n_v = int((shots.kind == "borehole").sum()), int((shots.kind == "vibrator").sum())
    assert f"{n_b} borehole shots and {n_v} vibrator points" in readme
