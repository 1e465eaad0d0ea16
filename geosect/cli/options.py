"""Options shared by several commands."""

from __future__ import annotations

import argparse
from pathlib import Path


def project_dir(p: argparse.ArgumentParser) -> None:
    p.add_argument("project", type=Path, metavar="PROJECT_DIR", help="folder holding geosect.toml")


def out_dir(p: argparse.ArgumentParser) -> None:
    p.add_argument("--out", type=Path, default=None, metavar="DIR",
                   help="output folder (default: the project's output setting, normally PROJECT_DIR/out)")
