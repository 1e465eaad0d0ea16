"""The survey line: chainage and crossline distance on a crooked profile.

A :class:`SurveyLine` is a polyline in the projected working CRS (metres).  It
places points on the line (``locate``: chainage along the line, signed distance
across it), maps back (``position``), and describes the line (bends, azimuth,
swath, resampled vertices, a small signature for 2D models).

Conventions (see ``docs/methods-line.md``):

* chainage ``chainage_m`` is the grid distance along the line from its first
  vertex, in metres;
* crossline ``crossline_m`` is the signed perpendicular distance, in metres,
  **positive to the right** looking along increasing chainage;
* beyond either end the chainage is extrapolated along the end segment
  (negative before the start, larger than :attr:`SurveyLine.length` past the
  end) and the crossline is measured perpendicular to that end segment.

The nearest-point search is a numba kernel over a bounding-volume hierarchy of
contiguous runs of segments: memory O(N + M) for N points on M vertices, no
Python loop over points.
"""

from __future__ import annotations

import hashlib
import math
from typing import Any, Mapping

import numba
import numpy as np
import pandas as pd

from .errors import LineError

__all__ = ["SurveyLine", "DIRECTIONS"]

#: The directions accepted by :meth:`SurveyLine.oriented`.
DIRECTIONS = ("as-given", "south-north", "north-south", "west-east", "east-west")

_LEAF = 4  # segments per leaf of the search tree

# ---------------------------------------------------------------------------
# numba kernels
# ---------------------------------------------------------------------------


@numba.njit(cache=True)
def _build_tree(x, y, leaf):  # pragma: no cover - compiled
    """Bounding-box tree over contiguous runs of segments.

    Node arrays: box (xmin, xmax, ymin, ymax), first and one-past-last segment,
    left and right child (-1 for a leaf).  Node 0 is the root.
    """
    nseg = x.size - 1
    cap = 4 * (nseg // leaf + 1) + 8  # leaves hold more than leaf / 2 segments
    bx0 = np.empty(cap)
    bx1 = np.empty(cap)
    by0 = np.empty(cap)
    by1 = np.empty(cap)
    lo = np.empty(cap, np.int64)
    hi = np.empty(cap, np.int64)
    left = np.full(cap, -1, np.int64)
    right = np.full(cap, -1, np.int64)
    # breadth-first split of [0, nseg)
    lo[0] = 0
    hi[0] = nseg
    count = 1
    i = 0
    while i < count:
        a = lo[i]
        b = hi[i]
        if b - a > leaf:
            m = (a + b) // 2
            lo[count] = a
            hi[count] = m
            left[i] = count
            count += 1
            lo[count] = m
            hi[count] = b
            right[i] = count
            count += 1
        i += 1
    # boxes bottom-up (children always have larger indices than parents)
    for i in range(count - 1, -1, -1):
        if left[i] < 0:
            a = lo[i]
            b = hi[i]
            xmin = x[a]
            xmax = x[a]
            ymin = y[a]
            ymax = y[a]
            for k in range(a + 1, b + 1):
                xmin = min(xmin, x[k])
                xmax = max(xmax, x[k])
                ymin = min(ymin, y[k])
                ymax = max(ymax, y[k])
            bx0[i] = xmin
            bx1[i] = xmax
            by0[i] = ymin
            by1[i] = ymax
        else:
            l_ = left[i]
            r_ = right[i]
            bx0[i] = min(bx0[l_], bx0[r_])
            bx1[i] = max(bx1[l_], bx1[r_])
            by0[i] = min(by0[l_], by0[r_])
            by1[i] = max(by1[l_], by1[r_])
    return (bx0[:count].copy(), bx1[:count].copy(), by0[:count].copy(), by1[:count].copy(),
            lo[:count].copy(), hi[:count].copy(), left[:count].copy(), right[:count].copy())


@numba.njit(cache=True, inline="always")
def _box_d2(px, py, x0, x1, y0, y1):  # pragma: no cover - compiled
    dx = 0.0
    if px < x0:
        dx = x0 - px
    elif px > x1:
        dx = px - x1
    dy = 0.0
    if py < y0:
        dy = y0 - py
    elif py > y1:
        dy = py - y1
    return dx * dx + dy * dy


@numba.njit(cache=True)
def _nearest_kernel(px, py, x, y, tx, ty, seglen, cum, bx0, bx1, by0, by1, lo, hi, left, right,
                    tie):  # pragma: no cover - compiled
    """Nearest segment and along-segment distance of every point.

    Returns the segment index and the foot distance along it (clamped to
    ``[0, seglen]``) and the raw (unclamped) along-segment distance.  Equal
    distances (within ``tie`` metres) go to the lower chainage.
    """
    n = px.size
    best_seg = np.full(n, -1, np.int64)
    best_t = np.full(n, np.nan)
    best_raw = np.full(n, np.nan)
    best_dist = np.full(n, np.nan)
    stack = np.empty(256, np.int64)
    for i in range(n):
        p = px[i]
        q = py[i]
        if not (np.isfinite(p) and np.isfinite(q)):
            continue
        bd = np.inf
        bs = np.inf
        bk = -1
        bt = 0.0
        br = 0.0
        top = 0
        stack[0] = 0
        top = 1
        while top > 0:
            top -= 1
            node = stack[top]
            lim = bd + tie
            if _box_d2(p, q, bx0[node], bx1[node], by0[node], by1[node]) > lim * lim:
                continue
            lnode = left[node]
            if lnode < 0:
                for k in range(lo[node], hi[node]):
                    dx = p - x[k]
                    dy = q - y[k]
                    raw = dx * tx[k] + dy * ty[k]
                    t = raw
                    if t < 0.0:
                        t = 0.0
                    elif t > seglen[k]:
                        t = seglen[k]
                    ex = dx - t * tx[k]
                    ey = dy - t * ty[k]
                    d = math.sqrt(ex * ex + ey * ey)
                    s = cum[k] + t
                    if d < bd - tie or (d <= bd + tie and s < bs):
                        bd = d
                        bs = s
                        bk = k
                        bt = t
                        br = raw
            else:
                rnode = right[node]
                dl = _box_d2(p, q, bx0[lnode], bx1[lnode], by0[lnode], by1[lnode])
                dr = _box_d2(p, q, bx0[rnode], bx1[rnode], by0[rnode], by1[rnode])
                # push the farther first so that the nearer is searched first
                if dl <= dr:
                    stack[top] = rnode
                    stack[top + 1] = lnode
                else:
                    stack[top] = lnode
                    stack[top + 1] = rnode
                top += 2
        best_seg[i] = bk
        best_t[i] = bt
        best_raw[i] = br
        best_dist[i] = bd
    return best_seg, best_t, best_raw, best_dist


@numba.njit(cache=True)
def _second_foot_kernel(px, py, x, y, tx, ty, seglen, cum, bx0, bx1, by0, by1, lo, hi, left, right,
                        d0, s0, slack, gap):  # pragma: no cover - compiled
    """True where another local minimum of the distance to the line lies within
    ``slack`` metres of the nearest distance ``d0`` and more than ``gap`` metres
    of chainage away from the nearest foot ``s0``."""
    n = px.size
    nseg = x.size - 1
    out = np.zeros(n, np.bool_)
    stack = np.empty(256, np.int64)
    for i in range(n):
        p = px[i]
        q = py[i]
        if not (np.isfinite(p) and np.isfinite(q) and np.isfinite(d0[i])):
            continue
        lim = d0[i] + slack
        lim2 = lim * lim
        sa = s0[i] - gap
        sb = s0[i] + gap
        stack[0] = 0
        top = 1
        found = False
        while top > 0 and not found:
            top -= 1
            node = stack[top]
            if _box_d2(p, q, bx0[node], bx1[node], by0[node], by1[node]) > lim2:
                continue
            a = lo[node]
            b = hi[node]
            if cum[a] >= sa and cum[b] <= sb:
                continue  # the whole run is the nearest foot's own stretch
            lnode = left[node]
            if lnode >= 0:
                stack[top] = lnode
                stack[top + 1] = right[node]
                top += 2
                continue
            for k in range(a, b):
                dx = p - x[k]
                dy = q - y[k]
                raw = dx * tx[k] + dy * ty[k]
                if raw > 0.0 and raw < seglen[k]:
                    s = cum[k] + raw
                    ex = dx - raw * tx[k]
                    ey = dy - raw * ty[k]
                elif raw <= 0.0:
                    # foot at vertex k: a local minimum only if the previous
                    # segment also ends its projection there
                    if k > 0 and dx * tx[k - 1] + dy * ty[k - 1] < 0.0:
                        continue
                    s = cum[k]
                    ex = dx
                    ey = dy
                elif k == nseg - 1:
                    s = cum[k + 1]
                    ex = p - x[k + 1]
                    ey = q - y[k + 1]
                else:
                    continue  # vertex k + 1 is judged by segment k + 1
                if (s < sa or s > sb) and ex * ex + ey * ey <= lim2:
                    found = True
                    break
        out[i] = found
    return out


@numba.njit(cache=True)
def _orient(ax, ay, bx, by, cx, cy):  # pragma: no cover - compiled
    return (bx - ax) * (cy - ay) - (by - ay) * (cx - ax)


@numba.njit(cache=True)
def _crossing_kernel(x, y, bx0, bx1, by0, by1, lo, hi, left, right, eps):  # pragma: no cover
    """First pair of non-adjacent segments (i < j) that touch or cross.

    Returns (i, j, xe, ye) or (-1, -1, nan, nan).
    """
    nseg = x.size - 1
    stack = np.empty(256, np.int64)
    for i in range(nseg):
        ax = x[i]
        ay = y[i]
        bx = x[i + 1]
        by = y[i + 1]
        sx0 = min(ax, bx) - eps
        sx1 = max(ax, bx) + eps
        sy0 = min(ay, by) - eps
        sy1 = max(ay, by) + eps
        la = math.hypot(bx - ax, by - ay)
        stack[0] = 0
        top = 1
        while top > 0:
            top -= 1
            node = stack[top]
            if hi[node] <= i + 2:
                continue  # only segments j >= i + 2
            if bx0[node] > sx1 or bx1[node] < sx0 or by0[node] > sy1 or by1[node] < sy0:
                continue
            if left[node] >= 0:
                stack[top] = left[node]
                stack[top + 1] = right[node]
                top += 2
                continue
            for j in range(max(lo[node], i + 2), hi[node]):
                cx = x[j]
                cy = y[j]
                dx = x[j + 1]
                dy = y[j + 1]
                if max(cx, dx) < sx0 or min(cx, dx) > sx1 or max(cy, dy) < sy0 or min(cy, dy) > sy1:
                    continue
                lc = math.hypot(dx - cx, dy - cy)
                o1 = _orient(ax, ay, bx, by, cx, cy) / la
                o2 = _orient(ax, ay, bx, by, dx, dy) / la
                o3 = _orient(cx, cy, dx, dy, ax, ay) / lc
                o4 = _orient(cx, cy, dx, dy, bx, by) / lc
                z1 = abs(o1) <= eps
                z2 = abs(o2) <= eps
                z3 = abs(o3) <= eps
                z4 = abs(o4) <= eps
                if (o1 > eps and o2 > eps) or (o1 < -eps and o2 < -eps):
                    continue
                if (o3 > eps and o4 > eps) or (o3 < -eps and o4 < -eps):
                    continue
                if z1 and z2:
                    # collinear: overlap of the projections onto AB?
                    ux = (bx - ax) / la
                    uy = (by - ay) / la
                    tc = (cx - ax) * ux + (cy - ay) * uy
                    td = (dx - ax) * ux + (dy - ay) * uy
                    t0 = max(0.0, min(tc, td))
                    t1 = min(la, max(tc, td))
                    if t0 <= t1 + eps:
                        return i, j, ax + t0 * ux, ay + t0 * uy
                    continue
                if z1 or z2 or z3 or z4:
                    # touching: report the touching end point
                    if z1:
                        return i, j, cx, cy
                    if z2:
                        return i, j, dx, dy
                    if z3:
                        return i, j, ax, ay
                    return i, j, bx, by
                den = o1 - o2
                f = o1 / den
                return i, j, cx + f * (dx - cx), cy + f * (dy - cy)
    return -1, -1, np.nan, np.nan


# ---------------------------------------------------------------------------
# helpers
# ---------------------------------------------------------------------------


def _as_float_array(values: Any, name: str) -> np.ndarray:
    arr = np.asarray(values, dtype=float)
    if arr.ndim == 0:
        arr = arr.reshape(1)
    if arr.ndim != 1:
        raise LineError(f"{name} must be a one-dimensional sequence of numbers, got shape {arr.shape}.",
                        fix=f"pass {name} as a flat list or 1-D array, in metres")
    return arr


def _gaussian_local_linear(values: np.ndarray, sigma_samples: float) -> np.ndarray:
    """Gaussian-weighted local linear fit of a uniformly sampled 1-D series.

    The local linear fit (rather than a plain weighted mean) keeps the series
    unbiased at its ends (no pull-in of the line ends); see Fan & Gijbels (1996),
    *Local Polynomial Modelling and Its Applications*, ch. 3.
    """
    half = max(1, int(math.ceil(4.0 * sigma_samples)))
    k = np.arange(-half, half + 1, dtype=float)
    w = np.exp(-0.5 * (k / sigma_samples) ** 2)
    ones = np.ones_like(values)
    # correlate: sum_j w(j - i) f(j); zero padding truncates the window at the ends
    def corr(f: np.ndarray, kern: np.ndarray) -> np.ndarray:
        return np.convolve(f, kern[::-1], mode="same")

    s0 = corr(ones, w)
    s1 = corr(ones, w * k)
    s2 = corr(ones, w * k * k)
    t0 = corr(values, w)
    t1 = corr(values, w * k)
    den = s0 * s2 - s1 * s1
    with np.errstate(invalid="ignore", divide="ignore"):
        out = (s2 * t0 - s1 * t1) / den
    bad = ~np.isfinite(out) | (np.abs(den) < 1e-12 * s0 * s2)
    out[bad] = (t0 / s0)[bad]
    return out


def _resample_polyline(x: np.ndarray, y: np.ndarray, spacing: float) -> tuple[np.ndarray, np.ndarray]:
    seg = np.hypot(np.diff(x), np.diff(y))
    cum = np.concatenate([[0.0], np.cumsum(seg)])
    total = cum[-1]
    n = max(1, int(math.ceil(total / spacing - 1e-9)))
    s = np.linspace(0.0, total, n + 1)
    return np.interp(s, cum, x), np.interp(s, cum, y)


# ---------------------------------------------------------------------------
# the line
# ---------------------------------------------------------------------------


class SurveyLine:
    """A crooked survey line in the projected working CRS.

    Parameters
    ----------
    easting, northing : array_like
        Vertices in metres of the working CRS, in the line's direction.
        Repeated consecutive vertices (zero-length segments) are dropped.
    name : str, optional
        A label used in messages and outputs.

    Raises
    ------
    LineError
        Fewer than two distinct vertices, non-finite vertices, or a line that
        touches or crosses itself (the message says where).

    Examples
    --------
    >>> line = SurveyLine([0.0, 1000.0, 1000.0], [0.0, 0.0, 1000.0])
    >>> line.length
    2000.0
    >>> ch, xl = line.locate([500.0, 1100.0], [-20.0, 500.0])
    >>> ch.tolist(), xl.tolist()
    ([500.0, 1500.0], [20.0, 100.0])
    >>> [float(v) for v in line.position(1500.0, 100.0)]
    [1100.0, 500.0]
    """

    def __init__(self, easting: Any, northing: Any, *, name: str = "section") -> None:
        e = _as_float_array(easting, "easting")
        n = _as_float_array(northing, "northing")
        self.name = str(name)
        if e.size != n.size:
            raise LineError(f"line '{name}': {e.size} eastings but {n.size} northings.",
                            fix="give one easting and one northing per vertex")
        bad = ~(np.isfinite(e) & np.isfinite(n))
        if bad.any():
            idx = np.flatnonzero(bad)
            raise LineError(
                f"line '{name}': vertex {int(idx[0])} (counting from 0) has a non-finite coordinate "
                f"({e[idx[0]]}, {n[idx[0]]}); {idx.size} such vertices in all.",
                fix="remove or repair the vertices with missing coordinates")
        if e.size:
            scale = max(1.0, float(np.ptp(e)), float(np.ptp(n)),
                        float(np.max(np.abs(e))), float(np.max(np.abs(n))))
        else:
            scale = 1.0
        self._eps = 1e-12 * scale  # below this, two vertices are the same point
        # distances equal within a few units in the last place of the coordinates are ties
        self._tie = max(1e-9, 8.0 * float(np.spacing(scale)))
        if e.size > 1:
            step = np.hypot(np.diff(e), np.diff(n))
            keep = np.concatenate([[True], step > self._eps])
            e = e[keep]
            n = n[keep]
        if e.size < 2:
            raise LineError(
                f"line '{name}' has {e.size} distinct vertex(es); a line needs at least 2.",
                fix="give at least two distinct vertices (easting, northing in metres)")
        self._set(e, n)
        self._check_simple()

    # -- construction ------------------------------------------------------

    def _set(self, e: np.ndarray, n: np.ndarray) -> None:
        self._x = np.ascontiguousarray(e, dtype=float)
        self._y = np.ascontiguousarray(n, dtype=float)
        dx = np.diff(self._x)
        dy = np.diff(self._y)
        self._seglen = np.hypot(dx, dy)
        self._tx = dx / self._seglen
        self._ty = dy / self._seglen
        self._cum = np.concatenate([[0.0], np.cumsum(self._seglen)])
        self._tree = _build_tree(self._x, self._y, _LEAF)

    def _check_simple(self) -> None:
        # adjacent segments that fold back onto each other overlap
        cross = self._tx[:-1] * self._ty[1:] - self._ty[:-1] * self._tx[1:]
        dot = self._tx[:-1] * self._tx[1:] + self._ty[:-1] * self._ty[1:]
        folded = np.flatnonzero((np.abs(cross) < 1e-12) & (dot < 0))
        if folded.size:
            k = int(folded[0]) + 1
            raise LineError(
                f"line '{self.name}' turns back on itself at vertex {k} "
                f"(E={self._x[k]:.3f}, N={self._y[k]:.3f}, chainage {self._cum[k]:.3f} m): "
                "the segments on either side overlap.",
                fix="remove the vertex or split the line into two lines")
        bx0, bx1, by0, by1, lo, hi, left, right = self._tree
        eps = max(self._eps, 1e-9)
        i, j, xe, ye = _crossing_kernel(self._x, self._y, bx0, bx1, by0, by1, lo, hi, left, right, eps)
        if i >= 0:
            s_i = self._cum[i] + math.hypot(xe - self._x[i], ye - self._y[i])
            s_j = self._cum[j] + math.hypot(xe - self._x[j], ye - self._y[j])
            raise LineError(
                f"line '{self.name}' crosses or touches itself at E={xe:.3f}, N={ye:.3f}: "
                f"segment {i} (vertices {i}-{i + 1}, chainage {s_i:.1f} m) meets segment {j} "
                f"(vertices {j}-{j + 1}, chainage {s_j:.1f} m).",
                fix="a survey line must not cross itself: split it into two lines, or use "
                    "SurveyLine.fit or SurveyLine.smoothed to make a simple line through the points")

    @classmethod
    def fit(cls, easting: Any, northing: Any, *, margin_m: float = 0.0, name: str = "section") -> "SurveyLine":
        """Straight best-fit line through points by orthogonal regression.

        The direction is the principal axis of the centred points (total least
        squares: it minimises the sum of squared perpendicular distances, so it
        does not depend on which axis is "x"); see Golub & Van Loan (2013),
        *Matrix Computations*, 4th ed., sec. 6.3 (total least squares).  The line
        spans the projections of the points onto that axis, extended by
        ``margin_m`` at each end, and runs from the first given point's end
        towards the last one's.  Non-finite points are ignored.

        Parameters
        ----------
        easting, northing : array_like
            Points in metres of the working CRS.
        margin_m : float
            Extension beyond the outermost projections at each end, in metres.

        Returns
        -------
        SurveyLine
            A two-vertex line.

        Examples
        --------
        >>> line = SurveyLine.fit([0, 10, 20], [0, 10, 20])
        >>> round(line.length, 6)
        28.284271
        """
        e = _as_float_array(easting, "easting")
        n = _as_float_array(northing, "northing")
        if e.size != n.size:
            raise LineError(f"{e.size} eastings but {n.size} northings.", fix="give one of each per point")
        ok = np.isfinite(e) & np.isfinite(n)
        e = e[ok]
        n = n[ok]
        if e.size < 2 or (np.ptp(e) == 0 and np.ptp(n) == 0):
            raise LineError(f"a straight line needs at least 2 distinct points with finite coordinates, "
                            f"got {e.size}.", fix="give more points, or build the line from its vertices")
        if not (math.isfinite(margin_m) and margin_m >= 0):
            raise LineError(f"margin_m must be a finite number >= 0, got {margin_m}.",
                            fix="give the extension at each end in metres, e.g. 0 or 500")
        ce, cn = e.mean(), n.mean()
        a = np.column_stack([e - ce, n - cn])
        _, _, vt = np.linalg.svd(a, full_matrices=False)
        u = vt[0]
        t = a @ u
        if t[-1] < t[0]:
            u = -u
            t = -t
        t0 = t.min() - margin_m
        t1 = t.max() + margin_m
        return cls([ce + t0 * u[0], ce + t1 * u[0]], [cn + t0 * u[1], cn + t1 * u[1]], name=name)

    @classmethod
    def smoothed(cls, easting: Any, northing: Any, *, smoothing_m: float, spacing_m: float,
                 name: str = "section") -> "SurveyLine":
        """A smoothed line through points taken in the given (acquisition) order.

        Method: the points are joined in order and the joining polyline is
        sampled uniformly along its cumulative length; each coordinate is then
        smoothed along that cumulative distance with a Gaussian-weighted local
        linear fit of standard deviation ``smoothing_m`` (no pull-in at the
        ends), and the smoothed curve is resampled to vertices every
        ``spacing_m`` along its own length.  Non-finite points are ignored.

        Parameters
        ----------
        easting, northing : array_like
            Points in metres, in acquisition order.
        smoothing_m : float
            Standard deviation of the Gaussian smoothing kernel along the line,
            in metres; bends shorter than about this length are smoothed out.
        spacing_m : float
            Spacing of the output vertices along the line, in metres.

        Returns
        -------
        SurveyLine
        """
        for key, val in (("smoothing_m", smoothing_m), ("spacing_m", spacing_m)):
            if not (isinstance(val, (int, float, np.floating)) and math.isfinite(val) and val > 0):
                raise LineError(f"{key} must be a positive number of metres, got {val!r}.",
                                fix=f"set {key} to a length in metres, e.g. 500")
        e = _as_float_array(easting, "easting")
        n = _as_float_array(northing, "northing")
        if e.size != n.size:
            raise LineError(f"{e.size} eastings but {n.size} northings.", fix="give one of each per point")
        ok = np.isfinite(e) & np.isfinite(n)
        e = e[ok]
        n = n[ok]
        if e.size > 1:
            step = np.hypot(np.diff(e), np.diff(n))
            keep = np.concatenate([[True], step > 0])
            e, n = e[keep], n[keep]
        if e.size < 2:
            raise LineError(f"a smoothed line needs at least 2 distinct points, got {e.size}.",
                            fix="give more points in acquisition order")
        step = np.hypot(np.diff(e), np.diff(n))
        total = float(step.sum())
        h = min(spacing_m, smoothing_m / 4.0, total / 4.0)
        ns = int(min(max(8, math.ceil(total / h) + 1), 2_000_000))
        cum = np.concatenate([[0.0], np.cumsum(step)])
        s = np.linspace(0.0, total, ns)
        h = s[1] - s[0]
        ue = np.interp(s, cum, e)
        un = np.interp(s, cum, n)
        se = _gaussian_local_linear(ue, smoothing_m / h)
        sn = _gaussian_local_linear(un, smoothing_m / h)
        re, rn = _resample_polyline(se, sn, spacing_m)
        return cls(re, rn, name=name)

    # -- basic properties ----------------------------------------------------

    @property
    def vertices(self) -> tuple[np.ndarray, np.ndarray]:
        """(easting, northing) of the vertices, in metres (copies)."""
        return self._x.copy(), self._y.copy()

    @property
    def vertex_chainage(self) -> np.ndarray:
        """Chainage of each vertex, in metres (0 at the first)."""
        return self._cum.copy()

    @property
    def length(self) -> float:
        """Grid length of the line, in metres."""
        return float(self._cum[-1])

    @property
    def n_vertices(self) -> int:
        """Number of (cleaned) vertices."""
        return int(self._x.size)

    @property
    def start(self) -> tuple[float, float]:
        """(easting, northing) of the first vertex, in metres."""
        return float(self._x[0]), float(self._y[0])

    @property
    def end(self) -> tuple[float, float]:
        """(easting, northing) of the last vertex, in metres."""
        return float(self._x[-1]), float(self._y[-1])

    def __repr__(self) -> str:
        return (f"SurveyLine(name={self.name!r}, n_vertices={self.n_vertices}, "
                f"length={self.length:.1f} m)")

    def __len__(self) -> int:
        return self.n_vertices

    # -- direction ------------------------------------------------------------

    def reversed(self) -> "SurveyLine":
        """The same line run the other way: chainage s becomes L - s, crossline flips sign."""
        return SurveyLine(self._x[::-1], self._y[::-1], name=self.name)

    def oriented(self, direction: str) -> "SurveyLine":
        """The line run in the requested general direction.

        Parameters
        ----------
        direction : {"as-given", "south-north", "north-south", "west-east", "east-west"}
            "south-north" makes the last vertex lie north of the first, and so on
            (the comparison is between the two end points; a line whose ends have
            the same northing, say, is left as given for "south-north").

        Returns
        -------
        SurveyLine
            ``self`` or :meth:`reversed`.
        """
        if direction not in DIRECTIONS:
            raise LineError(f"unknown line direction {direction!r}.",
                            fix="use one of: " + ", ".join(DIRECTIONS))
        de = self._x[-1] - self._x[0]
        dn = self._y[-1] - self._y[0]
        flip = {
            "as-given": False,
            "south-north": dn < 0,
            "north-south": dn > 0,
            "west-east": de < 0,
            "east-west": de > 0,
        }[direction]
        return self.reversed() if flip else self

    # -- placing points -----------------------------------------------------------

    def _nearest(self, e: np.ndarray, n: np.ndarray):
        bx0, bx1, by0, by1, lo, hi, left, right = self._tree
        tie = self._tie
        return _nearest_kernel(e, n, self._x, self._y, self._tx, self._ty, self._seglen, self._cum,
                               bx0, bx1, by0, by1, lo, hi, left, right, tie)

    def _locate_full(self, easting: Any, northing: Any):
        e = np.ascontiguousarray(np.asarray(easting, dtype=float))
        n = np.ascontiguousarray(np.asarray(northing, dtype=float))
        e, n = np.broadcast_arrays(e, n)
        shape = e.shape
        e = np.ascontiguousarray(e.ravel())
        n = np.ascontiguousarray(n.ravel())
        seg, t, raw, dist = self._nearest(e, n)
        return self._finish(e, n, seg, t, raw, dist, shape)

    def _finish(self, e, n, seg, t, raw, dist, shape):
        valid = seg >= 0
        k = np.where(valid, seg, 0)
        nseg = self._seglen.size
        t = np.where(valid, t, 0.0)
        raw = np.where(valid, raw, 0.0)
        e0 = np.where(valid, e, self._x[0])
        n0 = np.where(valid, n, self._y[0])
        ch = self._cum[k] + t
        dx = e0 - self._x[k]
        dy = n0 - self._y[k]
        # perpendicular (right-positive) distance from the segment's line
        xl = dx * self._ty[k] - dy * self._tx[k]
        # beyond the ends: extrapolate along the end segment
        before = valid & (k == 0) & (raw < 0.0)
        after = valid & (k == nseg - 1) & (raw > self._seglen[k])
        ch = np.where(before, raw, ch)
        ch = np.where(after, self._cum[k] + raw, ch)
        # nearest point at an interior vertex: side from the bisector of the two normals
        seglen_k = self._seglen[k]
        at_start = valid & (t <= 0.0) & (k > 0) & ~before
        at_end = valid & (t >= seglen_k) & (k < nseg - 1) & ~after
        vtx = np.where(at_start, k, k + 1)
        on_vertex = at_start | at_end
        if on_vertex.any():
            idx = np.flatnonzero(on_vertex)
            j = vtx[idx]
            bxn = self._ty[j - 1] + self._ty[j]
            byn = -self._tx[j - 1] - self._tx[j]
            vx = e0[idx] - self._x[j]
            vy = n0[idx] - self._y[j]
            side = vx * bxn + vy * byn
            xl[idx] = np.where(side < 0.0, -1.0, 1.0) * np.hypot(vx, vy)
            ch[idx] = self._cum[j]
        ch[~valid] = np.nan
        xl[~valid] = np.nan
        dist[~valid] = np.nan
        return ch.reshape(shape), xl.reshape(shape), dist.reshape(shape), valid.reshape(shape)

    def locate(self, easting: Any, northing: Any) -> tuple[np.ndarray, np.ndarray]:
        """Chainage and crossline distance of points: exact nearest-point projection.

        Parameters
        ----------
        easting, northing : array_like
            Points in metres of the working CRS (broadcast together).

        Returns
        -------
        chainage_m : ndarray
            Chainage of the nearest point of the line, in metres; extrapolated
            along the end segment beyond either end.  Equally near feet go to
            the lower chainage.  NaN for non-finite input.
        crossline_m : ndarray
            Signed distance from the line, in metres, positive to the right
            looking along increasing chainage; perpendicular to the end segment
            beyond the ends.  Where the nearest point is a vertex, the side is
            decided by the bisector of the two adjacent segments' normals.
        """
        ch, xl, _, _ = self._locate_full(easting, northing)
        return ch, xl

    def distance(self, easting: Any, northing: Any) -> np.ndarray:
        """Shortest distance from each point to the line, in metres (NaN for bad input)."""
        return self._locate_full(easting, northing)[2]

    def place(self, easting: Any, northing: Any, *, far_off_line_m: float | None = None,
              ambiguity_m: float = 10.0, ambiguity_gap_m: float | None = None) -> pd.DataFrame:
        """Locate points and report, row by row, what is doubtful about each.

        Parameters
        ----------
        easting, northing : array_like
            Points in metres (one-dimensional, same length).
        far_off_line_m : float, optional
            Points with ``|crossline_m|`` larger than this (metres) get the flag
            ``far_off_line``.  None: no such check.
        ambiguity_m : float
            A point gets the flag ``ambiguous_foot`` when another, separate foot
            on the line (a local minimum of the distance, more than
            ``ambiguity_gap_m`` of chainage away from the nearest foot) is no more
            than ``ambiguity_m`` metres farther than the nearest: the inside of a
            sharp bend or of a hairpin, where a small move changes the chainage a
            lot.  Set 0 to flag exact ties only; negative disables the check.
        ambiguity_gap_m : float, optional
            The chainage separation (metres) beyond which a second foot counts as
            another part of the line.  Default ``2 * ambiguity_m``.

        Returns
        -------
        pandas.DataFrame
            One row per input point, in input order, with columns
            ``chainage_m``, ``crossline_m``, ``status`` (``ok`` or
            ``bad_coordinates``) and ``flags`` (``;``-joined, ``''`` when none:
            ``beyond_line_end``, ``far_off_line``, ``ambiguous_foot``).
        """
        e = np.ascontiguousarray(np.asarray(easting, dtype=float).ravel())
        n = np.ascontiguousarray(np.asarray(northing, dtype=float).ravel())
        if e.size != n.size:
            raise LineError(f"{e.size} eastings but {n.size} northings.", fix="give one of each per point")
        ch, xl, dist, valid = self._locate_full(e, n)
        beyond = valid & ((ch < 0.0) | (ch > self.length))
        far = np.zeros(e.size, bool)
        if far_off_line_m is not None:
            far = valid & (np.abs(xl) > far_off_line_m)
        amb = np.zeros(e.size, bool)
        if ambiguity_m is not None and ambiguity_m >= 0 and valid.any():
            gap = 2.0 * ambiguity_m if ambiguity_gap_m is None else float(ambiguity_gap_m)
            amb = self.ambiguous(e, n, ambiguity_m=ambiguity_m, gap_m=gap, _near=(dist, ch, valid))
        flags = np.full(e.size, "", dtype=object)
        for mask, word in ((beyond, "beyond_line_end"), (far, "far_off_line"), (amb, "ambiguous_foot")):
            if mask.any():
                cur = flags[mask]
                flags[mask] = np.where(cur == "", word, cur + ";" + word)
        status = np.where(valid, "ok", "bad_coordinates").astype(object)
        return pd.DataFrame({"chainage_m": ch, "crossline_m": xl, "status": status, "flags": flags})

    def ambiguous(self, easting: Any, northing: Any, *, ambiguity_m: float = 10.0,
                  gap_m: float | None = None, _near=None) -> np.ndarray:
        """True where a point has a second, separate foot on the line nearly as near.

        See :meth:`place` for the rule.  Returns a boolean array (False for
        non-finite input).
        """
        e = np.ascontiguousarray(np.asarray(easting, dtype=float).ravel())
        n = np.ascontiguousarray(np.asarray(northing, dtype=float).ravel())
        if _near is None:
            ch, _, dist, valid = self._locate_full(e, n)
        else:
            dist, ch, valid = _near
        gap = 2.0 * ambiguity_m if gap_m is None else float(gap_m)
        # the nearest foot's chainage, clamped onto the line (beyond-end points
        # have their foot at the end vertex)
        s0 = np.clip(np.where(valid, ch, np.nan), 0.0, self.length)
        bx0, bx1, by0, by1, lo, hi, left, right = self._tree
        return _second_foot_kernel(e, n, self._x, self._y, self._tx, self._ty, self._seglen, self._cum,
                                   bx0, bx1, by0, by1, lo, hi, left, right,
                                   np.ascontiguousarray(dist), np.ascontiguousarray(s0),
                                   float(ambiguity_m) + self._tie, gap)

    def position(self, chainage_m: Any, crossline_m: Any = 0.0) -> tuple[np.ndarray, np.ndarray]:
        """Map coordinates of a chainage and crossline distance: the inverse of :meth:`locate`.

        Parameters
        ----------
        chainage_m : array_like
            Chainage in metres; below 0 or above :attr:`length` the end segment
            is extended.
        crossline_m : array_like
            Signed distance in metres, positive to the right, perpendicular to
            the segment that holds the chainage (at a vertex, the segment that
            starts there).

        Returns
        -------
        easting, northing : ndarray
            In metres of the working CRS.
        """
        s, xl = np.broadcast_arrays(np.asarray(chainage_m, dtype=float), np.asarray(crossline_m, dtype=float))
        k = self._segment_of(s)
        d = s - self._cum[k]
        e = self._x[k] + d * self._tx[k] + xl * self._ty[k]
        n = self._y[k] + d * self._ty[k] - xl * self._tx[k]
        bad = ~np.isfinite(s)
        if bad.any():
            e = np.where(bad, np.nan, e)
            n = np.where(bad, np.nan, n)
        return e, n

    def _segment_of(self, s: np.ndarray) -> np.ndarray:
        nseg = self._seglen.size
        k = np.searchsorted(self._cum, np.nan_to_num(s, nan=0.0), side="right") - 1
        return np.clip(k, 0, nseg - 1)

    # -- describing the line -------------------------------------------------------

    def azimuth(self, chainage_m: Any) -> np.ndarray:
        """Grid azimuth of the line's tangent, in degrees clockwise from grid north, in [0, 360).

        At a vertex the segment that starts there is used.
        """
        s = np.asarray(chainage_m, dtype=float)
        k = self._segment_of(s)
        az = np.degrees(np.arctan2(self._tx[k], self._ty[k])) % 360.0
        return np.where(np.isfinite(s), az, np.nan)

    def turn_angles(self) -> np.ndarray:
        """Signed change of direction at each interior vertex, degrees, positive = turn right."""
        cross = self._tx[:-1] * self._ty[1:] - self._ty[:-1] * self._tx[1:]
        dot = self._tx[:-1] * self._tx[1:] + self._ty[:-1] * self._ty[1:]
        return -np.degrees(np.arctan2(cross, dot))

    def bends(self, threshold_deg: float = 20.0) -> tuple[np.ndarray, np.ndarray]:
        """Vertices where the line's direction changes by more than ``threshold_deg``.

        Returns
        -------
        chainage_m : ndarray
            Chainage of those vertices, in metres.
        angle_deg : ndarray
            Signed change of direction, degrees; positive is a turn to the right.
        """
        ang = self.turn_angles()
        sel = np.abs(ang) > threshold_deg
        return self._cum[1:-1][sel], ang[sel]

    def resample(self, spacing_m: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Points every ``spacing_m`` metres along the line, both ends included.

        Returns
        -------
        chainage_m, easting, northing : ndarray
            The last interval is shorter when the length is not a multiple of
            the spacing.
        """
        if not (math.isfinite(spacing_m) and spacing_m > 0):
            raise LineError(f"spacing_m must be a positive number of metres, got {spacing_m!r}.",
                            fix="give the sample spacing in metres, e.g. 50")
        L = self.length
        s = np.arange(0.0, L, spacing_m)
        if L - s[-1] > 1e-9 * max(L, 1.0):
            s = np.append(s, L)
        else:
            s[-1] = L
        e, n = self.position(s)
        return s, e, n

    def offset_points(self, chainage_m: Any, crossline_m: float) -> tuple[np.ndarray, np.ndarray]:
        """Points at a constant crossline distance that follow the line's corners.

        Like :meth:`position`, except that at a chainage equal to an interior
        vertex the offset is taken along the bisector (a mitre join, length
        limited to 4 times ``|crossline_m|``), so that a polygon built from
        these points follows the bend.
        """
        s = np.asarray(chainage_m, dtype=float)
        e, n = self.position(s, crossline_m)
        j = np.searchsorted(self._cum, s)
        inner = (j > 0) & (j < self._cum.size - 1)
        hit = np.zeros(s.shape, bool)
        hit[inner] = np.isclose(self._cum[j[inner]], s[inner], rtol=0, atol=1e-9 * max(1.0, self.length))
        if hit.any():
            jj = j[hit]
            bx = self._ty[jj - 1] + self._ty[jj]
            by = -self._tx[jj - 1] - self._tx[jj]
            norm = np.hypot(bx, by)
            cos_half = norm / 2.0
            f = np.minimum(1.0 / np.maximum(cos_half, 1e-12), 4.0)
            e[hit] = self._x[jj] + crossline_m * f * bx / norm
            n[hit] = self._y[jj] + crossline_m * f * by / norm
        return e, n

    def swath(self, width_m: float):
        """Shapely polygon of all points within ±``width_m`` of the line (flat ends).

        Returns
        -------
        shapely.Polygon
            The buffer of the line with flat caps at the ends and round joins.
        """
        import shapely

        if not (math.isfinite(width_m) and width_m > 0):
            raise LineError(f"swath width must be a positive number of metres, got {width_m!r}.",
                            fix="give the half-width in metres, e.g. 500")
        ls = shapely.LineString(np.column_stack([self._x, self._y]))
        return shapely.buffer(ls, width_m, cap_style="flat", join_style="round", quad_segs=16)

    def in_swath(self, easting: Any, northing: Any, width_m: float) -> np.ndarray:
        """True for points whose nearest foot lies on the line (0 <= chainage <= length)
        and whose ``|crossline_m| <= width_m``.  Computed from :meth:`locate`
        (no polygon), False for non-finite input."""
        ch, xl = self.locate(easting, northing)
        with np.errstate(invalid="ignore"):
            return (np.abs(xl) <= width_m) & (ch >= 0.0) & (ch <= self.length)

    # -- signature -----------------------------------------------------------------

    def vertex_hash(self) -> str:
        """SHA-256 (first 16 hex digits) of the vertices rounded to millimetres."""
        mm = np.round(np.column_stack([self._x, self._y]) * 1000.0).astype(np.int64)
        return hashlib.sha256(mm.tobytes()).hexdigest()[:16]

    def _fractions(self) -> list[list[float]]:
        s = np.linspace(0.0, self.length, 9)
        e, n = self.position(s)
        return [[float(a), float(b)] for a, b in zip(e, n)]

    def to_dict(self, *, include_vertices: bool = True) -> dict:
        """A small signature of the line (for a 2D model to record which line it was made on).

        Keys: ``name``, ``start``, ``end`` ([easting, northing] in metres),
        ``length_m``, ``n_vertices``, ``vertex_hash``, ``checkpoints`` (9 points
        at equal chainage steps) and, unless ``include_vertices`` is False,
        ``easting`` and ``northing`` (lists of vertex coordinates, metres).
        """
        d = {
            "name": self.name,
            "start": list(self.start),
            "end": list(self.end),
            "length_m": self.length,
            "n_vertices": self.n_vertices,
            "vertex_hash": self.vertex_hash(),
            "checkpoints": self._fractions(),
        }
        if include_vertices:
            d["easting"] = self._x.tolist()
            d["northing"] = self._y.tolist()
        return d

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> "SurveyLine":
        """Rebuild a line from :meth:`to_dict` output (which must include the vertices)."""
        if "easting" not in d or "northing" not in d:
            raise LineError("the line signature holds no vertices, so the line cannot be rebuilt from it.",
                            fix="write the signature with to_dict(include_vertices=True), or compare a "
                                "line with it through same_as()")
        line = cls(d["easting"], d["northing"], name=d.get("name", "section"))
        if "vertex_hash" in d and d["vertex_hash"] != line.vertex_hash():
            raise LineError(f"the vertices of line '{line.name}' do not match the recorded vertex hash "
                            f"{d['vertex_hash']} (they give {line.vertex_hash()}).",
                            fix="the signature was edited or damaged: write it anew from the line")
        return line

    def same_as(self, signature: "Mapping[str, Any] | SurveyLine", tol_m: float = 1.0) -> bool:
        """True when this line matches a recorded signature within ``tol_m`` metres.

        Compares the ends, the length and the 9 checkpoints (points at equal
        chainage steps); a signature with an equal vertex hash matches at once.
        """
        sig = signature.to_dict(include_vertices=False) if isinstance(signature, SurveyLine) else signature
        if sig.get("vertex_hash") == self.vertex_hash():
            return True
        try:
            if abs(float(sig["length_m"]) - self.length) > tol_m:
                return False
            for key, mine in (("start", self.start), ("end", self.end)):
                if math.dist(tuple(map(float, sig[key])), mine) > tol_m:
                    return False
            if "checkpoints" in sig:
                theirs = np.asarray(sig["checkpoints"], dtype=float)
                ours = np.asarray(self._fractions())
                if theirs.shape != ours.shape or np.max(np.hypot(*(theirs - ours).T)) > tol_m:
                    return False
        except (KeyError, TypeError, ValueError) as exc:
            raise LineError(f"the line signature is incomplete or damaged ({exc!r}).",
                            fix="write it anew with SurveyLine.to_dict()") from exc
        return True
