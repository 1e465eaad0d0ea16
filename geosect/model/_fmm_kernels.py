"""Compiled kernels of the fast marching solver (numba).

One kernel, :func:`march`, solves the eikonal equation :math:`|\\nabla T| = s`
on a regular square grid by the fast marching method (Sethian, 1996, "A fast
marching level set method for monotonically advancing fronts", PNAS 93,
1591-1595), with the second-order upwind differences of Sethian (1999, *Level
Set Methods and Fast Marching Methods*, 2nd ed., ch. 8) where two upwind
neighbours are known, first-order ones otherwise.  The narrow band is a binary
min-heap with decrease-key (a position array), so each node is in the heap at
most once.

Every node has a *region* code:

``0``
    excluded: never computed, never read;
``1``
    active: computed from known active neighbours and, once known, used to
    compute its neighbours;
``3``
    fixed: active, but its time on entry is kept (the analytic times around a
    point source);
``4``
    band: active nodes just outside the layer being marched, carrying the
    layer's velocity law a few cells beyond its boundary.  They keep the
    nodes at the steps of a staircase boundary supplied with upwind
    neighbours, but serve those nodes only in first-order differences: their
    times may come from a wave running the other way (upstream of seeds), and
    a second-order difference would extrapolate that inconsistency;
``2``
    halo: computed (from known active or halo neighbours) so that the field can
    be read or interpolated just outside the active region, but never used to
    compute an active node.  The halo lets a caller read times at an interface
    or at a receiver on the ground surface without letting the wave travel
    through the air or through a neighbouring layer.

Nodes whose time is finite on entry are *seeds*: they go into the narrow band
with that time, and their time can still be lowered by the march (a seed time
is an upper bound).
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

__all__ = ["march"]

_JIT = dict(cache=True, nogil=True)


@njit(**_JIT)
def _sift_up(hkey, hnode, pos, k):
    key = hkey[k]
    node = hnode[k]
    while k > 0:
        parent = (k - 1) >> 1
        if hkey[parent] <= key:
            break
        hkey[k] = hkey[parent]
        hnode[k] = hnode[parent]
        pos[hnode[k]] = k
        k = parent
    hkey[k] = key
    hnode[k] = node
    pos[node] = k


@njit(**_JIT)
def _sift_down(hkey, hnode, pos, k, size):
    key = hkey[k]
    node = hnode[k]
    while True:
        child = 2 * k + 1
        if child >= size:
            break
        if child + 1 < size and hkey[child + 1] < hkey[child]:
            child += 1
        if hkey[child] >= key:
            break
        hkey[k] = hkey[child]
        hnode[k] = hnode[child]
        pos[hnode[k]] = k
        k = child
    hkey[k] = key
    hnode[k] = node
    pos[node] = k


@njit(**_JIT)
def _usable(region, state, n, halo_target):
    # A known node may feed an active target only if it is active itself;
    # a halo target may use active and halo nodes.
    if state[n] != 2:
        return False
    r = region[n]
    return r == 1 or r == 3 or r == 4 or (halo_target and r == 2)


@njit(**_JIT)
def _axis(T, region, state, n, step, lo_ok, hi_ok, lo2_ok, hi2_ok, halo_target, own_target):
    """Upwind coefficient (alpha) and offset (beta) along one axis; alpha = 0 if none."""
    t_lo = math.inf
    t_hi = math.inf
    if lo_ok and _usable(region, state, n - step, halo_target):
        t_lo = T[n - step]
    if hi_ok and _usable(region, state, n + step, halo_target):
        t_hi = T[n + step]
    if t_lo <= t_hi:
        t1 = t_lo
        second_ok = lo2_ok
        n2 = n - 2 * step
    else:
        t1 = t_hi
        second_ok = hi2_ok
        n2 = n + 2 * step
    if not t1 < math.inf:
        return 0.0, 0.0, math.inf
    if second_ok and _usable(region, state, n2, halo_target) and not (
            own_target and region[n2] == 4):
        t2 = T[n2]
        if t2 <= t1:
            return 2.25, (4.0 * t1 - t2) / 3.0, t1
    return 1.0, t1, t1


@njit(**_JIT)
def _solve(ax, bx, tx, az, bz, tz, sh):
    """Solve sum alpha (T - beta)^2 = (s h)^2 for the upwind root."""
    best = math.inf
    if ax > 0.0 and az > 0.0:
        A = ax + az
        B = ax * bx + az * bz
        C = ax * bx * bx + az * bz * bz - sh * sh
        disc = B * B - A * C
        if disc >= 0.0:
            t = (B + math.sqrt(disc)) / A
            if t >= tx and t >= tz:
                return t
        # second-order pair failed: try the first-order pair
        disc = (tx + tz) ** 2 - 2.0 * (tx * tx + tz * tz - sh * sh)
        if disc >= 0.0:
            t = 0.5 * (tx + tz + math.sqrt(disc))
            if t >= tx and t >= tz:
                best = t
    if ax > 0.0:
        t = bx + sh / math.sqrt(ax)
        if t < best:
            best = t
    if az > 0.0:
        t = bz + sh / math.sqrt(az)
        if t < best:
            best = t
    return best


@njit(**_JIT)
def _tri(TA, TB, sh):
    """Update from a right triangle: axis neighbour A (time TA) and diagonal B (TB).

    The front is taken as planar across the face AB (Kimmel & Sethian, 1998,
    PNAS 95, 8431-8435); with legs of length h the minimum of
    ``T(P) + s |P|`` over P on AB is ``TA + sqrt((s h)^2 - (TA - TB)^2)`` when
    ``0 <= TA - TB <= s h / sqrt(2)``, otherwise one of the end points.
    """
    d = TA - TB
    best = TA + sh
    tb = TB + sh * 1.4142135623730951
    if tb < best:
        best = tb
    if d >= 0.0 and d <= sh * 0.7071067811865476:
        t = TA + math.sqrt(sh * sh - d * d)
        if t < best:
            best = t
    return best


@njit(**_JIT)
def _update(T, region, state, slow, n, nz, nx, h, diagonal):
    j = n // nx
    i = n - j * nx
    halo_target = region[n] == 2
    own_target = region[n] == 1
    ax, bx, tx = _axis(T, region, state, n, 1, i > 0, i < nx - 1, i > 1, i < nx - 2, halo_target,
                       own_target)
    az, bz, tz = _axis(T, region, state, n, nx, j > 0, j < nz - 1, j > 1, j < nz - 2, halo_target,
                       own_target)
    sh = slow[n] * h
    best = _solve(ax, bx, tx, az, bz, tz, sh)
    if not diagonal:
        return best
    # triangle updates: each axis neighbour with its two adjacent diagonals,
    # and each diagonal alone
    for q in range(4):
        if q == 0:
            ok = i > 0
            a = n - 1
            perp = nx
            pj_lo = j > 0
            pj_hi = j < nz - 1
        elif q == 1:
            ok = i < nx - 1
            a = n + 1
            perp = nx
            pj_lo = j > 0
            pj_hi = j < nz - 1
        elif q == 2:
            ok = j > 0
            a = n - nx
            perp = 1
            pj_lo = i > 0
            pj_hi = i < nx - 1
        else:
            ok = j < nz - 1
            a = n + nx
            perp = 1
            pj_lo = i > 0
            pj_hi = i < nx - 1
        if not ok:
            continue
        a_ok = _usable(region, state, a, halo_target)
        TA = T[a] if a_ok else math.inf
        for side in range(2):
            if side == 0:
                if not pj_lo:
                    continue
                b = a - perp
            else:
                if not pj_hi:
                    continue
                b = a + perp
            if not _usable(region, state, b, halo_target):
                continue
            TB = T[b]
            if a_ok:
                t = _tri(TA, TB, sh)
            else:
                t = TB + sh * 1.4142135623730951
            if t < best:
                best = t
    return best


@njit(**_JIT)
def _update_from(T, region, state, slow, m, n, di, dj, nz, nx, h):
    """New time of node m after its neighbour n (at offset -di, -dj from m) became known.

    The cross stencil of m is recomputed in full; of the triangle updates only
    those that use n can have changed, so only they are evaluated.
    """
    j = m // nx
    i = m - j * nx
    halo_target = region[m] == 2
    own_target = region[m] == 1
    ax, bx, tx = _axis(T, region, state, m, 1, i > 0, i < nx - 1, i > 1, i < nx - 2, halo_target,
                       own_target)
    az, bz, tz = _axis(T, region, state, m, nx, j > 0, j < nz - 1, j > 1, j < nz - 2, halo_target,
                       own_target)
    sh = slow[m] * h
    best = _solve(ax, bx, tx, az, bz, tz, sh)
    Tn = T[n]
    if di == 0 or dj == 0:
        # n is an axis neighbour (A); its two neighbours across the axis are the B's
        if di == 0:
            # n above or below m: B = n - 1, n + 1 (same row as n)
            jn = j - dj
            if i > 0:
                b = jn * nx + i - 1
                if _usable(region, state, b, halo_target):
                    t = _tri(Tn, T[b], sh)
                    if t < best:
                        best = t
            if i < nx - 1:
                b = jn * nx + i + 1
                if _usable(region, state, b, halo_target):
                    t = _tri(Tn, T[b], sh)
                    if t < best:
                        best = t
        else:
            i_n = i - di
            if j > 0:
                b = (j - 1) * nx + i_n
                if _usable(region, state, b, halo_target):
                    t = _tri(Tn, T[b], sh)
                    if t < best:
                        best = t
            if j < nz - 1:
                b = (j + 1) * nx + i_n
                if _usable(region, state, b, halo_target):
                    t = _tri(Tn, T[b], sh)
                    if t < best:
                        best = t
    else:
        # n is a diagonal neighbour (B); the A's are m's axis neighbours next to it
        t = Tn + sh * 1.4142135623730951
        if t < best:
            best = t
        a = j * nx + (i - di)
        if _usable(region, state, a, halo_target):
            t = _tri(T[a], Tn, sh)
            if t < best:
                best = t
        a = (j - dj) * nx + i
        if _usable(region, state, a, halo_target):
            t = _tri(T[a], Tn, sh)
            if t < best:
                best = t
    return best


@njit(**_JIT)
def march(T, region, slow, nz, nx, h, diagonal=True):
    """Fast marching in place on a grid of ``nz`` rows by ``nx`` columns.

    Parameters
    ----------
    T : numpy.ndarray of float64, shape (nz * nx,)
        Times in seconds, row-major (row = depth index).  Finite entries are
        seeds (upper bounds); ``inf`` elsewhere.  Overwritten with the result.
    region : numpy.ndarray of int8, shape (nz * nx,)
        0 excluded, 1 active, 2 halo, 3 fixed active, 4 band (see the module notes).
    slow : numpy.ndarray of float64, shape (nz * nx,)
        Slowness at each node, s/m.
    nz, nx : int
        Grid shape.
    h : float
        Node spacing, metres (the same along both axes).

    Returns
    -------
    int
        Number of nodes that became known.
    """
    N = nz * nx
    state = np.zeros(N, dtype=np.int8)  # 0 far, 1 trial, 2 known
    pos = np.full(N, -1, dtype=np.int32)
    hkey = np.empty(N, dtype=np.float64)
    hnode = np.empty(N, dtype=np.int32)
    size = 0
    for n in range(N):
        if region[n] != 0 and T[n] < math.inf:
            hkey[size] = T[n]
            hnode[size] = n
            pos[n] = size
            state[n] = 1
            _sift_up(hkey, hnode, pos, size)
            size += 1
        elif region[n] == 0:
            T[n] = math.inf
    n_known = 0
    while size > 0:
        n = hnode[0]
        size -= 1
        if size > 0:
            hkey[0] = hkey[size]
            hnode[0] = hnode[size]
            pos[hnode[0]] = 0
            _sift_down(hkey, hnode, pos, 0, size)
        pos[n] = -1
        state[n] = 2
        n_known += 1
        from_active = region[n] != 2
        j = n // nx
        i = n - j * nx
        for q in range(8 if diagonal else 4):
            di = 0
            dj = 0
            if q == 0:
                di = -1
            elif q == 1:
                di = 1
            elif q == 2:
                dj = -1
            elif q == 3:
                dj = 1
            elif q == 4:
                di = -1
                dj = -1
            elif q == 5:
                di = 1
                dj = -1
            elif q == 6:
                di = -1
                dj = 1
            else:
                di = 1
                dj = 1
            ii = i + di
            jj = j + dj
            if ii < 0 or ii >= nx or jj < 0 or jj >= nz:
                continue
            m = jj * nx + ii
            rm = region[m]
            if rm == 0 or rm == 3 or state[m] == 2:
                continue
            if (rm == 1 or rm == 4) and not from_active:
                continue
            if diagonal:
                t = _update_from(T, region, state, slow, m, n, di, dj, nz, nx, h)
            else:
                t = _update(T, region, state, slow, m, nz, nx, h, False)
            if t < T[m]:
                T[m] = t
                if pos[m] < 0:
                    hkey[size] = t
                    hnode[size] = m
                    pos[m] = size
                    _sift_up(hkey, hnode, pos, size)
                    size += 1
                    state[m] = 1
                else:
                    k = pos[m]
                    hkey[k] = t
                    _sift_up(hkey, hnode, pos, k)
    return n_known
