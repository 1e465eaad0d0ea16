"""Exact travel times in a 1D layered model, vectorised over offsets.

The model is a stack of layers, each with a velocity linear in depth (a
constant velocity is the special case of zero gradient); the last layer is a
half-space.  Every ray is described by its horizontal slowness ``p`` (s/m),
constant along the ray (Snell's law), and the offset and time of each layer
crossing have closed forms.  For a piece of layer from depth :math:`z_a` to
:math:`z_b` with velocities :math:`v_a, v_b` and gradient :math:`g`, writing
:math:`c = \\sqrt{1 - p^2 v^2}` (the cosine of the angle from vertical) and
:math:`h = z_b - z_a`,

.. math::

    X = \\frac{c_a - c_b}{g p} = \\frac{p\\,h\\,(v_a + v_b)}{c_a + c_b}, \\qquad
    T = \\frac{1}{g}\\ln\\frac{v_b\\,(1 + c_a)}{v_a\\,(1 + c_b)},

which for :math:`g \\to 0` become the constant-velocity forms
:math:`X = h p v / c` and :math:`T = h / (v c)`.  The second form of ``X`` and a
``log1p`` rewriting of ``T`` hold for any gradient (including zero) without
cancellation; they are derived in ``docs/methods-traveltime.md``.  A ray that
bottoms in a layer (at :math:`v = 1/p`) uses the same forms with :math:`c_b = 0`.

The offset of a phase is the sum of the layer offsets of all its legs,
:math:`X(p)`.  For a given offset the ray parameter is found for all offsets at
once by a safeguarded Newton iteration with a bisection fallback (the bracket
is kept for every ray), starting from an interpolated table of :math:`X(p)`.
Head waves need no iteration: their ray parameter is the slowness of the
refractor.

With ``spherical=True`` the same layers are spherical shells; see
:mod:`geosect.model.spherical` for the exact chord forms of constant-velocity
shells and the sub-layered flattening of gradient shells.

Points above the model top (stations on topography above a flat datum) lie in
the top layer: its velocity law continues upward,
:math:`v(z) = v_{top} + g_{top}(z - z_{top})`, which for a constant top layer is
simply its velocity.  A point where that velocity would not be positive gets
the status ``outside_model``.

Status values
-------------
``ok``; ``no_ray`` (no ray of this kind joins the points, for example a
reflection beyond its grazing offset, or a direct wave that would leave its
layer); ``below_critical_distance`` (head or turning wave before it starts);
``not_head_wave_interface`` (the layer below is not faster than every layer
the ray crosses above); ``endpoint_below_interface`` (a source or receiver
below the reflector or refractor); ``pinched_out`` (the layer below the
interface has no thickness here); ``outside_model``; ``bad_offset`` (offset
not finite); ``not_converged`` (should not happen; reported, never hidden).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from geosect.model import _kernels as _k
from geosect.model import spherical as sph

__all__ = [
    "Column",
    "RaySolution",
    "STATUS_CODES",
    "solve_column",
    "critical_distance_column",
    "crossover_distance_column",
    "leg_time_to_point",
]

STATUS_CODES: tuple[str, ...] = (
    "ok",
    "no_ray",
    "below_critical_distance",
    "not_head_wave_interface",
    "endpoint_below_interface",
    "pinched_out",
    "outside_model",
    "bad_offset",
    "not_converged",
)
_OK, _NO_RAY, _BELOW_CRIT, _NOT_HEAD, _BELOW_IF, _PINCHED, _OUTSIDE, _BAD, _NOCONV = range(9)
_STATUS_ARRAY = np.array(STATUS_CODES, dtype=object)


# --------------------------------------------------------------------------- column


@dataclass(frozen=True)
class Column:
    """A 1D velocity column for one wave type.

    Attributes
    ----------
    top_m : numpy.ndarray
        Depth of the top of each layer, metres, non-decreasing; ``top_m[0]`` is
        the model top.
    v_top_ms : numpy.ndarray
        Velocity at the top of each layer, m/s.
    gradient_per_s : numpy.ndarray
        Velocity gradient dv/dz in each layer, 1/s (the last layer is a
        half-space).
    """

    top_m: np.ndarray
    v_top_ms: np.ndarray
    gradient_per_s: np.ndarray

    @property
    def n_layers(self) -> int:
        return int(self.top_m.size)

    @property
    def bottom_m(self) -> np.ndarray:
        """Depth of the bottom of each layer (inf for the half-space), metres."""
        return np.append(self.top_m[1:], np.inf)

    @property
    def thickness_m(self) -> np.ndarray:
        return self.bottom_m - self.top_m

    def v_bottom_ms(self) -> np.ndarray:
        """Velocity at the bottom of each layer (half-space: at infinity), m/s."""
        with np.errstate(invalid="ignore"):
            vb = self.v_top_ms + self.gradient_per_s * self.thickness_m
        vb[-1] = np.inf if self.gradient_per_s[-1] > 0 else (
            self.v_top_ms[-1] if self.gradient_per_s[-1] == 0 else -np.inf)
        return vb

    def layer_of(self, z: np.ndarray) -> np.ndarray:
        """Layer index holding depth z (a point on an interface belongs to the layer below)."""
        return np.searchsorted(self.top_m[1:], z, side="right")

    def velocity(self, z: np.ndarray) -> np.ndarray:
        """Velocity at depth z (m/s), the top layer's law continued above the top."""
        k = self.layer_of(z)
        return self.v_top_ms[k] + self.gradient_per_s[k] * (z - self.top_m[k])


# --------------------------------------------------------------------------- stack


def _flat(a, shape) -> np.ndarray:
    """A contiguous, writable 1D float copy-or-view of ``a`` broadcast to ``shape``."""
    a = np.asarray(a, dtype=float)
    if a.shape != shape or not a.flags.c_contiguous or not a.flags.writeable:
        a = np.array(np.broadcast_to(a, shape), dtype=float, order="C")
    return a.ravel()



class _Stack:
    """The column cut into segments in solver form (flat or spherical).

    kinds: 0 linear in depth (flat), 1 constant-velocity spherical shell,
    2 flattened sub-layer of a spherical gradient shell (linear in z_f).
    """

    def __init__(self, col: Column, spherical: bool, z_min: float,
                 radius_m: float = sph.EARTH_RADIUS_M):
        self.col = col
        self.spherical = spherical
        self.R = radius_m
        tops, bots, kinds, layers, a, b = [], [], [], [], [], []
        # a, b: kind 0 -> (v at segment top, gradient); kind 1 -> (v, 0);
        #       kind 2 -> (vf at top, gradient of vf in z_f)
        zf_top = []
        col_bot = col.bottom_m
        for k in range(col.n_layers):
            zt = float(col.top_m[k])
            zb = float(col_bot[k])
            g = float(col.gradient_per_s[k])
            vt = float(col.v_top_ms[k])
            if k == 0 and z_min < zt:
                vt = vt + g * (z_min - zt)
                zt = z_min
            if zb <= zt:
                continue
            if not spherical:
                tops.append(zt), bots.append(zb), kinds.append(0), layers.append(k)
                a.append(vt), b.append(g), zf_top.append(zt)
                continue
            if g == 0.0:
                zb_s = min(zb, radius_m)
                tops.append(zt), bots.append(zb_s), kinds.append(1), layers.append(k)
                a.append(vt), b.append(0.0), zf_top.append(np.nan)
                continue
            if not np.isfinite(zb):
                # gradient half-space on a sphere: cut it down to a finite depth
                zb = min(zt + 1.0e6, 0.5 * radius_m)
            nodes = sph.sublayer_depths(zt, zb, vt, g, radius_m)
            vnodes = sph.flattened_velocity(vt + g * (nodes - zt), nodes, radius_m)
            zfn = sph.flatten_depth(nodes, radius_m)
            for j in range(nodes.size - 1):
                tops.append(nodes[j]), bots.append(nodes[j + 1]), kinds.append(2), layers.append(k)
                a.append(vnodes[j])
                b.append((vnodes[j + 1] - vnodes[j]) / (zfn[j + 1] - zfn[j]))
                zf_top.append(zfn[j])
        self.top = np.array(tops, dtype=float)
        self.bot = np.array(bots, dtype=float)
        self.kind = np.array(kinds, dtype=np.int64)
        self.layer = np.array(layers, dtype=np.int64)
        self.a = np.array(a, dtype=float)
        self.b = np.array(b, dtype=float)
        self.zf_top = np.array(zf_top, dtype=float)

    def arrays(self):
        """Segment arrays and radius, in the order the kernels take them."""
        return self.top, self.bot, self.kind, self.a, self.b, self.zf_top, self.R

    # -- velocities in solver coordinates

    def _v_in(self, k: int, z: np.ndarray) -> np.ndarray:
        kind = self.kind[k]
        if kind == 0:
            return self.a[k] + self.b[k] * (z - self.top[k])
        if kind == 1:
            return sph.flattened_velocity(self.a[k], z, self.R)
        zf = sph.flatten_depth(z, self.R)
        return self.a[k] + self.b[k] * (zf - self.zf_top[k])

    def v_point(self, z: np.ndarray | float, side: str = "below") -> np.ndarray:
        """Solver velocity at depth z, from the segment below (or above) it."""
        z = np.asarray(z, dtype=float)
        if side == "below":
            k = np.searchsorted(self.top, z, side="right") - 1
        else:
            k = np.searchsorted(self.bot, z, side="left")
        k = np.clip(k, 0, self.top.size - 1)
        out = np.empty(np.broadcast(z, k).shape)
        zb = np.broadcast_to(z, out.shape)
        kb = np.broadcast_to(k, out.shape)
        for kk in np.unique(kb):
            m = kb == kk
            out[m] = self._v_in(int(kk), zb[m])
        return out

    def vmax(self, z_from: np.ndarray, z_to: np.ndarray) -> np.ndarray:
        """Largest solver velocity on [z_from, z_to] (per ray; -inf where empty)."""
        z_from, z_to = np.broadcast_arrays(np.asarray(z_from, float), np.asarray(z_to, float))
        out = np.full(z_from.shape, -np.inf)
        for k in range(self.top.size):
            za = np.clip(z_from, self.top[k], self.bot[k])
            zb = np.clip(z_to, self.top[k], self.bot[k])
            m = zb > za
            if not m.any():
                continue
            va = self._v_in(k, za[m])
            vb = self._v_in(k, zb[m])
            out[m] = np.maximum(out[m], np.maximum(va, vb))
        return out

    # -- one leg

    def leg(self, p, z_from, z_to, turn: bool = False):
        """Sum of segment integrals from depth z_from down to z_to, per ray.

        Returns X (m), dX/dp, T (s), turned (bool) and the bottoming depth
        (m; NaN where the ray did not bottom).
        """
        shape = np.broadcast_shapes(np.shape(p), np.shape(z_from), np.shape(z_to))
        out = _k.leg_many(_flat(p, shape), _flat(z_from, shape), _flat(z_to, shape), self.top,
                          self.bot, self.kind, self.a, self.b, self.zf_top, self.R, turn)
        return tuple(o.reshape(shape) for o in out)


# --------------------------------------------------------------------------- root finding


def _find_root(xfun, args, x, lo, hi, s0, maxiter: int = 200):
    """Solve xfun(s, *args) = x for s in [lo, hi] per ray (X increasing in s).

    Safeguarded Newton: a Newton step is taken when it stays inside the bracket
    and the residual keeps halving; otherwise the bracket is bisected.
    Returns s and a convergence mask.
    """
    n = x.size
    s = np.clip(s0.astype(float).copy(), lo, hi)
    lo = lo.astype(float).copy()
    hi = hi.astype(float).copy()
    tol = 1e-8 + 1e-14 * np.abs(x)
    done = np.zeros(n, dtype=bool)
    f_prev = np.full(n, np.inf)
    idx = np.arange(n)
    for _ in range(maxiter):
        if idx.size == 0:
            break
        sub = tuple(a[idx] if np.ndim(a) else a for a in args)
        X, dX = xfun(s[idx], *sub)
        f = X - x[idx]
        conv = np.abs(f) <= tol[idx]
        neg = f < 0
        lo_i = np.where(neg, s[idx], lo[idx])
        hi_i = np.where(neg, hi[idx], s[idx])
        lo[idx], hi[idx] = lo_i, hi_i
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            newton = s[idx] - f / dX
        use_newton = (np.isfinite(newton) & (newton > lo_i) & (newton < hi_i)
                      & (np.abs(f) <= 0.5 * f_prev[idx]))
        nxt = np.where(use_newton, newton, 0.5 * (lo_i + hi_i))
        tiny = (hi_i - lo_i) <= 4e-16 * np.maximum(np.abs(hi_i), 1e-300)
        finished = conv | tiny
        done[idx[finished]] = True
        f_prev[idx] = np.abs(f)
        s[idx] = np.where(finished, s[idx], nxt)
        idx = idx[~finished]
    return s, done


def _table_guess(xfun, ref_args, lo: float, hi: float, x: np.ndarray, n: int = 1024) -> np.ndarray:
    """Initial s for X(s) = x: cubic Hermite inverse interpolation of a table of
    X(s) and dX/ds computed for reference endpoints."""
    if not (np.isfinite(lo) and np.isfinite(hi)) or hi <= lo:
        return np.full(x.shape, lo if np.isfinite(lo) else 0.0)
    u = np.linspace(0.0, 1.0, n)
    grid = lo + (hi - lo) * np.sin(0.5 * np.pi * u)
    grid[-1] = hi - (hi - lo) * 1e-12
    args = tuple(np.full(n, float(a)) for a in ref_args)
    Xg, dg = xfun(grid, *args)
    good = np.isfinite(Xg) & np.isfinite(dg) & (dg > 0)
    good[1:] &= np.diff(Xg) > 0
    if good.sum() < 2:
        return np.full(x.shape, lo)
    Xg, grid, dg = Xg[good], grid[good], dg[good]
    return _k.hermite_inverse(np.ascontiguousarray(x, dtype=float), Xg, grid, dg, float(lo),
                              float(hi))


# --------------------------------------------------------------------------- solution


@dataclass
class RaySolution:
    """Result of :func:`solve_column` (all arrays have the broadcast input shape).

    Attributes
    ----------
    time_s : numpy.ndarray
        Travel time, seconds; NaN where no such ray.
    p_s_per_m : numpy.ndarray
        Horizontal slowness at the datum, s/m (the ray parameter on a flat Earth).
    p_s_per_rad : numpy.ndarray or None
        Spherical ray parameter :math:`r\\sin i / v`, s/rad (spherical only).
    point_distance_m, point_depth_m : numpy.ndarray
        Reflection point: horizontal distance from the source (m; on a sphere
        the arc length at the datum) and depth (m).  NaN for other phases.
    incidence_deg : numpy.ndarray
        Angle between the ray and the vertical at the reflection point, degrees.
    status_code : numpy.ndarray of int8
        Index into :data:`STATUS_CODES`; :attr:`status` gives the names.
    arrival_code : numpy.ndarray of int16
        Index into :attr:`arrival_names`; :attr:`arrival` gives the names.
    arrival_names : tuple of str
        The phases the rows refer to (for ``first``: the phase that arrives first).
    path_distance_m, path_depth_m : numpy.ndarray or None
        Ray path points from source to receiver, shape ``(..., n_points)``,
        padded with NaN; only when asked for.
    """

    time_s: np.ndarray
    p_s_per_m: np.ndarray
    p_s_per_rad: np.ndarray | None
    point_distance_m: np.ndarray
    point_depth_m: np.ndarray
    incidence_deg: np.ndarray
    status_code: np.ndarray
    arrival_code: np.ndarray
    arrival_names: tuple
    spherical: bool = False
    path_distance_m: np.ndarray | None = None
    path_depth_m: np.ndarray | None = None

    @property
    def status(self) -> np.ndarray:
        """``'ok'`` or the reason there is no time, per row (object array of str)."""
        return _STATUS_ARRAY[self.status_code]

    @property
    def ok(self) -> np.ndarray:
        """True where a time was found."""
        return self.status_code == _OK

    @property
    def arrival(self) -> np.ndarray:
        """The phase each row refers to (object array of str)."""
        return np.array(self.arrival_names, dtype=object)[self.arrival_code]

    def __getitem__(self, key: str):
        return getattr(self, key)


class _Work:
    """Flat working arrays of one solve."""

    def __init__(self, n: int):
        self.t = np.full(n, np.nan)
        self.p = np.full(n, np.nan)
        self.pt_x = np.full(n, np.nan)
        self.pt_z = np.full(n, np.nan)
        self.inc = np.full(n, np.nan)
        self.code = np.zeros(n, dtype=np.int8)
        self.path_x: np.ndarray | None = None
        self.path_z: np.ndarray | None = None


# --------------------------------------------------------------------------- phases


def _reflection(st: _Stack, m: int, x, zs, zr, w: _Work, active, want_path: bool):
    col = st.col
    zm = float(col.top_m[m])
    below = (zs > zm) | (zr > zm)
    both_on = (zs == zm) & (zr == zm)
    w.code[active & below] = _BELOW_IF
    w.code[active & ~below & both_on] = _NO_RAY
    use = active & ~below & ~both_on
    if use.all():
        act = np.arange(x.size)
        sel = slice(None)          # every row: plain slices instead of fancy indexing
    else:
        act = np.flatnonzero(use)
        sel = act
    if act.size == 0:
        return
    xs, a_s, a_r = x[sel], zs[sel], zr[sel]
    if a_s.min() == a_s.max() and a_r.min() == a_r.max():   # one source and receiver depth
        vmax1 = max(st.vmax(a_s[0], zm).item(), st.vmax(a_r[0], zm).item())
        pmax = np.full(act.size, 1.0 / vmax1)
    else:
        pmax = 1.0 / np.maximum(st.vmax(a_s, zm), st.vmax(a_r, zm))

    def xfun(p, s_, r_):
        X1, d1, _, _, _ = st.leg(p, s_, zm)
        X2, d2, _, _, _ = st.leg(p, r_, zm)
        return X1 + X2, d1 + d2

    ref = (float(np.median(a_s)), float(np.median(a_r)))
    p_ref_max = 1.0 / max(st.vmax(ref[0], zm).item(), st.vmax(ref[1], zm).item())
    s0 = _table_guess(xfun, ref, 0.0, p_ref_max, xs)
    p, T12, X1, kst = _k.solve_two_legs(xs, a_s, a_r, np.full(xs.size, zm), pmax, s0,
                                        *st.arrays())
    ok = kst == 0
    if not ok.all():
        w.code[act[kst == 1]] = _NO_RAY
        w.code[act[kst == 2]] = _NOCONV
        T12 = np.where(ok, T12, np.nan)
    w.t[sel] = T12
    w.p[sel] = p
    w.pt_x[sel] = X1
    w.pt_z[sel] = zm
    v_above = float(st.v_point(zm, "above"))
    w.inc[sel] = np.degrees(np.arcsin(np.minimum(p * v_above, 1.0)))
    if want_path:
        _path_two_legs(st, w, act, p, xs, a_s, a_r, np.full(act.size, zm), np.full(act.size, zm),
                       turn=False, ok=ok)


def _head(st: _Stack, m: int, x, zs, zr, w: _Work, active, want_path: bool):
    col = st.col
    zm = float(col.top_m[m])
    if m < col.n_layers - 1 and col.thickness_m[m] <= 0:
        w.code[active] = _PINCHED
        return
    below = (zs > zm) | (zr > zm)
    w.code[active & below] = _BELOW_IF
    act = np.flatnonzero(active & ~below)
    if act.size == 0:
        return
    xs, a_s, a_r = x[act], zs[act], zr[act]
    vr = float(st.v_point(zm, "below"))
    vmax = np.maximum(st.vmax(a_s, zm), st.vmax(a_r, zm))
    slow = ~(vr > vmax)
    w.code[act[slow]] = _NOT_HEAD
    act, xs, a_s, a_r = act[~slow], xs[~slow], a_s[~slow], a_r[~slow]
    if act.size == 0:
        return
    p = np.full(act.size, 1.0 / vr)
    X1, _, T1, _, _ = st.leg(p, a_s, zm)
    X2, _, T2, _, _ = st.leg(p, a_r, zm)
    xc = X1 + X2
    short = xs < xc * (1 - 1e-12) - 1e-9
    w.code[act[short]] = _BELOW_CRIT
    t = T1 + T2 + p * (xs - xc)
    w.t[act] = np.where(short, np.nan, t)
    w.p[act] = p
    if want_path:
        _path_two_legs(st, w, act, p, xs, a_s, a_r, np.full(act.size, zm), np.full(act.size, zm),
                       turn=False, ok=~short)


def _turning(st: _Stack, L: int, x, zs, zr, w: _Work, active, want_path: bool):
    col = st.col
    ztop = float(col.top_m[L])
    zbot = float(col.bottom_m[L])
    if col.thickness_m[L] <= 0:
        w.code[active] = _PINCHED
        return
    below = (zs > ztop) | (zr > ztop)
    w.code[active & below] = _BELOW_IF
    act = np.flatnonzero(active & ~below)
    if act.size == 0:
        return
    xs, a_s, a_r = x[act], zs[act], zr[act]
    vt = float(st.v_point(ztop, "below"))
    if np.isfinite(zbot):
        vb = float(st.v_point(zbot, "above"))
        z_lim = zbot
    else:
        z_lim = float(st.bot[-1])
        if st.spherical:
            vb = float(st.v_point(z_lim, "above"))
        else:
            vb = np.inf if col.gradient_per_s[L] > 0 else vt
    if not vb > vt:
        w.code[act] = _NO_RAY
        return
    vmax = np.maximum(st.vmax(a_s, ztop), st.vmax(a_r, ztop))
    shadow = vmax > vt * (1 + 1e-12)
    w.code[act[shadow]] = _NO_RAY
    act, xs, a_s, a_r = act[~shadow], xs[~shadow], a_s[~shadow], a_r[~shadow]
    if act.size == 0:
        return
    pt = 1.0 / vt
    pb = 1.0 / vb if np.isfinite(vb) else 0.0
    span = pt - pb

    def xfun(s, s_, r_):
        p = pt - s
        X1, d1, _, _, _ = st.leg(p, s_, z_lim, turn=True)
        X2, d2, _, _, _ = st.leg(p, r_, z_lim, turn=True)
        return X1 + X2, -(d1 + d2)

    n = act.size
    Xmin, _ = xfun(np.zeros(n), a_s, a_r)
    Xmax, _ = xfun(np.full(n, span), a_s, a_r)
    short = xs < Xmin * (1 - 1e-12)
    far = xs > Xmax
    w.code[act[short]] = _BELOW_CRIT
    w.code[act[far & ~short]] = _NO_RAY
    keep = ~short & ~far
    act, xs, a_s, a_r = act[keep], xs[keep], a_s[keep], a_r[keep]
    if act.size == 0:
        return
    ref = (float(np.median(a_s)), float(np.median(a_r)))
    s0 = _table_guess(xfun, ref, 0.0, span, xs)
    s, ok = _find_root(xfun, (a_s, a_r), xs, np.zeros(act.size), np.full(act.size, span), s0)
    p = pt - s
    _, _, T1, _, _ = st.leg(p, a_s, z_lim, turn=True)
    _, _, T2, _, _ = st.leg(p, a_r, z_lim, turn=True)
    w.t[act] = np.where(ok, T1 + T2, np.nan)
    w.p[act] = p
    w.code[act[~ok]] = _NOCONV
    if want_path:
        _path_two_legs(st, w, act, p, xs, a_s, a_r, np.full(act.size, z_lim),
                       np.full(act.size, z_lim), turn=True)


def _direct(st: _Stack, x, zs, zr, w: _Work, active, want_path: bool):
    col = st.col
    la = col.layer_of(zs)
    lb = col.layer_of(zr)
    same = la == lb
    if st.spherical:
        fast = same & (col.gradient_per_s[la] == 0.0)
    else:
        fast = same
    fa = np.flatnonzero(active & fast)
    if fa.size:
        _direct_closed(st, x, zs, zr, la, w, fa, want_path)
    ga = np.flatnonzero(active & ~fast)
    if ga.size:
        _direct_general(st, x, zs, zr, w, ga, want_path)


def _direct_closed(st: _Stack, x, zs, zr, lay, w: _Work, act, want_path: bool):
    """Closed forms: a straight line or a circular arc in one linear layer (flat),
    a chord in one constant shell (spherical)."""
    col = st.col
    xs, z1, z2, L = x[act], zs[act], zr[act], lay[act]
    top = col.top_m[L]
    bot = col.bottom_m[L]
    v0 = col.v_top_ms[L]
    g = col.gradient_per_s[L]
    if st.spherical:
        T, p, zdeep = sph.chord_direct(xs, z1, z2, v0, st.R)
        bad = zdeep > bot
        w.code[act[bad]] = _NO_RAY
        w.t[act] = np.where(bad, np.nan, T)
        w.p[act] = p
        if want_path:
            _path_chord(st, w, act, xs, z1, z2, bad)
        return
    v1 = v0 + g * (z1 - top)
    v2 = v0 + g * (z2 - top)
    dz = z2 - z1
    D2 = xs * xs + dz * dz
    D = np.sqrt(D2)
    ag = np.abs(g)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        eps = g * g * D2 / (2.0 * v1 * v2)
        t_arc = np.log1p(eps + np.sqrt(eps * (2.0 + eps))) / ag
        t_line = D / v1
        straight = ag * D < 1e-9 * np.minimum(v1, v2)
        T = np.where(straight, t_line, t_arc)
        z0 = top - v0 / np.where(g == 0, np.inf, g)
        a = z1 - z0
        b = z2 - z0
        xc = np.where(xs > 0, (xs * xs + b * b - a * a) / (2.0 * xs), 0.0)
        Rc = np.sqrt(xc * xc + a * a)
        p_arc = np.where(xs > 0, 1.0 / (ag * Rc), 0.0)
        p_line = np.where(D > 0, xs / (v1 * D), 0.0)
        p = np.where(straight, p_line, p_arc)
        inside = (xc > 0) & (xc < xs)
        deepest = np.where(~straight & (g > 0) & inside, z0 + Rc, np.maximum(z1, z2))
        highest = np.where(~straight & (g < 0) & inside, z0 - Rc, np.minimum(z1, z2))
    bad = (deepest > bot) | ((L > 0) & (highest < top))
    w.code[act[bad]] = _NO_RAY
    w.t[act] = np.where(bad, np.nan, T)
    w.p[act] = p
    if want_path:
        _path_arc(w, act, xs, z1, z2, z0, xc, Rc, g, straight, bad)


def _direct_general(st: _Stack, x, zs, zr, w: _Work, act, want_path: bool):
    """Iterative direct wave: up from the deeper point (branch 1) or first down,
    bottoming in the deeper point's layer, and back up (branch 2)."""
    col = st.col
    xs = x[act]
    zhi = np.minimum(zs[act], zr[act])
    zlo = np.maximum(zs[act], zr[act])
    Llo = col.layer_of(zlo)
    zlim = col.bottom_m[Llo]
    if st.spherical:
        zlim = np.minimum(zlim, st.bot[-1])
    vmax1 = st.vmax(zhi, zlo)
    v_lo = st.v_point(zlo, "below")
    vmax1 = np.where(np.isfinite(vmax1), vmax1, v_lo)
    pc = 1.0 / vmax1
    if st.spherical:
        grad_pos = np.ones(act.size, dtype=bool)
    else:
        grad_pos = col.gradient_per_s[Llo] > 0
    branch2 = grad_pos & (v_lo >= vmax1 * (1 - 1e-12))
    with np.errstate(divide="ignore"):
        v_bot = np.where(np.isfinite(zlim), st.v_point(np.where(np.isfinite(zlim), zlim, 0.0),
                                                          "above"), np.inf)
    pb = np.where(np.isfinite(v_bot), 1.0 / v_bot, 0.0)
    lo = np.where(zhi == zlo, 1.0, 0.0)
    hi = np.where(branch2, 2.0, 1.0)

    def xfun(s, zh, zl, pc_, pb_, zli):
        s1 = np.minimum(s, 1.0)
        s2 = np.maximum(s - 1.0, 0.0)
        p = np.where(s <= 1.0, s1 * pc_, pc_ - s2 * (pc_ - pb_))
        X1, d1, _, _, _ = st.leg(p, zh, zl)
        Xt, dt, _, _, _ = st.leg(p, zl, zli, turn=True)
        in2 = s > 1.0
        X = X1 + np.where(in2, 2.0 * Xt, 0.0)
        dXdp = d1 + np.where(in2, 2.0 * dt, 0.0)
        dpds = np.where(in2, -(pc_ - pb_), pc_)
        return X, dXdp * dpds

    args = (zhi, zlo, pc, pb, zlim)
    Xmax, _ = xfun(hi, *args)
    Xmin, _ = xfun(lo, *args)
    far = xs > Xmax * (1 + 1e-12)
    w.code[act[far]] = _NO_RAY
    keep = ~far
    if not keep.any():
        return
    act2 = act[keep]
    args = tuple(a[keep] for a in args)
    xs2, lo2, hi2 = xs[keep], lo[keep], hi[keep]
    s0 = np.clip(np.where(xs2 > Xmin[keep], 0.5 * (lo2 + hi2), lo2), lo2, hi2)
    s, ok = _find_root(xfun, args, xs2, lo2, hi2, s0)
    zh, zl, pc_, pb_, zli = args
    p = np.where(s <= 1.0, s * pc_, pc_ - (s - 1.0) * (pc_ - pb_))
    _, _, T1, _, _ = st.leg(p, zh, zl)
    Xt, _, Tt, _, _ = st.leg(p, zl, zli, turn=True)
    in2 = s > 1.0
    T = T1 + np.where(in2, 2.0 * Tt, 0.0)
    w.t[act2] = np.where(ok, T, np.nan)
    w.p[act2] = p
    w.code[act2[~ok]] = _NOCONV
    if want_path:
        _path_direct_general(st, w, act2, p, xs2, zs[act2], zr[act2], zh, zl, zli, in2)


# --------------------------------------------------------------------------- paths

_PATH_SAMPLES = 24


def _leg_profile(st: _Stack, p, z_from, z_to, turn: bool):
    """Depths and cumulative offsets along a leg from z_from down to z_to (or bottoming)."""
    n = p.size
    X, _, _, turned, zt = st.leg(p, z_from, z_to, turn=turn)
    z_end = np.where(turned, zt, z_to) if turn else z_to
    u = np.linspace(0.0, 1.0, _PATH_SAMPLES)
    zs = z_from[:, None] + (z_end - z_from)[:, None] * u[None, :]
    inner = st.top[(st.top > np.min(z_from)) & (st.top < np.max(z_end))]
    if inner.size:
        zi = np.clip(np.broadcast_to(inner, (n, inner.size)), z_from[:, None], z_end[:, None])
        zs = np.sort(np.concatenate([zs, zi], axis=1), axis=1)
    xs = np.empty_like(zs)
    for j in range(zs.shape[1]):
        xs[:, j] = st.leg(p, z_from, zs[:, j], turn=False)[0]
    xs[:, -1] = X
    return xs, zs


def _store_path(w: _Work, act, px, pz):
    n_all = w.t.size
    m = px.shape[1]
    if w.path_x is None or w.path_x.shape[1] < m:
        old_x, old_z = w.path_x, w.path_z
        w.path_x = np.full((n_all, m), np.nan)
        w.path_z = np.full((n_all, m), np.nan)
        if old_x is not None:
            w.path_x[:, :old_x.shape[1]] = old_x
            w.path_z[:, :old_z.shape[1]] = old_z
    w.path_x[act, :] = np.nan
    w.path_z[act, :] = np.nan
    w.path_x[act, :m] = px
    w.path_z[act, :m] = pz


def _path_two_legs(st, w, act, p, xs, zs, zr, zt_s, zt_r, turn: bool, ok=None):
    x1, z1 = _leg_profile(st, p, zs, zt_s, turn)
    x2, z2 = _leg_profile(st, p, zr, zt_r, turn)
    px = np.concatenate([x1, (xs[:, None] - x2)[:, ::-1]], axis=1)
    pz = np.concatenate([z1, z2[:, ::-1]], axis=1)
    if ok is not None:
        px[~ok] = np.nan
        pz[~ok] = np.nan
    _store_path(w, act, px, pz)


def _path_arc(w, act, xs, z1, z2, z0, xc, Rc, g, straight, bad):
    u = np.linspace(0.0, 1.0, _PATH_SAMPLES)
    px = xs[:, None] * u[None, :]
    zl = z1[:, None] + (z2 - z1)[:, None] * u[None, :]
    with np.errstate(invalid="ignore"):
        rad = np.sqrt(np.maximum(Rc[:, None] ** 2 - (px - xc[:, None]) ** 2, 0.0))
        za = np.where((g > 0)[:, None], z0[:, None] + rad, z0[:, None] - rad)
    pz = np.where(straight[:, None] | (xs[:, None] == 0), zl, za)
    px[bad] = np.nan
    pz[bad] = np.nan
    _store_path(w, act, px, pz)


def _path_chord(st, w, act, xs, z1, z2, bad):
    R = st.R
    u = np.linspace(0.0, 1.0, _PATH_SAMPLES)[None, :]
    r1 = (R - z1)[:, None]
    r2 = (R - z2)[:, None]
    d = (xs / R)[:, None]
    ex = r1 + (r2 * np.cos(d) - r1) * u
    ey = r2 * np.sin(d) * u
    px = R * np.arctan2(ey, ex)
    pz = R - np.hypot(ex, ey)
    px[bad] = np.nan
    pz[bad] = np.nan
    _store_path(w, act, px, pz)


def _path_direct_general(st, w, act, p, xs, zs, zr, zh, zl, zli, in2):
    # branch 1 part: from the deeper point up to the shallower one
    x_up, z_up = _leg_profile(st, p, zh, zl, turn=False)      # from zh down to zl
    X1 = x_up[:, -1:]
    up_x = X1 - x_up[:, ::-1]                                    # measured from the deeper point
    up_z = z_up[:, ::-1]
    xd, zd = _leg_profile(st, p, zl, zli, turn=True)            # bottoming part
    Xt = xd[:, -1:]
    down_x = np.concatenate([xd, (2 * Xt - xd)[:, ::-1]], axis=1)
    down_z = np.concatenate([zd, zd[:, ::-1]], axis=1)
    full_x = np.where(in2[:, None], np.concatenate([down_x, 2 * Xt + up_x], axis=1),
                      np.concatenate([np.zeros_like(down_x), up_x], axis=1))
    full_z = np.where(in2[:, None], np.concatenate([down_z, up_z], axis=1),
                      np.concatenate([np.broadcast_to(zl[:, None], down_z.shape), up_z], axis=1))
    source_deeper = zs >= zr
    px = np.where(source_deeper[:, None], full_x, (xs[:, None] - full_x)[:, ::-1])
    pz = np.where(source_deeper[:, None], full_z, full_z[:, ::-1])
    _store_path(w, act, px, pz)


# --------------------------------------------------------------------------- driver


def _prepare(col: Column, offset_m, source_depth_m, receiver_depth_m):
    """Flat arrays of offsets and depths, the status codes of unusable rows, and the
    shallowest depth the stack must reach."""
    x0 = np.asarray(offset_m, dtype=float)
    zs0 = np.asarray(source_depth_m, dtype=float)
    zr0 = np.asarray(receiver_depth_m, dtype=float)
    shape = np.broadcast_shapes(x0.shape, zs0.shape, zr0.shape)
    n = int(np.prod(shape))
    x = np.abs(np.broadcast_to(x0, shape)).ravel()
    zs = np.array(np.broadcast_to(zs0, shape), dtype=float).ravel()
    zr = np.array(np.broadcast_to(zr0, shape), dtype=float).ravel()
    code = np.zeros(n, dtype=np.int8)
    top = float(col.top_m[0])
    bad = ~np.isfinite(x)
    for z in (zs0, zr0):  # check the given depths, before broadcasting
        if not np.isfinite(z).all():
            bad |= ~np.isfinite(np.broadcast_to(z, shape).ravel())
    code[bad] = _BAD
    if min(np.min(zs0, initial=top), np.min(zr0, initial=top)) < top:
        g, v0 = col.gradient_per_s[0], col.v_top_ms[0]
        with np.errstate(invalid="ignore"):
            outside = ~bad & (((zs < top) & ~(v0 + g * (zs - top) > 0))
                              | ((zr < top) & ~(v0 + g * (zr - top) > 0)))
        code[outside] = _OUTSIDE
    if code.any():
        usable = code == _OK
        x = np.where(usable, x, 0.0)
        zs = np.where(usable, zs, top)
        zr = np.where(usable, zr, top)
    z_min = float(min(top, zs.min(initial=top), zr.min(initial=top)))
    return shape, x, zs, zr, code, z_min


def solve_column(col: Column, offset_m, kind: str, index: int | None = None, *,
                 source_depth_m=0.0, receiver_depth_m=0.0, spherical: bool = False,
                 want_path: bool = False, names: dict | None = None) -> RaySolution:
    """Solve one phase in a 1D column for many offsets at once.

    Parameters
    ----------
    col : Column
        The 1D column for the wave type wanted.
    offset_m : array_like
        Source-receiver distance, metres (on a sphere: arc length along the datum).
    kind : {'direct', 'reflection', 'head', 'turning', 'first'}
        Phase kind.
    index : int or None
        Interface index (reflection, head) or layer index (turning).
    source_depth_m, receiver_depth_m : array_like
        Depths below the datum, metres (negative above it); broadcast with the offsets.
    spherical : bool
        Treat the layers as spherical shells (radius 6371 km at the datum).
    want_path : bool
        Also return ray path points.
    names : dict, optional
        ``{"interfaces": [...], "layers": [...], "wave": "P"}`` for the
        ``arrival`` labels.

    Returns
    -------
    RaySolution
    """
    shape, x, zs, zr, code0, z_min = _prepare(col, offset_m, source_depth_m, receiver_depth_m)
    st = _Stack(col, spherical, z_min)
    names = names or {}
    wave = names.get("wave", "P")
    inames = names.get("interfaces", [f"i{k}" for k in range(col.n_layers)])
    lnames = names.get("layers", [f"layer{k + 1}" for k in range(col.n_layers)])

    def run(kind_, idx_):
        w = _Work(x.size)
        w.code[:] = code0
        active = code0 == _OK
        if kind_ == "reflection":
            _reflection(st, idx_, x, zs, zr, w, active, want_path)
        elif kind_ == "head":
            _head(st, idx_, x, zs, zr, w, active, want_path)
        elif kind_ == "turning":
            _turning(st, idx_, x, zs, zr, w, active, want_path)
        elif kind_ == "direct":
            _direct(st, x, zs, zr, w, active, want_path)
        else:  # pragma: no cover - guarded by the caller
            raise ValueError(kind_)
        w.t[w.code != _OK] = np.nan
        return w

    def label(kind_, idx_):
        if kind_ == "direct":
            return f"{wave}:direct"
        if kind_ == "turning":
            return f"{wave}:turning:{lnames[idx_]}"
        return f"{wave}:{kind_}:{inames[idx_]}"

    labels: list[str] = []
    if kind != "first":
        w = run(kind, index)
        labels.append(label(kind, index))
        arrival = np.zeros(x.size, dtype=np.int16)
    else:
        cands = [("direct", None)]
        for m in range(1, col.n_layers):
            cands += [("reflection", m), ("head", m)]
        for L in range(col.n_layers):
            if col.thickness_m[L] > 0 and (spherical or col.gradient_per_s[L] > 0):
                cands.append(("turning", L))
        labels.append(f"{wave}:first")
        w = None
        arrival = np.zeros(x.size, dtype=np.int16)
        for kind_, idx_ in cands:
            wk = run(kind_, idx_)
            labels.append(label(kind_, idx_))
            code = len(labels) - 1
            if w is None:
                w = wk
                arrival[np.isfinite(wk.t)] = code
                continue
            # a later candidate wins only if clearly earlier (ties keep the simpler phase)
            better = np.isfinite(wk.t) & ~(wk.t >= w.t - 1e-9)
            if better.any():
                for attr in ("t", "p", "pt_x", "pt_z", "inc", "code"):
                    getattr(w, attr)[better] = getattr(wk, attr)[better]
                arrival[better] = code
                if want_path and wk.path_x is not None:
                    _store_path(w, np.flatnonzero(better), wk.path_x[better], wk.path_z[better])
        w.code[(code0 == _OK) & ~np.isfinite(w.t) & (w.code != _NOCONV)] = _NO_RAY
    p_rad = w.p * st.R if spherical else None

    def rs(a):
        return a.reshape(shape)

    path_x = path_z = None
    if want_path and w.path_x is not None:
        path_x = w.path_x.reshape(shape + (w.path_x.shape[1],))
        path_z = w.path_z.reshape(shape + (w.path_z.shape[1],))
    return RaySolution(time_s=rs(w.t), p_s_per_m=rs(w.p),
                       p_s_per_rad=None if p_rad is None else rs(p_rad),
                       point_distance_m=rs(w.pt_x), point_depth_m=rs(w.pt_z),
                       incidence_deg=rs(w.inc), status_code=rs(w.code),
                       arrival_code=rs(arrival), arrival_names=tuple(labels), spherical=spherical,
                       path_distance_m=path_x, path_depth_m=path_z)


def critical_distance_column(col: Column, m: int, *, source_depth_m: float = 0.0,
                             receiver_depth_m: float = 0.0, spherical: bool = False) -> float:
    """Critical distance (m) of the head wave along interface ``m``; NaN if none."""
    shape, x, zs, zr, code, z_min = _prepare(col, 0.0, source_depth_m, receiver_depth_m)
    if code[0] != _OK or m < 1:
        return float("nan")
    st = _Stack(col, spherical, z_min)
    zm = float(col.top_m[m])
    if zs[0] > zm or zr[0] > zm or (m < col.n_layers - 1 and col.thickness_m[m] <= 0):
        return float("nan")
    vr = float(st.v_point(zm, "below"))
    vmax = max(st.vmax(zs[0], zm).item(), st.vmax(zr[0], zm).item())
    if not vr > vmax:
        return float("nan")
    p = np.array([1.0 / vr])
    return float(st.leg(p, zs[:1], zm)[0][0] + st.leg(p, zr[:1], zm)[0][0])


def crossover_distance_column(col: Column, m: int, *, source_depth_m: float = 0.0,
                              receiver_depth_m: float = 0.0, spherical: bool = False) -> float:
    """Offset (m) beyond which the head wave along interface ``m`` arrives before
    every phase that travels above it (direct, shallower head and turning waves,
    reflections from above).  NaN if it never does (a hidden layer)."""
    xc = critical_distance_column(col, m, source_depth_m=source_depth_m,
                                  receiver_depth_m=receiver_depth_m, spherical=spherical)
    if not np.isfinite(xc):
        return float("nan")
    depth = float(col.top_m[m]) - min(source_depth_m, receiver_depth_m, float(col.top_m[0]))
    far = max(50.0 * xc, 200.0 * depth, 1.0)
    grid = np.concatenate([[xc], xc + np.geomspace(1e-3, far, 4000)])

    def diff(xv):
        th = solve_column(col, xv, "head", m, source_depth_m=source_depth_m,
                          receiver_depth_m=receiver_depth_m, spherical=spherical).time_s
        best = np.full(np.shape(xv), np.inf)
        kinds = [("direct", None)] + [("head", k) for k in range(1, m)]
        kinds += [("reflection", k) for k in range(1, m)]
        kinds += [("turning", k) for k in range(m) if spherical or col.gradient_per_s[k] > 0]
        for kd, ix in kinds:
            t = solve_column(col, xv, kd, ix, source_depth_m=source_depth_m,
                             receiver_depth_m=receiver_depth_m, spherical=spherical).time_s
            best = np.fmin(best, np.where(np.isfinite(t), t, np.inf))
        return th - best

    d = diff(grid)
    neg = np.flatnonzero(d <= 0)
    if neg.size == 0:
        return float("nan")
    j = neg[0]
    if j == 0:
        return float(xc)
    a, b = grid[j - 1], grid[j]
    for _ in range(80):
        mid = 0.5 * (a + b)
        if diff(np.array([mid]))[0] <= 0:
            b = mid
        else:
            a = mid
        if b - a < 1e-7 * max(b, 1.0):
            break
    return float(0.5 * (a + b))


def leg_time_to_point(col: Column, horizontal_m, point_depth_m: float, endpoint_depth_m, *,
                      spherical: bool = False):
    """One-way time from an endpoint to a point at a deeper depth, through the layers above it.

    The ray goes monotonically down from the endpoint to the point (arriving
    from above, as a reflected ray does at its reflection point).

    Parameters
    ----------
    horizontal_m : array_like
        Horizontal distance between endpoint and point, metres.
    point_depth_m : float
        Depth of the point, metres.
    endpoint_depth_m : array_like
        Depth of the endpoint, metres (at or above the point).

    Returns
    -------
    time_s, p_s_per_m : numpy.ndarray
        Time (NaN where no such ray) and horizontal slowness.
    """
    rho, ze = np.broadcast_arrays(np.abs(np.asarray(horizontal_m, float)),
                                  np.asarray(endpoint_depth_m, float))
    shape = rho.shape
    rho = rho.ravel()
    ze = ze.ravel()
    zp = float(point_depth_m)
    z_min = float(min(col.top_m[0], ze.min(initial=col.top_m[0])))
    st = _Stack(col, spherical, z_min)
    T = np.full(rho.size, np.nan)
    P = np.full(rho.size, np.nan)
    act = np.flatnonzero(ze < zp)
    if act.size:
        r, z = rho[act], ze[act]
        pmax = 1.0 / st.vmax(z, zp)

        def xfun(p, z_):
            X, d, _, _, _ = st.leg(p, z_, zp)
            return X, d

        s0 = _table_guess(xfun, (float(np.median(z)),), 0.0, float(np.min(pmax)), r)
        zpa = np.full(r.size, zp)
        p, t, _, kst = _k.solve_two_legs(r, z, zpa, zpa, pmax, s0, *st.arrays())
        good = kst == 0
        T[act] = np.where(good, t, np.nan)
        P[act] = np.where(good, p, np.nan)
    return T.reshape(shape), P.reshape(shape)
