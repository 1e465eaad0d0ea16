"""Compiled kernels of the 2D shooting ray tracer (numba).

Everything here works on flat arrays prepared by :mod:`geosect.model.raytrace2d`
(see ``_pack`` there).  The caller traces a whole fan of rays with one call:
the loop over rays is compiled (and shared between threads with ``prange``), so
there is no Python loop over rays anywhere.

Model arrays
------------
Interfaces ``i = 0 .. n_if-1`` are polylines (chainage, depth) held in
``ifx, ifz`` (concatenated, interface ``i`` in ``ifo[i]:ifo[i+1]``), extended
at constant depth beyond their end nodes.  ``ifd`` holds node slopes dz/dx used
for the normal where ``ifsm[i]`` is set (smoothed interfaces); otherwise the
normal is that of the polyline segment.  Interface 0 is the recording surface.
``ifreal[i]`` is 0 for the virtual interfaces of Earth-flattening sub-layers.

Layer ``j`` lies between interfaces ``j`` (top) and ``j + 1`` (bottom; none for
the last layer).  Its velocity law has nodes ``lvx`` (concatenated, offsets
``lvo``) with rows ``lvp`` = (v_top, v_bottom, z_top, z_bottom): between nodes
all four are linear in chainage, and at a chainage the velocity is linear in
depth through (z_top, v_top) and (z_bottom, v_bottom) -- the law of
:class:`geosect.model.LayeredModel`, exactly, when the nodes are the union of
its velocity and interface nodes.  Beyond the end nodes the law is constant
along chainage.  ``lkind[j]`` is 0 (constant: straight rays), 1 (laterally
constant linear gradient: circular arcs, exact) or 2 (lateral change:
fourth-order Runge-Kutta).  ``lgroup[j]`` is the model layer the trace layer
belongs to (sub-layers of one model layer share a group).

Ray program
-----------
``ptype`` 0: reflection from interface ``ptarget``; 1: turning ray in group
``ptarget``.  Status codes are listed in ``STATUS_TEXT`` below.
"""

from __future__ import annotations

import math

import numba
import numpy as np

__all__ = [
    "STATUS_TEXT",
    "trace_rays",
    "interface_depth",
    "layer_velocity",
]

#: Meaning of the kernel's per-ray status codes.
STATUS_TEXT = (
    "ok",                 # 0 reached the recording surface along the phase's path
    "wrong_way",          # 1 turned back before reaching the target
    "post_critical",      # 2 lost at post-critical incidence at an interface
    "escaped",            # 3 left the lateral bounds or the model's bottom
    "too_many_steps",     # 4 event or step budget exhausted
    "left_turning_layer",  # 5 a turning ray crossed the bottom of its layer
    "bad_velocity",       # 6 velocity not positive where the ray went
)

_INF = 1.0e300
_TINY = 1.0e-12

# parameter slots of ``prm``
P_BOX0, P_BOX1, P_HMAX, P_ALPHA, P_EPS, P_TMAX, P_MAXEV, P_MAXSTEP, P_SMIN, P_CUT = range(10)


# ---------------------------------------------------------------------------
# polylines
# ---------------------------------------------------------------------------


@numba.njit(cache=True, inline="always", error_model="numpy")
def _locate(xs, lo, n, x):  # pragma: no cover - compiled
    """Segment index k in [-1, n-1]: xs[lo+k] <= x < xs[lo+k+1] (-1, n-1 = end extensions)."""
    if x < xs[lo]:
        return -1
    if x >= xs[lo + n - 1]:
        return n - 1
    a = 0
    b = n - 1
    while b - a > 1:
        c = (a + b) >> 1
        if xs[lo + c] <= x:
            a = c
        else:
            b = c
    return a


@numba.njit(cache=True, inline="always", error_model="numpy")
def _segment(ifx, ifz, lo, n, k):  # pragma: no cover - compiled
    """End points of segment k; the extensions (k = -1, k = n-1) are flat half-lines."""
    if k < 0:
        return -_INF, ifz[lo], ifx[lo], ifz[lo]
    if k >= n - 1:
        return ifx[lo + n - 1], ifz[lo + n - 1], _INF, ifz[lo + n - 1]
    return ifx[lo + k], ifz[lo + k], ifx[lo + k + 1], ifz[lo + k + 1]


@numba.njit(cache=True, error_model="numpy")
def _depth_slope(ifx, ifz, ifd, ifo, ifsm, i, x):  # pragma: no cover - compiled
    """Depth of interface i at chainage x and the slope dz/dx of its normal there."""
    lo = ifo[i]
    n = ifo[i + 1] - lo
    k = _locate(ifx, lo, n, x)
    if k < 0 or k >= n - 1:
        return ifz[lo + (0 if k < 0 else n - 1)], 0.0
    xa = ifx[lo + k]
    xb = ifx[lo + k + 1]
    za = ifz[lo + k]
    zb = ifz[lo + k + 1]
    h = xb - xa
    t = (x - xa) / h
    z = za + t * (zb - za)
    if ifsm[i] != 0:
        da = ifd[lo + k]
        db = ifd[lo + k + 1]
        m = ((6.0 * t * t - 6.0 * t) * (za - zb) / h + (3.0 * t * t - 4.0 * t + 1.0) * da
             + (3.0 * t * t - 2.0 * t) * db)
    else:
        m = (zb - za) / h
    return z, m


@numba.njit(cache=True, error_model="numpy")
def interface_depth(ifx, ifz, ifo, i, x):  # pragma: no cover - compiled
    """Depths of interface i at the chainages x (array), in metres."""
    out = np.empty(x.size)
    lo = ifo[i]
    n = ifo[i + 1] - lo
    for q in range(x.size):
        k = _locate(ifx, lo, n, x[q])
        if k < 0:
            out[q] = ifz[lo]
        elif k >= n - 1:
            out[q] = ifz[lo + n - 1]
        else:
            t = (x[q] - ifx[lo + k]) / (ifx[lo + k + 1] - ifx[lo + k])
            out[q] = ifz[lo + k] + t * (ifz[lo + k + 1] - ifz[lo + k])
    return out


@numba.njit(cache=True, inline="always", error_model="numpy")
def _quad_roots(a2, a1, a0):  # pragma: no cover - compiled
    """Real roots of a2 u^2 + a1 u + a0 = 0 (stable form); _INF for a missing root."""
    r1 = _INF
    r2 = _INF
    if a2 == 0.0:
        if a1 != 0.0:
            r1 = -a0 / a1
    else:
        disc = a1 * a1 - 4.0 * a2 * a0
        if disc >= 0.0:
            sq = math.sqrt(disc)
            qq = -0.5 * (a1 + (sq if a1 >= 0.0 else -sq))
            if qq != 0.0:
                r1 = qq / a2
                r2 = a0 / qq
    return r1, r2


@numba.njit(cache=True, error_model="numpy")
def _march_line(ifx, ifz, ifo, i, x0, z0, dx, dz, sa, sb, best, want, smin):  # pragma: no cover
    """Crossings of the straight ray with the segments of interface i over distances [sa, sb]."""
    lo = ifo[i]
    n = ifo[i + 1] - lo
    k = _locate(ifx, lo, n, x0 + sa * dx)
    vertical = abs(dx) < _TINY
    step = 1 if dx > 0.0 else -1
    while True:
        xa, za, xb, zb = _segment(ifx, ifz, lo, n, k)
        if xa == -_INF or xb == _INF:  # flat half-line z = za
            if abs(dz) > _TINY:
                s = (za - z0) / dz
                if s > smin and s < best:
                    xs = x0 + s * dx
                    inside = xs <= xb if xa == -_INF else xs >= xa
                    if inside and dz * want > 0.0:
                        best = s
        else:
            ex = xb - xa
            ez = zb - za
            den = dx * ez - dz * ex
            if den != 0.0:
                rx = xa - x0
                rz = za - z0
                s = (rx * ez - rz * ex) / den
                lam = (rx * dz - rz * dx) / den
                if lam >= -1e-12 and lam <= 1.0 + 1e-12 and s > smin and s < best:
                    nd = -ez * dx + ex * dz
                    if nd * want > 0.0:
                        best = s
        if vertical:
            break
        lim = min(sb, best)
        if step > 0:
            if k >= n - 1 or ifx[lo + k + 1] > x0 + lim * dx:
                break
            k += 1
        else:
            if k <= -1 or ifx[lo + k] < x0 + lim * dx:
                break
            k -= 1
    return best


@numba.njit(cache=True, error_model="numpy")
def _cross_line(ifx, ifz, ifo, ifb, i, x0, z0, dx, dz, smax, want, smin):  # pragma: no cover
    """First crossing of the straight ray x0 + s (dx, dz), smin < s < smax, with interface i.

    ``want`` = -1 accepts only crossings going up through the interface (leaving
    a layer through its top), +1 only going down (leaving through the bottom).
    Only the stretch of the ray within the interface's depth range
    ``ifb[i]`` is searched.  Returns the distance s (``smax`` when none).
    """
    zlo = ifb[i, 0] - 1e-7
    zhi = ifb[i, 1] + 1e-7
    if abs(dz) < _TINY:
        if z0 < zlo or z0 > zhi:
            return smax
        sa = 0.0
        sb = smax
    else:
        s1 = (zlo - z0) / dz
        s2 = (zhi - z0) / dz
        sa = max(min(s1, s2), 0.0)
        sb = min(max(s1, s2), smax)
        if sa > sb:
            return smax
    return _march_line(ifx, ifz, ifo, i, x0, z0, dx, dz, sa, sb, smax, want, smin)


@numba.njit(cache=True, inline="always", error_model="numpy")
def _arc_w(u, uc, wc):  # pragma: no cover - compiled
    """Depth offset w of the circular ray at horizontal offset u (cancellation-free)."""
    dd = wc * wc - u * u + 2.0 * u * uc
    if dd < 0.0:
        dd = 0.0
    sgn = 1.0 if wc >= 0.0 else -1.0
    return (u * u - 2.0 * u * uc) / (wc + sgn * math.sqrt(dd))


@numba.njit(cache=True, error_model="numpy")
def _march_arc(ifx, ifz, ifo, i, x0, z0, sx, q, v0, b, dz0, pa, pb, best, bestw, want,
               pmin):  # pragma: no cover - compiled
    """Crossings of the circular ray with the segments of interface i over progress [pa, pb]."""
    lo = ifo[i]
    n = ifo[i + 1] - lo
    k = _locate(ifx, lo, n, x0 + sx * pa)
    qb = q * b
    while True:
        xa, za, xb, zb = _segment(ifx, ifz, lo, n, k)
        if xa == -_INF or xb == _INF:
            m = 0.0
            wk = za - z0
        else:
            m = (zb - za) / (xb - xa)
            wk = za + m * (x0 - xa) - z0
        # qb (1 + m^2) u^2 + 2 (m q (b wk + v0) - sx dz0) u + q wk (b wk + 2 v0) = 0
        r1, r2 = _quad_roots(qb * (1.0 + m * m), 2.0 * (m * q * (b * wk + v0) - sx * dz0),
                             q * wk * (b * wk + 2.0 * v0))
        for r in (r1, r2):
            if r == _INF:
                continue
            prog = sx * r
            if prog <= pmin or prog >= best:
                continue
            xr = x0 + r
            if xr < xa - 1e-9 * (1.0 + abs(xa)) or xr > xb + 1e-9 * (1.0 + abs(xb)):
                continue
            w = wk + m * r
            vr = v0 + b * w
            if vr <= 0.0:
                continue
            cr = dz0 - sx * r * qb
            sr = q * vr
            nd = -m * sx * sr + cr
            if nd * want > 0.0:
                best = prog
                bestw = w
        lim = min(pb, best)
        if sx > 0:
            if k >= n - 1 or ifx[lo + k + 1] > x0 + lim:
                break
            k += 1
        else:
            if k <= -1 or ifx[lo + k] < x0 - lim:
                break
            k -= 1
    return best, bestw


@numba.njit(cache=True, error_model="numpy")
def _cross_arc(ifx, ifz, ifo, ifb, i, x0, z0, sx, q, v0, b, dz0, pend, want, pmin):  # pragma: no cover
    """First crossing of a circular ray in v = v0 + b (z - z0) with interface i.

    The ray leaves (x0, z0) with horizontal slowness ``q`` (> 0) towards
    ``sx`` = +-1 and vertical direction cosine ``dz0``.  Positions along it are
    written x = x0 + u, z = z0 + w; its progress ``sx * u`` grows monotonically.
    Only the stretches where the ray is within the interface's depth range are
    searched.  Returns (progress, w) of the first crossing with
    ``pmin < progress < pend`` in the wanted direction, progress = ``pend``
    when none.
    """
    zlo = ifb[i, 0] - 1e-7
    zhi = ifb[i, 1] + 1e-7
    uc = sx * dz0 / (q * b)
    wc = -v0 / b
    # break points: where the ray crosses the depths zlo and zhi
    bp = np.empty(6)
    nb = 1
    bp[0] = 0.0
    for zl in (zlo, zhi):
        wl = zl - z0
        r1, r2 = _quad_roots(q * b, -2.0 * sx * dz0, q * wl * (b * wl + 2.0 * v0))
        for r in (r1, r2):
            if r != _INF and sx * r > 0.0 and sx * r < pend:
                bp[nb] = sx * r
                nb += 1
    bp[nb] = pend
    nb += 1
    bp = np.sort(bp[:nb])
    best = pend
    bestw = 0.0
    for kk in range(nb - 1):
        pa = bp[kk]
        pb = bp[kk + 1]
        if pb <= pa:
            continue
        zm = z0 + _arc_w(sx * 0.5 * (pa + pb), uc, wc)
        if zm < zlo or zm > zhi:
            continue
        best, bestw = _march_arc(ifx, ifz, ifo, i, x0, z0, sx, q, v0, b, dz0, pa, pb, best,
                                 bestw, want, pmin)
        if best < pb:
            break
    return best, bestw


# ---------------------------------------------------------------------------
# velocity
# ---------------------------------------------------------------------------


@numba.njit(cache=True, inline="always", error_model="numpy")
def _law(lvx, lvp, lo, k, x, z):  # pragma: no cover - compiled
    """Velocity law on node segment k (or at node lo + k for k < 0): v, dv/dx, dv/dz.

    Columns of ``lvp``: v_top, v_bottom, z_top, z_bottom.  Between nodes all
    four are linear in x; v is linear in z between (z_top, v_top) and
    (z_bottom, v_bottom), with no gradient where z_bottom <= z_top.
    """
    if k < 0:
        i = lo - k - 1
        vt = lvp[i, 0]
        h = lvp[i, 3] - lvp[i, 2]
        b = (lvp[i, 1] - vt) / h if h > 1e-9 else 0.0
        return vt + b * (z - lvp[i, 2]), 0.0, b
    i = lo + k
    dxn = lvx[i + 1] - lvx[i]
    t = (x - lvx[i]) / dxn
    vt = lvp[i, 0] + t * (lvp[i + 1, 0] - lvp[i, 0])
    vb = lvp[i, 1] + t * (lvp[i + 1, 1] - lvp[i, 1])
    zt = lvp[i, 2] + t * (lvp[i + 1, 2] - lvp[i, 2])
    zb = lvp[i, 3] + t * (lvp[i + 1, 3] - lvp[i, 3])
    h = zb - zt
    if h <= 1e-9:
        return vt, (lvp[i + 1, 0] - lvp[i, 0]) / dxn, 0.0
    dvt = (lvp[i + 1, 0] - lvp[i, 0]) / dxn
    ddv = (lvp[i + 1, 1] - lvp[i, 1]) / dxn - dvt
    dzt = (lvp[i + 1, 2] - lvp[i, 2]) / dxn
    dh = (lvp[i + 1, 3] - lvp[i, 3]) / dxn - dzt
    b = (vb - vt) / h
    db = (ddv - b * dh) / h
    return vt + b * (z - zt), dvt + db * (z - zt) - b * dzt, b


@numba.njit(cache=True, inline="always", error_model="numpy")
def _vel(lvx, lvp, lvo, j, x, z):  # pragma: no cover - compiled
    """Velocity of layer j at (x, z) and its gradient (v, dv/dx, dv/dz)."""
    lo = lvo[j]
    n = lvo[j + 1] - lo
    if n == 1:
        return _law(lvx, lvp, lo, -1, x, z)
    k = _locate(lvx, lo, n, x)
    if k < 0:
        return _law(lvx, lvp, lo, -1, x, z)
    if k >= n - 1:
        return _law(lvx, lvp, lo, -n, x, z)
    return _law(lvx, lvp, lo, k, x, z)


@numba.njit(cache=True, inline="always", error_model="numpy")
def _vel_k(lvx, lvp, lvo, j, x, z, k):  # pragma: no cover - compiled
    """As :func:`_vel`, starting the node search at segment k; returns the segment too."""
    lo = lvo[j]
    n = lvo[j + 1] - lo
    if n == 1:
        v, vx, vz = _law(lvx, lvp, lo, -1, x, z)
        return v, vx, vz, 0
    if not (k >= 0 and k < n - 1 and lvx[lo + k] <= x < lvx[lo + k + 1]):
        k = _locate(lvx, lo, n, x)
    if k < 0:
        v, vx, vz = _law(lvx, lvp, lo, -1, x, z)
    elif k >= n - 1:
        v, vx, vz = _law(lvx, lvp, lo, -n, x, z)
    else:
        v, vx, vz = _law(lvx, lvp, lo, k, x, z)
    return v, vx, vz, k


@numba.njit(cache=True, error_model="numpy")
def layer_velocity(lvx, lvp, lvo, j, x, z):  # pragma: no cover - compiled
    """Velocities of layer j at points (x, z) (arrays), in m/s."""
    out = np.empty(x.size)
    for q in range(x.size):
        v, _, _ = _vel(lvx, lvp, lvo, j, x[q], z[q])
        out[q] = v
    return out


# ---------------------------------------------------------------------------
# interface events
# ---------------------------------------------------------------------------


@numba.njit(cache=True, inline="always", error_model="numpy")
def _unit_normal(m):  # pragma: no cover - compiled
    """Unit tangent (ex, ez) and downward unit normal (nx, nz) of slope m."""
    r = 1.0 / math.sqrt(1.0 + m * m)
    return r, m * r, -m * r, r


@numba.njit(cache=True, inline="always", error_model="numpy")
def _transmit(dx, dz, m, v1, v2):  # pragma: no cover - compiled
    """Snell's law across an interface of slope m; ok False when post-critical."""
    ex, ez, nx, nz = _unit_normal(m)
    dt = dx * ex + dz * ez
    dn = dx * nx + dz * nz
    dt2 = dt * v2 / v1
    if abs(dt2) >= 1.0:
        return dx, dz, False
    dn2 = math.sqrt(1.0 - dt2 * dt2)
    if dn < 0.0:
        dn2 = -dn2
    return dt2 * ex + dn2 * nx, dt2 * ez + dn2 * nz, True


@numba.njit(cache=True, inline="always", error_model="numpy")
def _reflect(dx, dz, m):  # pragma: no cover - compiled
    ex, ez, nx, nz = _unit_normal(m)
    dt = dx * ex + dz * ez
    dn = dx * nx + dz * nz
    return dt * ex - dn * nx, dt * ez - dn * nz, abs(dn)


# ---------------------------------------------------------------------------
# propagation inside one layer
# ---------------------------------------------------------------------------


@numba.njit(cache=True, inline="always", error_model="numpy")
def _lnhalf(s, c):  # pragma: no cover - compiled
    """ln tan(theta / 2) from sin and cos of theta (s > 0)."""
    if c >= 0.0:
        return math.log(s / (1.0 + c))
    return math.log((1.0 - c) / s)


@numba.njit(cache=True, inline="always", error_model="numpy")
def _push(px, pz, pn, r, x, z):  # pragma: no cover - compiled
    k = pn[r]
    if k < px.shape[1]:
        px[r, k] = x
        pz[r, k] = z
        pn[r] = k + 1


@numba.njit(cache=True, error_model="numpy")
def _prop_analytic(ifx, ifz, ifo, ifb, j, n_if, kind, a, b, x0, z0, dx, dz, prm,
                   track, px, pz, pn, r, rec):  # pragma: no cover - compiled
    """Propagate in a laterally constant layer to its first exit.

    Returns (hit, x, z, dx, dz, dt, deepest_x, deepest_z): hit 1 = top,
    2 = bottom, 0 = none (escaped).
    """
    box0 = prm[P_BOX0]
    box1 = prm[P_BOX1]
    smin = prm[P_SMIN]
    has_bot = j + 1 < n_if
    v0 = a + b * z0
    q = abs(dx) / v0
    dpx = x0
    dpz = z0
    if kind == 0 or q * v0 < 1e-12:
        # straight ray (constant layer, or a vertical ray in a gradient)
        if abs(dx) > _TINY:
            smax = ((box1 if dx > 0 else box0) - x0) / dx
        else:
            smax = _INF
        st = _cross_line(ifx, ifz, ifo, ifb, j, x0, z0, dx, dz, smax, -1, smin)
        sb = smax
        if has_bot:
            sb = _cross_line(ifx, ifz, ifo, ifb, j + 1, x0, z0, dx, dz, st, 1, smin)
        if sb < st:
            hit = 2
            s = sb
        elif st < smax:
            hit = 1
            s = st
        else:
            return 0, x0, z0, dx, dz, 0.0, dpx, dpz
        x1 = x0 + s * dx
        z1 = z0 + s * dz
        if kind == 0 or abs(b) < 1e-15:
            dt = s / v0
        else:
            v1 = a + b * z1
            if v1 <= 0.0:
                return 0, x0, z0, dx, dz, 0.0, dpx, dpz
            dt = abs(math.log(v1 / v0) / b)
        if track and z1 > dpz:
            dpx = x1
            dpz = z1
        if rec:
            _push(px, pz, pn, r, x1, z1)
        return hit, x1, z1, dx, dz, dt, dpx, dpz
    # circular arc: v = v0 + b w
    sx = 1.0 if dx > 0.0 else -1.0
    # remaining progress to the end of the half circle, (1 + sign(b) dz) / (q |b|),
    # written without cancellation for near-vertical rays heading to its end
    sdz = dz if b > 0.0 else -dz
    if sdz < 0.0:
        pend = (dx * dx / (1.0 - sdz)) / (q * abs(b))
    else:
        pend = (1.0 + sdz) / (q * abs(b))
    lim = (box1 - x0) if sx > 0 else (x0 - box0)
    if lim < pend:
        pend = lim
    pmin = smin * q * v0
    pt, wt = _cross_arc(ifx, ifz, ifo, ifb, j, x0, z0, sx, q, v0, b, dz, pend, -1, pmin)
    pb = pend
    wb = 0.0
    if has_bot:
        pb, wb = _cross_arc(ifx, ifz, ifo, ifb, j + 1, x0, z0, sx, q, v0, b, dz, pt, 1, pmin)
    if pb < pt:
        hit = 2
        prog = pb
        w = wb
    elif pt < pend:
        hit = 1
        prog = pt
        w = wt
    else:
        return 0, x0, z0, dx, dz, 0.0, dpx, dpz
    u = sx * prog
    x1 = x0 + u
    z1 = z0 + w
    v1 = v0 + b * w
    c1 = dz - sx * u * q * b
    s1 = q * v1
    nrm = math.sqrt(c1 * c1 + s1 * s1)
    c1 /= nrm
    s1 /= nrm
    s0 = q * v0
    if dz >= 0.0 and c1 >= 0.0:
        dt = (math.log(v1 / v0) - math.log((1.0 + c1) / (1.0 + dz))) / b
    elif dz < 0.0 and c1 < 0.0:
        dt = (math.log((1.0 - c1) / (1.0 - dz)) - math.log(v1 / v0)) / b
    else:
        dt = (_lnhalf(s1, c1) - _lnhalf(s0, dz)) / b
    if track:
        if z1 > dpz:
            dpx = x1
            dpz = z1
        if b > 0.0:
            uc = sx * dz / (q * b)
            if sx * uc > 0.0 and sx * uc < prog:
                zt = z0 + (1.0 / q - v0) / b
                if zt > dpz:
                    dpx = x0 + uc
                    dpz = zt
    if rec:
        th0 = math.atan2(s0, dz)
        th1 = math.atan2(s1, c1)
        ns = int(abs(th1 - th0) / 0.01) + 2
        if ns > 64:
            ns = 64
        uc = sx * dz / (q * b)
        wc = -v0 / b
        sgn = 1.0 if wc >= 0.0 else -1.0
        for kk in range(1, ns):
            uu = u * kk / ns
            dd = wc * wc - uu * uu + 2.0 * uu * uc
            if dd < 0.0:
                dd = 0.0
            ww = (uu * uu - 2.0 * uu * uc) / (wc + sgn * math.sqrt(dd))
            _push(px, pz, pn, r, x0 + uu, z0 + ww)
        _push(px, pz, pn, r, x1, z1)
    return hit, x1, z1, sx * s1, c1, dt, dpx, dpz


@numba.njit(cache=True, inline="always", error_model="numpy")
def _rhs(lvx, lvp, lvo, j, x, z, th, k):  # pragma: no cover - compiled
    v, vx, vz, k = _vel_k(lvx, lvp, lvo, j, x, z, k)
    s = math.sin(th)
    c = math.cos(th)
    return s, c, (vz * s - vx * c) / v, 1.0 / v, v, k


@numba.njit(cache=True, error_model="numpy")
def _rk4(lvx, lvp, lvo, j, x, z, th, h, k):  # pragma: no cover - compiled
    """One classical fourth-order Runge-Kutta step of length h (arc length).

    ``k`` is a guess of the velocity node segment (returned updated).
    """
    k1x, k1z, k1t, k1T, v1, k = _rhs(lvx, lvp, lvo, j, x, z, th, k)
    hh = 0.5 * h
    k2x, k2z, k2t, k2T, v2, k = _rhs(lvx, lvp, lvo, j, x + hh * k1x, z + hh * k1z,
                                     th + hh * k1t, k)
    k3x, k3z, k3t, k3T, v3, k = _rhs(lvx, lvp, lvo, j, x + hh * k2x, z + hh * k2z,
                                     th + hh * k2t, k)
    k4x, k4z, k4t, k4T, v4, k = _rhs(lvx, lvp, lvo, j, x + h * k3x, z + h * k3z,
                                     th + h * k3t, k)
    h6 = h / 6.0
    vmin = min(min(v1, v2), min(v3, v4))
    return (x + h6 * (k1x + 2.0 * (k2x + k3x) + k4x),
            z + h6 * (k1z + 2.0 * (k2z + k3z) + k4z),
            th + h6 * (k1t + 2.0 * (k2t + k3t) + k4t),
            h6 * (k1T + 2.0 * (k2T + k3T) + k4T), vmin, k)


@numba.njit(cache=True, error_model="numpy")
def _prop_rk(ifx, ifz, ifd, ifo, ifsm, ifb, lvx, lvp, lvo, lnx, lpv, j, n_if, x0, z0, dx, dz, prm,
             track, px, pz, pn, r, rec):  # pragma: no cover - compiled
    """Propagate in a layer with lateral velocity change (RK4, curvature-limited steps).

    Returns (hit, x, z, dx, dz, dt, deepest_x, deepest_z, status): hit as in
    :func:`_prop_analytic`; status 4 or 6 when the budget ran out or the
    velocity went non-positive.
    """
    box0 = prm[P_BOX0]
    box1 = prm[P_BOX1]
    hmax = prm[P_HMAX]
    alpha = prm[P_ALPHA]
    smin = prm[P_SMIN]
    maxstep = int(prm[P_MAXSTEP])
    has_bot = j + 1 < n_if
    x = x0
    z = z0
    th = math.atan2(dx, dz)
    t = 0.0
    dpx = x0
    dpz = z0
    kv = -2
    lvlo = lvo[j]
    nvel = lvo[j + 1] - lvlo
    cut = prm[P_CUT] != 0.0
    top_max = ifb[j, 1] + 1e-6
    bot_min = ifb[j + 1, 0] - 1e-6 if has_bot else _INF
    # a source above the recording surface starts outside the top layer: the top
    # is not watched until the ray is below it
    z_top0, _m = _depth_slope(ifx, ifz, ifd, ifo, ifsm, j, x0)
    watch_top = z0 >= z_top0 - 1e-6
    for _ in range(maxstep):
        v, vx, vz, kv = _vel_k(lvx, lvp, lvo, j, x, z, kv)
        if v <= 0.0:
            return 0, x, z, math.sin(th), math.cos(th), t, dpx, dpz, 6
        g = math.sqrt(vx * vx + vz * vz)
        h = hmax
        if g > 0.0 and alpha * v / g < h:
            # (not below a metre: near the tip of a pinched layer whose velocity
            # changes across it the gradient grows without bound)
            h = max(alpha * v / g, min(1.0, hmax))
        # end the step just past the next kink of the law (a node where its
        # lateral derivative jumps): RK4 keeps its order only where v is smooth
        if cut and nvel > 1:
            sn = math.sin(th)
            tgt = -1
            if sn > 0.0:
                tgt = lnx[lvlo] if kv < 0 else (lnx[lvlo + kv + 1] if kv < nvel - 1 else -1)
            elif sn < 0.0:
                tgt = lpv[lvlo + nvel - 1] if kv >= nvel - 1 else (lpv[lvlo + kv] if kv >= 0 else -1)
            if tgt >= 0:
                # aim a millimetre past the kink; the path curves, so a step may end
                # just short of it, and the next (tiny) step then crosses it
                xt = lvx[tgt] + (1e-3 if sn > 0.0 else -1e-3)
                dist = (xt - x) / sn
                if dist > 0.0 and dist < h:
                    h = dist
        # a step whose end left the layer although its chord crossed no
        # interface (the ray dipped out and back near the start) is halved
        for _try in range(40):
            x1, z1, th1, dt, vmin, kv = _rk4(lvx, lvp, lvo, j, x, z, th, h, kv)
            if not vmin > 0.0:
                return 0, x, z, math.sin(th), math.cos(th), t, dpx, dpz, 6
            cx = x1 - x
            cz = z1 - z
            cl = math.sqrt(cx * cx + cz * cz)
            ux = cx / cl
            uz = cz / cl
            # interfaces are looked at only when the chord reaches their depth range
            near_top = min(z, z1) <= top_max
            near_bot = max(z, z1) >= bot_min
            st = cl
            if near_top:
                st = _cross_line(ifx, ifz, ifo, ifb, j, x, z, ux, uz, cl, -1, smin)
            sb = cl
            if near_bot:
                sb = _cross_line(ifx, ifz, ifo, ifb, j + 1, x, z, ux, uz, st, 1, smin)
            if st < cl or sb < cl:
                break
            out_top = False
            out_bot = False
            if near_top:
                zt, _m = _depth_slope(ifx, ifz, ifd, ifo, ifsm, j, x1)
                if watch_top:
                    out_top = z1 < zt - 1e-9
                elif z1 >= zt:
                    watch_top = True
            if near_bot and not out_top:
                zb, _m = _depth_slope(ifx, ifz, ifd, ifo, ifsm, j + 1, x1)
                out_bot = z1 > zb + 1e-9
            if not (out_top or out_bot):
                break
            if h < 1e-3:
                # the ray leaves the layer where it stands (it starts on an interface,
                # heading out of the layer): an exit at the current point
                iface = j if out_top else j + 1
                zi, _m = _depth_slope(ifx, ifz, ifd, ifo, ifsm, iface, x)
                return (1 if out_top else 2), x, zi, math.sin(th), math.cos(th), t, dpx, dpz, 0
            h *= 0.5
        else:
            # grazing along the interface: give the ray up
            return 0, x, z, math.sin(th), math.cos(th), t, dpx, dpz, 4
        if st < cl or sb < cl:
            if sb < st:
                hit = 2
                iface = j + 1
                s = sb
            else:
                hit = 1
                iface = j
                s = st
            # Newton on the step length so that the RK4 end point lies on the interface
            hs = s * h / cl
            for _it in range(12):
                xa, za, tha, dta, _vm, kv = _rk4(lvx, lvp, lvo, j, x, z, th, hs, kv)
                zi, mi = _depth_slope(ifx, ifz, ifd, ifo, ifsm, iface, xa)
                lo = ifo[iface]
                nn = ifo[iface + 1] - lo
                kk = _locate(ifx, lo, nn, xa)
                if kk < 0 or kk >= nn - 1:
                    mc = 0.0
                else:
                    mc = (ifz[lo + kk + 1] - ifz[lo + kk]) / (ifx[lo + kk + 1] - ifx[lo + kk])
                gval = za - zi
                gder = math.cos(tha) - mc * math.sin(tha)
                if abs(gval) < 1e-7 or abs(gder) < 1e-9:
                    break
                hs_new = hs - gval / gder
                if hs_new <= 0.0:
                    hs_new = 0.5 * hs
                elif hs_new > 1.5 * h:
                    hs_new = 1.5 * h
                hs = hs_new
            zi, _m = _depth_slope(ifx, ifz, ifd, ifo, ifsm, iface, xa)
            if track:
                if za > dpz:
                    dpx = xa
                    dpz = za
            if rec:
                _push(px, pz, pn, r, xa, zi)
            return hit, xa, zi, math.sin(tha), math.cos(tha), t + dta, dpx, dpz, 0
        if track:
            c0 = math.cos(th)
            c1 = math.cos(th1)
            if c0 > 0.0 and c1 <= 0.0:
                lam = c0 / (c0 - c1)
                # cubic Hermite of z with dz/ds = cos(theta) at both ends
                hz = (2 * lam ** 3 - 3 * lam ** 2 + 1) * z + (lam ** 3 - 2 * lam ** 2 + lam) * h * c0 \
                    + (-2 * lam ** 3 + 3 * lam ** 2) * z1 + (lam ** 3 - lam ** 2) * h * c1
                if hz > dpz:
                    dpx = x + lam * (x1 - x)
                    dpz = hz
            if z1 > dpz:
                dpx = x1
                dpz = z1
        x = x1
        z = z1
        th = th1
        t += dt
        if rec:
            _push(px, pz, pn, r, x, z)
        if x < box0 or x > box1 or t > prm[P_TMAX]:
            return 0, x, z, math.sin(th), math.cos(th), t, dpx, dpz, 3
    return 0, x, z, math.sin(th), math.cos(th), t, dpx, dpz, 4


# ---------------------------------------------------------------------------
# one ray, all rays
# ---------------------------------------------------------------------------


@numba.njit(cache=True, error_model="numpy")
def _trace_one(r, ifx, ifz, ifd, ifo, ifsm, ifreal, ifb, lvx, lvp, lvo, lnx, lpv, lkind, lgroup,
               ptype, ptarget, src_layer, xs, zs, th0, prm, out, px, pz, pn, rec):  # pragma: no cover
    n_if = ifo.size - 1
    eps = prm[P_EPS]
    maxev = int(prm[P_MAXEV])
    x = xs
    z = zs
    dx = math.sin(th0)
    dz = math.cos(th0)
    t = 0.0
    j = src_layer
    leg = 0
    ptx = np.nan
    ptz = np.nan
    inc = np.nan
    dpx = np.nan
    dpz = -_INF
    status = 4
    if rec:
        pn[r] = 0
        _push(px, pz, pn, r, x, z)
    for _ev in range(maxev):
        kind = lkind[j]
        track = ptype == 1 and lgroup[j] == ptarget
        if kind == 2:
            hit, x1, z1, dx1, dz1, dt, qx, qz, st = _prop_rk(
                ifx, ifz, ifd, ifo, ifsm, ifb, lvx, lvp, lvo, lnx, lpv, j, n_if, x, z, dx, dz, prm,
                track, px, pz, pn, r, rec)
            if hit == 0:
                status = st if st != 0 else 3
                break
        else:
            v00, _vx, bgrad = _vel(lvx, lvp, lvo, j, x, 0.0)
            hit, x1, z1, dx1, dz1, dt, qx, qz = _prop_analytic(
                ifx, ifz, ifo, ifb, j, n_if, kind, v00, bgrad, x, z, dx, dz, prm,
                track, px, pz, pn, r, rec)
            if hit == 0:
                status = 3
                break
        if track and qz > dpz:
            dpx = qx
            dpz = qz
        x = x1
        z = z1
        dx = dx1
        dz = dz1
        t += dt
        if not t <= prm[P_TMAX]:
            status = 3
            break
        if hit == 1:
            # leaving through the top: coincident interfaces above
            mtop = j
            real = ifreal[j] != 0
            while mtop > 0:
                zi, _m = _depth_slope(ifx, ifz, ifd, ifo, ifsm, mtop - 1, x)
                if abs(zi - z) > eps:
                    break
                mtop -= 1
                if ifreal[mtop] != 0:
                    real = True
            if leg == 0 and real:
                if ptype == 1 and lgroup[j] == ptarget:
                    leg = 1
                else:
                    status = 1
                    break
            if mtop == 0:
                status = 0
                break
            jn = mtop - 1
            _zz, m = _depth_slope(ifx, ifz, ifd, ifo, ifsm, j, x)
            v1, _a, _b = _vel(lvx, lvp, lvo, j, x, z)
            v2, _a, _b = _vel(lvx, lvp, lvo, jn, x, z)
            if v2 <= 0.0:
                status = 6
                break
            dx, dz, ok = _transmit(dx, dz, m, v1, v2)
            if not ok:
                status = 2
                break
            j = jn
        else:
            b = j + 1
            mbot = b
            real = ifreal[b] != 0
            has_target = ptype == 0 and b == ptarget
            while mbot + 1 < n_if:
                zi, _m = _depth_slope(ifx, ifz, ifd, ifo, ifsm, mbot + 1, x)
                if abs(zi - z) > eps:
                    break
                mbot += 1
                if ifreal[mbot] != 0:
                    real = True
                if ptype == 0 and mbot == ptarget:
                    has_target = True
            if leg == 1 and real:
                status = 1
                break
            if has_target:
                _zz, m = _depth_slope(ifx, ifz, ifd, ifo, ifsm, ptarget, x)
                dx, dz, cosi = _reflect(dx, dz, m)
                if cosi > 1.0:
                    cosi = 1.0
                inc = math.degrees(math.acos(cosi))
                ptx = x
                ptz = z
                leg = 1
                continue
            if ptype == 1 and lgroup[mbot] > ptarget:
                status = 5
                break
            _zz, m = _depth_slope(ifx, ifz, ifd, ifo, ifsm, b, x)
            v1, _a, _b = _vel(lvx, lvp, lvo, j, x, z)
            v2, _a, _b = _vel(lvx, lvp, lvo, mbot, x, z)
            if v2 <= 0.0:
                status = 6
                break
            dx, dz, ok = _transmit(dx, dz, m, v1, v2)
            if not ok:
                status = 2
                break
            j = mbot
    if ptype == 1 and dpz > -_INF:
        ptx = dpx
        ptz = dpz
    out[r, 0] = status
    out[r, 1] = x
    out[r, 2] = z
    out[r, 3] = t
    out[r, 4] = dx
    out[r, 5] = dz
    v, _a, _b = _vel(lvx, lvp, lvo, j, x, z)
    out[r, 6] = v
    out[r, 7] = ptx
    out[r, 8] = ptz
    out[r, 9] = inc


@numba.njit(cache=True, parallel=True, error_model="numpy")
def _trace_par(ifx, ifz, ifd, ifo, ifsm, ifreal, ifb, lvx, lvp, lvo, lnx, lpv, lkind, lgroup,
               ptype, ptarget, src_layer, xs, zs, th, prm, out, px, pz, pn, rec):  # pragma: no cover
    for r in numba.prange(th.size):
        _trace_one(r, ifx, ifz, ifd, ifo, ifsm, ifreal, ifb, lvx, lvp, lvo, lnx, lpv, lkind, lgroup,
                   ptype, ptarget, src_layer, xs, zs, th[r], prm, out, px, pz, pn, rec)


@numba.njit(cache=True, error_model="numpy")
def _trace_ser(ifx, ifz, ifd, ifo, ifsm, ifreal, ifb, lvx, lvp, lvo, lnx, lpv, lkind, lgroup,
               ptype, ptarget, src_layer, xs, zs, th, prm, out, px, pz, pn, rec):  # pragma: no cover
    for r in range(th.size):
        _trace_one(r, ifx, ifz, ifd, ifo, ifsm, ifreal, ifb, lvx, lvp, lvo, lnx, lpv, lkind, lgroup,
                   ptype, ptarget, src_layer, xs, zs, th[r], prm, out, px, pz, pn, rec)


def trace_rays(packed, ptype: int, ptarget: int, src_layer: int, xs: float, zs: float,
               theta: np.ndarray, prm: np.ndarray, *, paths: int = 0, parallel: bool = True):
    """Trace rays leaving (xs, zs) at take-off angles ``theta`` (radians from the downward vertical).

    Returns ``(out, px, pz, pn)``: ``out`` is (n, 10) with columns status,
    emergence x, z, time, direction dx, dz, velocity there, point x, z,
    incidence angle at the reflector (degrees); ``px, pz`` hold up to ``paths``
    path points per ray (``pn`` of them) when ``paths`` > 0.
    """
    theta = np.ascontiguousarray(theta, dtype=np.float64)
    n = theta.size
    out = np.empty((n, 10))
    m = max(int(paths), 1)
    px = np.empty((n if paths else 1, m))
    pz = np.empty((n if paths else 1, m))
    pn = np.zeros(n if paths else 1, dtype=np.int64)
    fn = _trace_par if (parallel and n >= 64) else _trace_ser
    fn(*packed, np.int64(ptype), np.int64(ptarget), np.int64(src_layer), float(xs), float(zs),
       theta, prm, out, px, pz, pn, bool(paths))
    return out, px, pz, pn
