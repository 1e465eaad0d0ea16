"""Readers for point inputs (stations, shots, hypocentres): tables and vector files.

A reader returns one row per input row, always: rows that cannot be used get a
``status`` other than ``ok`` and keep their place; warnings go to ``flags``.

Row statuses set here: ``bad_coordinates`` (empty, not a number, out of range),
``swapped_coordinates`` (the row fits the rest of the data only with x and y
exchanged: apparently latitude and longitude swapped), ``duplicate_id`` (a later
row repeating an earlier id; the first one keeps ``ok`` and is flagged),
``bad_<column>`` (a required number that is not a number, e.g. ``bad_depth``).
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass
from pathlib import Path
from typing import Sequence

import numpy as np
import pandas as pd
from pyproj import CRS

from ..crs import parse_crs, transform
from ..errors import InputError

__all__ = ["PointTable", "read_points", "read_frame", "add_flag", "join_flags", "VECTOR_SUFFIXES"]

VECTOR_SUFFIXES = {".gpkg", ".shp", ".geojson", ".json", ".kml", ".fgb", ".gml", ".zip"}
TABLE_SUFFIXES = {".csv", ".tsv", ".txt", ".dat"}

_DEFAULT_NAMES = {
    "id": ["id", "code", "station", "station_id", "shot", "shot_id", "name"],
    "x": ["lon", "longitude", "long", "x", "easting", "east"],
    "y": ["lat", "latitude", "y", "northing", "north"],
    "elevation": ["elevation_m", "elev_m", "elevation", "elev", "z", "height", "alt"],
    "depth": ["depth_m", "depth"],
    "charge": ["charge_kg", "charge"],
    "kind": ["kind", "type"],
    "time": ["time", "time_utc", "origin_time", "datetime"],
    "depth_km": ["depth_km", "depth"],
    "magnitude": ["mag", "magnitude", "ml", "mw"],
    "unit": ["unit", "unit_name", "formation", "name"],
    "age": ["age", "period", "era"],
    "color": ["color", "colour", "rgb"],
    "lithology": ["lithology", "lith", "rock"],
    "name": ["name", "fault", "fault_name", "id"],
    "strike": ["strike_deg", "strike"],
    "dip": ["dip_deg", "dip"],
    "chainage_km": ["chainage_km", "distance_km", "km"],
    "twt_s": ["twt_s", "twt", "time_s"],
    "uncertainty_km": ["uncertainty_km", "error_km", "sigma_km"],
}


def add_flag(flags: pd.Series, mask: np.ndarray, flag: str) -> pd.Series:
    """Append ``flag`` to the ';'-joined flags of the rows in ``mask``."""
    mask = np.asarray(mask, bool)
    if not mask.any():
        return flags
    cur = flags.to_numpy(dtype=object).copy()
    sel = cur[mask]
    cur[mask] = np.where(sel == "", flag, sel.astype(str) + ";" + flag)
    return pd.Series(cur, index=flags.index, dtype=object)


def join_flags(*parts: pd.Series) -> pd.Series:
    """Join several ';'-separated flag columns, dropping empties and repeats."""
    out = []
    for vals in zip(*[p.astype(str) for p in parts]):
        seen: list[str] = []
        for v in vals:
            for f in v.split(";"):
                if f and f not in seen:
                    seen.append(f)
        out.append(";".join(seen))
    return pd.Series(out, index=parts[0].index, dtype=object)


def set_status(status: pd.Series, mask: np.ndarray, value: str) -> pd.Series:
    """Set ``status`` to ``value`` where ``mask`` and the row is still ``ok`` (the first reason wins)."""
    mask = np.asarray(mask, bool) & (status.to_numpy() == "ok")
    s = status.copy()
    s[mask] = value
    return s


@dataclass
class PointTable:
    """Points read from one input, one row per input row.

    ``frame`` has columns ``id, x_src, y_src, lon, lat, elevation_m, status, flags``
    plus any mapped extras (``depth_m``, ``charge_kg``, ``kind``, ``time``...) and
    ``row`` (1-based data row in the file).  ``crs`` is the file's CRS.
    """

    frame: pd.DataFrame
    crs: CRS
    source: Path
    what: str

    def counts(self) -> dict[str, int]:
        return self.frame["status"].value_counts().to_dict()

    def flag_counts(self) -> dict[str, int]:
        flags = self.frame["flags"].astype(str).str.split(";").explode()
        flags = flags[flags != ""]
        return flags.value_counts().to_dict()


def read_frame(path: Path, *, layer: str | None = None, delimiter: str | None = None, key: str = "file"):
    """Read a table (as strings) or a vector file (GeoDataFrame) with a clear error on failure."""
    path = Path(path)
    suffix = path.suffix.lower()
    try:
        if suffix in TABLE_SUFFIXES:
            sep = delimiter if delimiter is not None else ("\t" if suffix == ".tsv" else None)
            df = pd.read_csv(path, sep=sep, engine="python", dtype=str, keep_default_na=False,
                             skipinitialspace=True, comment=None)
            df.columns = [str(c).strip() for c in df.columns]
            return df
        import geopandas as gpd

        kw = {"layer": layer} if layer else {}
        if layer:
            import pyogrio

            names = [n for n, _ in pyogrio.list_layers(path)]
            if layer not in names:
                raise InputError(f"no layer '{layer}' in the file", file=path, key=key.replace("file", "layer"),
                                 fix=f"layers in the file: {', '.join(names)}.")
        return gpd.read_file(path, **kw)
    except InputError:
        raise
    except UnicodeDecodeError as exc:
        raise InputError(f"not readable as text ({exc.reason})", file=path, key=key,
                         fix="save the table as UTF-8 CSV.") from None
    except Exception as exc:  # pandas / pyogrio raise many kinds
        raise InputError(f"cannot read the file ({type(exc).__name__}: {str(exc)[:200]})", file=path, key=key,
                         fix="check that it is a CSV/TSV table or a vector file GDAL reads (GeoPackage, "
                         "Shapefile, GeoJSON, KML).") from None


def _pick_column(df_columns: Sequence[str], role: str, mapping: dict, path: Path, section: str,
                 required: bool) -> str | None:
    if role in mapping:
        name = mapping[role]
        if name not in df_columns:
            close = difflib.get_close_matches(name, list(df_columns), n=1)
            hint = f"did you mean '{close[0]}'? " if close else ""
            raise InputError(f"column '{name}' (mapped as {role}) is not in the file", file=path,
                             key=f"{section}.columns.{role}",
                             fix=f"{hint}columns in the file: {', '.join(map(str, df_columns))}.")
        return name
    lower = {str(c).lower(): c for c in df_columns}
    for cand in _DEFAULT_NAMES.get(role, []):
        if cand in lower:
            return lower[cand]
    if required:
        raise InputError(f"no column for '{role}'", file=path, key=f"{section}.columns.{role}",
                         fix=f"map it in the project file: [{section}.columns] {role} = \"<column>\"; columns in "
                         f"the file: {', '.join(map(str, df_columns))}.")
    return None


def _numbers(values: pd.Series) -> tuple[np.ndarray, np.ndarray]:
    """Strings to floats; returns (values, is_bad) where empty is NaN but not bad."""
    s = values.astype(str).str.strip()
    empty = (s == "") | s.str.lower().isin(["nan", "na", "none", "null"])
    num = pd.to_numeric(s.where(~empty), errors="coerce").to_numpy(float)
    bad = ~empty.to_numpy() & ~np.isfinite(num)
    return num, bad


def _swapped(x: np.ndarray, y: np.ndarray, candidates: np.ndarray, reference: np.ndarray,
             geographic: bool) -> np.ndarray:
    """Candidate rows that lie far from the reference cloud but inside it once x and y are exchanged."""
    if reference.sum() < 3:
        return np.zeros_like(candidates)
    cx, cy = np.median(x[reference]), np.median(y[reference])
    with np.errstate(invalid="ignore"):
        d = np.hypot(x - cx, y - cy)
        ds = np.hypot(y - cx, x - cy)
    tol = 0.5 if geographic else 5000.0
    far = d > 3 * np.quantile(d[reference], 0.8) + 2 * tol
    inliers = reference & ~far
    extent = d[inliers].max() if inliers.any() else 0.0
    return candidates & far & (ds <= extent + tol)


def read_points(spec, what: str, *, extras: Sequence[str] = ("kind", "depth", "charge", "time"),
                section: str | None = None, numeric_extras: Sequence[str] = ("depth", "charge"),
                flag_generated_ids: bool = True) -> PointTable:
    """Read stations, shots or another point input into a :class:`PointTable`.

    Parameters
    ----------
    spec : PointInput or HypocentreInput
        The section of the project file.
    what : str
        ``"stations"``, ``"shots"``...: used in messages.
    extras : roles to carry when present (``depth`` → ``depth_m``, ``charge`` → ``charge_kg``).
    numeric_extras : the extras that must be numbers (a bad value gives status ``bad_<role>``).
    flag_generated_ids : flag rows whose id had to be made up (no id column).

    Raises
    ------
    InputError
        For an unreadable file, a mapped column that is missing, or a file that
        has no CRS while the project file states none.
    """
    section = section or what
    path = Path(spec.file)
    df = read_frame(path, layer=getattr(spec, "layer", None), delimiter=getattr(spec, "delimiter", None),
                    key=f"{section}.file")
    mapping = dict(spec.columns)
    is_vector = hasattr(df, "geometry") and "geometry" in getattr(df, "columns", [])
    n = len(df)
    status = pd.Series(["ok"] * n, dtype=object)
    flags = pd.Series([""] * n, dtype=object)
    stated = getattr(spec, "coordinates_crs", None)

    if is_vector:
        file_crs = df.crs
        if file_crs is None and stated is None:
            raise InputError("the file has no coordinate reference system and none is stated", file=path,
                             key=f"{section}.coordinates_crs",
                             fix=f'state it in the project file: [{section}] coordinates_crs = "EPSG:4326" '
                             "(or the file's real CRS).")
        if file_crs is not None and stated is not None and not CRS.from_user_input(file_crs).equals(
                parse_crs(stated, file=str(path), key=f"{section}.coordinates_crs"), ignore_axis_order=True):
            raise InputError(f"the file's CRS ({CRS.from_user_input(file_crs).name}) differs from the stated "
                             f"coordinates_crs ({stated})", file=path, key=f"{section}.coordinates_crs",
                             fix="remove coordinates_crs (the file says its own CRS) or correct it.")
        crs = CRS.from_user_input(file_crs) if file_crs is not None else parse_crs(stated, file=str(path),
                                                                                 key=f"{section}.coordinates_crs")
        geom = df.geometry
        empty = geom.isna().to_numpy() | geom.is_empty.to_numpy()
        not_point = ~empty & (geom.geom_type.to_numpy() != "Point")
        if not_point.any():
            # multipoints or others: use the representative point and say so
            flags = add_flag(flags, not_point, "not_a_point")
        x = np.full(n, np.nan)
        y = np.full(n, np.nan)
        ok_geom = ~empty
        if ok_geom.any():
            pts = geom[ok_geom].representative_point()
            x[ok_geom] = pts.x.to_numpy()
            y[ok_geom] = pts.y.to_numpy()
        bad_xy = ~np.isfinite(x) | ~np.isfinite(y)
        attrs = pd.DataFrame(df.drop(columns="geometry")).astype(str)
        attrs = attrs.replace({"None": "", "nan": ""})
        z_from_geom = None
        if ok_geom.any() and geom[ok_geom].has_z.any():
            import shapely

            z_from_geom = np.full(n, np.nan)
            coords = shapely.get_coordinates(geom[ok_geom].representative_point().to_numpy(), include_z=True)
            z_from_geom[ok_geom] = coords[:, 2]
    else:
        if stated is None:
            raise InputError("a table carries no coordinate reference system and none is stated", file=path,
                             key=f"{section}.coordinates_crs",
                             fix=f'state it in the project file: [{section}] coordinates_crs = "EPSG:4326" for '
                             'longitude/latitude, or the projected CRS of easting/northing columns.')
        crs = parse_crs(stated, file=str(path), key=f"{section}.coordinates_crs")
        attrs = df
        xcol = _pick_column(df.columns, "x", mapping, path, section, True)
        ycol = _pick_column(df.columns, "y", mapping, path, section, True)
        x, badx = _numbers(df[xcol])
        y, bady = _numbers(df[ycol])
        bad_xy = ~np.isfinite(x) | ~np.isfinite(y)
        flags = add_flag(flags, badx | bady, "coordinate_not_a_number")
        z_from_geom = None

    flags = add_flag(flags, bad_xy, "missing_coordinate")
    status = set_status(status, bad_xy, "bad_coordinates")

    geographic = crs.is_geographic
    usable = ~bad_xy
    if geographic:
        out_of_range = usable & ((np.abs(x) > 180) | (np.abs(y) > 90))
    else:
        out_of_range = np.zeros(n, bool)
    swapped = _swapped(x, y, usable, usable & ~out_of_range, geographic)
    status = set_status(status, swapped, "swapped_coordinates")
    flags = add_flag(flags, swapped, "lat_lon_swapped?" if geographic else "x_y_swapped?")
    status = set_status(status, out_of_range & ~swapped, "bad_coordinates")
    flags = add_flag(flags, out_of_range & ~swapped, "coordinate_out_of_range")

    good = status.to_numpy() == "ok"
    lon = np.full(n, np.nan)
    lat = np.full(n, np.nan)
    if good.any():
        lo, la = transform(crs, CRS.from_epsg(4326), x[good], y[good])
        lon[good], lat[good] = lo, la
    bad_tf = good & (~np.isfinite(lon) | ~np.isfinite(lat))
    if not geographic and good.any():
        aou = crs.area_of_use
        if aou is not None:
            margin = 5.0
            outside = good & np.isfinite(lon) & (
                (lon < aou.west - margin) | (lon > aou.east + margin) | (lat < aou.south - margin)
                | (lat > aou.north + margin))
            bad_tf |= outside
    status = set_status(status, bad_tf, "bad_coordinates")
    flags = add_flag(flags, bad_tf, "outside_crs_area")
    lon[bad_tf] = np.nan
    lat[bad_tf] = np.nan

    # ids
    idcol = _pick_column(list(attrs.columns), "id", mapping, path, section, False)
    rows = np.arange(1, n + 1)
    if idcol is None:
        ids = pd.Series([f"{what[:2]}{r}" for r in rows], dtype=object)
        if flag_generated_ids:
            flags = add_flag(flags, np.ones(n, bool), "id_generated")
    else:
        ids = attrs[idcol].astype(str).str.strip().reset_index(drop=True)
        missing = (ids == "").to_numpy()
        ids[missing] = [f"row{r}" for r in rows[missing]]
        flags = add_flag(flags, missing, "missing_id")
    dup_all = ids.duplicated(keep=False).to_numpy()
    dup_later = ids.duplicated(keep="first").to_numpy()
    flags = add_flag(flags, dup_all, "duplicate_id")
    status = set_status(status, dup_later, "duplicate_id")

    out = pd.DataFrame({"id": ids.to_numpy(dtype=object), "row": rows, "x_src": x, "y_src": y,
                        "lon": lon, "lat": lat})
    # elevation
    ecol = _pick_column(list(attrs.columns), "elevation", mapping, path, section, False)
    if ecol is not None:
        elev, bad_e = _numbers(attrs[ecol].reset_index(drop=True))
        flags = add_flag(flags, bad_e, "bad_elevation")
        out["elevation_m"] = elev
    elif z_from_geom is not None:
        out["elevation_m"] = z_from_geom
    else:
        out["elevation_m"] = np.nan
    units = {"depth": "depth_m", "charge": "charge_kg", "depth_km": "depth_km", "magnitude": "magnitude"}
    for role in extras:
        col = _pick_column(list(attrs.columns), role, mapping, path, section, False)
        name = units.get(role, role)
        if col is None:
            if role in numeric_extras:
                out[name] = np.nan
            continue
        values = attrs[col].reset_index(drop=True)
        if role in numeric_extras:
            num, bad = _numbers(values)
            out[name] = num
            status = set_status(status, bad, f"bad_{role}")
            flags = add_flag(flags, bad, f"{role}_not_a_number")
        else:
            out[name] = values.astype(str).to_numpy(dtype=object)
    out["status"] = status.to_numpy(dtype=object)
    out["flags"] = flags.to_numpy(dtype=object)
    return PointTable(out, crs, path, what)
