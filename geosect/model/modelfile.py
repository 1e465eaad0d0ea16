"""The model file: geosect's own TOML layout for 1D and 2D layered models.

Files are written for people, so they use kilometres and km/s, and every key
says its unit (``depth_km``, ``vp_top_kms``, ``chainage_km``); the Python API
speaks SI.  The layout is documented key by key in ``docs/model-file.md``.
In short::

    [geosect_model]             # what the file is
    version = 1
    surface = "datum"           # or "dem"

    [section_line]              # optional: the line a 2D model was made on

    [[layer]]                   # one table per layer, top to bottom
    name = "upper crust"
    vp_top_kms = 5.8
    vp_bottom_kms = 6.1
    vpvs = 1.73
    [layer.top]                 # the interface at the top of this layer
    name = "surface"
    depth_km = 0.0

>>> from geosect.model import LayeredModel
>>> m = LayeredModel.flat([0, 20e3, 35e3], [5800, 6500, 8040],
...                       names=["surface", "mid-crust", "moho"])
>>> text = model_to_toml(m)
>>> model_from_toml(text).interface_names
['surface', 'mid-crust', 'moho']
"""

from __future__ import annotations

import difflib
import math
import os
import tomllib
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import numpy as np

from geosect.errors import InputError, ModelError
from geosect.model.layered import Interface, Layer, LayeredModel

__all__ = ["read_model", "write_model", "model_to_toml", "model_from_toml", "FORMAT_VERSION",
           "KEYS"]

#: Version of the layout written by :func:`write_model`.
FORMAT_VERSION = 1

#: Accepted keys per table.
KEYS: dict[str, tuple[str, ...]] = {
    "": ("geosect_model", "section_line", "layer"),
    "geosect_model": ("version", "name", "note", "surface"),
    "section_line": ("start_easting_m", "start_northing_m", "end_easting_m", "end_northing_m",
                     "length_km"),
    "layer": ("name", "vp_top_kms", "vp_bottom_kms", "vp_gradient_per_s", "vpvs", "vs_top_kms",
              "vs_bottom_kms", "vs_gradient_per_s", "velocity_chainage_km", "top"),
    "layer.top": ("name", "depth_km", "chainage_km", "role"),
}

_SIG_KEYS = {"start_easting_m": "start_e", "start_northing_m": "start_n",
             "end_easting_m": "end_e", "end_northing_m": "end_n"}

# model parts (as named by LayeredModel's validation) -> file keys
_LAYER_FIELDS = {"vp_top": "vp_top_kms", "vp_bottom": "vp_bottom_kms",
                 "vp_gradient": "vp_gradient_per_s", "vs_top": "vs_top_kms",
                 "vs_bottom": "vs_bottom_kms", "vs_gradient": "vs_gradient_per_s", "vpvs": "vpvs",
                 "vs": "vs_top_kms", "chainage": "velocity_chainage_km", "name": "name", None: None}
_INTERFACE_FIELDS = {"depth": "depth_km", "role": "role", "name": "name", None: None}


# --------------------------------------------------------------------------- reading


class _Reader:
    def __init__(self, source: str | os.PathLike | None):
        self.source = None if source is None else str(source)

    def err(self, what: str, key: str | None, fix: str) -> ModelError:
        return ModelError(what, file=self.source, key=key, fix=fix)

    def check_keys(self, table: Mapping, kind: str, where: str) -> None:
        allowed = KEYS[kind]
        for k in table:
            if k not in allowed:
                close = difflib.get_close_matches(k, allowed, n=1, cutoff=0.6)
                hint = f"did you mean '{close[0]}'? " if close else ""
                key = f"{where}.{k}" if where else k
                raise self.err(f"unknown key '{k}'", key,
                               f"{hint}keys allowed here: {', '.join(allowed)}")

    def table(self, value: Any, key: str) -> Mapping:
        if not isinstance(value, Mapping):
            raise self.err(f"'{key}' must be a table, got {type(value).__name__}", key,
                           f"write it as a [{key}] section")
        return value

    def string(self, value: Any, key: str) -> str:
        if not isinstance(value, str):
            raise self.err(f"value {value!r} is not a string", key, 'quote it, for example "moho"')
        return value

    def number(self, value: Any, key: str) -> float:
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise self.err(f"value {value!r} is not a number", key,
                           "write a plain number, for example 6.1")
        if not math.isfinite(value):
            raise self.err(f"value {value!r} is not finite", key, "write a finite number")
        return float(value)

    def numbers(self, value: Any, key: str) -> np.ndarray:
        if isinstance(value, list):
            if not value:
                raise self.err("the list is empty", key, "give at least one number")
            return np.array([self.number(v, f"{key}[{i + 1}]") for i, v in enumerate(value)])
        return np.array([self.number(value, key)])

    def required(self, table: Mapping, name: str, where: str):
        if name not in table:
            raise self.err(f"the key '{name}' is missing", f"{where}.{name}" if where else name,
                           f"add {name} = ... to [{where or 'the file'}]")
        return table[name]


def model_from_toml(text: str, source: str | os.PathLike | None = None) -> LayeredModel:
    """Build a :class:`LayeredModel` from model-file text.

    Parameters
    ----------
    text : str
        The TOML text.
    source : str or path, optional
        File name used in error messages.

    Raises
    ------
    InputError
        Text that is not valid TOML.
    ModelError
        Unknown or missing keys, wrong types, and every model fault (crossing
        interfaces, bad velocities, ...), naming the file and the key.
    """
    rd = _Reader(source)
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as e:
        raise InputError(f"not valid TOML: {e}", file=source,
                         fix="check quotes, brackets and '=' on the line named") from None
    rd.check_keys(doc, "", "")
    head = rd.table(rd.required(doc, "geosect_model", ""), "geosect_model")
    rd.check_keys(head, "geosect_model", "geosect_model")
    version = head.get("version")
    if version is None:
        raise rd.err("the key 'version' is missing", "geosect_model.version",
                     f"add version = {FORMAT_VERSION}")
    if isinstance(version, bool) or not isinstance(version, int) or version != FORMAT_VERSION:
        raise rd.err(f"layout version {version!r} is not one this geosect reads "
                     f"({FORMAT_VERSION})", "geosect_model.version",
                     f"write version = {FORMAT_VERSION}, or update geosect")
    name = rd.string(head.get("name", Path(source).stem if source else "model"),
                     "geosect_model.name")
    note = rd.string(head.get("note", ""), "geosect_model.note")
    surface = rd.string(head.get("surface", "datum"), "geosect_model.surface")
    if surface not in ("datum", "dem"):
        close = difflib.get_close_matches(surface, ["datum", "dem"], n=1)
        hint = f"did you mean '{close[0]}'? " if close else ""
        raise rd.err(f"surface '{surface}' is not 'datum' or 'dem'", "geosect_model.surface",
                     f"{hint}use \"datum\" for a flat top or \"dem\" for topography on top")
    signature = None
    if "section_line" in doc:
        sl = rd.table(doc["section_line"], "section_line")
        rd.check_keys(sl, "section_line", "section_line")
        signature = {}
        for k in KEYS["section_line"]:
            v = rd.number(rd.required(sl, k, "section_line"), f"section_line.{k}")
            if k == "length_km":
                signature["length_m"] = v * 1000.0
            else:
                signature[_SIG_KEYS[k]] = v
    raw_layers = rd.required(doc, "layer", "")
    if not isinstance(raw_layers, list) or not raw_layers:
        raise rd.err("'layer' must be one or more [[layer]] tables", "layer",
                     "write each layer as a [[layer]] table, top to bottom")
    interfaces: list[Interface] = []
    layers: list[Layer] = []
    n = len(raw_layers)
    for i, lay in enumerate(raw_layers):
        where = f"layer[{i + 1}]"
        lay = rd.table(lay, where)
        rd.check_keys(lay, "layer", where)
        lname = rd.string(rd.required(lay, "name", where), f"{where}.name")
        top = rd.table(rd.required(lay, "top", where), f"{where}.top")
        rd.check_keys(top, "layer.top", f"{where}.top")
        iname = rd.string(rd.required(top, "name", f"{where}.top"), f"{where}.top.name")
        depth = rd.numbers(rd.required(top, "depth_km", f"{where}.top"), f"{where}.top.depth_km")
        if "chainage_km" in top:
            ch = rd.numbers(top["chainage_km"], f"{where}.top.chainage_km")
            if ch.size != depth.size:
                raise rd.err(f"chainage_km has {ch.size} values but depth_km has {depth.size}",
                             f"{where}.top.chainage_km", "give one depth per node chainage")
        elif depth.size > 1:
            raise rd.err(f"depth_km has {depth.size} values but no chainage_km",
                         f"{where}.top.chainage_km",
                         "give the node chainages (km), or one depth for a flat interface")
        else:
            ch = np.zeros(1)
        role = top.get("role")
        if role is not None:
            role = rd.string(role, f"{where}.top.role")
        interfaces.append(Interface(iname, ch * 1000.0, depth * 1000.0, role))
        last = i == n - 1
        vch = None
        if "velocity_chainage_km" in lay:
            vch = rd.numbers(lay["velocity_chainage_km"], f"{where}.velocity_chainage_km") * 1000.0

        def kms(key, _lay=lay, _where=where):
            return None if key not in _lay else rd.numbers(_lay[key], f"{_where}.{key}") * 1000.0

        def per_s(key, _lay=lay, _where=where):
            return None if key not in _lay else rd.numbers(_lay[key], f"{_where}.{key}")

        vp_top = kms("vp_top_kms")
        if vp_top is None:
            raise rd.err("the key 'vp_top_kms' is missing", f"{where}.vp_top_kms",
                         "give the P velocity at the top of the layer, km/s")
        vp_bottom = kms("vp_bottom_kms")
        if last and vp_bottom is not None:
            raise rd.err(f"layer '{lname}' is the half-space (the last layer) and has no bottom",
                         f"{where}.vp_bottom_kms", "give vp_gradient_per_s instead")
        if not last and vp_bottom is None:
            raise rd.err("the key 'vp_bottom_kms' is missing", f"{where}.vp_bottom_kms",
                         "give the P velocity at the bottom of the layer, km/s (the top value "
                         "for a constant layer)")
        for key in ("vp_gradient_per_s", "vs_gradient_per_s"):
            if key in lay and not last:
                raise rd.err(f"{key} is only for the half-space (the last layer)",
                             f"{where}.{key}", "give the velocity at the bottom of the layer "
                             "instead")
        kw: dict[str, Any] = {}
        if "vpvs" in lay:
            kw["vpvs"] = rd.number(lay["vpvs"], f"{where}.vpvs")
            for key in ("vs_top_kms", "vs_bottom_kms", "vs_gradient_per_s"):
                if key in lay:
                    raise rd.err("the layer has both vpvs and S velocities", f"{where}.{key}",
                                 "keep vpvs or the vs_* keys, not both")
        elif "vs_top_kms" in lay:
            kw["vs_top_ms"] = kms("vs_top_kms")
            kw["vs_bottom_ms"] = kms("vs_bottom_kms")
            if last:
                if kw["vs_bottom_ms"] is not None:
                    raise rd.err(f"layer '{lname}' is the half-space and has no bottom",
                                 f"{where}.vs_bottom_kms", "give vs_gradient_per_s instead")
                kw["vs_gradient_per_s"] = per_s("vs_gradient_per_s")
            elif kw["vs_bottom_ms"] is None:
                raise rd.err("the key 'vs_bottom_kms' is missing", f"{where}.vs_bottom_kms",
                             "give vs at the bottom of the layer too")
        else:
            raise rd.err(f"layer '{lname}' has no S velocity", f"{where}.vpvs",
                         "give vpvs = 1.73 (for example), or vs_top_kms and vs_bottom_kms")
        grad = per_s("vp_gradient_per_s")
        try:
            layers.append(Layer(lname, vp_top, vp_bottom, vch,
                                vp_gradient_per_s=0.0 if grad is None else grad, **kw))
        except ModelError as e:
            raise rd.err(e.what, where, e.fix or "") from None
    try:
        return LayeredModel(interfaces, layers, top=surface, line_signature=signature, name=name,
                            note=note)
    except ModelError as e:
        raise rd.err(e.what, _key_of(getattr(e, "ref", None)), e.fix or "") from None


def _key_of(ref) -> str | None:
    if not ref:
        return None
    kind, i, fld = ref
    if kind == "interface":
        k = _INTERFACE_FIELDS.get(fld, fld)
        return f"layer[{i + 1}].top" + (f".{k}" if k else "")
    if kind == "layer":
        k = _LAYER_FIELDS.get(fld, fld)
        return f"layer[{i + 1}]" + (f".{k}" if k else "")
    if fld == "surface":
        return "geosect_model.surface"
    if fld == "section_line":
        return "section_line"
    return None


def read_model(path: str | os.PathLike) -> LayeredModel:
    """Read a model file (geosect's TOML layout, km and km/s).

    Parameters
    ----------
    path : str or path
        The ``.toml`` file.

    Returns
    -------
    LayeredModel
        In SI units.  A ``'dem'`` model still needs
        :meth:`LayeredModel.set_topography`.

    Raises
    ------
    InputError
        A missing or unreadable file, or text that is not TOML.
    ModelError
        A fault of the content, naming the file and the key (unknown keys get
        the closest accepted key as a suggestion).
    """
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError("model file not found", file=p,
                         fix="check the path in the project file's [model] section") from None
    except (OSError, UnicodeDecodeError) as e:
        raise InputError(f"model file cannot be read: {e}", file=p,
                         fix="save it as UTF-8 text") from None
    return model_from_toml(text, source=p)


# --------------------------------------------------------------------------- writing


def _num(v: float) -> str:
    v = float(v)
    if v == 0.0:
        return "0.0"
    return repr(v)


def _vals(a: np.ndarray | None, divisor: float) -> str:
    a = np.atleast_1d(np.asarray(a, float)) / divisor
    if a.size == 1:
        return _num(a[0])
    return "[" + ", ".join(_num(x) for x in a) + "]"


def _str(s: str) -> str:
    out = s.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n")
    return f'"{out}"'


def model_to_toml(model: LayeredModel, comment: str | None = None) -> str:
    """The model-file text of a model (km, km/s).

    Parameters
    ----------
    model : LayeredModel
    comment : str, optional
        Lines written as ``#`` comments at the head of the file.
    """
    out: list[str] = []
    if comment:
        out += [f"# {line}".rstrip() for line in comment.splitlines()]
        out.append("")
    out += ["[geosect_model]", f"version = {FORMAT_VERSION}", f"name = {_str(model.name)}"]
    note = model.note
    if note:
        out.append(f"note = {_str(note)}")
    out.append(f"surface = {_str(model.top)}")
    if model.line_signature is not None:
        sig = model.line_signature
        out += ["", "[section_line]"]
        for k, sk in _SIG_KEYS.items():
            out.append(f"{k} = {_num(sig[sk])}")
        out.append(f"length_km = {_num(sig['length_m'] / 1000.0)}")
    interfaces = list(model.interfaces)
    if model.file_top is not None:
        interfaces[0] = model.file_top
    n = len(model.layers)
    for i, (lay, itf) in enumerate(zip(model.layers, interfaces)):
        last = i == n - 1
        out += ["", "[[layer]]", f"name = {_str(lay.name)}"]
        k = lay.n_nodes
        lateral = k > 1
        if lateral:
            out.append(f"velocity_chainage_km = {_vals(lay.chainage_m, 1000.0)}")

        def v(a, divisor=1000.0):
            return _vals(a if lateral else np.atleast_1d(a)[:1], divisor)

        out.append(f"vp_top_kms = {v(lay.vp_top_ms)}")
        if last:
            if not (np.all(lay.vp_gradient_per_s == 0)):
                out.append(f"vp_gradient_per_s = {v(lay.vp_gradient_per_s, 1.0)}")
        else:
            out.append(f"vp_bottom_kms = {v(lay.vp_bottom_ms)}")
        if lay.vpvs is not None:
            out.append(f"vpvs = {_num(lay.vpvs)}")
        else:
            out.append(f"vs_top_kms = {v(lay.vs_top_ms)}")
            if last:
                if lay.vs_gradient_per_s is not None and not np.all(lay.vs_gradient_per_s == 0):
                    out.append(f"vs_gradient_per_s = {v(lay.vs_gradient_per_s, 1.0)}")
            else:
                out.append(f"vs_bottom_kms = {v(lay.vs_bottom_ms)}")
        out += ["[layer.top]", f"name = {_str(itf.name)}"]
        if itf.role:
            out.append(f"role = {_str(itf.role)}")
        if itf.chainage_m.size == 1:
            out.append(f"depth_km = {_num(itf.depth_m[0] / 1000.0)}")
        else:
            out.append(f"chainage_km = {_vals(itf.chainage_m, 1000.0)}")
            out.append(f"depth_km = {_vals(itf.depth_m, 1000.0)}")
    return "\n".join(out) + "\n"


def write_model(model: LayeredModel, path: str | os.PathLike, comment: str | None = None) -> Path:
    """Write a model file atomically (temporary file, then rename); returns the path.

    Reading it back with :func:`read_model` gives the same model (to the last
    digit or so of the km/m conversion).  For a ``'dem'`` model the top
    interface written is the one read from the file, not the topography.
    """
    from geosect.io.atomic import write_text

    return write_text(path, model_to_toml(model, comment))
