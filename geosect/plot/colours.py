"""Colours of the geosect figures: velocity map, phase and geology palettes, age colours.

Everything here is plain data and small vectorised helpers; nothing draws.

* :func:`crust_colormap` builds ``geosect-crust``, our default velocity colour map.  Its
  lightness falls linearly in CIELAB L* from near-white (slow rocks) to a mid-tone blue
  (fast mantle), so equal steps of velocity read as equal steps of lightness, it prints
  sensibly in grey and it stays light enough for rays and symbols drawn on top.
* :data:`PHASE_COLOURS`, :data:`GEOLOGY_PALETTE`, :data:`HORIZON_COLOURS` are our own
  qualitative palettes.
* :data:`AGE_COLOURS` maps chronostratigraphic names (eons, eras, periods, Cenozoic epochs,
  Mesozoic series) to the colours of the International Chronostratigraphic Chart
  (ICS/CGMW).  **The RGB values were typed from memory** of the chart and have not been
  checked against a printed copy; correct them here if a unit looks wrong.
"""

from __future__ import annotations

import re
from typing import Iterable, Sequence

import numpy as np
import pandas as pd
from matplotlib import colormaps
from matplotlib.colors import Colormap, ListedColormap, is_color_like, to_hex

__all__ = [
    "AGE_COLOURS",
    "PHASE_COLOURS",
    "GEOLOGY_PALETTE",
    "HORIZON_COLOURS",
    "GROUND_COLOUR",
    "COVERAGE_COLOURS",
    "CROSSLINE_FILLS",
    "lab_to_srgb",
    "crust_colormap",
    "get_colormap",
    "age_colour",
    "geology_colours",
    "phase_colours",
]

#: Qualitative colours for seismic phases (rays, reflection points), in the order phases
#: first appear.  Dark enough to read on the light velocity map.
PHASE_COLOURS: tuple[str, ...] = (
    "#b5172f",  # crimson
    "#1f4e9c",  # blue
    "#127a5a",  # green
    "#7a3fa0",  # violet
    "#5d6b00",  # olive
    "#0a7f99",  # teal
    "#cc3f8c",  # pink
    "#4d4d4d",  # dark grey
)

#: Soft qualitative colours for geological units without a colour of their own.
GEOLOGY_PALETTE: tuple[str, ...] = (
    "#e6c9a1",
    "#a9c6e0",
    "#c7dca7",
    "#e2aac3",
    "#c6b3df",
    "#a6dccf",
    "#e5dca5",
    "#d3b59c",
    "#b6cfb2",
    "#c3c4dc",
)

#: Line colours for interpreted horizons.
HORIZON_COLOURS: tuple[str, ...] = ("#111111", "#6a2c91", "#8a3b12", "#0f5257", "#7a6a00")

#: Fill of the ground between the topography and the top of the velocity model.
GROUND_COLOUR = "#d8d0c2"

#: Light and dark end of the reflection-coverage ramp drawn along interfaces.
COVERAGE_COLOURS: tuple[str, str] = ("#f3e3cf", "#7f3b08")

#: Fills of station/shot symbols by crossline class, nearest class first.
CROSSLINE_FILLS: tuple[str, ...] = ("#1a1a1a", "#6b6b6b", "#b3b3b3", "#ffffff")

# --------------------------------------------------------------------------------------
# International Chronostratigraphic Chart colours (ICS/CGMW).  Values typed FROM MEMORY
# of the chart; not checked against the published RGB table.
# --------------------------------------------------------------------------------------
AGE_COLOURS: dict[str, str] = {
    # eons
    "phanerozoic": "#9AD9DD",
    "proterozoic": "#F73563",
    "archean": "#F0047F",
    "hadean": "#AE027E",
    # eras
    "cenozoic": "#F2F91D",
    "mesozoic": "#67C5CA",
    "paleozoic": "#99C08D",
    "neoproterozoic": "#FEB342",
    "mesoproterozoic": "#FDB462",
    "paleoproterozoic": "#F74370",
    # periods
    "quaternary": "#F9F97F",
    "neogene": "#FFE619",
    "paleogene": "#FD9A52",
    "cretaceous": "#7FC64E",
    "jurassic": "#34B2C9",
    "triassic": "#812B92",
    "permian": "#F04028",
    "carboniferous": "#67A599",
    "devonian": "#CB8C37",
    "silurian": "#B3E1B6",
    "ordovician": "#009270",
    "cambrian": "#7FA056",
    "ediacaran": "#FED96A",
    "cryogenian": "#FECC5C",
    "tonian": "#FEBF4E",
    # Cenozoic epochs
    "holocene": "#FEF2E0",
    "pleistocene": "#FFF2AE",
    "pliocene": "#FFFF99",
    "miocene": "#FFFF00",
    "oligocene": "#FEC07A",
    "eocene": "#FDB46C",
    "paleocene": "#FDA75F",
    # Mesozoic series (Upper = Late, Lower = Early)
    "upper cretaceous": "#A6D84A",
    "lower cretaceous": "#8CCD57",
    "upper jurassic": "#B3E3EE",
    "middle jurassic": "#80CFD8",
    "lower jurassic": "#42AED0",
    "upper triassic": "#BD8CC3",
    "middle triassic": "#B168B1",
    "lower triassic": "#983999",
}

# spelling variants and informal names that readers use
_AGE_ALIASES: dict[str, str] = {
    "palaeozoic": "paleozoic",
    "palaeogene": "paleogene",
    "palaeocene": "paleocene",
    "palaeoproterozoic": "paleoproterozoic",
    "archaean": "archean",
    "tertiary": "paleogene",  # informal; takes the older of its two periods
    "precambrian": "proterozoic",  # informal; shown with the Proterozoic colour
}

_SERIES_WORDS = {"late": "upper", "upper": "upper", "middle": "middle", "mid": "middle",
                 "early": "lower", "lower": "lower"}


def lab_to_srgb(lab: np.ndarray) -> np.ndarray:
    """Convert CIELAB colours (D65 white) to sRGB in [0, 1], clipping out-of-gamut values.

    Parameters
    ----------
    lab : array_like, shape (..., 3)
        L* (0-100), a*, b*.

    Returns
    -------
    numpy.ndarray, shape (..., 3)
        sRGB components in [0, 1] (gamma-encoded).

    Notes
    -----
    CIE 15:2004 (Colorimetry, 3rd ed.) for Lab to XYZ; IEC 61966-2-1 (sRGB) for the
    XYZ-to-linear-RGB matrix and the transfer function.

    >>> np.round(lab_to_srgb([100.0, 0.0, 0.0]), 3).tolist()
    [1.0, 1.0, 1.0]
    """
    lab = np.asarray(lab, dtype=float)
    L, a, b = lab[..., 0], lab[..., 1], lab[..., 2]
    fy = (L + 16.0) / 116.0
    fx = fy + a / 500.0
    fz = fy - b / 200.0
    eps = 6.0 / 29.0

    def finv(t: np.ndarray) -> np.ndarray:
        return np.where(t > eps, t**3, 3.0 * eps**2 * (t - 4.0 / 29.0))

    white = np.array([0.95047, 1.0, 1.08883])
    xyz = np.stack([finv(fx), finv(fy), finv(fz)], axis=-1) * white
    m = np.array(
        [
            [3.2406, -1.5372, -0.4986],
            [-0.9689, 1.8758, 0.0415],
            [0.0557, -0.2040, 1.0570],
        ]
    )
    rgb_lin = np.clip(xyz @ m.T, 0.0, 1.0)
    return np.where(rgb_lin <= 0.0031308, 12.92 * rgb_lin, 1.055 * rgb_lin ** (1 / 2.4) - 0.055)


def crust_colormap(n: int = 256) -> ListedColormap:
    """The ``geosect-crust`` colour map: lightness linear in CIELAB L*, sand to blue.

    L* falls from 96 to 52 along the map while the hue turns from sand (85°) through sage
    and teal to steel blue (260°) at a modest chroma, so the map is ordered by lightness,
    reads in grey-scale print and leaves room for coloured overlays.

    Parameters
    ----------
    n : int
        Number of colours.
    """
    t = np.linspace(0.0, 1.0, n)
    L = 96.0 - 44.0 * t
    chroma = 20.0 + 12.0 * np.sin(np.pi * t)
    hue = np.radians(85.0 + 175.0 * t)
    lab = np.stack([L, chroma * np.cos(hue), chroma * np.sin(hue)], axis=-1)
    return ListedColormap(lab_to_srgb(lab), name="geosect-crust")


def get_colormap(name: str | Colormap) -> Colormap:
    """Return a colour map by name: ``'geosect-crust'`` or any registered matplotlib map.

    Raises
    ------
    KeyError
        If the name is unknown (the caller turns it into a ConfigError).
    """
    if isinstance(name, Colormap):
        return name
    if name in ("geosect-crust", "geosect-crust_r"):
        cmap = crust_colormap()
        return cmap.reversed() if name.endswith("_r") else cmap
    return colormaps[name]


def _norm_age(text: str) -> str:
    words = re.sub(r"[^a-z ]+", " ", text.lower()).split()
    return " ".join(_AGE_ALIASES.get(w, w) for w in words)


_AGE_KEYS_LONGEST_FIRST = sorted(AGE_COLOURS, key=len, reverse=True)


def age_colour(age: str | None) -> str | None:
    """Chart colour of a chronostratigraphic name, or None when the name is not known.

    Recognises eons, eras, periods, Cenozoic epochs and the Upper/Middle/Lower series of
    the Mesozoic periods ("Late Jurassic" = "Upper Jurassic").  A compound such as
    "Permo-Triassic" or "Jurassic-Cretaceous" takes the colour of its first known word;
    "Early Miocene" falls back to "Miocene".

    >>> age_colour("Late Jurassic")
    '#B3E3EE'
    >>> age_colour("Jurassic")
    '#34B2C9'
    >>> age_colour("Sandstone") is None
    True
    """
    if age is None or (isinstance(age, float) and np.isnan(age)):
        return None
    text = _norm_age(str(age))
    if not text:
        return None
    if text in AGE_COLOURS:
        return AGE_COLOURS[text]
    words = text.split()
    # "late jurassic" -> "upper jurassic"
    for i, w in enumerate(words[:-1]):
        if w in _SERIES_WORDS:
            key = f"{_SERIES_WORDS[w]} {words[i + 1]}"
            if key in AGE_COLOURS:
                return AGE_COLOURS[key]
    # first known word, preferring the longest names ("paleoproterozoic" over "proterozoic")
    best: tuple[int, str] | None = None
    for key in _AGE_KEYS_LONGEST_FIRST:
        if " " in key:
            continue
        m = re.search(rf"\b{key}\b", text)
        if m is None:
            m = re.search(rf"{key}", text)  # "permo-triassic" -> "triassic" inside a word
        if m is not None and (best is None or m.start() < best[0]):
            best = (m.start(), key)
    return AGE_COLOURS[best[1]] if best else None


def geology_colours(
    units: Sequence[str],
    ages: Sequence[str | None] | None = None,
    colours: Sequence[str | None] | None = None,
    mode: str = "auto",
) -> dict[str, str]:
    """One fill colour per geological unit.

    Parameters
    ----------
    units : sequence of str
        Unit name of each interval (repeats allowed).
    ages : sequence of str or None, optional
        Age of each interval, matched with :func:`age_colour`.
    colours : sequence of str or None, optional
        Colour given for each interval (any matplotlib colour).
    mode : {'auto', 'column', 'age', 'palette'}
        ``'column'``: the given colour; ``'age'``: the chart colour of the age;
        ``'palette'``: :data:`GEOLOGY_PALETTE` in order of first appearance; ``'auto'``: the
        given colour, else the age colour, else the palette.  Any unit that the chosen rule
        cannot colour (no or invalid colour, unknown age) takes the next palette colour.

    Returns
    -------
    dict
        unit name -> hex colour, in order of first appearance.  The first interval of a
        unit decides its colour.
    """
    units = [str(u) for u in units]
    n = len(units)
    ages = list(ages) if ages is not None else [None] * n
    colours = list(colours) if colours is not None else [None] * n
    out: dict[str, str] = {}
    k = 0
    first = pd.Series(units).drop_duplicates().index.to_numpy()  # first interval of each unit
    for i in first:
        unit, age, col = units[i], ages[i], colours[i]
        chosen: str | None = None
        given = col if isinstance(col, str) and col.strip() and is_color_like(col.strip()) else None
        if mode in ("auto", "column") and given is not None:
            chosen = to_hex(given.strip())
        if chosen is None and mode in ("auto", "age"):
            chosen = age_colour(age)
        if chosen is None:
            chosen = GEOLOGY_PALETTE[k % len(GEOLOGY_PALETTE)]
            k += 1
        out[unit] = chosen
    return out


def phase_colours(phases: Iterable[str]) -> dict[str, str]:
    """Map phase names to :data:`PHASE_COLOURS` in order of first appearance."""
    out: dict[str, str] = {}
    for p in phases:
        if p not in out:
            out[p] = PHASE_COLOURS[len(out) % len(PHASE_COLOURS)]
    return out
