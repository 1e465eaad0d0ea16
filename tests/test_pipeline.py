"""The build skeleton: stages in order, skipped with a reason, atomic outputs, errors → exit codes."""

from __future__ import annotations

from pathlib import Path

import pytest

from geosect import pipeline
from geosect.cli.main import main, run_guarded
from geosect.config import load_settings
from geosect.errors import InputError
from geosect.io.atomic import atomic_path, write_text
from geosect.pipeline import Context, Progress, run_stages
from geosect.report import Report


def test_atomic_writer_leaves_old_file_on_failure(tmp_path: Path) -> None:
    target = tmp_path / "table.csv"
    write_text(target, "old\n")
    with pytest.raises(RuntimeError):
        with atomic_path(target) as tmp:
            tmp.write_text("half a ")
            raise RuntimeError("disk full")
    assert target.read_text() == "old\n"
    assert [p.name for p in tmp_path.iterdir()] == ["table.csv"]  # no temporary left behind


def test_failing_stage_leaves_no_half_written_file(tiny_project: Path) -> None:
    s = load_settings(tiny_project)
    out = tiny_project / "out"
    ctx = Context(s, out, Report("t"), Progress(quiet=True))

    def bad(ctx: Context) -> None:
        with atomic_path(ctx.output("broken.csv")) as tmp:
            tmp.write_text("id,x\n1,")
            raise InputError("row 2 is broken", file="x.csv")

    stage = pipeline.Stage("bad", "a failing stage", bad)
    with pytest.raises(InputError):
        run_stages(ctx, [stage])
    assert not (out / "broken.csv").exists()
    assert not any(out.glob(".broken*")) if out.exists() else True


def test_stage_skipped_with_reason(tiny_project: Path) -> None:
    s = load_settings(tiny_project)
    ctx = Context(s, tiny_project / "out", Report("t"), Progress(quiet=True))
    ran = []
    st1 = pipeline.Stage("needs_dem", "needs a DEM", lambda c: ran.append(1), needs=("settings:dem",))
    st2 = pipeline.Stage("makes_x", "makes x", lambda c: ran.append(2), needs=("settings:dem",), provides=("x",))
    res = run_stages(ctx, [st1, st2])
    assert ran == [] and res.skipped["needs_dem"] == "no [dem] section in the project file"


def test_build_writes_outputs_and_report(tiny_project: Path) -> None:
    s = load_settings(tiny_project)
    res = pipeline.build(s, progress=Progress(quiet=True))
    out = tiny_project / "out"
    assert (out / "report.md").exists() and (out / "stations.csv").exists()
    text = (out / "report.md").read_text()
    assert "## Build" in text and "## Working CRS" in text
    from geosect.report import md_escape

    assert res.skipped, "the tiny project has no shots: the stages that need them are skipped"
    for name, why in res.skipped.items():
        assert name in text and md_escape(why) in text


def test_run_guarded_exit_codes(capsys: pytest.CaptureFixture) -> None:
    def user_fault() -> int:
        raise InputError("value 'x' is not a number", file="a.csv", row=3, column="lat", fix="write a number.")

    def bug() -> int:
        raise ZeroDivisionError("oops")

    assert run_guarded(user_fault) == 2
    err = capsys.readouterr().err
    assert "a.csv, row 3, column 'lat'" in err and "Fix: write a number." in err and "Traceback" not in err
    assert run_guarded(bug) == 1
    err = capsys.readouterr().err
    assert "unexpected failure" in err and "Traceback" not in err
    assert run_guarded(bug, debug=True) == 1
    assert "Traceback" in capsys.readouterr().err


def test_cli_check_ok_and_bad(tiny_project: Path, capsys: pytest.CaptureFixture) -> None:
    assert main(["check", str(tiny_project)]) == 0
    out = capsys.readouterr().out
    assert "Working CRS" in out and "UTM zone 24N" in out
    # a misspelled key: exit 2, one message, no traceback
    p = tiny_project / "geosect.toml"
    p.write_text(p.read_text().replace("coordinates_crs", "coordinate_crs"))
    assert main(["check", str(tiny_project)]) == 2
    err = capsys.readouterr().err
    assert "did you mean 'coordinates_crs'" in err and "Traceback" not in err


def test_cli_missing_crs_exit_2(tiny_project: Path, capsys: pytest.CaptureFixture) -> None:
    p = tiny_project / "geosect.toml"
    p.write_text(p.read_text().replace('coordinates_crs = "EPSG:4326"\n', ""))
    assert main(["check", str(tiny_project)]) == 2
    err = capsys.readouterr().err
    assert "stations.csv" in err and "coordinates_crs" in err and "Traceback" not in err


def test_cli_new_writes_template(tmp_path: Path, capsys: pytest.CaptureFixture) -> None:
    assert main(["new", str(tmp_path / "p")]) == 0
    assert (tmp_path / "p" / "geosect.toml").exists()
    assert main(["new", str(tmp_path / "p")]) == 2  # never overwrites


def test_python_dash_m(tiny_project: Path) -> None:
    import subprocess
    import sys

    r = subprocess.run([sys.executable, "-m", "geosect", "--version"], capture_output=True, text=True)
    assert r.returncode == 0 and "geosect" in r.stdout
