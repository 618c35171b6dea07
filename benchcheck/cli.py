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
from .model import LayoutError
from .textsafe import one_line

EXIT_OK = 0
EXIT_BAD_INPUT = 2


#: TOML files that are never layouts, skipped when a folder is searched (named files are
#: always read).
NOT_LAYOUTS = {"benchcheck.toml", "pyproject.toml", "ruff.toml", ".ruff.toml", "Cargo.toml", "taplo.toml",
               ".taplo.toml", "rustfmt.toml", "uv.toml", "poetry.toml", "typos.toml", "_typos.toml"}


def _layout_files(paths: list[str]) -> list[Path]:
    out = []
    for p in paths:
        path = Path(p)
        if path.is_dir():
            out += sorted(f for f in path.rglob("*.toml") if f.is_file() and f.name not in NOT_LAYOUTS
                          and not any(part.startswith(".") or part in ("node_modules", "site-packages")
                                      for part in f.relative_to(path).parts[:-1]))
        else:
            out.append(path)
    return out


def _no_layouts(paths: list[str]) -> int:
    for p in paths:
        print(one_line(f"{p}: error: no layout files (*.toml) in this folder"), file=sys.stderr)
    return EXIT_BAD_INPUT


def cmd_beams(args) -> int:
    from .api import solve_file
    from .beamtable import solution_json, solution_text

    files = _layout_files(args.layouts)
    if not files:
        return _no_layouts(args.layouts)
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
            print(one_line(f"{f}: error: the layout is nested too deeply to read"), file=sys.stderr)
            status = EXIT_BAD_INPUT
            continue
        except Exception as exc:  # noqa: BLE001 - the user gets a sentence, not a traceback
            print(one_line(f"{f}: internal error while solving ({type(exc).__name__}: {exc}); please report it "
                           "with this layout"), file=sys.stderr)
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


_WORKER_CACHE: dict = {}


def _check_one(job):
    """Check one layout (runs in a worker process): config found from the layout's folder
    unless given, rules loaded once per configuration."""
    from .config import find_config, load_config
    from .engine import FileResult, check_file, config_folder
    from .plugins import load_rules

    path, config_path, today = job
    try:
        cfg_path = Path(config_path) if config_path else find_config(Path(path))
        key = str(cfg_path)
        if key not in _WORKER_CACHE:
            config = load_config(cfg_path)
            _WORKER_CACHE[key] = (config, load_rules(config.plugins, search_path=config_folder(config)))
        config, ruleset = _WORKER_CACHE[key]
    except LayoutError as exc:
        return FileResult(str(path), errors=[str(exc)])
    result = check_file(Path(path), config, ruleset, today)
    result.bench = None   # the report needs only the findings: do not ship the bench between processes
    return result


def cmd_check(args) -> int:
    from .config import find_config, load_config
    from .engine import config_folder
    from .plugins import load_rules
    from .reporters import exit_status, github_report, json_report, sarif_report, text_report, workers

    files = _layout_files(args.paths)
    if not files:
        return _no_layouts(args.paths)
    if args.config and not Path(args.config).is_file():
        print(one_line(f"{args.config}: error: no such configuration file"), file=sys.stderr)
        return EXIT_BAD_INPUT
    jobs = [(str(f), args.config, None) for f in files]
    n = min(args.jobs or workers(), len(jobs))
    if n > 1:
        from concurrent.futures import ProcessPoolExecutor   # not needed (nor imported) for one file

        with ProcessPoolExecutor(max_workers=n) as pool:
            done = list(pool.map(_check_one, jobs))
    else:
        done = [_check_one(j) for j in jobs]
    results = done
    if args.fail_on:
        for r in results:
            r.fail_on = args.fail_on
    # rule metadata for the report, from the configuration of the first layout
    try:
        cfg = load_config(Path(args.config) if args.config else find_config(files[0]))
        rules = load_rules(cfg.plugins, search_path=config_folder(cfg)).rules
    except LayoutError:
        rules = {}
    for e in dict.fromkeys(e for r in results for e in r.errors):   # a bad configuration once, not per file
        print(one_line(e), file=sys.stderr)
    report = {"text": text_report, "json": json_report, "sarif": sarif_report, "github": github_report}[args.format]
    sys.stdout.write(report(results, rules))
    return exit_status(results)


def cmd_rules(args) -> int:
    from .config import find_config, load_config
    from .plugins import load_rules
    from .reporters import rules_json, rules_text

    try:
        cfg = load_config(Path(args.config) if args.config else find_config(Path.cwd()))
    except LayoutError as exc:
        print(str(exc), file=sys.stderr)
        return EXIT_BAD_INPUT
    from .engine import config_folder

    ruleset = load_rules(cfg.plugins, search_path=config_folder(cfg))
    for e in ruleset.errors:
        print(one_line(f"error: {e}"), file=sys.stderr)
    sys.stdout.write(rules_json(ruleset.rules) if args.format == "json" else rules_text(ruleset.rules))
    return EXIT_BAD_INPUT if ruleset.errors else EXIT_OK


def cmd_report(args) -> int:
    from .config import find_config, load_config
    from .engine import check_file, config_folder
    from .plugins import load_rules

    try:
        import matplotlib  # noqa: F401
    except ImportError:
        print("error: the report draws its plots with matplotlib, which is not installed; "
              "install it with: pip install 'benchcheck[report]'", file=sys.stderr)
        return EXIT_BAD_INPUT
    from .report_html import MARKER, Report

    layout_path = Path(args.layout)
    out = Path(args.output) if args.output else Path(f"{layout_path.stem}-review.html")
    if out.exists() and not args.force:
        try:
            head = out.read_text(encoding="utf-8", errors="replace")[:len(MARKER)]
        except OSError:
            head = ""
        if head != MARKER:
            print(one_line(f"{out}: error: exists and is not a benchcheck report; choose another -o or pass --force"),
                  file=sys.stderr)
            return EXIT_BAD_INPUT
    try:
        cfg_path = Path(args.config) if args.config else find_config(layout_path)
        config = load_config(cfg_path)
    except LayoutError as exc:
        print(str(exc), file=sys.stderr)
        return EXIT_BAD_INPUT
    ruleset = load_rules(config.plugins, search_path=config_folder(config))
    result = check_file(layout_path, config, ruleset)
    for e in result.errors:
        print(one_line(e), file=sys.stderr)
    if result.bench is None:
        return EXIT_BAD_INPUT
    status = EXIT_BAD_INPUT if result.errors else EXIT_OK
    html = Report(result.bench, result.findings, str(cfg_path) if cfg_path else None, ruleset.rules).html()
    tmp = out.with_name(out.name + ".tmp")
    tmp.write_text(html, encoding="utf-8")
    tmp.replace(out)
    print(one_line(f"wrote {out} ({len(result.findings)} findings)"))
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

    check = sub.add_parser(
        "check",
        help="run every rule on layouts and report findings (for review, pre-commit and CI)",
        description="Check layout files (folders are searched for *.toml) with the built-in rules and any "
                    "plugins. Exit status: 0 when no unwaived finding reaches the fail level, 1 when one does, "
                    "2 for unusable input, configuration or plugins.",
    )
    check.add_argument("paths", nargs="+", metavar="PATH", help="layout file(s) or folder(s)")
    check.add_argument("--format", choices=("text", "json", "sarif", "github"), default="text",
                       help="text (path:line:col: severity: message [rule]), json, sarif (2.1.0) or github "
                            "(workflow annotations)")
    check.add_argument("--fail-on", choices=("error", "warning", "note"), default=None,
                       help="lowest severity that fails the run (default: fail_on of the configuration, else error)")
    check.add_argument("--config", metavar="FILE",
                       help="configuration file (default: benchcheck.toml or pyproject.toml [tool.benchcheck], "
                            "found by walking up from each layout)")
    check.add_argument("--jobs", type=int, default=None, metavar="N",
                       help="layouts checked in parallel (default: one per core)")
    check.set_defaults(func=cmd_check)

    report = sub.add_parser(
        "report",
        help="write a self-contained HTML design-review report (plan view, beam plots, findings, safety)",
        description="Solve and check one layout and write a single HTML file: the plan view with beams and "
                    "findings, beam sizes along every path, stability, per-optic tables and a safety summary. "
                    "Needs matplotlib (pip install 'benchcheck[report]').",
    )
    report.add_argument("layout", metavar="LAYOUT", help="layout file")
    report.add_argument("-o", "--output", metavar="FILE", help="where to write the report "
                        "(default: LAYOUT-NAME-review.html in the current folder)")
    report.add_argument("--config", metavar="FILE", help="configuration file (default: found walking up)")
    report.add_argument("--force", action="store_true",
                        help="replace FILE even if it is not an earlier benchcheck report")
    report.set_defaults(func=cmd_report)

    rules = sub.add_parser("rules", help="list every rule with its plugin, severity, options and explanation")
    rules.add_argument("--format", choices=("text", "json"), default="text")
    rules.add_argument("--config", metavar="FILE", help="configuration whose plugins to load")
    rules.set_defaults(func=cmd_rules)
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
