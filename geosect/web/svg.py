"""The depth-section panel of the map page, written as SVG by our own code.

The panel shows topography, model interfaces, stations, shots and reflection
points against chainage (km, horizontal) and depth below the datum (km, positive
down).  Every station, shot and reflection point is one element with a stable
``id`` (``st-…``, ``sh-…``, ``rp-…``, see :func:`geosect.web.escape.dom_ids`) so
that the page script can highlight it.  The linear mapping between chainage/depth
and SVG user units is returned with the markup, so the script can turn a mouse
position back into a chainage.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Sequence

import numpy as np
import pandas as pd

from .escape import svg_attr, svg_text

__all__ = ["SectionPanel", "SectionSvg", "section_svg", "nice_ticks"]


@dataclass
class SectionPanel:
    """What the in-page section draws besides the points.

    Parameters
    ----------
    topo_chainage_m, topo_elevation_m : array_like, optional
        Topography profile: chainage in metres and elevation above the datum in
        metres (NaN where unknown).
    interfaces : list of (name, chainage_m, depth_m)
        Model interfaces: a name and two arrays, chainage in metres and depth below
        the datum in metres (positive down, NaN where the interface is absent).
    depth_max_m : float, optional
        Bottom of the panel, depth in metres.  Default: the deepest drawn item
        plus 10 %.
    """

    topo_chainage_m: Sequence[float] | np.ndarray | None = None
    topo_elevation_m: Sequence[float] | np.ndarray | None = None
    interfaces: list[tuple[str, Sequence[float] | np.ndarray, Sequence[float] | np.ndarray]] = field(
        default_factory=list
    )
    depth_max_m: float | None = None


@dataclass(frozen=True)
class SectionSvg:
    """SVG markup of the section and its coordinate mapping.

    SVG user units relate to chainage and depth (both metres) by
    ``x = x0 + (chainage - ch0_m) * sx`` and ``y = y0 + (depth - d0_m) * sy``.
    ``left, right, top, bottom`` bound the plot area in user units.
    """

    markup: str
    ch0_m: float
    x0: float
    sx: float
    d0_m: float
    y0: float
    sy: float
    left: float
    right: float
    top: float
    bottom: float
    counts: dict[str, int]

    def mapping(self) -> dict[str, float]:
        """The mapping as plain numbers (for the page's JSON)."""
        return {
            "ch0": self.ch0_m,
            "x0": self.x0,
            "sx": self.sx,
            "d0": self.d0_m,
            "y0": self.y0,
            "sy": self.sy,
            "left": self.left,
            "right": self.right,
            "top": self.top,
            "bottom": self.bottom,
        }


def nice_ticks(lo: float, hi: float, target: int = 6) -> np.ndarray:
    """Round tick positions covering ``[lo, hi]`` with a step of 1, 2 or 5 × 10^k.

    Common practice, no source (the usual "nice numbers" choice for axes).

    >>> nice_ticks(0.0, 47.0).tolist()
    [0.0, 10.0, 20.0, 30.0, 40.0]
    >>> nice_ticks(-2.5, 36.0).tolist()
    [0.0, 10.0, 20.0, 30.0]
    """
    span = float(hi - lo)
    if not np.isfinite(span) or span <= 0:
        return np.array([lo], dtype=float)
    raw = span / max(target, 1)
    mag = 10.0 ** math.floor(math.log10(raw))
    step = next(m * mag for m in (1.0, 2.0, 5.0, 10.0) if m * mag >= raw)
    first = math.ceil(lo / step - 1e-9) * step
    ticks = np.arange(first, hi + step * 1e-9, step)
    return np.round(ticks, 10)


def _fmt(a: np.ndarray) -> np.ndarray:
    """Format user-unit coordinates with one decimal (1/10 px is plenty), no trailing ``.0``."""
    s = np.char.mod("%.1f", np.round(np.asarray(a, dtype=float), 1))
    return _trim(s)


def _trim(s: np.ndarray) -> np.ndarray:
    ends = np.char.endswith(s, ".0")
    out = s.astype(object)
    out[ends] = np.char.rstrip(np.char.rstrip(s[ends], "0"), ".")
    out = out.astype(str)
    out[out == "-0"] = "0"
    return out


def _path_d(x: np.ndarray, y: np.ndarray) -> str:
    """An SVG path through finite points; a NaN breaks the line (new ``M``)."""
    ok = np.isfinite(x) & np.isfinite(y)
    if not ok.any():
        return ""
    start = ok & ~np.concatenate([[False], ok[:-1]])
    cmd = np.where(start, "M", "L")[ok]
    return "".join((np.char.add(np.char.add(np.char.add(cmd, _fmt(x[ok])), ","), _fmt(y[ok]))).tolist())


def _column(df: pd.DataFrame | None, name: str, n: int) -> np.ndarray:
    if df is None or name not in df:
        return np.full(n, np.nan)
    return pd.to_numeric(df[name], errors="coerce").to_numpy(float)


def _concat(*parts: str | np.ndarray) -> np.ndarray:
    """Element-wise concatenation of string arrays and constant strings."""
    out = np.asarray(parts[0], dtype=str)
    for p in parts[1:]:
        out = np.char.add(out, np.asarray(p, dtype=str))
    return out


def _points(df: pd.DataFrame | None, depth: np.ndarray, tx, ty, build) -> tuple[str, int]:
    """One element per row with finite chainage and depth (vectorised string building).

    ``build(mask, ids, x, y)`` returns the element strings; ids are already
    ``[A-Za-z0-9_-]`` tokens and every other value is a number or one of our
    own class names or validated colours, so nothing here needs escaping.
    """
    if df is None or len(df) == 0:
        return "", 0
    ch = _column(df, "chainage_m", len(df))
    ok = np.isfinite(ch) & np.isfinite(depth)
    if not ok.any():
        return "", 0
    ids = df["dom_id"].to_numpy(dtype=str)[ok]
    rows = build(ok, ids, _fmt(tx(ch[ok])), _fmt(ty(depth[ok])))
    return "\n".join(rows.tolist()), int(ok.sum())


def _rp(df: pd.DataFrame, mask: np.ndarray, ids: np.ndarray, x: np.ndarray, y: np.ndarray) -> np.ndarray:
    fill = df["colour"].to_numpy(dtype=str)[mask] if "colour" in df else "#444444"
    return _concat('<circle id="', ids, '" cx="', x, '" cy="', y, '" r="2.5" fill="', fill, '"/>')


def section_svg(
    panel: SectionPanel | None,
    *,
    chainage_range_m: tuple[float, float],
    stations: pd.DataFrame | None = None,
    shots: pd.DataFrame | None = None,
    reflection_points: pd.DataFrame | None = None,
    title: str = "",
    width: int = 1000,
    height: int = 460,
) -> SectionSvg:
    """Draw the depth section as SVG markup.

    Parameters
    ----------
    panel : SectionPanel or None
        Topography, interfaces and depth range.
    chainage_range_m : (float, float)
        Chainage span of the horizontal axis, in metres.
    stations, shots : DataFrame, optional
        Columns ``dom_id`` (from :func:`~geosect.web.escape.dom_ids`),
        ``chainage_m``, ``elevation_m`` (metres above datum; NaN → topography at
        that chainage, else 0) and optionally ``status``.
    reflection_points : DataFrame, optional
        Columns ``dom_id``, ``chainage_m``, ``depth_m`` (metres, positive down),
        ``colour`` (``#rrggbb``) and optionally ``phase_index`` (int).
    title : str
        Text for the SVG ``<desc>`` (escaped).
    width, height : int
        Size of the SVG viewBox in user units.

    Returns
    -------
    SectionSvg
    """
    panel = panel or SectionPanel()
    ch_lo, ch_hi = (float(v) for v in chainage_range_m)
    if not (np.isfinite(ch_lo) and np.isfinite(ch_hi)) or ch_hi <= ch_lo:
        ch_lo, ch_hi = (ch_lo, ch_lo + 1000.0) if np.isfinite(ch_lo) else (0.0, 1000.0)

    tch = np.asarray(panel.topo_chainage_m if panel.topo_chainage_m is not None else [], dtype=float)
    tel = np.asarray(panel.topo_elevation_m if panel.topo_elevation_m is not None else [], dtype=float)
    has_topo = tch.size >= 2 and tch.size == tel.size and np.isfinite(tel).any()
    if has_topo:
        order = np.argsort(tch, kind="stable")
        tch, tel = tch[order], tel[order]
        good = np.isfinite(tch) & np.isfinite(tel)

    def topo_at(ch: np.ndarray) -> np.ndarray:
        if not has_topo:
            return np.zeros_like(ch)
        return np.interp(ch, tch[good], tel[good])

    def surface_depth(df: pd.DataFrame | None) -> np.ndarray:
        if df is None:
            return np.array([])
        n = len(df)
        el = _column(df, "elevation_m", n)
        ch = _column(df, "chainage_m", n)
        el = np.where(np.isfinite(el), el, topo_at(np.nan_to_num(ch)))
        return -el

    st_depth = surface_depth(stations)
    sh_depth = surface_depth(shots)
    rp_depth = _column(reflection_points, "depth_m", 0 if reflection_points is None else len(reflection_points))

    # Vertical range: highest surface point to the deepest item (or depth_max_m).
    tops = [0.0]
    if has_topo:
        tops.append(-np.nanmax(tel))
    for d in (st_depth, sh_depth):
        if np.isfinite(d).any():
            tops.append(np.nanmin(d))
    d_top = min(tops)
    bottoms = [d_top + 1000.0]
    for _, _, dep in panel.interfaces:
        dep = np.asarray(dep, dtype=float)
        if np.isfinite(dep).any():
            bottoms.append(np.nanmax(dep))
    if np.isfinite(rp_depth).any():
        bottoms.append(np.nanmax(rp_depth))
    if panel.depth_max_m is not None and np.isfinite(panel.depth_max_m):
        d_bot = float(panel.depth_max_m)
    else:
        d_bot = max(bottoms)
        d_bot = d_bot + 0.1 * (d_bot - d_top)
    d_top -= 0.04 * (d_bot - d_top)  # room above the highest station symbol

    left, right, top, bottom = 64.0, width - 16.0, 16.0, height - 46.0
    sx = (right - left) / (ch_hi - ch_lo)
    sy = (bottom - top) / (d_bot - d_top)

    def tx(ch):
        return left + (np.asarray(ch, dtype=float) - ch_lo) * sx

    def ty(d):
        return top + (np.asarray(d, dtype=float) - d_top) * sy

    out: list[str] = []
    out.append(
        f'<svg id="gs-svg" xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {width} {height}" '
        f'preserveAspectRatio="xMidYMid meet" role="img" aria-labelledby="gs-svg-title">'
    )
    out.append('<title id="gs-svg-title">Depth section</title>')
    if title:
        out.append(f"<desc>{svg_text(title)}</desc>")
    out.append(
        f'<defs><clipPath id="gs-clip"><rect x="{left}" y="{top}" width="{right - left:.1f}" '
        f'height="{bottom - top:.1f}"/></clipPath></defs>'
    )
    out.append(
        f'<rect id="gs-plot" class="gs-plot" x="{left}" y="{top}" width="{right - left:.1f}" height="{bottom - top:.1f}"/>'
    )

    # Axes: chainage (km) along the bottom, depth (km) on the left.
    ax = ['<g id="gs-axes" class="gs-axes">']
    xt = nice_ticks(ch_lo / 1000.0, ch_hi / 1000.0, target=8)
    xt = xt[(xt * 1000.0 >= ch_lo - 1e-6) & (xt * 1000.0 <= ch_hi + 1e-6)]
    for v, x in zip(xt.tolist(), tx(xt * 1000.0).tolist()):  # a dozen ticks, not data rows
        ax.append(f'<line x1="{x:.1f}" y1="{bottom}" x2="{x:.1f}" y2="{bottom + 5}"/>')
        ax.append(f'<text class="gs-tick" x="{x:.1f}" y="{bottom + 17}" text-anchor="middle">{v:g}</text>')
    yt = nice_ticks(d_top / 1000.0, d_bot / 1000.0, target=6)
    yt = yt[(yt * 1000.0 >= d_top - 1e-6) & (yt * 1000.0 <= d_bot + 1e-6)]
    for v, y in zip(yt.tolist(), ty(yt * 1000.0).tolist()):
        ax.append(f'<line class="gs-grid" x1="{left}" y1="{y:.1f}" x2="{right}" y2="{y:.1f}"/>')
        ax.append(f'<text class="gs-tick" x="{left - 6}" y="{y + 4:.1f}" text-anchor="end">{v:g}</text>')
    ax.append(
        f'<text class="gs-label" x="{(left + right) / 2:.1f}" y="{height - 8}" text-anchor="middle">chainage (km)</text>'
    )
    ax.append(
        f'<text class="gs-label" transform="translate(16 {(top + bottom) / 2:.1f}) rotate(-90)" '
        f'text-anchor="middle">depth below datum (km)</text>'
    )
    ve = sy / sx
    ax.append(
        f'<text class="gs-note" x="{right - 4}" y="{bottom - 6}" text-anchor="end">'
        f"vertical exaggeration {ve:.2g}:1</text>"
    )
    ax.append("</g>")
    out.extend(ax)

    geo = ['<g id="gs-geo" clip-path="url(#gs-clip)">']
    if has_topo:
        d = _path_d(tx(tch), ty(-tel))
        geo.append(f'<path id="gs-topo" class="gs-topo" d="{d}"/>')
    for k, (name, ich, idep) in enumerate(panel.interfaces):  # loop over interfaces (a few)
        ich = np.asarray(ich, dtype=float)
        idep = np.asarray(idep, dtype=float)
        d = _path_d(tx(ich), ty(idep))
        if not d:
            continue
        geo.append(f'<path id="gs-if-{k}" class="gs-iface" data-name="{svg_attr(name)}" d="{d}"/>')
        ok = np.isfinite(ich) & np.isfinite(idep)
        first = np.flatnonzero(ok)[0]
        lx = max(float(tx(ich[first])), left) + 4
        ly = float(ty(idep[first])) - 4
        geo.append(f'<text class="gs-iname" x="{lx:.1f}" y="{ly:.1f}">{svg_text(name)}</text>')
    geo.append("</g>")
    out.extend(geo)

    out.append(
        f'<line id="gs-vcursor" class="gs-vcursor" x1="{left}" y1="{top}" x2="{left}" y2="{bottom}" visibility="hidden"/>'
    )

    counts: dict[str, int] = {}

    def status_cls(df: pd.DataFrame | None, mask: np.ndarray) -> np.ndarray | str:
        if df is None or "status" not in df:
            return ""
        ok = df["status"].fillna("").astype(str).to_numpy()[mask] == "ok"
        return np.where(ok, "", '" class="bad')

    def build_sh(mask, ids, x, y):
        c = status_cls(shots, mask)
        return _concat('<path id="', ids, c, '" d="M', x, ",", y, 'm-5,0l5-5l5,5l-5,5z"/>')

    def build_st(mask, ids, x, y):
        c = status_cls(stations, mask)
        return _concat('<path id="', ids, c, '" d="M', x, ",", y, 'l-4-8h8z"/>')

    # one group per phase (class ph<k>), so a phase can be styled or hidden as a whole
    groups = []
    counts["rp"] = 0
    if reflection_points is not None and len(reflection_points):
        pidx = (
            reflection_points["phase_index"].to_numpy(int)
            if "phase_index" in reflection_points
            else np.zeros(len(reflection_points), dtype=int)
        )
        for k in np.unique(pidx).tolist():  # loop over phases (a few), not points
            sel = pidx == k
            sub = reflection_points[sel].reset_index(drop=True)
            markup, n = _points(sub, rp_depth[sel], tx, ty, lambda m, i, x, y, s=sub: _rp(s, m, i, x, y))
            counts["rp"] += n
            groups.append(f'<g class="ph{k}">{markup}</g>')
    out.append(f'<g id="gs-rp" clip-path="url(#gs-clip)">{"".join(groups)}</g>')
    sh_markup, counts["sh"] = _points(shots, sh_depth, tx, ty, build_sh)
    out.append(f'<g id="gs-sh">{sh_markup}</g>')
    st_markup, counts["st"] = _points(stations, st_depth, tx, ty, build_st)
    out.append(f'<g id="gs-st">{st_markup}</g>')
    out.append("</svg>")
    return SectionSvg(
        markup="\n".join(out),
        ch0_m=float(ch_lo),
        x0=float(left),
        sx=float(sx),
        d0_m=float(d_top),
        y0=float(top),
        sy=float(sy),
        left=left,
        right=right,
        top=top,
        bottom=bottom,
        counts=counts,
    )
