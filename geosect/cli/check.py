"""Validate the project file and inputs and print a QC summary.

Exit 0 when the project is usable (faulty rows are flagged and counted, not fatal),
2 when it is not (a bad file or key; the message says which and how to fix it).

Example:

    geosect check my-survey
"""

from __future__ import annotations

import argparse

from . import options

HELP = "validate the project and print a QC summary"


def add_arguments(p: argparse.ArgumentParser) -> None:
    options.project_dir(p)


def run(args: argparse.Namespace) -> int:
    from ..config import load_settings
    from ..pipeline import Progress, build

    settings = load_settings(args.project)
    result = build(settings, only_check=True, progress=Progress(quiet=True))
    print(result.context.report.as_text())
    print("project is usable." if result.ran else "nothing to check.")
    return 0
