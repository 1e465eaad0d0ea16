"""Spherical-Earth pieces of the 1D solver: shells, chords and the flattening transform.

The 1D solver (:mod:`geosect.model.oned`) works in *flat-equivalent* variables
in both geometries: horizontal distance ``X`` in metres and horizontal
slowness ``p`` in s/m.  On a sphere of radius :math:`R` (the datum) these are

.. math::

    X = R\\,\\Delta, \\qquad p = p_s / R,

with :math:`\\Delta` the epicentral angle in radians and :math:`p_s = r\\sin i/v`
the spherical ray parameter in s/rad.  ``X`` is therefore the arc length along
the datum surface, and ``p`` is the horizontal slowness at the datum.

Two kinds of spherical segment are used:

* **constant-velocity shells** (``v`` constant between radii :math:`r_b<r_a`):
  rays are straight lines (chords), and the segment integrals are exact
  elementary geometry.  With :math:`d = p_s v` the distance of the ray's line
  from the centre and :math:`S = \\sqrt{r^2-d^2}`,

  .. math::

      L = S_a - S_b, \\quad \\Delta = \\arccos(d/r_a) - \\arccos(d/r_b),
      \\quad T = L / v,

  evaluated in cancellation-free forms: :math:`L = (r_a^2 - r_b^2)/(S_a + S_b)` and
  :math:`\\Delta = \\operatorname{atan2}(d L, d^2 + S_a S_b)` (the compiled kernel
  :func:`geosect.model._kernels.piece`, kind 1).
* **shells with a linear velocity gradient in depth**: the Earth-flattening
  transformation :math:`z_f = -R\\ln((R-z)/R)`, :math:`v_f = v R/(R-z)` maps them
  exactly onto a flat medium, but :math:`v_f(z_f)` is no longer linear: for
  :math:`v = a + g z` it is :math:`v_f = (a + gR)\\,e^{z_f/R} - gR`.  The shell is
  cut into sub-layers in :math:`z_f` in which :math:`v_f` is interpolated
  linearly between its exact node values, and the flat closed forms are used in
  each.  The sub-layer thickness is chosen from the exact curvature
  :math:`v_f'' = (g + v_f/R)/R` so that the largest relative velocity error of the
  linear interpolation, :math:`h^2 |v_f''| / (8 v_f)`, stays below
  :data:`SUBLAYER_TOLERANCE` (1e-7); the travel-time error is of the same
  relative size or smaller (microseconds for crustal paths).

References: the flattening transformation as in Müller (1971), "Approximate
treatment of elastic body waves in media with spherical symmetry", Geophys.
J. R. astr. Soc. 23, 435-449 (from memory); the chord geometry is elementary.
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "EARTH_RADIUS_M",
    "SUBLAYER_TOLERANCE",
    "flatten_depth",
    "unflatten_depth",
    "flattened_velocity",
    "sublayer_depths",
    "chord_direct",
]

#: Radius of the spherical Earth in metres (the datum surface), as used by
#: iasp91 and TauP.
EARTH_RADIUS_M: float = 6_371_000.0
#: Largest relative velocity error allowed in the sub-layers of a gradient shell.
SUBLAYER_TOLERANCE: float = 1e-7
#: Most sub-layers cut from one gradient shell (a cap for very thick shells).
_MAX_SUBLAYERS = 2000


def flatten_depth(z_m: np.ndarray | float, radius_m: float = EARTH_RADIUS_M) -> np.ndarray:
    """Earth-flattening depth :math:`z_f = -R\\ln((R-z)/R)`, in metres.

    Parameters
    ----------
    z_m : array_like
        Depth below the datum, in metres (negative above it).
    radius_m : float
        Radius of the datum sphere, in metres.
    """
    return -radius_m * np.log1p(-np.asarray(z_m, dtype=float) / radius_m)


def unflatten_depth(zf_m: np.ndarray | float, radius_m: float = EARTH_RADIUS_M) -> np.ndarray:
    """Inverse of :func:`flatten_depth`: :math:`z = -R\\,\\mathrm{expm1}(-z_f/R)`, in metres."""
    return -radius_m * np.expm1(-np.asarray(zf_m, dtype=float) / radius_m)


def flattened_velocity(v_ms: np.ndarray | float, z_m: np.ndarray | float,
                       radius_m: float = EARTH_RADIUS_M) -> np.ndarray:
    """Earth-flattening velocity :math:`v_f = v R/(R-z)`, in m/s (inf at the centre)."""
    with np.errstate(divide="ignore"):
        return np.asarray(v_ms, dtype=float) * radius_m / (radius_m - np.asarray(z_m, dtype=float))


def sublayer_depths(z_top_m: float, z_bot_m: float, v_top_ms: float, gradient_per_s: float,
                    radius_m: float = EARTH_RADIUS_M,
                    tolerance: float = SUBLAYER_TOLERANCE) -> np.ndarray:
    """Node depths (metres) cutting a gradient shell into sub-layers, even in :math:`z_f`.

    The sub-layer thickness :math:`h` in flattened depth satisfies
    :math:`h^2 \\max|v_f''|/(8 \\min v_f) \\le` ``tolerance``, with
    :math:`v_f'' = (g + v_f/R)/R` (exact for a velocity linear in depth).

    Parameters
    ----------
    z_top_m, z_bot_m : float
        Top and bottom of the shell, depth in metres.
    v_top_ms : float
        Velocity at the top, m/s.
    gradient_per_s : float
        Velocity gradient dv/dz, in 1/s.

    Returns
    -------
    numpy.ndarray
        Increasing depths from ``z_top_m`` to ``z_bot_m`` inclusive.
    """
    zf0, zf1 = flatten_depth(np.array([z_top_m, z_bot_m]), radius_m)
    v_bot = v_top_ms + gradient_per_s * (z_bot_m - z_top_m)
    vf = flattened_velocity(np.array([v_top_ms, v_bot]), np.array([z_top_m, z_bot_m]), radius_m)
    curv = np.abs(gradient_per_s + vf / radius_m).max() / radius_m
    h = np.sqrt(8.0 * tolerance * vf.min() / curv)
    n = int(min(max(np.ceil((zf1 - zf0) / h), 1), _MAX_SUBLAYERS))
    zf = np.linspace(zf0, zf1, n + 1)
    z = unflatten_depth(zf, radius_m)
    z[0], z[-1] = z_top_m, z_bot_m
    return z


def chord_direct(offset_m: np.ndarray, z1: np.ndarray, z2: np.ndarray, v: float,
                 radius_m: float = EARTH_RADIUS_M):
    """The straight ray between two points in one constant-velocity shell.

    Parameters
    ----------
    offset_m : numpy.ndarray
        Arc length along the datum between the points' epicentres, metres.
    z1, z2 : numpy.ndarray
        Depths of the two points, metres.
    v : float
        Velocity, m/s.

    Returns
    -------
    T, p, z_deepest
        Time (s), horizontal slowness at the datum (s/m) and the deepest depth
        the chord reaches (m).
    """
    R = radius_m
    r1 = R - z1
    r2 = R - z2
    delta = offset_m / R
    half = np.sin(0.5 * delta)
    length = np.sqrt((r1 - r2) ** 2 + 4.0 * r1 * r2 * half * half)
    with np.errstate(invalid="ignore", divide="ignore"):
        d = np.where(length > 0, r1 * r2 * np.sin(delta) / length, 0.0)
    cosd = np.cos(delta)
    foot_inside = (r2 * cosd < r1) & (r1 * cosd < r2)
    r_min = np.where(foot_inside, d, np.minimum(r1, r2))
    T = length / v
    p = d / (v * R)
    return T, p, R - r_min
