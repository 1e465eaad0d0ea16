"""Figures of geosect: the depth section (and its colours and type sizes)."""

from .colours import age_colour, crust_colormap, geology_colours
from .fonts import PRESETS, Preset
from .section import (
    HORIZON_SOURCES,
    Horizon,
    Interface,
    RayPath,
    SectionData,
    SectionOptions,
    VelocityGrid,
    apparent_dip_deg,
    draw_section,
    save_section,
)

__all__ = [
    "SectionData",
    "SectionOptions",
    "VelocityGrid",
    "Interface",
    "RayPath",
    "Horizon",
    "HORIZON_SOURCES",
    "apparent_dip_deg",
    "draw_section",
    "save_section",
    "PRESETS",
    "Preset",
    "age_colour",
    "crust_colormap",
    "geology_colours",
]
