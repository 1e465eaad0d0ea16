"""The project file: good files load into typed settings; each kind of fault gives one clear ConfigError."""

from __future__ import annotations

import tomllib
from pathlib import Path

import pytest

from geosect.config import Settings, describe_keys, load_settings
from geosect.errors import ConfigError
from geosect.template import template_text


def test_tiny_project_loads(tiny_project: Path) -> None:
    s = load_settings(tiny_project)
    assert isinstance(s, Settings)
    assert s.stations is not None and s.stations.file == (tiny_project / "stations.csv").resolve()
    assert s.stations.columns["id"] == "code"
    assert s.line.method == "file"
    assert s.line.far_off_line_km == 10.0  # default
    assert s.output_dir == (tiny_project / "out").resolve()


def _edit(project: Path, old: str, new: str) -> None:
    p = project / "geosect.toml"
    text = p.read_text()
    assert old in text
    p.write_text(text.replace(old, new))


def test_misspelled_key_suggests_closest(tiny_project: Path) -> None:
    _edit(tiny_project, "height_reference", "hieght_reference")
    with pytest.raises(ConfigError) as e:
        load_settings(tiny_project)
    msg = e.value.message
    assert "geosect.toml" in msg and "stations.hieght_reference" in msg
    assert "did you mean 'height_reference'" in msg


def test_misspelled_section(tiny_project: Path) -> None:
    _edit(tiny_project, "[line]", "[lines]")
    with pytest.raises(ConfigError, match="did you mean 'line'"):
        load_settings(tiny_project)


def test_missing_file_names_key_and_path(tiny_project: Path) -> None:
    (tiny_project / "stations.csv").unlink()
    with pytest.raises(ConfigError) as e:
        load_settings(tiny_project)
    assert "stations.file" in e.value.message and "does not exist" in e.value.message
    assert "relative to the project folder" in e.value.message


def test_wrong_type(tiny_project: Path) -> None:
    (tiny_project / "geosect.toml").write_text((tiny_project / "geosect.toml").read_text()
                                               + 'far_off_line_km = "ten"\n')
    with pytest.raises(ConfigError, match="line.far_off_line_km.*not a number"):
        load_settings(tiny_project)


def test_bad_choice_suggests(tiny_project: Path) -> None:
    _edit(tiny_project, 'method = "file"', 'method = "fil"')
    with pytest.raises(ConfigError, match="did you mean 'file'"):
        load_settings(tiny_project)


def test_out_of_range(tiny_project: Path) -> None:
    (tiny_project / "geosect.toml").write_text((tiny_project / "geosect.toml").read_text()
                                               + "far_off_line_km = -1.0\n")
    with pytest.raises(ConfigError, match="must be >"):
        load_settings(tiny_project)


def test_unknown_column_role(tiny_project: Path) -> None:
    _edit(tiny_project, 'elevation = "elev_m"', 'elevaton = "elev_m"')
    with pytest.raises(ConfigError, match="did you mean 'elevation'"):
        load_settings(tiny_project)


def test_elevations_need_a_height_reference(tiny_project: Path) -> None:
    _edit(tiny_project, 'height_reference = "geoid"\n', "")
    with pytest.raises(ConfigError, match="height_reference"):
        load_settings(tiny_project)


def test_toml_syntax_error(tiny_project: Path) -> None:
    _edit(tiny_project, 'crs = "auto"', "crs = auto")
    with pytest.raises(ConfigError, match="TOML syntax error"):
        load_settings(tiny_project)


def test_no_project_file(tmp_path: Path) -> None:
    with pytest.raises(ConfigError, match="geosect new"):
        load_settings(tmp_path)


def test_line_file_required_for_method_file(tiny_project: Path) -> None:
    _edit(tiny_project, 'file = "line.geojson"\n', "")
    with pytest.raises(ConfigError, match="line.file"):
        load_settings(tiny_project)


def test_template_is_valid_toml_and_covers_every_section() -> None:
    text = template_text()
    data = tomllib.loads(text)  # the active part parses
    assert {"project", "stations", "shots", "line", "dem"} <= set(data)
    for sect in describe_keys():
        assert f"[{sect}]" in text or f"[[{sect}]]" in text


def test_project_file_reference_is_current() -> None:
    """docs/project-file.md is generated from the settings; regenerate it with tools/gen_project_file_doc.py."""
    root = Path(__file__).resolve().parents[1]
    doc = (root / "docs" / "project-file.md").read_text()
    for sect, rows in describe_keys().items():
        for name, _tname, _default, _doc in rows:
            assert f"| `{name}` |" in doc, f"docs/project-file.md lacks {sect}.{name}: run tools/gen_project_file_doc.py"
