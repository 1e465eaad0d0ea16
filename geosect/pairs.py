"""Source–receiver pairs: which shot was recorded where, their offsets, midpoints and CMP bins.

Everything here is vectorised over the stations of one shot; callers loop over shots
(or groups of shots), so memory stays bounded by the largest shot gather.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Iterator

import numpy as np
import pandas as pd

from .errors import InputError

__all__ = ["PairGeometry", "shot_pairs", "recorded_pairs", "iter_shot_gathers", "PAIR_FLAGS"]

PAIR_FLAGS = {
    "offset_mismatch": "geodesic and along-line offsets differ by more than the set fraction (crooked line or fan "
                       "shot: the 2D section misplaces this pair)",
    "beyond_max_offset": "offset larger than the set maximum: not computed",
    "midpoint_off_binning_line": "the midpoint lies beyond the ends of the binning line: no CMP bin",
}


@dataclass
class PairGeometry:
    """Geometry of the pairs of one shot (arrays of one length, one entry per station)."""

    frame: pd.DataFrame


def _geod_inv(lon1, lat1, lon2, lat2):
    from .geodesy import geodesic_offset

    return geodesic_offset(lon1, lat1, lon2, lat2)


def shot_pairs(shot: pd.Series, stations: pd.DataFrame, line, *, bin_grid=None, binning_line=None,
               offset_mismatch: float = 0.05, max_offset_m: float | None = None) -> pd.DataFrame:
    """Pair geometry of one shot with the given stations.

    Parameters
    ----------
    shot : a placed shot (``id, easting, northing, lon, lat, chainage_m``).
    stations : placed stations, the receivers of this shot.
    line : the section :class:`~geosect.line.SurveyLine`.
    bin_grid : optional :class:`~geosect.binning.BinGrid` on the binning line.
    offset_mismatch : flag pairs whose ``|offset − |line_offset|| / offset`` exceeds this fraction.
    max_offset_m : pairs beyond it get status ``beyond_max_offset``.

    Returns
    -------
    DataFrame with ``shot_id, station_id, offset_m`` (geodesic), ``azimuth_deg`` (source to receiver,
    clockwise from north), ``line_offset_m`` (receiver minus source chainage), ``midpoint_easting,
    midpoint_northing, midpoint_lon, midpoint_lat, midpoint_chainage_m, midpoint_crossline_m, cmp_bin`` and
    ``status, flags``.
    """
    n = len(stations)
    off, az = _geod_inv(np.full(n, shot["lon"]), np.full(n, shot["lat"]), stations["lon"].to_numpy(),
                        stations["lat"].to_numpy())
    line_off = stations["chainage_m"].to_numpy() - shot["chainage_m"]
    me = 0.5 * (shot["easting"] + stations["easting"].to_numpy())
    mn = 0.5 * (shot["northing"] + stations["northing"].to_numpy())
    mch, mxl = line.locate(me, mn)
    flags = np.full(n, "", dtype=object)
    with np.errstate(invalid="ignore", divide="ignore"):
        mism = np.abs(off - np.abs(line_off)) > offset_mismatch * np.maximum(off, 1.0)
    flags[mism] = "offset_mismatch"
    status = np.full(n, "ok", dtype=object)
    if max_offset_m is not None:
        status[off > max_offset_m] = "beyond_max_offset"
    out = pd.DataFrame({
        "shot_id": shot["id"], "station_id": stations["id"].to_numpy(), "offset_m": off, "azimuth_deg": az,
        "line_offset_m": line_off, "midpoint_easting": me, "midpoint_northing": mn,
        "midpoint_chainage_m": mch, "midpoint_crossline_m": mxl,
    })
    if bin_grid is not None:
        from .binning import bin_pairs

        b = bin_pairs(bin_grid, np.full(n, shot["easting"]), np.full(n, shot["northing"]),
                      stations["easting"].to_numpy(), stations["northing"].to_numpy())
        out["cmp_bin"] = b.bin_index
        out["binning_chainage_m"] = b.chainage_m
        outside = b.bin_index < 0
        flags = np.where(outside, np.where(flags == "", "midpoint_off_binning_line",
                                           flags + ";midpoint_off_binning_line"), flags)
    out["status"] = status
    out["flags"] = flags
    return out


def recorded_pairs(path: Path, shots: pd.DataFrame, stations: pd.DataFrame) -> pd.DataFrame:
    """Read a table of recorded pairs (shot id, station id) and check the ids exist.

    Returns a DataFrame ``shot_id, station_id, status`` where status is ``ok``, ``unknown_shot``
    or ``unknown_station``: pairs that name an unknown id stay, with that status.
    """
    from .io.points import read_frame

    df = read_frame(path, key="rays.pairs_file")
    cols = {c.lower(): c for c in df.columns}
    sc = next((cols[c] for c in ("shot_id", "shot", "source", "sp") if c in cols), None)
    rc = next((cols[c] for c in ("station_id", "station", "receiver", "code") if c in cols), None)
    if sc is None or rc is None:
        raise InputError("the pairs table needs a shot column and a station column", file=path,
                         key="rays.pairs_file",
                         fix=f"name them shot_id and station_id; columns in the file: {', '.join(df.columns)}.")
    out = pd.DataFrame({"shot_id": df[sc].astype(str).str.strip(), "station_id": df[rc].astype(str).str.strip()})
    status = np.full(len(out), "ok", dtype=object)
    status[~out["station_id"].isin(stations["id"])] = "unknown_station"
    status[~out["shot_id"].isin(shots["id"])] = "unknown_shot"
    out["status"] = status
    return out


def iter_shot_gathers(shots: pd.DataFrame, stations: pd.DataFrame,
                      recorded: pd.DataFrame | None = None) -> Iterator[tuple[pd.Series, pd.DataFrame]]:
    """Yield (shot, its receivers) for every usable shot: all usable stations, or the recorded ones."""
    usable_st = stations[stations["status"] == "ok"]
    by_shot = None
    if recorded is not None:
        ok = recorded[recorded["status"] == "ok"]
        by_shot = {k: v["station_id"].to_numpy() for k, v in ok.groupby("shot_id")}
    for _, shot in shots[shots["status"] == "ok"].iterrows():  # a loop over shots
        if by_shot is None:
            yield shot, usable_st
        else:
            ids = by_shot.get(shot["id"])
            if ids is None:
                continue
            yield shot, usable_st[usable_st["id"].isin(ids)]
