"""The project file ``geosect.toml``: read with :mod:`tomllib`, validated into typed settings.

Every section of the file is a dataclass below; its fields are the keys the section
accepts.  The loader is generic: it walks the dataclass fields, checks each value's
type and allowed choices, resolves file paths against the project folder and
checks that the files exist.  A fault stops with a :class:`~geosect.errors.ConfigError`
that names the file, the key and the fix, and for an unknown key suggests the
closest valid one.

Nothing in the project file is evaluated: values are plain TOML data.
"""

from __future__ import annotations

import difflib
import tomllib
import types
import typing
from dataclasses import MISSING, dataclass, field, fields, is_dataclass
from pathlib import Path
from typing import Any

from .errors import ConfigError

__all__ = [
    "PROJECT_FILE",
    "Settings",
    "ProjectSettings",
    "PointInput",
    "LineSettings",
    "BinningSettings",
    "DemSettings",
    "VectorInput",
    "HypocentreInput",
    "HorizonInput",
    "ModelSettings",
    "PicksInput",
    "RaySettings",
    "CoverageSettings",
    "PlanInput",
    "SectionSettings",
    "MapSettings",
    "load_settings",
    "HEIGHT_REFERENCES",
]

PROJECT_FILE = "geosect.toml"
HEIGHT_REFERENCES = ("geoid", "ellipsoid")


def _meta(doc: str, *, choices: tuple | None = None, is_file: bool = False, columns: tuple | None = None,
          required_columns: tuple = (), minimum: float | None = None, exclusive_min: bool = False) -> dict:
    return {
        "doc": doc,
        "choices": choices,
        "is_file": is_file,
        "columns": columns,
        "required_columns": required_columns,
        "minimum": minimum,
        "exclusive_min": exclusive_min,
    }


def opt(default: Any, doc: str, **kw: Any) -> Any:
    """A field with a default; ``kw`` go to the field's metadata (choices, is_file, ...)."""
    if isinstance(default, (list, dict)):
        return field(default_factory=lambda d=default: type(d)(d), metadata=_meta(doc, **kw))
    return field(default=default, metadata=_meta(doc, **kw))


def req(doc: str, **kw: Any) -> Any:
    """A required field."""
    return field(metadata=_meta(doc, **kw))


# --------------------------------------------------------------------------- sections


@dataclass
class ProjectSettings:
    name: str = opt("geosect project", "Title used in figures, the map page and the report.")
    crs: str = opt("auto", "Working CRS: 'auto' (UTM zone of the data), an EPSG code such as 'EPSG:32633', or WKT.")
    output: str = opt("out", "Output folder, relative to the project folder.")


POINT_COLUMNS = ("id", "x", "y", "elevation", "kind", "depth", "charge", "time")


@dataclass
class PointInput:
    """Stations or shots: a CSV/TSV table or any vector file that geopandas reads."""

    file: Path = req("Table (CSV/TSV) or vector file (GeoPackage, Shapefile, GeoJSON, KML).", is_file=True)
    layer: str | None = opt(None, "Layer name, for files with several layers (GeoPackage).")
    coordinates_crs: str | None = opt(
        None, "CRS of the coordinates in the file, when the file does not carry one (all CSV files)."
    )
    height_reference: str | None = opt(
        None, "What elevations are measured from: 'geoid' (mean sea level) or 'ellipsoid'.", choices=HEIGHT_REFERENCES
    )
    delimiter: str | None = opt(None, "Column separator of a table; guessed from the file when not set.")
    columns: dict = opt(
        {},
        "Which column of the file holds what: id, x, y, elevation, kind, depth (m below ground), charge, time.",
        columns=POINT_COLUMNS,
    )


@dataclass
class LineSettings:
    method: str = opt("file", "How the section line is made: from a 'file', a straight 'fit' through the stations, "
                      "or a 'smooth' line through the stations in order.", choices=("file", "fit", "smooth"))
    file: Path | None = opt(None, "Line file (GeoJSON, GeoPackage, Shapefile, KML, or a CSV of vertices).", is_file=True)
    layer: str | None = opt(None, "Layer name in the line file.")
    coordinates_crs: str | None = opt(None, "CRS of the line vertices when the file carries none.")
    columns: dict = opt({}, "For a CSV of vertices: the x and y columns.", columns=("x", "y"))
    direction: str = opt(
        "as-given",
        "Direction of increasing chainage.",
        choices=("as-given", "south-north", "north-south", "west-east", "east-west"),
    )
    smoothing_km: float = opt(5.0, "Smoothing length for method 'smooth', km.", minimum=0.0, exclusive_min=True)
    spacing_km: float = opt(0.25, "Vertex spacing of a smoothed line, km.", minimum=0.0, exclusive_min=True)
    far_off_line_km: float = opt(10.0, "Points farther than this from the line are flagged far_off_line, km.",
                                 minimum=0.0, exclusive_min=True)
    bend_threshold_deg: float = opt(20.0, "Bends sharper than this are marked on the section, degrees.", minimum=0.0)
    ambiguity_m: float = opt(50.0, "Points whose nearest foot on the line is this close to a second one on another "
                             "part of the line are flagged ambiguous_foot, m.", minimum=0.0)


@dataclass
class BinningSettings:
    bin_m: float = opt(50.0, "CMP bin length along the binning line, m.", minimum=0.0, exclusive_min=True)
    line: str = opt("section", "Binning line: the 'section' line, or a 'smooth' line through the midpoint cloud.",
                    choices=("section", "smooth"))
    smoothing_km: float = opt(2.0, "Smoothing length of a 'smooth' binning line, km.", minimum=0.0, exclusive_min=True)
    spacing_m: float = opt(50.0, "Vertex spacing of a 'smooth' binning line, m.", minimum=0.0, exclusive_min=True)
    max_offset_km: float | None = opt(None, "Only pairs up to this offset are binned, km.", minimum=0.0)
    half_width_m: float = opt(500.0, "Half width of the bin polygons drawn in the geometry file, m.",
                              minimum=0.0, exclusive_min=True)


@dataclass
class DemSettings:
    file: Path = req("Digital elevation model, any raster GDAL reads (GeoTIFF).", is_file=True)
    height_reference: str = req("What the DEM heights are measured from: 'geoid' or 'ellipsoid'.",
                                choices=HEIGHT_REFERENCES)
    band: int = opt(1, "Raster band holding the heights.", minimum=1)


@dataclass
class VectorInput:
    """Geology polygons or fault traces."""

    file: Path = req("Vector file (GeoPackage, Shapefile, GeoJSON, KML).", is_file=True)
    layer: str | None = opt(None, "Layer name, for files with several layers.")
    coordinates_crs: str | None = opt(None, "CRS of the file when it carries none.")
    columns: dict = opt({}, "Attribute columns: unit, age, color, lithology (geology); name, strike, dip (faults).",
                        columns=("unit", "age", "color", "lithology", "name", "strike", "dip"))


@dataclass
class HypocentreInput:
    file: Path = req("Earthquake catalogue: a table or vector file.", is_file=True)
    layer: str | None = opt(None, "Layer name, for files with several layers.")
    coordinates_crs: str | None = opt(None, "CRS of the coordinates, when the file carries none.")
    depth_reference: str = opt("geoid", "What hypocentre depths are measured from: 'geoid' or 'ellipsoid'.",
                               choices=HEIGHT_REFERENCES)
    delimiter: str | None = opt(None, "Column separator of a table; guessed when not set.")
    columns: dict = opt({}, "Columns: x, y, depth_km, magnitude, time, id.",
                        columns=("x", "y", "depth_km", "magnitude", "time", "id"))


@dataclass
class HorizonInput:
    name: str = req("Name shown in the legend.")
    file: Path = req("Horizon file.", is_file=True)
    kind: str = req(
        "What the file holds.",
        choices=("chainage-depth", "chainage-twt", "map-lines", "depth-grid"),
    )
    layer: str | None = opt(None, "Layer name for 'map-lines' in a multi-layer file.")
    columns: dict = opt({}, "Columns: chainage_km, depth_km, twt_s, uncertainty_km (tables); depth_km (map-lines).",
                        columns=("chainage_km", "depth_km", "twt_s", "uncertainty_km"))
    color: str | None = opt(None, "Line colour (a matplotlib colour name or #rrggbb).")
    linestyle: str = opt("dashed", "Line style.", choices=("solid", "dashed", "dotted", "dashdot"))
    swath_km: float | None = opt(None, "For 'map-lines': only parts within this distance of the line, km.",
                                 minimum=0.0)


@dataclass
class ModelSettings:
    file: Path = req("Velocity model file (geosect's model TOML layout, see docs/model-file.md).", is_file=True)
    earth: str = opt("auto", "Earth curvature for 1D times: 'flat', 'spherical', or 'auto' (spherical when offsets "
                     "exceed 100 km).", choices=("auto", "flat", "spherical"))


@dataclass
class PicksInput:
    file: Path = req("Travel-time picks table.", is_file=True)
    delimiter: str | None = opt(None, "Column separator; guessed when not set.")
    columns: dict = opt({}, "Columns: shot_id, station_id, phase, time_s, uncertainty_s.",
                        columns=("shot_id", "station_id", "phase", "time_s", "uncertainty_s"))
    reduction_velocity_kms: float = opt(8.0, "Reduction velocity of the travel-time figure, km/s.",
                                        minimum=0.0, exclusive_min=True)
    default_uncertainty_s: float = opt(0.05, "Pick uncertainty used where the table gives none, s.", minimum=0.0,
                                       exclusive_min=True)


@dataclass
class RaySettings:
    phases: list = opt(["reflection:moho"], "Phases to compute, e.g. 'reflection:moho', 'head:moho', 'S:direct'.")
    frequency_hz: float = opt(8.0, "Dominant frequency for Fresnel zones, Hz.", minimum=0.0, exclusive_min=True)
    max_offset_km: float | None = opt(None, "Only pairs up to this offset, km.", minimum=0.0)
    pairs_file: Path | None = opt(None, "Table of recorded pairs (shot id, station id); all pairs when not set.",
                                  is_file=True)
    offset_mismatch: float = opt(0.05, "Flag pairs whose geodesic and along-line offsets differ by more than this "
                                 "fraction.", minimum=0.0)
    projection_limit_km: float = opt(2.0, "In a 2D model, pairs whose source or receiver lies farther than this from "
                                     "the section line are flagged projected_far (the 2.5D approximation is poor), "
                                     "km.", minimum=0.0)
    grid_spacing_m: float | None = opt(None, "Grid spacing of the first-arrival (eikonal) solver for head waves, "
                                       "direct waves and first arrivals in 2D models, m (default: from the model).",
                                       minimum=0.0, exclusive_min=True)
    smooth_interfaces: bool = opt(False, "Trace 2D rays through interfaces smoothed by a shape-preserving spline "
                                  "(avoids false caustics at interface nodes).")
    path_shots: list | None = opt(None, "Shots whose ray paths are kept for the section figure (default: up to three "
                                  "shots spread along the line).")


@dataclass
class CoverageSettings:
    bin_km: float = opt(2.0, "Chainage bin for the reflection-point fold per interface, km.", minimum=0.0,
                        exclusive_min=True)
    gap_km: float = opt(5.0, "Stretches of an interface without reflection points longer than this are reported "
                        "as gaps, km.", minimum=0.0, exclusive_min=True)
    candidate_spacing_km: float = opt(2.0, "Candidate positions for an added station are tried along the line every "
                                      "this many km.", minimum=0.0, exclusive_min=True)
    candidates: int = opt(5, "How many of the best candidate station positions are listed.", minimum=0)


@dataclass
class PlanInput:
    """A planned survey (stations and shots not yet in the field), computed like the real one."""

    name: str = req("Name of the layout, shown in the report.")
    file: Path | None = opt(None, "Table of planned points (columns kind = station|shot, x, y, optional id, "
                            "depth_m); when not given the layout is made along the section line from the spacings.",
                            is_file=True)
    coordinates_crs: str | None = opt(None, "CRS of the planned points' coordinates.")
    columns: dict = opt({}, "Columns of the table: id, x, y, kind, depth.", columns=("id", "x", "y", "kind", "depth"))
    station_spacing_km: float | None = opt(None, "Station spacing along the section line, km.", minimum=0.0,
                                           exclusive_min=True)
    shot_spacing_km: float | None = opt(None, "Shot spacing along the section line, km.", minimum=0.0,
                                        exclusive_min=True)
    start_km: float = opt(0.0, "Chainage where the planned layout starts, km.")
    end_km: float | None = opt(None, "Chainage where it ends, km (default: the end of the line).")
    shot_depth_m: float = opt(0.0, "Source depth below ground of the planned shots, m.", minimum=0.0)


@dataclass
class SectionSettings:
    swath_km: float = opt(15.0, "Hypocentres and map lines within this distance of the line are projected, km.",
                          minimum=0.0)
    depth_min_km: float = opt(-4.0, "Top of the section, km (negative = above the datum).")
    depth_max_km: float | None = opt(None, "Bottom of the section, km; from the model when not set.")
    exaggeration: float = opt(1.0, "Vertical exaggeration of the section.", minimum=0.0, exclusive_min=True)
    size: str = opt("double-column", "Size preset: 89 mm wide, 183 mm wide (height from the content), or a "
                    "183 x 240 mm page.", choices=("single-column", "double-column", "full-page"))
    topo_panel: bool = opt(True, "Draw an exaggerated topography panel on top.")
    topo_exaggeration: float = opt(5.0, "Vertical exaggeration of the topography panel.", minimum=0.0,
                                   exclusive_min=True)
    show_rays: bool = opt(True, "Draw ray paths.")
    max_rays: int = opt(200, "At most this many ray paths are drawn.", minimum=0)
    phases: list | None = opt(None, "Phases drawn (default: all computed).")
    colormap: str | None = opt(None, "Matplotlib colormap for velocities (default: geosect's own).")
    geology_colours: str = opt("auto", "Where geology colours come from.", choices=("auto", "column", "age", "palette"))
    sample_spacing_m: float | None = opt(None, "Topography sample spacing along the line, m (default: a third of the "
                                         "DEM cell).", minimum=0.0, exclusive_min=True)


@dataclass
class MapSettings:
    chainage_tick_km: float = opt(10.0, "Chainage ticks on the map line every this many km.", minimum=0.0,
                                  exclusive_min=True)
    web_tiles: bool = opt(True, "Offer web map tiles as an optional layer (used only when online).")
    max_midpoints: int = opt(5000, "At most this many midpoints are drawn on the page.", minimum=0)


@dataclass
class Settings:
    """All settings of one project, with paths resolved against the project folder."""

    project: ProjectSettings = field(default_factory=ProjectSettings)
    stations: PointInput | None = None
    shots: PointInput | None = None
    line: LineSettings = field(default_factory=LineSettings)
    binning: BinningSettings = field(default_factory=BinningSettings)
    dem: DemSettings | None = None
    geology: VectorInput | None = None
    faults: VectorInput | None = None
    hypocentres: HypocentreInput | None = None
    horizons: list = field(default_factory=list)  # list[HorizonInput]
    model: ModelSettings | None = None
    picks: PicksInput | None = None
    rays: RaySettings = field(default_factory=RaySettings)
    coverage: CoverageSettings = field(default_factory=CoverageSettings)
    plans: list = field(default_factory=list)  # list[PlanInput]
    section: SectionSettings = field(default_factory=SectionSettings)
    map: MapSettings = field(default_factory=MapSettings)

    # not from the file
    project_dir: Path = field(default=Path("."), metadata={"internal": True})
    source: Path = field(default=Path(PROJECT_FILE), metadata={"internal": True})

    @property
    def output_dir(self) -> Path:
        return (self.project_dir / self.project.output).resolve()


_SECTION_TYPES: dict[str, Any] = {
    "project": ProjectSettings,
    "stations": PointInput,
    "shots": PointInput,
    "line": LineSettings,
    "binning": BinningSettings,
    "dem": DemSettings,
    "geology": VectorInput,
    "faults": VectorInput,
    "hypocentres": HypocentreInput,
    "horizons": [HorizonInput],
    "model": ModelSettings,
    "picks": PicksInput,
    "rays": RaySettings,
    "coverage": CoverageSettings,
    "plans": [PlanInput],
    "section": SectionSettings,
    "map": MapSettings,
}


# --------------------------------------------------------------------------- loading


def _suggest(name: str, valid: typing.Iterable[str]) -> str:
    valid = sorted(valid)
    close = difflib.get_close_matches(name, valid, n=1, cutoff=0.6)
    if close:
        return f"did you mean '{close[0]}'? Valid keys here: {', '.join(valid)}."
    return f"valid keys here: {', '.join(valid)}."


def _type_name(tp: Any) -> str:
    return {str: "a string", float: "a number", int: "a whole number", bool: "true or false", list: "a list",
            dict: "a table", Path: "a file path (string)"}.get(tp, str(tp))


def _base_types(annotation: Any) -> tuple[list[Any], bool]:
    """The accepted base types of an annotation and whether None is allowed."""
    origin = typing.get_origin(annotation)
    if origin in (typing.Union, types.UnionType):
        args = list(typing.get_args(annotation))
        optional = type(None) in args
        return [a for a in args if a is not type(None)], optional
    return [annotation], False


def _convert(value: Any, annotation: Any, key: str, source: Path, meta: dict, project_dir: Path) -> Any:
    bases, optional = _base_types(annotation)
    base = bases[0]
    where = dict(file=source, key=key)
    if value is None:
        if optional:
            return None
        raise ConfigError("a value is required", fix=f"give {key} {_type_name(base)}.", **where)
    if base is float:
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise ConfigError(f"{value!r} is not a number", fix=f"write {key} as a number, for example 10.0.", **where)
        value = float(value)
    elif base is int:
        if isinstance(value, bool) or not isinstance(value, int):
            raise ConfigError(f"{value!r} is not a whole number", fix=f"write {key} as a whole number, e.g. 1.",
                              **where)
    elif base is bool:
        if not isinstance(value, bool):
            raise ConfigError(f"{value!r} is not true or false", fix=f"write {key} = true or {key} = false.", **where)
    elif base is str or base is Path:
        if not isinstance(value, str):
            raise ConfigError(f"{value!r} is not a string", fix=f'write {key} in quotes, for example {key} = "..."',
                              **where)
    elif base is list:
        if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
            raise ConfigError(f"{value!r} is not a list of strings", fix=f'write {key} = ["a", "b"].', **where)
    elif base is dict:
        if not isinstance(value, dict):
            raise ConfigError(f"{value!r} is not a table", fix=f"write [{key}] as a table of name = \"column\".",
                              **where)
        allowed = meta.get("columns") or ()
        for k, v in value.items():
            if allowed and k not in allowed:
                raise ConfigError(f"unknown column role '{k}'", fix=_suggest(k, allowed), file=source,
                                  key=f"{key}.{k}")
            if not isinstance(v, str):
                raise ConfigError(f"{v!r} is not a column name", fix="write the column name in quotes.",
                                  file=source, key=f"{key}.{k}")
        value = dict(value)
    choices = meta.get("choices")
    if choices and value not in choices:
        close = difflib.get_close_matches(str(value), list(choices), n=1, cutoff=0.5)
        hint = f"did you mean '{close[0]}'? " if close else ""
        raise ConfigError(f"{value!r} is not one of {', '.join(map(repr, choices))}",
                          fix=f"{hint}choose one of {', '.join(choices)}.", **where)
    minimum = meta.get("minimum")
    if minimum is not None and isinstance(value, (int, float)):
        bad = value <= minimum if meta.get("exclusive_min") else value < minimum
        if bad:
            rel = ">" if meta.get("exclusive_min") else ">="
            raise ConfigError(f"{value!r} is out of range", fix=f"{key} must be {rel} {minimum}.", **where)
    if meta.get("is_file"):
        path = Path(value).expanduser()
        if not path.is_absolute():
            path = (project_dir / path).resolve()
        if not path.exists():
            raise ConfigError(
                f"file '{value}' does not exist (looked for {path})",
                fix="check the spelling; paths are relative to the project folder.",
                **where,
            )
        value = path
    return value


def _build(cls: Any, table: Any, prefix: str, source: Path, project_dir: Path) -> Any:
    if not isinstance(table, dict):
        raise ConfigError(f"'{prefix}' must be a table", fix=f"write it as a [{prefix}] section.", file=source,
                          key=prefix)
    known = {f.name: f for f in fields(cls) if not f.metadata.get("internal")}
    for k in table:
        if k not in known:
            raise ConfigError(f"unknown key '{k}'", fix=_suggest(k, known), file=source, key=f"{prefix}.{k}")
    hints = typing.get_type_hints(cls)
    kwargs = {}
    for name, f in known.items():
        key = f"{prefix}.{name}"
        if name in table:
            kwargs[name] = _convert(table[name], hints[name], key, source, dict(f.metadata), project_dir)
        elif f.default is MISSING and f.default_factory is MISSING:  # type: ignore[misc]
            raise ConfigError(f"required key '{name}' is missing", fix=f"add {name} = ... to [{prefix}]: "
                              f"{f.metadata.get('doc', '')}", file=source, key=key)
    obj = cls(**kwargs)
    for name, f in known.items():
        req_cols = f.metadata.get("required_columns") or ()
        for c in req_cols:
            if c not in getattr(obj, name):
                raise ConfigError(f"column role '{c}' is not mapped", fix=f"add {c} = \"<column>\" under "
                                  f"[{prefix}.{name}].", file=source, key=f"{prefix}.{name}")
    return obj


def _check_cross(s: Settings, source: Path) -> None:
    for sect in ("stations", "shots"):
        p: PointInput | None = getattr(s, sect)
        if p is None:
            continue
        if "elevation" in p.columns and p.height_reference is None:
            raise ConfigError(
                "elevations are given but not what they are measured from",
                fix=f'add height_reference = "geoid" (above mean sea level) or "ellipsoid" to [{sect}].',
                file=source, key=f"{sect}.height_reference",
            )
    for i, pl in enumerate(s.plans):
        if pl.file is None and (pl.station_spacing_km is None or pl.shot_spacing_km is None):
            raise ConfigError(f"plan '{pl.name}' has neither a file nor both spacings", file=source,
                              key=f"plans[{i}]", fix="give file = \"plan.csv\", or station_spacing_km and "
                              "shot_spacing_km to lay the plan out along the section line.")
        if pl.file is not None and pl.file.suffix.lower() in (".csv", ".tsv", ".txt") and pl.coordinates_crs is None:
            raise ConfigError(f"plan '{pl.name}' is a table without a stated CRS", file=source,
                              key=f"plans[{i}].coordinates_crs", fix='add coordinates_crs = "EPSG:4326" (or the '
                              "table's CRS).")
    if s.line.method == "file" and s.line.file is None:
        raise ConfigError("line method 'file' needs a line file", fix='add file = "line.geojson" to [line], or set '
                          'method = "fit" or "smooth" to build the line from the stations.', file=source,
                          key="line.file")
    if s.line.method in ("fit", "smooth") and s.stations is None:
        raise ConfigError(f"line method '{s.line.method}' builds the line from the stations, but there is no "
                          "[stations] section", fix="add a [stations] section or give a line file.", file=source,
                          key="line.method")


def load_settings(project: str | Path) -> Settings:
    """Read and validate ``geosect.toml`` of a project folder (or the file itself).

    Raises
    ------
    ConfigError
        For a missing or unreadable file, a TOML syntax error, an unknown key,
        a value of the wrong type or out of range, or a missing input file.
    """
    project = Path(project)
    source = project if project.is_file() else project / PROJECT_FILE
    project_dir = source.parent.resolve()
    if not project_dir.exists():
        raise ConfigError(f"project folder '{project}' does not exist",
                          fix="give the folder that holds geosect.toml, or create one with `geosect new DIR`.")
    if not source.exists():
        raise ConfigError(f"no project file {PROJECT_FILE} in '{project_dir}'",
                          fix="create one with `geosect new DIR`, or point to the right folder.", file=source)
    try:
        data = tomllib.loads(source.read_text(encoding="utf-8"))
    except UnicodeDecodeError as exc:
        raise ConfigError(f"not UTF-8 text ({exc.reason})", fix="save the project file as UTF-8.", file=source)
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"TOML syntax error: {exc}", fix="correct the line named; strings need quotes.",
                          file=source) from None
    kwargs: dict[str, Any] = {}
    for k, v in data.items():
        if k not in _SECTION_TYPES:
            raise ConfigError(f"unknown section '{k}'", fix=_suggest(k, _SECTION_TYPES), file=source, key=k)
        cls = _SECTION_TYPES[k]
        if isinstance(cls, list):
            if not isinstance(v, list):
                raise ConfigError(f"'{k}' must be a list of tables", fix=f"write each one as [[{k}]].", file=source,
                                  key=k)
            kwargs[k] = [_build(cls[0], item, f"{k}[{i}]", source, project_dir) for i, item in enumerate(v)]
        else:
            kwargs[k] = _build(cls, v, k, source, project_dir)
    s = Settings(**kwargs, project_dir=project_dir, source=source)
    _check_cross(s, source)
    return s


def describe_keys() -> dict[str, list[tuple[str, str, str, str]]]:
    """Every section and key with its type, default and doc (used for docs and the template)."""
    out: dict[str, list[tuple[str, str, str, str]]] = {}
    for sect, cls in _SECTION_TYPES.items():
        c = cls[0] if isinstance(cls, list) else cls
        hints = typing.get_type_hints(c)
        rows = []
        for f in fields(c):
            bases, optional = _base_types(hints[f.name])
            if f.default is not MISSING:
                default = repr(f.default)
            elif f.default_factory is not MISSING:  # type: ignore[misc]
                default = repr(f.default_factory())  # type: ignore[misc]
            else:
                default = "required"
            tname = _type_name(bases[0]) + (" or none" if optional else "")
            doc = f.metadata.get("doc", "")
            if f.metadata.get("choices"):
                doc += " One of: " + ", ".join(f.metadata["choices"]) + "."
            rows.append((f.name, tname, default, doc))
        out[sect] = rows
    return out


assert all(is_dataclass(c if not isinstance(c, list) else c[0]) for c in _SECTION_TYPES.values())
