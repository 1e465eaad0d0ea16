"""Source–receiver pairs: which shot was recorded where, their offsets, midpoints and CMP bins.

Everything here is vectorised over the stations of one shot; callers loop over shots
(or groups of shots), so memory stays bounded by the largest shot gather.
"""

from __future__ import annotations

from pathlib import Path
from typing import Iterator

import numpy as np
import pandas as pd

from .errors import InputError

__all__ = ["pair_index", "pair_geometry", "recorded_pairs", "iter_shot_gathers", "iter_pair_chunks", "PAIR_FLAGS"]

PAIR_FLAGS = {
    "offset_mismatch": "geodesic and along-line offsets differ by more than the set fraction (crooked line or fan "
                       "shot: the 2D section misplaces this pair)",
    "beyond_max_offset": "offset larger than the set maximum: not computed",
    "midpoint_off_binning_line": "the midpoint lies beyond the ends of the binning line: no CMP bin",
}


def _geod_inv(lon1, lat1, lon2, lat2):
    from .geodesy import geodesic_offset

    return geodesic_offset(lon1, lat1, lon2, lat2)


def pair_index(n_shots: int, n_stations: int) -> tuple[np.ndarray, np.ndarray]:
    """Every shot with every station: index arrays (shot index, station index), shot-major order."""
    si = np.repeat(np.arange(n_shots), n_stations)
    ri = np.tile(np.arange(n_stations), n_shots)
    return si, ri


def pair_geometry(shots: pd.DataFrame, stations: pd.DataFrame, si: np.ndarray, ri: np.ndarray, line, *,
                  offset_mismatch: float = 0.05, max_offset_m: float | None = None,
                  mismatch_floor_m: float = 250.0) -> pd.DataFrame:
    """Geometry of source–receiver pairs, vectorised over the pairs.

    Parameters
    ----------
    shots, stations : placed shots and stations (``id, easting, northing, lon, lat, chainage_m``).
    si, ri : index arrays into ``shots`` and ``stations`` (positional), one entry per pair.
    line : the section :class:`~geosect.line.SurveyLine`.
    offset_mismatch : flag pairs whose ``|offset − |line_offset||`` exceeds this fraction of the offset...
    mismatch_floor_m : ...and this many metres (so that near-vertical pairs a few tens of metres off the line
        are not flagged).
    max_offset_m : pairs beyond it get status ``beyond_max_offset``.

    Returns
    -------
    DataFrame with ``shot_id, station_id, offset_m`` (geodesic, m), ``azimuth_deg`` (source to receiver,
    clockwise from north), ``line_offset_m`` (receiver minus source chainage), ``midpoint_easting,
    midpoint_northing, midpoint_chainage_m, midpoint_crossline_m``, the chainage and crossline distance of
    source and receiver (``source_chainage_m`` ...), ``status, flags``.
    """
    sh = {c: shots[c].to_numpy()[si] for c in ("easting", "northing", "lon", "lat", "chainage_m")}
    st = {c: stations[c].to_numpy()[ri] for c in ("easting", "northing", "lon", "lat", "chainage_m")}
    off, az = _geod_inv(sh["lon"], sh["lat"], st["lon"], st["lat"])
    line_off = st["chainage_m"] - sh["chainage_m"]
    me = 0.5 * (sh["easting"] + st["easting"])
    mn = 0.5 * (sh["northing"] + st["northing"])
    mch, mxl = line.locate(me, mn)
    n = len(si)
    flags = np.full(n, "", dtype=object)
    with np.errstate(invalid="ignore", divide="ignore"):
        mism = np.abs(off - np.abs(line_off)) > np.maximum(offset_mismatch * off, mismatch_floor_m)
    flags[mism] = "offset_mismatch"
    status = np.full(n, "ok", dtype=object)
    if max_offset_m is not None:
        status[off > max_offset_m] = "beyond_max_offset"
    xl_s = shots["crossline_m"].to_numpy(float)[si] if "crossline_m" in shots else np.full(n, np.nan)
    xl_r = stations["crossline_m"].to_numpy(float)[ri] if "crossline_m" in stations else np.full(n, np.nan)
    return pd.DataFrame({
        "shot_id": shots["id"].to_numpy()[si], "station_id": stations["id"].to_numpy()[ri],
        "source_chainage_m": sh["chainage_m"], "receiver_chainage_m": st["chainage_m"],
        "source_crossline_m": xl_s, "receiver_crossline_m": xl_r,
        "offset_m": off, "azimuth_deg": az, "line_offset_m": line_off,
        "midpoint_easting": me, "midpoint_northing": mn, "midpoint_chainage_m": mch, "midpoint_crossline_m": mxl,
        "status": status, "flags": flags,
    })


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


def iter_pair_chunks(shots: pd.DataFrame, stations: pd.DataFrame, recorded: pd.DataFrame | None = None, *,
                     max_pairs: int = 500_000) -> Iterator[tuple[pd.DataFrame, pd.DataFrame, np.ndarray, np.ndarray]]:
    """Yield ``(usable_shots, usable_stations, si, ri)`` in chunks of whole shots with at most ``max_pairs`` pairs.

    ``si`` and ``ri`` index the usable tables positionally, shot-major.  Without ``recorded`` every usable shot
    is paired with every usable station; with it, the recorded pairs whose ids are both usable.
    """
    sh = shots[shots["status"] == "ok"].reset_index(drop=True)
    st = stations[stations["status"] == "ok"].reset_index(drop=True)
    if recorded is None:
        si_all, ri_all = pair_index(len(sh), len(st))
    else:
        ok = recorded[recorded["status"] == "ok"]
        si_all = pd.Index(sh["id"]).get_indexer(ok["shot_id"])
        ri_all = pd.Index(st["id"]).get_indexer(ok["station_id"])
        keep = (si_all >= 0) & (ri_all >= 0)  # pairs naming an unusable shot or station are not computed
        si_all, ri_all = si_all[keep], ri_all[keep]
        order = np.argsort(si_all, kind="stable")
        si_all, ri_all = si_all[order], ri_all[order]
    if si_all.size == 0:
        return
    starts = np.flatnonzero(np.r_[True, si_all[1:] != si_all[:-1]])  # first pair of each shot
    bounds = np.r_[starts, si_all.size]
    a = 0
    while a < len(starts):  # a loop over groups of shots
        b = a + 1
        while b < len(starts) and bounds[b + 1] - bounds[a] <= max_pairs:
            b += 1
        lo, hi = bounds[a], bounds[b]
        yield sh, st, si_all[lo:hi], ri_all[lo:hi]
        a = b
