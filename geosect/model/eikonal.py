"""First arrivals and phase-by-phase travel times on a 2D grid by fast marching.

The section (chainage along the line, depth below the datum) is sampled on a
square grid of spacing ``h``.  Travel times solve the eikonal equation
:math:`|\\nabla T| = 1/v` by the fast marching method of Sethian (1996, PNAS 93,
1591-1595) with second-order upwind differences, compiled with numba
(:mod:`geosect.model._fmm_kernels`), and with triangle updates from diagonal
neighbours.  Nodes above a DEM surface are air and are not traversed: the row
right above the ground is marched for the sake of the ground nodes at the steps
of the staircase surface (first-order use only), the air above it only receives
times extrapolated from the ground, so that a receiver on the surface can be
read by bilinear interpolation.

Phases are computed by the multistage scheme of Rawlinson & Sambridge (2004,
"Wave front evolution in strongly heterogeneous layered media using the fast
marching method", Geophys. J. Int. 156, 631-647): the wave front is marched
through one layer at a time, and the times it leaves on an interface start the
march in the next layer: down (transmission), back up into the same layer
(``reflection:<name>``), or, where the times along the top of the layer below
overtake the incident ones, up from the refractor (``head:<name>``).  The
times are carried across an interface at its true depth (between grid rows),
not at the nearest row: they are interpolated onto the interface from the side
just marched, and the two grid rows of the next layer along the interface take
the least time over nearby interface points (Huygens' principle, which keeps
Snell's law and the curvature of the front).  See ``docs/methods-eikonal.md``.

``first`` is, by default, the earliest of the direct (transmitted) wave and of
every head/turning wave of the multistage scheme; ``method='grid'`` gives
instead the classic single march through the whole gridded model (any path,
interfaces as the grid sees them, with cell-averaged slowness at interfaces).

The module works on a :class:`LayerSection` (arrays of interface depths and
velocity laws along chainage); :meth:`LayerSection.from_model` builds one from
a :class:`geosect.model.LayeredModel`, and every public function accepts
either.

Status values (as those of :mod:`geosect.model.oned`): ``ok``, ``no_ray``,
``below_critical_distance`` (a head wave before its critical distance),
``not_head_wave_interface`` (no head wave reaches the receiver: the layer
below the interface is nowhere faster than the layers it must cross),
``endpoint_below_interface``, ``pinched_out``, ``outside_model`` (receiver
outside the grid), ``bad_coordinates`` (not finite).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Sequence

import numpy as np
from scipy import ndimage

from geosect.errors import InputError, ModelError
from geosect.model._fmm_kernels import march
from geosect.model.phases import Phase, parse_phase

__all__ = [
    "LayerSection",
    "TimeField",
    "Reading",
    "RayPaths",
    "first_arrivals",
    "phase_times",
    "time_field",
    "ray_paths",
    "ray_path",
    "default_spacing_m",
    "DEFAULT_SPACING_M",
    "STATUSES",
]

#: Grid spacing used when the model and the frequency ask for nothing finer, metres.
DEFAULT_SPACING_M: float = 250.0
#: Half-width of the box of analytic times around a point source, in grid cells.
SOURCE_BOX_CELLS: int = 10
#: Width of the band (in cells) over which a stage marches its layer's law beyond the layer,
#: and of the halo of extrapolated times above the ground.
HALO_CELLS: int = 3
#: Air cells above the ground marched with the top layer's law (first-order use only).
AIR_BAND_CELLS: int = 1
#: Largest grid an automatic spacing may produce (nodes); the spacing is coarsened beyond.
MAX_AUTO_NODES: int = 6_000_000
#: Half-width of the grid around the source for a model with no extent along the line, metres.
DEFAULT_HALF_SPAN_M: float = 100e3
#: Default vp/vs ratio when a section has no S velocities.
DEFAULT_VPVS: float = 1.73

#: Status values of a reading.
STATUSES: tuple[str, ...] = ("ok", "no_ray", "below_critical_distance", "not_head_wave_interface",
           "endpoint_below_interface", "pinched_out", "outside_model", "bad_coordinates")


# =============================================================================== section


def _as2d(a, n_layers: int, n: int, what: str) -> np.ndarray:
    arr = np.asarray(a, dtype=float)
    if arr.ndim == 1 and arr.size == n_layers:
        arr = np.repeat(arr[:, None], n, axis=1)
    if arr.shape != (n_layers, n):
        raise ModelError(f"{what} has shape {arr.shape}, expected ({n_layers}, {n}) "
                         f"(layers x chainage nodes)", key=what,
                         fix=f"give one row per layer and one column per chainage node, "
                             f"or one value per layer")
    return arr


@dataclass(frozen=True, eq=False)
class LayerSection:
    """A 2D layered section described by arrays along chainage.

    Layer ``k`` lies between depths ``tops_m[k]`` and ``tops_m[k + 1]`` (the
    last layer is a half-space); within a layer the velocity is linear in depth,
    :math:`v = v_{top}(x) + g(x)\\,(z - z_{top}(x))`, and every array is
    interpolated linearly in chainage between the nodes (held constant beyond
    the first and last node).

    Parameters
    ----------
    chainage_m : array_like, shape (n,)
        Chainage of the nodes, metres, increasing.
    tops_m : array_like, shape (n_layers, n)
        Depth of the top of each layer below the datum, metres (negative above
        it).  ``tops_m[0]`` is the top of the model: the ground surface (for
        ``open_top=False``) or the datum.
    vp_top_ms : array_like, shape (n_layers, n) or (n_layers,)
        P velocity at the top of each layer, m/s.
    vp_gradient_per_s : array_like, optional
        dv/dz of P in each layer, 1/s (default 0).
    vs_top_ms, vs_gradient_per_s : array_like, optional
        The same for S; by default P divided by ``vpvs``.
    interface_names : sequence of str, optional
        Name of the interface at the top of each layer (``interface_names[0]``
        names the top surface).
    layer_names : sequence of str, optional
        Name of each layer.
    open_top : bool
        True: the top layer continues upward above ``tops_m[0]`` (a flat-top
        model; sources and receivers above the datum lie in the top layer).
        False: ``tops_m[0]`` is the ground surface and above it is air.
    vpvs : float
        vp/vs used when no S velocities are given.
    """

    chainage_m: np.ndarray
    tops_m: np.ndarray
    vp_top_ms: np.ndarray
    vp_gradient_per_s: np.ndarray | None = None
    vs_top_ms: np.ndarray | None = None
    vs_gradient_per_s: np.ndarray | None = None
    interface_names: tuple[str, ...] = ()
    layer_names: tuple[str, ...] = ()
    open_top: bool = True
    vpvs: float = DEFAULT_VPVS
    _laws: Any = field(default=None, repr=False, compare=False)

    def __post_init__(self) -> None:
        ch = np.atleast_1d(np.asarray(self.chainage_m, dtype=float))
        if ch.ndim != 1 or ch.size == 0 or not np.all(np.isfinite(ch)):
            raise ModelError("chainage_m must be a non-empty 1D array of finite numbers",
                             key="chainage_m", fix="give the chainage of each node in metres")
        if np.any(np.diff(ch) <= 0):
            raise ModelError("chainage_m is not strictly increasing", key="chainage_m",
                             fix="sort the nodes by chainage and remove repeated chainages")
        tops = np.asarray(self.tops_m, dtype=float)
        if tops.ndim == 1:
            tops = np.repeat(tops[:, None], ch.size, axis=1)
        n_layers = tops.shape[0]
        tops = _as2d(tops, n_layers, ch.size, "tops_m")
        if not np.all(np.isfinite(tops)):
            raise ModelError("tops_m holds values that are not finite", key="tops_m",
                             fix="give every interface depth in metres at every node")
        if np.any(np.diff(tops, axis=0) < -1e-6):
            k, i = np.argwhere(np.diff(tops, axis=0) < -1e-6)[0]
            raise ModelError(f"the top of layer {k + 1} ({tops[k + 1, i]:.1f} m) is above the top of "
                             f"layer {k} ({tops[k, i]:.1f} m) at chainage {ch[i]:.1f} m: "
                             f"interfaces cross", key="tops_m",
                             fix="order the interfaces from top to bottom; a layer may pinch out "
                                 "(zero thickness) but not overturn")
        vpt = _as2d(self.vp_top_ms, n_layers, ch.size, "vp_top_ms")
        vpg = np.zeros_like(vpt) if self.vp_gradient_per_s is None else \
            _as2d(self.vp_gradient_per_s, n_layers, ch.size, "vp_gradient_per_s")
        if not np.all(vpt > 0):
            raise ModelError("vp_top_ms must be positive everywhere", key="vp_top_ms",
                             fix="give velocities in m/s, for example 5800")
        vst = vsg = None
        if self.vs_top_ms is not None:
            vst = _as2d(self.vs_top_ms, n_layers, ch.size, "vs_top_ms")
            vsg = np.zeros_like(vst) if self.vs_gradient_per_s is None else \
                _as2d(self.vs_gradient_per_s, n_layers, ch.size, "vs_gradient_per_s")
            if not np.all(vst > 0):
                raise ModelError("vs_top_ms must be positive everywhere", key="vs_top_ms",
                                 fix="give velocities in m/s, for example 3350")
        if not self.vpvs > 1.0:
            raise ModelError(f"vpvs {self.vpvs!r} must be greater than 1", key="vpvs",
                             fix="use a ratio such as 1.73")
        inames = tuple(self.interface_names) or tuple(
            ["surface"] + [f"interface{k}" for k in range(1, n_layers)])
        lnames = tuple(self.layer_names) or tuple(f"layer{k + 1}" for k in range(n_layers))
        if len(inames) != n_layers or len(lnames) != n_layers:
            raise ModelError(f"{len(inames)} interface names and {len(lnames)} layer names for "
                             f"{n_layers} layers", key="interface_names",
                             fix="give one name per layer (the interface at its top)")
        for name, val in (("chainage_m", ch), ("tops_m", tops), ("vp_top_ms", vpt),
                          ("vp_gradient_per_s", vpg), ("vs_top_ms", vst),
                          ("vs_gradient_per_s", vsg), ("interface_names", inames),
                          ("layer_names", lnames)):
            object.__setattr__(self, name, val)

    # ------------------------------------------------------------------ building

    @classmethod
    def flat(cls, tops_m: Sequence[float], vp_ms: Sequence[float],
             names: Sequence[str] | None = None, *, gradients: Sequence[float] | None = None,
             vs_ms: Sequence[float] | None = None, vpvs: float = DEFAULT_VPVS,
             layer_names: Sequence[str] | None = None) -> "LayerSection":
        """A 1D stack of flat layers with a flat open top (no topography).

        Parameters
        ----------
        tops_m : sequence of float
            Depth of the top of each layer, metres (``tops_m[0]`` is the datum).
        vp_ms : sequence of float
            P velocity at the top of each layer, m/s.
        names : sequence of str, optional
            Name of the interface at the top of each layer.
        gradients : sequence of float, optional
            dv/dz of P in each layer, 1/s (S gets the same law divided by vp/vs).
        vs_ms : sequence of float, optional
            S velocity at the top of each layer, m/s.
        vpvs : float
            vp/vs when ``vs_ms`` is not given.
        layer_names : sequence of str, optional

        Examples
        --------
        >>> sec = LayerSection.flat([0, 20e3, 35e3], [5800, 6500, 8040],
        ...                         ["surface", "mid-crust", "moho"])
        >>> sec.n_layers, sec.interface_names[2]
        (3, 'moho')
        """
        tops = np.asarray(tops_m, dtype=float)
        vp = np.asarray(vp_ms, dtype=float)
        g = np.zeros_like(vp) if gradients is None else np.asarray(gradients, dtype=float)
        vs = vsg = None
        if vs_ms is not None:
            vs = np.asarray(vs_ms, dtype=float)
            vsg = g * vs / vp
        return cls(chainage_m=np.array([0.0]), tops_m=tops[:, None], vp_top_ms=vp[:, None],
                   vp_gradient_per_s=g[:, None],
                   vs_top_ms=None if vs is None else vs[:, None],
                   vs_gradient_per_s=None if vsg is None else vsg[:, None],
                   interface_names=tuple(names or ()), layer_names=tuple(layer_names or ()),
                   open_top=True, vpvs=vpvs)

    @classmethod
    def from_model(cls, model: Any, chainage_m: np.ndarray | None = None) -> "LayerSection":
        """Build the section from a :class:`geosect.model.LayeredModel` (or return a section as is).

        The interface depths and the velocity laws are sampled at ``chainage_m``
        (default: the model's own nodes, or 201 nodes over its extent).
        """
        if isinstance(model, LayerSection):
            return model
        return _section_from_layered(model, chainage_m)

    # ------------------------------------------------------------------ queries

    @property
    def n_layers(self) -> int:
        """Number of layers (the last one is a half-space)."""
        return int(self.tops_m.shape[0])

    def law(self, wave: str = "P") -> tuple[np.ndarray, np.ndarray]:
        """Velocity at the top (m/s) and gradient (1/s) of each layer, shape (n_layers, n)."""
        if wave == "P":
            return self.vp_top_ms, self.vp_gradient_per_s
        if self.vs_top_ms is not None:
            return self.vs_top_ms, self.vs_gradient_per_s
        return self.vp_top_ms / self.vpvs, self.vp_gradient_per_s / self.vpvs

    def interface_index(self, name: str) -> int:
        """Index of the interface called ``name`` (the top of layer ``index``)."""
        if name in self.interface_names:
            return self.interface_names.index(name)
        raise ModelError(f"the model has no interface '{name}'", key="phase",
                         fix=f"use one of {', '.join(repr(n) for n in self.interface_names[1:])}")

    def layer_index(self, name: str) -> int:
        """Index of the layer called ``name``."""
        if name in self.layer_names:
            return self.layer_names.index(name)
        raise ModelError(f"the model has no layer '{name}'", key="phase",
                         fix=f"use one of {', '.join(repr(n) for n in self.layer_names)}")

    def columns(self, x: np.ndarray, wave: str = "P") -> "_Columns":
        """The section at chainages ``x``: tops, velocity laws, surface (internal)."""
        x = np.asarray(x, dtype=float)
        laws = getattr(self, "_laws", None)
        if laws is not None:
            tops, vt, g = laws(x, wave)
            return _Columns(tops=np.maximum.accumulate(tops, axis=0), v_top=vt, grad=g,
                            open_top=self.open_top)
        ch = self.chainage_m

        def at(a):
            if ch.size == 1:
                return np.repeat(a[:, :1], x.size, axis=1)
            return np.stack([np.interp(x, ch, row) for row in a])

        tops = np.maximum.accumulate(at(self.tops_m), axis=0)
        vt, g = self.law(wave)
        return _Columns(tops=tops, v_top=at(vt), grad=at(g), open_top=self.open_top)

    def extent_m(self) -> tuple[float, float]:
        """Chainage range of the nodes, metres."""
        return float(self.chainage_m[0]), float(self.chainage_m[-1])


def _section_from_layered(model: Any, chainage_m: np.ndarray | None) -> LayerSection:
    """Sample a LayeredModel into a LayerSection (adapter of the agreed interface).

    The section keeps the model's per-layer laws (top depth, velocity at the
    top, gradient) at the nodes; when the model offers them per chainage
    (``LayeredModel._columns``) the grid columns are evaluated from the model
    itself, so that nothing is lost between nodes (a gradient set by top and
    bottom velocities over a varying thickness is not linear in chainage).
    """
    inames = list(model.interface_names)
    lnames = list(model.layer_names)
    if len(inames) != len(lnames):
        raise ModelError(f"model has {len(inames)} interfaces for {len(lnames)} layers",
                         fix="name the interface at the top of each layer")
    x = _model_nodes(model) if chainage_m is None else np.atleast_1d(
        np.asarray(chainage_m, dtype=float))
    open_top = getattr(model, "top", "datum") != "dem"
    provider = getattr(model, "_columns", None)
    if callable(provider):
        def laws(xx, wave):
            tops, vt, g = provider(np.asarray(xx, dtype=float), wave)
            return np.asarray(tops, float), np.asarray(vt, float), np.asarray(g, float)
    else:
        def laws(xx, wave):
            return _sampled_laws(model, inames, np.asarray(xx, dtype=float), wave)
    tops, vp, gp = laws(x, "P")
    _, vs, gs = laws(x, "S")
    sec = LayerSection(chainage_m=x, tops_m=np.maximum.accumulate(tops, axis=0), vp_top_ms=vp,
                       vp_gradient_per_s=gp, vs_top_ms=vs, vs_gradient_per_s=gs,
                       interface_names=tuple(inames), layer_names=tuple(lnames),
                       open_top=open_top)
    object.__setattr__(sec, "_laws", laws)
    return sec


def _model_nodes(model: Any) -> np.ndarray:
    """Union of the chainage nodes of a model's interfaces and layers."""
    nodes = [np.atleast_1d(np.asarray(getattr(part, "chainage_m"), dtype=float))
             for part in list(getattr(model, "interfaces", [])) + list(getattr(model, "layers", []))
             if getattr(part, "chainage_m", None) is not None]
    if not nodes:
        return np.array([0.0])
    return np.unique(np.concatenate(nodes))


def _sampled_laws(model: Any, inames: list[str], x: np.ndarray, wave: str):
    """Layer laws from ``interface_depth`` and ``velocity`` only (duck-typed models)."""
    n = len(inames)
    tops = np.stack([np.broadcast_to(np.asarray(model.interface_depth(nm, x), dtype=float),
                                     x.shape) for nm in inames])
    tops = np.maximum.accumulate(tops, axis=0)
    vt = np.empty((n, x.size))
    g = np.empty((n, x.size))
    for k in range(n):
        top = tops[k]
        bot = tops[k + 1] if k + 1 < n else top + 1000.0
        thick = bot - top
        eps = np.minimum(1e-3, 1e-6 * np.maximum(thick, 1.0))
        z1 = top + eps
        z2 = np.where(thick > 2e-3, bot - eps, z1 + 1.0)
        v1 = np.asarray(model.velocity(x, z1, wave=wave), dtype=float)
        v2 = np.asarray(model.velocity(x, z2, wave=wave), dtype=float)
        g[k] = (v2 - v1) / (z2 - z1)
        vt[k] = v1 - g[k] * eps
    return tops, vt, g


@dataclass
class _Columns:
    tops: np.ndarray     # (n_layers, nx) depth of the top of each layer (cumulative max)
    v_top: np.ndarray    # (n_layers, nx)
    grad: np.ndarray     # (n_layers, nx)
    open_top: bool

    def layer_of(self, z: np.ndarray) -> np.ndarray:
        """Layer index at depth z per column (-1 in the air); interfaces belong below."""
        cnt = np.sum(z[None, :] >= self.tops, axis=0) - 1
        if self.open_top:
            cnt = np.maximum(cnt, 0)
        return cnt

    def velocity(self, k: int | np.ndarray, z: np.ndarray, cols=slice(None)) -> np.ndarray:
        """Velocity law of layer k continued to depth z (m/s), kept positive."""
        vt = self.v_top[k, cols]
        v = vt + self.grad[k, cols] * (z - self.tops[k, cols])
        return np.maximum(v, 0.05 * vt)


# =============================================================================== grid


@dataclass(frozen=True)
class _Grid:
    x0: float
    z0: float
    h: float
    nx: int
    nz: int

    @property
    def x(self) -> np.ndarray:
        return self.x0 + self.h * np.arange(self.nx)

    @property
    def z(self) -> np.ndarray:
        return self.z0 + self.h * np.arange(self.nz)


def _nice_floor(h: float) -> float:
    """The largest of 1, 2, 2.5, 5 x 10^n not above h."""
    e = math.floor(math.log10(h))
    for m in (5.0, 2.5, 2.0, 1.0):
        if m * 10 ** e <= h * (1 + 1e-12):
            return m * 10 ** e
    return 10 ** e  # pragma: no cover


def default_spacing_m(model: Any, *, frequency_hz: float | None = None, wave: str = "P") -> float:
    """Grid spacing chosen from the model and, optionally, the dominant frequency.

    The spacing is the smallest of :data:`DEFAULT_SPACING_M`, a quarter of the
    median thickness of the thinnest layer, and (with a frequency) a quarter of
    the shortest wavelength :math:`v_{min}/f`, rounded down to 1, 2, 2.5 or 5
    times a power of ten.

    Parameters
    ----------
    model : LayerSection or LayeredModel
    frequency_hz : float, optional
        Dominant frequency of the data, Hz.
    wave : {'P', 'S'}

    Returns
    -------
    float
        Spacing in metres.

    Examples
    --------
    >>> sec = LayerSection.flat([0, 20e3, 35e3], [5800, 6500, 8040])
    >>> default_spacing_m(sec)
    250.0
    >>> default_spacing_m(sec, frequency_hz=8.0)
    100.0
    """
    sec = LayerSection.from_model(model)
    h = DEFAULT_SPACING_M
    if sec.n_layers > 1:
        thick = np.diff(sec.tops_m, axis=0)
        med = [np.median(t[t > 0]) for t in thick if np.any(t > 0)]
        if med:
            h = min(h, 0.25 * float(min(med)))
    if frequency_hz is not None:
        if not (np.isfinite(frequency_hz) and frequency_hz > 0):
            raise InputError(f"frequency_hz {frequency_hz!r} is not a positive number",
                             key="frequency_hz", fix="give the dominant frequency in Hz, e.g. 8")
        vt, _ = sec.law(wave)
        h = min(h, 0.25 * float(vt.min()) / float(frequency_hz))
    return _nice_floor(max(h, 1.0))


# =============================================================================== setup


class _Setup:
    """Grid, section columns and layer map of one computation."""

    def __init__(self, sec: LayerSection, wave: str, grid: _Grid):
        self.sec = sec
        self.wave = wave
        self.grid = grid
        self.cols = sec.columns(grid.x, wave)
        z = grid.z
        # jb[k, i]: first row at or below the top of layer k
        self.jb = np.stack([np.searchsorted(z, t, side="left") for t in self.cols.tops])
        if self.cols.open_top:
            self.jb[0] = 0
        rows = np.arange(grid.nz)[:, None]
        L = np.full((grid.nz, grid.nx), -1, dtype=np.int16)
        for k in range(sec.n_layers):
            L[rows >= self.jb[k][None, :]] = k
        self.L = L
        self.fprime = np.gradient(self.cols.tops, grid.h, axis=1) if grid.nx > 1 else \
            np.zeros_like(self.cols.tops)
        self._rows = {}

    def slowness(self, k: int, r0: int, r1: int) -> np.ndarray:
        z = self.grid.z[r0:r1][:, None]
        c = self.cols
        v = c.v_top[k][None, :] + c.grad[k][None, :] * (z - c.tops[k][None, :])
        return 1.0 / np.maximum(v, 0.05 * c.v_top[k][None, :])

    def layer_rows(self, k: int) -> tuple[int, int] | None:
        if k not in self._rows:
            rk = np.flatnonzero((self.L == k).any(axis=1))
            self._rows[k] = None if rk.size == 0 else (int(rk[0]), int(rk[-1]) + 1)
        return self._rows[k]

    def layers_at(self, x: np.ndarray, z: np.ndarray) -> tuple[np.ndarray, "_Columns"]:
        """Layer index at points (x, z) from the section at their own chainage."""
        c = self.sec.columns(x, self.wave)
        return c.layer_of(z), c

    def averaged_slowness(self) -> np.ndarray:
        """Slowness of each node averaged over its cell [z - h/2, z + h/2] by layer."""
        g, c = self.grid, self.cols
        z = g.z[:, None]
        lo, hi = z - 0.5 * g.h, z + 0.5 * g.h
        num = np.zeros((g.nz, g.nx))
        den = np.zeros((g.nz, g.nx))
        n = self.sec.n_layers
        for k in range(n):
            top = c.tops[k][None, :] if (k > 0 or not c.open_top) else np.full((1, g.nx), -np.inf)
            bot = c.tops[k + 1][None, :] if k + 1 < n else np.full((1, g.nx), np.inf)
            frac = np.clip(np.minimum(hi, bot) - np.maximum(lo, top), 0.0, None)
            num += frac * self.slowness(k, 0, g.nz)
            den += frac
        with np.errstate(invalid="ignore", divide="ignore"):
            s = num / den
        own = np.take_along_axis(
            np.stack([self.slowness(k, 0, g.nz) for k in range(n)]),
            np.clip(self.L, 0, None)[None].astype(np.intp), axis=0)[0]
        return np.where(den > 0, s, own)


# =============================================================================== stages


@dataclass(eq=False)
class _Stage:
    """One march: a layer (or the whole grid) seeded from a source or an interface."""

    name: str
    layer: int
    r0: int
    T: np.ndarray                 # (nr, nx) seconds, inf where not reached
    region: np.ndarray            # (nr, nx) int8
    parent: "_Stage | None"
    seed_iface: int | None
    seed_dir: int                 # +1 stage below its seed interface, -1 above, 0 source
    seeded_cols: np.ndarray | None
    _grad: tuple[np.ndarray, np.ndarray] | None = field(default=None, repr=False)

    def gradient(self, h: float) -> tuple[np.ndarray, np.ndarray]:
        """dT/dx and dT/dz (s/m) by finite differences on finite values."""
        if self._grad is None:
            self._grad = (_fd(self.T, h, axis=1), _fd(self.T, h, axis=0))
        return self._grad


def _fd(T: np.ndarray, h: float, axis: int) -> np.ndarray:
    fin = np.isfinite(T)
    Tm = np.where(fin, T, 0.0)
    lo = np.zeros_like(Tm)
    hi = np.zeros_like(Tm)
    flo = np.zeros(T.shape, dtype=bool)
    fhi = np.zeros(T.shape, dtype=bool)
    sl_a = [slice(None)] * 2
    sl_b = [slice(None)] * 2
    sl_a[axis] = slice(1, None)
    sl_b[axis] = slice(None, -1)
    lo[tuple(sl_a)] = Tm[tuple(sl_b)]
    flo[tuple(sl_a)] = fin[tuple(sl_b)]
    hi[tuple(sl_b)] = Tm[tuple(sl_a)]
    fhi[tuple(sl_b)] = fin[tuple(sl_a)]
    out = np.where(flo & fhi, (hi - lo) / (2 * h),
                   np.where(fhi, (hi - Tm) / h, np.where(flo, (Tm - lo) / h, 0.0)))
    return np.where(fin, out, 0.0)


_AIR_STRUCT = np.ones((2 * AIR_BAND_CELLS + 1, 2 * AIR_BAND_CELLS + 1), dtype=bool)
_HALO_STRUCT = np.ones((2 * HALO_CELLS + 1, 2 * HALO_CELLS + 1), dtype=bool)


def _run(setup: _Setup, name: str, active_full: np.ndarray | None, layer: int,
         seeds: list[tuple[np.ndarray, np.ndarray, np.ndarray]], fixed: bool,
         parent: _Stage | None, seed_iface: int | None, seed_dir: int,
         seeded_cols: np.ndarray | None, slow: np.ndarray | None = None) -> _Stage | None:
    g = setup.grid
    if active_full is None:
        rr = setup.layer_rows(layer)
        if rr is None:
            return None
        r0 = max(rr[0] - HALO_CELLS, 0)
        r1 = min(rr[1] + HALO_CELLS, g.nz)
        own = setup.L[r0:r1] == layer
        # the layer's law is marched over the layer and a band of HALO_CELLS cells
        # around it in the neighbouring layers (so that nodes at the steps of a
        # staircase boundary keep their upwind neighbours); air is never
        # traversed: it only receives extrapolated times (halo)
        band = ndimage.binary_dilation(own, structure=_HALO_STRUCT)
        ground = setup.L[r0:r1] >= 0
        active = band & ground
        halo = band & ~ground
    else:
        r0, r1 = 0, g.nz
        own = active = active_full
        halo = ndimage.binary_dilation(active, structure=_HALO_STRUCT) & ~active
    nr = r1 - r0
    # band nodes on the side the wave came from (upstream of the seeds) serve the
    # layer's nodes only in first-order differences (code 4); elsewhere the band
    # is a plain continuation of the layer (code 1)
    if active_full is None and seed_dir != 0:
        Lsub = setup.L[r0:r1]
        upstream = (Lsub < layer) if seed_dir > 0 else (Lsub > layer)
    else:
        upstream = np.zeros_like(own)
    # the air right above the ground (AIR_BAND_CELLS) is marched too, in
    # first-order use only, so that ground nodes at the steps of a staircase
    # surface keep an upwind neighbour; the air beyond is halo (never traversed)
    air_band = halo & ndimage.binary_dilation(active, structure=_AIR_STRUCT)
    region = np.where(active & (own | ~upstream), 1,
                      np.where(active | air_band, 4, np.where(halo, 2, 0))).astype(np.int8)
    T = np.full((nr, g.nx), np.inf)
    n_seed = 0
    for rows, cols, t in seeds:
        rr_ = rows - r0
        ok = (rr_ >= 0) & (rr_ < nr) & np.isfinite(t)
        rr_, cc, tt = rr_[ok], cols[ok], t[ok]
        ok = own[rr_, cc]
        rr_, cc, tt = rr_[ok], cc[ok], tt[ok]
        np.minimum.at(T, (rr_, cc), tt)
        if fixed:
            region[rr_, cc] = 3
        n_seed += rr_.size
    if n_seed == 0:
        return None
    if slow is None:
        slow = setup.slowness(layer, r0, r1)
    march(T.ravel(), region.ravel(), np.ascontiguousarray(slow, dtype=float).ravel(),
          nr, g.nx, g.h, True)
    return _Stage(name=name, layer=layer, r0=r0, T=T, region=region, parent=parent,
                  seed_iface=seed_iface, seed_dir=seed_dir, seeded_cols=seeded_cols)


def _carrier(setup: _Setup, st: _Stage | None, k: int) -> np.ndarray:
    """Times of a stage interpolated onto interface k at every grid column (NaN: none)."""
    g = setup.grid
    out = np.full(g.nx, np.nan)
    if st is None:
        return out
    f = setup.cols.tops[k]
    jb = setup.jb[k]
    ja = jb - 1
    nr = st.T.shape[0]
    cols = np.arange(g.nx)
    ia, ib = ja - st.r0, jb - st.r0
    okb = (ib >= 0) & (ib < nr)
    oka = (ia >= 0) & (ia < nr)
    Tb = np.where(okb, st.T[np.clip(ib, 0, nr - 1), cols], np.inf)
    Ta = np.where(oka, st.T[np.clip(ia, 0, nr - 1), cols], np.inf)
    za = g.z0 + g.h * ja
    w = np.clip((f - za) / g.h, 0.0, 1.0)
    on_b = w >= 1.0 - 1e-9
    with np.errstate(invalid="ignore"):
        t = np.where(on_b, Tb, Ta + w * (Tb - Ta))
    good = np.isfinite(t)
    out[good] = t[good]
    return out


def _deriv(t: np.ndarray, h: float) -> np.ndarray:
    """d t / d x along the columns, central where possible, NaN where t is missing."""
    fin = np.isfinite(t)
    d = np.full(t.shape, np.nan)
    if t.size < 2:
        return d
    lo = np.r_[np.nan, t[:-1]]
    hi = np.r_[t[1:], np.nan]
    flo, fhi = np.isfinite(lo), np.isfinite(hi)
    with np.errstate(invalid="ignore"):
        d = np.where(flo & fhi, (hi - lo) / (2 * h),
                     np.where(fhi, (hi - t) / h, np.where(flo, (t - lo) / h, np.nan)))
    d[~fin] = np.nan
    return d


#: Half-width of the window of interface points searched for each seed, in cells.
SEED_WINDOW_CELLS: int = 8
#: Interface points per cell in that window.
SEED_SUBSAMPLES: int = 4


def _seeds(setup: _Setup, k: int, tI: np.ndarray, layer: int, below: bool,
           reflect: bool = False) -> list[tuple[np.ndarray, np.ndarray, np.ndarray]]:
    """Times on the two grid rows next to interface k, in ``layer``, from interface times.

    ``below``: the rows just below the interface (the wave goes down into
    ``layer``); otherwise the rows just above (it goes up).  Each seed node P
    takes the least time over points Q of the interface near it (Huygens'
    principle, which is also Fermat's principle for the leg from Q to P):

    .. math:: t(P) = \\min_Q \\left[ t_I(Q) + s\\,|PQ| \\right],

    with the interface times :math:`t_I` interpolated linearly between grid
    columns, :math:`SEED\\_SUBSAMPLES` points per cell over
    :math:`\\pm SEED\\_WINDOW\\_CELLS` cells, and :math:`s` the slowness of
    ``layer`` averaged between P and the interface.  Unlike a plane-wave
    extrapolation this keeps the curvature of the front, which matters near the
    critical angle.  For a transmitted wave no seed is placed where the times
    along the interface change faster than the slowness of ``layer`` allows
    (beyond the critical angle: that part of the layer is reached along the
    interface instead); ``reflect`` keeps every column.
    """
    g, c = setup.grid, setup.cols
    f = c.tops[k]
    fp = setup.fprime[k]
    N = np.sqrt(1.0 + fp * fp)
    p = _deriv(tI, g.h) / N
    cols = np.arange(g.nx)
    W, S = SEED_WINDOW_CELLS, SEED_SUBSAMPLES
    m = np.arange(-W * S, W * S + 1)
    # interface points Q around each column: fractional column positions
    pos = cols[:, None] + m[None, :] / S
    i0 = np.floor(pos).astype(int)
    w = pos - i0
    inside_q = (i0 >= 0) & (i0 < g.nx)
    i0c = np.clip(i0, 0, g.nx - 1)
    i1c = np.clip(i0 + 1, 0, g.nx - 1)
    t0, t1 = tI[i0c], tI[i1c]
    with np.errstate(invalid="ignore"):
        tq = np.where(w == 0.0, t0, (1.0 - w) * t0 + w * t1)
    tq = np.where(inside_q, tq, np.nan)
    xq = g.x0 + g.h * pos
    zq = (1.0 - w) * f[i0c] + w * f[i1c]
    tq = np.where(np.isfinite(tq), tq, np.inf)
    out = []
    offsets = (0, 1) if below else (-1, -2)
    for off in offsets:
        j = setup.jb[k] + off
        inside = (j >= 0) & (j < g.nz)
        jj = np.clip(j, 0, g.nz - 1)
        ok = inside & (setup.L[jj, cols] == layer) & np.isfinite(tI)
        z = g.z0 + g.h * jj
        s = 0.5 * (1.0 / c.velocity(layer, f) + 1.0 / c.velocity(layer, z))
        if not reflect:
            with np.errstate(invalid="ignore"):
                ok &= np.isfinite(p) & (p * p <= s * s)
        sel = np.flatnonzero(ok)
        if sel.size == 0:
            out.append((jj[sel], cols[sel], np.zeros(0)))
            continue
        xp = (g.x0 + g.h * sel)[:, None]
        zp = z[sel][:, None]
        dist = np.hypot(xq[sel] - xp, zq[sel] - zp)
        t = np.min(tq[sel] + s[sel][:, None] * dist, axis=1)
        good = np.isfinite(t)
        out.append((jj[sel][good], sel[good], t[good]))
    return out


def _seeded_columns(seeds) -> np.ndarray | None:
    cols = [c for _, c, _ in seeds]
    if not cols:
        return None
    return np.concatenate(cols)


# =============================================================================== solver


def _point_time(r: np.ndarray, v_s: float | np.ndarray, v_n: np.ndarray, g: float | np.ndarray
                ) -> np.ndarray:
    """Exact first-arrival time from a point in a medium with a constant velocity gradient.

    :math:`t = \\frac{1}{|g|}\\operatorname{arccosh}\\left(1 + \\frac{g^2 r^2}{2 v_s v}\\right)`,
    written with ``log1p``; it tends to :math:`r/v` as :math:`g \\to 0`.
    """
    g = np.abs(np.asarray(g, dtype=float))
    with np.errstate(invalid="ignore", divide="ignore"):
        eps = g * g * r * r / (2.0 * v_s * v_n)
        t_arc = np.log1p(eps + np.sqrt(eps * (2.0 + eps))) / g
    t_line = 2.0 * r / (v_s + v_n)
    return np.where(g * r < 1e-7 * np.minimum(v_s, v_n), t_line, t_arc)


class _Solver:
    """The stages of one source, computed on demand and cached."""

    def __init__(self, setup: _Setup, xs: float, zs: float):
        self.setup = setup
        self.xs = float(xs)
        self.zs = float(zs)
        sec = setup.sec
        c = sec.columns(np.array([xs]), setup.wave)
        # a source in the air above a DEM lies in the layer at the surface below it
        ks = c.layer_of(np.array([max(zs, float(c.tops[0, 0]))]))
        self.ks = int(max(ks[0], 0))
        self.src_cols = c
        self._D: dict[int, _Stage | None] = {}
        self._U: dict[tuple[int, int], _Stage | None] = {}
        self._R: dict[tuple[int, int], _Stage | None] = {}
        self._zone: dict[int, np.ndarray] = {}
        self.n_layers = sec.n_layers
        self._grid_stage: _Stage | None = None

    # ---------------------------------------------------------------- source box

    def _source_law(self):
        c, k = self.src_cols, self.ks
        return float(c.v_top[k, 0]), float(c.grad[k, 0]), float(c.tops[k, 0])

    def source_time(self, x: np.ndarray, z: np.ndarray) -> np.ndarray:
        """Analytic time from the source within its layer (local 1D gradient law)."""
        vt, g, top = self._source_law()
        vs = max(vt + g * (self.zs - top), 0.05 * vt)
        vn = np.maximum(vt + g * (z - top), 0.05 * vt)
        r = np.hypot(x - self.xs, z - self.zs)
        return _point_time(r, vs, vn, g)

    def _box_seeds(self, layer_mask: np.ndarray):
        g = self.setup.grid
        nb = SOURCE_BOX_CELLS
        ic = (self.xs - g.x0) / g.h
        jc = (self.zs - g.z0) / g.h
        i = np.arange(max(int(math.ceil(ic - nb)), 0), min(int(math.floor(ic + nb)), g.nx - 1) + 1)
        j = np.arange(max(int(math.ceil(jc - nb)), 0), min(int(math.floor(jc + nb)), g.nz - 1) + 1)
        J, I = np.meshgrid(j, i, indexing="ij")
        J, I = J.ravel(), I.ravel()
        ok = layer_mask[J, I]
        J, I = J[ok], I[ok]
        xn, zn = g.x0 + g.h * I, g.z0 + g.h * J
        seen = self._in_sight(xn, zn)
        J, I, xn, zn = J[seen], I[seen], xn[seen], zn[seen]
        t = self.source_time(xn, zn)
        return [(J, I, t)]

    def _in_sight(self, xn: np.ndarray, zn: np.ndarray) -> np.ndarray:
        """Nodes whose straight segment to the source stays in the source layer (no air)."""
        if xn.size == 0:
            return np.zeros(0, dtype=bool)
        u = np.linspace(0.0, 1.0, 2 * SOURCE_BOX_CELLS + 1)[1:-1]
        px = self.xs + (xn[:, None] - self.xs) * u[None, :]
        pz = self.zs + (zn[:, None] - self.zs) * u[None, :]
        lay, _ = self.setup.layers_at(px.ravel(), pz.ravel())
        lay = lay.reshape(px.shape)
        # the source itself may sit a little above the surface: ignore samples above
        # the ground within one cell of it
        near = np.hypot(px - self.xs, pz - self.zs) <= self.setup.grid.h
        return np.all((lay == self.ks) | near, axis=1)

    def box_radius(self) -> float:
        return SOURCE_BOX_CELLS * self.setup.grid.h

    # ---------------------------------------------------------------- stages

    def _existing_above(self, k: int) -> int | None:
        for m in range(k - 1, -1, -1):
            if self.setup.layer_rows(m) is not None:
                return m
        return None

    def _existing_below(self, k: int) -> int | None:
        for m in range(k + 1, self.n_layers):
            if self.setup.layer_rows(m) is not None:
                return m
        return None

    def D(self, k: int) -> _Stage | None:
        """Transmitted (direct) field in layer k."""
        if k in self._D:
            return self._D[k]
        s = self.setup
        st = None
        if s.layer_rows(k) is not None:
            if k == self.ks:
                seeds = self._box_seeds(s.L == k)
                st = _run(s, f"D{k}", None, k, seeds, True, None, None, 0, None)
                if st is None:
                    raise InputError(
                        f"the source at chainage {self.xs:.1f} m, depth {self.zs:.1f} m has no node "
                        f"of its layer within {SOURCE_BOX_CELLS} grid cells",
                        key="source_depth_m",
                        fix="put the source at or below the ground surface, inside the model")
            elif k > self.ks:
                m = self._existing_above(k)
                up = self.D(m) if m is not None and m >= self.ks else None
                if up is not None:
                    tI = _carrier(s, up, k)
                    seeds = _seeds(s, k, tI, k, below=True)
                    st = _run(s, f"D{k}", None, k, seeds, False, up, k, +1,
                              _seeded_columns(seeds))
            else:
                m = self._existing_below(k)
                dn = self.D(m) if m is not None and m <= self.ks else None
                if dn is not None:
                    # interface m is the top of layer m; layers between k and m are absent
                    tI = _carrier(s, dn, m)
                    seeds = _seeds(s, m, tI, k, below=False)
                    st = _run(s, f"D{k}", None, k, seeds, False, dn, m, -1,
                              _seeded_columns(seeds))
        self._D[k] = st
        return st

    def incident(self, k: int) -> np.ndarray:
        """Times arriving at interface k from above (transmitted field of the layer above)."""
        m = self._existing_above(k)
        if m is None or m < self.ks:
            return np.full(self.setup.grid.nx, np.nan)
        return _carrier(self.setup, self.D(m), k)

    def refracted(self, k: int) -> np.ndarray:
        """Times along interface k read from the field of the layer below it."""
        return _carrier(self.setup, self.D(k), k)

    def zone(self, k: int) -> np.ndarray:
        """Columns where the field below interface k overtakes the incident one."""
        if k not in self._zone:
            s = self.setup
            tr = self.refracted(k)
            ti = self.incident(k)
            tol = 1e-3 * s.grid.h / np.max(s.cols.v_top[k])
            with np.errstate(invalid="ignore"):
                z = np.isfinite(tr) & ~(tr >= ti - tol)
            self._zone[k] = z
        return self._zone[k]

    def _up_chain(self, cache: dict, key: str, k: int, m: int, start) -> _Stage | None:
        """Field in layer m < k of a wave leaving interface k upward (head or reflection)."""
        if (k, m) in cache:
            return cache[(k, m)]
        s = self.setup
        st = None
        if s.layer_rows(m) is not None:
            below = self._existing_below(m)
            if below is not None and below >= k:
                tI, parent, reflect, kk = start()
                seeds = _seeds(s, kk, tI, m, below=False, reflect=reflect)
                st = _run(s, f"{key}{k}.{m}", None, m, seeds, False, parent, kk, -1,
                          _seeded_columns(seeds))
            elif below is not None:
                prev = self._up_chain(cache, key, k, below, start)
                if prev is not None:
                    tI = _carrier(s, prev, below)
                    seeds = _seeds(s, below, tI, m, below=False)
                    st = _run(s, f"{key}{k}.{m}", None, m, seeds, False, prev, below, -1,
                              _seeded_columns(seeds))
        cache[(k, m)] = st
        return st

    def U(self, k: int, m: int) -> _Stage | None:
        """Head (or turning) wave from interface k, in layer m < k."""
        def start():
            tH = np.where(self.zone(k), self.refracted(k), np.nan)
            return tH, self.D(k), False, k
        return self._up_chain(self._U, "U", k, m, start)

    def R(self, k: int, m: int) -> _Stage | None:
        """Reflection from interface k, in layer m < k."""
        def start():
            ma = self._existing_above(k)
            return self.incident(k), self.D(ma), True, k
        return self._up_chain(self._R, "R", k, m, start)

    def G(self) -> _Stage:
        """Single march through the whole gridded model (method 'grid')."""
        if self._grid_stage is None:
            s = self.setup
            active = s.L >= 0
            seeds = self._box_seeds(s.L == self.ks)
            slow = s.averaged_slowness()
            # air nodes of the halo take the top layer's law
            slow = np.where(active, slow, s.slowness(0, 0, s.grid.nz))
            st = _run(s, "G", active, self.ks, seeds, True, None, None, 0, None, slow=slow)
            if st is None:
                raise InputError(
                    f"the source at chainage {self.xs:.1f} m, depth {self.zs:.1f} m has no node "
                    f"of its layer within {SOURCE_BOX_CELLS} grid cells", key="source_depth_m",
                    fix="put the source at or below the ground surface, inside the model")
            self._grid_stage = st
        return self._grid_stage


# =============================================================================== reading


def _corners(setup: _Setup, st: _Stage, x: np.ndarray, z: np.ndarray):
    """The four grid corners around each point and their bilinear weights, in a stage's rows.

    Returns ``([(row, column, weight) x 4], fractional row, rows in the stage)``.
    """
    g = setup.grid
    fx = (x - g.x0) / g.h
    fz = (z - g.z0) / g.h - st.r0
    nr = st.T.shape[0]
    i0 = np.clip(np.floor(fx).astype(int), 0, max(g.nx - 2, 0))
    j0 = np.clip(np.floor(fz).astype(int), 0, max(nr - 2, 0))
    wx = np.clip(fx - i0, 0.0, 1.0)
    wz = np.clip(fz - j0, 0.0, 1.0)
    i1 = np.minimum(i0 + 1, g.nx - 1)
    j1 = np.minimum(j0 + 1, nr - 1)
    corners = ((j0, i0, (1 - wz) * (1 - wx)), (j0, i1, (1 - wz) * wx),
               (j1, i0, wz * (1 - wx)), (j1, i1, wz * wx))
    return corners, fz, nr


def _bilinear(setup: _Setup, st: _Stage | None, x: np.ndarray, z: np.ndarray) -> np.ndarray:
    """Bilinear interpolation of a stage's times at points; finite corners only."""
    out = np.full(x.shape, np.inf)
    if st is None or x.size == 0:
        return out
    corners, fz, nr = _corners(setup, st, x, z)
    num = np.zeros(x.shape)
    den = np.zeros(x.shape)
    for jj, ii, w in corners:
        t = st.T[jj, ii]
        fin = np.isfinite(t)
        num += np.where(fin, w * np.where(fin, t, 0.0), 0.0)
        den += np.where(fin, w, 0.0)
    inside = (fz >= -1e-9) & (fz <= nr - 1 + 1e-9)
    good = (den > 1e-6) & inside
    out[good] = num[good] / den[good]
    return out


@dataclass
class Reading:
    """Times of one phase at a set of receivers.

    Attributes
    ----------
    time_s : numpy.ndarray
        Travel time, seconds; NaN where the phase has no time (see ``status``).
    status : numpy.ndarray of str
        ``'ok'`` or the reason (module notes).
    arrival : numpy.ndarray of str
        The phase each time belongs to (for ``first``: the phase that arrives first).
    flags : numpy.ndarray of str
        ';'-joined warnings: ``moved_to_surface`` (a receiver above the DEM was
        read at the surface below it), ``near_source`` (analytic time).
    layer : numpy.ndarray of int
        Layer index of each receiver.
    """

    time_s: np.ndarray
    status: np.ndarray
    arrival: np.ndarray
    flags: np.ndarray
    layer: np.ndarray


def _join_flags(*masks_and_names) -> np.ndarray:
    n = masks_and_names[0][0].size
    out = np.full(n, "", dtype=object)
    for mask, name in masks_and_names:
        out = np.where(mask, np.where(out == "", name, out + ";" + name), out)
    return out


class TimeField:
    """The travel-time field of one phase from one source on a 2D grid.

    Made by :func:`time_field`.  Read it at receivers with :meth:`read`, draw it
    with :attr:`time_grid_s` on the axes :attr:`chainage_m`, :attr:`depth_m`,
    and trace rays with :func:`ray_paths`.
    """

    def __init__(self, solver: _Solver, phase: Phase, method: str, notes: list[str]):
        self._solver = solver
        self.phase = phase
        self.method = method
        self.notes = notes
        self._time_grid: np.ndarray | None = None
        sec = solver.setup.sec
        self._k = None
        if phase.kind in ("head", "reflection"):
            self._k = sec.interface_index(phase.target)
            if self._k == 0:
                raise ModelError(f"phase '{phase}': '{phase.target}' is the top of the model, "
                                 f"not an interface between layers", key="phase",
                                 fix="name an interface below the top layer")
        elif phase.kind == "turning":
            self._k = sec.layer_index(phase.target)

    # ---------------------------------------------------------------- geometry

    @property
    def spacing_m(self) -> float:
        """Grid spacing, metres."""
        return self._solver.setup.grid.h

    @property
    def chainage_m(self) -> np.ndarray:
        """Chainage of the grid columns, metres."""
        return self._solver.setup.grid.x

    @property
    def depth_m(self) -> np.ndarray:
        """Depth of the grid rows, metres."""
        return self._solver.setup.grid.z

    @property
    def source(self) -> tuple[float, float]:
        """Source chainage and depth, metres."""
        return self._solver.xs, self._solver.zs

    @property
    def shape(self) -> tuple[int, int]:
        """Grid shape (rows = depth, columns = chainage)."""
        g = self._solver.setup.grid
        return g.nz, g.nx

    # ---------------------------------------------------------------- stages per receiver layer

    def _families(self) -> list[tuple[str, Any]]:
        """(label, function layer -> stage) of every wave family the phase takes times from."""
        sv, ph = self._solver, self.phase
        w = ph.wave
        sec = sv.setup.sec
        if self.method == "grid":
            return [(f"{w}:first", lambda m: sv.G())]
        fams = []
        if ph.kind in ("direct", "first"):
            fams.append((f"{w}:direct", sv.D))
        if ph.kind == "first":
            for k in range(sv.ks + 1, sv.n_layers):
                fams.append((f"{w}:head:{sec.interface_names[k]}",
                             (lambda kk: (lambda m: sv.U(kk, m) if m < kk else None))(k)))
        if ph.kind in ("head", "turning") and self._k is not None and self._k > sv.ks:
            k = self._k
            label = f"{w}:{ph.kind}:{ph.target}"
            fams.append((label, lambda m: sv.U(k, m) if m < k else None))
        if ph.kind == "turning" and self._k == sv.ks:
            fams.append((f"{w}:turning:{ph.target}", lambda m: sv.D(m) if m == sv.ks else None))
        if ph.kind == "reflection" and self._k > sv.ks:
            k = self._k
            fams.append((f"{w}:reflection:{ph.target}", lambda m: sv.R(k, m) if m < k else None))
        return fams

    def _stage_time(self, fn, layer: np.ndarray, x: np.ndarray, z: np.ndarray) -> np.ndarray:
        sv = self._solver
        t = np.full(x.shape, np.inf)
        for m in np.unique(layer):
            if m < 0:
                continue
            sel = layer == m
            st = fn(int(m))
            t[sel] = _bilinear(sv.setup, st, x[sel], z[sel])
        return t

    # ---------------------------------------------------------------- reading

    def read(self, chainage_m, depth_m) -> Reading:
        """Times of the phase at receivers.

        Parameters
        ----------
        chainage_m, depth_m : array_like
            Receiver chainage and depth below the datum (negative above), metres;
            broadcast together.

        Returns
        -------
        Reading
        """
        sv, ph = self._solver, self.phase
        s = sv.setup
        g = s.grid
        x, z = np.broadcast_arrays(np.asarray(chainage_m, dtype=float),
                                   np.asarray(depth_m, dtype=float))
        shape = x.shape
        x = x.ravel().copy()
        z = z.ravel().copy()
        n = x.size
        status = np.full(n, "ok", dtype=object)
        bad = ~(np.isfinite(x) & np.isfinite(z))
        status[bad] = "bad_coordinates"
        x[bad] = g.x0
        z[bad] = g.z0
        layer, cols = s.layers_at(x, z)
        moved = np.zeros(n, dtype=bool)
        if not cols.open_top:
            air = z < cols.tops[0]
            moved = air & ~bad
            z = np.where(air, cols.tops[0], z)
            layer, cols = s.layers_at(x, z)
        outside = ~bad & ((x < g.x0 - 1e-6) | (x > g.x0 + g.h * (g.nx - 1) + 1e-6)
                          | (z < g.z0 - 1e-6) | (z > g.z0 + g.h * (g.nz - 1) + 1e-6))
        status[outside] = "outside_model"
        usable = ~bad & ~outside
        arrival = np.full(n, str(ph), dtype=object)
        t = np.full(n, np.inf)
        near = np.zeros(n, dtype=bool)

        kind = ph.kind
        if self.method != "grid" and kind in ("head", "reflection", "turning"):
            k = self._k
            if kind == "turning" and k == sv.ks:
                # diving through the source's own layer: receivers in that layer only
                status[usable & (layer != k)] = "no_ray"
            elif k <= sv.ks if kind != "turning" else k < sv.ks:
                # the source lies below the reflector or refractor
                status[usable] = "endpoint_below_interface"
            else:
                status[usable & (layer >= k)] = "endpoint_below_interface"
            usable &= status == "ok"
            if kind in ("head", "turning") and k > sv.ks and usable.any():
                if s.layer_rows(k) is None and s.cols.tops[k].min() > g.z0 + g.h * (g.nz - 1):
                    status[usable] = "outside_model"
                elif s.layer_rows(k) is None or sv.D(k) is None:
                    status[usable] = "pinched_out"
                elif not sv.zone(k).any():
                    status[usable] = "not_head_wave_interface"
                usable &= status == "ok"
            if kind == "turning" and usable.any() and not np.any(s.cols.grad[k] > 0):
                status[usable] = "no_ray"
                usable &= False

        if usable.any():
            xu, zu, lu = x[usable], z[usable], layer[usable]
            best = np.full(xu.size, np.inf)
            lab = np.full(xu.size, str(ph), dtype=object)
            for label, fn in self._families():
                tf = self._stage_time(fn, lu, xu, zu)
                if label.endswith(":direct") or (self.method == "grid") or (
                        kind == "turning" and self._k == sv.ks):
                    # analytic times next to the source
                    r = np.hypot(xu - sv.xs, zu - sv.zs)
                    nr_ = (r <= sv.box_radius()) & (lu == sv.ks)
                    if nr_.any():
                        tf[nr_] = sv.source_time(xu[nr_], zu[nr_])
                        near[np.flatnonzero(usable)[nr_]] = True
                better = tf < best
                best = np.where(better, tf, best)
                lab = np.where(better, label, lab)
            t[usable] = best
            arrival[usable] = lab
            if self.method != "grid" and kind in ("head", "turning") and self._k > sv.ks:
                k = self._k
                tr = self._stage_time(lambda m: sv.R(k, m) if m < k else None, lu, xu, zu)
                tol = 2e-4 + 2e-6 * np.abs(np.where(np.isfinite(best), best, 0.0))
                with np.errstate(invalid="ignore"):
                    early = np.isfinite(best) & ~(best < tr - tol)
                idx = np.flatnonzero(usable)
                status[idx[early]] = "below_critical_distance"
                t[idx[early]] = np.inf
            miss = usable & ~np.isfinite(t) & (status == "ok")
            if kind in ("head", "turning") and self.method != "grid":
                status[miss] = "not_head_wave_interface"
            else:
                status[miss] = "no_ray"
        t = np.where(status == "ok", t, np.nan)
        flags = _join_flags((moved, "moved_to_surface"), (near & (status == "ok"), "near_source"))
        return Reading(time_s=t.reshape(shape), status=status.reshape(shape),
                       arrival=arrival.reshape(shape), flags=flags.reshape(shape),
                       layer=layer.reshape(shape))

    # ---------------------------------------------------------------- drawing

    @property
    def time_grid_s(self) -> np.ndarray:
        """Times of the phase at every grid node (rows = depth), seconds; NaN where none.

        For phases made of several stages (a head wave crossing several layers)
        each node shows the stage of its own layer; for ``first`` the earliest.
        """
        if self._time_grid is None:
            sv = self._solver
            s = sv.setup
            g = s.grid
            out = np.full((g.nz, g.nx), np.inf)
            for _, fn in self._families():
                for m in range(sv.n_layers):
                    st = fn(m)
                    if st is None:
                        continue
                    nr = st.T.shape[0]
                    sub = out[st.r0:st.r0 + nr]
                    own = (s.L[st.r0:st.r0 + nr] == m) if self.method != "grid" else \
                        (s.L[st.r0:st.r0 + nr] >= 0)
                    np.minimum(sub, np.where(own & (st.region != 2), st.T, np.inf), out=sub)
            self._time_grid = np.where(np.isfinite(out), out, np.nan)
        return self._time_grid


# =============================================================================== public API


def _check_phase_for(sec: LayerSection, ph: Phase) -> None:
    if ph.kind in ("head", "reflection"):
        sec.interface_index(ph.target)
    elif ph.kind == "turning":
        sec.layer_index(ph.target)


def time_field(model: Any, source_chainage_m: float, source_depth_m: float,
               phase: str | Phase = "first", *, spacing_m: float | None = None,
               frequency_hz: float | None = None,
               chainage_range_m: tuple[float, float] | None = None,
               max_depth_m: float | None = None, method: str = "multistage",
               top_m: float | None = None) -> TimeField:
    """The travel-time field of one phase from one source, on a 2D grid.

    Parameters
    ----------
    model : LayerSection or LayeredModel
        The section.  A :class:`~geosect.model.LayeredModel` is sampled at its
        own chainage nodes.
    source_chainage_m, source_depth_m : float
        Source position: chainage and depth below the datum (negative above), metres.
    phase : str or Phase
        ``[P|S:]kind[:name]``: ``first``, ``direct``, ``head:<interface>``,
        ``reflection:<interface>``, ``turning:<layer>``.  The wave letter sets P
        or S velocities.
    spacing_m : float, optional
        Grid spacing, metres; default :func:`default_spacing_m`.
    frequency_hz : float, optional
        Dominant frequency, Hz, used to choose the default spacing.
    chainage_range_m : (float, float), optional
        Chainage span of the grid, metres (default: the model's nodes and the
        source, with a margin of 10 cells; for a model without lateral nodes,
        :data:`DEFAULT_HALF_SPAN_M` either side of the source).
    max_depth_m : float, optional
        Depth of the bottom of the grid, metres (default: 10 cells below the
        deepest interface, deeper when the half-space has a velocity gradient).
    method : {'multistage', 'grid'}
        'grid' marches once through the whole model (``first`` only).
    top_m : float, optional
        Depth of the top row, metres (default: 2 cells above the highest of the
        surface, the source and, through :func:`phase_times`, the receivers).

    Returns
    -------
    TimeField

    Raises
    ------
    InputError
        Unknown phase form, source position not finite, or no model node near it.
    ModelError
        Phase names an interface or layer the model does not have.
    """
    ph = parse_phase(phase)
    sec = LayerSection.from_model(model)
    _check_phase_for(sec, ph)
    if method not in ("multistage", "grid"):
        raise InputError(f"method '{method}' is not known", key="method",
                         fix="use 'multistage' (phase by phase) or 'grid' (one march)")
    if method == "grid" and ph.kind != "first":
        raise InputError(f"method 'grid' gives first arrivals only, not '{ph}'", key="method",
                         fix="use method='multistage' for single phases")
    xs, zs = float(source_chainage_m), float(source_depth_m)
    if not (np.isfinite(xs) and np.isfinite(zs)):
        raise InputError(f"source position ({source_chainage_m!r}, {source_depth_m!r}) is not finite",
                         key="source_chainage_m", fix="give the source chainage and depth in metres")
    notes: list[str] = []
    auto = spacing_m is None
    h = default_spacing_m(sec, frequency_hz=frequency_hz, wave=ph.wave) if auto else float(spacing_m)
    if not (np.isfinite(h) and h > 0):
        raise InputError(f"spacing_m {spacing_m!r} is not a positive number", key="spacing_m",
                         fix="give the grid spacing in metres, for example 250")
    if chainage_range_m is None:
        lo, hi = sec.extent_m()
        if hi - lo < 1000.0:
            # a model without lateral nodes says nothing about its extent
            lo, hi = xs - DEFAULT_HALF_SPAN_M, xs + DEFAULT_HALF_SPAN_M
            notes.append(f"the model has no extent along the line: the grid spans "
                         f"{DEFAULT_HALF_SPAN_M / 1e3:.0f} km either side of the source")
        lo, hi = min(lo, xs), max(hi, xs)
        chainage_range_m = (lo - 10 * h, hi + 10 * h)
    x_lo, x_hi = (float(v) for v in chainage_range_m)
    if not (x_hi > x_lo):
        raise InputError(f"chainage_range_m {chainage_range_m!r} is empty", key="chainage_range_m",
                         fix="give (start, end) in metres with start < end")
    cols = sec.columns(np.linspace(x_lo, x_hi, 64), ph.wave)
    if top_m is None:
        top = min(float(cols.tops[0].min()), zs)
        top_m = top - 2 * h
    if max_depth_m is None:
        max_depth_m = _default_bottom(sec, cols, x_hi - x_lo, h, ph.wave)
    if not (xs >= x_lo and xs <= x_hi and zs >= top_m and zs <= max_depth_m):
        raise InputError(f"the source at chainage {xs:.1f} m, depth {zs:.1f} m is outside the grid "
                         f"(chainage {x_lo:.1f} to {x_hi:.1f} m, depth {top_m:.1f} to "
                         f"{max_depth_m:.1f} m)", key="source_chainage_m",
                         fix="widen chainage_range_m or max_depth_m, or check the source position")
    nx = int(math.floor((x_hi - x_lo) / h + 1e-9)) + 1
    nz = int(math.floor((max_depth_m - top_m) / h + 1e-9)) + 2
    if auto and nx * nz > MAX_AUTO_NODES:
        f = math.sqrt(nx * nz / MAX_AUTO_NODES)
        h = h * f
        notes.append(f"spacing coarsened to {h:.1f} m to keep the grid under {MAX_AUTO_NODES} nodes")
        nx = int(math.floor((x_hi - x_lo) / h + 1e-9)) + 1
        nz = int(math.floor((max_depth_m - top_m) / h + 1e-9)) + 2
        top_m = min(top_m, min(float(cols.tops[0].min()), zs) - 2 * h)
    grid = _Grid(x0=x_lo, z0=float(top_m), h=h, nx=nx, nz=nz)
    setup = _Setup(sec, ph.wave, grid)
    solver = _Solver(setup, xs, zs)
    return TimeField(solver, ph, method, notes)


def _default_bottom(sec: LayerSection, cols: _Columns, span: float, h: float, wave: str) -> float:
    deepest = float(cols.tops[-1].max())
    g_last = float(cols.grad[-1].max())
    pad = 10 * h
    if g_last > 0:
        v0 = float(cols.v_top[-1].min())
        # depth where a ray of half the span turns: z = (sqrt(v0^2 + (g X / 2)^2) - v0) / g
        zt = (math.sqrt(v0 * v0 + (0.5 * g_last * span) ** 2) - v0) / g_last
        pad = max(pad, min(zt * 1.1, 0.5 * span))
    return deepest + pad


def _receivers(rc, rz) -> tuple[np.ndarray, np.ndarray]:
    x, z = np.broadcast_arrays(np.asarray(rc, dtype=float), np.asarray(rz, dtype=float))
    return x, z


def phase_times(model: Any, source_chainage_m: float, source_depth_m: float,
                receivers_chainage_m, receivers_depth_m, phase: str | Phase, *,
                spacing_m: float | None = None, frequency_hz: float | None = None,
                max_depth_m: float | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Travel times of one phase from one source to many receivers.

    The grid spans the source and the receivers (with a margin of 10 cells);
    see :func:`time_field` for the parameters.

    Returns
    -------
    time_s : numpy.ndarray
        Seconds, NaN where the phase has no time.
    status : numpy.ndarray of str
        ``'ok'`` or the reason (module notes).

    Examples
    --------
    >>> sec = LayerSection.flat([0, 30e3], [6000, 8000], ["surface", "moho"])
    >>> t, status = phase_times(sec, 0.0, 0.0, [20e3, 150e3], 0.0, "head:moho",
    ...                         spacing_m=1000.0)
    >>> status.tolist()
    ['below_critical_distance', 'ok']
    """
    x, z = _receivers(receivers_chainage_m, receivers_depth_m)
    fld = _field_for(model, source_chainage_m, source_depth_m, x, z, phase, spacing_m,
                     frequency_hz, max_depth_m, "multistage")
    r = fld.read(x, z)
    return r.time_s, r.status


def first_arrivals(model: Any, source_chainage_m: float, source_depth_m: float,
                   receivers_chainage_m, receivers_depth_m, *, wave: str = "P",
                   spacing_m: float | None = None, frequency_hz: float | None = None,
                   max_depth_m: float | None = None, method: str = "multistage"
                   ) -> tuple[np.ndarray, np.ndarray]:
    """First-arrival times from one source to many receivers.

    Parameters
    ----------
    model : LayerSection or LayeredModel
    source_chainage_m, source_depth_m : float
        Metres; depth below the datum (negative above).
    receivers_chainage_m, receivers_depth_m : array_like
        Metres, broadcast together.
    wave : {'P', 'S'}
    spacing_m, frequency_hz, max_depth_m
        See :func:`time_field`.
    method : {'multistage', 'grid'}
        'multistage' (default): the earliest of the direct wave and every head
        or turning wave, with interfaces at their true depth.  'grid': one
        march through the whole gridded model.

    Returns
    -------
    time_s : numpy.ndarray
        Seconds.
    status : numpy.ndarray of str
    """
    w = str(wave).upper()
    if w not in ("P", "S"):
        raise InputError(f"wave '{wave}' is not known", key="wave", fix="use 'P' or 'S'")
    x, z = _receivers(receivers_chainage_m, receivers_depth_m)
    fld = _field_for(model, source_chainage_m, source_depth_m, x, z, f"{w}:first", spacing_m,
                     frequency_hz, max_depth_m, method)
    r = fld.read(x, z)
    return r.time_s, r.status


def _field_for(model, xs, zs, x, z, phase, spacing_m, frequency_hz, max_depth_m, method):
    sec = LayerSection.from_model(model)
    ph = parse_phase(phase)
    h = default_spacing_m(sec, frequency_hz=frequency_hz, wave=ph.wave) if spacing_m is None \
        else float(spacing_m)
    fin = np.isfinite(x) & np.isfinite(z)
    xf = x[fin]
    zf = z[fin]
    lo = min(float(xs), float(xf.min()) if xf.size else float(xs))
    hi = max(float(xs), float(xf.max()) if xf.size else float(xs))
    pad = 10 * h
    cols = sec.columns(np.linspace(lo - pad, hi + pad, 64), ph.wave)
    top = min(float(cols.tops[0].min()), float(zs), float(zf.min()) if zf.size else float(zs))
    if max_depth_m is None:
        bottom = _default_bottom(sec, cols, hi - lo + 2 * pad, h, ph.wave)
        if zf.size:
            bottom = max(bottom, float(zf.max()) + 2 * h)
    else:
        bottom = float(max_depth_m)
    return time_field(sec, xs, zs, ph, spacing_m=spacing_m, frequency_hz=frequency_hz,
                      chainage_range_m=(lo - pad, hi + pad), max_depth_m=bottom,
                      method=method, top_m=top - 2 * h)


# =============================================================================== rays


@dataclass
class RayPaths:
    """Ray paths traced back from receivers through a :class:`TimeField`.

    Attributes
    ----------
    chainage_m, depth_m : numpy.ndarray, shape (n_receivers, n_points)
        Path points from the source to the receiver, metres, padded with NaN.
    status : numpy.ndarray of str
        ``'ok'``, the receiver's status when it has no time, or ``'not_converged'``
        when the path did not reach the source within the step limit.
    entry_chainage_m, exit_chainage_m : numpy.ndarray
        For head and turning waves: chainage where the path enters and leaves
        the refractor (the interface named in the phase); NaN otherwise.
    point_chainage_m, point_depth_m : numpy.ndarray
        For reflections: the reflection point; NaN otherwise.
    """

    chainage_m: np.ndarray
    depth_m: np.ndarray
    status: np.ndarray
    entry_chainage_m: np.ndarray
    exit_chainage_m: np.ndarray
    point_chainage_m: np.ndarray
    point_depth_m: np.ndarray

    def path(self, i: int) -> tuple[np.ndarray, np.ndarray]:
        """Chainage and depth of path ``i`` without padding, metres."""
        ok = np.isfinite(self.chainage_m[i])
        return self.chainage_m[i][ok], self.depth_m[i][ok]


def _interp_cols(setup: _Setup, arr: np.ndarray, x: np.ndarray) -> np.ndarray:
    return np.interp(x, setup.grid.x, arr)


def _grad_at(setup: _Setup, st: _Stage, x: np.ndarray, z: np.ndarray):
    g = setup.grid
    gx, gz = st.gradient(g.h)
    corners, _, _ = _corners(setup, st, x, z)
    fin = np.isfinite(st.T)
    ax = np.zeros(x.shape)
    az = np.zeros(x.shape)
    den = np.zeros(x.shape)
    for jj, ii, w in corners:
        f = fin[jj, ii]
        ax += np.where(f, w * gx[jj, ii], 0.0)
        az += np.where(f, w * gz[jj, ii], 0.0)
        den += np.where(f, w, 0.0)
    den = np.where(den > 0, den, 1.0)
    return ax / den, az / den


def ray_paths(fld: TimeField, receivers_chainage_m, receivers_depth_m, *,
              step_m: float | None = None, max_steps: int | None = None) -> RayPaths:
    """Trace rays back from receivers to the source by steepest descent.

    From each receiver the path steps against the gradient of the time field
    of the stage it is in; where it reaches the interface that stage started
    from, it continues in the stage before (a refracted wave slides along its
    refractor until it reaches the columns where it was fed from above), down
    to the box around the source, from where it runs straight to the source.
    All receivers step together (one numpy pass per step).

    Parameters
    ----------
    fld : TimeField
    receivers_chainage_m, receivers_depth_m : array_like
        Metres.
    step_m : float, optional
        Step length, metres (default half the grid spacing).
    max_steps : int, optional
        Step limit (default: enough for four times the grid diagonal).

    Returns
    -------
    RayPaths
    """
    sv = fld._solver
    s = sv.setup
    g = s.grid
    x, z = _receivers(receivers_chainage_m, receivers_depth_m)
    x = x.ravel().astype(float)
    z = z.ravel().astype(float)
    n = x.size
    rd = fld.read(x, z)
    ds = 0.5 * g.h if step_m is None else float(step_m)
    if max_steps is None:
        max_steps = int(4 * (g.nx + g.nz) * g.h / ds)
    status = rd.status.astype(object).copy()
    alive = status == "ok"
    # receivers read at the surface start there
    if not s.cols.open_top:
        sc = s.sec.columns(np.where(alive, x, g.x0), s.wave)
        z = np.where(alive, np.maximum(z, sc.tops[0]), z)
    # which stage each receiver starts in
    stages: list[_Stage] = []
    index: dict[int, int] = {}

    def sid(st: _Stage) -> int:
        key = id(st)
        if key not in index:
            index[key] = len(stages)
            stages.append(st)
        return index[key]

    cur = np.full(n, -1)
    fams = fld._families()
    lay = rd.layer.ravel()
    label_to_fn = {lab: fn for lab, fn in fams}
    arr = rd.arrival.ravel()
    for lab, fn in label_to_fn.items():
        for m in np.unique(lay[alive]):
            sel = alive & (arr == lab) & (lay == m)
            if not sel.any():
                continue
            st = fn(int(m))
            if st is None:
                alive[sel] = False
                status[sel] = "no_ray"
                continue
            cur[sel] = sid(st)
    px = [x.copy()]
    pz = [z.copy()]
    head_k = fld._k if fld.phase.kind in ("head", "turning") else None
    refl_k = fld._k if fld.phase.kind == "reflection" else None
    entry = np.full(n, np.nan)
    exit_ = np.full(n, np.nan)
    ptx = np.full(n, np.nan)
    ptz = np.full(n, np.nan)
    cx, cz = x.copy(), z.copy()
    done = ~alive
    rbox = 1.5 * g.h
    xs, zs = sv.xs, sv.zs
    for _ in range(max_steps):
        act = np.flatnonzero(~done)
        if act.size == 0:
            break
        nxp = cx.copy()
        nzp = cz.copy()
        for si in np.unique(cur[act]):
            st = stages[si]
            sel = act[cur[act] == si]
            gx, gz = _grad_at(s, st, cx[sel], cz[sel])
            norm = np.hypot(gx, gz)
            norm = np.where(norm > 0, norm, 1.0)
            nxp[sel] = cx[sel] - ds * gx / norm
            nzp[sel] = cz[sel] - ds * gz / norm
        # interface crossings back into the parent stage
        for si in np.unique(cur[act]):
            st = stages[si]
            if st.seed_dir == 0 or st.seed_iface is None:
                continue
            sel = act[cur[act] == si]
            f = _interp_cols(s, s.cols.tops[st.seed_iface], nxp[sel])
            # the stage started from its seeds, the two grid rows next to the
            # interface: reaching them means reaching the interface, which the
            # path then meets by continuing its last step
            reach = 2.0 * g.h
            crossed = (nzp[sel] < f + reach) if st.seed_dir > 0 else (nzp[sel] > f - reach)
            if not crossed.any():
                continue
            cs = sel[crossed]
            fc = f[crossed]
            dxs = nxp[cs] - cx[cs]
            dzs = nzp[cs] - cz[cs]
            toward = dzs * st.seed_dir < -0.05 * ds
            with np.errstate(divide="ignore", invalid="ignore"):
                run = np.where(toward, (fc - nzp[cs]) * dxs / dzs, 0.0)
            nxp[cs] = nxp[cs] + run
            fc = _interp_cols(s, s.cols.tops[st.seed_iface], nxp[cs])
            ic = np.clip(np.rint((nxp[cs] - g.x0) / g.h).astype(int), 0, g.nx - 1)
            seeded = np.zeros(g.nx, dtype=bool)
            if st.seeded_cols is not None:
                seeded[st.seeded_cols] = True
            fed = seeded[ic]
            nzp[cs] = fc
            go = cs[fed]
            if go.size and st.parent is not None:
                if head_k is not None and st.seed_iface == head_k and st.seed_dir < 0:
                    exit_[go] = nxp[go]
                if head_k is not None and st.seed_iface == head_k and st.seed_dir > 0:
                    entry[go] = nxp[go]
                if refl_k is not None and st.seed_iface == refl_k and st.seed_dir < 0:
                    ptx[go] = nxp[go]
                    ptz[go] = nzp[go]
                cur[go] = sid(st.parent)
        cx[act] = nxp[act]
        cz[act] = nzp[act]
        px.append(np.where(done, np.nan, cx))
        pz.append(np.where(done, np.nan, cz))
        # arrival at the source
        src_stage = np.array([st.seed_dir == 0 for st in stages] + [False])
        is_src = src_stage[cur]  # cur == -1 picks the trailing False
        arrived = ~done & is_src & (np.hypot(cx - xs, cz - zs) <= rbox)
        if arrived.any():
            px.append(np.where(arrived, xs, np.nan))
            pz.append(np.where(arrived, zs, np.nan))
            done |= arrived
    else:
        status[~done] = "not_converged"
    PX = np.stack(px, axis=1)
    PZ = np.stack(pz, axis=1)
    # compact each row (NaN gaps come from finished rays) and reverse to source -> receiver
    order = np.argsort(~np.isfinite(PX), axis=1, kind="stable")
    PX = np.take_along_axis(PX, order, axis=1)[:, ::-1]
    PZ = np.take_along_axis(PZ, order, axis=1)[:, ::-1]
    cnt = np.isfinite(PX).sum(axis=1)
    shift = PX.shape[1] - cnt
    idx = (np.arange(PX.shape[1])[None, :] + shift[:, None]) % PX.shape[1]
    PX = np.take_along_axis(PX, idx, axis=1)
    PZ = np.take_along_axis(PZ, idx, axis=1)
    bad = status != "ok"
    PX[bad] = np.nan
    PZ[bad] = np.nan
    keep = max(int(cnt.max(initial=0)), 1)
    return RayPaths(chainage_m=PX[:, :keep], depth_m=PZ[:, :keep], status=status,
                    entry_chainage_m=entry, exit_chainage_m=exit_, point_chainage_m=ptx,
                    point_depth_m=ptz)


def ray_path(fld: TimeField, chainage_m: float, depth_m: float) -> tuple[np.ndarray, np.ndarray]:
    """The ray path from the source to one receiver (see :func:`ray_paths`).

    Returns
    -------
    chainage_m, depth_m : numpy.ndarray
        Path points from the source to the receiver, metres (empty when the
        phase has no ray to this receiver).
    """
    rp = ray_paths(fld, [chainage_m], [depth_m])
    return rp.path(0)
