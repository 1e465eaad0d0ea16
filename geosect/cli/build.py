"""Run every stage the project file asks for and write the outputs.

Outputs go to PROJECT_DIR/out (or --out DIR): tables, geometry.gpkg, figures, the
map page and report.md.  Stages whose inputs are not in the project are skipped,
and the report says why.

Example:

    geosect build my-survey
    geosect build my-survey --out /tmp/trial
"""

from __future__ import annotations

import argparse

from . import options

HELP = "run all stages and write the outputs"


def add_arguments(p: argparse.ArgumentParser) -> None:
    options.project_dir(p)
    options.out_dir(p)


def run(args: argparse.Namespace) -> int:
    from ..config import load_settings
    from ..pipeline import Progress, build

    settings = load_settings(args.project)
    result = build(settings, out_dir=args.out, progress=Progress(quiet=args.quiet))
    out = result.context.out_dir
    if not args.quiet:
        print(f"wrote {len(result.context.written)} files into {out}:")
        for p in result.context.written:
            print(f"  {p.relative_to(out.resolve()) if p.is_relative_to(out.resolve()) else p}")
        if result.skipped:
            print("skipped:")
            for name, why in result.skipped.items():
                print(f"  {name}: {why}")
    return 0
