"""Write a commented template project file into a new folder.

Example:

    geosect new my-line
    $EDITOR my-line/geosect.toml
"""

from __future__ import annotations

import argparse
from pathlib import Path

from ..errors import InputError

HELP = "write a commented template project into a new folder"


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("directory", type=Path, metavar="DIR", help="folder to create")


def run(args: argparse.Namespace) -> int:
    from ..io.atomic import write_text
    from ..template import template_text

    target = args.directory / "geosect.toml"
    if target.exists():
        raise InputError("a project file exists already", file=target,
                         fix="choose a new folder, or edit the existing geosect.toml.")
    args.directory.mkdir(parents=True, exist_ok=True)
    write_text(target, template_text())
    print(f"wrote {target}: fill in the file names and columns, then run `geosect check {args.directory}`")
    return 0
