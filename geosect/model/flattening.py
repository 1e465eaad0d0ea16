"""Earth flattening for the 2D ray tracer.

The section plane through the Earth's centre is mapped onto a flat plane by

.. math::

    x = R\\,\\Delta, \\qquad z_f = -R \\ln\\frac{R - z}{R}, \\qquad
    v_f = v\\,\\frac{R}{R - z},

with :math:`R` the radius of the datum sphere, :math:`\\Delta` the angle at the
centre (so chainage ``x`` is arc length along the datum), :math:`z` the true
depth and :math:`z_f` the flattened depth (Müller 1971, "Approximate treatment
of elastic body waves in media with spherical symmetry", Geophys. J. R. astr.
Soc. 23, 435-449; the form as recalled from memory).  The map is conformal, so
it turns the 2D eikonal equation on the sphere into the flat one exactly, for
any 2D medium: flattened travel times are spherical travel times, and angles
(incidence, take-off) are kept.  The horizontal slowness of a flattened ray,
:math:`\\sin i / v_f`, equals :math:`p_s / R`, the spherical ray parameter
:math:`p_s = r \\sin i / v` (s/rad) divided by the datum radius.

Two things are approximated:

* **velocities**: a law linear in true depth becomes
  :math:`v_f = (a + bR)\\,e^{z_f/R} - bR` (for :math:`v = a + b z`), not linear
  in :math:`z_f`.  Each layer is cut into sub-layers, evenly in :math:`z_f`
  between its flattened top and bottom, with :math:`v_f` exact at the sub-layer
  boundaries and linear in :math:`z_f` between them.  The number of sub-layers
  keeps the relative velocity error :math:`h^2 |v_f''| / (8 v_f)` below
  ``tolerance`` (default 1e-7), with :math:`v_f'' = (b + v_f/R)/R`; the time
  error is of the same relative size (microseconds for crustal paths).
  Sub-layer boundaries are *virtual* interfaces: the velocity is continuous
  across them and phases do not see them.
* **interfaces**: their nodes are mapped exactly and joined by straight lines
  in the flattened plane (a flat interface stays exactly flat).
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "EARTH_RADIUS_M",
    "FLATTENING_TOLERANCE",
    "flatten_depth",
    "unflatten_depth",
    "flatten_velocity",
    "n_sublayers",
]

#: Radius of the datum sphere, metres (the mean radius used by iasp91 and TauP).
EARTH_RADIUS_M: float = 6_371_000.0
#: Largest relative velocity error of the linear sub-layers.
FLATTENING_TOLERANCE: float = 1e-7
_MAX_SUB = 400


def flatten_depth(depth_m, radius_m: float = EARTH_RADIUS_M) -> np.ndarray:
    """Flattened depth :math:`z_f = -R \\ln((R - z)/R)`, metres.

    Parameters
    ----------
    depth_m : array_like
        True depth below the datum, metres (negative above it).
    radius_m : float
        Radius of the datum sphere, metres.

    Examples
    --------
    >>> float(flatten_depth(0.0))
    0.0
    >>> round(float(flatten_depth(35e3)), 1)   # about 96 m deeper than 35 km
    35096.5
    """
    return -radius_m * np.log1p(-np.asarray(depth_m, dtype=float) / radius_m)


def unflatten_depth(flat_depth_m, radius_m: float = EARTH_RADIUS_M) -> np.ndarray:
    """True depth from flattened depth, :math:`z = -R\\,\\mathrm{expm1}(-z_f / R)`, metres."""
    return -radius_m * np.expm1(-np.asarray(flat_depth_m, dtype=float) / radius_m)


def flatten_velocity(v_ms, depth_m, radius_m: float = EARTH_RADIUS_M) -> np.ndarray:
    """Flattened velocity :math:`v_f = v R / (R - z)`, m/s, at true depth ``depth_m`` (m)."""
    return np.asarray(v_ms, dtype=float) * radius_m / (radius_m - np.asarray(depth_m, dtype=float))


def n_sublayers(thickness_f_m, v_f_ms, gradient_per_s, radius_m: float = EARTH_RADIUS_M,
                tolerance: float = FLATTENING_TOLERANCE) -> int:
    """Number of sub-layers for a flattened layer.

    Parameters
    ----------
    thickness_f_m : array_like
        Flattened thickness of the layer at some chainages, metres.
    v_f_ms : array_like
        Smallest flattened velocity in the layer at the same chainages, m/s.
    gradient_per_s : array_like
        Absolute true-depth gradient dv/dz there, 1/s.

    Returns
    -------
    int
        The fewest even sub-layers such that, at every chainage given,
        :math:`h^2 |v_f''| / (8 v_f) \\le` ``tolerance`` with
        :math:`v_f'' = (b + v_f/R)/R` and :math:`h` the local sub-layer
        thickness (a thin wedge with a steep gradient needs few).

    Examples
    --------
    >>> n_sublayers(20e3, 5800.0, 0.0)   # a 20 km constant crustal layer
    4
    """
    H = np.atleast_1d(np.asarray(thickness_f_m, float))
    v = np.broadcast_to(np.asarray(v_f_ms, float), H.shape)
    b = np.broadcast_to(np.abs(np.asarray(gradient_per_s, float)), H.shape)
    curv = (b + v / radius_m) / radius_m
    with np.errstate(invalid="ignore", divide="ignore"):
        need = H * np.sqrt(curv / (8.0 * tolerance * v))
    need = np.where(np.isfinite(need) & (H > 0), need, 0.0)
    return int(min(max(np.ceil(need.max()), 1), _MAX_SUB))
