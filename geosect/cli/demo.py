"""Write the invented sample project (synthetic data) into a folder.

Example:

    geosect demo my-survey
    geosect build my-survey
"""

from __future__ import annotations

import argparse
from pathlib import Path

HELP = "write the synthetic sample project into a folder"


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("directory", type=Path, metavar="DIR", help="folder to create (must be empty or new)")
    p.add_argument("--overwrite", action="store_true", help="replace the files of an existing sample project")


def run(args: argparse.Namespace) -> int:
    from ..demo import write_demo

    files = write_demo(args.directory, overwrite=args.overwrite)
    if not getattr(args, "quiet", False):
        print(f"wrote the synthetic sample project ({len(files)} files) into {args.directory}")
        print(f"next: geosect check {args.directory}   then   geosect build {args.directory}")
    return 0
