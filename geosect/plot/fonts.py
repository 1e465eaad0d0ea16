"""Type sizes and page sizes of the geosect figures.

Three presets follow the usual column widths of geoscience journals (common practice,
no source):

=================  ===========  ============  ===========================
preset             width (mm)   height (mm)   type: body / small / title
=================  ===========  ============  ===========================
``single-column``  89           from content  7 / 6 / 8 pt
``double-column``  183          from content  7.5 / 6.5 / 9 pt
``full-page``      183          240           8 / 7 / 10 pt
=================  ===========  ============  ===========================

"From content" means the height follows the section's aspect ratio (its vertical
exaggeration) and the legends, up to :data:`MAX_HEIGHT_MM`.  No text of a figure is set
smaller than :data:`MIN_FONT_PT`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

__all__ = ["MIN_FONT_PT", "MAX_HEIGHT_MM", "MM", "Preset", "PRESETS", "get_preset", "rc_params"]

#: Smallest type size used anywhere in a figure, in points.
MIN_FONT_PT = 6.0

#: Tallest figure the column presets grow to, in millimetres.
MAX_HEIGHT_MM = 240.0

#: Inches per millimetre.
MM = 1.0 / 25.4


@dataclass(frozen=True)
class Preset:
    """A page preset.

    Attributes
    ----------
    name : str
    width_mm : float
        Figure width, in millimetres.
    height_mm : float or None
        Fixed figure height in millimetres, or None to size the height from the content.
    body_pt, small_pt, title_pt : float
        Type sizes in points: axis labels and end labels; ticks, legends, notes and
        caption; the title.
    line_pt : float
        Width of axes frames, in points.
    """

    name: str
    width_mm: float
    height_mm: float | None
    body_pt: float
    small_pt: float
    title_pt: float
    line_pt: float = 0.6


PRESETS: dict[str, Preset] = {
    "single-column": Preset("single-column", 89.0, None, 7.0, 6.0, 8.0, 0.5),
    "double-column": Preset("double-column", 183.0, None, 7.5, 6.5, 9.0, 0.6),
    "full-page": Preset("full-page", 183.0, 240.0, 8.0, 7.0, 10.0, 0.7),
}


def get_preset(name: str) -> Preset:
    """Return the preset called ``name``; raises KeyError when there is none."""
    return PRESETS[name]


def rc_params(preset: Preset) -> dict[str, Any]:
    """matplotlib settings for a preset (use with ``matplotlib.rc_context``).

    Text stays text in vector output: ``svg.fonttype='none'`` and TrueType (Type 42) fonts
    in PDF and PostScript.
    """
    return {
        "font.family": "sans-serif",
        "font.sans-serif": ["DejaVu Sans", "Liberation Sans", "Arial", "sans-serif"],
        "font.size": preset.body_pt,
        "axes.labelsize": preset.body_pt,
        "axes.titlesize": preset.title_pt,
        "axes.linewidth": preset.line_pt,
        "xtick.labelsize": preset.small_pt,
        "ytick.labelsize": preset.small_pt,
        "xtick.major.width": preset.line_pt,
        "ytick.major.width": preset.line_pt,
        "xtick.major.size": 2.5,
        "ytick.major.size": 2.5,
        "xtick.minor.size": 1.5,
        "ytick.minor.size": 1.5,
        "xtick.direction": "out",
        "ytick.direction": "out",
        "legend.fontsize": preset.small_pt,
        "legend.title_fontsize": preset.small_pt,
        "legend.frameon": False,
        "figure.titlesize": preset.title_pt,
        "axes.unicode_minus": True,
        "svg.fonttype": "none",
        "pdf.fonttype": 42,
        "ps.fonttype": 42,
        "savefig.facecolor": "white",
        "figure.facecolor": "white",
    }


def save_png_svg(fig, png, svg=None, *, preset: str = "double-column", title: str = "geosect") -> list:
    """Write a figure as PNG (300 dpi) and SVG (text kept as text), each atomically (temporary file, then rename).

    The figure is laid out once, so both formats show the same layout.  Returns the paths written.
    """
    import matplotlib as mpl
    from pathlib import Path

    from ..io.atomic import atomic_path

    out = []
    with mpl.rc_context(rc_params(get_preset(preset))):
        if fig.get_layout_engine() is not None:  # lay the figure out once for both formats
            fig.draw_without_rendering()
            fig.set_layout_engine("none")
        for target, fmt, kw in ((png, "png", dict(dpi=300, metadata={"Title": title, "Software": "geosect"})),
                                (svg, "svg", dict(metadata={"Title": title, "Creator": "geosect"}))):
            if target is None:
                continue
            with atomic_path(target) as tmp:
                fig.savefig(tmp, format=fmt, facecolor="white", **kw)
            out.append(Path(target))
    return out
