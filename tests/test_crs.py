"""Working CRS: parsing, the automatic UTM choice, refusal of geographic CRS, and a published worked example."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from geosect.crs import choose_working_crs, parse_crs
from geosect.errors import CRSError


def test_parse_forms() -> None:
    assert parse_crs("EPSG:32624").to_epsg() == 32624
    assert parse_crs("32624").to_epsg() == 32624
    assert parse_crs(32624).to_epsg() == 32624
    wkt = parse_crs("EPSG:32624").to_wkt()
    assert parse_crs(wkt).to_epsg() == 32624


def test_unreadable_crs() -> None:
    with pytest.raises(CRSError, match="cannot read the CRS 'EPSG:99999999'"):
        parse_crs("EPSG:99999999", file="geosect.toml", key="project.crs")


def test_geographic_working_crs_refused() -> None:
    with pytest.raises(CRSError, match="geographic"):
        choose_working_crs("EPSG:4326")


@pytest.mark.parametrize("lon,lat,epsg", [(-38.0, 44.0, 32624), (14.9, 47.1, 32633), (15.1, 47.1, 32633),
                                          (-70.5, -33.4, 32719), (174.8, -41.3, 32760)])
def test_auto_chooses_utm_zone(lon: float, lat: float, epsg: int) -> None:
    # UTM zone number = floor((lon + 180) / 6) + 1, north/south by the equator:
    # Snyder 1987, Map Projections: A Working Manual, USGS PP 1395, p. 57-62 (UTM zone definition).
    zone = math.floor((lon + 180) / 6) + 1
    expected = (32600 if lat >= 0 else 32700) + zone
    assert expected == epsg
    w = choose_working_crs("auto", np.array([lon, lon + 0.05, np.nan]), np.array([lat, lat + 0.05, np.nan]))
    assert w.crs.to_epsg() == epsg
    assert "auto" in w.reason


def test_auto_without_data() -> None:
    with pytest.raises(CRSError, match="state the working CRS"):
        choose_working_crs("auto", np.array([np.nan]), np.array([np.nan]))


def _snyder_tm_forward(lon_deg, lat_deg, lon0_deg, k0, a, e2):
    """Transverse Mercator (ellipsoid) forward series, Snyder 1987, USGS PP 1395, eqs. (8-9)-(8-11) and (3-21).

    Written here from the published formulas, independently of PROJ.
    """
    phi = np.radians(lat_deg)
    ep2 = e2 / (1 - e2)
    N = a / np.sqrt(1 - e2 * np.sin(phi) ** 2)
    T = np.tan(phi) ** 2
    C = ep2 * np.cos(phi) ** 2
    A = np.radians(lon_deg - lon0_deg) * np.cos(phi)
    e4, e6 = e2 * e2, e2 ** 3
    M = a * ((1 - e2 / 4 - 3 * e4 / 64 - 5 * e6 / 256) * phi
             - (3 * e2 / 8 + 3 * e4 / 32 + 45 * e6 / 1024) * np.sin(2 * phi)
             + (15 * e4 / 256 + 45 * e6 / 1024) * np.sin(4 * phi)
             - (35 * e6 / 3072) * np.sin(6 * phi))
    x = k0 * N * (A + (1 - T + C) * A ** 3 / 6 + (5 - 18 * T + T * T + 72 * C - 58 * ep2) * A ** 5 / 120)
    y = k0 * (M + N * np.tan(phi) * (A * A / 2 + (5 - T + 9 * C + 4 * C * C) * A ** 4 / 24
                                     + (61 - 58 * T + T * T + 600 * C - 330 * ep2) * A ** 6 / 720))
    return x, y


def test_reader_transform_matches_snyder_worked_example(tmp_path: Path) -> None:
    """End to end: a CSV of geographic coordinates read by geosect and placed in a Transverse Mercator working CRS.

    Source: Snyder 1987, *Map Projections: A Working Manual*, USGS Professional Paper 1395, Transverse Mercator
    ellipsoidal worked example (Appendix A, p. 269): Clarke 1866 ellipsoid (a = 6 378 206.4 m,
    e^2 = 0.00676866), central meridian 75° W, k0 = 0.9996, point 40°30' N 73°30' W.
    The expected values are recomputed from Snyder's series (8-9)-(8-11); the printed results
    x = 127 106.5 m, y = 4 484 124.4 m are quoted from memory and checked to 0.1 m as well.
    """
    from geosect.config import load_settings
    from geosect.pipeline import Context, Progress, run_stages, stages
    from geosect.report import Report

    a, e2 = 6378206.4, 0.00676866
    clarke_geo = "+proj=longlat +a=6378206.4 +rf=294.9786982 +no_defs"
    tm = "+proj=tmerc +lat_0=0 +lon_0=-75 +k=0.9996 +x_0=0 +y_0=0 +a=6378206.4 +rf=294.9786982 +units=m +no_defs"
    (tmp_path / "st.csv").write_text("id,lon,lat\nSNY,-73.5,40.5\nSN2,-73.6,40.6\nSN3,-73.4,40.4\n")
    (tmp_path / "geosect.toml").write_text(f"""
[project]
crs = "{tm}"
[stations]
file = "st.csv"
coordinates_crs = "{clarke_geo}"
[line]
method = "fit"
""")
    s = load_settings(tmp_path)
    ctx = Context(s, tmp_path / "out", Report("t"), Progress(quiet=True))
    run_stages(ctx, [st for st in stages() if st.name == "inputs"])
    f = ctx.artefacts["stations"].set_index("id")
    xs, ys = _snyder_tm_forward(np.array([-73.5, -73.6, -73.4]), np.array([40.5, 40.6, 40.4]), -75.0, 0.9996, a, e2)
    np.testing.assert_allclose(f["easting"].to_numpy(), xs, atol=0.02)
    np.testing.assert_allclose(f["northing"].to_numpy(), ys, atol=0.02)
    assert abs(f.loc["SNY", "easting"] - 127106.5) < 0.1
    assert abs(f.loc["SNY", "northing"] - 4484124.4) < 0.1
