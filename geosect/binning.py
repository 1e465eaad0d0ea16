"""CMP binning along a crooked binning line.

Source-receiver midpoints are placed on a binning line (a :class:`SurveyLine`,
often a smoothed line through the midpoint cloud, see :func:`binning_line`) and
gathered into bins of equal chainage width.  Per bin: the fold (number of
midpoints) and the crossline scatter (standard deviation and largest absolute
crossline distance of the midpoints).  Large surveys are processed chunk by
chunk so that temporary memory stays bounded.

All lengths are in metres of the projected working CRS.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from .errors import LineError
from .line import SurveyLine

__all__ = ["midpoints", "BinGrid", "BinningResult", "bin_pairs", "binning_line"]


def midpoints(se: Any, sn: Any, re: Any, rn: Any) -> tuple[np.ndarray, np.ndarray]:
    """Map midpoints of source-receiver pairs.

    Parameters
    ----------
    se, sn : array_like
        Source easting and northing, in metres.
    re, rn : array_like
        Receiver easting and northing, in metres (broadcast with the sources).

    Returns
    -------
    me, mn : ndarray
        Midpoint easting and northing, in metres: the mean of source and receiver
        (in a projected CRS the grid midpoint; NaN where an input is NaN).

    Examples
    --------
    >>> me, mn = midpoints([0.0, 10.0], [0.0, 0.0], [100.0, 10.0], [50.0, 20.0])
    >>> me.tolist(), mn.tolist()
    ([50.0, 10.0], [25.0, 10.0])
    """
    se, sn, re, rn = (np.asarray(a, dtype=float) for a in (se, sn, re, rn))
    return 0.5 * (se + re), 0.5 * (sn + rn)


class BinGrid:
    """Bins of equal chainage width along a (binning) line.

    Bin ``i`` covers chainage ``[origin_m + i * bin_m, origin_m + (i + 1) * bin_m)``
    for ``i = 0 .. n_bins - 1``, where ``n_bins`` is the smallest count that
    reaches the end of the line.  Chainage below ``origin_m`` or outside the
    line's span ``[0, length]`` is outside the grid (bin -1); the line's end
    point itself belongs to the last bin.

    Parameters
    ----------
    line : SurveyLine
        The binning line.
    bin_m : float
        Bin width along the line, in metres (CMP spacing; commonly half the
        receiver spacing).
    origin_m : float
        Chainage of the start of bin 0, in metres; ``-bin_m < origin_m < length``
        (a negative origin centres bins on chosen chainages, e.g. ``-bin_m / 2``).
    """

    def __init__(self, line: SurveyLine, bin_m: float, origin_m: float = 0.0) -> None:
        if not isinstance(line, SurveyLine):
            raise LineError(f"a bin grid needs a SurveyLine, got {type(line).__name__}.",
                            fix="build the binning line with SurveyLine(...) or binning_line(...)")
        if not (math.isfinite(bin_m) and bin_m > 0):
            raise LineError(f"bin width must be a positive number of metres, got {bin_m!r}.",
                            fix="give the CMP bin width in metres, e.g. 12.5")
        if not (math.isfinite(origin_m) and -bin_m < origin_m < line.length):
            raise LineError(f"bin origin {origin_m!r} m is not between -bin_m ({-bin_m}) and the line's "
                            f"length ({line.length:.1f} m): the first bin would lie wholly off the line.",
                            fix="give the chainage where bin 0 starts, between -bin_m and the line length")
        self.line = line
        self.bin_m = float(bin_m)
        self.origin_m = float(origin_m)
        self.n_bins = max(1, int(math.ceil((line.length - self.origin_m) / self.bin_m - 1e-12)))

    def __repr__(self) -> str:
        return f"BinGrid(bin_m={self.bin_m}, origin_m={self.origin_m}, n_bins={self.n_bins}, line={self.line!r})"

    @property
    def edges(self) -> np.ndarray:
        """Chainage of the bin edges, ``n_bins + 1`` values in metres."""
        return self.origin_m + self.bin_m * np.arange(self.n_bins + 1)

    def centres(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Centres of the bins: (chainage_m, easting, northing), metres.

        The centre chainage is the middle of the bin's nominal interval (even
        where the first or last bin reaches past the line's ends); its map point
        is on the line (extrapolated along the end segment there).
        """
        s = self.origin_m + self.bin_m * (np.arange(self.n_bins) + 0.5)
        e, n = self.line.position(s)
        return s, e, n

    def bin_of(self, chainage_m: Any) -> np.ndarray:
        """Bin index of each chainage (int64), -1 outside the grid or the line's span."""
        s = np.asarray(chainage_m, dtype=float)
        with np.errstate(invalid="ignore"):
            f = np.floor((s - self.origin_m) / self.bin_m)
            inside = np.isfinite(s) & (s >= max(0.0, self.origin_m)) & (s <= self.line.length)
        idx = np.where(inside, np.clip(np.nan_to_num(f, nan=-1.0), 0, self.n_bins - 1), -1)
        return idx.astype(np.int64)

    def polygons(self, half_width_m: float) -> list:
        """Bin outlines that follow the line, for the ``bins`` map layer.

        Each bin's outline runs along the line at ``+half_width_m`` (right) from
        the bin's start to its end, through every vertex of the line inside the
        bin (with a mitre at the vertex), and back at ``-half_width_m``.  Bins are
        clipped to the line's span, so neighbouring bins share their edges
        exactly.  Where the half-width exceeds the radius of a bend, the inner
        side of a polygon may fold; keep ``half_width_m`` below the shortest
        bend radius.

        Parameters
        ----------
        half_width_m : float
            Half the bin width across the line, in metres.

        Returns
        -------
        list of shapely.Polygon
            One polygon per bin, in bin order.
        """
        import shapely

        if not (math.isfinite(half_width_m) and half_width_m > 0):
            raise LineError(f"half width must be a positive number of metres, got {half_width_m!r}.",
                            fix="give half the crossline bin size in metres, e.g. 250")
        L = self.line.length
        a = np.clip(self.edges[:-1], 0.0, L)
        b = np.clip(self.edges[1:], 0.0, L)
        vc = self.line.vertex_chainage[1:-1]
        lo = np.searchsorted(vc, a, side="right")
        hi = np.searchsorted(vc, b, side="left")
        cnt = np.maximum(hi - lo, 0)
        npt = cnt + 2                           # points along one side of each bin
        start = np.concatenate([[0], np.cumsum(npt)[:-1]])
        total = int(npt.sum())
        s = np.empty(total)
        s[start] = a
        s[start + npt - 1] = b
        nv = int(cnt.sum())
        if nv:
            owner = np.repeat(np.arange(self.n_bins), cnt)
            first = np.concatenate([[0], np.cumsum(cnt)[:-1]])
            rank = np.arange(nv) - first[owner]
            s[start[owner] + 1 + rank] = vc[lo[owner] + rank]
        re_, rn_ = self.line.offset_points(s, half_width_m)
        le_, ln_ = self.line.offset_points(s, -half_width_m)
        # ring of bin i: right side forward, left side backward (closed by shapely)
        ring_len = 2 * npt
        ring_start = 2 * start
        owner_pt = np.repeat(np.arange(self.n_bins), ring_len)
        pos = np.arange(2 * total) - ring_start[owner_pt]
        on_right = pos < npt[owner_pt]
        src = np.where(on_right, start[owner_pt] + pos, start[owner_pt] + 2 * npt[owner_pt] - 1 - pos)
        xe = np.where(on_right, re_[src], le_[src])
        yn = np.where(on_right, rn_[src], ln_[src])
        rings = shapely.linearrings(np.column_stack([xe, yn]), indices=owner_pt)
        return list(shapely.polygons(rings))


@dataclass
class BinningResult:
    """What :func:`bin_pairs` found.

    Per-pair arrays (``None`` when ``keep_pairs=False``) are in input order;
    per-bin arrays have one value per bin of :attr:`grid`.

    Attributes
    ----------
    grid : BinGrid
    midpoint_e, midpoint_n : ndarray or None
        Map midpoint of each pair, metres.
    chainage_m, crossline_m : ndarray or None
        Midpoint chainage and crossline distance on the binning line, metres.
    bin : ndarray or None
        Bin index of each pair (int64), -1 outside the grid or for bad coordinates.
    fold : ndarray
        Number of midpoints in each bin (int64).
    crossline_mean_m, crossline_std_m, crossline_max_abs_m : ndarray
        Mean, population standard deviation and largest absolute value of the
        crossline distance of the midpoints in each bin, metres (NaN where the
        fold is 0).
    n_pairs, n_outside, n_bad : int
        Pairs in all, pairs outside the grid (good coordinates), pairs with
        non-finite coordinates.
    """

    grid: BinGrid
    fold: np.ndarray
    crossline_mean_m: np.ndarray
    crossline_std_m: np.ndarray
    crossline_max_abs_m: np.ndarray
    n_pairs: int
    n_outside: int
    n_bad: int
    midpoint_e: np.ndarray | None = None
    midpoint_n: np.ndarray | None = None
    chainage_m: np.ndarray | None = None
    crossline_m: np.ndarray | None = None
    bin: np.ndarray | None = None
    _extra: dict = field(default_factory=dict, repr=False)

    def pairs_frame(self) -> pd.DataFrame:
        """Per-pair table: midpoint_easting, midpoint_northing, midpoint_chainage_m,
        midpoint_crossline_m, bin, status (``ok`` / ``bad_coordinates``), flags
        (``outside_bins`` or ``''``)."""
        if self.bin is None:
            raise LineError("the per-pair results were not kept.",
                            fix="call bin_pairs(..., keep_pairs=True) to get the per-pair table")
        bad = ~(np.isfinite(self.midpoint_e) & np.isfinite(self.midpoint_n))
        status = np.where(bad, "bad_coordinates", "ok").astype(object)
        flags = np.where(~bad & (self.bin < 0), "outside_bins", "").astype(object)
        return pd.DataFrame({
            "midpoint_easting": self.midpoint_e,
            "midpoint_northing": self.midpoint_n,
            "midpoint_chainage_m": self.chainage_m,
            "midpoint_crossline_m": self.crossline_m,
            "bin": self.bin,
            "status": status,
            "flags": flags,
        })

    def bins_frame(self) -> pd.DataFrame:
        """Per-bin table: bin, start_chainage_m, end_chainage_m, chainage_m (centre),
        easting, northing (centre on the line), fold, crossline_mean_m,
        crossline_std_m, crossline_max_abs_m."""
        s, e, n = self.grid.centres()
        edges = self.grid.edges
        return pd.DataFrame({
            "bin": np.arange(self.grid.n_bins),
            "start_chainage_m": edges[:-1],
            "end_chainage_m": edges[1:],
            "chainage_m": s,
            "easting": e,
            "northing": n,
            "fold": self.fold,
            "crossline_mean_m": self.crossline_mean_m,
            "crossline_std_m": self.crossline_std_m,
            "crossline_max_abs_m": self.crossline_max_abs_m,
        })


def bin_pairs(grid: BinGrid, se: Any, sn: Any, re: Any, rn: Any, *, chunk: int = 1_000_000,
              keep_pairs: bool = True) -> BinningResult:
    """Bin source-receiver pairs by the chainage of their midpoints.

    Midpoints are computed, located on ``grid.line`` and counted per bin chunk by
    chunk.  The per-bin mean and variance of the crossline distance are merged
    across chunks with the pairwise update of Chan, Golub & LeVeque (1979),
    "Updating formulae and a pairwise algorithm for computing sample variances"
    (Stanford report STAN-CS-79-773), so chunking does not change the result
    beyond rounding.

    Parameters
    ----------
    grid : BinGrid
    se, sn, re, rn : array_like
        Source and receiver easting and northing of each pair, metres
        (one-dimensional, equal lengths).
    chunk : int
        Pairs processed at a time; temporary memory is about 150 bytes times
        this (measured by ``benchmarks/bench_binning.py``).
    keep_pairs : bool
        Keep the per-pair arrays (five arrays of the number of pairs).  With
        False only the per-bin statistics are returned.

    Returns
    -------
    BinningResult
    """
    arrs = [np.asarray(a, dtype=float).ravel() for a in (se, sn, re, rn)]
    npairs = arrs[0].size
    if any(a.size != npairs for a in arrs):
        raise LineError("source and receiver coordinate arrays differ in length: "
                        + ", ".join(str(a.size) for a in arrs) + ".",
                        fix="give one source and one receiver position per pair")
    chunk = int(chunk)
    if chunk < 1:
        raise LineError(f"chunk must be a positive number of pairs, got {chunk}.", fix="use e.g. 1000000")
    nb = grid.n_bins
    fold = np.zeros(nb, np.int64)
    mean = np.zeros(nb)
    m2 = np.zeros(nb)
    maxabs = np.full(nb, -np.inf)
    n_outside = 0
    n_bad = 0
    if keep_pairs:
        out_me = np.empty(npairs)
        out_mn = np.empty(npairs)
        out_ch = np.empty(npairs)
        out_xl = np.empty(npairs)
        out_bin = np.empty(npairs, np.int64)
    line = grid.line
    for lo in range(0, npairs, chunk):
        hi = min(npairs, lo + chunk)
        me, mn = midpoints(arrs[0][lo:hi], arrs[1][lo:hi], arrs[2][lo:hi], arrs[3][lo:hi])
        ch, xl = line.locate(me, mn)
        b = grid.bin_of(ch)
        good = np.isfinite(ch)
        n_bad += int((~good).sum())
        inside = b >= 0
        n_outside += int((good & ~inside).sum())
        if keep_pairs:
            out_me[lo:hi] = me
            out_mn[lo:hi] = mn
            out_ch[lo:hi] = ch
            out_xl[lo:hi] = xl
            out_bin[lo:hi] = b
        bi = b[inside]
        x = xl[inside]
        del me, mn, ch, b
        cnt_c = np.bincount(bi, minlength=nb)
        sum_c = np.bincount(bi, weights=x, minlength=nb)
        with np.errstate(invalid="ignore", divide="ignore"):
            mean_c = np.where(cnt_c > 0, sum_c / cnt_c, 0.0)
        m2_c = np.bincount(bi, weights=(x - mean_c[bi]) ** 2, minlength=nb)
        np.maximum.at(maxabs, bi, np.abs(x))
        # merge (Chan, Golub & LeVeque 1979)
        n_new = fold + cnt_c
        with np.errstate(invalid="ignore", divide="ignore"):
            delta = mean_c - mean
            w = np.where(n_new > 0, cnt_c / np.maximum(n_new, 1), 0.0)
            mean = mean + delta * w
            m2 = m2 + m2_c + delta * delta * fold * w
        fold = n_new
    empty = fold == 0
    with np.errstate(invalid="ignore", divide="ignore"):
        std = np.sqrt(m2 / fold)
    res = BinningResult(
        grid=grid,
        fold=fold,
        crossline_mean_m=np.where(empty, np.nan, mean),
        crossline_std_m=np.where(empty, np.nan, std),
        crossline_max_abs_m=np.where(empty, np.nan, maxabs),
        n_pairs=npairs,
        n_outside=n_outside,
        n_bad=n_bad,
    )
    if keep_pairs:
        res.midpoint_e, res.midpoint_n = out_me, out_mn
        res.chainage_m, res.crossline_m, res.bin = out_ch, out_xl, out_bin
    return res


def binning_line(me: Any, mn: Any, section_line: SurveyLine, *, smoothing_m: float, spacing_m: float,
                 window_m: float | None = None, name: str = "binning") -> SurveyLine:
    """A smoothed binning line through a cloud of midpoints.

    The midpoints are placed on the section line (chainage ``s``, crossline ``c``).
    Their crossline distance is smoothed as a function of section chainage with a
    Gaussian kernel of standard deviation ``smoothing_m`` (a Nadaraya–Watson
    kernel-weighted mean, computed on counts and sums in windows of ``window_m``),
    the smoothed crossline is mapped back to the map at every window that has data
    (:meth:`SurveyLine.position`), and that chain of points is smoothed once more
    along its own length and resampled every ``spacing_m``
    (:meth:`SurveyLine.smoothed`).  Smoothing across the line as a function of
    chainage, rather than along the path through the window means, keeps a wide
    midpoint cloud (long offsets, fan shots) from turning the line into a zigzag.
    The result runs in the section line's direction.

    Parameters
    ----------
    me, mn : array_like
        Midpoint easting and northing, metres (non-finite values are ignored).
    section_line : SurveyLine
        The section line that orders the midpoints.
    smoothing_m : float
        Smoothing length (Gaussian standard deviation) along the line, metres.
    spacing_m : float
        Vertex spacing of the result, metres.
    window_m : float, optional
        Width of the averaging windows in section chainage, metres.  Default
        ``min(spacing_m, smoothing_m / 2)``.

    Returns
    -------
    SurveyLine
    """
    me = np.asarray(me, dtype=float).ravel()
    mn = np.asarray(mn, dtype=float).ravel()
    if window_m is None:
        window_m = min(spacing_m, smoothing_m / 2.0)
    if not (math.isfinite(window_m) and window_m > 0):
        raise LineError(f"window_m must be a positive number of metres, got {window_m!r}.",
                        fix="give the averaging window in metres, e.g. 50")
    ch, xl = section_line.locate(me, mn)
    ok = np.isfinite(ch) & np.isfinite(xl)
    if ok.sum() < 2:
        raise LineError(f"a binning line needs at least 2 midpoints with finite coordinates, got {int(ok.sum())}.",
                        fix="check the shot and station coordinates")
    ch, xl = ch[ok], xl[ok]
    from scipy.ndimage import gaussian_filter1d

    lo = ch.min()
    idx = np.floor((ch - lo) / window_m).astype(np.int64)
    nwin = int(idx.max()) + 1
    if nwin < 2:
        raise LineError(f"the midpoints span less than one averaging window ({window_m} m) of chainage.",
                        fix="use a smaller window_m or smoothing_m")
    # local linear kernel regression of crossline on chainage (no bias at the ends of a sloping cloud):
    # Gaussian-filtered moments of the binned data, then a 2x2 weighted least-squares fit at each window
    u = (ch - lo) / smoothing_m  # scaled chainage keeps the moments well conditioned
    moments = [np.bincount(idx, weights=w, minlength=nwin) for w in (np.ones_like(u), u, u * u, xl, u * xl)]
    sigma = max(smoothing_m / window_m, 1e-6)
    m0, m1, m2, my, muy = (gaussian_filter1d(m, sigma, mode="constant") for m in moments)
    keep = moments[0] > 0
    u0 = (np.flatnonzero(keep) + 0.5) * window_m / smoothing_m
    m0, m1, m2, my, muy = (m[keep] for m in (m0, m1, m2, my, muy))
    det = m0 * m2 - m1 * m1
    with np.errstate(invalid="ignore", divide="ignore"):
        slope = (m0 * muy - m1 * my) / det
        icpt = (my - slope * m1) / m0
        xs = np.where(np.abs(det) > 1e-9 * m0 * m0, icpt + slope * u0, my / m0)  # local mean where too few
    sc = lo + u0 * smoothing_m
    ae, an = section_line.position(sc, xs)
    return SurveyLine.smoothed(ae, an, smoothing_m=smoothing_m, spacing_m=spacing_m, name=name)
