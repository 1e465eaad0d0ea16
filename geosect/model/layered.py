"""The layered velocity model: 1D or 2D, with named interfaces and topography on top.

A model is a stack of layers, top to bottom.  Layer ``i`` lies between
interface ``i`` (its top) and interface ``i + 1`` (its bottom); the last layer
is a half-space.  So there are as many interfaces as layers, interface 0 is
the model top, and an interface's name names the top of the layer below it
(``'moho'`` is the top of the mantle).

* Interfaces are polylines of nodes ``(chainage_m, depth_m)``, depths positive
  down from the datum, linear between nodes and constant beyond the end nodes.
  One node means a flat interface.  Interfaces may touch (a pinch-out) but
  never cross, and a step must be a steep ramp between two distinct chainages.
* In each layer the velocity is linear in depth between its value at the
  layer's top and at its bottom; both may vary along chainage (velocity nodes,
  linear between them).  The half-space has a velocity at its top and a
  gradient.  S velocities are given per layer either directly or as a vp/vs
  ratio.
* The top surface is ``'datum'`` (flat) or ``'dem'`` (the topography along the
  section line, filled in with :meth:`LayeredModel.set_topography`).
* Points above the model top lie in the top layer, whose velocity law continues
  upward (``v = v_top + g (z - z_top)``; for a constant top layer simply its
  velocity).  A station at 2 km elevation over a flat datum model, at depth
  -2000 m, thus sees the top layer's velocity from -2000 m down.

>>> m = LayeredModel.flat(tops_m=[0, 20e3, 35e3], vp_ms=[5800, 6500, 8040],
...                       names=["surface", "mid-crust", "moho"])
>>> round(float(m.traveltime(0.0, "reflection:moho")), 4)
11.5119
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from geosect.errors import InputError, ModelError
from geosect.model import oned
from geosect.model.phases import ROLES, Phase, iaspei_label, parse_phase

__all__ = ["Interface", "Layer", "LayeredModel", "LINE_SIGNATURE_KEYS"]

#: Keys of a recorded section-line signature.
LINE_SIGNATURE_KEYS: tuple[str, ...] = ("start_e", "start_n", "end_e", "end_n", "length_m")
_TOPS = ("datum", "dem")
_MIN_VPVS = 2.0 / math.sqrt(3.0)


def _km(x: float) -> str:
    return f"{x / 1000.0:.3f} km"


def _kms(v: float) -> str:
    return f"{v / 1000.0:.3f} km/s"


def _arr(values, what: str) -> np.ndarray:
    a = np.atleast_1d(np.asarray(values, dtype=float))
    if a.ndim != 1:
        raise ModelError(f"{what} must be a number or a 1D list of numbers, got shape {a.shape}")
    return a


def _model_error(what: str, fix: str, ref: tuple) -> ModelError:
    err = ModelError(what, fix=fix)
    err.ref = ref  # which part of the model: ('interface'|'layer'|'model', index, field)
    return err


@dataclass
class Interface:
    """A named boundary: nodes along chainage, depths in metres (positive down).

    Parameters
    ----------
    name : str
        Interface name (unique in the model).
    chainage_m : array_like
        Node chainages, metres, non-decreasing.  One node: a flat interface.
    depth_m : array_like
        Node depths below the datum, metres.
    role : {'conrad', 'moho'} or None
        Mark of the mid-crustal or the crust-mantle boundary.
    """

    name: str
    chainage_m: np.ndarray
    depth_m: np.ndarray
    role: str | None = None

    def __post_init__(self) -> None:
        self.chainage_m = _arr(self.chainage_m, f"interface '{self.name}' chainage")
        self.depth_m = _arr(self.depth_m, f"interface '{self.name}' depth")

    def depth_at(self, chainage_m) -> np.ndarray:
        """Depth (m) at chainage (m), linear between nodes, constant beyond the ends."""
        return np.interp(chainage_m, self.chainage_m, self.depth_m)

    @property
    def is_flat(self) -> bool:
        return bool(np.all(self.depth_m == self.depth_m[0]))


@dataclass
class Layer:
    """A layer: P (and S) velocity at its top and bottom, optionally varying along chainage.

    Parameters
    ----------
    name : str
        Layer name (unique in the model).
    vp_top_ms : array_like
        P velocity at the top of the layer, m/s, one value per velocity node.
    vp_bottom_ms : array_like or None
        P velocity at the bottom, m/s.  None for the last layer (half-space),
        which uses ``vp_gradient_per_s`` instead.
    chainage_m : array_like or None
        Chainages of the velocity nodes, metres, increasing.  None: one node,
        the layer's velocities are the same everywhere along the line.
    vp_gradient_per_s : array_like
        Half-space only: dv/dz below its top, 1/s (default 0).
    vpvs : float or None
        vp/vs ratio of the layer (S velocity = P velocity / vpvs).
    vs_top_ms, vs_bottom_ms, vs_gradient_per_s : array_like or None
        S velocities given directly instead of ``vpvs``.
    """

    name: str
    vp_top_ms: np.ndarray
    vp_bottom_ms: np.ndarray | None = None
    chainage_m: np.ndarray | None = None
    vp_gradient_per_s: np.ndarray | float = 0.0
    vpvs: float | None = None
    vs_top_ms: np.ndarray | None = None
    vs_bottom_ms: np.ndarray | None = None
    vs_gradient_per_s: np.ndarray | float | None = None

    def __post_init__(self) -> None:
        nm = f"layer '{self.name}'"
        self.vp_top_ms = _arr(self.vp_top_ms, f"{nm} vp_top")
        self.chainage_m = (np.zeros(1) if self.chainage_m is None
                           else _arr(self.chainage_m, f"{nm} chainage"))
        if self.vp_bottom_ms is not None:
            self.vp_bottom_ms = _arr(self.vp_bottom_ms, f"{nm} vp_bottom")
        self.vp_gradient_per_s = _arr(self.vp_gradient_per_s, f"{nm} vp_gradient")
        for attr in ("vs_top_ms", "vs_bottom_ms"):
            if getattr(self, attr) is not None:
                setattr(self, attr, _arr(getattr(self, attr), f"{nm} {attr[:-3]}"))
        if self.vs_gradient_per_s is not None:
            self.vs_gradient_per_s = _arr(self.vs_gradient_per_s, f"{nm} vs_gradient")
        # one value broadcast to all nodes
        k = self.chainage_m.size
        for attr in ("vp_top_ms", "vp_bottom_ms", "vp_gradient_per_s", "vs_top_ms",
                     "vs_bottom_ms", "vs_gradient_per_s"):
            a = getattr(self, attr)
            if a is not None and a.size == 1 and k > 1:
                setattr(self, attr, np.full(k, float(a[0])))

    @property
    def n_nodes(self) -> int:
        return int(self.chainage_m.size)


def _nodes(name: str, values, k: int, ref: tuple) -> None:
    if values is not None and np.size(values) != k:
        raise _model_error(f"{name} has {np.size(values)} values but the layer has {k} "
                           f"velocity nodes", "give one value per velocity node (chainage), "
                           "or a single value for the whole line", ref)


class LayeredModel:
    """A 1D or 2D layered velocity model (SI units: metres, m/s).

    Parameters
    ----------
    interfaces : sequence of Interface
        Interface ``i`` is the top of layer ``i``; ``interfaces[0]`` is the model top.
    layers : sequence of Layer
        Layers top to bottom; the last is a half-space.
    top : {'datum', 'dem'}
        Kind of top surface: flat, or the topography along the line (filled by
        :meth:`set_topography`).
    line_signature : dict, optional
        The section line the model was made on: ``start_e, start_n, end_e,
        end_n`` (map coordinates, m) and ``length_m``.  See :meth:`check_line`.
    name : str
        A name for messages.
    note : str
        Free text (for example where the model comes from).

    Attributes
    ----------
    notes : list of str
        Remarks that are not errors, for example interfaces with no head wave.
    topography_set : bool
        Whether :meth:`set_topography` filled the top surface.
    file_top : Interface or None
        The top interface as given before :meth:`set_topography` replaced it
        (what a model file keeps).

    Raises
    ------
    ModelError
        Crossing interfaces, vertical jumps, non-positive velocities, bad roles;
        every message names the interface or layer and the chainage.
    """

    def __init__(self, interfaces: Sequence[Interface], layers: Sequence[Layer], *,
                 top: str = "datum", line_signature: Mapping | None = None,
                 name: str = "model", note: str = ""):
        self.interfaces = list(interfaces)
        self.layers = list(layers)
        self.top = top
        self.name = name
        self.note = note
        self.file_top: Interface | None = None
        self.line_signature = None if line_signature is None else dict(line_signature)
        self.topography_set = False
        self.notes: list[str] = []
        self._validate()

    # ------------------------------------------------------------------ construction

    @classmethod
    def flat(cls, tops_m: Sequence[float], vp_ms: Sequence[float],
             names: Sequence[str] | None = None, vs_ms: Sequence[float] | None = None,
             vpvs: float | Sequence[float] = 1.73, gradients: Sequence[float] | None = None, *,
             layer_names: Sequence[str] | None = None, roles: Mapping[str, str] | None = None,
             name: str = "flat model") -> LayeredModel:
        """A 1D model of flat layers.

        Parameters
        ----------
        tops_m : sequence of float
            Depth of the top of each layer, metres; ``tops_m[0]`` is the model
            top (the surface, normally 0).
        vp_ms : sequence of float
            P velocity at the top of each layer, m/s.
        names : sequence of str, optional
            Names of the interfaces at the top of each layer (so the last name
            is the top of the half-space).  Default ``'surface'``,
            ``'interface1'``, ...
        vs_ms : sequence of float, optional
            S velocity at the top of each layer, m/s; by default ``vp / vpvs``.
        vpvs : float or sequence of float
            vp/vs ratio, one for all layers or one per layer (used when
            ``vs_ms`` is not given).
        gradients : sequence of float, optional
            Velocity gradient dv/dz in each layer, 1/s (default 0).  Given
            ``vs_ms``, the S gradient keeps the layer's vs/vp ratio.
        layer_names : sequence of str, optional
            Default ``'layer1'``, ``'layer2'``, ...
        roles : mapping, optional
            ``{interface name: 'conrad' | 'moho'}``.  By default an interface
            named ``'conrad'`` or ``'moho'`` (any case) gets that role.

        Examples
        --------
        >>> m = LayeredModel.flat([0, 20e3, 35e3], [5800, 6500, 8040],
        ...                       names=["surface", "mid-crust", "moho"])
        >>> m.interface_names
        ['surface', 'mid-crust', 'moho']
        """
        tops = _arr(tops_m, "tops_m")
        vp = _arr(vp_ms, "vp_ms")
        n = tops.size
        if vp.size != n:
            raise ModelError(f"tops_m has {n} values but vp_ms has {vp.size}",
                             fix="give one velocity per layer top")
        names = list(names) if names is not None else ["surface"] + [f"interface{i}"
                                                                     for i in range(1, n)]
        if len(names) != n:
            raise ModelError(f"tops_m has {n} values but names has {len(names)}",
                             fix="name the interface at the top of every layer")
        lnames = list(layer_names) if layer_names is not None else [f"layer{i + 1}"
                                                                    for i in range(n)]
        if len(lnames) != n:
            raise ModelError(f"tops_m has {n} values but layer_names has {len(lnames)}",
                             fix="name every layer")
        g = np.zeros(n) if gradients is None else _arr(gradients, "gradients")
        if g.size != n:
            raise ModelError(f"gradients has {g.size} values for {n} layers",
                             fix="give one gradient (1/s) per layer")
        if vs_ms is not None:
            vs = _arr(vs_ms, "vs_ms")
            if vs.size != n:
                raise ModelError(f"vs_ms has {vs.size} values for {n} layers",
                                 fix="give one S velocity per layer")
        else:
            vs = None
        ratio = np.broadcast_to(_arr(vpvs, "vpvs"), (n,)) if vs is None else None
        if roles is None:
            roles = {nm: nm.lower() for nm in names if nm.lower() in ROLES}
        interfaces = [Interface(names[i], [0.0], [tops[i]], roles.get(names[i])) for i in range(n)]
        layers = []
        for i in range(n):
            last = i == n - 1
            vb = None if last else vp[i] + g[i] * (tops[i + 1] - tops[i])
            kw: dict = {}
            if vs is not None:
                kw["vs_top_ms"] = vs[i]
                gs = g[i] * vs[i] / vp[i]
                if last:
                    kw["vs_gradient_per_s"] = gs
                else:
                    kw["vs_bottom_ms"] = vs[i] + gs * (tops[i + 1] - tops[i])
            else:
                kw["vpvs"] = float(ratio[i])
            layers.append(Layer(lnames[i], vp[i], vb, None,
                                vp_gradient_per_s=g[i] if last else 0.0, **kw))
        return cls(interfaces, layers, top="datum", name=name)

    # ------------------------------------------------------------------ validation

    def _validate(self) -> None:
        ifs, lys = self.interfaces, self.layers
        if not lys:
            raise _model_error("the model has no layers", "add at least one layer",
                               ("model", None, None))
        if len(ifs) != len(lys):
            raise _model_error(f"{len(ifs)} interfaces for {len(lys)} layers",
                               "give each layer its top interface", ("model", None, None))
        if self.top not in _TOPS:
            raise _model_error(f"top surface '{self.top}' is not one of {', '.join(_TOPS)}",
                               "use 'datum' (flat) or 'dem' (topography along the line)",
                               ("model", None, "surface"))
        for kind, items in (("interface", ifs), ("layer", lys)):
            seen: dict[str, int] = {}
            for i, it in enumerate(items):
                if not isinstance(it.name, str) or not it.name.strip():
                    raise _model_error(f"{kind} {i + 1} has no name", f"give every {kind} a name",
                                       (kind, i, "name"))
                if it.name in seen:
                    raise _model_error(f"two {kind}s are named '{it.name}'",
                                       f"give every {kind} its own name", (kind, i, "name"))
                seen[it.name] = i
        for i, itf in enumerate(ifs):
            self._check_interface(i, itf)
        for i in range(1, len(ifs)):
            self._check_order(i)
        for i, lay in enumerate(lys):
            self._check_layer(i, lay)
        self._check_roles()
        if self.line_signature is not None:
            self._check_signature()
        self._make_notes()

    def _check_interface(self, i: int, itf: Interface) -> None:
        c, d = itf.chainage_m, itf.depth_m
        ref = ("interface", i, "depth")
        if c.size != d.size:
            raise _model_error(f"interface '{itf.name}' has {c.size} chainages but {d.size} depths",
                               "give one depth per node chainage", ref)
        if c.size == 0:
            raise _model_error(f"interface '{itf.name}' has no nodes", "give at least one depth",
                               ref)
        bad = ~np.isfinite(c) | ~np.isfinite(d)
        if bad.any():
            j = int(np.flatnonzero(bad)[0])
            raise _model_error(f"interface '{itf.name}' node {j + 1} is not a finite number "
                               f"(chainage {c[j]!r}, depth {d[j]!r})",
                               "give finite chainages and depths", ref)
        dc = np.diff(c)
        if (dc < 0).any():
            j = int(np.flatnonzero(dc < 0)[0])
            raise _model_error(f"interface '{itf.name}': node chainages go back from "
                               f"{_km(c[j])} to {_km(c[j + 1])}",
                               "list the nodes in increasing chainage", ref)
        same = (dc == 0) & (np.diff(d) != 0)
        if same.any():
            j = int(np.flatnonzero(same)[0])
            raise _model_error(
                f"interface '{itf.name}' has a vertical jump at chainage {_km(c[j])} "
                f"(depth {_km(d[j])} and {_km(d[j + 1])} at the same chainage)",
                "make the step a steep ramp: put the two nodes at distinct chainages, "
                "for example 100 m apart", ref)

    def _crossing(self, i: int):
        """First chainage where interface i lies above interface i - 1, or None."""
        up, lo = self.interfaces[i - 1], self.interfaces[i]
        c = np.union1d(up.chainage_m, lo.chainage_m)
        du, dl = up.depth_at(c), lo.depth_at(c)
        cross = dl < du - 1e-6
        if not cross.any():
            return None
        j = int(np.flatnonzero(cross)[0])
        return c[j], dl[j], du[j]

    def _check_order(self, i: int) -> None:
        hit = self._crossing(i)
        if hit is None:
            return
        up, lo = self.interfaces[i - 1], self.interfaces[i]
        c, dl, du = hit
        raise _model_error(
            f"interface '{lo.name}' crosses interface '{up.name}' above it at chainage "
            f"{_km(c)} ('{lo.name}' {_km(dl)} deep, '{up.name}' {_km(du)})",
            f"make '{lo.name}' at least as deep as '{up.name}' everywhere; interfaces may "
            "touch (a pinch-out) but not cross", ("interface", i, "depth"))

    def _check_layer(self, i: int, lay: Layer) -> None:
        last = i == len(self.layers) - 1
        k = lay.n_nodes
        ref = ("layer", i, None)
        c = lay.chainage_m
        if not np.isfinite(c).all() or (np.diff(c) <= 0).any():
            raise _model_error(f"layer '{lay.name}': velocity node chainages must be finite and "
                               f"increasing, got {[round(x / 1000, 3) for x in c]} km",
                               "list the velocity nodes once each, in increasing chainage",
                               ("layer", i, "chainage"))
        _nodes(f"layer '{lay.name}' vp_top", lay.vp_top_ms, k, ("layer", i, "vp_top"))
        if last:
            if lay.vp_bottom_ms is not None:
                raise _model_error(f"layer '{lay.name}' is the half-space at the bottom of the "
                                   "model and has no bottom velocity",
                                   "give the half-space a gradient (vp_gradient) instead of a "
                                   "bottom velocity", ("layer", i, "vp_bottom"))
            _nodes(f"layer '{lay.name}' vp_gradient", lay.vp_gradient_per_s, k,
                   ("layer", i, "vp_gradient"))
            if (lay.vp_gradient_per_s < 0).any() or not np.isfinite(lay.vp_gradient_per_s).all():
                raise _model_error(f"half-space '{lay.name}' has a negative or non-finite "
                                   "velocity gradient; its velocity would fall to zero at depth",
                                   "give the half-space a gradient of 0 or more (1/s)",
                                   ("layer", i, "vp_gradient"))
        else:
            if lay.vp_bottom_ms is None:
                raise _model_error(f"layer '{lay.name}' has no bottom velocity",
                                   "give vp at the bottom of every layer but the last "
                                   "(equal to the top velocity for a constant layer)",
                                   ("layer", i, "vp_bottom"))
            _nodes(f"layer '{lay.name}' vp_bottom", lay.vp_bottom_ms, k, ("layer", i, "vp_bottom"))
        has_vs = lay.vs_top_ms is not None
        if has_vs and lay.vpvs is not None:
            raise _model_error(f"layer '{lay.name}' has both vs and vp/vs",
                               "give either the S velocities or the vp/vs ratio",
                               ("layer", i, "vs"))
        if not has_vs and lay.vpvs is None:
            raise _model_error(f"layer '{lay.name}' has no S velocity",
                               "give vp/vs (for example 1.73) or vs at the top and bottom",
                               ("layer", i, "vpvs"))
        if lay.vpvs is not None and not (np.isfinite(lay.vpvs) and lay.vpvs > _MIN_VPVS):
            raise _model_error(f"layer '{lay.name}' has vp/vs {lay.vpvs!r}, not above "
                               f"2/sqrt(3) = {_MIN_VPVS:.4f} (the bulk modulus would not be "
                               "positive)", "give a vp/vs ratio above 1.155, typically 1.7-1.8",
                               ("layer", i, "vpvs"))
        if has_vs:
            _nodes(f"layer '{lay.name}' vs_top", lay.vs_top_ms, k, ("layer", i, "vs_top"))
            if last:
                if lay.vs_bottom_ms is not None:
                    raise _model_error(f"layer '{lay.name}' is the half-space and has no bottom "
                                       "S velocity", "give vs_gradient instead",
                                       ("layer", i, "vs_bottom"))
                if lay.vs_gradient_per_s is None:
                    lay.vs_gradient_per_s = np.zeros(k)
                _nodes(f"layer '{lay.name}' vs_gradient", lay.vs_gradient_per_s, k,
                       ("layer", i, "vs_gradient"))
                if (lay.vs_gradient_per_s < 0).any():
                    raise _model_error(f"half-space '{lay.name}' has a negative S gradient",
                                       "give a gradient of 0 or more", ("layer", i, "vs_gradient"))
            else:
                if lay.vs_bottom_ms is None:
                    raise _model_error(f"layer '{lay.name}' has vs at its top but not at its "
                                       "bottom", "give vs_bottom too", ("layer", i, "vs_bottom"))
                _nodes(f"layer '{lay.name}' vs_bottom", lay.vs_bottom_ms, k,
                       ("layer", i, "vs_bottom"))
        checks = [("vp_top", lay.vp_top_ms), ("vp_bottom", lay.vp_bottom_ms)]
        if has_vs:
            checks += [("vs_top", lay.vs_top_ms), ("vs_bottom", lay.vs_bottom_ms)]
        for key, vals in checks:
            if vals is None:
                continue
            bad = ~(np.isfinite(vals) & (vals > 0))
            if bad.any():
                j = int(np.flatnonzero(bad)[0])
                raise _model_error(f"layer '{lay.name}' has {key} {vals[j] / 1000.0:g} km/s at "
                                   f"chainage {_km(c[j])}; velocities must be positive",
                                   "give a positive velocity (km/s in model files)",
                                   ("layer", i, key))
        if has_vs:
            for key_p, key_s in (("vp_top_ms", "vs_top_ms"), ("vp_bottom_ms", "vs_bottom_ms")):
                vp, vs = getattr(lay, key_p), getattr(lay, key_s)
                if vp is None or vs is None:
                    continue
                bad = ~(vp > _MIN_VPVS * vs)
                if bad.any():
                    j = int(np.flatnonzero(bad)[0])
                    raise _model_error(
                        f"layer '{lay.name}' at chainage {_km(c[j])}: vs {_kms(vs[j])} is too "
                        f"close to vp {_kms(vp[j])} (vp/vs must exceed {_MIN_VPVS:.4f})",
                        "check the S velocities; vp/vs is typically 1.7-1.8",
                        ("layer", i, key_s[:-3]))

    def _check_roles(self) -> None:
        pos: dict[str, int] = {}
        for i, itf in enumerate(self.interfaces):
            if itf.role is None:
                continue
            if itf.role not in ROLES:
                raise _model_error(f"interface '{itf.name}' has role '{itf.role}', not one of "
                                   f"{', '.join(ROLES)}", "use 'conrad' for the mid-crustal "
                                   "boundary or 'moho' for the crust-mantle boundary",
                                   ("interface", i, "role"))
            if i == 0:
                raise _model_error(f"the model top '{itf.name}' cannot have the role "
                                   f"'{itf.role}'", "mark a deeper interface",
                                   ("interface", i, "role"))
            if itf.role in pos:
                raise _model_error(f"two interfaces have the role '{itf.role}': "
                                   f"'{self.interfaces[pos[itf.role]].name}' and '{itf.name}'",
                                   "mark only one of them", ("interface", i, "role"))
            pos[itf.role] = i
        if "conrad" in pos and "moho" in pos and pos["moho"] < pos["conrad"]:
            i = pos["moho"]
            raise _model_error(f"the 'moho' interface '{self.interfaces[i].name}' lies above the "
                               f"'conrad' interface '{self.interfaces[pos['conrad']].name}'",
                               "swap the two roles", ("interface", i, "role"))

    def _check_signature(self) -> None:
        sig = self.line_signature
        missing = [k for k in LINE_SIGNATURE_KEYS if k not in sig]
        if missing:
            raise _model_error(f"the section line signature lacks {', '.join(missing)}",
                               f"give all of {', '.join(LINE_SIGNATURE_KEYS)}",
                               ("model", None, "section_line"))
        for k in LINE_SIGNATURE_KEYS:
            try:
                sig[k] = float(sig[k])
            except (TypeError, ValueError):
                raise _model_error(f"section line signature '{k}' is {sig[k]!r}, not a number",
                                   "give map coordinates and length in metres",
                                   ("model", None, "section_line")) from None

    def _make_notes(self) -> None:
        self.notes = []
        for i in range(1, len(self.layers)):
            below = self.layers[i]
            nodes = np.unique(np.concatenate([lay.chainage_m for lay in self.layers[:i + 1]]))
            v_below = np.interp(nodes, below.chainage_m, below.vp_top_ms)
            best = np.full(nodes.size, -np.inf)
            who = np.full(nodes.size, -1)
            for j in range(i):
                lay = self.layers[j]
                v = np.maximum(np.interp(nodes, lay.chainage_m, lay.vp_top_ms),
                               np.interp(nodes, lay.chainage_m, lay.vp_bottom_ms))
                who = np.where(v > best, j, who)
                best = np.maximum(best, v)
            slow = v_below <= best
            if slow.any():
                k = int(np.flatnonzero(slow)[0])
                above = self.layers[int(who[k])]
                where = "" if self.is_1d else f" at chainage {_km(nodes[k])}"
                self.notes.append(
                    f"no head wave along '{self.interfaces[i].name}': layer '{below.name}' below "
                    f"is slower than layer '{above.name}' above ({_kms(v_below[k])} against "
                    f"{_kms(best[k])}{where})")

    # ------------------------------------------------------------------ description

    @property
    def interface_names(self) -> list[str]:
        """Interface names, top to bottom (the first is the model top)."""
        return [i.name for i in self.interfaces]

    @property
    def layer_names(self) -> list[str]:
        """Layer names, top to bottom (the last is the half-space)."""
        return [lay.name for lay in self.layers]

    @property
    def is_1d(self) -> bool:
        """True when nothing varies along chainage (flat interfaces, constant velocities)."""
        for itf in self.interfaces:
            if not itf.is_flat:
                return False
        for lay in self.layers:
            for a in (lay.vp_top_ms, lay.vp_bottom_ms, lay.vp_gradient_per_s, lay.vs_top_ms,
                      lay.vs_bottom_ms, lay.vs_gradient_per_s):
                if a is not None and np.size(a) > 1 and not np.all(a == a[0]):
                    return False
        return True

    def __repr__(self) -> str:
        kind = "1D" if self.is_1d else "2D"
        return (f"LayeredModel({self.name!r}, {kind}, layers={self.layer_names}, "
                f"top={self.top!r})")

    def _suggest(self, name: str, options: list[str]) -> str:
        close = difflib.get_close_matches(name, options, n=1)
        hint = f"did you mean '{close[0]}'? " if close else ""
        return f"{hint}the model has: {', '.join(repr(o) for o in options)}"

    def interface_position(self, name: str) -> int:
        """Index of an interface (0 is the model top)."""
        try:
            return self.interface_names.index(name)
        except ValueError:
            raise InputError(f"the model has no interface '{name}'", key="interface",
                             fix=self._suggest(name, self.interface_names)) from None

    def layer_position(self, name: str) -> int:
        """Index of a layer (0 is the top layer)."""
        try:
            return self.layer_names.index(name)
        except ValueError:
            raise InputError(f"the model has no layer '{name}'", key="layer",
                             fix=self._suggest(name, self.layer_names)) from None

    def role_of(self, interface: str) -> str | None:
        """Role mark of an interface ('conrad', 'moho' or None)."""
        return self.interfaces[self.interface_position(interface)].role

    def interface_with_role(self, role: str) -> str | None:
        """Name of the interface with this role, or None."""
        for itf in self.interfaces:
            if itf.role == role:
                return itf.name
        return None

    def iaspei_label(self, phase: str | Phase) -> str | None:
        """IASPEI code of a phase in this model (see :func:`phases.iaspei_label`)."""
        return iaspei_label(phase, self)

    # ------------------------------------------------------------------ geometry and velocity

    def interface_depth(self, name: str, chainage_m) -> np.ndarray:
        """Depth of an interface (m, positive down) at chainages (m), vectorised.

        Linear between nodes, constant beyond the end nodes.
        """
        return self.interfaces[self.interface_position(name)].depth_at(np.asarray(chainage_m,
                                                                                  float))

    def _tops(self, ch: np.ndarray) -> np.ndarray:
        return np.stack([itf.depth_at(ch) for itf in self.interfaces])

    def _layer_v(self, i: int, ch: np.ndarray, wave: str):
        """(v_top, v_bottom or None, gradient) of layer i at chainages ch."""
        lay = self.layers[i]
        c = lay.chainage_m
        last = i == len(self.layers) - 1
        vt = np.interp(ch, c, lay.vp_top_ms)
        vb = None if last else np.interp(ch, c, lay.vp_bottom_ms)
        g = np.interp(ch, c, lay.vp_gradient_per_s) if last else None
        if wave == "S":
            if lay.vpvs is not None:
                vt = vt / lay.vpvs
                vb = None if vb is None else vb / lay.vpvs
                g = None if g is None else g / lay.vpvs
            else:
                vt = np.interp(ch, c, lay.vs_top_ms)
                vb = None if last else np.interp(ch, c, lay.vs_bottom_ms)
                g = np.interp(ch, c, lay.vs_gradient_per_s) if last else None
        return vt, vb, g

    @staticmethod
    def _wave(wave: str) -> str:
        w = str(wave).upper()
        if w not in ("P", "S"):
            raise InputError(f"wave type '{wave}' is not P or S", key="wave",
                             fix="use 'P' or 'S'")
        return w

    def _columns(self, ch: np.ndarray, wave: str):
        """Per-layer tops, top velocities and gradients at chainages ch (shape (L, N))."""
        tops = self._tops(ch)
        n_l = len(self.layers)
        vt = np.empty_like(tops)
        g = np.empty_like(tops)
        for i in range(n_l):
            a, b, gh = self._layer_v(i, ch, wave)
            vt[i] = a
            if i == n_l - 1:
                g[i] = gh
            else:
                h = tops[i + 1] - tops[i]
                with np.errstate(invalid="ignore", divide="ignore"):
                    g[i] = np.where(h > 0, (b - a) / np.where(h > 0, h, 1.0), 0.0)
        return tops, vt, g

    def velocity(self, chainage_m, depth_m, wave: str = "P") -> np.ndarray:
        """Velocity (m/s) at chainage (m) and depth (m), vectorised with broadcasting.

        A point on an interface takes the velocity of the layer below.  Above
        the model top the top layer's law continues upward; where that would
        not be positive the result is NaN.
        """
        wave = self._wave(wave)
        ch, z = np.broadcast_arrays(np.asarray(chainage_m, float), np.asarray(depth_m, float))
        shape = ch.shape
        ch, z = ch.ravel(), z.ravel()
        tops, vt, g = self._columns(ch, wave)
        k = (z[None, :] >= tops[1:]).sum(axis=0)
        cols = np.arange(z.size)
        v = vt[k, cols] + g[k, cols] * (z - tops[k, cols])
        v = np.where(v > 0, v, np.nan)
        return v.reshape(shape)

    def column(self, chainage_m: float) -> LayeredModel:
        """The 1D model under one chainage (m), for 1D solving under a midpoint."""
        ch = np.array([float(chainage_m)])
        itfs = [Interface(itf.name, [0.0], itf.depth_at(ch), itf.role) for itf in self.interfaces]
        lays = []
        n_l = len(self.layers)
        for i, lay in enumerate(self.layers):
            last = i == n_l - 1
            vt, vb, g = self._layer_v(i, ch, "P")
            kw: dict = {}
            if lay.vpvs is not None:
                kw["vpvs"] = lay.vpvs
            else:
                st, sb, sg = self._layer_v(i, ch, "S")
                kw["vs_top_ms"] = st
                if last:
                    kw["vs_gradient_per_s"] = sg
                else:
                    kw["vs_bottom_ms"] = sb
            lays.append(Layer(lay.name, vt, vb, None,
                              vp_gradient_per_s=g if last else 0.0, **kw))
        out = LayeredModel(itfs, lays, top=self.top, line_signature=self.line_signature,
                           name=f"{self.name} at chainage {_km(float(chainage_m))}",
                           note=self.note)
        out.topography_set = self.topography_set
        return out

    def to_column(self, wave: str = "P") -> oned.Column:
        """The 1D solver column of a 1D model (tops, top velocities, gradients)."""
        self._need_1d("to_column")
        tops, vt, g = self._columns(np.zeros(1), self._wave(wave))
        return oned.Column(tops[:, 0].copy(), vt[:, 0].copy(), g[:, 0].copy())

    def vertical_twt_to_depth(self, chainage_m, twt_s, *, wave: str = "P",
                              from_depth_m=None) -> np.ndarray:
        """Depth (m) reached by a vertical two-way time (s), with the model velocities.

        Parameters
        ----------
        chainage_m : array_like
            Chainage of each sample, metres (broadcast with ``twt_s``).
        twt_s : array_like
            Two-way vertical time, seconds, counted from ``from_depth_m``.
        wave : {'P', 'S'}
            Wave type.
        from_depth_m : array_like, optional
            Depth where time zero lies, metres (default: the model top at that
            chainage; above it the top layer's law continues upward).

        Returns
        -------
        numpy.ndarray
            Depth below the datum, metres; NaN for negative or non-finite times.

        Notes
        -----
        In a layer with velocity :math:`v = v_a + g (z - z_a)` the depth after a
        one-way time :math:`t` is :math:`z = z_a + v_a\\,(e^{g t} - 1)/g`
        (:math:`z_a + v_a t` for :math:`g = 0`).
        """
        wave = self._wave(wave)
        ch, tt = np.broadcast_arrays(np.asarray(chainage_m, float), np.asarray(twt_s, float))
        shape = ch.shape
        ch, tt = ch.ravel(), tt.ravel()
        tops, vt, g = self._columns(ch, wave)
        z0 = tops[0] if from_depth_m is None else np.broadcast_to(
            np.asarray(from_depth_m, float), shape).ravel()
        remaining = 0.5 * tt
        depth = np.full(ch.size, np.nan)
        todo = np.isfinite(remaining) & (remaining >= 0)
        n_l = len(self.layers)
        for i in range(n_l):
            za = np.maximum(z0, tops[i]) if i > 0 else z0
            zb = tops[i + 1] if i < n_l - 1 else np.full(ch.size, np.inf)
            va = vt[i] + g[i] * (za - tops[i])
            h = zb - za
            with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
                t_layer = np.where(h > 0, h / va * _log1p_over(g[i] * h / va), 0.0)
                t_layer = np.where(np.isfinite(zb), t_layer, np.inf)
                here = todo & (remaining <= t_layer)
                x = g[i] * remaining
                dz = va * remaining * _expm1_over(x)
            depth = np.where(here, za + dz, depth)
            todo &= ~here
            remaining = np.where(todo, remaining - np.where(h > 0, t_layer, 0.0), remaining)
        bad_v = ~(vt[0] + g[0] * (z0 - tops[0]) > 0)
        depth[bad_v] = np.nan
        return depth.reshape(shape)

    # ------------------------------------------------------------------ topography and line

    def set_topography(self, chainage_m, elevation_m) -> None:
        """Fill the top surface of a ``'dem'`` model with the topography along the line.

        Parameters
        ----------
        chainage_m : array_like
            Chainages of the samples, metres, increasing.
        elevation_m : array_like
            Surface elevation above the datum, metres (depth = -elevation).

        Raises
        ------
        ModelError
            For a ``'datum'`` model, bad samples, or topography that reaches
            below the next interface.
        """
        if self.top != "dem":
            raise ModelError(f"model '{self.name}' has a flat top ('datum') and takes no "
                             "topography", fix="set surface = \"dem\" in the model file to put "
                             "the topography on top")
        c = _arr(chainage_m, "topography chainage")
        e = _arr(elevation_m, "topography elevation")
        if c.size != e.size or c.size == 0:
            raise ModelError(f"topography has {c.size} chainages and {e.size} elevations",
                             fix="give one elevation per chainage")
        good = np.isfinite(c) & np.isfinite(e)
        if not good.all():
            j = int(np.flatnonzero(~good)[0])
            raise ModelError(f"topography sample {j + 1} is not finite (chainage {c[j]!r}, "
                             f"elevation {e[j]!r})", fix="fill the gaps of the DEM along the "
                             "line before passing it")
        if (np.diff(c) <= 0).any():
            j = int(np.flatnonzero(np.diff(c) <= 0)[0])
            raise ModelError(f"topography chainages must increase; sample {j + 2} "
                             f"({_km(c[j + 1])}) follows {_km(c[j])}",
                             fix="sort the samples by chainage and drop repeats")
        old = self.interfaces[0]
        self.interfaces[0] = Interface(old.name, c, -e, old.role)
        hit = self._crossing(1) if len(self.interfaces) > 1 else None
        if hit is not None:
            self.interfaces[0] = old
            nxt = self.interfaces[1].name
            raise ModelError(f"the topography reaches below interface '{nxt}' at chainage "
                             f"{_km(hit[0])} (surface {_km(hit[2])} deep, '{nxt}' "
                             f"{_km(hit[1])})",
                             fix=f"check the DEM heights along the line, or deepen '{nxt}' in "
                                 "the model")
        if self.file_top is None:
            self.file_top = old
        self.topography_set = True
        self._make_notes()

    def check_line(self, signature: Mapping | None, tol_m: float = 1.0) -> bool:
        """Check that the model was made on this section line.

        Parameters
        ----------
        signature : mapping or None
            The current line's ``start_e, start_n, end_e, end_n, length_m``
            (metres, working CRS).
        tol_m : float
            Largest difference accepted, metres.

        Returns
        -------
        bool
            True when the model records a line and it matches; False when the
            model records no line (nothing to check; a 1D model needs none).

        Raises
        ------
        ModelError
            "model was made on another section line", naming the value that
            differs and how much.
        """
        if self.line_signature is None or signature is None:
            return False
        diffs = []
        for k in LINE_SIGNATURE_KEYS:
            if k not in signature:
                raise ModelError(f"the current section line signature lacks '{k}'",
                                 fix=f"pass all of {', '.join(LINE_SIGNATURE_KEYS)}")
            d = abs(float(signature[k]) - float(self.line_signature[k]))
            if not d <= tol_m:
                diffs.append(f"{k} differs by {d:.1f} m")
        if diffs:
            raise ModelError(
                f"model was made on another section line: {'; '.join(diffs)} "
                f"(model '{self.name}', tolerance {tol_m:g} m)",
                fix="rebuild the 2D model on the current section line (its chainages refer to "
                    "the old one), or restore the line the model was made on")
        return True

    # ------------------------------------------------------------------ travel times

    def _need_1d(self, what: str) -> None:
        if not self.is_1d:
            raise ModelError(
                f"model '{self.name}' varies along chainage (2D); {what} needs a 1D model",
                fix="take the 1D column under the source-receiver midpoint with "
                    "model.column(chainage_m), or use the 2D ray tracer")

    def _resolve(self, phase: str | Phase) -> tuple[Phase, int | None]:
        ph = parse_phase(phase)
        if ph.kind in ("reflection", "head"):
            i = self.interface_position(ph.target)
            if i == 0:
                raise InputError(f"phase '{ph}': '{ph.target}' is the model top; it reflects or "
                                 "refracts nothing", key="phase",
                                 fix=f"name a deeper interface: "
                                     f"{', '.join(self.interface_names[1:]) or '(none)'}")
            return ph, i
        if ph.kind == "turning":
            return ph, self.layer_position(ph.target)
        return ph, None

    def solve(self, offset_m, phase: str | Phase, *, source_depth_m=0.0, receiver_depth_m=0.0,
              spherical: bool = False, path: bool = False) -> oned.RaySolution:
        """Travel times and ray details of one phase, vectorised over offsets.

        Parameters
        ----------
        offset_m : array_like
            Source-receiver distance, metres (with ``spherical``: arc length
            along the datum surface).
        phase : str or Phase
            ``[P|S:]kind[:name]``, see :mod:`geosect.model.phases`.
        source_depth_m, receiver_depth_m : array_like
            Depths below the datum, metres (negative above it), broadcast with
            the offsets.  Points above a flat model top lie in the top layer,
            whose velocity law continues upward.
        spherical : bool
            Treat the layers as spherical shells of a 6371 km Earth.
        path : bool
            Also compute ray path points (``path_distance_m``, ``path_depth_m``).

        Returns
        -------
        RaySolution
            ``time_s``, ``p_s_per_m`` (s/m; on a sphere the horizontal slowness
            at the datum), ``p_s_per_rad`` (spherical), reflection point
            ``point_distance_m`` (from the source) and ``point_depth_m``,
            ``incidence_deg`` at the reflector, ``status``, ``arrival``.
        """
        self._need_1d("solve")
        ph, idx = self._resolve(phase)
        col = self.to_column(ph.wave)
        names = {"interfaces": self.interface_names, "layers": self.layer_names, "wave": ph.wave}
        return oned.solve_column(col, offset_m, ph.kind, idx, source_depth_m=source_depth_m,
                                 receiver_depth_m=receiver_depth_m, spherical=spherical,
                                 want_path=path, names=names)

    def traveltime(self, offset_m, phase: str | Phase, *, source_depth_m=0.0,
                   receiver_depth_m=0.0, spherical: bool = False) -> np.ndarray:
        """Travel time (s) of one phase, vectorised; NaN where no such ray.

        See :meth:`solve` for the parameters.  A 2D model raises
        :class:`ModelError` (take a :meth:`column` first).

        Examples
        --------
        >>> m = LayeredModel.flat([0, 20e3, 35e3], [5800, 6500, 8040],
        ...                       names=["surface", "mid-crust", "moho"])
        >>> t = m.traveltime([50e3, 150e3], "head:moho")
        >>> bool(np.isnan(t[0])), round(float(t[1]), 3)
        (True, 26.149)
        """
        t = self.solve(offset_m, phase, source_depth_m=source_depth_m,
                       receiver_depth_m=receiver_depth_m, spherical=spherical).time_s
        return t[()] if t.ndim == 0 else t

    def critical_distance(self, name: str, *, wave: str = "P", source_depth_m: float = 0.0,
                          receiver_depth_m: float = 0.0, spherical: bool = False) -> float:
        """Offset (m) where the head wave along interface ``name`` begins; NaN if none."""
        self._need_1d("critical_distance")
        ph, i = self._resolve(Phase(self._wave(wave), "head", name))
        return oned.critical_distance_column(self.to_column(ph.wave), i,
                                             source_depth_m=source_depth_m,
                                             receiver_depth_m=receiver_depth_m,
                                             spherical=spherical)

    def crossover_distance(self, name: str, *, wave: str = "P", source_depth_m: float = 0.0,
                           receiver_depth_m: float = 0.0, spherical: bool = False) -> float:
        """Offset (m) beyond which the head wave along ``name`` is the first arrival
        among the phases above it; NaN if it never is (a hidden layer)."""
        self._need_1d("crossover_distance")
        ph, i = self._resolve(Phase(self._wave(wave), "head", name))
        return oned.crossover_distance_column(self.to_column(ph.wave), i,
                                              source_depth_m=source_depth_m,
                                              receiver_depth_m=receiver_depth_m,
                                              spherical=spherical)


def _log1p_over(x):
    x = np.asarray(x, float)
    small = np.abs(x) < 1e-4
    with np.errstate(invalid="ignore", divide="ignore"):
        big = np.log1p(x) / x
    return np.where(small, 1.0 - x / 2.0 + x * x / 3.0, big)


def _expm1_over(x):
    x = np.asarray(x, float)
    small = np.abs(x) < 1e-4
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        big = np.expm1(x) / x
    return np.where(small, 1.0 + x / 2.0 + x * x / 6.0, big)

