"""The linked HTML page: an offline map and the depth section, linked both ways.

>>> from geosect.web import MapData, write_map          # doctest: +SKIP
>>> write_map(MapData(title="Synthetic line", line=line_table), "out/map.html")  # doctest: +SKIP
"""

from __future__ import annotations

from .escape import css_colours, dom_ids, html_attr, html_text, js_string, script_json, svg_attr, svg_text
from .hillshade import Hillshade, hillshade_overlay
from .page import MapData, build_page, write_map
from .svg import SectionPanel, SectionSvg, section_svg

__all__ = [
    "MapData",
    "SectionPanel",
    "SectionSvg",
    "Hillshade",
    "write_map",
    "build_page",
    "hillshade_overlay",
    "section_svg",
    "html_text",
    "html_attr",
    "js_string",
    "script_json",
    "svg_text",
    "svg_attr",
    "dom_ids",
    "css_colours",
]
