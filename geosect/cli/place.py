"""Place stations and shots on the section line only (chainage, crossline distance, DEM height).

Writes stations.csv, shots.csv and report.md.

Example:

    geosect place my-survey
"""

from __future__ import annotations

import argparse

from . import options

HELP = "place stations and shots on the section line"


def add_arguments(p: argparse.ArgumentParser) -> None:
    options.project_dir(p)
    options.out_dir(p)


def run(args: argparse.Namespace) -> int:
    from ..config import load_settings
    from ..io.atomic import write_text
    from ..pipeline import Context, Progress, run_stages, stages
    from ..report import Report

    settings = load_settings(args.project)
    out = args.out or settings.output_dir
    out.mkdir(parents=True, exist_ok=True)
    ctx = Context(settings, out, Report(f"{settings.project.name}: placing"), Progress(quiet=args.quiet))
    wanted = {"inputs", "line", "place", "write_points"}
    run_stages(ctx, [s for s in stages() if s.name in wanted])
    write_text(ctx.output("report.md"), ctx.report.render())
    if not args.quiet:
        print(f"wrote {', '.join(p.name for p in ctx.written)} into {out}")
    return 0
