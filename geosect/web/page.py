"""The linked map page ``map.html``: an offline Leaflet map and the depth section.

:class:`MapData` is plain data assembled by the pipeline; :func:`write_map`
turns it into one self-contained HTML file: Leaflet's JS and CSS (from the
installed ``xstatic-leaflet`` package), our own script and styles, the section
as inline SVG and the data as JSON, all inline.  The only outside resource is
the optional OpenStreetMap tile layer, off by default.

The page is generated from our own template rather than with folium: folium's
templates pull jQuery, Bootstrap and icon fonts from CDNs, give objects random
JavaScript names (which our linking script would have to guess), and its
tooltip helpers write attribute values into HTML; here every user string goes
through :mod:`geosect.web.escape` or ``textContent`` instead.
"""

from __future__ import annotations

import base64
import hashlib
import importlib.resources
import math
import os
import re
import secrets
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from ..errors import InputError
from ..io.atomic import write_text
from .escape import css_colours, dom_ids, html_text, script_json, script_json_text
from .hillshade import Hillshade
from .svg import SectionPanel, section_svg

__all__ = ["MapData", "SectionPanel", "Hillshade", "write_map", "build_page"]

#: At most this many midpoints go into the page (evenly thinned beyond).
MAX_MIDPOINTS = 5000
#: At most this many reflection points go into the page, shared equally between phases.
MAX_REFLECTION_POINTS = 5000
#: The line table is thinned to this many samples for the page.
MAX_LINE_SAMPLES = 20000
#: At most this many chainage ticks are drawn (the step grows beyond).
MAX_TICKS = 400


@dataclass
class MapData:
    """Everything the map page shows (coordinates lon/lat EPSG:4326, lengths in metres).

    Parameters
    ----------
    title : str
        Page title (shown as text).
    line : DataFrame
        Dense samples of the section line: ``lon, lat, chainage_m``.  Used to
        draw the line and to map chainage to a map position (linear between
        samples).
    tick_km : float
        Chainage tick spacing on the map, in km.
    stations, shots : DataFrame, optional
        ``id, lon, lat, chainage_m, crossline_m, elevation_m, status, flags, kind``.
    midpoints : DataFrame, optional
        ``lon, lat, chainage_m``; thinned to :data:`MAX_MIDPOINTS` (the page says so).
    reflection_points : DataFrame, optional
        ``id, phase, lon, lat, chainage_m, depth_m`` (depth positive down, metres).
    bins : GeoDataFrame, optional
        CMP bin polygons with column ``fold``.
    swath : shapely Polygon, optional
        Outline of the swath in lon/lat; ``swath_m`` its half-width in metres.
    geology : GeoDataFrame, optional
        Polygons with ``unit, age, color``.
    faults : GeoDataFrame, optional
        Lines with ``name``.
    hypocentres : DataFrame, optional
        ``lon, lat, depth_m, magnitude, time``.
    hillshade : Hillshade, optional
        The offline basemap (see :func:`geosect.web.hillshade_overlay`).
    section : SectionPanel, optional
        Topography, interfaces and depth range of the in-page section.
    """

    title: str
    line: pd.DataFrame
    tick_km: float = 10.0
    stations: pd.DataFrame | None = None
    shots: pd.DataFrame | None = None
    midpoints: pd.DataFrame | None = None
    reflection_points: pd.DataFrame | None = None
    bins: Any = None
    swath: Any = None
    swath_m: float | None = None
    geology: Any = None
    faults: Any = None
    hypocentres: pd.DataFrame | None = None
    hillshade: Hillshade | None = None
    section: SectionPanel | None = None


# --------------------------------------------------------------------------- assets


@lru_cache(maxsize=None)
def _leaflet() -> tuple[str, str]:
    """Leaflet's minified JS and its CSS with the control images inlined as data URLs."""
    import xstatic.pkg.leaflet as xl

    base = Path(xl.BASE_DIR)
    js = (base / "leaflet.js").read_text(encoding="utf-8")
    js = re.sub(r"\n?//# sourceMappingURL=\S*\s*$", "\n", js)
    css = (base / "leaflet.css").read_text(encoding="utf-8")

    def inline(m: re.Match) -> str:
        name = m.group(1)
        data = (base / "images" / name).read_bytes()
        return "url(data:image/png;base64," + base64.b64encode(data).decode("ascii") + ")"

    css = re.sub(r"url\(images/([A-Za-z0-9_.-]+\.png)\)", inline, css)
    for text, what in ((js, "leaflet.js"), (css, "leaflet.css")):
        low = text.lower()
        if "</script" in low or "</style" in low or "<!--" in low:  # pragma: no cover - packaging fault
            raise RuntimeError(f"{what} from xstatic-leaflet cannot be inlined safely")
    return js, css


@lru_cache(maxsize=None)
def _asset(name: str) -> str:
    return importlib.resources.files("geosect.web").joinpath("assets", name).read_text(encoding="utf-8")


def _sha256(text: str) -> str:
    return "'sha256-" + base64.b64encode(hashlib.sha256(text.encode("utf-8")).digest()).decode("ascii") + "'"


# --------------------------------------------------------------------------- columns


def _require(df: Any, name: str, columns: list[str]) -> pd.DataFrame:
    if not isinstance(df, pd.DataFrame):
        raise InputError(
            f"MapData.{name} must be a table (DataFrame), got {type(df).__name__}",
            key=f"MapData.{name}",
            fix=f"pass a DataFrame with the columns {', '.join(columns)}, or None",
        )
    missing = [c for c in columns if c not in df.columns]
    if missing:
        raise InputError(
            f"MapData.{name} has no column '{missing[0]}' (it has: {', '.join(map(str, df.columns)) or 'none'})",
            key=f"MapData.{name}",
            column=missing[0],
            fix=f"give the {name} table the columns {', '.join(columns)}",
        )
    return df


def _num(df: pd.DataFrame, col: str, decimals: int) -> list:
    """A numeric column as a JSON-ready list: rounded, NaN/inf → None."""
    if col not in df:
        return [None] * len(df)
    v = pd.to_numeric(df[col], errors="coerce").astype(float).to_numpy()
    v = np.where(np.isfinite(v), np.round(v, decimals), np.nan)
    s = pd.Series(v, dtype=object)
    return s.where(pd.notna(v), None).tolist()


def _fixed(df: pd.DataFrame, col: str, decimals: int) -> dict:
    """A numeric column in fixed point: ``{"o": origin, "d": decimals, "q": [ints or None]}``.

    The script reads ``o + q / 10**d``; writing small integers instead of
    ``10.12345``-style decimals keeps large tables small.
    """
    v = pd.to_numeric(df[col], errors="coerce").astype(float).to_numpy() if col in df else np.full(len(df), np.nan)
    fin = np.isfinite(v)
    origin = float(np.round(np.nanmin(v[fin]), decimals)) if fin.any() else 0.0
    q = np.where(fin, np.round((np.where(fin, v, origin) - origin) * 10.0**decimals), 0).astype(np.int64)
    s = pd.Series(q, dtype=object)
    return {"o": origin, "d": int(decimals), "q": s.where(fin, None).tolist()}


def _str(df: pd.DataFrame, col: str) -> pd.Series:
    if col not in df:
        return pd.Series([""] * len(df), dtype=object)
    s = df[col]
    return s.where(s.notna(), "").astype(str).reset_index(drop=True)


def _cat(values: pd.Series) -> dict | list:
    """Dictionary-encode a text column when that is smaller.

    ``{"c": [...], "i": [...]}`` (categories and codes, -1 for missing), or
    ``{"c": [v], "n": n}`` when all ``n`` rows hold ``v``, else a plain list.
    """
    codes, uniques = pd.factorize(values, use_na_sentinel=True)
    if len(uniques) == 1 and (codes == 0).all():
        return {"c": [str(uniques[0])], "n": int(len(values))}  # one value for every row
    if len(uniques) <= max(64, len(values) // 8):
        return {"c": [str(u) for u in uniques.tolist()], "i": codes.tolist()}
    return values.tolist()


def _dom_column(dom: np.ndarray, default: pd.Series) -> dict:
    """Element ids for the page: only those that differ from the default the script derives.

    The script takes ``default[i]`` (``prefix-id``) unless ``x`` lists index ``i``.
    """
    differs = dom != default.to_numpy(dtype=str)
    idx = np.flatnonzero(differs)
    return {"x": dict(zip(idx.astype(str).tolist(), dom[idx].tolist()))}


def _thin(n: int, at_most: int) -> np.ndarray:
    """Evenly spaced row indices, first and last kept."""
    if n <= at_most:
        return np.arange(n)
    return np.unique(np.round(np.linspace(0, n - 1, at_most)).astype(int))


def _colours(values: np.ndarray, lo: float, hi: float, cmap: str, levels: int | None = None) -> np.ndarray:
    """``#rrggbb`` for each value on a matplotlib colour map over ``[lo, hi]`` (grey for NaN).

    With ``levels`` the scale is cut into that many steps (fewer distinct colours,
    a smaller page).
    """
    from matplotlib import colormaps

    span = hi - lo if hi > lo else 1.0
    frac = np.clip((np.asarray(values, dtype=float) - lo) / span, 0.0, 1.0)
    if levels:
        frac = np.round(frac * (levels - 1)) / (levels - 1)
    rgba = colormaps[cmap](np.nan_to_num(frac))
    rgb = np.round(rgba[:, :3] * 255).astype(int)
    packed = rgb[:, 0] * 65536 + rgb[:, 1] * 256 + rgb[:, 2]
    out = np.char.mod("#%06x", packed).astype(object)
    out[~np.isfinite(values)] = "#9a9a9a"
    return out.astype(str)


def _scale(lo: float, hi: float, cmap: str, label_div: float = 1.0, fmt: str = "{:g}") -> dict:
    stops = _colours(np.linspace(lo, hi, 9), lo, hi, cmap).tolist()
    return {"lo": fmt.format(lo / label_div), "hi": fmt.format(hi / label_div), "stops": stops}


class _Raw:
    """Pre-serialised JSON spliced into the payload (GeoJSON geometries)."""

    def __init__(self, text: str):
        self.text = text


def _geoms(gdf: Any, name: str) -> tuple[pd.DataFrame, _Raw]:
    """Columnar GeoJSON geometries (lon/lat, 1e-6° grid) and the attribute table."""
    import geopandas as gpd
    import shapely

    if not isinstance(gdf, gpd.GeoDataFrame):
        raise InputError(
            f"MapData.{name} must be a GeoDataFrame, got {type(gdf).__name__}",
            key=f"MapData.{name}",
            fix="read the layer with geopandas.read_file, or pass None",
        )
    if gdf.crs is not None and gdf.crs.to_epsg() != 4326:
        gdf = gdf.to_crs(4326)
    geom = np.asarray(gdf.geometry.values, dtype=object)
    geom = shapely.set_precision(geom, 1e-6, mode="pointwise")
    empty = shapely.is_empty(geom) | pd.isna(geom)
    js = np.where(empty, "null", shapely.to_geojson(np.where(empty, None, geom)))
    return pd.DataFrame(gdf.drop(columns=gdf.geometry.name)).reset_index(drop=True), _Raw(
        "[" + ",".join(js.tolist()) + "]"
    )


# --------------------------------------------------------------------------- payload


def _line_table(line: Any) -> tuple[pd.DataFrame, list[str]]:
    df = _require(line, "line", ["lon", "lat", "chainage_m"])
    df = pd.DataFrame(
        {c: pd.to_numeric(df[c], errors="coerce").to_numpy(float) for c in ("lon", "lat", "chainage_m")}
    )
    ok = np.isfinite(df.to_numpy()).all(axis=1)
    df = df[ok].sort_values("chainage_m", kind="stable").reset_index(drop=True)
    if len(df) < 2 or df["chainage_m"].iloc[-1] <= df["chainage_m"].iloc[0]:
        raise InputError(
            f"MapData.line has {len(df)} usable sample(s) spanning no chainage",
            key="MapData.line",
            fix="give at least two samples of the section line with lon, lat and increasing chainage_m",
        )
    notes = []
    if (~ok).any():
        notes.append(f"Section line: {(~ok).sum()} sample(s) without lon/lat/chainage were left out.")
    keep = _thin(len(df), MAX_LINE_SAMPLES)
    if len(keep) < len(df):
        notes.append(f"Section line: {len(keep)} of {len(df)} samples used (evenly thinned).")
    return df.iloc[keep].reset_index(drop=True), notes


def _ticks(line: pd.DataFrame, tick_km: float) -> tuple[dict, list[str]]:
    ch = line["chainage_m"].to_numpy()
    lon = line["lon"].to_numpy()
    lat = line["lat"].to_numpy()
    length = ch[-1] - ch[0]
    notes: list[str] = []
    step = float(tick_km) * 1000.0
    if not (np.isfinite(step) and step > 0):
        return {"ch": [], "a": [], "b": [], "label": []}, notes
    n = length / step
    if n > MAX_TICKS:
        mult = math.ceil(n / MAX_TICKS)
        notes.append(f"Chainage ticks every {tick_km * mult:g} km (not {tick_km:g} km: too many to draw).")
        step *= mult
    at = np.arange(math.ceil(ch[0] / step - 1e-9) * step, ch[-1] + 1e-6, step)
    if at.size == 0:
        return {"ch": [], "a": [], "b": [], "label": []}, notes
    la0 = np.interp(at, ch, lat)
    lo0 = np.interp(at, ch, lon)
    # direction of the line at each tick, in a local metric frame (x east scaled by cos(lat))
    h = max(length / 2000.0, 1.0)
    coslat = np.cos(np.radians(la0))
    dx = (np.interp(at + h, ch, lon) - np.interp(at - h, ch, lon)) * coslat
    dy = np.interp(at + h, ch, lat) - np.interp(at - h, ch, lat)
    norm = np.hypot(dx, dy)
    norm[norm == 0] = 1.0
    # right-hand normal (positive crossline side), tick length 1.2 % of the line
    size_deg = length * 0.012 / 111_195.0
    nx, ny = dy / norm, -dx / norm
    b_lat = la0 + ny * size_deg
    b_lon = lo0 + nx * size_deg / np.maximum(coslat, 1e-6)
    a = np.round(np.column_stack([la0, lo0]), 6).tolist()
    b = np.round(np.column_stack([b_lat, b_lon]), 6).tolist()
    labels = np.char.add(np.char.mod("%g", np.round(at / 1000.0, 6)), " km").tolist()
    return {"ch": np.round(at, 1).tolist(), "a": a, "b": b, "label": labels}, notes


def _points(df: pd.DataFrame, prefix: str, name: str) -> tuple[dict, pd.DataFrame, list[str]]:
    """Stations or shots: JSON columns, the frame for the SVG, notes."""
    df = _require(df, name, ["id", "lon", "lat", "chainage_m"]).reset_index(drop=True)
    ids = _str(df, "id")
    dom = dom_ids(prefix, ids)
    status = _str(df, "status") if "status" in df else pd.Series(["ok"] * len(df), dtype=object)
    table = {
        "id": ids.tolist(),
        "lon": _fixed(df, "lon", 5),
        "lat": _fixed(df, "lat", 5),
        "ch": _num(df, "chainage_m", 0),
        "xl": _num(df, "crossline_m", 0),
        "el": _num(df, "elevation_m", 0),
        "status": _cat(status),
        "flags": _cat(_str(df, "flags")),
        "kind": _cat(_str(df, "kind")),
        "dom": _dom_column(dom, prefix + "-" + ids),
        "prefix": prefix + "-",
    }
    frame = pd.DataFrame(
        {
            "dom_id": dom,
            "chainage_m": pd.to_numeric(df["chainage_m"], errors="coerce"),
            "elevation_m": pd.to_numeric(df["elevation_m"], errors="coerce") if "elevation_m" in df else np.nan,
            "status": status,
        }
    )
    notes = []
    lonlat = pd.DataFrame({"lon": pd.to_numeric(df["lon"], errors="coerce"), "lat": pd.to_numeric(df["lat"], errors="coerce")})
    off_map = int((~np.isfinite(lonlat.to_numpy(float)).all(axis=1)).sum())
    no_ch = int((~np.isfinite(frame["chainage_m"].to_numpy(float))).sum())
    if off_map:
        notes.append(f"{name.capitalize()}: {off_map} row(s) without lon/lat are listed in the data but not drawn on the map.")
    if no_ch:
        notes.append(f"{name.capitalize()}: {no_ch} row(s) without chainage are not drawn on the section.")
    bad = int((status != "ok").sum())
    if bad:
        notes.append(f"{name.capitalize()}: {bad} row(s) with a status other than 'ok' are drawn hollow.")
    return table, frame, notes


def _reflections(df: pd.DataFrame, at_most: int) -> tuple[dict, pd.DataFrame, list[str]]:
    df = _require(df, "reflection_points", ["id", "phase", "lon", "lat", "chainage_m", "depth_m"]).reset_index(
        drop=True
    )
    phase = _str(df, "phase")
    codes, phases = pd.factorize(phase)
    # thin each phase separately (equal shares of ``at_most``), keeping the original order
    keep = np.zeros(len(df), dtype=bool)
    notes = []
    share = max(1, math.ceil(at_most / max(len(phases), 1)))
    for k, ph in enumerate(phases.tolist()):  # loop over phases (a few), not rows
        rows = np.flatnonzero(codes == k)
        sel = rows[_thin(len(rows), share)]
        keep[sel] = True
        if len(sel) < len(rows):
            notes.append(f"Reflection points, {ph}: {len(sel)} of {len(rows)} shown (evenly thinned).")
    df = df[keep].reset_index(drop=True)
    codes = codes[keep]
    depth = pd.to_numeric(df["depth_m"], errors="coerce").to_numpy(float)
    fin = depth[np.isfinite(depth)]
    lo, hi = (float(fin.min()), float(fin.max())) if fin.size else (0.0, 1.0)
    col = _colours(depth, lo, hi, "viridis", levels=64)
    ids = _str(df, "id")
    raw = pd.Series(codes.astype(str), dtype=object) + "-" + ids
    dom = dom_ids("rp", raw)
    table = {
        "id": ids.tolist(),
        "pi": codes.tolist(),
        "phases": [str(p) for p in phases.tolist()],
        "lon": _fixed(df, "lon", 5),
        "lat": _fixed(df, "lat", 5),
        "ch": _num(df, "chainage_m", 0),
        "depth": _num(df, "depth_m", 0),
        "col": _cat(pd.Series(col, dtype=object)),
        "dom": _dom_column(dom, "rp-" + raw),
        "prefix": "rp-",
        "scale": _scale(lo, hi, "viridis", 1000.0, "{:.1f}"),
    }
    frame = pd.DataFrame(
        {
            "dom_id": dom,
            "chainage_m": pd.to_numeric(df["chainage_m"], errors="coerce"),
            "depth_m": depth,
            "colour": col,
            "phase_index": codes,
        }
    )
    return table, frame, notes


def _payload(data: MapData, max_midpoints: int, max_reflection_points: int) -> tuple[dict, str, list[_Raw]]:
    notes: list[str] = []
    raws: list[_Raw] = []
    line, n = _line_table(data.line)
    notes += n
    payload: dict[str, Any] = {
        "title": str(data.title),
        "line": {
            "lon": _num(line, "lon", 7),
            "lat": _num(line, "lat", 7),
            "ch": _num(line, "chainage_m", 2),
        },
    }
    payload["ticks"], n = _ticks(line, data.tick_km)
    notes += n

    frames: dict[str, pd.DataFrame | None] = {"stations": None, "shots": None, "refl": None}
    ch_lo, ch_hi = float(line["chainage_m"].iloc[0]), float(line["chainage_m"].iloc[-1])
    for key, prefix, name in (("stations", "st", "stations"), ("shots", "sh", "shots")):
        df = getattr(data, name)
        if df is None:
            payload[key] = None
            continue
        payload[key], frames[key], n = _points(df, prefix, name)
        notes += n
        chs = frames[key]["chainage_m"].to_numpy(float)
        if np.isfinite(chs).any():
            ch_lo, ch_hi = min(ch_lo, float(np.nanmin(chs))), max(ch_hi, float(np.nanmax(chs)))

    if data.reflection_points is not None:
        payload["refl"], frames["refl"], n = _reflections(data.reflection_points, max_reflection_points)
        notes += n
    else:
        payload["refl"] = None

    if data.midpoints is not None:
        mp = _require(data.midpoints, "midpoints", ["lon", "lat"]).reset_index(drop=True)
        keep = _thin(len(mp), max_midpoints)
        if len(keep) < len(mp):
            notes.append(f"Midpoints: {len(keep)} of {len(mp)} shown (evenly thinned).")
        sub = mp.iloc[keep]
        payload["midpoints"] = {
            "lon": _fixed(sub, "lon", 5),
            "lat": _fixed(sub, "lat", 5),
            "shown": int(len(keep)),
            "total": int(len(mp)),
        }
    else:
        payload["midpoints"] = None

    if data.bins is not None:
        attrs, geom = _geoms(data.bins, "bins")
        raws.append(geom)
        fold = pd.to_numeric(attrs["fold"], errors="coerce").to_numpy(float) if "fold" in attrs else np.full(len(attrs), np.nan)
        fin = fold[np.isfinite(fold)]
        lo, hi = (float(fin.min()), float(fin.max())) if fin.size else (0.0, 1.0)
        payload["bins"] = {
            "geom": geom,
            "fold": _num(pd.DataFrame({"f": fold}), "f", 0),
            "col": _cat(pd.Series(_colours(fold, lo, hi, "YlGnBu"), dtype=object)),
            "scale": _scale(lo, hi, "YlGnBu", 1.0, "{:g}"),
        }
    else:
        payload["bins"] = None

    if data.geology is not None:
        attrs, geom = _geoms(data.geology, "geology")
        raws.append(geom)
        unit, age = _str(attrs, "unit"), _str(attrs, "age")
        colours, bad = css_colours(attrs["color"] if "color" in attrs else [None] * len(attrs))
        if bad.any():
            notes.append(f"Geology: {int(bad.sum())} polygon(s) have an unreadable colour and are drawn grey.")
        first = ~unit.duplicated()
        payload["geology"] = {
            "geom": geom,
            "unit": _cat(unit),
            "age": _cat(age),
            "color": _cat(pd.Series(colours, dtype=object)),
            "legend": {"unit": unit[first].tolist()[:40], "color": colours[first.to_numpy()].tolist()[:40]},
        }
    else:
        payload["geology"] = None

    if data.faults is not None:
        attrs, geom = _geoms(data.faults, "faults")
        raws.append(geom)
        payload["faults"] = {"geom": geom, "name": _str(attrs, "name").tolist()}
    else:
        payload["faults"] = None

    if data.swath is not None:
        import shapely

        g = shapely.set_precision(data.swath, 1e-6, mode="pointwise")
        raw = _Raw(shapely.to_geojson(g))
        raws.append(raw)
        payload["swath"] = {"geom": raw, "half_width_m": None if data.swath_m is None else float(data.swath_m)}
    else:
        payload["swath"] = None

    if data.hypocentres is not None:
        hy = _require(data.hypocentres, "hypocentres", ["lon", "lat"]).reset_index(drop=True)
        if "time" in hy and pd.api.types.is_datetime64_any_dtype(hy["time"]):
            time = hy["time"].dt.strftime("%Y-%m-%dT%H:%M:%S").where(hy["time"].notna(), "")
        else:
            time = _str(hy, "time")
        payload["hypo"] = {
            "lon": _num(hy, "lon", 5),
            "lat": _num(hy, "lat", 5),
            "depth": _num(hy, "depth_m", 0),
            "mag": _num(hy, "magnitude", 2),
            "time": time.astype(str).tolist(),
        }
    else:
        payload["hypo"] = None

    if data.hillshade is not None:
        hs = data.hillshade
        payload["hillshade"] = {"url": hs.data_url(), "bounds": [[hs.south, hs.west], [hs.north, hs.east]]}
    else:
        payload["hillshade"] = None

    sect = section_svg(
        data.section,
        chainage_range_m=(ch_lo, ch_hi),
        stations=frames["stations"],
        shots=frames["shots"],
        reflection_points=frames["refl"],
        title=str(data.title),
    )
    payload["section"] = sect.mapping()
    payload["notes"] = notes
    return payload, sect.markup, raws


def _serialise(payload: dict, raws: list[_Raw]) -> str:
    """JSON text for the data block, with pre-serialised geometries spliced in."""
    nonce = secrets.token_hex(8)
    tokens = {}

    def swap(obj):
        if isinstance(obj, _Raw):
            token = f"@@geosect-raw-{nonce}-{len(tokens)}@@"
            tokens[token] = obj.text
            return token
        if isinstance(obj, dict):
            return {k: swap(v) for k, v in obj.items()}
        return obj

    text = script_json(swap(payload))
    for token, raw in tokens.items():
        text = text.replace(f'"{token}"', script_json_text(raw), 1)
    return text


def build_page(
    data: MapData,
    *,
    content_security_policy: bool = True,
    max_midpoints: int = MAX_MIDPOINTS,
    max_reflection_points: int = MAX_REFLECTION_POINTS,
) -> str:
    """The map page as one HTML string (see :func:`write_map`)."""
    payload, svg_markup, raws = _payload(data, max_midpoints, max_reflection_points)
    data_json = _serialise(payload, raws)
    leaflet_js, leaflet_css = _leaflet()
    points_js = _asset("points.js")
    our_js = _asset("linked.js")
    our_css = _asset("page.css")
    csp = ""
    if content_security_policy:
        policy = "; ".join(
            [
                "default-src 'none'",
                f"script-src {_sha256(leaflet_js)} {_sha256(points_js)} {_sha256(our_js)}",
                f"style-src {_sha256(leaflet_css)} {_sha256(our_css)}",
                "img-src data: https://tile.openstreetmap.org",
                "base-uri 'none'",
                "form-action 'none'",
            ]
        )
        csp = f'<meta http-equiv="Content-Security-Policy" content="{policy}">\n'
    title = html_text(data.title)
    from .. import __version__

    return (
        "<!DOCTYPE html>\n"
        '<html lang="en">\n<head>\n<meta charset="utf-8">\n'
        f"{csp}"
        '<meta name="viewport" content="width=device-width, initial-scale=1">\n'
        f'<meta name="generator" content="geosect {html_text(__version__)}">\n'
        f"<title>{title}</title>\n"
        '<link rel="icon" href="data:,">\n'
        f"<style>{leaflet_css}</style>\n"
        f"<style>{our_css}</style>\n"
        "</head>\n<body>\n"
        '<header id="gs-head">'
        f'<h1 id="gs-title">{title}</h1>'
        '<div id="gs-readout" aria-live="polite"></div>'
        '<div id="gs-cursor-readout"></div>'
        "</header>\n"
        '<main id="gs-main">\n'
        '<div id="gs-map" aria-label="map"></div>\n'
        f'<section id="gs-section" aria-label="depth section">\n{svg_markup}\n</section>\n'
        "</main>\n"
        '<footer id="gs-notes"><ul id="gs-notes-list"></ul></footer>\n'
        f'<script type="application/json" id="gs-data">{data_json}</script>\n'
        f"<script>{leaflet_js}</script>\n"
        f"<script>{points_js}</script>\n"
        f"<script>{our_js}</script>\n"
        "</body>\n</html>\n"
    )


def write_map(
    data: MapData,
    path: str | os.PathLike,
    *,
    content_security_policy: bool = True,
    max_midpoints: int = MAX_MIDPOINTS,
    max_reflection_points: int = MAX_REFLECTION_POINTS,
) -> Path:
    """Write the linked map + section page to ``path`` (atomically) and return the path.

    Parameters
    ----------
    data : MapData
        What to show.
    path : path
        Output file, usually ``out/map.html``.
    content_security_policy : bool
        Add a Content-Security-Policy that lets only the page's own two scripts
        run (by hash) and loads images only from the page and OpenStreetMap.
        Leave it on; it is a second wall behind the escaping.
    max_midpoints, max_reflection_points : int
        Thinning limits (the page lists what was thinned).

    Returns
    -------
    pathlib.Path

    Raises
    ------
    InputError
        A table misses a required column, or the line has fewer than two samples.
    """
    html = build_page(
        data,
        content_security_policy=content_security_policy,
        max_midpoints=max_midpoints,
        max_reflection_points=max_reflection_points,
    )
    return write_text(path, html)
