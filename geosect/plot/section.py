"""The depth-section figure: velocity model, rays, reflection points and geology along the line.

The figure consumes plain data (:class:`SectionData`), assembled by the pipeline; it
reads no files.  All inputs are SI (metres, m/s); depth is positive down and
elevation = -depth.  The figure itself speaks kilometres and km/s and says so on its axes.

Layout of a full figure, from the top: title; line-end labels; an optional exaggerated
topography panel; labels of faults and bends; a thin geology strip with fault ticks; the
section (depth on the left, elevation on the right, velocity colours, interfaces with
reflection coverage, rays, reflection points with Fresnel bars, horizons, faults at
apparent dip, hypocentres, stations and shots on the topography, scale bar and the
vertical exaggeration); the key (colour bar and legends); the caption.
"""

from __future__ import annotations

import math
import textwrap
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Sequence

import matplotlib as mpl
import numpy as np
import pandas as pd
from matplotlib import patheffects
from matplotlib import transforms as mtransforms
from matplotlib.axes import Axes
from matplotlib.collections import LineCollection
from matplotlib.colors import LinearSegmentedColormap, Normalize, is_color_like
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.markers import MarkerStyle
from matplotlib.offsetbox import AnchoredOffsetbox, AuxTransformBox, TextArea, VPacker
from matplotlib.patches import Patch
from matplotlib.path import Path as MplPath

from ..errors import ConfigError, InputError, ModelError
from ..io.atomic import atomic_path
from . import colours as gc
from .fonts import MAX_HEIGHT_MM, MIN_FONT_PT, PRESETS, Preset, rc_params

__all__ = [
    "VelocityGrid",
    "Interface",
    "RayPath",
    "Horizon",
    "SectionData",
    "SectionOptions",
    "HORIZON_SOURCES",
    "apparent_dip_deg",
    "draw_section",
    "save_section",
]

PT_MM = 25.4 / 72.0  # millimetres per typographic point

#: Where an interpreted horizon comes from (``Horizon.source``).
HORIZON_SOURCES: dict[str, str] = {
    "chainage-depth": "picked in depth",
    "chainage-twt": "converted from two-way time",
    "map-lines": "projected from map lines",
    "depth-grid": "sampled from a depth grid",
}
_HORIZON_STYLES: dict[str, Any] = {
    "chainage-depth": "-",
    "chainage-twt": (0, (4.0, 1.6)),
    "map-lines": (0, (5.0, 1.5, 1.0, 1.5)),
    "depth-grid": (0, (1.0, 1.2)),
}
_LINESTYLE_NAMES = {"solid": "-", "dashed": (0, (4.0, 1.6)), "dotted": (0, (1.0, 1.2)), "dashdot": (0, (5.0, 1.5, 1.0, 1.5))}


# ======================================================================================
# data containers
# ======================================================================================
def _arr(x: Any) -> np.ndarray:
    return np.asarray([] if x is None else x, dtype=float).reshape(-1)


def _frame(columns: dict[str, str]) -> pd.DataFrame:
    return pd.DataFrame({c: pd.Series(dtype=t) for c, t in columns.items()})


_GEOLOGY_COLS = {"start_m": "float", "end_m": "float", "unit": "object", "age": "object", "color": "object"}
_FAULT_COLS = {"chainage_m": "float", "name": "object", "apparent_dip_deg": "float", "dips_toward": "object"}
_POINT_COLS = {"phase": "object", "chainage_m": "float", "depth_m": "float", "fresnel_inline_m": "float"}
_STATION_COLS = {"id": "object", "chainage_m": "float", "elevation_m": "float", "crossline_m": "float",
                 "kind": "object", "status": "object"}
_SHOT_COLS = {"id": "object", "chainage_m": "float", "elevation_m": "float", "crossline_m": "float",
              "depth_m": "float", "kind": "object", "status": "object"}
_BEND_COLS = {"chainage_m": "float", "angle_deg": "float"}
_HYPO_COLS = {"chainage_m": "float", "depth_m": "float", "magnitude": "float", "crossline_m": "float"}

# columns a table must have to be drawn at all (the others are optional)
_REQUIRED = {
    "geology": ("start_m", "end_m", "unit"),
    "faults": ("chainage_m",),
    "reflection_points": ("phase", "chainage_m", "depth_m"),
    "stations": ("chainage_m",),
    "shots": ("chainage_m",),
    "bends": ("chainage_m",),
    "hypocentres": ("chainage_m", "depth_m"),
}


@dataclass
class VelocityGrid:
    """P velocity on a regular grid in the section plane.

    Attributes
    ----------
    chainage_m : array, shape (nx,)
        Cell-centre chainages, in metres, increasing.
    depth_m : array, shape (nz,)
        Cell-centre depths below the datum, in metres, increasing (positive down).
    vp_ms : array, shape (nz, nx)
        P velocity in m/s; NaN above the surface and outside the model.
    """

    chainage_m: np.ndarray
    depth_m: np.ndarray
    vp_ms: np.ndarray

    def __post_init__(self) -> None:
        self.chainage_m = _arr(self.chainage_m)
        self.depth_m = _arr(self.depth_m)
        self.vp_ms = np.asarray(self.vp_ms, dtype=float)
        nz, nx = self.depth_m.size, self.chainage_m.size
        if self.vp_ms.shape != (nz, nx):
            raise ModelError(
                f"velocity grid has shape {self.vp_ms.shape} but chainage_m has {nx} and depth_m {nz} values",
                key="velocity.vp_ms",
                fix="give vp_ms with one row per depth and one column per chainage (shape (nz, nx)).",
            )
        for name, v in (("chainage_m", self.chainage_m), ("depth_m", self.depth_m)):
            if v.size > 1 and not np.all(np.diff(v) > 0):
                raise ModelError(
                    f"velocity grid {name} is not strictly increasing",
                    key=f"velocity.{name}",
                    fix=f"sort the grid so that {name} increases (and flip vp_ms to match).",
                )


@dataclass
class Interface:
    """A model interface drawn as a line, e.g. the Moho.

    Attributes
    ----------
    name : str
        Interface name as used in phase names (``reflection:<name>``).
    label : str or None
        Text written beside the line (default: the name).
    chainage_m, depth_m : arrays
        The interface, in metres (depth positive down).
    """

    name: str
    label: str | None = None
    chainage_m: np.ndarray = field(default_factory=lambda: np.empty(0))
    depth_m: np.ndarray = field(default_factory=lambda: np.empty(0))

    def __post_init__(self) -> None:
        self.chainage_m, self.depth_m = _pair(self.chainage_m, self.depth_m, f"interface '{self.name}'")


@dataclass
class RayPath:
    """One ray path in the section plane.

    Attributes
    ----------
    phase : str
        Phase name (``reflection:moho``); rays of one phase share a colour.
    label : str or None
        Legend text for the phase, e.g. ``'PmP'`` (default: the phase name).
    chainage_m, depth_m : arrays
        Points of the path, in metres.
    """

    phase: str
    label: str | None = None
    chainage_m: np.ndarray = field(default_factory=lambda: np.empty(0))
    depth_m: np.ndarray = field(default_factory=lambda: np.empty(0))

    def __post_init__(self) -> None:
        self.chainage_m, self.depth_m = _pair(self.chainage_m, self.depth_m, f"ray of phase '{self.phase}'")


@dataclass
class Horizon:
    """An interpreted horizon.

    Attributes
    ----------
    name : str
        Legend text.
    chainage_m, depth_m : arrays
        The horizon, in metres (depth positive down); NaN breaks the line.
    uncertainty_m : array or None
        Depth uncertainty (one standard deviation or a stated half-width), in metres,
        drawn as a band.
    source : str
        One of :data:`HORIZON_SOURCES`.  Time-converted horizons (``'chainage-twt'``) get
        a dagger in the legend and their ``note`` in the caption.
    note : str
        How the horizon was made, e.g. "converted from two-way time with the model's
        vertical velocities".
    color, linestyle : str or None
        Overrides of the default style ('solid', 'dashed', 'dotted', 'dashdot' or any
        matplotlib line style).
    """

    name: str
    chainage_m: np.ndarray = field(default_factory=lambda: np.empty(0))
    depth_m: np.ndarray = field(default_factory=lambda: np.empty(0))
    uncertainty_m: np.ndarray | None = None
    source: str = "chainage-depth"
    note: str = ""
    color: str | None = None
    linestyle: str | None = None

    def __post_init__(self) -> None:
        self.chainage_m, self.depth_m = _pair(self.chainage_m, self.depth_m, f"horizon '{self.name}'")
        if self.uncertainty_m is not None:
            u = np.asarray(self.uncertainty_m, dtype=float)
            u = np.broadcast_to(u, self.depth_m.shape).copy() if u.ndim == 0 else u.reshape(-1)
            if u.size != self.depth_m.size:
                raise InputError(
                    f"horizon '{self.name}': uncertainty_m has {u.size} values but depth_m has {self.depth_m.size}",
                    key=f"horizons.{self.name}",
                    fix="give one uncertainty per depth sample, a single value, or none.",
                )
            self.uncertainty_m = u
        if self.source not in HORIZON_SOURCES:
            raise InputError(
                f"horizon '{self.name}': source '{self.source}' is not known",
                key=f"horizons.{self.name}",
                fix="use one of " + ", ".join(f"'{s}'" for s in HORIZON_SOURCES) + ".",
            )


def _pair(x: Any, y: Any, what: str) -> tuple[np.ndarray, np.ndarray]:
    x, y = _arr(x), _arr(y)
    if x.size != y.size:
        raise InputError(
            f"{what}: chainage_m has {x.size} values but depth_m has {y.size}",
            fix="give one depth per chainage sample.",
        )
    return x, y


@dataclass
class SectionData:
    """Everything the depth-section figure shows, as plain data (SI units).

    Every field is optional; a section can be drawn from any subset.  Tables are pandas
    DataFrames with the columns listed; missing optional columns are treated as empty.

    Attributes
    ----------
    title : str
    line_length_m : float
        Length of the section line, in metres (NaN: from the data).
    start_label, end_label : str
        Direction names of the line ends, e.g. "SSW" and "NNE".
    start_azimuth_deg, end_azimuth_deg : float
        Azimuth of the line (direction of increasing chainage) at its ends, degrees
        clockwise from grid north.
    topo_chainage_m, topo_elevation_m : arrays
        Topography sampled along the line, in metres; NaN where there is no DEM.
    geology : DataFrame
        ``start_m, end_m, unit, age, color`` (``color`` optional, any matplotlib colour or
        None): intervals of surface geology along the line.
    faults : DataFrame
        ``chainage_m, name, apparent_dip_deg, dips_toward``: fault crossings; the
        apparent dip (degrees, NaN if unknown; see :func:`apparent_dip_deg`) and
        ``dips_toward`` ('+' toward increasing chainage, '-' toward decreasing).
    interfaces : list of Interface
    velocity : VelocityGrid or None
    rays : list of RayPath
    reflection_points : DataFrame
        ``phase, chainage_m, depth_m, fresnel_inline_m`` (in-line Fresnel half-width, m).
    horizons : list of Horizon
    stations : DataFrame
        ``id, chainage_m, elevation_m, crossline_m, kind, status``.
    shots : DataFrame
        ``id, chainage_m, elevation_m, crossline_m, depth_m, kind, status``.
    bends : DataFrame
        ``chainage_m, angle_deg``: bends of the section line.
    hypocentres : DataFrame
        ``chainage_m, depth_m, magnitude, crossline_m``, already selected within the swath.
    swath_m : float
        Half-width of the swath from which hypocentres were projected, in metres.
    caption : str
        What was projected from how far (the figure appends its own part).
    """

    title: str = ""
    line_length_m: float = float("nan")
    start_label: str = ""
    end_label: str = ""
    start_azimuth_deg: float = float("nan")
    end_azimuth_deg: float = float("nan")
    topo_chainage_m: np.ndarray = field(default_factory=lambda: np.empty(0))
    topo_elevation_m: np.ndarray = field(default_factory=lambda: np.empty(0))
    geology: pd.DataFrame = field(default_factory=lambda: _frame(_GEOLOGY_COLS))
    faults: pd.DataFrame = field(default_factory=lambda: _frame(_FAULT_COLS))
    interfaces: list[Interface] = field(default_factory=list)
    velocity: VelocityGrid | None = None
    rays: list[RayPath] = field(default_factory=list)
    reflection_points: pd.DataFrame = field(default_factory=lambda: _frame(_POINT_COLS))
    horizons: list[Horizon] = field(default_factory=list)
    stations: pd.DataFrame = field(default_factory=lambda: _frame(_STATION_COLS))
    shots: pd.DataFrame = field(default_factory=lambda: _frame(_SHOT_COLS))
    bends: pd.DataFrame = field(default_factory=lambda: _frame(_BEND_COLS))
    hypocentres: pd.DataFrame = field(default_factory=lambda: _frame(_HYPO_COLS))
    swath_m: float = float("nan")
    caption: str = ""

    def __post_init__(self) -> None:
        self.topo_chainage_m = _arr(self.topo_chainage_m)
        self.topo_elevation_m = _arr(self.topo_elevation_m)
        if self.topo_chainage_m.size != self.topo_elevation_m.size:
            raise InputError(
                f"topography has {self.topo_chainage_m.size} chainages but {self.topo_elevation_m.size} elevations",
                key="topo_elevation_m",
                fix="sample the DEM once per chainage (NaN where there is no DEM).",
            )
        defaults = {"geology": _GEOLOGY_COLS, "faults": _FAULT_COLS, "reflection_points": _POINT_COLS,
                    "stations": _STATION_COLS, "shots": _SHOT_COLS, "bends": _BEND_COLS,
                    "hypocentres": _HYPO_COLS}
        for name, cols in defaults.items():
            df = getattr(self, name)
            if df is None:
                df = _frame(cols)
            elif not isinstance(df, pd.DataFrame):
                df = pd.DataFrame(df)
            if len(df) and (missing := [c for c in _REQUIRED[name] if c not in df.columns]):
                raise InputError(
                    f"table '{name}' has no column '{missing[0]}' (columns: {', '.join(map(str, df.columns))})",
                    key=name,
                    column=missing[0],
                    fix=f"give '{name}' the columns {', '.join(_REQUIRED[name])}.",
                )
            setattr(self, name, df.reset_index(drop=True))


@dataclass
class SectionOptions:
    """How the section is drawn.

    Attributes
    ----------
    depth_min_km : float
        Top of the section, km (negative = above the datum).  Raised automatically when
        the topography or the station symbols would not fit (said in the caption).
    depth_max_km : float or None
        Bottom of the section, km; None: from the deepest model, ray or event.
    exaggeration : float
        Vertical exaggeration of the section (1 = true scale).
    size : {'full-page', 'single-column', 'double-column'}
        Page preset (see :mod:`geosect.plot.fonts`).
    phases : sequence of str or None
        Phases drawn (phase names or labels); None: all.
    show_rays : bool
    max_rays : int
        At most this many ray paths (shared among phases in proportion to their numbers).
    max_points : int
        At most this many reflection points drawn (coverage still counts all of them).
    topo_panel : bool
        Draw the exaggerated topography panel on top (full figures only).
    topo_exaggeration : float
        Vertical exaggeration of that panel (lowered, and said, when the relief does not fit).
    colormap : str
        Velocity colour map: ``'geosect-crust'`` (ours) or any matplotlib map name;
        choose a perceptually uniform one.
    geology_colours : {'auto', 'column', 'age', 'palette'}
        See :func:`geosect.plot.colours.geology_colours`.
    crossline_classes_km : sequence of float
        Class edges of the crossline distance shown by the fill of station and shot symbols, km.
    fault_depth_km : float
        Faults with a known apparent dip are drawn from the surface down to this depth, km.
    velocity_contour_kms : float or None
        Spacing of thin iso-velocity lines, km/s; None: none.
    coverage_bin_km : float or None
        Bin width of the reflection coverage along interfaces, km; None: about 1/100 of the line.
    """

    depth_min_km: float = -4.0
    depth_max_km: float | None = 60.0
    exaggeration: float = 1.0
    size: str = "full-page"
    phases: Sequence[str] | None = None
    show_rays: bool = True
    max_rays: int = 200
    max_points: int = 4000
    topo_panel: bool = True
    topo_exaggeration: float = 5.0
    colormap: str = "geosect-crust"
    geology_colours: str = "auto"
    crossline_classes_km: Sequence[float] = (0.5, 2.0, 5.0)
    fault_depth_km: float = 15.0
    velocity_contour_kms: float | None = 0.5
    coverage_bin_km: float | None = None


def _check_options(opts: SectionOptions) -> tuple[Preset, Any]:
    def bad(key: str, what: str, fix: str) -> ConfigError:
        return ConfigError(what, key=f"section.{key}", fix=fix)

    if opts.size not in PRESETS:
        raise bad("size", f"size '{opts.size}' is not a preset", "use one of " + ", ".join(f"'{p}'" for p in PRESETS) + ".")
    for key in ("exaggeration", "topo_exaggeration", "fault_depth_km"):
        v = getattr(opts, key)
        if not (isinstance(v, (int, float)) and math.isfinite(v) and v > 0):
            raise bad(key, f"{key} = {v!r} must be a positive number", f"set {key} to a number above 0, e.g. 1.")
    if not (isinstance(opts.depth_min_km, (int, float)) and math.isfinite(opts.depth_min_km)):
        raise bad("depth_min_km", f"depth_min_km = {opts.depth_min_km!r} is not a number", "give the top in km, e.g. -4.")
    if opts.depth_max_km is not None and not (
        isinstance(opts.depth_max_km, (int, float)) and math.isfinite(opts.depth_max_km)
        and opts.depth_max_km > opts.depth_min_km
    ):
        raise bad("depth_max_km", f"depth_max_km = {opts.depth_max_km!r} is not below depth_min_km = {opts.depth_min_km}",
                  "give a bottom deeper than the top (km, positive down), or leave it unset.")
    if opts.geology_colours not in ("auto", "column", "age", "palette"):
        raise bad("geology_colours", f"geology_colours '{opts.geology_colours}' is not known",
                  "use 'auto', 'column', 'age' or 'palette'.")
    for key in ("max_rays", "max_points"):
        v = getattr(opts, key)
        if not (isinstance(v, (int, np.integer)) and v >= 0):
            raise bad(key, f"{key} = {v!r} must be a whole number >= 0", f"set {key} to e.g. 200.")
    edges = np.asarray(opts.crossline_classes_km, dtype=float)
    if edges.size and not (np.all(np.isfinite(edges)) and np.all(np.diff(edges) > 0) and edges[0] > 0):
        raise bad("crossline_classes_km", f"crossline classes {list(edges)} are not increasing positive distances",
                  "give increasing distances in km, e.g. [0.5, 2, 5].")
    for key in ("velocity_contour_kms", "coverage_bin_km"):
        v = getattr(opts, key)
        if v is not None and not (isinstance(v, (int, float)) and math.isfinite(v) and v > 0):
            raise bad(key, f"{key} = {v!r} must be a positive number or unset", f"set {key} to e.g. 0.5, or leave it unset.")
    try:
        cmap = gc.get_colormap(opts.colormap)
    except (KeyError, ValueError):
        raise bad("colormap", f"colour map '{opts.colormap}' is not known",
                  "use 'geosect-crust' or a matplotlib map such as 'viridis' or 'cividis'.") from None
    return PRESETS[opts.size], cmap


# ======================================================================================
# apparent dip
# ======================================================================================
def apparent_dip_deg(
    true_dip_deg: Any, strike_deg: Any, line_azimuth_deg: Any
) -> tuple[np.ndarray, np.ndarray]:
    r"""Apparent dip of a plane in a vertical section, and the way it dips along the line.

    .. math::

        \tan\delta_a = \tan\delta \, \lvert\sin\alpha\rvert, \qquad \alpha = \text{line azimuth} - \text{strike}

    (the apparent-dip equation; D. M. Ragan, *Structural Geology: An Introduction to
    Geometrical Techniques*, Cambridge University Press, chapter on attitudes of planes).
    It is evaluated as :math:`\delta_a = \operatorname{atan2}(\sin\delta\,\lvert\sin\alpha\rvert, \cos\delta)`,
    which stays finite for vertical planes.

    Parameters
    ----------
    true_dip_deg : array_like
        True dip, degrees in [0, 90].
    strike_deg : array_like
        Strike azimuth, degrees clockwise from north, right-hand rule (the plane dips
        toward strike + 90°).
    line_azimuth_deg : array_like
        Azimuth of the section line (direction of increasing chainage) where it crosses
        the plane, degrees.

    Returns
    -------
    apparent_dip : numpy.ndarray
        Apparent dip in degrees, in [0, 90]; NaN where an input is NaN or the dip lies
        outside [0, 90] (row faults never raise).
    dips_toward : numpy.ndarray of str
        ``'+'`` where the trace dips toward increasing chainage, ``'-'`` toward decreasing,
        ``''`` where there is no apparent dip (horizontal plane, line along strike) or
        the input is invalid.

    Examples
    --------
    >>> d, s = apparent_dip_deg([60.0, 60.0], [0.0, 0.0], [90.0, 0.0])
    >>> np.round(d, 6).tolist(), s.tolist()
    ([60.0, 0.0], ['+', ''])
    """
    dip, strike, az = np.broadcast_arrays(
        np.asarray(true_dip_deg, dtype=float),
        np.asarray(strike_deg, dtype=float),
        np.asarray(line_azimuth_deg, dtype=float),
    )
    valid = np.isfinite(dip) & np.isfinite(strike) & np.isfinite(az) & (dip >= 0) & (dip <= 90)
    d = np.radians(np.where(valid, dip, 0.0))
    s_alpha = np.sin(np.radians(np.where(valid, az - strike, 0.0)))
    s_alpha = np.where(np.abs(s_alpha) < 1e-12, 0.0, s_alpha)
    app = np.degrees(np.arctan2(np.sin(d) * np.abs(s_alpha), np.cos(d)))
    app = np.where(valid, app, np.nan)
    # the dip direction (strike + 90) has a positive component along the line when sin(az - strike) > 0
    sign = np.where(s_alpha > 0, "+", np.where(s_alpha < 0, "-", ""))
    sign = np.where(valid & (app > 0), sign, "")
    return app, sign.astype("<U1")


# ======================================================================================
# drawing context
# ======================================================================================
@dataclass
class _Ctx:
    preset: Preset
    opts: SectionOptions
    cmap: Any
    x0: float = 0.0  # km
    x1: float = 1.0
    ytop: float = -4.0  # km, depth
    ybot: float = 60.0
    notes: list[str] = field(default_factory=list)
    legends: dict[str, list[tuple[Any, str]]] = field(default_factory=dict)
    titles: dict[str, str] = field(default_factory=dict)
    mesh: Any = None
    contours: Any = None
    topo_x: np.ndarray = field(default_factory=lambda: np.empty(0))  # km
    topo_z: np.ndarray = field(default_factory=lambda: np.empty(0))  # km depth
    phase_colour: dict[str, str] = field(default_factory=dict)
    phase_label: dict[str, str] = field(default_factory=dict)
    ray_phase: np.ndarray = field(default_factory=lambda: np.empty(0, dtype=object))
    ray_size: np.ndarray = field(default_factory=lambda: np.empty(0, dtype=int))
    station_ms: float = 4.5
    axes_width_mm: float = 150.0
    topo_ve: float = 5.0

    def add(self, group: str, handle: Any, label: str) -> None:
        entries = self.legends.setdefault(group, [])
        if all(lab != label for _, lab in entries):
            entries.append((handle, label))


def _df_col(df: pd.DataFrame, name: str, default: Any = np.nan, dtype: Any = float) -> np.ndarray:
    if name in df.columns:
        if dtype is float:
            return pd.to_numeric(df[name], errors="coerce").to_numpy(dtype=float)
        return df[name].to_numpy()
    return np.full(len(df), default, dtype=object if dtype is not float else float)


def _topo_depth_km(ctx: _Ctx, x_km: np.ndarray) -> np.ndarray:
    """Topography (as depth, km) at chainages in km; NaN outside the samples or in DEM gaps."""
    x_km = np.asarray(x_km, dtype=float)
    if ctx.topo_x.size < 2:
        return np.full(x_km.shape, np.nan)
    z = np.interp(x_km, ctx.topo_x, ctx.topo_z, left=np.nan, right=np.nan)
    # NaN samples poison their neighbours in np.interp only partly; mask intervals touching a NaN
    idx = np.clip(np.searchsorted(ctx.topo_x, x_km), 1, ctx.topo_x.size - 1)
    gap = ~np.isfinite(ctx.topo_z[idx - 1]) | ~np.isfinite(ctx.topo_z[idx])
    exact = np.isclose(x_km, ctx.topo_x[idx - 1]) & np.isfinite(ctx.topo_z[idx - 1])
    z = np.where(gap & ~exact, np.nan, z)
    return z


def _nice(x: float, steps: Sequence[float] = (1.0, 2.0, 5.0)) -> float:
    """Largest 'nice' number (1, 2, 5 × 10^k) not above x."""
    if not (x > 0 and math.isfinite(x)):
        return 1.0
    k = math.floor(math.log10(x))
    best = steps[0] * 10**k
    for s in steps:
        if s * 10**k <= x * (1 + 1e-9):
            best = s * 10**k
    return best


def _phase_parts(phase: str) -> tuple[str, str | None]:
    parts = str(phase).split(":")
    if parts and parts[0] in ("P", "S"):
        parts = parts[1:]
    kind = parts[0] if parts else ""
    return kind, (parts[1] if len(parts) > 1 else None)


def _phase_selected(opts: SectionOptions, phase: str, label: str | None) -> bool:
    if opts.phases is None:
        return True
    wanted = {str(p) for p in opts.phases}
    return phase in wanted or (label is not None and label in wanted)


def _setup(data: SectionData, opts: SectionOptions, preset: Preset, cmap: Any, axes_width_mm: float) -> _Ctx:
    """Extents of the section and the phase colours."""
    ctx = _Ctx(preset=preset, opts=opts, cmap=cmap)
    ctx.station_ms = 4.0 if preset.name == "single-column" else 4.8
    ctx.axes_width_mm = axes_width_mm
    ctx.topo_x = data.topo_chainage_m / 1000.0
    ctx.topo_z = -data.topo_elevation_m / 1000.0
    order = np.argsort(ctx.topo_x, kind="stable")
    ctx.topo_x, ctx.topo_z = ctx.topo_x[order], ctx.topo_z[order]

    # along-line extent
    L = data.line_length_m
    if L is not None and math.isfinite(L) and L > 0:
        ctx.x0, ctx.x1 = 0.0, L / 1000.0
    else:
        xs = [ctx.topo_x, _df_col(data.stations, "chainage_m") / 1e3, _df_col(data.shots, "chainage_m") / 1e3]
        if data.velocity is not None:
            xs.append(data.velocity.chainage_m / 1e3)
        xs += [i.chainage_m / 1e3 for i in data.interfaces]
        allx = np.concatenate([np.asarray(a, float) for a in xs]) if xs else np.empty(0)
        allx = allx[np.isfinite(allx)]
        ctx.x0, ctx.x1 = (min(0.0, allx.min()), allx.max()) if allx.size else (0.0, 1.0)
        if ctx.x1 <= ctx.x0:
            ctx.x1 = ctx.x0 + 1.0
    xr = ctx.x1 - ctx.x0

    # bottom
    if opts.depth_max_km is not None:
        ybot = float(opts.depth_max_km)
    else:
        deep = [np.asarray([np.nan])]
        if data.velocity is not None:
            v = data.velocity
            rows = np.any(np.isfinite(v.vp_ms), axis=1)
            deep.append(v.depth_m[rows])
        deep += [i.depth_m for i in data.interfaces] + [r.depth_m for r in data.rays]
        deep += [h.depth_m for h in data.horizons]
        deep += [_df_col(data.reflection_points, "depth_m"), _df_col(data.hypocentres, "depth_m")]
        d = np.concatenate([np.asarray(a, float) for a in deep]) / 1000.0
        dmax = np.nanmax(d) if np.any(np.isfinite(d)) else np.nan
        if math.isfinite(dmax) and dmax > 0:
            step = _nice(dmax / 6)
            ybot = math.ceil(dmax / step - 1e-9) * step
        else:
            ybot = max(2.0, round(0.05 * xr, 1))
    # top: room for the highest ground and the symbols standing on it
    ytop = float(opts.depth_min_km)
    heights = np.concatenate([ctx.topo_z, -_df_col(data.stations, "elevation_m") / 1e3,
                              -_df_col(data.shots, "elevation_m") / 1e3])
    highest = float(np.min(heights[np.isfinite(heights)])) if np.any(np.isfinite(heights)) else math.nan
    if math.isfinite(highest):
        km_per_mm_vertical = xr / max(axes_width_mm, 1.0) / opts.exaggeration
        need = highest - (ctx.station_ms * PT_MM * 0.95 + 0.4) * km_per_mm_vertical
        if need < ytop:
            step = 0.5 if ytop - need > 0.5 else 0.1
            new_top = math.floor(need / step) * step
            ctx.notes.append(f"Top of the section raised to {-new_top:g} km above the datum to show the highest ground.")
            ytop = new_top
    if ybot <= ytop:
        ybot = ytop + max(1.0, 0.05 * xr)
    ctx.ytop, ctx.ybot = ytop, ybot

    # phases in order of first appearance; the label of a phase is the first one given
    ctx.ray_phase = np.array([r.phase for r in data.rays], dtype=object)
    ctx.ray_size = np.array([r.chainage_m.size for r in data.rays], dtype=int)
    ray_label = pd.Series([r.label for r in data.rays], dtype=object)
    if len(ray_label):
        first_label = ray_label.groupby(ctx.ray_phase, sort=False).first()  # first non-null label
        for ph in pd.unique(ctx.ray_phase):
            lab = first_label.get(ph)
            ctx.phase_label[str(ph)] = str(lab) if isinstance(lab, str) and lab else str(ph)
    for ph in pd.unique(_df_col(data.reflection_points, "phase", default="", dtype=object).astype(str)):
        ctx.phase_label.setdefault(str(ph), str(ph))
    selected = [p for p, lab in ctx.phase_label.items() if _phase_selected(opts, p, lab)]
    ctx.phase_colour = gc.phase_colours(selected)
    return ctx


# ======================================================================================
# the main axes
# ======================================================================================
def _draw_velocity(ax: Axes, data: SectionData, ctx: _Ctx) -> None:
    v = data.velocity
    if v is None or v.vp_ms.size == 0 or not np.any(np.isfinite(v.vp_ms)):
        return
    vk = np.ma.masked_invalid(v.vp_ms / 1000.0)
    mesh = ax.pcolormesh(v.chainage_m / 1e3, v.depth_m / 1e3, vk, cmap=ctx.cmap, shading="nearest",
                         zorder=1.5, rasterized=True)
    mesh.set_gid("velocity")
    ctx.mesh = mesh
    step = ctx.opts.velocity_contour_kms
    if step and v.chainage_m.size > 1 and v.depth_m.size > 1:
        lo, hi = float(np.nanmin(vk)), float(np.nanmax(vk))
        levels = np.arange(math.ceil(lo / step) * step, hi, step)
        if levels.size:
            cs = ax.contour(v.chainage_m / 1e3, v.depth_m / 1e3, vk, levels=levels, colors="#3a3a3a",
                            linewidths=0.25, alpha=0.45, zorder=1.6)
            cs.set_gid("velocity-contours")
            ctx.contours = cs
            ctx.notes.append(f"Colours: P velocity of the model, thin lines every {step:g} km/s.")
            return
    ctx.notes.append("Colours: P velocity of the model.")


def _draw_ground(ax: Axes, data: SectionData, ctx: _Ctx) -> None:
    if ctx.topo_x.size == 0:
        return
    fin = np.isfinite(ctx.topo_z)
    # the ground is filled from the topography down to the top of the velocity model
    # (down to the bottom of the section where there is no model)
    bottom = np.full(ctx.topo_x.shape, ctx.ybot)
    v = data.velocity
    if v is not None and v.vp_ms.size and v.depth_m.size:
        has = np.isfinite(v.vp_ms)
        first = np.argmax(has, axis=0)
        half = 0.5 * (v.depth_m[1] - v.depth_m[0]) if v.depth_m.size > 1 else 0.0
        top = np.where(np.any(has, axis=0), v.depth_m[first] - half, np.nan) / 1e3
        if v.chainage_m.size > 1:
            model_top = np.interp(ctx.topo_x, v.chainage_m / 1e3, top, left=np.nan, right=np.nan)
        else:
            model_top = np.full(ctx.topo_x.shape, top[0] if top.size else np.nan)
        bottom = np.where(np.isfinite(model_top), np.minimum(model_top + 2 * half / 1e3, ctx.ybot), ctx.ybot)
    bottom = np.maximum(bottom, np.where(fin, ctx.topo_z, bottom))
    if np.any(fin):
        ax.fill_between(ctx.topo_x, ctx.topo_z, bottom, where=fin, color=gc.GROUND_COLOUR, lw=0, zorder=1,
                        interpolate=False, gid="ground")
    (line,) = ax.plot(ctx.topo_x, ctx.topo_z, color="#1b1b1b", lw=0.7, zorder=6, solid_capstyle="butt")
    line.set_gid("topography")
    line.set_label("_topography")
    if not np.all(fin):
        inside = (ctx.topo_x >= ctx.x0) & (ctx.topo_x <= ctx.x1)
        dx = np.gradient(ctx.topo_x) if ctx.topo_x.size > 1 else np.zeros(1)
        gap = float(np.sum(dx[inside & ~fin]))
        ctx.notes.append(f"No DEM over {gap:.1f} km of the line (gaps in the topography).")


def _draw_interfaces(ax: Axes, data: SectionData, ctx: _Ctx) -> None:
    drawn = False
    for itf in data.interfaces:
        if itf.chainage_m.size < 2:
            continue
        o = np.argsort(itf.chainage_m)
        (ln,) = ax.plot(itf.chainage_m[o] / 1e3, itf.depth_m[o] / 1e3, color="#151515", lw=0.75, zorder=4)
        ln.set_gid(f"interface:{itf.name}")
        drawn = True
    if drawn:
        ctx.add("interp", Line2D([], [], color="#151515", lw=0.75), "model interface")


def _draw_coverage(ax: Axes, data: SectionData, ctx: _Ctx) -> None:
    rp = data.reflection_points
    if not len(rp) or not data.interfaces:
        return
    phase = _df_col(rp, "phase", default="", dtype=object).astype(str)
    x = _df_col(rp, "chainage_m") / 1e3
    iface_of = np.array([(_phase_parts(p)[1] or "").lower() if _phase_parts(p)[0] == "reflection" else ""
                         for p in pd.unique(phase)], dtype=object)
    lookup = dict(zip(pd.unique(phase), iface_of))
    sel = np.array([_phase_selected(ctx.opts, p, ctx.phase_label.get(p)) for p in pd.unique(phase)])
    selected = dict(zip(pd.unique(phase), sel))
    point_iface = pd.Series(phase).map(lookup).to_numpy(dtype=object)
    point_sel = pd.Series(phase).map(selected).to_numpy(dtype=bool)
    bw = ctx.opts.coverage_bin_km or _nice((ctx.x1 - ctx.x0) / 100.0)
    edges = np.arange(ctx.x0, ctx.x1 + bw, bw)
    cmap = LinearSegmentedColormap.from_list("coverage", gc.COVERAGE_COLOURS)
    drawn = False
    counts_max = 1
    for itf in data.interfaces:
        m = (point_iface == itf.name.lower()) & point_sel & np.isfinite(x)
        if not np.any(m) or itf.chainage_m.size < 2:
            continue
        counts, _ = np.histogram(x[m], bins=edges)
        k = np.nonzero(counts)[0]
        if not k.size:
            continue
        o = np.argsort(itf.chainage_m)
        xs = np.stack([edges[k], 0.5 * (edges[k] + edges[k + 1]), edges[k + 1]], axis=1)
        zs = np.interp(xs, itf.chainage_m[o] / 1e3, itf.depth_m[o] / 1e3, left=np.nan, right=np.nan)
        seg = np.stack([xs, zs], axis=-1)
        counts_max = max(counts_max, int(counts.max()))
        lc = LineCollection(seg, array=counts[k].astype(float), cmap=cmap, linewidths=3.4, capstyle="butt",
                            zorder=3.6, alpha=0.95)
        lc.set_gid(f"coverage:{itf.name}")
        ax.add_collection(lc)
        drawn = True
    if drawn:
        for lc in ax.collections:
            if str(lc.get_gid()).startswith("coverage:"):
                lc.set_norm(Normalize(1, max(counts_max, 2)))
        ctx.add("interp", Line2D([], [], color=cmap(0.6), lw=3.4, solid_capstyle="butt"),
                f"reflection coverage per {bw:g} km\n(light 1 → dark {counts_max} points)")


def _select_rays(rays: list[RayPath], ctx: _Ctx) -> tuple[dict[str, np.ndarray], int]:
    """Indices of the rays drawn per phase: all, or evenly spaced ones sharing ``max_rays``."""
    usable = np.isin(ctx.ray_phase, list(ctx.phase_colour)) & (ctx.ray_size >= 2)
    by_phase = {p: np.nonzero(usable & (ctx.ray_phase == p))[0] for p in ctx.phase_colour}
    by_phase = {p: i for p, i in by_phase.items() if i.size}
    total = int(usable.sum())
    limit = ctx.opts.max_rays
    if total <= limit:
        return by_phase, total
    out = {}
    for p, idx in by_phase.items():
        quota = min(max(1, int(round(limit * idx.size / total))), idx.size) if limit > 0 else 0
        out[p] = idx[np.unique(np.linspace(0, idx.size - 1, quota).round().astype(int))] if quota else idx[:0]
    return out, total


def _draw_rays(ax: Axes, data: SectionData, ctx: _Ctx) -> None:
    if not ctx.opts.show_rays or not data.rays:
        return
    chosen, total = _select_rays(data.rays, ctx)
    n_drawn = 0
    gap = np.array([np.nan])
    for phase, idx in chosen.items():
        if not idx.size:
            continue
        rs = [data.rays[i] for i in idx]  # at most max_rays paths, joined with NaN breaks
        xs = np.concatenate([a for r in rs for a in (r.chainage_m, gap)]) / 1e3
        zs = np.concatenate([a for r in rs for a in (r.depth_m, gap)]) / 1e3
        (ln,) = ax.plot(xs, zs, color=ctx.phase_colour[phase], lw=0.35, alpha=0.6, zorder=3, solid_capstyle="round")
        ln.set_gid(f"rays:{phase}")
        n_drawn += len(rs)
    if total:
        ctx.notes.append(f"{n_drawn} of {total} ray paths drawn." if n_drawn < total else f"{total} ray paths drawn.")


def _draw_points(ax: Axes, data: SectionData, ctx: _Ctx) -> None:
    rp = data.reflection_points
    if not len(rp):
        return
    phase = _df_col(rp, "phase", default="", dtype=object).astype(str)
    x = _df_col(rp, "chainage_m") / 1e3
    z = _df_col(rp, "depth_m") / 1e3
    fr = _df_col(rp, "fresnel_inline_m") / 1e3
    ok = np.isfinite(x) & np.isfinite(z)
    if "status" in rp.columns:
        ok &= rp["status"].astype(str).str.lower().isin(["ok", "nan", "none", ""]).to_numpy()
    keep = ok & np.isin(phase, list(ctx.phase_colour))
    total = int(keep.sum())
    limit = ctx.opts.max_points
    if total > limit:
        idx = np.nonzero(keep)[0]
        pick = idx[np.unique(np.linspace(0, idx.size - 1, limit).round().astype(int))] if limit else idx[:0]
        keep = np.zeros_like(keep)
        keep[pick] = True
        ctx.notes.append(f"{int(keep.sum())} of {total} reflection points drawn.")
    any_fresnel = False
    for p, c in ctx.phase_colour.items():
        m = keep & (phase == p)
        if not np.any(m):
            continue
        xerr = np.where(np.isfinite(fr[m]), fr[m], 0.0)
        any_fresnel |= bool(np.any(xerr > 0))
        cont = ax.errorbar(x[m], z[m], xerr=xerr, fmt="o", ms=2.0, mfc=c, mec="white", mew=0.2, ecolor=c,
                           elinewidth=0.4, capsize=0, alpha=0.85, zorder=5)
        cont.lines[0].set_gid(f"reflection-points:{p}")
        for bar in cont.lines[2]:
            bar.set_gid(f"fresnel:{p}")
            bar.set_alpha(0.45)
    if any_fresnel:
        ctx.titles["phases"] = "Phases (bars: in-line Fresnel half-width)"


def _phase_legend(ctx: _Ctx, data: SectionData) -> None:
    ray_phases = set(pd.unique(ctx.ray_phase[ctx.ray_size >= 2])) if ctx.opts.show_rays else set()
    rp_phases = set(_df_col(data.reflection_points, "phase", default="", dtype=object).astype(str))
    for p, c in ctx.phase_colour.items():
        has_pts = p in rp_phases
        has_rays = p in ray_phases
        if not (has_pts or has_rays):
            continue
        h = Line2D([], [], color=c, lw=0.9 if has_rays else 0, marker="o" if has_pts else None, ms=2.8,
                   mfc=c, mec="white", mew=0.2)
        lab = ctx.phase_label.get(p, p)
        ctx.add("phases", h, lab if lab == p else f"{lab} ({p})")
    ctx.titles.setdefault("phases", "Phases")


def _draw_horizons(ax: Axes, data: SectionData, ctx: _Ctx) -> None:
    daggers = []
    for i, h in enumerate(data.horizons):
        if h.chainage_m.size < 2:
            continue
        o = np.argsort(h.chainage_m)
        x, z = h.chainage_m[o] / 1e3, h.depth_m[o] / 1e3
        colour = h.color if h.color and is_color_like(h.color) else gc.HORIZON_COLOURS[i % len(gc.HORIZON_COLOURS)]
        style = _LINESTYLE_NAMES.get(h.linestyle, h.linestyle) if h.linestyle else _HORIZON_STYLES[h.source]
        try:
            (ln,) = ax.plot(x, z, color=colour, lw=1.3, ls=style, zorder=4.5)
        except ValueError:
            (ln,) = ax.plot(x, z, color=colour, lw=1.3, ls=_HORIZON_STYLES[h.source], zorder=4.5)
        ln.set_gid(f"horizon:{h.name}")
        ln.set_path_effects([patheffects.withStroke(linewidth=2.2, foreground="white", alpha=0.7)])
        handle: Any = Line2D([], [], color=colour, lw=1.3, ls=ln.get_linestyle())
        if h.uncertainty_m is not None and np.any(np.isfinite(h.uncertainty_m)):
            u = h.uncertainty_m[o] / 1e3
            band = ax.fill_between(x, z - u, z + u, color=colour, alpha=0.18, lw=0, zorder=4.4)
            band.set_gid(f"horizon-band:{h.name}")
            handle = (Patch(fc=colour, alpha=0.18, lw=0), handle)
        label = f"{h.name} ({HORIZON_SOURCES[h.source]})"
        if h.source == "chainage-twt":
            daggers.append(h)
            label = f"{h.name}† ({HORIZON_SOURCES[h.source]})"
        ctx.add("interp", handle, label)
    for h in daggers:
        note = h.note.strip() or "converted from two-way time with the model's vertical velocities"
        ctx.notes.append(f"† {h.name}: {note.rstrip('.')}.")
    if any(h.uncertainty_m is not None for h in data.horizons):
        ctx.notes.append("Shaded bands: horizon depth uncertainty.")


def _draw_faults(ax: Axes, data: SectionData, ctx: _Ctx) -> None:
    f = data.faults
    if not len(f):
        return
    x = _df_col(f, "chainage_m") / 1e3
    dip = _df_col(f, "apparent_dip_deg")
    toward = _df_col(f, "dips_toward", default="", dtype=object).astype(str)
    sign = np.where(toward == "-", -1.0, 1.0)
    m = np.isfinite(x) & np.isfinite(dip) & (dip > 0) & (dip <= 90)
    if np.any(m):
        z0 = _topo_depth_km(ctx, x[m])
        z0 = np.where(np.isfinite(z0), z0, 0.0)
        z1 = np.full_like(z0, ctx.opts.fault_depth_km)
        t = np.tan(np.radians(dip[m]))
        dx = np.where(dip[m] >= 89.99, 0.0, (z1 - z0) / np.where(t > 0, t, np.nan)) * sign[m]
        seg = np.stack([np.stack([x[m], z0], axis=1), np.stack([x[m] + dx, z1], axis=1)], axis=1)
        lc = LineCollection(seg, colors="#262626", linewidths=1.0, zorder=4.2, capstyle="butt")
        lc.set_gid("faults")
        ax.add_collection(lc)
        ctx.notes.append(f"Faults with a known apparent dip are drawn to {ctx.opts.fault_depth_km:g} km depth.")
    ctx.add("survey", Line2D([], [], color="#262626", lw=1.0), "fault (at apparent dip where known)")


def _draw_hypocentres(ax: Axes, data: SectionData, ctx: _Ctx) -> None:
    hy = data.hypocentres
    if not len(hy):
        return
    x = _df_col(hy, "chainage_m") / 1e3
    z = _df_col(hy, "depth_m") / 1e3
    mag = _df_col(hy, "magnitude")
    ok = np.isfinite(x) & np.isfinite(z)
    if not np.any(ok):
        return
    size = _mag_size(mag[ok])
    sc = ax.scatter(x[ok], z[ok], s=size**2, facecolors=(0.25, 0.25, 0.25, 0.22), edgecolors="#222222",
                    linewidths=0.4, zorder=5.2)
    sc.set_gid("hypocentres")
    fm = mag[ok][np.isfinite(mag[ok])]
    if fm.size:
        lo, hi = math.ceil(fm.min() * 2) / 2, math.floor(fm.max() * 2) / 2
        ms = np.unique(np.round(np.linspace(lo, hi, 3 if hi - lo >= 1.5 else (2 if hi > lo else 1)) * 2) / 2)
    else:
        ms = np.array([])
    for mm in ms:
        ctx.add("seismicity", Line2D([], [], ls="", marker="o", ms=float(_mag_size(np.array([mm]))[0]),
                                     mfc=(0.25, 0.25, 0.25, 0.22), mec="#222222", mew=0.4), f"M {mm:g}")
    if not ms.size:
        ctx.add("seismicity", Line2D([], [], ls="", marker="o", ms=float(_mag_size(np.array([np.nan]))[0]),
                                     mfc=(0.25, 0.25, 0.25, 0.22), mec="#222222", mew=0.4), "event")
    sw = data.swath_m
    ctx.titles["seismicity"] = (f"Events within ±{sw / 1e3:g} km" if sw is not None and math.isfinite(sw) and sw > 0
                                else "Events (swath not stated)")
    n_no_mag = int(np.sum(~np.isfinite(mag[ok])))
    if n_no_mag:
        ctx.notes.append(f"{n_no_mag} events without magnitude drawn at the smallest size.")


def _mag_size(mag: np.ndarray) -> np.ndarray:
    """Marker diameter (points) of an event of magnitude ``mag``: 1.8 pt + 1.5 pt per unit."""
    m = np.where(np.isfinite(mag), np.clip(mag, 0.0, 9.0), 0.0)
    return 1.8 + 1.5 * m


_TRIANGLE = MarkerStyle(MplPath([(-0.55, 0.0), (0.55, 0.0), (0.0, 0.95), (-0.55, 0.0)],
                                [MplPath.MOVETO, MplPath.LINETO, MplPath.LINETO, MplPath.CLOSEPOLY]))


def _spaced_sizes(x_km: np.ndarray, ms: float, ctx: _Ctx) -> np.ndarray:
    """Marker sizes (points) that shrink where neighbours are closer than a marker width.

    A dense deployment then reads as a row of small symbols instead of a black bar; the
    smallest size is 40 % of ``ms``.
    """
    n = x_km.size
    if n < 2:
        return np.full(n, ms)
    pt_per_km = ctx.axes_width_mm / PT_MM / max(ctx.x1 - ctx.x0, 1e-9)
    order = np.argsort(x_km, kind="stable")
    gaps = np.diff(x_km[order]) * pt_per_km
    nearest = np.minimum(np.append(gaps, np.inf), np.insert(gaps, 0, np.inf))
    size = np.empty(n)
    size[order] = np.clip(nearest * 1.05, 0.4 * ms, ms)
    return size


def _crossline_classes(ctx: _Ctx) -> tuple[np.ndarray, list[str], list[str]]:
    edges = np.asarray(ctx.opts.crossline_classes_km, dtype=float)
    n = edges.size + 1
    fills = list(gc.CROSSLINE_FILLS) if n == len(gc.CROSSLINE_FILLS) else [
        mpl.colors.to_hex((g, g, g)) for g in np.linspace(0.1, 1.0, n)]
    labels = []
    for i in range(n):
        if i == 0:
            labels.append(f"< {edges[0]:g} km" if edges.size else "any")
        elif i == n - 1:
            labels.append(f"≥ {edges[-1]:g} km")
        else:
            labels.append(f"{edges[i - 1]:g}–{edges[i]:g} km")
    return edges, fills, labels


def _draw_survey(ax: Axes, data: SectionData, ctx: _Ctx) -> None:
    edges, fills, labels = _crossline_classes(ctx)
    used_classes: set[int] = set()
    any_unknown = any_bad = False
    skipped = 0
    for name, table, marker, ms, z in (("stations", data.stations, _TRIANGLE, ctx.station_ms, 7.0),
                                       ("shots", data.shots, "*", ctx.station_ms * 1.5, 7.2)):
        if not len(table):
            continue
        x = _df_col(table, "chainage_m") / 1e3
        zt = _topo_depth_km(ctx, x)
        zt = np.where(np.isfinite(zt), zt, -_df_col(table, "elevation_m") / 1e3)
        inside = np.isfinite(x) & np.isfinite(zt) & (x >= ctx.x0) & (x <= ctx.x1)
        skipped += int(np.sum(~inside))
        if not np.any(inside):
            continue
        xl = np.abs(_df_col(table, "crossline_m")) / 1e3
        cls = np.searchsorted(edges, xl, side="right")
        status = (table["status"].astype(str).str.strip().str.lower().to_numpy()
                  if "status" in table.columns else np.full(len(table), "ok"))
        good = np.isin(status, ["ok", "", "nan", "none"])
        known = np.isfinite(xl)
        face = np.array(fills, dtype=object)[np.clip(cls, 0, len(fills) - 1)]
        face = np.where(known, face, "#e6e6e6")
        rgba_face = mpl.colors.to_rgba_array(list(face))
        rgba_face[~good] = (1.0, 1.0, 1.0, 0.0)
        rgba_edge = np.tile(mpl.colors.to_rgba("#111111"), (len(table), 1))
        rgba_edge[~good] = mpl.colors.to_rgba("#c62828")
        size = _spaced_sizes(x[inside], ms, ctx)
        sc = ax.scatter(x[inside], zt[inside], s=size**2, marker=marker, facecolors=rgba_face[inside],
                        edgecolors=rgba_edge[inside], linewidths=np.where(size < 0.7 * ms, 0.25, 0.45), zorder=z,
                        clip_on=False)
        sc.set_gid(name)
        sc.set_label(f"_{name}")
        used_classes.update(np.unique(cls[inside & known & good]).tolist())
        any_unknown |= bool(np.any(inside & ~known & good))
        any_bad |= bool(np.any(inside & ~good))
        ctx.add("survey", Line2D([], [], ls="", marker=marker, ms=ms * (1.3 if name == "stations" else 0.75),
                                 mfc="#9a9a9a", mec="#111111", mew=0.45), "station" if name == "stations" else "shot")
    if used_classes or any_unknown:
        ctx.titles["survey"] = "Survey (fill: crossline distance)"
        for i in sorted(used_classes):
            ctx.add("survey", Patch(fc=fills[i], ec="#111111", lw=0.45), labels[i])
        if any_unknown:
            ctx.add("survey", Patch(fc="#e6e6e6", ec="#111111", lw=0.45), "crossline unknown")
    if any_bad:
        ctx.add("survey", Line2D([], [], ls="", marker=_TRIANGLE, ms=ctx.station_ms * 1.3, mfc="none",
                                 mec="#c62828", mew=0.45), "not usable (status)")
    if skipped:
        ctx.notes.append(f"{skipped} stations or shots without chainage or beyond the line ends are not drawn.")


def _place_scalebar(ax: Axes, data: SectionData, ctx: _Ctx, renderer: Any) -> None:
    """Move the scale-bar box to the lower corner where it hides fewer drawn points."""
    boxes = [a for a in ax.artists if a.get_gid() == "scale-bar"]
    if not boxes:
        return
    box = boxes[0]
    xs = [_df_col(data.reflection_points, "chainage_m"), _df_col(data.hypocentres, "chainage_m")]
    zs = [_df_col(data.reflection_points, "depth_m"), _df_col(data.hypocentres, "depth_m")]
    for h in list(data.horizons) + list(data.interfaces):
        xs.append(h.chainage_m)
        zs.append(h.depth_m)
    pts = np.column_stack([np.concatenate(xs) / 1e3, np.concatenate(zs) / 1e3])
    pts = pts[np.all(np.isfinite(pts), axis=1)]
    disp = ax.transData.transform(pts) if pts.size else np.empty((0, 2))
    best, best_n = None, None
    for loc in ("lower left", "lower right"):
        box.loc = AnchoredOffsetbox.codes[loc]
        bb = box.get_window_extent(renderer)
        n = int(np.sum((disp[:, 0] >= bb.x0) & (disp[:, 0] <= bb.x1) & (disp[:, 1] >= bb.y0) & (disp[:, 1] <= bb.y1)))
        if best_n is None or n < best_n:
            best, best_n = loc, n
    box.loc = AnchoredOffsetbox.codes[best]


def _draw_scalebar(ax: Axes, data: SectionData, ctx: _Ctx) -> None:
    from matplotlib.offsetbox import HPacker

    xr = ctx.x1 - ctx.x0
    length = _nice(xr / 6.0)
    fs = ctx.preset.small_pt
    bar = AuxTransformBox(ax.transData)
    bar.add_artist(Line2D([0, length], [0, 0], color="#111111", lw=1.6, solid_capstyle="butt"))
    bar.add_artist(Line2D([0, length / 2], [0, 0], color="white", lw=0.9, solid_capstyle="butt"))
    bar.add_artist(Line2D([0, length / 2, length], [0, 0, 0], ls="", marker="|", ms=3.5, mew=0.6, color="#111111"))
    t_len = TextArea(f"{length:g} km", textprops=dict(size=fs))
    ve = ctx.opts.exaggeration
    t_ve = TextArea(f"vertical exaggeration ×{ve:g}", textprops=dict(size=fs))
    for ta, gid in ((t_len, "scale-bar-label"), (t_ve, "vertical-exaggeration")):
        inner = getattr(ta, "_text", None)
        if inner is not None:
            inner.set_gid(gid)
    row = HPacker(children=[bar, t_len], align="center", pad=0, sep=3)
    box = VPacker(children=[row, t_ve], align="left", pad=0, sep=1.5)
    anchored = AnchoredOffsetbox(loc="lower left", child=box, pad=0.3, borderpad=0.4, frameon=True)
    anchored.patch.set(facecolor="white", edgecolor="none", alpha=0.78)
    anchored.set_zorder(8)
    anchored.set_gid("scale-bar")
    ax.add_artist(anchored)


def _draw_main(ax: Axes, data: SectionData, ctx: _Ctx) -> None:
    ax.set_xlim(ctx.x0, ctx.x1)
    ax.set_ylim(ctx.ybot, ctx.ytop)
    ax.set_aspect(ctx.opts.exaggeration, adjustable="box", anchor="N")
    ax.set_facecolor("white")
    _draw_ground(ax, data, ctx)
    _draw_velocity(ax, data, ctx)
    _draw_interfaces(ax, data, ctx)
    _draw_coverage(ax, data, ctx)
    _draw_rays(ax, data, ctx)
    _draw_points(ax, data, ctx)
    _phase_legend(ctx, data)
    _draw_horizons(ax, data, ctx)
    _draw_faults(ax, data, ctx)
    _draw_hypocentres(ax, data, ctx)
    _draw_survey(ax, data, ctx)
    _draw_scalebar(ax, data, ctx)
    p = ctx.preset
    ax.set_xlabel("Distance along line (km)", fontsize=p.body_pt, labelpad=2)
    ax.set_ylabel("Depth (km)", fontsize=p.body_pt, labelpad=2)
    ax.tick_params(labelsize=p.small_pt, width=p.line_pt, length=2.5, pad=1.5)
    sec = ax.secondary_yaxis("right", functions=(np.negative, np.negative))
    sec.set_ylabel("Elevation (km)", fontsize=p.body_pt, labelpad=2)
    sec.tick_params(labelsize=p.small_pt, width=p.line_pt, length=2.5, pad=1.5)
    sec.set_gid("elevation-axis")
    for s in ax.spines.values():
        s.set_linewidth(p.line_pt)


# ======================================================================================
# geology strip, header labels, topography panel, end labels
# ======================================================================================
def _draw_strip(sax: Axes, data: SectionData, ctx: _Ctx) -> None:
    sax.set_ylim(0, 1)
    sax.set_xlim(ctx.x0, ctx.x1)
    sax.set_yticks([])
    sax.tick_params(axis="x", which="both", bottom=False, labelbottom=False, top=False, labeltop=False)
    for s in sax.spines.values():
        s.set_linewidth(ctx.preset.line_pt * 0.8)
    g = data.geology
    if len(g):
        start = _df_col(g, "start_m") / 1e3
        end = _df_col(g, "end_m") / 1e3
        units = _df_col(g, "unit", default="", dtype=object).astype(str)
        ages = _df_col(g, "age", default=None, dtype=object)
        cols = _df_col(g, "color", default=None, dtype=object)
        colour_of = gc.geology_colours(units, ages, cols, ctx.opts.geology_colours)
        lo, hi = np.minimum(start, end), np.maximum(start, end)
        ok = np.isfinite(lo) & np.isfinite(hi) & (hi > lo)
        if np.any(ok):
            bars = sax.broken_barh(list(zip(lo[ok], hi[ok] - lo[ok])), (0, 1),
                                   facecolors=[colour_of[u] for u in units[ok]], edgecolors="white", linewidths=0.3)
            bars.set_gid("geology")
        first_age = pd.Series(ages, dtype=object).groupby(units, sort=False).first().to_dict()
        for u, c in colour_of.items():
            a = first_age.get(u)
            lab = f"{u} ({a})" if isinstance(a, str) and a.strip() and a.strip().lower() != u.lower() else u
            ctx.add("geology", Patch(fc=c, ec="#555555", lw=0.3), lab)
        ctx.titles["geology"] = "Surface geology"
        if ctx.opts.geology_colours in ("auto", "age"):
            ctx.notes.append("Geology coloured by the given colours or by age (chart colours).")
    f = data.faults
    if len(f):
        x = _df_col(f, "chainage_m") / 1e3
        x = x[np.isfinite(x)]
        if x.size:
            sax.vlines(x, -0.1, 1.0, colors="#111111", linewidths=1.1, gid="fault-ticks", zorder=5)


def _row_transform(host: Axes, row: int, ctx: _Ctx, dx_pt: float = 0.0, dy_pt: float = 0.0,
                   inside: bool = False) -> Any:
    """x in data, y at the top edge of ``host`` shifted to label row ``row``.

    Rows stack upward above the axes, or (``inside``) downward from its top edge.
    """
    base = mtransforms.blended_transform_factory(host.transData, host.transAxes)
    row_h = ctx.preset.small_pt * 1.25
    y = -(1.5 + row * row_h) + dy_pt if inside else 2.0 + row * row_h + dy_pt
    return mtransforms.offset_copy(base, fig=host.figure, x=dx_pt, y=y, units="points")


def _place_row_labels(host: Axes, items: list[dict], ctx: _Ctx, renderer: Any,
                      placed: dict[int, list[Any]]) -> list[dict]:
    """Greedy placement of labels in rows above ``host``.

    Each item gives ``x`` (km), ``text``, ``style``, ``gid``, the ``rows`` it may use (in
    order of preference) and ``dx`` (a shift in points, for labels set beside a marker).
    Boxes already taken are in ``placed`` (row -> list of display bboxes).  Returns the
    items that found no room.
    """
    fig = host.figure
    hx0, hx1 = host.get_window_extent(renderer).intervalx
    left_over = []
    for it in items:
        done = False
        anchors = it.get("anchors") or [(it.get("ha", "center"), it.get("dx", 0.0))]
        slots = it.get("slots") or [(r, a[0], a[1]) for r in it["rows"] for a in anchors]
        for row, ha, dx in slots:
            if done:
                break
            inside = bool(it.get("inside"))
            t = host.text(it["x"], 1.0, it["text"], transform=_row_transform(host, row, ctx, dx, inside=inside),
                          ha=ha, va="top" if inside else "bottom", clip_on=False, **it["style"])
            bb = t.get_window_extent(renderer)
            if bb.x0 < hx0 or bb.x1 > hx1:  # keep labels within the width of the section
                shift = (hx0 - bb.x0) if bb.x0 < hx0 else (hx1 - bb.x1)
                t.set_transform(_row_transform(host, row, ctx, dx + shift * 72.0 / fig.dpi, inside=inside))
                bb = t.get_window_extent(renderer)
            grown = mtransforms.Bbox.from_extents(bb.x0 - it.get("lead_px", 0.0) - 2, bb.y0, bb.x1 + 2, bb.y1)
            # a label lifted above row 0 needs a clear path for its leader line down to the strip
            xp = host.transData.transform((it["x"], 0.0))[0]
            lead_boxes = {r: mtransforms.Bbox.from_extents(xp - 1.5, -1e9, xp + 1.5, 1e9)
                          for r in range(row)} if it.get("leader") else {}
            clash = any(grown.overlaps(o) for o in placed.setdefault(row, []))
            clash |= any(b.overlaps(o) for r, b in lead_boxes.items() for o in placed.setdefault(r, []))
            if clash:
                t.remove()
                continue
            placed[row].append(grown)
            for r, b in lead_boxes.items():
                placed[r].append(b)
            if lead_boxes:
                ln = Line2D([it["x"], it["x"]], [1.0, 1.0], color="#111111", lw=0.4, clip_on=False)
                y_top = 2.0 + row * ctx.preset.small_pt * 1.25
                ln.set_transform(mtransforms.blended_transform_factory(host.transData, host.transAxes))
                ln.set_ydata([1.0, 1.0 + y_top / 72.0 * fig.dpi / max(host.get_window_extent(renderer).height, 1.0)])
                ln.set_gid("fault-leader")
                host.add_line(ln)
                it.setdefault("artists", []).append(ln)
            t.set_gid(it["gid"])
            it.setdefault("artists", []).append(t)
            it["row"] = row
            done = True
        if not done:
            left_over.append(it)
    return left_over


def _header_labels(host: Axes, data: SectionData, ctx: _Ctx, renderer: Any, bend_host: Axes | None = None) -> None:
    """Fault names above the strip (two rows, with leaders when lifted); bends as a marker and angle.

    Bends go along the top of ``bend_host`` (inside it, e.g. the topography panel) when
    given, else into the rows above ``host``, where fault names leave room.
    """
    fs = ctx.preset.small_pt
    placed: dict[int, list[Any]] = {}
    faults = []
    f = data.faults
    if len(f):
        x = _df_col(f, "chainage_m") / 1e3
        names = _df_col(f, "name", default="", dtype=object)
        for i in np.nonzero(np.isfinite(x) & (x >= ctx.x0) & (x <= ctx.x1))[0]:
            nm = names[i]
            if isinstance(nm, str) and nm.strip():
                faults.append(dict(x=float(x[i]), text=nm.strip(), rows=[0, 1], gid=f"fault-label:{nm.strip()}",
                                   anchors=[("center", 0.0), ("left", 1.5), ("right", -1.5)], leader=True,
                                   style=dict(fontsize=fs, color="#111111", fontweight="bold"), name=nm.strip()))
    faults.sort(key=lambda d: d["x"])
    # two preference orders: stay in the lower row (shifting beside the tick), or keep
    # labels centred (lifting them to the upper row); keep whichever labels more faults
    orders = [
        [(0, "center", 0.0), (0, "left", 1.5), (0, "right", -1.5), (1, "center", 0.0), (1, "left", 1.5), (1, "right", -1.5)],
        [(0, "center", 0.0), (1, "center", 0.0), (0, "left", 1.5), (0, "right", -1.5), (1, "left", 1.5), (1, "right", -1.5)],
    ]
    best: tuple[list[dict], list[dict], dict[int, list[Any]]] | None = None
    for order in orders:
        trial = [dict(it, slots=order, artists=[]) for it in faults]
        trial_placed: dict[int, list[Any]] = {}
        trial_left = _place_row_labels(host, trial, ctx, renderer, trial_placed)
        if best is None or len(trial_left) < len(best[1]):
            if best is not None:
                for a in (a for it in best[0] for a in it["artists"]):
                    a.remove()
            best = (trial, trial_left, trial_placed)
        else:
            for a in (a for it in trial for a in it["artists"]):
                a.remove()
        if not trial_left:
            break
    assert best is not None
    _, left, placed = best
    # faults that found no room get a number (listed in the key or caption)
    for k, it in enumerate(left, start=1):
        it2 = dict(it, text=str(k), slots=orders[0], artists=[])
        if not _place_row_labels(host, [it2], ctx, renderer, placed):
            ctx.add("faults-key", Line2D([], [], ls=""), f"{k}  {it['name']}")
        else:
            ctx.notes.append(f"Fault '{it['name']}' at {it['x']:.1f} km is not labelled for lack of room.")
    if left:
        ctx.titles["faults-key"] = "Faults"
    b = data.bends
    if len(b):
        inside = bend_host is not None
        bh = bend_host if inside else host
        if inside:
            placed = {0: [t.get_window_extent(renderer).expanded(1.05, 1.3) for t in bh.texts
                          if t.get_gid() == "topo-exaggeration"]}
        x = _df_col(b, "chainage_m") / 1e3
        ang = _df_col(b, "angle_deg")
        m = np.isfinite(x) & (x >= ctx.x0) & (x <= ctx.x1)
        ms = fs * 0.8
        lead = ms * 0.6 * host.figure.dpi / 72.0
        bends = [dict(x=float(xi), text=f"{abs(ai):.0f}°" if math.isfinite(ai) else "", rows=[0, 1] if inside else [1, 0],
                      gid="bend-label", dx=ms * 0.6, ha="left", lead_px=lead, inside=inside,
                      style=dict(fontsize=fs, color="#555555", fontstyle="italic"))
                 for xi, ai in zip(x[m], ang[m])]
        bends.sort(key=lambda d: d["x"])
        dropped = _place_row_labels(bh, bends, ctx, renderer, placed)
        rows_used = np.array([it.get("row", -1) for it in bends], dtype=int)
        xb = np.array([it["x"] for it in bends])
        for r in np.unique(rows_used):
            if r >= 0:  # beside its angle
                tr = _row_transform(bh, int(r), ctx, 0.0, -fs * 0.45 if inside else fs * 0.36, inside=inside)
                size = ms
            else:  # no room for the angle: a smaller mark on the top edge
                tr = mtransforms.offset_copy(mtransforms.blended_transform_factory(bh.transData, bh.transAxes),
                                             fig=bh.figure, y=-fs * 0.3 if inside else fs * 0.3, units="points")
                size = ms * 0.7
            sc = bh.scatter(xb[rows_used == r], np.ones(int(np.sum(rows_used == r))), marker="v", s=size**2,
                            color="#6d6d6d", transform=tr, clip_on=False, zorder=6, linewidths=0)
            sc.set_gid("bends")
        if bends:
            ctx.add("survey", Line2D([], [], ls="", marker="v", ms=fs * 0.6, color="#6d6d6d"), "bend of the line (angle)")
        if dropped:
            ctx.notes.append(f"{len(dropped)} bend angles not written for lack of room.")


def _interface_labels(ax: Axes, data: SectionData, ctx: _Ctx, renderer: Any) -> None:
    fs = ctx.preset.small_pt
    placed = []
    axbb = ax.get_window_extent(renderer)
    for child in ax.artists:
        if child.get_gid() == "scale-bar":
            placed.append(child.get_window_extent(renderer))
    for itf in data.interfaces:
        if itf.chainage_m.size < 2:
            continue
        text = itf.label or itf.name
        o = np.argsort(itf.chainage_m)
        xs, zs = itf.chainage_m[o] / 1e3, itf.depth_m[o] / 1e3
        for frac in (0.985, 0.85, 0.7, 0.5, 0.3, 0.15):
            xc = ctx.x0 + frac * (ctx.x1 - ctx.x0)
            zc = float(np.interp(xc, xs, zs, left=np.nan, right=np.nan))
            if not math.isfinite(zc) or not (ctx.ytop < zc < ctx.ybot):
                continue
            t = ax.annotate(text, (xc, zc), xytext=(0, 1.2), textcoords="offset points", ha="right" if frac > 0.9 else "center",
                            va="bottom", fontsize=fs, fontstyle="italic", color="#111111", zorder=9,
                            annotation_clip=True)
            t.set_path_effects([patheffects.withStroke(linewidth=1.6, foreground="white", alpha=0.9)])
            bb = t.get_window_extent(renderer)
            inside = bb.x0 >= axbb.x0 and bb.x1 <= axbb.x1 and bb.y0 >= axbb.y0 and bb.y1 <= axbb.y1
            if inside and not any(bb.overlaps(p) for p in placed):
                t.set_gid(f"interface-label:{itf.name}")
                placed.append(bb)
                break
            t.remove()


def _draw_topo_panel(tax: Axes, data: SectionData, ctx: _Ctx, aw_mm: float, th_mm: float) -> None:
    p = ctx.preset
    elev = -ctx.topo_z
    fin = np.isfinite(elev)
    emin, emax = (float(np.nanmin(elev)), float(np.nanmax(elev))) if np.any(fin) else (0.0, 1.0)
    relief = max(emax - emin, 0.05)
    xr = ctx.x1 - ctx.x0
    want = ctx.opts.topo_exaggeration
    usable = th_mm * 0.82  # leave room for the symbols on top
    yr_at_want = usable / aw_mm * xr / want  # elevation km covered at the wanted exaggeration
    ve = want if yr_at_want >= relief else usable / aw_mm * xr / relief
    yr = th_mm / aw_mm * xr / ve
    lo = emin - 0.06 * yr
    tax.set_ylim(lo, lo + yr)
    tax.set_xlim(ctx.x0, ctx.x1)
    ctx.topo_ve = ve
    if np.any(fin):
        tax.fill_between(ctx.topo_x, elev, lo, where=fin, color=gc.GROUND_COLOUR, lw=0, zorder=1)
    (ln,) = tax.plot(ctx.topo_x, elev, color="#1b1b1b", lw=0.7, zorder=3)
    ln.set_gid("topography-panel")
    for name, table, marker, ms in (("stations", data.stations, _TRIANGLE, 2.6), ("shots", data.shots, "*", 3.8)):
        if not len(table):
            continue
        x = _df_col(table, "chainage_m") / 1e3
        zt = -_topo_depth_km(ctx, x)
        zt = np.where(np.isfinite(zt), zt, _df_col(table, "elevation_m") / 1e3)
        m = np.isfinite(x) & np.isfinite(zt) & (x >= ctx.x0) & (x <= ctx.x1)
        if np.any(m):
            tax.scatter(x[m], zt[m], s=_spaced_sizes(x[m], ms, ctx) ** 2, marker=marker, color="#333333",
                        linewidths=0, zorder=4,
                        gid=f"{name}-panel", clip_on=False)
    tax.set_ylabel("Elev. (km)", fontsize=p.body_pt, labelpad=2)
    tax.tick_params(labelsize=p.small_pt, width=p.line_pt, length=2.5, pad=1.5, labelbottom=False)
    tax.yaxis.set_major_locator(mpl.ticker.MaxNLocator(3))
    for s in tax.spines.values():
        s.set_linewidth(p.line_pt)
    txt = f"topography ×{ve:.2g}" + ("" if ve == want else f" (×{want:g} does not fit)")
    t = tax.text(0.995, 0.96, txt, transform=tax.transAxes, ha="right", va="top", fontsize=p.small_pt,
                 color="#333333", gid="topo-exaggeration")
    t.set_path_effects([patheffects.withStroke(linewidth=1.6, foreground="white")])


def _end_labels(top: Axes, data: SectionData, ctx: _Ctx, renderer: Any, offset_pt: float) -> None:
    p = ctx.preset
    labels: list[Any] = []
    notes: list[tuple[Any, str, float]] = []
    for side, label, az in (("left", data.start_label, data.start_azimuth_deg),
                            ("right", data.end_label, data.end_azimuth_deg)):
        if not (label and str(label).strip()):
            continue
        x = 0.0 if side == "left" else 1.0
        t = top.annotate(str(label).strip(), (x, 1.0), xycoords="axes fraction", xytext=(0, offset_pt),
                         textcoords="offset points", ha=side, va="bottom", fontsize=p.body_pt, fontweight="bold",
                         annotation_clip=False)
        t.set_gid(f"end-label:{side}")
        labels.append(t)
        if az is not None and math.isfinite(az):
            w = t.get_window_extent(renderer).width * 72 / top.figure.dpi
            note = f"line heads {az % 360:03.0f}°"
            dx = (w + 3) if side == "left" else -(w + 3)
            n = top.annotate(note, (x, 1.0), xycoords="axes fraction", xytext=(dx, offset_pt),
                             textcoords="offset points", ha=side, va="bottom", fontsize=p.small_pt, color="#444444",
                             annotation_clip=False)
            n.set_gid(f"end-azimuth:{side}")
            notes.append((n, label, az))
    boxes = [a.get_window_extent(renderer) for a in labels + [n for n, _, _ in notes]]
    crowded = any(boxes[i].overlaps(boxes[j]) for i in range(len(boxes)) for j in range(i + 1, len(boxes)))
    if crowded and notes:  # too narrow for the azimuths beside the labels: say them in the caption
        for n, _, _ in notes:
            n.remove()
        ctx.notes.append("Line azimuth " + ", ".join(f"{az % 360:03.0f}° at the {str(lab).strip()} end"
                                                       for _, lab, az in notes) + ".")


# ======================================================================================
# the key (legends) and layout
# ======================================================================================
_GROUP_ORDER = ("phases", "interp", "survey", "seismicity", "geology", "faults-key")
_GROUP_TITLES = {"phases": "Phases", "interp": "Model and interpretation", "survey": "Survey",
                 "seismicity": "Events", "geology": "Surface geology", "faults-key": "Faults"}


def _make_legend(fig: Figure, ctx: _Ctx, group: str, ncol: int) -> Any:
    from matplotlib.legend_handler import HandlerTuple

    entries = ctx.legends[group]
    fs = ctx.preset.small_pt
    leg = fig.legend(
        [e[0] for e in entries], [e[1] for e in entries], title=ctx.titles.get(group, _GROUP_TITLES[group]),
        loc="upper left", bbox_to_anchor=(0, 0), bbox_transform=fig.transFigure, frameon=False, fontsize=fs,
        title_fontsize=fs, alignment="left", handlelength=1.8 if group != "faults-key" else 0, handletextpad=0.5,
        borderpad=0.1, borderaxespad=0.0, labelspacing=0.3, columnspacing=1.0, ncols=ncol,
        handler_map={tuple: HandlerTuple(ndivide=None, pad=0.0)},
    )
    leg.get_title().set_fontweight("bold")
    leg.set_gid(f"legend:{group}")
    return leg


def _build_key(fig: Figure, ctx: _Ctx, renderer: Any, width_mm: float) -> list[tuple[Any, float, float]]:
    """Legends with their sizes (mm), fitted to ``width_mm``."""
    out = []
    for group in _GROUP_ORDER:
        if not ctx.legends.get(group):
            continue
        n = len(ctx.legends[group])
        ncol = 1 if n <= 5 else min(4, math.ceil(n / 5))
        while True:
            leg = _make_legend(fig, ctx, group, ncol)
            bb = leg.get_window_extent(renderer)
            w, h = bb.width / fig.dpi * 25.4, bb.height / fig.dpi * 25.4
            if w <= width_mm or ncol == 1:
                break
            leg.remove()
            ncol -= 1
        out.append((leg, w, h))
    return out


def _flow(items: list[tuple[float, float]], width_mm: float, gap_mm: float) -> tuple[list[tuple[float, float]], float]:
    """Shelf packing of boxes (w, h): each goes into the first row with room, in order.

    Returns the top-left offset of each box (mm, from the top-left of the key) and the
    total height.
    """
    rows: list[list[float]] = []  # [used width, height]
    where: list[tuple[int, float]] = []
    for w, h in items:
        for i, r in enumerate(rows):
            if r[0] + gap_mm + w <= width_mm:
                where.append((i, r[0] + gap_mm))
                r[0] += gap_mm + w
                r[1] = max(r[1], h)
                break
        else:
            rows.append([w, h])
            where.append((len(rows) - 1, 0.0))
    tops = np.concatenate([[0.0], np.cumsum([r[1] + gap_mm for r in rows])]) if rows else np.zeros(1)
    pos = [(x, float(tops[i])) for i, x in where]
    return pos, (float(tops[-1]) - gap_mm if rows else 0.0)


def _wrap(fig: Figure, text: str, width_mm: float, size: float, renderer: Any) -> str:
    probe = fig.text(0, 0, "abcdefghijklmnopqrstuvwxyz ABCDEFGHIJ 0123456789 ,.;()", fontsize=size)
    w = probe.get_window_extent(renderer).width / fig.dpi * 25.4
    probe.remove()
    per_char = w / 56.0
    n = max(20, int(width_mm / per_char * 0.97))
    return "\n".join(textwrap.fill(par, n) for par in text.split("\n"))


def _full_figure(data: SectionData, opts: SectionOptions, preset: Preset, cmap: Any) -> Axes:
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    P = preset
    W = P.width_mm
    ml, mr = (11.0, 10.5) if P.name == "single-column" else (13.0, 12.0)
    avail_w = W - ml - mr
    ctx = _setup(data, opts, P, cmap, avail_w)
    fig = Figure(figsize=(W / 25.4, (P.height_mm or MAX_HEIGHT_MM) / 25.4), dpi=100)
    FigureCanvasAgg(fig)
    renderer = fig.canvas.get_renderer()

    has_strip = bool(len(data.geology) or len(data.faults))
    has_panel = bool(opts.topo_panel and ctx.topo_x.size >= 2 and np.any(np.isfinite(ctx.topo_z)))
    has_header = bool(len(data.faults) or len(data.bends))
    header_rows = 2 if (len(data.faults) or (len(data.bends) and not has_panel)) else 0
    has_ends = bool(str(data.start_label).strip() or str(data.end_label).strip())

    ax = fig.add_axes((0.1, 0.1, 0.8, 0.5))
    _draw_main(ax, data, ctx)
    sax = fig.add_axes((0.1, 0.6, 0.8, 0.02), sharex=ax) if has_strip else None
    if sax is not None:
        _draw_strip(sax, data, ctx)
        ax.set_xlim(ctx.x0, ctx.x1)
    tax = fig.add_axes((0.1, 0.7, 0.8, 0.1), sharex=ax) if has_panel else None

    # sizes (mm)
    pt = PT_MM
    top_m = 2.5
    title_h = P.title_pt * 1.5 * pt if data.title else 0.0
    ends_h = P.body_pt * 1.6 * pt if has_ends else 0.0
    panel_h = {"single-column": 14.0, "double-column": 18.0, "full-page": 22.0}[P.name] if has_panel else 0.0
    panel_gap = 1.5 if has_panel else 0.0
    header_h = (header_rows * P.small_pt * 1.25 + 3.0) * pt if header_rows else 0.0
    strip_h = (2.6 if len(data.geology) else 1.4) if has_strip else 0.0
    xlab_h = (P.small_pt * 1.3 + P.body_pt * 1.3 + 5.0) * pt
    key_gap = 2.5
    cap_gap = 2.0
    bottom_m = 2.0

    # the key: colour bar + legends, flowed into the width
    key_w = W - ml - 4.0
    # the survey legend must know about bends before the header labels exist
    if len(data.bends) and np.any(np.isfinite(_df_col(data.bends, "chainage_m"))):
        ctx.add("survey", Line2D([], [], ls="", marker="v", ms=P.small_pt * 0.6, color="#6d6d6d"),
                "bend of the line (angle)")
    legends = _build_key(fig, ctx, renderer, key_w)
    cells: list[tuple[float, float]] = []
    cb_w = cb_h = 0.0
    if ctx.mesh is not None:
        cb_w = min(55.0, 0.45 * key_w)
        cb_h = 2.2 + (2 * P.small_pt * 1.3 + 2.0) * pt
        cells.append((cb_w + 4.0, cb_h))
    cells += [(w, h) for _, w, h in legends]
    pos, key_h = _flow(cells, key_w, 3.0)

    # caption: the pipeline's words, then ours
    ours = [f"Vertical exaggeration ×{opts.exaggeration:g}."]
    caption_parts = [data.caption.strip()] if data.caption and data.caption.strip() else []
    provisional_notes = list(ctx.notes)

    def caption_text(panel_ve: float | None) -> str:
        extra = list(ours)
        if panel_ve is not None:
            extra[0] = f"Vertical exaggeration ×{opts.exaggeration:g}; topography panel ×{panel_ve:.2g}."
        return " ".join(caption_parts + extra + provisional_notes)

    cap_w = W - ml - 4.0
    cap_text = _wrap(fig, caption_text(opts.topo_exaggeration if has_panel else None), cap_w, P.small_pt, renderer)
    cap_lines = cap_text.count("\n") + 1 + 1  # one spare line for the header notes added later
    cap_h = cap_lines * P.small_pt * 1.3 * pt

    fixed = top_m + title_h + ends_h + panel_h + panel_gap + header_h + strip_h + xlab_h + key_gap + key_h + cap_gap + cap_h + bottom_m
    xr, yr = ctx.x1 - ctx.x0, ctx.ybot - ctx.ytop
    aw = avail_w
    ah = aw * yr / xr * opts.exaggeration
    H_limit = P.height_mm or MAX_HEIGHT_MM
    if fixed + ah > H_limit:
        ah = max(20.0, H_limit - fixed)
        aw = ah / (yr / xr * opts.exaggeration)
        aw = min(aw, avail_w)
        ah = aw * yr / xr * opts.exaggeration
    H = P.height_mm or (fixed + ah)
    fig.set_size_inches(W / 25.4, H / 25.4)
    left = ml + (avail_w - aw) / 2.0

    def rect(x_mm: float, top_mm: float, w_mm: float, h_mm: float) -> tuple[float, float, float, float]:
        return (x_mm / W, 1.0 - (top_mm + h_mm) / H, w_mm / W, h_mm / H)

    y = top_m
    if data.title:
        fig.text(ml / W, 1.0 - y / H, data.title, ha="left", va="top", fontsize=P.title_pt, fontweight="bold",
                 gid="title")
        y += title_h
    y += ends_h
    if tax is not None:
        tax.set_position(rect(left, y, aw, panel_h))
        _draw_topo_panel(tax, data, ctx, aw, panel_h)
        y += panel_h + panel_gap
    y += header_h
    if sax is not None:
        sax.set_position(rect(left, y, aw, strip_h))
        y += strip_h
    ax.set_position(rect(left, y, aw, ah))
    y += ah + xlab_h + key_gap
    # key
    if ctx.mesh is not None:
        (cx, cy) = pos[0]
        cax = fig.add_axes(rect(ml + cx, y + cy + 0.3 * P.small_pt * pt, cb_w, 2.2))
        _add_colorbar(fig, cax, ctx)
        leg_pos = pos[1:]
    else:
        leg_pos = pos
    for (leg, _, _), (lx, ly) in zip(legends, leg_pos):
        leg.set_bbox_to_anchor(((ml + lx) / W, 1.0 - (y + ly) / H), transform=fig.transFigure)
    y += key_h + cap_gap

    # labels that need the final geometry
    host = sax if sax is not None else ax
    if has_header:
        _header_labels(host, data, ctx, renderer, bend_host=tax)
        faults_key = ctx.legends.get("faults-key")
        if faults_key:  # fault names that did not fit go into the caption (the key is laid out already)
            ctx.notes.append("Faults: " + "; ".join(lbl for _, lbl in faults_key) + ".")
    _place_scalebar(ax, data, ctx, renderer)
    _interface_labels(ax, data, ctx, renderer)
    top_axes = tax if tax is not None else host
    if has_ends:
        extra = 2.0 + (header_rows * P.small_pt * 1.25 + 1.0 if (top_axes is host and header_rows) else 0.0)
        _end_labels(top_axes, data, ctx, renderer, extra)

    provisional_notes[:] = ctx.notes
    cap_text = _wrap(fig, caption_text(ctx.topo_ve if tax is not None else None), cap_w, P.small_pt, renderer)
    cap_y = y
    fig.text(ml / W, 1.0 - cap_y / H, cap_text, ha="left", va="top", fontsize=P.small_pt, color="#222222",
             gid="caption", linespacing=1.25)
    return ax


def _add_colorbar(fig: Figure, cax: Axes, ctx: _Ctx) -> None:
    P = ctx.preset
    cb = fig.colorbar(ctx.mesh, cax=cax, orientation="horizontal")
    cb.set_label("P velocity (km/s)", fontsize=P.small_pt, labelpad=1.5)
    cb.ax.tick_params(labelsize=P.small_pt, width=P.line_pt, length=2.0, pad=1.0)
    cb.outline.set_linewidth(P.line_pt * 0.8)
    if ctx.contours is not None:
        cb.add_lines(ctx.contours)
        for coll in cb.ax.collections[-1:]:
            coll.set_linewidth(0.35)
    cax.set_gid("colorbar")


def _into_axes(ax: Axes, data: SectionData, opts: SectionOptions, preset: Preset, cmap: Any) -> Axes:
    """Draw on a caller's axes: the section, a geology strip and labels on top, the key below.

    The key (colour bar and legends) is anchored to the axes below its x label; leave room
    for it in the figure (or save with ``bbox_inches='tight'``).
    """
    P = preset
    pt = PT_MM
    fig = ax.figure
    renderer = fig.canvas.get_renderer() if hasattr(fig.canvas, "get_renderer") else fig._get_renderer()
    bb = ax.get_window_extent(renderer)
    ctx = _setup(data, opts, preset, cmap, bb.width / fig.dpi * 25.4)
    _draw_main(ax, data, ctx)
    ax.apply_aspect()
    bb = ax.get_window_extent(renderer)
    w_mm = max(bb.width / fig.dpi * 25.4, 1.0)
    h_mm = max(bb.height / fig.dpi * 25.4, 1.0)
    host = ax
    if len(data.geology) or len(data.faults):
        gap = 0.0
        frac = (2.6 if len(data.geology) else 1.4) / h_mm
        sax = ax.inset_axes((0.0, 1.0 + gap, 1.0, frac), sharex=ax)
        _draw_strip(sax, data, ctx)
        ax.set_xlim(ctx.x0, ctx.x1)
        host = sax
    header_rows = 2 if (len(data.faults) or len(data.bends)) else 0
    if header_rows:
        _header_labels(host, data, ctx, renderer)
    _place_scalebar(ax, data, ctx, renderer)
    _interface_labels(ax, data, ctx, renderer)
    if str(data.start_label).strip() or str(data.end_label).strip():
        _end_labels(host, data, ctx, renderer, 2.0 + (header_rows * P.small_pt * 1.25 + 1.0 if header_rows else 0.0))

    # the key, anchored to the axes below the x label
    xlab_mm = (P.small_pt * 1.3 + P.body_pt * 1.3 + 5.0) * pt
    legends = _build_key(fig, ctx, renderer, w_mm)
    cells: list[tuple[float, float]] = []
    cb_w = 0.0
    if ctx.mesh is not None:
        cb_w = min(55.0, 0.45 * w_mm)
        cells.append((cb_w + 4.0, 2.2 + (2 * P.small_pt * 1.3 + 2.0) * pt))
    cells += [(w, h) for _, w, h in legends]
    pos, _ = _flow(cells, w_mm, 3.0)
    if ctx.mesh is not None:
        cx, cy = pos[0]
        top = xlab_mm + cy + 0.3 * P.small_pt * pt
        cax = ax.inset_axes((cx / w_mm, -(top + 2.2) / h_mm, cb_w / w_mm, 2.2 / h_mm))
        _add_colorbar(fig, cax, ctx)
        pos = pos[1:]
    for (leg, _, _), (lx, ly) in zip(legends, pos):
        leg.set_bbox_to_anchor((lx / w_mm, -(xlab_mm + ly) / h_mm), transform=ax.transAxes)
    if data.title:
        above_pt = 3.0 + (header_rows * P.small_pt * 1.25 + 1.0 if header_rows else 0.0)
        if str(data.start_label).strip() or str(data.end_label).strip():
            above_pt += P.body_pt * 1.5
        host_top = host.get_window_extent(renderer).y1
        y = (host_top - bb.y0 + above_pt / 72.0 * fig.dpi) / bb.height
        ax.set_title(data.title, fontsize=P.title_pt, fontweight="bold", loc="left", y=y, pad=0.0)
    return ax


# ======================================================================================
# public entry points
# ======================================================================================
def draw_section(data: SectionData, options: SectionOptions | None = None, ax: Axes | None = None) -> Axes:
    """Draw the depth section.

    Parameters
    ----------
    data : SectionData
        What to draw (SI units).
    options : SectionOptions, optional
        How to draw it.
    ax : matplotlib Axes, optional
        Draw the section on these axes (with a geology strip on top, a colour bar at the
        right and one legend below; no topography panel and no caption).  By default a
        new figure of the chosen size preset is made with the full layout.

    Returns
    -------
    matplotlib.axes.Axes
        The section axes: x is distance along the line in km, y depth in km (increasing
        downward), a right-hand axis shows elevation in km; the aspect is set so that the
        vertical exaggeration equals ``options.exaggeration``.

    Raises
    ------
    ConfigError
        For an option that cannot be used (size, colour map, ...).
    """
    opts = options or SectionOptions()
    preset, cmap = _check_options(opts)
    with mpl.rc_context(rc_params(preset)):
        if ax is None:
            return _full_figure(data, opts, preset, cmap)
        return _into_axes(ax, data, opts, preset, cmap)


def save_section(
    data: SectionData, out_dir: str | Path, options: SectionOptions | None = None, stem: str = "section"
) -> list[Path]:
    """Draw the section and write ``<stem>.png`` (300 dpi), ``<stem>.svg`` and ``<stem>.pdf``.

    Each file is written atomically (temporary file, then rename).  SVG keeps text as
    ``<text>`` elements; PDF embeds TrueType fonts (Type 42).

    Parameters
    ----------
    data : SectionData
    out_dir : path
        Folder to write into (made if missing).
    options : SectionOptions, optional
    stem : str
        File name without suffix.

    Returns
    -------
    list of Path
        The PNG, SVG and PDF paths.
    """
    opts = options or SectionOptions()
    preset, _ = _check_options(opts)
    out = Path(out_dir)
    ax = draw_section(data, opts)
    fig = ax.figure
    meta_title = data.title or "geosect depth section"
    paths = []
    with mpl.rc_context(rc_params(preset)):
        for suffix, kw in (
            ("png", dict(dpi=300, metadata={"Title": meta_title, "Software": "geosect"})),
            ("svg", dict(metadata={"Title": meta_title, "Creator": "geosect"})),
            ("pdf", dict(metadata={"Title": meta_title, "Creator": "geosect"})),
        ):
            target = out / f"{stem}.{suffix}"
            with atomic_path(target) as tmp:
                fig.savefig(tmp, format=suffix, facecolor="white", **kw)
            paths.append(target)
    return paths


def _smallest_font(fig: Figure) -> float:
    """Smallest size (pt) of the visible, non-empty texts of a figure (used by the tests)."""
    from matplotlib.text import Text

    sizes = [t.get_fontsize() for t in fig.findobj(Text) if t.get_visible() and t.get_text().strip()]
    return min(sizes) if sizes else float("inf")


assert MIN_FONT_PT <= min(p.small_pt for p in PRESETS.values())
