"""The commented template project file written by ``geosect new``."""

from __future__ import annotations

import textwrap

from .config import describe_keys

__all__ = ["template_text"]

# the sections a new project usually fills in, with example values (commented-out keys are optional)
_EXAMPLES = {
    "project": {"name": '"My profile"', "crs": '"auto"', "output": '"out"'},
    "stations": {"file": '"stations.csv"', "coordinates_crs": '"EPSG:4326"', "height_reference": '"geoid"'},
    "shots": {"file": '"shots.csv"', "coordinates_crs": '"EPSG:4326"', "height_reference": '"geoid"'},
    "line": {"method": '"file"', "file": '"line.geojson"', "direction": '"as-given"'},
    "dem": {"file": '"dem.tif"', "height_reference": '"geoid"'},
}
_COLUMNS = {
    "stations": {"id": '"code"', "x": '"lon"', "y": '"lat"', "elevation": '"elev_m"'},
    "shots": {"id": '"shot"', "x": '"lon"', "y": '"lat"', "elevation": '"elev_m"', "depth": '"depth_m"'},
}


def _comment(text: str) -> list[str]:
    return ["# " + line for line in textwrap.wrap(text, 96)]


def template_text() -> str:
    """A complete, commented geosect.toml: the common sections filled in, every other key commented out."""
    out = [
        "# geosect project file. Paths are relative to this folder; distances in the keys' units (_m, _km).",
        "# Every section and key is described in docs/project-file.md. Lines starting with # are comments.",
        "",
    ]
    for sect, rows in describe_keys().items():
        active = sect in _EXAMPLES
        header = f"[[{sect}]]" if sect == "horizons" else f"[{sect}]"
        out.append(header if active else "# " + header)
        for name, tname, default, doc in rows:
            if name == "columns":
                continue
            out.extend(_comment(f"{name}: {doc} ({tname}; default {default})"))
            if active and name in _EXAMPLES[sect]:
                out.append(f"{name} = {_EXAMPLES[sect][name]}")
            else:
                val = default if default not in ("required", "None") else '"..."'
                val = val.replace("'", '"').replace("True", "true").replace("False", "false")
                out.append(f"# {name} = {val}")
        if sect in _COLUMNS:
            out.append(f"[{sect}.columns]")
            out.extend(_comment("which column of the file holds what (roles: id, x, y, elevation, kind, depth, "
                                "charge, time)"))
            out.extend(f"{k} = {v}" for k, v in _COLUMNS[sect].items())
        out.append("")
    return "\n".join(out)
