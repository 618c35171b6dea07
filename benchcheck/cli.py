"""Command line: ``benchcheck beams LAYOUT...``.

Exit status: 0 when every layout was solved, 2 for unusable input (the message names the
file, line and column).  A traceback is never what a user sees: an unexpected failure is
reported as an internal error with the layout's name, also with status 2.
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

from . import __version__
from .beamtable import solution_json, solution_text
from .model import LayoutError

EXIT_OK = 0
EXIT_BAD_INPUT = 2


def _layout_files(paths: list[str]) -> list[Path]:
    out = []
    for p in paths:
        path = Path(p)
        if path.is_dir():
            out += sorted(f for f in path.rglob("*.toml") if f.is_file())
        else:
            out.append(path)
    return out


def cmd_beams(args) -> int:
    from .api import solve_file

    files = _layout_files(args.layouts)
    if not files:
        for p in args.layouts:
            print(f"{p}: error: no layout files (*.toml) in this folder", file=sys.stderr)
        return EXIT_BAD_INPUT
    status = EXIT_OK
    results = []
    for f in files:
        try:
            sol = solve_file(f)
        except LayoutError as exc:
            print(str(exc), file=sys.stderr)
            status = EXIT_BAD_INPUT
            continue
        except RecursionError:
            print(f"{f}: error: the layout is nested too deeply to read", file=sys.stderr)
            status = EXIT_BAD_INPUT
            continue
        except Exception as exc:  # noqa: BLE001 - the user gets a sentence, not a traceback
            print(f"{f}: internal error while solving ({type(exc).__name__}: {exc}); please report it "
                  "with this layout", file=sys.stderr)
            status = EXIT_BAD_INPUT
            continue
        results.append(sol)
    if args.format == "json":
        docs = [solution_json(s) for s in results]
        payload = docs[0] if len(docs) == 1 and len(files) == 1 else {"format": 1, "layouts": docs}
        if results or len(files) > 1:
            json.dump(payload, sys.stdout, indent=2, allow_nan=False)
            sys.stdout.write("\n")
    else:
        sys.stdout.write("\n".join(solution_text(s) for s in results))
    return status


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="benchcheck",
        description="Review an optical bench plan before you build it.",
    )
    parser.add_argument("--version", action="version", version=f"benchcheck {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    beams = sub.add_parser(
        "beams",
        help="solve every cavity and beam and print sizes, stability and power",
        description="Solve each layout and print every cavity's stability and mode and every beam's size "
                    "at each optic, in both planes. Folders are searched for *.toml files.",
    )
    beams.add_argument("layouts", nargs="+", metavar="LAYOUT", help="layout file(s) or folder(s)")
    beams.add_argument("--format", choices=("text", "json"), default="text",
                       help="text table (default) or the versioned JSON beam table")
    beams.set_defaults(func=cmd_beams)
    return parser


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help()
        return EXIT_BAD_INPUT
    try:
        return args.func(args)
    except BrokenPipeError:
        return EXIT_OK
    except KeyboardInterrupt:
        return 130


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
