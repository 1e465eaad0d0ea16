"""geosect: crooked-line seismic profiles, from field geometry to depth sections.

The core API (see docs/conventions.md for units and signs)::

    from geosect import SurveyLine, LayeredModel

    line = SurveyLine(easting, northing)          # vertices, metres, working CRS
    ch, xl = line.locate(e, n)                    # chainage_m, crossline_m
    model = LayeredModel.flat(tops_m=[0, 20e3, 35e3], vp_ms=[5800, 6500, 8040],
                              names=["surface", "mid-crust", "moho"])
    t = model.traveltime(offset_m, "reflection:moho")
"""

from __future__ import annotations

from typing import Any

__version__ = "0.1.0"
__all__ = ["SurveyLine", "LayeredModel", "GeosectError", "__version__"]


def __getattr__(name: str) -> Any:  # lazy: the command line starts without importing numba or the solvers
    if name == "SurveyLine":
        from .line import SurveyLine

        return SurveyLine
    if name == "LayeredModel":
        from .model import LayeredModel

        return LayeredModel
    if name == "GeosectError":
        from .errors import GeosectError

        return GeosectError
    raise AttributeError(f"module 'geosect' has no attribute {name!r}")
