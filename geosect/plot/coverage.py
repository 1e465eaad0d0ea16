"""The coverage figure (``coverage.png``, ``coverage.svg``): fold along chainage, one panel per interface.

Each panel shows the number of reflection points per chainage bin on one
interface (a stepped line over the bin edges, its y data the fold with the last
value repeated: the survey solid, planned layouts dashed), with the
survey's gaps longer than the gap threshold shaded.  Chainage in km on x.  Type
sizes follow the ``double-column`` preset (:mod:`geosect.plot.fonts`); no text is
smaller than :data:`~geosect.plot.fonts.MIN_FONT_PT`.  Where a dense part of the
survey would flatten the rest (largest fold over :data:`LOG_FOLD_RATIO` times the median),
the fold axis is linear up to 1 and logarithmic above.

Artists carry ids for tests and later styling: ``fold:<phase>`` (the survey),
``fold:<phase>:<layout>`` (a plan), ``gap:<phase>`` (shaded gaps).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from pathlib import Path

import matplotlib as mpl
import numpy as np
from matplotlib.figure import Figure
from matplotlib.patches import Patch
from matplotlib.ticker import FuncFormatter

from ..coverage import InterfaceCoverage
from .fonts import MAX_HEIGHT_MM, MM, get_preset, rc_params, save_png_svg

__all__ = ["draw_coverage", "save_coverage", "PLAN_STYLES", "LOG_FOLD_RATIO"]

#: Line styles and colours of planned layouts, in order (the survey is solid black).
PLAN_STYLES: tuple[tuple[str, str], ...] = (("--", "#c0392b"), (":", "#1f6fb2"), ("-.", "#2e8b57"),
                                             ((0, (5, 1, 1, 1)), "#8e44ad"))
_GAP_COLOUR = "#f3c9a8"
#: The fold axis turns logarithmic (above 1) when the largest fold exceeds this many times the median of the
#: bins with points.
LOG_FOLD_RATIO = 20.0


def draw_coverage(survey: Sequence[InterfaceCoverage], plans: Mapping[str, Sequence[InterfaceCoverage]] | None = None,
                  *, title: str | None = None, preset: str = "double-column") -> Figure:
    """Draw the fold along chainage per interface.

    Parameters
    ----------
    survey : sequence of InterfaceCoverage
        The survey's coverage, one per reflection phase (one panel each).
    plans : mapping, optional
        Layout name → its coverages (matched to the panels by phase).
    title : str, optional
        Figure title.
    preset : str
        Type and page preset (see :mod:`geosect.plot.fonts`).

    Returns
    -------
    matplotlib.figure.Figure
    """
    plans = dict(plans or {})
    pr = get_preset(preset)
    n = max(1, len(survey))
    height_mm = min(MAX_HEIGHT_MM, 22.0 + 40.0 * n + (8.0 if title else 0.0))
    with mpl.rc_context(rc_params(pr)):
        fig = Figure(figsize=(pr.width_mm * MM, height_mm * MM), layout="constrained")
        axes = fig.subplots(n, 1, sharex=True, squeeze=False)[:, 0]
        if not survey:
            axes[0].text(0.5, 0.5, "no reflection points", transform=axes[0].transAxes, ha="center", va="center")
        for ax, cov in zip(axes, survey):
            _panel(ax, cov, plans)
        axes[-1].set_xlabel("chainage (km)")
        if title:
            fig.suptitle(title)
    return fig


def _steps(cov: InterfaceCoverage) -> tuple[np.ndarray, np.ndarray]:
    """Bin edges (km) and the fold with its last value repeated, for a ``steps-post`` line over whole bins."""
    return cov.edges_m / 1e3, np.append(cov.fold, cov.fold[-1:]).astype(float)


def _panel(ax, cov: InterfaceCoverage, plans: Mapping[str, Sequence[InterfaceCoverage]]) -> None:
    bin_km = float(np.diff(cov.edges_m[:2])[0]) / 1e3 if cov.edges_m.size > 1 else float("nan")
    for a, b in zip(cov.gap_start_m, cov.gap_end_m):
        ax.axvspan(a / 1e3, b / 1e3, color=_GAP_COLOUR, lw=0, zorder=0, gid=f"gap:{cov.phase}")
    ax.plot(*_steps(cov), drawstyle="steps-post", color="black", lw=1.0, label="survey", gid=f"fold:{cov.phase}",
            zorder=3)
    top = float(cov.fold.max()) if cov.fold.size else 0.0
    for i, (name, covs) in enumerate(plans.items()):
        match = next((c for c in covs if c.phase == cov.phase), None)
        if match is None:
            continue
        ls, colour = PLAN_STYLES[i % len(PLAN_STYLES)]
        ax.plot(*_steps(match), drawstyle="steps-post", ls=ls, color=colour, lw=0.9,
                label=name, gid=f"fold:{cov.phase}:{name}", zorder=2)
        top = max(top, float(match.fold.max()) if match.fold.size else 0.0)
    ax.set_xlim(cov.edges_m[0] / 1e3, cov.edges_m[-1] / 1e3)
    nonzero = cov.fold[cov.fold > 0]
    if nonzero.size and top > LOG_FOLD_RATIO * float(np.median(nonzero)):
        # a dense part of the survey would flatten the rest: linear up to 1, logarithmic above
        ax.set_yscale("symlog", linthresh=1.0, linscale=0.5)
        ax.yaxis.set_major_formatter(FuncFormatter(lambda v, _pos: f"{v:g}"))
        ax.set_ylim(0, max(1.0, top) * 1.6)
    else:
        ax.set_ylim(0, max(1.0, top) * 1.08)
    ax.set_ylabel(f"fold (points per {bin_km:g} km)")
    ax.set_title(cov.label, loc="left")
    handles, labels = ax.get_legend_handles_labels()
    if cov.n_gaps:
        handles.append(Patch(color=_GAP_COLOUR, lw=0))
        labels.append(f"gap > {cov.gap_m / 1e3:g} km")
    ax.legend(handles, labels, loc="upper right", ncol=min(4, len(labels)))


def save_coverage(fig: Figure, png: str | Path, svg: str | Path | None = None, *,
                  preset: str = "double-column", title: str = "geosect coverage") -> list[Path]:
    """Write the figure as PNG (300 dpi) and SVG, each atomically (temporary file, then rename).

    Returns the paths written.
    """
    return save_png_svg(fig, png, svg, preset=preset, title=title)
