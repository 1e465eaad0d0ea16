"""The reduced travel-time figure (``traveltimes.png``, ``traveltimes.svg``): picks against the model, shot by shot.

Each panel is one shot: the reduced time :math:`t - |x| / v_{red}` (s) of the picks (points with ±1σ
uncertainty bars) and of the model (one line per phase, through the model times at the stations) against
the signed distance :math:`x` from the shot in km (negative towards lower chainage, so both sides of the
shot show), and below it a small panel of the residuals pick − model (s).  The y label states the
reduction velocity, for example ``t − x/8.0 km/s (s)``; the reduction uses the same distance as the x axis.

Up to six shots share a page (two columns); more shots go to further pages (``traveltimes_p2.png``, ...).
Type sizes follow the ``double-column`` preset (:mod:`geosect.plot.fonts`); no text is smaller than
:data:`~geosect.plot.fonts.MIN_FONT_PT`.  Phase colours come from :func:`~geosect.plot.colours.phase_colours`,
labels carry the IASPEI code where the model marks its interfaces' roles.

Artists carry ids for tests and later styling: ``picks:<shot>:<phase>`` (the data line of the picks'
error bars), ``picks_unmodelled:<shot>:<phase>`` (picks without a model time, open symbols),
``model:<shot>:<phase>`` (model curve), ``residuals:<shot>:<phase>``.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from pathlib import Path
from typing import Any

import matplotlib as mpl
import numpy as np
import pandas as pd
from matplotlib.figure import Figure
from matplotlib.lines import Line2D

from ..picks import _canonical_series, phase_label, reduced_time
from .colours import phase_colours
from .fonts import MAX_HEIGHT_MM, MM, get_preset, rc_params, save_png_svg

__all__ = ["draw_traveltimes", "save_traveltimes", "save_traveltime_pages", "signed_distance", "shots_with_picks",
           "reduction_label", "DISTANCES", "PER_PAGE"]

#: What the x axis shows: the geodesic offset signed by the side of the shot, or the along-line distance
#: (receiver chainage − shot chainage).
DISTANCES = ("offset", "line")

#: Shots per page.
PER_PAGE = 6

_PLOTTED = ("ok", "no_model_time")  # pick statuses that are drawn


def reduction_label(reduction_velocity_ms: float) -> str:
    """The y label of the reduced time: ``'t − x/8.0 km/s (s)'``.

    >>> reduction_label(8000.0), reduction_label(6250.0)
    ('t − x/8.0 km/s (s)', 't − x/6.25 km/s (s)')
    """
    v = reduction_velocity_ms / 1e3
    text = f"{v:.1f}" if abs(v * 10 - round(v * 10)) < 1e-9 else f"{v:g}"
    return f"t − x/{text} km/s (s)"


def _xlabel(distance: str) -> str:
    return "offset (km)" if distance == "offset" else "distance along the line from the shot (km)"


def signed_distance(frame: pd.DataFrame, distance: str = "offset") -> np.ndarray:
    """The x of the figure, metres: ``offset_m`` signed like ``line_offset_m``, or ``line_offset_m`` itself.

    NaN where the needed columns are missing or not finite.
    """
    if distance not in DISTANCES:
        raise ValueError(f"distance must be one of {DISTANCES}, not {distance!r}")
    n = len(frame)
    lo = pd.to_numeric(frame["line_offset_m"], errors="coerce").to_numpy(float) if "line_offset_m" in frame \
        else np.full(n, np.nan)
    if distance == "line":
        return lo
    off = pd.to_numeric(frame["offset_m"], errors="coerce").to_numpy(float) if "offset_m" in frame \
        else np.full(n, np.nan)
    return np.where(np.isfinite(lo), np.where(lo < 0, -off, off), np.nan)


def shots_with_picks(table: pd.DataFrame, shot_chainage_m: Mapping[str, float] | None = None,
                     distance: str = "offset") -> list[str]:
    """Shots with drawable picks (usable, with a distance), ordered by chainage where known, else as found."""
    plot = table[table["status"].isin(_PLOTTED)]
    plot = plot[np.isfinite(signed_distance(plot, distance))]
    shots = list(pd.unique(plot["shot_id"].astype(str)))
    if shot_chainage_m:
        pos = {s: i for i, s in enumerate(shots)}

        def key(s: str) -> tuple[int, float]:
            ch = float(shot_chainage_m.get(s, np.nan))
            return (0, ch) if np.isfinite(ch) else (1, float(pos[s]))

        shots.sort(key=key)
    return shots


def draw_traveltimes(table: pd.DataFrame, model_times: pd.DataFrame | None = None, *,
                     shots: Sequence[str] | None = None, reduction_velocity_ms: float = 8000.0,
                     distance: str = "offset", model: Any = None,
                     shot_chainage_m: Mapping[str, float] | None = None, title: str | None = None,
                     preset: str = "double-column", page: tuple[int, int] | None = None) -> Figure:
    """Draw the reduced travel-time figure of some shots (one panel each).

    Parameters
    ----------
    table : DataFrame
        The misfit table (:func:`geosect.picks.misfits`): ``shot_id, phase, time_s, uncertainty_s,
        residual_s, offset_m, line_offset_m, status``.  Picks with status ``ok`` are drawn as filled points,
        ``no_model_time`` as open points; the others are not drawn.
    model_times : DataFrame, optional
        Model times (``shot_id, phase, time_s, status, offset_m, line_offset_m``; the rays table) drawn as
        one line per shot and phase.
    shots : sequence of str, optional
        The shots to draw, in order (default: every shot with drawable picks, see :func:`shots_with_picks`).
    reduction_velocity_ms : float
        Reduction velocity, m/s (stated on the y axis in km/s).
    distance : {'offset', 'line'}
        x axis: signed geodesic offset, or along-line distance (receiver minus shot chainage).  The
        reduction uses the same distance.
    model : LayeredModel, optional
        For the IASPEI codes in the labels.
    shot_chainage_m : mapping, optional
        Shot id → chainage (m), shown in the panel titles.
    title : str, optional
        Figure title.
    preset : str
        Type and page preset (see :mod:`geosect.plot.fonts`).
    page : (int, int), optional
        (this page, number of pages), added to the title.

    Returns
    -------
    matplotlib.figure.Figure
    """
    vred = float(reduction_velocity_ms)
    pr = get_preset(preset)
    table = table.copy()
    table["phase"] = table["phase"].astype(str)
    table["shot_id"] = table["shot_id"].astype(str)
    if shots is None:
        shots = shots_with_picks(table, shot_chainage_m, distance)
    shots = [str(s) for s in shots]
    mt = None
    if model_times is not None and len(model_times):
        mt = model_times[[c for c in ("shot_id", "phase", "time_s", "status", "offset_m", "line_offset_m")
                          if c in model_times.columns]].copy()
        mt["shot_id"] = mt["shot_id"].astype(str)
        mt = mt[mt["shot_id"].isin(shots)]
        mt["phase"] = _canonical_series(mt["phase"])
    drawn = table[table["status"].isin(_PLOTTED) & table["shot_id"].isin(shots)]
    phases = list(pd.unique(drawn["phase"]))
    colours = phase_colours(phases)
    labels = {p: phase_label(p, model) for p in phases}

    n = max(1, len(shots))
    ncols = 1 if n == 1 else 2
    nrows = math.ceil(n / ncols)
    head_mm = 14.0 + (8.0 if title else 0.0)
    height_mm = min(MAX_HEIGHT_MM, head_mm + 64.0 * nrows)
    with mpl.rc_context(rc_params(pr)):
        fig = Figure(figsize=(pr.width_mm * MM, height_mm * MM), layout="constrained")
        if not shots:
            ax = fig.add_subplot()
            ax.text(0.5, 0.5, "no usable picks to draw", transform=ax.transAxes, ha="center", va="center")
            ax.set_axis_off()
        else:
            subs = np.atleast_1d(fig.subfigures(nrows, ncols, squeeze=False)).ravel()
            for i, shot in enumerate(shots):
                last_in_column = i + ncols >= len(shots)
                _panel(subs[i], shot, drawn[drawn["shot_id"] == shot],
                       None if mt is None else mt[mt["shot_id"] == shot], phases, colours, vred, distance,
                       None if shot_chainage_m is None else shot_chainage_m.get(shot), last_in_column, pr)
            handles = [Line2D([], [], color=colours[p], marker="o", ms=3.0, lw=1.0, label=labels[p]) for p in phases]
            handles.append(Line2D([], [], color="0.35", lw=1.0, label="model time"))
            handles.append(Line2D([], [], color="0.35", lw=0, marker="o", ms=3.0, label="pick ± 1σ"))
            if (drawn["status"] == "no_model_time").any():
                handles.append(Line2D([], [], color="0.35", lw=0, marker="o", ms=3.0, mfc="white",
                                      label="pick without a model time"))
            fig.legend(handles=handles, loc="outside lower center", ncols=min(4, len(handles)))
        text = title or ""
        if page is not None and page[1] > 1:
            text = f"{text} ({page[0]}/{page[1]})" if text else f"page {page[0]} of {page[1]}"
        if text:
            fig.suptitle(text)
    return fig


def _panel(sub, shot: str, picks: pd.DataFrame, mt: pd.DataFrame | None, phases: list[str],
           colours: Mapping[str, str], vred: float, distance: str, chainage_m: float | None, xlabel: bool,
           pr) -> None:
    ax, axr = sub.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": [3, 1]})
    here = [p for p in phases if (picks["phase"] == p).any()]
    rmax = 0.0
    for p in here:  # a loop over phases
        c = colours[p]
        if mt is not None:
            cur = mt[mt["phase"] == p]
            if len(cur):
                x = signed_distance(cur, distance)
                t = pd.to_numeric(cur["time_s"], errors="coerce").to_numpy(float)
                t = np.where(cur["status"].to_numpy() == "ok", t, np.nan)
                good_x = np.isfinite(x)
                order = np.argsort(x[good_x], kind="stable")
                xs, ts = x[good_x][order], t[good_x][order]
                ax.plot(xs / 1e3, reduced_time(ts, xs, vred), color=c, lw=0.9, zorder=2, gid=f"model:{shot}:{p}")
        sel = picks[picks["phase"] == p]
        x = signed_distance(sel, distance)
        fin = np.isfinite(x)
        for status, face, gid in (("ok", c, "picks"), ("no_model_time", "white", "picks_unmodelled")):
            m = fin & (sel["status"].to_numpy() == status)
            if not m.any():
                continue
            xs = x[m]
            cont = ax.errorbar(xs / 1e3, reduced_time(sel["time_s"].to_numpy(float)[m], xs, vred),
                               yerr=sel["uncertainty_s"].to_numpy(float)[m], fmt="o", ms=2.2, mew=0.5, mfc=face,
                               mec=c, color=c, elinewidth=0.5, capsize=0, zorder=3)
            cont.lines[0].set_gid(f"{gid}:{shot}:{p}")
        m = fin & (sel["status"].to_numpy() == "ok")
        if m.any():
            r = sel["residual_s"].to_numpy(float)[m]
            u = sel["uncertainty_s"].to_numpy(float)[m]
            cont = axr.errorbar(x[m] / 1e3, r, yerr=u, fmt="o", ms=2.0, mew=0.5, color=c, elinewidth=0.5,
                                capsize=0, zorder=3)
            cont.lines[0].set_gid(f"residuals:{shot}:{p}")
            rmax = max(rmax, float(np.nanmax(np.abs(r) + u)))
    axr.axhline(0.0, color="0.4", lw=0.6, zorder=1)
    lim = max(0.1, 1.1 * rmax)
    axr.set_ylim(-lim, lim)
    ax.set_ylabel(reduction_label(vred))
    axr.set_ylabel("residual (s)")
    ax.tick_params(labelbottom=False)
    if xlabel:
        axr.set_xlabel(_xlabel(distance))
    ax.axvline(0.0, color="0.75", lw=0.5, zorder=0)
    name = shot if chainage_m is None or not np.isfinite(chainage_m) else f"{shot}, chainage {chainage_m / 1e3:.1f} km"
    ax.set_title(name, loc="left", fontsize=pr.body_pt)


def save_traveltimes(fig: Figure, png: str | Path, svg: str | Path | None = None, *,
                     preset: str = "double-column", title: str = "geosect travel times") -> list[Path]:
    """Write the figure as PNG (300 dpi) and SVG, each atomically (temporary file, then rename).

    Returns the paths written.
    """
    return save_png_svg(fig, png, svg, preset=preset, title=title)


def save_traveltime_pages(table: pd.DataFrame, model_times: pd.DataFrame | None, png: str | Path,
                          svg: str | Path | None = None, *, per_page: int = PER_PAGE,
                          output: Callable[[str], Path] | None = None, preset: str = "double-column",
                          **draw_kw: Any) -> list[Path]:
    """Draw every shot with picks, ``per_page`` shots a page, and write the pages.

    Page 1 is ``png`` (and ``svg``); page ``k`` is written beside it as ``<stem>_p<k>.png`` (``.svg``).

    Parameters
    ----------
    table, model_times
        See :func:`draw_traveltimes`.
    png, svg : path
        Files of the first page.
    per_page : int
        Shots per page.
    output : callable, optional
        Turns a file name into the path to write (a build's :meth:`Context.output`, which records it);
        default: beside ``png``.
    draw_kw
        Passed to :func:`draw_traveltimes` (``reduction_velocity_ms``, ``distance``, ``model``,
        ``shot_chainage_m``, ``title``).

    Returns
    -------
    list of Path
        The files written.
    """
    png = Path(png)
    svg = None if svg is None else Path(svg)
    shots = shots_with_picks(table, draw_kw.get("shot_chainage_m"), draw_kw.get("distance", "offset"))
    pages = [shots[i:i + per_page] for i in range(0, len(shots), per_page)] or [[]]
    place = output if output is not None else (lambda name: png.with_name(name))
    written: list[Path] = []
    for k, group in enumerate(pages, 1):  # a loop over pages
        fig = draw_traveltimes(table, model_times, shots=group, preset=preset, page=(k, len(pages)), **draw_kw)
        if k == 1:
            p, s = png, svg
        else:
            p = place(f"{png.stem}_p{k}{png.suffix}")
            s = None if svg is None else place(f"{svg.stem}_p{k}{svg.suffix}")
        written += save_traveltimes(fig, p, s, preset=preset, title=draw_kw.get("title") or "geosect travel times")
    return written
