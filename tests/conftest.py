"""Shared fixtures: a tiny invented project (synthetic, made up for the tests)."""

from __future__ import annotations

import json
import textwrap
from pathlib import Path

import numpy as np
import pytest


def write_tiny_project(root: Path, *, toml_extra: str = "", stations_rows: list[str] | None = None) -> Path:
    """A 3-vertex line and a handful of stations near lon -38, lat 44 (open sea: invented)."""
    root.mkdir(parents=True, exist_ok=True)
    line = {"type": "FeatureCollection", "features": [{"type": "Feature", "properties": {"note": "synthetic"},
            "geometry": {"type": "LineString",
                         "coordinates": [[-38.30, 43.90], [-38.10, 44.00], [-38.05, 44.25]]}}]}
    (root / "line.geojson").write_text(json.dumps(line))
    rows = stations_rows if stations_rows is not None else [
        "AB01,-38.29,43.905,120.0",
        "AB02,-38.20,43.955,180.5",
        "AB03,-38.11,44.010,220.0",
        "AB04,-38.07,44.150,260.0",
        "AB05,-38.05,44.240,300.0",
    ]
    (root / "stations.csv").write_text("code,lon,lat,elev_m\n" + "\n".join(rows) + "\n")
    (root / "geosect.toml").write_text(textwrap.dedent(f"""\
        # tiny synthetic test project
        [project]
        name = "Tiny test line (synthetic)"
        crs = "auto"

        [stations]
        file = "stations.csv"
        coordinates_crs = "EPSG:4326"
        height_reference = "geoid"
        [stations.columns]
        id = "code"
        x = "lon"
        y = "lat"
        elevation = "elev_m"

        [line]
        method = "file"
        file = "line.geojson"
        """) + textwrap.dedent(toml_extra))
    return root


@pytest.fixture
def tiny_project(tmp_path: Path) -> Path:
    return write_tiny_project(tmp_path / "tiny")


@pytest.fixture
def rng() -> np.random.Generator:
    return np.random.default_rng(12345)
