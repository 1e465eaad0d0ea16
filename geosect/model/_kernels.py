"""Compiled per-ray kernels of the 1D solver (numba).

Each kernel loops over rays and, inside, over the segments of the column; the
formulas are those of :mod:`geosect.model.oned` (linear-velocity pieces) and
:mod:`geosect.model.spherical` (constant-velocity shells crossed by chords).
Segment kinds: 0 linear in depth, 1 constant-velocity spherical shell,
2 flattened sub-layer of a spherical gradient shell (linear in z_f).

``error_model='numpy'`` lets divisions by zero give inf/NaN as numpy does; the
callers mask those values.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

__all__ = ["piece", "leg_many", "solve_two_legs", "hermite_inverse"]

_JIT = dict(cache=True, nogil=True, error_model="numpy")


@njit(**_JIT)
def _log1p_over(x):
    if abs(x) < 1e-4:
        return 1.0 - x / 2.0 + x * x / 3.0 - x * x * x / 4.0
    return math.log1p(x) / x


@njit(**_JIT)
def piece(kind, p, za, zb, top, a, b, zft, R, turn, need_t=True):
    """Offset X, dX/dp, time T, bottomed flag and bottoming depth of one segment piece.

    ``za <= zb`` are the depths where the ray enters and leaves the segment.
    """
    nan = math.nan
    if not zb > za:
        return 0.0, 0.0, 0.0, False, nan
    if kind == 1:
        ra = R - za
        rb = R - zb
        d = p * R * a
        if d >= ra:
            if turn:
                return 0.0, 0.0, 0.0, True, za
            return 0.0, 0.0, 0.0, False, nan
        sa = math.sqrt(max((ra - d) * (ra + d), 0.0))
        turned = turn and d >= rb
        if turned:
            sb = 0.0
            length = sa
        else:
            sb = math.sqrt(max((rb - d) * (rb + d), 0.0))
            length = (zb - za) * (ra + rb) / (sa + sb)
        delta = math.atan2(d * length, d * d + sa * sb)
        if turned:
            dd = -1.0 / sa
            zt = R - d
        else:
            dd = length / (sa * sb)
            zt = nan
        return R * delta, R * R * a * dd, length / a, turned, zt
    g = b
    if kind == 0:
        va = a + g * (za - top)
        vb = a + g * (zb - top)
        h = zb - za
        zfa = za
    else:
        zfa = -R * math.log1p(-za / R)
        zfb = -R * math.log1p(-zb / R)
        va = a + g * (zfa - zft)
        vb = a + g * (zfb - zft)
        h = zfb - zfa
    turned = False
    zt = nan
    if turn and g > 0.0 and p * vb >= 1.0:
        if p * va >= 1.0:
            return 0.0, 0.0, 0.0, True, za
        inv = 1.0 / p
        h = (inv - va) / g
        vb = inv
        turned = True
        if kind == 0:
            zt = za + h
        else:
            zt = -R * math.expm1(-(zfa + h) / R)
    if not h > 0.0:
        return 0.0, 0.0, 0.0, turned, zt
    if g == 0.0:
        # constant velocity: X = h p v / c, dX/dp = h v / c^3, T = h / (v c)
        pv = p * va
        c = math.sqrt(max((1.0 - pv) * (1.0 + pv), 0.0))
        if c == 0.0:
            return math.inf, math.inf, math.inf, turned, zt
        hc = h / c
        return hc * pv, hc * va / (c * c), hc / va, turned, zt
    pa = p * va
    pb = p * vb
    ca = math.sqrt(max((1.0 - pa) * (1.0 + pa), 0.0))
    if turned:
        cb = 0.0
    else:
        cb = math.sqrt(max((1.0 - pb) * (1.0 + pb), 0.0))
    s = ca + cb
    if s == 0.0:
        return math.inf, math.inf, math.inf, turned, zt
    Q = h * (va + vb) / s
    X = p * Q
    if need_t:
        p2Q = p * p * Q / (1.0 + cb)
        T = (h / va) * _log1p_over(g * h / va) + _log1p_over(g * p2Q) * p2Q
    else:
        T = 0.0
    if turned:
        dX = -1.0 / (p * p * g * ca)
    else:
        dX = Q * (1.0 + p * p * (va * va / ca + vb * vb / cb) / s)
    return X, dX, T, turned, zt


@njit(**_JIT)
def _leg_one(p, z_from, z_to, top, bot, kind, a, b, zft, R, turn, need_t=True):
    X = 0.0
    dX = 0.0
    T = 0.0
    turned = False
    zt = math.nan
    for k in range(top.size):
        if top[k] >= z_to:
            break
        if bot[k] <= z_from:
            continue
        za = min(max(z_from, top[k]), bot[k])
        zb = min(max(z_to, top[k]), bot[k])
        x, d, t, tk, ztk = piece(kind[k], p, za, zb, top[k], a[k], b[k], zft[k], R, turn, need_t)
        X += x
        dX += d
        T += t
        if tk:
            turned = True
            zt = ztk
            break
    return X, dX, T, turned, zt


@njit(**_JIT)
def leg_many(p, z_from, z_to, top, bot, kind, a, b, zft, R, turn):
    """:func:`piece` summed over the segments from ``z_from`` down to ``z_to``, per ray."""
    n = p.size
    X = np.empty(n)
    dX = np.empty(n)
    T = np.empty(n)
    turned = np.zeros(n, dtype=np.bool_)
    zt = np.empty(n)
    for i in range(n):
        X[i], dX[i], T[i], turned[i], zt[i] = _leg_one(p[i], z_from[i], z_to[i], top, bot, kind,
                                                        a, b, zft, R, turn)
    return X, dX, T, turned, zt


@njit(**_JIT)
def solve_two_legs(x, z1, z2, zt, pmax, p0, top, bot, kind, a, b, zft, R):
    """Ray parameter of the two-leg path z1 -> zt -> z2 with total offset x, per ray.

    Safeguarded Newton on X(p) = x in [0, pmax]: the Newton step is taken when
    it stays inside the bracket and the residual at least halves, otherwise the
    bracket is bisected.  Returns p, time, offset of the first leg and a status
    per ray: 0 solved, 1 no ray (x beyond X(pmax), the grazing offset),
    2 not converged.
    """
    n = x.size
    P = np.empty(n)
    T = np.empty(n)
    X1 = np.empty(n)
    status = np.zeros(n, dtype=np.int8)
    for i in range(n):
        lo = 0.0
        hi = pmax[i]
        p = min(max(p0[i], lo), hi)
        tol = 1e-8 + 1e-14 * abs(x[i])
        f_prev = math.inf
        st = 2
        same = z1[i] == z2[i]
        ta = 0.0
        tb = 0.0
        xa = 0.0
        for _ in range(200):
            xa, da, ta, _, _ = _leg_one(p, z1[i], zt[i], top, bot, kind, a, b, zft, R, False)
            if same:
                xb = xa
                db = da
                tb = ta
            else:
                xb, db, tb, _, _ = _leg_one(p, z2[i], zt[i], top, bot, kind, a, b, zft, R, False)
            f = xa + xb - x[i]
            if abs(f) <= tol:
                st = 0
                break
            d = da + db
            dp = -f / d
            if (d > 0.0 and abs(f) <= 1e-3 and 0.5 * f * f / d <= 1e-13
                    and 0.0 <= p + dp <= pmax[i]):
                # close enough for a last Newton step without evaluating again: dT = p dX
                # along the travel-time curve, so T(x) = T + p (x - X) with an error of about
                # f^2 / (2 dX/dp), which the test keeps under 0.1 ps
                ta = ta - p * f * (da / d)
                tb = tb - p * f * (db / d)
                xa = xa - f * (da / d)
                p = p + dp
                st = 0
                break
            if f < 0.0:
                lo = p
            else:
                hi = p
            if hi - lo <= 4e-16 * max(abs(hi), 1e-300):
                st = 1 if (f < 0.0 and hi == pmax[i]) else 0
                break
            step_ok = False
            if d > 0.0 and abs(f) <= 0.5 * f_prev:
                q = p - f / d
                if q > lo and q < hi:
                    step_ok = True
            if not step_ok:
                q = 0.5 * (lo + hi)
            f_prev = abs(f)
            p = q
        P[i] = p
        T[i] = ta + tb
        X1[i] = xa
        status[i] = st
    return P, T, X1, status


@njit(**_JIT)
def hermite_inverse(x, Xg, sg, dg, lo, hi):
    """s with X(s) = x by cubic Hermite interpolation of a table (Xg increasing, slopes dg)."""
    n = x.size
    m = Xg.size
    out = np.empty(n)
    for i in range(n):
        xi = x[i]
        j = np.searchsorted(Xg, xi) - 1
        if j < 0:
            j = 0
        elif j > m - 2:
            j = m - 2
        h = Xg[j + 1] - Xg[j]
        t = (xi - Xg[j]) / h
        if t < 0.0:
            t = 0.0
        elif t > 1.0:
            t = 1.0
        t2 = t * t
        t3 = t2 * t
        s = ((2 * t3 - 3 * t2 + 1) * sg[j] + (t3 - 2 * t2 + t) * h / dg[j]
             + (-2 * t3 + 3 * t2) * sg[j + 1] + (t3 - t2) * h / dg[j + 1])
        out[i] = min(max(s, lo), hi)
    return out
