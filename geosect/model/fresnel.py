"""Fresnel zones of reflections: zero-offset radius and wide-angle semi-axes.

Zero offset (Sheriff 1980, "Nomogram for Fresnel-zone calculation",
Geophysics 45, 968-972): the first Fresnel zone of a flat reflector at depth
:math:`z` below a coincident source and receiver, in a medium of velocity
:math:`v`, is the disc of radius

.. math::

    r = \\sqrt{\\frac{z\\lambda}{2} + \\frac{\\lambda^2}{16}} \\approx
        \\sqrt{\\frac{z\\lambda}{2}}, \\qquad \\lambda = v / f,

the points whose two-way path exceeds the vertical one by half a wavelength
(half a period in time).  The formula is exact for a constant velocity.  In a
layered medium Sheriff uses the *average velocity above the reflector*
(:math:`v = z / t_{vertical}`, one way); :func:`average_velocity` gives it
for a 1D model.

Wide angle: :func:`fresnel_zone` applies the same half-period criterion with
the actual source and receiver.  The zone is the set of points on the
reflector where the time source -> point -> receiver exceeds the specular time
by :math:`1/(2f)`.  It is found numerically in the layered 1D model (flat
Earth): the one-way time from each endpoint to a point of the reflector is
solved exactly with the 1D solver, and the boundary is found by Newton's
method along the source-receiver direction (both sides of the specular point)
and across it (through the centre of the in-line extent).  The time along the
reflector is convex with its minimum at the specular point (Fermat), so each
search has one root.  ``fresnel_inline_m`` is half the in-line extent,
``fresnel_crossline_m`` the crossline half-width.

Where no layered model is at hand (a 2D model solved column by column),
:func:`fresnel_semi_axes` falls back to the constant-velocity ellipse: straight
legs with the velocity that makes the straight specular path take the
computed reflection time.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass

import numpy as np

from geosect.errors import InputError
from geosect.model import oned
from geosect.model.phases import parse_phase

__all__ = [
    "fresnel_radius",
    "average_velocity",
    "FresnelZone",
    "fresnel_zone",
    "fresnel_semi_axes",
]


def fresnel_radius(depth_m, velocity_ms, frequency_hz, *, approximate: bool = False) -> np.ndarray:
    """Zero-offset Fresnel-zone radius (m) after Sheriff (1980).

    Parameters
    ----------
    depth_m : array_like
        Reflector depth below the coincident source and receiver, metres.
    velocity_ms : array_like
        Velocity, m/s: the constant velocity, or in a layered medium the
        average velocity above the reflector (depth over one-way vertical time).
    frequency_hz : array_like
        Dominant frequency, Hz.
    approximate : bool
        Drop the :math:`\\lambda^2/16` term (the usual approximation
        :math:`r \\approx \\sqrt{z\\lambda/2}`).

    Returns
    -------
    numpy.ndarray
        Radius in metres.

    Examples
    --------
    >>> round(float(fresnel_radius(2000.0, 3000.0, 30.0)), 3)
    317.214
    """
    z = np.asarray(depth_m, float)
    lam = np.asarray(velocity_ms, float) / np.asarray(frequency_hz, float)
    r2 = z * lam / 2.0 if approximate else z * lam / 2.0 + lam * lam / 16.0
    return np.sqrt(r2)


def average_velocity(model, interface: str, *, wave: str = "P", chainage_m: float = 0.0,
                     from_depth_m: float | None = None) -> float:
    """Average velocity (m/s) above an interface: depth over one-way vertical time.

    Parameters
    ----------
    model : LayeredModel
        The model (a 2D model is read at ``chainage_m``).
    interface : str
        Interface name.
    from_depth_m : float, optional
        Depth of the source, metres (default: the model top).
    """
    col = model.column(chainage_m) if not model.is_1d else model
    z = float(col.interface_depth(interface, 0.0))
    z0 = float(col.interface_depth(col.interface_names[0], 0.0)) if from_depth_m is None \
        else float(from_depth_m)
    t = 0.5 * float(col.traveltime(0.0, f"{wave}:reflection:{interface}", source_depth_m=z0,
                                   receiver_depth_m=z0))
    return (z - z0) / t


@dataclass
class FresnelZone:
    """Wide-angle Fresnel zone on a flat reflector (arrays of the broadcast input shape).

    Attributes
    ----------
    inline_m : numpy.ndarray
        Semi-axis along the source-receiver direction: half the in-line extent, m.
    crossline_m : numpy.ndarray
        Semi-axis across it, m.
    inline_plus_m, inline_minus_m : numpy.ndarray
        Extent from the specular point towards the receiver and towards the source, m.
    point_distance_m : numpy.ndarray
        Specular reflection point, horizontal distance from the source, m.
    status : numpy.ndarray of str
        ``'ok'`` or the reason there is no zone (the reflection's status).
    """

    inline_m: np.ndarray
    crossline_m: np.ndarray
    inline_plus_m: np.ndarray
    inline_minus_m: np.ndarray
    point_distance_m: np.ndarray
    status: np.ndarray


LegTime = Callable[[np.ndarray, np.ndarray], tuple[np.ndarray, np.ndarray]]


def _half_axis(tau_s: LegTime, tau_r: LegTime, x, centre, target, mode: str,
               guess) -> np.ndarray:
    """Distance a >= 0 from ``centre`` to the zone boundary, per ray.

    mode 'plus' / 'minus': along the source-receiver direction, towards the
    receiver / the source; 'cross': across it.  ``tau_s(rho, rows)`` and
    ``tau_r`` give the one-way time (s) and horizontal slowness (s/m) from the
    source / receiver of rays ``rows`` to a reflector point at horizontal
    distance rho (m).
    """
    n = x.size
    a = np.maximum(guess, 1e-3)
    lo = np.zeros(n)
    hi = np.full(n, np.inf)
    done = np.zeros(n, dtype=bool)
    out = np.full(n, np.nan)
    for _ in range(60):
        idx = np.flatnonzero(~done)
        if idx.size == 0:
            break
        ai, ci, xi = a[idx], centre[idx], x[idx]
        if mode == "plus":
            rs, rr = ci + ai, xi - ci - ai
            ds, dr = np.ones_like(ai), -np.ones_like(ai)
        elif mode == "minus":
            rs, rr = ci - ai, xi - ci + ai
            ds, dr = -np.ones_like(ai), np.ones_like(ai)
        else:
            rs = np.hypot(ci, ai)
            rr = np.hypot(xi - ci, ai)
            with np.errstate(invalid="ignore", divide="ignore"):
                ds = np.where(rs > 0, ai / rs, 0.0)
                dr = np.where(rr > 0, ai / rr, 0.0)
        ts, ps = tau_s(np.abs(rs), idx)
        tr, pr = tau_r(np.abs(rr), idx)
        g = ts + tr - target[idx]
        dg = ps * np.sign(rs) * ds + pr * np.sign(rr) * dr
        bad = ~np.isfinite(g)
        conv = ~bad & (np.abs(g) <= 1e-10)
        out[idx[conv]] = ai[conv]
        done[idx[conv]] = True
        pos = bad | (g > 0)
        hi[idx] = np.where(pos, ai, hi[idx])
        lo[idx] = np.where(~pos, ai, lo[idx])
        with np.errstate(invalid="ignore", divide="ignore"):
            newton = ai - g / dg
        mid = np.where(np.isfinite(hi[idx]), 0.5 * (lo[idx] + hi[idx]), 2.0 * ai)
        ok = ~bad & np.isfinite(newton) & (newton > lo[idx]) & (newton < hi[idx])
        step = np.where(ok, newton, mid)
        small = ~conv & (np.abs(step - ai) <= 1e-6 * np.maximum(ai, 1.0))
        out[idx[small]] = step[small]
        done[idx[small]] = True
        a[idx] = step
    return out


def _zone(tau_s: LegTime, tau_r: LegTime, x, zs, zr, zm, xp, t0, freq, v_guess):
    """Half in-line extent, crossline half-width and the two in-line sides (m)."""
    dt = 0.5 / freq
    target = t0 + dt
    guess = fresnel_radius(np.maximum(zm - np.minimum(zs, zr), 1.0), v_guess, freq)
    plus = _half_axis(tau_s, tau_r, x, xp, target, "plus", guess)
    minus = _half_axis(tau_s, tau_r, x, xp, target, "minus", guess)
    centre = xp + 0.5 * (plus - minus)
    cross = _half_axis(tau_s, tau_r, x, centre, target, "cross", guess)
    return 0.5 * (plus + minus), cross, plus, minus


def _layered_tau(col: oned.Column, z_reflector: float, ze: np.ndarray) -> LegTime:
    def tau(rho, rows):
        return oned.leg_time_to_point(col, rho, z_reflector, ze[rows])
    return tau


def _straight_tau(h: np.ndarray, v: np.ndarray) -> LegTime:
    """Straight legs of height h (m) in velocity v (m/s), per ray."""
    def tau(rho, rows):
        d = np.hypot(rho, h[rows])
        with np.errstate(invalid="ignore", divide="ignore"):
            return d / v[rows], np.where(d > 0, rho / (v[rows] * d), 0.0)
    return tau


def fresnel_zone(model, offset_m, interface: str, frequency_hz, *, wave: str = "P",
                 source_depth_m=0.0, receiver_depth_m=0.0) -> FresnelZone:
    """Wide-angle Fresnel zone of the reflection from ``interface`` in a 1D model.

    Parameters
    ----------
    model : LayeredModel
        A 1D model (take ``model.column(chainage_m)`` of a 2D one).
    offset_m : array_like
        Source-receiver distance, metres.
    interface : str
        The reflecting interface.
    frequency_hz : array_like
        Dominant frequency, Hz; the criterion is half a period, ``1/(2f)``.
    wave : {'P', 'S'}
        Wave type.
    source_depth_m, receiver_depth_m : array_like
        Depths below the datum, metres.

    Returns
    -------
    FresnelZone
        Semi-axes in metres (flat Earth).

    Notes
    -----
    At zero offset in a constant velocity the result equals Sheriff's exact
    radius :math:`\\sqrt{z\\lambda/2 + \\lambda^2/16}`.
    """
    sol = model.solve(offset_m, f"{wave}:reflection:{interface}", source_depth_m=source_depth_m,
                      receiver_depth_m=receiver_depth_m)
    shape = sol.time_s.shape
    x, zs, zr, freq = (np.broadcast_to(np.asarray(a, float), shape).ravel()
                       for a in (offset_m, source_depth_m, receiver_depth_m, frequency_hz))
    x = np.abs(x)
    col = model.to_column(wave.upper())
    zm = float(model.interface_depth(interface, 0.0))
    n = x.size
    res = [np.full(n, np.nan) for _ in range(4)]
    sel = np.flatnonzero(sol.ok.ravel())
    if sel.size:
        out = _zone(_layered_tau(col, zm, zs[sel]), _layered_tau(col, zm, zr[sel]), x[sel],
                    zs[sel], zr[sel], np.full(sel.size, zm), sol.point_distance_m.ravel()[sel],
                    sol.time_s.ravel()[sel], freq[sel], float(np.max(col.v_top_ms)))
        for r, o in zip(res, out):
            r[sel] = o
    inline, cross, plus, minus = (r.reshape(shape) for r in res)
    return FresnelZone(inline, cross, plus, minus, sol.point_distance_m, sol.status)


def fresnel_semi_axes(model, phase, sol: Mapping, offset_m, *, source_depth_m=0.0,
                      receiver_depth_m=0.0, frequency_hz=20.0) -> tuple[np.ndarray, np.ndarray]:
    """In-line and crossline Fresnel semi-axes (m) of already-solved reflections.

    Parameters
    ----------
    model : LayeredModel or None
        A 1D model: the zone is computed numerically in it.  None (for example
        a 2D model solved as columns): the constant-velocity ellipse, with the
        velocity that makes the straight specular path take the reflection time.
    phase : str or Phase
        The reflection phase (``[P|S:]reflection:<interface>``).
    sol : mapping
        ``time_s``, ``point_distance_m`` and ``point_depth_m`` per ray (a
        :class:`RaySolution` or a dict of arrays).
    offset_m, source_depth_m, receiver_depth_m : array_like
        As given to the solver, metres.
    frequency_hz : float or array_like
        Dominant frequency, Hz.

    Returns
    -------
    fresnel_inline_m, fresnel_crossline_m : numpy.ndarray
        NaN where the ray has no reflection point.
    """
    ph = parse_phase(phase)
    if ph.kind != "reflection":
        raise InputError(f"phase '{ph}' has no reflection point and no Fresnel zone",
                         key="phase", fix="ask for Fresnel zones of reflection phases only")
    t0 = np.asarray(sol["time_s"], float)
    shape = t0.shape
    t0 = t0.ravel()
    xp = np.asarray(sol["point_distance_m"], float).ravel()
    zm = np.asarray(sol["point_depth_m"], float).ravel()
    x, zs, zr, freq = (np.broadcast_to(np.asarray(a, float), shape).ravel()
                       for a in (offset_m, source_depth_m, receiver_depth_m, frequency_hz))
    x = np.abs(x)
    n = t0.size
    inline = np.full(n, np.nan)
    cross = np.full(n, np.nan)
    sel = np.flatnonzero(np.isfinite(t0) & np.isfinite(xp) & np.isfinite(zm))
    if sel.size == 0:
        return inline.reshape(shape), cross.reshape(shape)
    if model is not None:
        col = model.to_column(ph.wave)
        v_guess = float(np.max(col.v_top_ms))
        for z in np.unique(zm[sel]):  # one reflector depth in a 1D model (a loop over interfaces)
            s2 = sel[zm[sel] == z]
            res = _zone(_layered_tau(col, float(z), zs[s2]), _layered_tau(col, float(z), zr[s2]),
                        x[s2], zs[s2], zr[s2], zm[s2], xp[s2], t0[s2], freq[s2], v_guess)
            inline[s2], cross[s2] = res[0], res[1]
        return inline.reshape(shape), cross.reshape(shape)
    h_s = zm[sel] - zs[sel]
    h_r = zm[sel] - zr[sel]
    v_eq = (np.hypot(xp[sel], h_s) + np.hypot(x[sel] - xp[sel], h_r)) / t0[sel]
    res = _zone(_straight_tau(h_s, v_eq), _straight_tau(h_r, v_eq), x[sel], zs[sel], zr[sel],
                zm[sel], xp[sel], t0[sel], freq[sel], v_eq)
    inline[sel], cross[sel] = res[0], res[1]
    return inline.reshape(shape), cross.reshape(shape)
