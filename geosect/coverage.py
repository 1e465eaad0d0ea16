"""Coverage of each interface by reflection points: fold along chainage, gaps, wide-angle offsets.

Everything here is plain numpy over arrays of reflection-point chainages and
offsets (metres); nothing reads files or knows about stages.  The pieces:

* :func:`bin_edges`, :func:`fold_per_bin`: reflection points per chainage bin
  (the fold of an interface, counted with :func:`numpy.bincount`);
* :func:`sampled_span`, :func:`find_gaps`, :func:`largest_gap`: where an
  interface is sampled and where it is not, with exact gap ends (the chainages of
  the reflection points on either side);
* :func:`critical_distances`, :func:`wide_angle`: the critical distance of an
  interface for every pair (source and receiver depths, and under a 2D model the
  1D column under the midpoint) and the offsets recorded beyond it;
* :func:`interface_coverage`, :func:`design_check`: the summary per interface and
  the survey-design rule of thumb;
* :func:`gaps_after_adding`, :func:`rank_by_gap`: the largest gap recomputed with
  the reflection points a candidate station would add, for many candidates at once.

>>> ch = np.array([1.0e3, 1.5e3, 2.5e3, 9.0e3, 9.5e3])
>>> fold_per_bin(ch, bin_edges(0.0, 10e3, 2e3)).tolist()
[2, 1, 0, 0, 2]
>>> starts, ends = find_gaps(ch, gap_m=5e3)
>>> starts.tolist(), ends.tolist()
([2500.0], [9000.0])
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

__all__ = [
    "WIDE_ANGLE_DEPTH_FACTORS",
    "bin_edges",
    "fold_per_bin",
    "sampled_span",
    "find_gaps",
    "largest_gap",
    "critical_distances",
    "WideAngle",
    "wide_angle",
    "InterfaceCoverage",
    "interface_coverage",
    "DesignCheck",
    "design_check",
    "GapShrink",
    "gaps_after_adding",
    "rank_by_gap",
]

#: Offsets of about 4 to 5 times the depth of an interface record it at wide angle, beyond the critical distance,
#: in typical crustal velocity models (a rule of thumb of refraction survey design: common practice, no source).
WIDE_ANGLE_DEPTH_FACTORS: tuple[float, float] = (4.0, 5.0)


# --------------------------------------------------------------------------- fold


def bin_edges(start_m: float, end_m: float, bin_m: float, origin_m: float = 0.0) -> np.ndarray:
    """Edges of chainage bins of width ``bin_m`` that cover ``[start_m, end_m]``, aligned on ``origin_m``.

    Parameters
    ----------
    start_m, end_m : float
        Chainage range to cover, in metres.
    bin_m : float
        Bin width, in metres (positive).
    origin_m : float
        A chainage that is a bin edge, in metres (default 0: the start of the line).

    Returns
    -------
    numpy.ndarray
        Increasing edges, in metres; at least two (one bin).

    >>> bin_edges(-500.0, 3100.0, 1000.0).tolist()
    [-1000.0, 0.0, 1000.0, 2000.0, 3000.0, 4000.0]
    """
    if not bin_m > 0:
        raise ValueError(f"bin width must be positive, got {bin_m!r} m")
    lo = origin_m + np.floor((start_m - origin_m) / bin_m) * bin_m
    hi = origin_m + np.ceil((end_m - origin_m) / bin_m) * bin_m
    n = max(1, int(round((hi - lo) / bin_m)))
    return lo + bin_m * np.arange(n + 1, dtype=float)


def fold_per_bin(chainage_m, edges_m) -> np.ndarray:
    """Number of reflection points in each chainage bin.

    Bins are half open, ``[edge_k, edge_k+1)``, except the last, which also holds its
    upper edge (as :func:`numpy.histogram` counts).  Points outside the edges and
    non-finite points are not counted.

    Parameters
    ----------
    chainage_m : array_like
        Chainages of the reflection points, in metres.
    edges_m : array_like
        Increasing bin edges, in metres.

    Returns
    -------
    numpy.ndarray of int64
        One count per bin (``len(edges_m) - 1`` values).
    """
    ch = np.asarray(chainage_m, float).ravel()
    edges = np.asarray(edges_m, float)
    nb = edges.size - 1
    ch = ch[np.isfinite(ch) & (ch >= edges[0]) & (ch <= edges[-1])]
    k = np.searchsorted(edges, ch, side="right") - 1
    k = np.minimum(k, nb - 1)
    return np.bincount(k, minlength=nb).astype(np.int64)


# --------------------------------------------------------------------------- span and gaps


def _sorted_points(chainage_m) -> np.ndarray:
    ch = np.asarray(chainage_m, float).ravel()
    return np.unique(ch[np.isfinite(ch)])


def sampled_span(chainage_m) -> tuple[float, float]:
    """First and last chainage reached by reflection points, in metres (NaN, NaN when there are none)."""
    p = _sorted_points(chainage_m)
    if p.size == 0:
        return float("nan"), float("nan")
    return float(p[0]), float(p[-1])


def find_gaps(chainage_m, gap_m: float, *, extent_m: tuple[float, float] | None = None
              ) -> tuple[np.ndarray, np.ndarray]:
    """Stretches of chainage longer than ``gap_m`` with no reflection point.

    A gap runs from one reflection point to the next one along the line, so its ends
    are the chainages of the points on either side.

    Parameters
    ----------
    chainage_m : array_like
        Chainages of the reflection points, in metres (NaN ignored).
    gap_m : float
        Only stretches longer than this are gaps, in metres.
    extent_m : (float, float), optional
        A chainage range, in metres, that should be covered: the stretches between
        its ends and the first and last points count too, and points outside it are
        ignored.  Default: gaps inside the sampled span only.

    Returns
    -------
    start_m, end_m : numpy.ndarray
        Ends of each gap, in metres, in increasing chainage.
    """
    p = _sorted_points(chainage_m)
    if extent_m is not None:
        lo, hi = float(extent_m[0]), float(extent_m[1])
        p = np.unique(np.concatenate([[lo, hi], p[(p >= lo) & (p <= hi)]]))
    if p.size < 2:
        return np.empty(0), np.empty(0)
    sel = np.diff(p) > gap_m
    return p[:-1][sel], p[1:][sel]


def largest_gap(chainage_m) -> tuple[float, float]:
    """Ends (m) of the longest stretch between consecutive reflection points (NaN, NaN for fewer than two)."""
    p = _sorted_points(chainage_m)
    if p.size < 2:
        return float("nan"), float("nan")
    k = int(np.argmax(np.diff(p)))
    return float(p[k]), float(p[k + 1])


# --------------------------------------------------------------------------- critical distance


def _column_critical(col, interface: str, wave: str, zs: np.ndarray, zr: np.ndarray, spherical: bool,
                     depth_samples: int) -> np.ndarray:
    """Critical distance (m) per pair in one 1D column, from the horizontal lengths of its two legs.

    The critical distance is the sum of two legs at the critical ray parameter, one from the source depth and one
    from the receiver depth down to the interface.  Each leg, L(z), is half the critical distance of a source and a
    receiver at the same depth z.  L is smooth in z between interfaces (straight in a constant-velocity layer), so
    it is computed at the shallowest, middle and deepest depth and interpolated with the parabola through them;
    where an interface lies inside the depth range, L is sampled at ``depth_samples`` depths and interpolated
    linearly instead.
    """
    z = np.concatenate([zs, zr])
    z = z[np.isfinite(z)]
    if z.size == 0:
        return np.full(zs.size, np.nan)
    zlo, zhi = float(z.min()), float(z.max())

    def legs(grid):  # a loop over a few depth samples, not over pairs
        return np.array([0.5 * col.critical_distance(interface, wave=wave, source_depth_m=float(g),
                                                     receiver_depth_m=float(g), spherical=spherical) for g in grid])

    if zhi - zlo < 1e-6:
        return np.full(zs.size, 2.0 * legs([zlo])[0])
    # the top layer's law continues above the model top, so only deeper interfaces make a kink
    depths = np.array([float(col.interface_depth(nm, 0.0)) for nm in col.interface_names[1:]])
    kinked = bool(((depths > zlo) & (depths < zhi)).any())
    mid, half_range = 0.5 * (zlo + zhi), 0.5 * (zhi - zlo)
    if not kinked:
        h0, h1, h2 = legs([zlo, mid, zhi])
        if np.isfinite([h0, h1, h2]).all():
            def leg(zz):
                u = np.clip((zz - mid) / half_range, -1.0, 1.0)
                return h0 * u * (u - 1.0) / 2.0 + h1 * (1.0 - u * u) + h2 * u * (u + 1.0) / 2.0

            return leg(zs) + leg(zr)
    grid = np.linspace(zlo, zhi, max(3, depth_samples))
    half = legs(grid)
    return np.interp(zs, grid, half) + np.interp(zr, grid, half)


def critical_distances(model, interface: str, source_depth_m, receiver_depth_m, *, wave: str = "P",
                       midpoint_chainage_m=None, spherical=False, group_m: float = 2000.0,
                       depth_samples: int = 17) -> np.ndarray:
    """Critical distance of an interface for each source–receiver pair, in metres.

    The offset beyond which the reflection from ``interface`` is post-critical (wide
    angle): the head wave along it begins there.  For two constant layers over a
    half-space with source and receiver at the surface this is
    :math:`x_c = 2 h \\tan(\\arcsin(v_1 / v_2))`.

    Parameters
    ----------
    model : LayeredModel
        1D or 2D.  A 2D model is taken as the 1D column under each pair's midpoint,
        grouped every ``group_m`` of midpoint chainage (as the rays stage solves it).
    interface : str
        Interface name.
    source_depth_m, receiver_depth_m : array_like
        Depths below the datum, in metres (negative above it), one per pair.
    wave : {'P', 'S'}
        Wave type.
    midpoint_chainage_m : array_like, optional
        Midpoint chainages, in metres; needed for a 2D model.
    spherical : bool or array_like of bool
        Spherical Earth, for all pairs or per pair.
    group_m : float
        Width of the midpoint groups of a 2D model, in metres.
    depth_samples : int
        Where an interface lies between the shallowest and deepest source or
        receiver of a column, each leg is computed at this many depths and
        interpolated linearly; otherwise at three, through which a parabola is
        drawn (to about 1e-5 of the distance in the crustal models tried).

    Returns
    -------
    numpy.ndarray
        Critical distance per pair, in metres; NaN where the interface has no head
        wave (the layer below is not faster than every layer above) or lies above the
        source or receiver.
    """
    zs, zr = np.broadcast_arrays(np.asarray(source_depth_m, float), np.asarray(receiver_depth_m, float))
    zs, zr = zs.ravel(), zr.ravel()
    n = zs.size
    sph = np.broadcast_to(np.asarray(spherical, bool), (n,)) if np.ndim(spherical) else np.full(n, bool(spherical))
    out = np.full(n, np.nan)
    if n == 0:
        return out
    if model.is_1d:
        key = np.zeros(n, np.int64)
    else:
        if midpoint_chainage_m is None:
            raise ValueError("a 2D model needs the midpoint chainages of the pairs")
        mch = np.broadcast_to(np.asarray(midpoint_chainage_m, float), (n,))
        key = np.where(np.isfinite(mch), np.floor(np.nan_to_num(mch) / group_m), np.iinfo(np.int64).min)
        key = key.astype(np.int64)
    combo = key * 2 + sph.astype(np.int64)
    for c in np.unique(combo):  # a loop over midpoint columns (and at most two Earth shapes), not over pairs
        sel = np.flatnonzero(combo == c)
        k = int(key[sel[0]])
        if k == np.iinfo(np.int64).min:
            continue
        col = model if model.is_1d else model.column(float((k + 0.5) * group_m))
        out[sel] = _column_critical(col, interface, wave, zs[sel], zr[sel], bool(sph[sel[0]]), depth_samples)
    return out


@dataclass(frozen=True)
class WideAngle:
    """Offsets recorded beyond the critical distance of an interface.

    Attributes
    ----------
    critical_m : float
        Median critical distance over the pairs, in metres (NaN: no head wave).
    critical_min_m, critical_max_m : float
        Range of the per-pair critical distances, in metres.
    count : int
        Pairs whose offset exceeds their critical distance.
    offset_min_m, offset_max_m : float
        Range of those offsets, in metres (NaN when there are none).
    """

    critical_m: float
    critical_min_m: float
    critical_max_m: float
    count: int
    offset_min_m: float
    offset_max_m: float

    @property
    def reached(self) -> bool:
        """True when at least one offset lies beyond the critical distance."""
        return self.count > 0


def wide_angle(offset_m, critical_m) -> WideAngle:
    """Count the offsets beyond their critical distance (strictly larger), with their range.

    Parameters
    ----------
    offset_m : array_like
        Source–receiver offsets, in metres.
    critical_m : array_like
        Critical distance per pair (or one for all), in metres; NaN: none.

    >>> w = wide_angle([10e3, 20e3, 30e3], 15e3)
    >>> w.count, w.offset_min_m, w.offset_max_m
    (2, 20000.0, 30000.0)
    """
    off, xc = np.broadcast_arrays(np.asarray(offset_m, float), np.asarray(critical_m, float))
    off, xc = off.ravel(), xc.ravel()
    fin = np.isfinite(xc)
    beyond = fin & np.isfinite(off) & (off > xc)
    nan = float("nan")
    crit = (float(np.median(xc[fin])), float(xc[fin].min()), float(xc[fin].max())) if fin.any() else (nan, nan, nan)
    if beyond.any():
        return WideAngle(*crit, int(beyond.sum()), float(off[beyond].min()), float(off[beyond].max()))
    return WideAngle(*crit, 0, nan, nan)


# --------------------------------------------------------------------------- per interface


@dataclass
class InterfaceCoverage:
    """How one reflection phase samples its interface.

    Attributes
    ----------
    phase : str
        The phase, e.g. ``'reflection:moho'``.
    interface : str
        The interface it reflects from.
    label : str
        A label for tables and figures.
    edges_m : numpy.ndarray
        Chainage bin edges, in metres.
    fold : numpy.ndarray
        Reflection points per bin.
    n_points : int
        Reflection points counted.
    span_m : (float, float)
        First and last chainage sampled, in metres.
    gap_start_m, gap_end_m : numpy.ndarray
        Gaps longer than ``gap_m``, in metres.
    largest_m : (float, float)
        Ends of the longest stretch between consecutive points (a gap or not), in metres.
    wide : WideAngle
        Offsets recorded beyond the critical distance.
    max_offset_m : float
        Largest offset with a reflection point, in metres.
    gap_m : float
        The gap threshold used, in metres.
    """

    phase: str
    interface: str
    label: str
    edges_m: np.ndarray
    fold: np.ndarray
    n_points: int
    span_m: tuple[float, float]
    gap_start_m: np.ndarray
    gap_end_m: np.ndarray
    largest_m: tuple[float, float]
    wide: WideAngle
    max_offset_m: float
    gap_m: float
    extra: dict = field(default_factory=dict)

    @property
    def covered_m(self) -> float:
        """Length of the sampled span, in metres (0 when fewer than two points)."""
        a, b = self.span_m
        return float(b - a) if np.isfinite(a) else 0.0

    @property
    def largest_gap_m(self) -> float:
        """Length of the longest stretch without a reflection point inside the span, in metres (NaN if none)."""
        a, b = self.largest_m
        return float(b - a)

    @property
    def n_gaps(self) -> int:
        return int(self.gap_start_m.size)

    @property
    def centres_m(self) -> np.ndarray:
        """Bin centres, in metres."""
        return 0.5 * (self.edges_m[:-1] + self.edges_m[1:])


def interface_coverage(phase: str, point_chainage_m, offset_m, critical_m, edges_m, gap_m: float, *,
                       interface: str | None = None, label: str | None = None) -> InterfaceCoverage:
    """The coverage summary of one reflection phase.

    Parameters
    ----------
    phase : str
        Phase name.
    point_chainage_m : array_like
        Reflection-point chainages, in metres, one per pair with a reflection point.
    offset_m : array_like
        The offsets of those pairs, in metres.
    critical_m : array_like
        Their critical distances, in metres (see :func:`critical_distances`).
    edges_m : array_like
        Chainage bin edges, in metres.
    gap_m : float
        Gap threshold, in metres.
    interface, label : str, optional
        Default: the part of the phase after the last colon, and the phase.
    """
    ch = np.asarray(point_chainage_m, float).ravel()
    off = np.asarray(offset_m, float).ravel()
    ok = np.isfinite(ch)
    gs, ge = find_gaps(ch[ok], gap_m)
    if off.size != ch.size:
        raise ValueError(f"{ch.size} reflection points but {off.size} offsets")
    off_ok = off[ok]
    xc = np.broadcast_to(np.asarray(critical_m, float), ch.shape)[ok]
    return InterfaceCoverage(
        phase=phase, interface=interface or phase.rsplit(":", 1)[-1], label=label or phase,
        edges_m=np.asarray(edges_m, float), fold=fold_per_bin(ch[ok], edges_m), n_points=int(ok.sum()),
        span_m=sampled_span(ch[ok]), gap_start_m=gs, gap_end_m=ge, largest_m=largest_gap(ch[ok]),
        wide=wide_angle(off_ok, xc), max_offset_m=float(np.nanmax(off_ok)) if np.isfinite(off_ok).any()
        else float("nan"), gap_m=float(gap_m))


@dataclass(frozen=True)
class DesignCheck:
    """The survey-design check of one interface.

    Attributes
    ----------
    depth_m : float
        Interface depth below the sources and receivers (their median level), in metres.
    max_offset_m : float
        Largest offset recorded with a reflection point, in metres.
    targets_m : tuple of float
        The offsets of :data:`WIDE_ANGLE_DEPTH_FACTORS` times the depth, in metres.
    critical_m : float
        Median critical distance, in metres (NaN: the interface has no head wave).
    reaches_critical : bool
        Some offset lies beyond the critical distance.
    """

    depth_m: float
    max_offset_m: float
    targets_m: tuple[float, ...]
    critical_m: float
    reaches_critical: bool

    @property
    def ratio(self) -> float:
        """Largest offset over the depth."""
        return self.max_offset_m / self.depth_m if self.depth_m > 0 else float("nan")

    @property
    def reaches_targets(self) -> tuple[bool, ...]:
        """Whether the largest offset reaches each target offset."""
        return tuple(bool(self.max_offset_m >= t) for t in self.targets_m)

    @property
    def verdict(self) -> str:
        """'yes' (at least the larger target), 'about' (between the targets) or 'no'."""
        r = self.reaches_targets
        if r and all(r):
            return "yes"
        if r and r[0]:
            return "about"
        return "no"


def design_check(coverage: InterfaceCoverage, interface_depth_m: float, surface_depth_m: float = 0.0,
                 factors: tuple[float, ...] = WIDE_ANGLE_DEPTH_FACTORS) -> DesignCheck:
    """Whether the offsets reach about 4–5 times the interface depth and its critical distance.

    Parameters
    ----------
    coverage : InterfaceCoverage
    interface_depth_m : float
        Depth of the interface below the datum, in metres.
    surface_depth_m : float
        Typical depth of the sources and receivers below the datum, in metres
        (negative above it); the depth that counts is measured from there.
    factors : tuple of float
        Multiples of the depth (default :data:`WIDE_ANGLE_DEPTH_FACTORS`, a rule of
        thumb: common practice, no source).
    """
    h = float(interface_depth_m) - float(surface_depth_m)
    return DesignCheck(depth_m=h, max_offset_m=coverage.max_offset_m, targets_m=tuple(f * h for f in factors),
                       critical_m=coverage.wide.critical_m, reaches_critical=coverage.wide.reached)


# --------------------------------------------------------------------------- candidate stations


@dataclass
class GapShrink:
    """The largest gap of an interface after adding each candidate's reflection points.

    Attributes
    ----------
    before_m : (float, float)
        Ends of the largest gap now, in metres.
    largest_m : numpy.ndarray
        Per candidate: length of the largest gap with its points added, in metres.
    start_m, end_m : numpy.ndarray
        Per candidate: the ends of that gap, in metres.
    total_gap_m : numpy.ndarray
        Per candidate: total length of the gaps longer than ``gap_m`` left, in metres.
    inside : numpy.ndarray
        Per candidate: its reflection points that fall inside the sampled span.
    exact : numpy.ndarray of bool
        False where the new largest gap is only bounded from above (see :func:`gaps_after_adding`).
    """

    before_m: tuple[float, float]
    largest_m: np.ndarray
    start_m: np.ndarray
    end_m: np.ndarray
    total_gap_m: np.ndarray
    inside: np.ndarray
    exact: np.ndarray

    @property
    def shrink_m(self) -> np.ndarray:
        """How much each candidate shortens the largest gap, in metres."""
        return (self.before_m[1] - self.before_m[0]) - self.largest_m


def gaps_after_adding(existing_m, added_m, *, gap_m: float, keep: int = 32,
                      max_cells: int = 4_000_000) -> GapShrink:
    """Recompute the largest gap with each candidate's reflection points added, for all candidates at once.

    Parameters
    ----------
    existing_m : array_like
        Chainages of the survey's reflection points on one interface, in metres.
    added_m : array_like, shape (C, S)
        Reflection-point chainages each of ``C`` candidates would add (one per shot;
        NaN where there is none), in metres.
    gap_m : float
        Gap threshold for ``total_gap_m``, in metres.
    keep : int
        Besides every interval longer than ``gap_m``, the ``keep`` longest intervals
        between existing points are tracked.
    max_cells : int
        Candidates are processed in chunks of at most this many (candidate × interval
        × point) cells.

    Returns
    -------
    GapShrink

    Notes
    -----
    Gaps are counted inside the survey's sampled span: added points outside it are
    ignored (they extend the span, which :func:`sampled_span` reports).  An added
    point splits the interval of existing points it falls in; every tracked interval
    is split by clipping the candidate's sorted points to its ends and taking the
    longest difference.  Intervals not tracked are all no longer than the longest of
    them (``floor``) and can only shrink, so the new largest gap is exact whenever it
    exceeds ``floor``; otherwise it is reported as ``floor`` with ``exact`` False.
    """
    p = _sorted_points(existing_m)
    q = np.atleast_2d(np.asarray(added_m, float))
    n_c = q.shape[0]
    nan = np.full(n_c, np.nan)
    if p.size < 2:
        return GapShrink((np.nan, np.nan), nan, nan.copy(), nan.copy(), nan.copy(), np.zeros(n_c, np.int64),
                         np.zeros(n_c, bool))
    a_all, b_all = p[:-1], p[1:]
    length = b_all - a_all
    order = np.argsort(-length, kind="stable")
    n_keep = min(order.size, max(int(keep), int((length > gap_m).sum())))
    tracked = order[:n_keep]
    floor = float(length[order[n_keep]]) if n_keep < order.size else 0.0
    a, b = a_all[tracked], b_all[tracked]
    k0 = int(order[0])
    before = (float(a_all[k0]), float(b_all[k0]))
    q = np.sort(np.where(np.isfinite(q), q, np.inf), axis=1)  # missing points sort to the end, clip to b
    inside = ((q > p[0]) & (q < p[-1])).sum(axis=1)
    largest = np.empty(n_c)
    start = np.empty(n_c)
    end = np.empty(n_c)
    total = np.empty(n_c)
    n_s = q.shape[1]
    step = max(1, max_cells // max(1, n_keep * (n_s + 2)))
    for c0 in range(0, n_c, step):  # a loop over chunks of candidates
        qq = q[c0:c0 + step]
        m = qq.shape[0]
        lo = np.broadcast_to(a[None, :, None], (m, n_keep, 1))
        hi = np.broadcast_to(b[None, :, None], (m, n_keep, 1))
        clipped = np.clip(qq[:, None, :], lo, hi)
        ext = np.concatenate([lo, clipped, hi], axis=2)  # (m, K, S + 2), sorted along the last axis
        d = np.diff(ext, axis=2)
        j = np.argmax(d, axis=2)  # longest piece of each tracked interval
        piece = np.take_along_axis(d, j[..., None], axis=2)[..., 0]
        kbest = np.argmax(piece, axis=1)
        rows = np.arange(m)
        largest[c0:c0 + m] = piece[rows, kbest]
        jb = j[rows, kbest]
        start[c0:c0 + m] = ext[rows, kbest, jb]
        end[c0:c0 + m] = ext[rows, kbest, jb + 1]
        total[c0:c0 + m] = np.where(d > gap_m, d, 0.0).sum(axis=(1, 2))
    exact = (largest > floor) | (n_keep == order.size)
    if not exact.all():
        k_floor = int(order[n_keep]) if n_keep < order.size else k0
        largest = np.where(exact, largest, floor)
        start = np.where(exact, start, a_all[k_floor])
        end = np.where(exact, end, b_all[k_floor])
    return GapShrink(before, largest, start, end, total, inside.astype(np.int64), exact)


def rank_by_gap(shrink: GapShrink, chainage_m) -> np.ndarray:
    """Candidate order, best first: smallest new largest gap, then least total gap, then lowest chainage."""
    ch = np.asarray(chainage_m, float)
    largest = np.where(np.isfinite(shrink.largest_m), shrink.largest_m, np.inf)
    total = np.where(np.isfinite(shrink.total_gap_m), shrink.total_gap_m, np.inf)
    return np.lexsort((ch, total, largest))
