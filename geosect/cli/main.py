"""The command group: parses the verb, runs it, turns errors into exit codes.

Exit codes: 0 done; 2 bad input or usage (one message naming the file, key or row,
what is wrong and how to fix it); 1 unexpected failure (traceback only with --debug).
"""

from __future__ import annotations

import argparse
import sys
import traceback
from typing import Callable, Sequence

from .. import __version__
from ..errors import GeosectError

__all__ = ["main", "run_guarded"]


def _commands() -> dict[str, object]:
    from . import build, check, demo, new, place

    return {"demo": demo, "new": new, "check": check, "build": build, "place": place}


def run_guarded(fn: Callable[[], int], debug: bool = False) -> int:
    """Run ``fn``; our errors → message and exit 2, others → exit 1 (traceback with ``debug``)."""
    try:
        return int(fn() or 0)
    except GeosectError as exc:
        print(f"geosect: error: {exc.message}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("geosect: interrupted", file=sys.stderr)
        return 130
    except Exception as exc:  # an unexpected failure is a bug
        if debug:
            traceback.print_exc()
        else:
            print(f"geosect: unexpected failure: {type(exc).__name__}: {exc}\n"
                  "Run again with --debug for the traceback, and please report it.", file=sys.stderr)
        return 1


def make_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="geosect",
        description="Crooked-line seismic profiles: place stations and shots on the line, work out where each "
        "recording samples the subsurface, and draw depth sections and linked maps.",
        epilog="Start with `geosect demo my-survey` and `geosect build my-survey`.",
    )
    p.add_argument("--version", action="version", version=f"geosect {__version__}")
    p.add_argument("--debug", action="store_true", help="show the traceback of an unexpected failure")
    p.add_argument("-q", "--quiet", action="store_true", help="no progress display")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")
    for name, mod in _commands().items():
        sp = sub.add_parser(name, help=mod.HELP, description=mod.__doc__,  # type: ignore[attr-defined]
                            formatter_class=argparse.RawDescriptionHelpFormatter)
        mod.add_arguments(sp)  # type: ignore[attr-defined]
        sp.set_defaults(_run=mod.run)  # type: ignore[attr-defined]
    return p


def main(argv: Sequence[str] | None = None) -> int:
    parser = make_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # argparse exits 2 on usage errors, 0 on --help
        return int(exc.code or 0)
    if not getattr(args, "command", None):
        parser.print_help()
        return 2
    return run_guarded(lambda: args._run(args), debug=args.debug)
