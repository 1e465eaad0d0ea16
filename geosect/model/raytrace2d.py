"""Two-point ray tracing in 2D layered models: reflections and turning rays.

The tracer works in the (chainage, depth) plane of a section line.  Per shot it
shoots a fan of rays, all advanced together by a compiled kernel
(:mod:`geosect.model._rt_kernels`), brackets every receiver between rays that
emerge on either side of it, and refines the take-off angle (regula falsi,
Illinois variant) until the ray emerges within ``tol_m`` of the receiver.

Inside a layer the velocity is linear in depth, :math:`v = a(x) + b(x) z`:

* constant layers: straight rays, exact intersections with the interface
  polylines;
* a laterally constant gradient: circular arcs, exact intersections and times;
* lateral change: the kinematic ray equations in arc length :math:`s`,

  .. math::

      \\frac{dx}{ds} = \\sin\\theta, \\quad \\frac{dz}{ds} = \\cos\\theta, \\quad
      \\frac{d\\theta}{ds} = \\frac{1}{v}\\left(\\frac{\\partial v}{\\partial z}
      \\sin\\theta - \\frac{\\partial v}{\\partial x}\\cos\\theta\\right), \\quad
      \\frac{dt}{ds} = \\frac{1}{v},

  integrated by fourth-order Runge-Kutta (Červený 2001, *Seismic Ray Theory*,
  ch. 3) with steps limited by the ray's curvature and ended just past every
  kink of the velocity law, and a Newton search on the last step so that it
  ends on the interface.

At every interface crossing Snell's law holds in the interface's local frame;
a ray is lost at post-critical incidence, and a phase keeps only the rays that
follow its path (down through the layers to the target, back up to the
surface).  See ``docs/methods-raytracing.md``.

Conventions: SI units; chainage ``x`` along the line, depth ``z`` positive
down (negative above the datum); take-off angles from the downward vertical,
positive towards increasing chainage.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Sequence

import numpy as np

from geosect.errors import InputError, ModelError
from geosect.model import _rt_kernels as K
from geosect.model.flattening import (EARTH_RADIUS_M, FLATTENING_TOLERANCE, flatten_depth,
                                      flatten_velocity, n_sublayers, unflatten_depth)
from geosect.model.phases import Phase, parse_phase

__all__ = [
    "LayerLaw",
    "TraceModel",
    "TraceResult",
    "RayTracer2D",
    "trace_shot",
    "as_trace_model",
    "RESULT_COLUMNS",
]

#: Columns of :meth:`TraceResult.to_frame`.
RESULT_COLUMNS: tuple[str, ...] = (
    "receiver_chainage_m", "receiver_depth_m", "time_s", "point_chainage_m", "point_depth_m",
    "incidence_deg", "takeoff_deg", "emergence_deg", "ray_parameter_s_per_m", "n_branches",
    "misfit_m", "status", "flags",
)

_EPS_COINCIDE = 0.01  # m: interfaces closer than this at a crossing count as one (pinch-out)
_DTH_MIN = 1e-7  # rad: finest spacing of take-off angles in the fan


# ---------------------------------------------------------------------------
# model description
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class LayerLaw:
    """Velocity law of one layer, linear in depth at every chainage.

    At chainage ``x`` the velocity is linear in depth through
    ``(z_top(x), v_top(x))`` and ``(z_bottom(x), v_bottom(x))``; the four are
    linear in chainage between the nodes and constant beyond the end nodes.
    Where ``z_bottom <= z_top`` (a pinched-out layer) there is no gradient.
    This is the law of :class:`geosect.model.LayeredModel` when the nodes are
    the union of its velocity and interface nodes, and it continues above the
    top and below the bottom unchanged.

    Parameters
    ----------
    chainage_m : array_like
        Node chainages, metres, increasing (one node: laterally constant).
    v_top_ms, v_bottom_ms : array_like
        Velocities at the two reference depths, m/s.
    z_top_m, z_bottom_m : array_like
        The two reference depths, metres.
    """

    chainage_m: np.ndarray
    v_top_ms: np.ndarray
    v_bottom_ms: np.ndarray
    z_top_m: np.ndarray
    z_bottom_m: np.ndarray

    def __post_init__(self) -> None:
        c = np.atleast_1d(np.asarray(self.chainage_m, float))
        object.__setattr__(self, "chainage_m", c)
        for name in ("v_top_ms", "v_bottom_ms", "z_top_m", "z_bottom_m"):
            a = np.broadcast_to(np.asarray(getattr(self, name), float), c.shape).copy()
            object.__setattr__(self, name, a)

    @classmethod
    def linear(cls, v_ms, gradient_per_s=0.0, reference_depth_m=0.0, chainage_m=None) -> "LayerLaw":
        """The law ``v = v_ms + gradient_per_s (z - reference_depth_m)`` (m/s, 1/s, m)."""
        c = np.zeros(1) if chainage_m is None else chainage_m
        v = np.asarray(v_ms, float)
        g = np.asarray(gradient_per_s, float)
        z0 = np.asarray(reference_depth_m, float)
        return cls(c, v, v + 1000.0 * g, z0, z0 + 1000.0)

    def ab(self, chainage_m) -> tuple[np.ndarray, np.ndarray]:
        """``(a, b)`` with ``v = a + b z`` at the chainages (m/s, 1/s), vectorised."""
        x = np.asarray(chainage_m, float)
        c = self.chainage_m
        vt, vb, zt, zb = (np.interp(x, c, getattr(self, k))
                          for k in ("v_top_ms", "v_bottom_ms", "z_top_m", "z_bottom_m"))
        h = zb - zt
        with np.errstate(invalid="ignore", divide="ignore"):
            b = np.where(h > 1e-9, (vb - vt) / np.where(h > 1e-9, h, 1.0), 0.0)
        return vt - b * zt, b

    def velocity(self, chainage_m, depth_m) -> np.ndarray:
        """Velocity (m/s) at chainages and depths (m), vectorised."""
        a, b = self.ab(chainage_m)
        return a + b * np.asarray(depth_m, float)

    @property
    def is_lateral(self) -> bool:
        """True when the law changes along chainage."""
        c = self.chainage_m
        if c.size == 1:
            return False
        x = np.concatenate([c, 0.5 * (c[1:] + c[:-1])])
        a, b = self.ab(x)
        return bool(np.ptp(a) > 1e-9 * np.abs(a).max() or np.ptp(b) > 1e-12)

    def node(self, k: int = 0) -> "LayerLaw":
        """The one-node law of node k (for laterally constant laws)."""
        return LayerLaw(self.chainage_m[k:k + 1], self.v_top_ms[k:k + 1],
                        self.v_bottom_ms[k:k + 1], self.z_top_m[k:k + 1],
                        self.z_bottom_m[k:k + 1])


@dataclass
class TraceModel:
    """The tracer's own description of a 2D layered model.

    Layer ``j`` lies between interface ``j`` (top) and ``j + 1`` (bottom); the
    last layer is a half-space.  Interface 0 is the model's top surface
    (topography, or flat at the datum).  :meth:`from_model` builds one from a
    :class:`~geosect.model.LayeredModel`.

    Parameters
    ----------
    interface_names, layer_names : sequence of str
        Names, top to bottom (as many as layers).
    interfaces : sequence of (chainage_m, depth_m) pairs
        Node arrays of every interface, metres; constant beyond the end nodes.
    vp, vs : sequence of LayerLaw
        P and S velocity laws per layer (``vs`` may be None: no S phases).
    bound : sequence of bool, optional
        Per layer: its laws' reference depths are the layer's own interfaces
        (top and bottom; the half-space's top), as in a LayeredModel.  With
        ``smooth`` the tracer then moves them with the smoothed interfaces, so
        that velocity and geometry stay consistent.  Default all False.
    """

    interface_names: list[str]
    layer_names: list[str]
    interfaces: list[tuple[np.ndarray, np.ndarray]]
    vp: list[LayerLaw]
    vs: list[LayerLaw] | None = None
    bound: list[bool] | None = None

    def __post_init__(self) -> None:
        n = len(self.layer_names)
        if not (len(self.interface_names) == len(self.interfaces) == len(self.vp) == n):
            raise ModelError(f"the trace model has {n} layers, {len(self.interface_names)} "
                             f"interface names, {len(self.interfaces)} interfaces and "
                             f"{len(self.vp)} P laws", fix="give one of each per layer")
        ifs = []
        for name, (c, z) in zip(self.interface_names, self.interfaces):
            c = np.atleast_1d(np.asarray(c, float))
            z = np.atleast_1d(np.asarray(z, float))
            if c.shape != z.shape or c.size == 0 or not (np.isfinite(c).all() and np.isfinite(z).all()):
                raise ModelError(f"interface '{name}' needs as many finite chainages as depths",
                                 fix="give matching node arrays")
            if c.size > 1 and (np.diff(c) <= 0).any():
                raise ModelError(f"interface '{name}': node chainages must increase",
                                 fix="sort the nodes and remove repeated chainages")
            ifs.append((c, z))
        self.interfaces = ifs

    @classmethod
    def flat(cls, tops_m: Sequence[float], vp_ms: Sequence[float],
             gradients: Sequence[float] | None = None, names: Sequence[str] | None = None,
             layer_names: Sequence[str] | None = None, vpvs: float = 1.73) -> "TraceModel":
        """Flat layers: top depths (m), P velocities at the tops (m/s), gradients (1/s)."""
        tops = np.asarray(tops_m, float)
        vp = np.asarray(vp_ms, float)
        n = tops.size
        g = np.zeros(n) if gradients is None else np.asarray(gradients, float)
        names = list(names) if names is not None else ["surface"] + [f"interface{i}" for i in range(1, n)]
        lnames = list(layer_names) if layer_names is not None else [f"layer{i + 1}" for i in range(n)]
        laws = [LayerLaw.linear(vp[i], g[i], tops[i]) for i in range(n)]
        laws_s = [LayerLaw.linear(vp[i] / vpvs, g[i] / vpvs, tops[i]) for i in range(n)]
        return cls(names, lnames, [(np.zeros(1), np.array([t])) for t in tops], laws, laws_s)

    @classmethod
    def from_model(cls, model: Any) -> "TraceModel":
        """Adapter from :class:`geosect.model.LayeredModel`.

        The model's law in layer ``i`` is :math:`v = v_{top}(x) + g(x)(z - z_{top}(x))`
        with :math:`g = (v_{bottom} - v_{top}) / (z_{bottom} - z_{top})` (the
        half-space has its own gradient), velocities above the model top
        following the top layer's law.  It is kept exactly: the
        :class:`LayerLaw` of each layer has the union of the layer's velocity
        nodes and its interfaces' nodes.
        """
        itfs = [(np.asarray(i.chainage_m, float), np.asarray(i.depth_m, float))
                for i in model.interfaces]
        n = len(model.layers)
        vp, vs = [], []
        for i, lay in enumerate(model.layers):
            last = i == n - 1
            nodes = [np.asarray(lay.chainage_m, float), itfs[i][0]]
            if not last:
                nodes.append(itfs[i + 1][0])
            x = np.unique(np.concatenate(nodes))
            zt = np.interp(x, *itfs[i])
            zb = zt + 1000.0 if last else np.interp(x, *itfs[i + 1])
            for wave, out in (("P", vp), ("S", vs)):
                vt, vb, g = _layer_values(lay, x, wave, last)
                if last:
                    vb = vt + 1000.0 * g
                law = LayerLaw(x, vt, vb, zt, zb)
                out.append(law if law.is_lateral else law.node(0))
        return cls(list(model.interface_names), list(model.layer_names), itfs, vp, vs,
                   [True] * n)

    def velocity(self, chainage_m, depth_m, wave: str = "P") -> np.ndarray:
        """Velocity (m/s) at points (m), the layer chosen as the model does it.

        A point on an interface takes the layer below; points above the top
        surface take the top layer's law.
        """
        laws = self._laws(wave)
        x, z = np.broadcast_arrays(np.asarray(chainage_m, float), np.asarray(depth_m, float))
        k = np.zeros(x.shape, int)
        for c, d in self.interfaces[1:]:
            k += z >= np.interp(x, c, d)
        v = np.empty(x.shape)
        for j, law in enumerate(laws):
            s = k == j
            v[s] = law.velocity(x[s], z[s])
        return v

    def _laws(self, wave: str) -> list[LayerLaw]:
        w = str(wave).upper()
        if w == "P":
            return self.vp
        if w == "S":
            if self.vs is None:
                raise ModelError("the model has no S velocities", fix="give vs or vp/vs per layer")
            return self.vs
        raise InputError(f"wave type '{wave}' is not P or S", key="wave", fix="use 'P' or 'S'")

    def interface_index(self, name: str) -> int:
        """Index of an interface by name (InputError with the names it has)."""
        if name in self.interface_names:
            return self.interface_names.index(name)
        raise InputError(f"the model has no interface '{name}'", key="phase",
                         fix="name one of: " + ", ".join(repr(n) for n in self.interface_names))

    def layer_index(self, name: str) -> int:
        """Index of a layer by name (InputError with the names it has)."""
        if name in self.layer_names:
            return self.layer_names.index(name)
        raise InputError(f"the model has no layer '{name}'", key="phase",
                         fix="name one of: " + ", ".join(repr(n) for n in self.layer_names))


def _layer_values(lay: Any, x: np.ndarray, wave: str, last: bool):
    """(v_top, v_bottom or None, gradient or None) of a LayeredModel layer at chainages x."""
    c = np.asarray(lay.chainage_m, float)

    def at(values):
        return np.interp(x, c, np.broadcast_to(np.asarray(values, float), c.shape))

    vt = at(lay.vp_top_ms)
    vb = None if last else at(lay.vp_bottom_ms)
    g = at(lay.vp_gradient_per_s) if last else None
    if wave == "S":
        if getattr(lay, "vpvs", None) is not None:
            r = float(lay.vpvs)
            vt = vt / r
            vb = None if vb is None else vb / r
            g = None if g is None else g / r
        else:
            vt = at(lay.vs_top_ms)
            vb = None if last else at(lay.vs_bottom_ms)
            g = at(lay.vs_gradient_per_s if lay.vs_gradient_per_s is not None else 0.0) if last else None
    return vt, vb, g


def as_trace_model(model: Any) -> TraceModel:
    """A TraceModel as is; a LayeredModel through :meth:`TraceModel.from_model`."""
    if isinstance(model, TraceModel):
        return model
    if hasattr(model, "interfaces") and hasattr(model, "layers"):
        return TraceModel.from_model(model)
    raise InputError(f"cannot trace rays through a {type(model).__name__}", key="model",
                     fix="pass a geosect.model.LayeredModel or a TraceModel")


# ---------------------------------------------------------------------------
# packing: polylines for the kernel
# ---------------------------------------------------------------------------


def _max_envelope(xa, za, xb, zb):
    """Polyline of max(a(x), b(x)) (both constant beyond their ends), with crossing nodes."""
    x = np.union1d(xa, xb)
    d = np.interp(x, xa, za) - np.interp(x, xb, zb)
    s = np.flatnonzero(d[:-1] * d[1:] < 0)
    if s.size:
        xc = x[s] - d[s] * (x[s + 1] - x[s]) / (d[s + 1] - d[s])
        x = np.union1d(x, xc)
    return x, np.maximum(np.interp(x, xa, za), np.interp(x, xb, zb))


def _smooth(c, z, tol_m: float, max_nodes: int = 20000):
    """PCHIP spline through the nodes, resampled so the chords stay within tol_m; node slopes.

    The interface is flat beyond its end nodes; the spline is fitted with that
    flat continuation (a node one span further out on either side), so that
    its slope is zero at the end nodes and the surface is smooth there too.
    """
    if c.size < 2:
        return c, z, np.zeros(c.size)
    from scipy.interpolate import PchipInterpolator

    span = max(c[-1] - c[0], 1000.0)
    f = PchipInterpolator(np.r_[c[0] - span, c, c[-1] + span], np.r_[z[0], z, z[-1]])
    d2 = f.derivative(2)
    h = np.diff(c)
    curv = np.maximum(np.abs(d2(c[:-1] + 1e-6 * h)), np.abs(d2(c[1:] - 1e-6 * h)))
    with np.errstate(divide="ignore"):
        step = np.where(curv > 0, np.sqrt(8.0 * tol_m / np.where(curv > 0, curv, 1.0)), np.inf)
    n = np.clip(np.ceil(h / step), 1, None).astype(int)
    if n.sum() > max_nodes:
        n = np.maximum((n * max_nodes / n.sum()).astype(int), 1)
    x = np.unique(np.concatenate([np.linspace(c[k], c[k + 1], n[k] + 1) for k in range(c.size - 1)]))
    return x, f(x), f.derivative(1)(x)


@dataclass
class _Packed:
    arrays: tuple
    group: np.ndarray          # model layer of each trace layer
    iface: np.ndarray          # trace interface index of each model interface
    real: np.ndarray
    surface: tuple[np.ndarray, np.ndarray]   # recording surface (x, z), traced coordinates
    flatten: bool
    radius_m: float
    vmin: float

    def depth(self, i: int, x) -> np.ndarray:
        ifx, ifz, ifd, ifo = self.arrays[:4]
        return K.interface_depth(ifx, ifz, ifo, i, np.atleast_1d(np.asarray(x, float)))

    def layer_at(self, x: float, z: float) -> int:
        n_if = self.arrays[3].size - 1
        j = 0
        for i in range(1, n_if):
            if z >= self.depth(i, x)[0]:
                j = i
        return j

    def velocity(self, j: int, x, z) -> np.ndarray:
        lvx, lvp, lvo = self.arrays[7:10]
        x = np.atleast_1d(np.asarray(x, float))
        z = np.broadcast_to(np.asarray(z, float), x.shape).copy()
        return K.layer_velocity(lvx, lvp, lvo, j, x, z)


def _pack(tm: TraceModel, wave: str, surface: tuple[np.ndarray, np.ndarray], *, smooth: bool,
          smooth_tol_m: float, flatten: bool, radius_m: float, flatten_bottom_m: float,
          kink_tol: float = 2e-8) -> _Packed:
    laws = tm._laws(wave)
    sx, sz = surface
    n = len(laws)
    # interfaces in true depth: surface on top, internal ones smoothed and kept below it
    # each interface is kept below the one above it (the recording surface first):
    # outcrops become pinch-outs, and independently smoothed interfaces that touch
    # cannot cross
    polys = [(sx, sz, np.gradient(sz, sx) if sx.size > 1 else np.zeros(1), False)]
    for c, z in tm.interfaces[1:]:
        if smooth:
            c2, z2, d2 = _smooth(c, z, smooth_tol_m)
        else:
            c2, z2, d2 = c, z, np.zeros(c.size)
        ax, az = polys[-1][0], polys[-1][1]
        x, zc = _max_envelope(c2, z2, ax, az)
        # node slopes of the spline; flat beyond its end nodes, as the interface is
        d = np.where((x >= c2[0]) & (x <= c2[-1]), np.interp(x, c2, d2), 0.0)
        if smooth:
            below = np.interp(x, c2, z2) >= np.interp(x, ax, az)
            seg = np.gradient(zc, x) if x.size > 1 else np.zeros(1)
            d = np.where(below, d, seg)
        polys.append((x, zc, d, smooth))
    layer_laws = list(laws)
    if smooth and tm.bound is not None:
        # laws tied to the interfaces follow them to their smoothed shapes
        for j, law in enumerate(layer_laws):
            if tm.bound[j]:
                top = tm.interfaces[0] if j == 0 else polys[j][:2]
                bot = polys[j + 1][:2] if j + 1 < n else None
                layer_laws[j] = _rebind(law, top, bot)
    real = [True] * n
    group = list(range(n))
    iface = list(range(n))
    if flatten:
        polys, layer_laws, real, group, iface = _flatten(polys, layer_laws, radius_m, flatten_bottom_m)
    # kinds
    kinds = []
    for law in layer_laws:
        if law.is_lateral:
            kinds.append(2)
        elif law.ab(law.chainage_m[:1])[1][0] == 0.0:
            kinds.append(0)
        else:
            kinds.append(1)
    ifo = np.cumsum([0] + [p[0].size for p in polys]).astype(np.int64)
    ifx = np.concatenate([p[0] for p in polys]).astype(float)
    ifz = np.concatenate([p[1] for p in polys]).astype(float)
    ifd = np.concatenate([p[2] for p in polys]).astype(float)
    ifsm = np.array([1 if p[3] else 0 for p in polys], np.int8)
    ifreal = np.array([1 if r else 0 for r in real], np.int8)
    single = [law if law.is_lateral else law.node(0) for law in layer_laws]
    lvo = np.cumsum([0] + [law.chainage_m.size for law in single]).astype(np.int64)
    lvx = np.concatenate([law.chainage_m for law in single])
    lvp = np.concatenate([np.column_stack([law.v_top_ms, law.v_bottom_ms, law.z_top_m,
                                           law.z_bottom_m]) for law in single])
    ifb = np.array([[p[1].min(), p[1].max()] for p in polys], float)
    lnx, lpv = _kink_links([_kinks(law, kink_tol) for law in single], lvo)
    arrays = (ifx, ifz, ifd, ifo, ifsm, ifreal, ifb, lvx, np.ascontiguousarray(lvp), lvo,
              lnx, lpv, np.array(kinds, np.int8), np.array(group, np.int64))
    # slowest velocity at the surface, for the time budget
    sx_, sz_ = polys[0][0], polys[0][1]
    vmin = min(float(np.min(law.velocity(sx_, sz_))) for law in single)
    s_polys = polys[0]
    return _Packed(arrays, np.array(group), np.array(iface), np.array(real),
                   (s_polys[0], s_polys[1]), flatten, radius_m, max(vmin, 1.0))


def _rebind(law: LayerLaw, top, bottom) -> LayerLaw:
    """The law with its reference depths moved to new top and bottom polylines.

    Velocities at the top and bottom keep their values along chainage; a
    half-space (``bottom`` None) keeps its gradient below the new top.
    """
    x = np.union1d(np.union1d(law.chainage_m, top[0]), [] if bottom is None else bottom[0])
    vt = np.interp(x, law.chainage_m, law.v_top_ms)
    vb = np.interp(x, law.chainage_m, law.v_bottom_ms)
    zt = np.interp(x, *top)
    if bottom is None:
        span = np.interp(x, law.chainage_m, law.z_bottom_m - law.z_top_m)
        zb = zt + span
    else:
        zb = np.interp(x, *bottom)
    out = LayerLaw(x, vt, vb, zt, zb)
    return out if out.is_lateral else out.node(0)


def _kinks(law: LayerLaw, tol: float) -> np.ndarray:
    """Nodes of a law where dv/dx jumps by more than ``tol * v`` (1/m) at its reference depths."""
    c = law.chainage_m
    if c.size == 1:
        return np.zeros(1, bool)
    span = np.diff(c)
    eps_l = np.r_[1.0, 1e-6 * span]
    eps_r = np.r_[1e-6 * span, 1.0]

    def slope(xa, xb):
        a0, b0 = law.ab(xa)
        a1, b1 = law.ab(xb)
        with np.errstate(invalid="ignore", divide="ignore"):
            return (a1 - a0) / (xb - xa), (b1 - b0) / (xb - xa)

    al, bl = slope(c - eps_l, c - 0.5 * eps_l)
    ar, br = slope(c + 0.5 * eps_r, c + eps_r)
    a, b = law.ab(c)
    jump = np.zeros(c.size)
    for z in (law.z_top_m, law.z_bottom_m):
        v = np.maximum(np.abs(a + b * z), 1.0)
        jump = np.maximum(jump, np.abs((ar - al) + (br - bl) * z) / v)
    return jump > tol


def _kink_links(flags: list, lvo: np.ndarray):
    """For every law node: global index of the next kink at or after it, and of the last at or before it."""
    nxt = np.full(int(lvo[-1]), -1, np.int64)
    prv = np.full(int(lvo[-1]), -1, np.int64)
    for j, f in enumerate(flags):
        lo = int(lvo[j])
        idx = np.flatnonzero(f)
        if idx.size == 0:
            continue
        k = np.arange(f.size)
        pos = np.searchsorted(idx, k, "left")
        ok = pos < idx.size
        nxt[lo + k[ok]] = lo + idx[pos[ok]]
        pos2 = np.searchsorted(idx, k, "right") - 1
        ok2 = pos2 >= 0
        prv[lo + k[ok2]] = lo + idx[pos2[ok2]]
    return nxt, prv


def _flatten(polys, laws, radius_m: float, bottom_m: float):
    """Flattened polylines and laws, with virtual sub-layer interfaces (see flattening.py)."""
    R = radius_m
    out_polys, out_laws, real, group, iface = [], [], [], [], []
    n = len(laws)
    for j in range(n):
        tx, tz, td, tsm = polys[j]
        if j + 1 < n:
            bx, bz = polys[j + 1][0], polys[j + 1][1]
        else:
            bx, bz = tx, tz + bottom_m
        law = laws[j]
        x = np.union1d(np.union1d(tx, bx), law.chainage_m if law.is_lateral else tx)
        flat_layer = tx.size == 1 and bx.size == 1 and np.ptp(tz) == 0 and np.ptp(bz) == 0
        if flat_layer and not law.is_lateral:
            x = np.zeros(1)
        zt = np.interp(x, tx, tz)
        zb = np.interp(x, bx, bz)
        ft = flatten_depth(zt, R)
        fb = flatten_depth(zb, R)
        a, b = law.ab(x)
        vft = flatten_velocity(a + b * zt, zt, R)
        vfb = flatten_velocity(a + b * zb, zb, R)
        nsub = n_sublayers(fb - ft, np.minimum(vft, vfb), b, R, FLATTENING_TOLERANCE)
        # the real top interface, flattened at its own nodes
        iface.append(len(out_polys))
        fz = flatten_depth(tz, R)
        fd = td * R / (R - tz)  # dz_f/dx = dz/dx * R / (R - z)
        out_polys.append((tx, fz, fd, tsm))
        real.append(True)
        for k in range(nsub):
            f0 = ft + (fb - ft) * k / nsub
            f1 = ft + (fb - ft) * (k + 1) / nsub
            z0 = unflatten_depth(f0, R)
            z1 = unflatten_depth(f1, R)
            v0 = flatten_velocity(a + b * z0, z0, R)
            v1 = flatten_velocity(a + b * z1, z1, R)
            sub = LayerLaw(x, v0, v1, f0, f1)
            out_laws.append(sub if sub.is_lateral else sub.node(0))
            group.append(j)
            if k > 0:
                out_polys.append((x, f0, np.gradient(f0, x) if x.size > 1 else np.zeros(1), False))
                real.append(False)
    return out_polys, out_laws, real, group, iface


# ---------------------------------------------------------------------------
# results
# ---------------------------------------------------------------------------


@dataclass
class TraceResult:
    """Two-point rays of one phase from one source to many receivers.

    All arrays have one entry per receiver.  Times, points and angles are NaN
    where ``status`` is not ``'ok'``.

    Attributes
    ----------
    phase : str
        The phase traced, for example ``'P:reflection:moho'``.
    source_chainage_m, source_depth_m : float
        The source, metres.
    receiver_chainage_m, receiver_depth_m : numpy.ndarray
        The receivers, metres.
    time_s : numpy.ndarray
        Travel time of the earliest ray, seconds.
    point_chainage_m, point_depth_m : numpy.ndarray
        Reflection point (reflections) or deepest point of the ray in the
        turning layer (turning rays), metres.
    incidence_deg : numpy.ndarray
        Angle between the ray and the reflector's normal at the reflection
        point, degrees (NaN for turning rays).
    takeoff_deg : numpy.ndarray
        Take-off angle from the downward vertical, degrees, positive towards
        increasing chainage.
    emergence_deg : numpy.ndarray
        Angle of the arriving ray from the upward vertical, degrees, positive
        when it travels towards increasing chainage.
    ray_parameter_s_per_m : numpy.ndarray
        Horizontal slowness at the source, :math:`\\sin(\\text{take-off})/v`,
        s/m (signed like the take-off angle).  With Earth flattening it is
        :math:`p_s / R`, the spherical ray parameter over the datum radius.
    n_branches : numpy.ndarray
        How many distinct rays of the phase reach the receiver (0 when none;
        more than 1 in a triplication).
    misfit_m : numpy.ndarray
        Distance along the surface between the final ray's emergence and the
        receiver, metres (the time is corrected for it to first order).
    status : numpy.ndarray of str
        ``'ok'``, ``'no_ray'`` (no ray of this phase reaches the receiver),
        ``'bad_position'`` (receiver chainage or depth not finite) or
        ``'bad_source'``.
    flags : numpy.ndarray of str
        ';'-joined warnings: ``multiple_branches``, ``receiver_off_surface``,
        ``source_below_target``, ``fan_budget_reached`` (the fan stopped
        refining at 40 rays per first-fan ray plus 10 per receiver: rays may be
        missing where the emergence is very irregular).
    paths : list or None
        With ``return_paths``: per receiver an (n, 2) array of (chainage,
        depth) along the earliest ray, or None.
    n_traced : int
        Rays traced in all.
    branches : dict
        Every distinct ray found, not only the earliest: arrays ``receiver``
        (index), ``theta_rad`` (take-off angle) and ``time_s``.
    """

    phase: str
    source_chainage_m: float
    source_depth_m: float
    receiver_chainage_m: np.ndarray
    receiver_depth_m: np.ndarray
    time_s: np.ndarray
    point_chainage_m: np.ndarray
    point_depth_m: np.ndarray
    incidence_deg: np.ndarray
    takeoff_deg: np.ndarray
    emergence_deg: np.ndarray
    ray_parameter_s_per_m: np.ndarray
    n_branches: np.ndarray
    misfit_m: np.ndarray
    status: np.ndarray
    flags: np.ndarray
    paths: list | None = None
    n_traced: int = 0
    branches: dict = field(default_factory=dict, repr=False)

    def to_frame(self):
        """The per-receiver arrays as a pandas DataFrame (columns :data:`RESULT_COLUMNS`)."""
        import pandas as pd

        return pd.DataFrame({c: getattr(self, c) for c in RESULT_COLUMNS})


# ---------------------------------------------------------------------------
# the tracer
# ---------------------------------------------------------------------------


class RayTracer2D:
    """Two-point ray tracer for one model, reused over many shots.

    Parameters
    ----------
    model : LayeredModel or TraceModel
        The velocity model.
    surface_chainage_m, surface_depth_m : array_like, optional
        Points the recording surface must pass through, metres (typically all
        stations of the line).  Rays emerge on the surface made of the model's
        top shifted, between these points, to pass through them.  By default
        every call uses its own receivers.
    smooth : bool
        Replace the internal interfaces by a shape-preserving PCHIP spline
        through their nodes (resampled within ``smooth_tol_m``; normals from
        the spline's slope), so that kinks at nodes make no false caustics or
        coverage gaps.
    smooth_tol_m : float
        Largest distance between the spline and its resampled chords, metres.
    flatten : bool
        Earth flattening (:mod:`geosect.model.flattening`): chainage is arc
        length along the datum sphere, times are spherical times.
    radius_m : float
        Datum radius for flattening, metres.
    flatten_bottom_m : float
        Thickness of the half-space sub-layered for flattening, metres.
    step_m : float
        Longest Runge-Kutta step in layers with lateral change, metres.
    max_turn : float
        Largest ray turn per Runge-Kutta step, radians (steps are at most
        ``max_turn * v / |grad v|`` long).
    parallel : bool
        Share the rays of a call between threads (numba).
    """

    def __init__(self, model: Any, *, surface_chainage_m=None, surface_depth_m=None,
                 smooth: bool = False, smooth_tol_m: float = 0.05, flatten: bool = False,
                 radius_m: float = EARTH_RADIUS_M, flatten_bottom_m: float = 200e3,
                 step_m: float = 2000.0, max_turn: float = 0.02, node_steps: bool = True,
                 parallel: bool = True):
        self.model = as_trace_model(model)
        self.smooth = bool(smooth)
        self.smooth_tol_m = float(smooth_tol_m)
        self.flatten = bool(flatten)
        self.radius_m = float(radius_m)
        self.flatten_bottom_m = float(flatten_bottom_m)
        self.step_m = float(step_m)
        self.max_turn = float(max_turn)
        self.node_steps = bool(node_steps)
        self.parallel = bool(parallel)
        self._fixed = None
        if surface_chainage_m is not None:
            self._fixed = self._surface(np.asarray(surface_chainage_m, float),
                                        np.asarray(surface_depth_m, float))
        self._cache: dict = {}

    # .................................................................. set-up

    def _surface(self, rx: np.ndarray, rz: np.ndarray):
        """Recording surface: the model top shifted to pass through the given points."""
        tx, tz = self.model.interfaces[0]
        good = np.isfinite(rx) & np.isfinite(rz)
        if not good.any():
            return tx, tz
        rx, rz = rx[good], rz[good]
        ux, inv = np.unique(rx, return_inverse=True)
        res = np.bincount(inv, rz - np.interp(rx, tx, tz)) / np.bincount(inv)
        if np.all(np.abs(res) < 1e-3):
            return tx, tz  # the points lie on the model top: it is the surface (and one cache entry)
        x = np.union1d(tx, ux)
        return x, np.interp(x, tx, tz) + np.interp(x, ux, res)

    def _packed(self, wave: str, rx: np.ndarray, rz: np.ndarray) -> _Packed:
        surf = self._fixed if self._fixed is not None else self._surface(rx, rz)
        key = (wave, surf[0].tobytes(), surf[1].tobytes())
        pk = self._cache.get(key)
        if pk is None:
            if len(self._cache) > 8:
                self._cache.clear()
            pk = _pack(self.model, wave, surf, smooth=self.smooth, smooth_tol_m=self.smooth_tol_m,
                       flatten=self.flatten, radius_m=self.radius_m,
                       flatten_bottom_m=self.flatten_bottom_m)
            self._cache[key] = pk
        return pk

    def _program(self, ph: Phase) -> tuple[int, int]:
        """(kind of path: 0 reflection, 1 turning; model interface or layer index) of a phase."""
        tm = self.model
        if ph.kind == "reflection":
            k = tm.interface_index(ph.target)
            if k == 0:
                raise InputError(f"phase '{ph}': '{ph.target}' is the top surface, not a reflector",
                                 key="phase", fix="name an interface below the surface")
            return 0, k
        if ph.kind == "turning":
            return 1, tm.layer_index(ph.target)
        raise InputError(f"phase '{ph}': the 2D ray tracer traces 'reflection:<interface>' and "
                         f"'turning:<layer>' phases, not '{ph.kind}'", key="phase",
                         fix="use the 1D solver (LayeredModel.traveltime on a column) or the "
                             "eikonal solver for direct, head and first arrivals")

    # .................................................................. tracing

    def _shoot(self, pk: _Packed, prog, src_layer, xs, zs, theta, prm, paths=0):
        self.n_traced += int(np.size(theta))
        return K.trace_rays(pk.arrays, prog[0], prog[1], src_layer, xs, zs, theta, prm,
                            paths=paths, parallel=self.parallel)

    def trace(self, source_chainage_m: float, source_depth_m: float, receiver_chainage_m,
              receiver_depth_m, phase: str | Phase, *, n_rays: int = 181, tol_m: float = 1.0,
              max_gap_m: float | None = None, return_paths: bool = False,
              max_path_points: int = 4000) -> TraceResult:
        """Two-point rays of one phase from one source to many receivers.

        Parameters
        ----------
        source_chainage_m, source_depth_m : float
            Source position, metres (depth positive down: a borehole shot 30 m
            below a surface at 850 m elevation has depth -820 m).
        receiver_chainage_m, receiver_depth_m : array_like
            Receiver positions, metres; receivers lie on the recording surface.
        phase : str or Phase
            ``'[P|S:]reflection:<interface>'`` or ``'[P|S:]turning:<layer>'``.
        n_rays : int
            Rays in the first, even fan of take-off angles (then refined
            where rays spread, turn back in emergence, or are lost).
        tol_m : float
            Largest emergence misfit accepted, metres.
        max_gap_m : float, optional
            Refine the fan until neighbouring rays that bracket receivers
            emerge at most this far apart (default: 5 median receiver
            spacings, at least 50 m).
        return_paths : bool
            Also return the ray path to each receiver.
        max_path_points : int
            Most points kept per path.

        Returns
        -------
        TraceResult
        """
        self.n_traced = 0
        ph = parse_phase(phase)
        prog_type, target_model = self._program(ph)
        xs = float(source_chainage_m)
        zs = float(source_depth_m)
        rx = np.atleast_1d(np.asarray(receiver_chainage_m, float)).ravel()
        rz = np.broadcast_to(np.asarray(receiver_depth_m, float), rx.shape).astype(float)
        res = _empty_result(str(ph), xs, zs, rx, rz, return_paths)
        good = np.isfinite(rx) & np.isfinite(rz)
        res.status[~good] = "bad_position"
        if not (np.isfinite(xs) and np.isfinite(zs)):
            res.status[:] = "bad_source"
            return res
        if not good.any():
            return res
        pk = self._packed(ph.wave, rx, rz)
        R = self.radius_m
        zs_t = float(flatten_depth(zs, R)) if self.flatten else zs
        rz_t = flatten_depth(rz, R) if self.flatten else rz
        src_layer = pk.layer_at(xs, zs_t)
        if prog_type == 0:
            kt = int(pk.iface[target_model])
            if pk.group[src_layer] >= target_model:
                res.flags[good] = "source_below_target"
                res.status[good] = "no_ray"
                return res
        else:
            kt = target_model
            if pk.group[src_layer] > target_model:
                res.flags[good] = "source_below_target"
                res.status[good] = "no_ray"
                return res
        prog = (prog_type, kt)
        gx = rx[good]
        span_lo = min(gx.min(), xs)
        span_hi = max(gx.max(), xs)
        pad = max(0.1 * (span_hi - span_lo), 2000.0)
        n_if = pk.arrays[3].size - 1
        tmax = 20.0 * (span_hi - span_lo + 2 * pad + 2 * float(np.max(np.abs(pk.arrays[1])))) / pk.vmin
        prm = np.array([span_lo - pad, span_hi + pad, self.step_m, self.max_turn, _EPS_COINCIDE,
                        tmax, 8 * n_if + 16, 50000, 1e-6, 1.0 if self.node_steps else 0.0])
        rs = np.sort(gx)
        if max_gap_m is None:
            sp = np.diff(np.unique(rs))
            max_gap_m = max(5.0 * float(np.median(sp)) if sp.size else 500.0, 50.0)
        th, out = self._fan(pk, prog, src_layer, xs, zs_t, prm, rs, n_rays, tol_m, max_gap_m)
        th, out, jump = self._jumps(pk, prog, src_layer, xs, zs_t, prm, th, out, rs, tol_m,
                                    max_gap_m)
        conv = self._solve(pk, prog, src_layer, xs, zs_t, prm, th, out, jump, rx, good, tol_m)
        self._assemble(res, pk, conv, rx, rz_t, xs, zs_t, src_layer, prm, prog, return_paths,
                       max_path_points)
        res.n_traced = self.n_traced
        return res

    def _fan(self, pk, prog, src_layer, xs, zs, prm, rs, n_rays, tol_m, max_gap_m,
             max_levels: int = 40, dth_min: float = _DTH_MIN, dth_edge: float = 1e-10):
        """Adaptive fan of take-off angles: (angles, kernel rows), sorted by angle."""
        thmax = np.radians(89.9)
        th = np.linspace(-thmax, thmax, max(int(n_rays), 3))
        # shifted off the vertical by a small odd fraction of the spacing, so that no
        # ray of a symmetric set-up hits a node (a kink) exactly
        th = np.clip(th + 0.0137 * (th[1] - th[0]), -thmax, thmax)
        out = self._shoot(pk, prog, src_layer, xs, zs, th, prm)[0]
        self.budget_hit = False
        max_fan = 40 * th.size + 10 * rs.size
        for _ in range(max_levels):
            if th.size > max_fan:
                self.budget_hit = True
                break
            ok = out[:, 0] == 0
            X = out[:, 1]
            both = ok[:-1] & ok[1:]
            lo = np.minimum(X[:-1], X[1:])
            hi = np.maximum(X[:-1], X[1:])
            with np.errstate(invalid="ignore"):
                cnt = np.searchsorted(rs, hi, "right") - np.searchsorted(rs, lo, "left")
                cnt = np.where(both, cnt, 0)
                flag = both & (cnt > 0) & (hi - lo > max_gap_m)
                d = np.diff(X)
                ext = both[:-1] & both[1:] & (d[:-1] * d[1:] < 0)
                xe = X[1:-1]
                near = (np.searchsorted(rs, xe + max_gap_m, "right")
                        - np.searchsorted(rs, xe - max_gap_m, "left")) > 0
                ext &= near
            e2 = np.zeros(flag.size, bool)
            e2[:-1] |= ext
            e2[1:] |= ext
            flag |= e2 & (hi - lo > tol_m)
            flag &= np.diff(th) > dth_min
            # where rays stop existing (post-critical, turning back), down to dth_edge;
            # and between lost rays lost for different reasons, where a narrow window
            # of good rays may hide
            code = out[:, 0]
            flag |= (ok[:-1] != ok[1:]) & (np.diff(th) > dth_edge)
            flag |= (~ok[:-1] & ~ok[1:] & (code[:-1] != code[1:])) & (np.diff(th) > dth_min)
            if not flag.any():
                break
            new = 0.5 * (th[:-1][flag] + th[1:][flag])
            o2 = self._shoot(pk, prog, src_layer, xs, zs, new, prm)[0]
            th = np.concatenate([th, new])
            out = np.concatenate([out, o2])
            order = np.argsort(th, kind="stable")
            th = th[order]
            out = out[order]
        return th, out

    def _jumps(self, pk, prog, src_layer, xs, zs, prm, th, out, rs, tol_m, max_gap_m,
               dth_min: float = _DTH_MIN):
        """Tell jumps in emergence from steep but continuous stretches.

        Kinks in interfaces or velocity make true gaps between neighbouring
        rays: no ray emerges between them, however close their take-off
        angles.  Intervals the fan could not close (wider than ``max_gap_m``,
        or more than ``10 tol_m`` at the finest angle step) get one more ray
        at their middle: where one half still holds nine tenths of the spread,
        that half is a jump and brackets nothing.
        """
        ok = out[:, 0] == 0
        X = out[:, 1]
        dX = np.abs(np.diff(X))
        both = ok[:-1] & ok[1:]
        lo = np.minimum(X[:-1], X[1:])
        hi = np.maximum(X[:-1], X[1:])
        with np.errstate(invalid="ignore"):
            has = (np.searchsorted(rs, hi + tol_m, "right")
                   - np.searchsorted(rs, lo - tol_m, "left")) > 0
            cand = both & has & ((dX > max_gap_m)
                                 | ((np.diff(th) <= 4 * dth_min) & (dX > 10 * tol_m)))
        ic = np.flatnonzero(cand)
        if ic.size == 0:
            return th, out, np.zeros(th.size - 1, bool)
        mid = 0.5 * (th[ic] + th[ic + 1])
        om = self._shoot(pk, prog, src_layer, xs, zs, mid, prm)[0]
        okm = om[:, 0] == 0
        left = np.abs(om[:, 1] - X[ic])
        right = np.abs(X[ic + 1] - om[:, 1])
        spread = dX[ic]
        jl = ~okm | (left > 0.9 * spread)
        jr = ~okm | (right > 0.9 * spread)
        th2 = np.concatenate([th, mid])
        out2 = np.concatenate([out, om])
        order = np.argsort(th2, kind="stable")
        # the new ray at sorted position q splits its interval into q - 1 and q
        pos = np.empty(th2.size, int)
        pos[order] = np.arange(th2.size)
        q = pos[th.size:]
        jump = np.zeros(th2.size - 1, bool)
        jump[q - 1] = jl
        jump[q] = jr
        return th2[order], out2[order], jump

    def _solve(self, pk, prog, src_layer, xs, zs, prm, th, out, jump, rx, good, tol_m,
               max_iter: int = 30):
        """Bracket every receiver between neighbouring rays and refine each bracket."""
        ok = out[:, 0] == 0
        X = out[:, 1]
        ia = np.flatnonzero(ok[:-1] & ok[1:] & ~jump)
        gi = np.flatnonzero(good)
        order = gi[np.argsort(rx[gi], kind="stable")]
        rs = rx[order]
        lo = np.minimum(X[ia], X[ia + 1])
        hi = np.maximum(X[ia], X[ia + 1])
        start = np.searchsorted(rs, lo - tol_m, "left")
        stop = np.searchsorted(rs, hi + tol_m, "right")
        cnt = np.maximum(stop - start, 0)
        total = int(cnt.sum())
        empty = {"recv": np.zeros(0, int), "theta": np.zeros(0), "row": np.zeros((0, 10))}
        if total == 0:
            return empty
        first = np.repeat(start, cnt) + (np.arange(total) - np.repeat(np.cumsum(cnt) - cnt, cnt))
        recv = order[first]
        pint = np.repeat(ia, cnt)
        ta = th[pint].copy()
        tb = th[pint + 1].copy()
        xr = rx[recv]
        fa = X[pint] - xr
        fb = X[pint + 1] - xr
        # keep brackets with a sign change (or an end point within tolerance)
        keep = (fa * fb <= 0) | (np.abs(fa) <= tol_m) | (np.abs(fb) <= tol_m)
        recv, ta, tb, fa, fb, xr, pint = (a[keep] for a in (recv, ta, tb, fa, fb, xr, pint))
        m = recv.size
        c_theta = np.full(m, np.nan)
        c_row = np.full((m, 10), np.nan)
        hit_a = np.abs(fa) <= tol_m
        hit_b = (np.abs(fb) <= tol_m) & ~hit_a
        c_theta[hit_a] = ta[hit_a]
        c_row[hit_a] = out[pint[hit_a]]
        c_theta[hit_b] = tb[hit_b]
        c_row[hit_b] = out[pint[hit_b] + 1]
        active = ~(hit_a | hit_b)
        losses = np.zeros(m, int)
        bisect = np.zeros(m, bool)
        guess = _quadratic_guess(th, X, ok, pint, xr)
        for it in range(max_iter):
            act = np.flatnonzero(active)
            if act.size == 0:
                break
            a_, b_, fa_, fb_ = ta[act], tb[act], fa[act], fb[act]
            with np.errstate(invalid="ignore", divide="ignore"):
                tn = b_ - fb_ * (b_ - a_) / (fb_ - fa_)
            if it == 0:
                g = guess[act]
                tn = np.where(np.isfinite(g), g, tn)
            lo_t = np.minimum(a_, b_)
            hi_t = np.maximum(a_, b_)
            bad = ~np.isfinite(tn) | (tn <= lo_t) | (tn >= hi_t) | bisect[act]
            tn = np.where(bad, 0.5 * (a_ + b_), tn)
            row = self._shoot(pk, prog, src_layer, xs, zs, tn, prm)[0]
            okn = row[:, 0] == 0
            fn = row[:, 1] - xr[act]
            # lost rays: bisect next time, give up after three
            lost = act[~okn]
            losses[lost] += 1
            bisect[act] = ~okn
            active[lost[losses[lost] >= 3]] = False
            good_n = okn
            done = good_n & (np.abs(fn) <= tol_m)
            c_theta[act[done]] = tn[done]
            c_row[act[done]] = row[done]
            active[act[done]] = False
            upd = good_n & ~done
            u = act[upd]
            fnu = fn[upd]
            tnu = tn[upd]
            swap = fnu * fb[u] < 0
            ta[u] = np.where(swap, tb[u], ta[u])
            fa[u] = np.where(swap, fb[u], 0.5 * fa[u])
            tb[u] = tnu
            fb[u] = fnu
            # a bracket shrunk to nothing holds no ray (a jump the fan did not see)
            active &= np.abs(tb - ta) >= 1e-12
        got = np.isfinite(c_theta)
        return {"recv": recv[got], "theta": c_theta[got], "row": c_row[got]}

    def _assemble(self, res: TraceResult, pk: _Packed, conv: dict, rx, rz_t, xs, zs, src_layer,
                  prm, prog, return_paths: bool, max_path_points: int) -> None:
        recv, theta, row = conv["recv"], conv["theta"], conv["row"]
        flags = [[f] if f else [] for f in res.flags]
        good = res.status != "bad_position"
        res.status[good] = "no_ray"
        if recv.size:
            # distinct rays per receiver
            o = np.lexsort((theta, recv))
            recv, theta, row = recv[o], theta[o], row[o]
            dup = np.zeros(recv.size, bool)
            dup[1:] = (recv[1:] == recv[:-1]) & (np.abs(np.diff(theta)) < 1e-9)
            recv, theta, row = recv[~dup], theta[~dup], row[~dup]
            # time corrected for the emergence misfit along the surface
            sx, sz = pk.surface
            xe, ze, te, dxe, dze, ve = (row[:, k] for k in range(1, 7))
            if sx.size > 1:
                kseg = np.clip(np.searchsorted(sx, xe, "right") - 1, 0, sx.size - 2)
                mslope = (sz[kseg + 1] - sz[kseg]) / (sx[kseg + 1] - sx[kseg])
                mslope = np.where((xe < sx[0]) | (xe >= sx[-1]), 0.0, mslope)
            else:
                mslope = np.zeros(xe.size)
            dxr = rx[recv] - xe
            t = te + (dxe + mslope * dze) / ve * dxr
            misfit = np.abs(dxr) * np.sqrt(1.0 + mslope ** 2)
            # receivers off the recording surface: vertical correction
            zsurf = np.interp(rx[recv], sx, sz)
            off = rz_t[recv] - zsurf
            t = t + off * dze / ve
            counts = np.bincount(recv, minlength=rx.size)
            o = np.lexsort((t, recv))
            firsts = o[np.r_[True, recv[o][1:] != recv[o][:-1]]]
            r_ = recv[firsts]
            res.time_s[r_] = t[firsts]
            res.n_branches[:] = counts
            res.misfit_m[r_] = misfit[firsts]
            px, pz = row[firsts, 7], row[firsts, 8]
            if pk.flatten:
                pz = unflatten_depth(pz, pk.radius_m)
            res.point_chainage_m[r_] = px
            res.point_depth_m[r_] = pz
            res.incidence_deg[r_] = row[firsts, 9]
            th = theta[firsts]
            res.takeoff_deg[r_] = np.degrees(th)
            vs = pk.velocity(src_layer, np.full(th.size, xs), np.full(th.size, zs))
            res.ray_parameter_s_per_m[r_] = np.sin(th) / vs
            res.emergence_deg[r_] = np.degrees(np.arctan2(dxe[firsts], -dze[firsts]))
            res.status[r_] = "ok"
            for k, r in enumerate(r_):
                if counts[r] > 1:
                    flags[r].append("multiple_branches")
                if abs(off[firsts[k]]) > 0.01:
                    flags[r].append("receiver_off_surface")
            res.branches = {"receiver": recv, "theta_rad": theta, "time_s": t}
            if return_paths:
                o2, ppx, ppz, ppn = self._shoot(pk, prog, src_layer, xs, zs, th, prm,
                                                paths=max_path_points)
                paths: list = [None] * rx.size
                for k, r in enumerate(r_):
                    zz = ppz[k, :ppn[k]]
                    if pk.flatten:
                        zz = unflatten_depth(zz, pk.radius_m)
                    paths[r] = np.column_stack([ppx[k, :ppn[k]], zz])
                res.paths = paths
        if getattr(self, "budget_hit", False):
            for r in np.flatnonzero(good):
                flags[r].append("fan_budget_reached")
        res.flags[:] = [";".join(f) for f in flags]


def _quadratic_guess(th, X, ok, pint, xr):
    """Take-off angle at which each receiver is expected, by inverse quadratic interpolation.

    Through the bracketing rays ``pint``, ``pint + 1`` and the neighbour on the
    receiver's side, where the three emerge in monotone order; NaN elsewhere.
    """
    n = th.size
    left = pint - 1
    right = pint + 2
    xa, xb = X[pint], X[pint + 1]
    use_left = np.abs(xr - xa) < np.abs(xr - xb)
    k = np.where(use_left, left, right)
    valid = (k >= 0) & (k < n)
    k = np.clip(k, 0, n - 1)
    xk = X[k]
    valid &= ok[k]
    mono = np.where(use_left, (xa - xk) * (xb - xa) > 0, (xk - xb) * (xb - xa) > 0)
    valid &= mono
    x0 = np.where(use_left, xk, xa)
    x1 = np.where(use_left, xa, xb)
    x2 = np.where(use_left, xb, xk)
    t0 = np.where(use_left, th[k], th[pint])
    t1 = np.where(use_left, th[pint], th[pint + 1])
    t2 = np.where(use_left, th[pint + 1], th[k])
    with np.errstate(invalid="ignore", divide="ignore"):
        g = (t0 * (xr - x1) * (xr - x2) / ((x0 - x1) * (x0 - x2))
             + t1 * (xr - x0) * (xr - x2) / ((x1 - x0) * (x1 - x2))
             + t2 * (xr - x0) * (xr - x1) / ((x2 - x0) * (x2 - x1)))
    lo = np.minimum(th[pint], th[pint + 1])
    hi = np.maximum(th[pint], th[pint + 1])
    valid &= np.isfinite(g) & (g > lo) & (g < hi)
    return np.where(valid, g, np.nan)


def _empty_result(phase: str, xs: float, zs: float, rx: np.ndarray, rz: np.ndarray,
                  paths: bool) -> TraceResult:
    n = rx.size
    nan = np.full(n, np.nan)
    return TraceResult(
        phase=phase, source_chainage_m=xs, source_depth_m=zs, receiver_chainage_m=rx.copy(),
        receiver_depth_m=np.asarray(rz, float).copy(), time_s=nan.copy(),
        point_chainage_m=nan.copy(), point_depth_m=nan.copy(), incidence_deg=nan.copy(),
        takeoff_deg=nan.copy(), emergence_deg=nan.copy(), ray_parameter_s_per_m=nan.copy(),
        n_branches=np.zeros(n, int), misfit_m=nan.copy(),
        status=np.full(n, "no_ray", dtype=object), flags=np.full(n, "", dtype=object),
        paths=[None] * n if paths else None)


def trace_shot(model: Any, source_chainage_m: float, source_depth_m: float, receiver_chainage_m,
               receiver_depth_m, phase: str | Phase, *, n_rays: int = 181, tol_m: float = 1.0,
               smooth: bool = False, flatten: bool = False, return_paths: bool = False,
               **options) -> TraceResult:
    """Two-point rays of one phase from one shot to its receivers.

    A convenience around :class:`RayTracer2D` (build one tracer and call
    :meth:`RayTracer2D.trace` when tracing many shots through one model).

    Parameters
    ----------
    model : LayeredModel or TraceModel
        The velocity model.
    source_chainage_m, source_depth_m : float
        Source position, metres (depth positive down).
    receiver_chainage_m, receiver_depth_m : array_like
        Receivers, metres; they lie on the recording surface (the model top
        shifted to pass through them).
    phase : str
        ``'[P|S:]reflection:<interface>'`` or ``'[P|S:]turning:<layer>'``.
    n_rays, tol_m, return_paths
        See :meth:`RayTracer2D.trace`.
    smooth, flatten
        See :class:`RayTracer2D`.
    **options
        Further keywords of :class:`RayTracer2D` (``step_m``, ``max_turn``,
        ``smooth_tol_m``, ``radius_m``, ``parallel``) and of
        :meth:`RayTracer2D.trace` (``max_gap_m``, ``max_path_points``).

    Returns
    -------
    TraceResult

    Examples
    --------
    >>> from geosect.model.raytrace2d import TraceModel, trace_shot
    >>> m = TraceModel.flat([0.0, 2000.0], [2000.0, 3000.0], names=["top", "base"])
    >>> r = trace_shot(m, 0.0, 0.0, [0.0, 1500.0], [0.0, 0.0], "reflection:base")
    >>> [round(float(t), 4) for t in r.time_s]   # 2 h / v and sqrt(x^2 + 4 h^2) / v
    [2.0, 2.136]
    """
    trace_kw = {k: options.pop(k) for k in ("max_gap_m", "max_path_points") if k in options}
    tracer = RayTracer2D(model, smooth=smooth, flatten=flatten, **options)
    return tracer.trace(source_chainage_m, source_depth_m, receiver_chainage_m, receiver_depth_m,
                        phase, n_rays=n_rays, tol_m=tol_m, return_paths=return_paths, **trace_kw)
