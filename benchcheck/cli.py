"""Command line: ``benchcheck beams LAYOUT...``.

Exit status: 0 when every layout was solved, 2 for unusable input (the message names the
file, line and column).  A traceback is never what a user sees: an unexpected failure is
reported as an internal error with the layout's name, also with status 2.
"""

from __future__ import annotations

import argparse
import functools
import os
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
    """The layouts named or found below the folders named, each once (a file named twice,
    or named and found in a folder, is checked once)."""
    out = []
    for p in paths:
        path = Path(p)
        if path.is_dir():
            out += sorted(f for f in path.rglob("*.toml") if f.is_file() and f.name not in NOT_LAYOUTS
                          and not any(part.startswith(".") or part in ("node_modules", "site-packages")
                                      for part in f.relative_to(path).parts[:-1]))
        else:
            out.append(path)
    seen: set = set()
    unique = []
    for f in out:
        key = f.resolve() if f.exists() else f
        if key not in seen:
            seen.add(key)
            unique.append(f)
    return unique


def _no_layouts(paths: list[str]) -> int:
    for p in paths:
        print(one_line(f"{p}: error: no layout files (*.toml) in this folder"), file=sys.stderr)
    return EXIT_BAD_INPUT


def _solved(path: Path, work, what: str = "solving"):
    """``work(path)``, or None with the reason printed (a sentence, never a traceback)."""
    try:
        return work(path)
    except LayoutError as exc:
        print(str(exc), file=sys.stderr)
    except RecursionError:
        print(one_line(f"{path}: error: the layout is nested too deeply to read"), file=sys.stderr)
    except Exception as exc:  # noqa: BLE001 - the user gets a sentence, not a traceback
        print(one_line(f"{path}: internal error while {what} ({type(exc).__name__}: {exc}); please report it "
                       "with this layout"), file=sys.stderr)
    return None


def cmd_beams(args) -> int:
    from .api import solve_file
    from .beamtable import solution_json, solution_text

    files = _layout_files(args.layouts)
    if not files:
        return _no_layouts(args.layouts)
    status = EXIT_OK
    results = []
    for f in files:
        sol = _solved(f, solve_file)
        if sol is None:
            status = EXIT_BAD_INPUT
            continue
        results.append(sol)
    if args.format == "json":
        docs = [solution_json(s) for s in results]
        payload = docs[0] if len(docs) == 1 and len(files) == 1 else {"format": 1, "layouts": docs}
        if results or len(files) > 1:
            import json

            json.dump(payload, sys.stdout, indent=2, allow_nan=False)
            sys.stdout.write("\n")
    else:
        sys.stdout.write("\n".join(solution_text(s) for s in results))
    return status


def cmd_check(args) -> int:
    from .engine import FileResult
    from .pool import Job, run_jobs
    from .reporters import exit_status, github_report, json_report, sarif_report, text_report, workers

    files = _layout_files(args.paths)
    if not files:
        return _no_layouts(args.paths)
    if args.config and not Path(args.config).is_file():
        print(one_line(f"{args.config}: error: no such configuration file"), file=sys.stderr)
        return EXIT_BAD_INPUT
    # plugins run only in worker processes: nothing they do ends or hides this run
    present = [f.exists() for f in files]
    n = min(args.jobs or workers(), sum(present))
    outcome = run_jobs([Job(str(f), args.config) for f, there in zip(files, present) if there], max(1, n),
                       args.rule_timeout)
    done = iter(outcome.results)
    results = [next(done) if there else
               FileResult(str(f), errors=[f"{f}: error: no such file or folder"], layout=False)
               for f, there in zip(files, present)]
    if args.fail_on:
        for r in results:
            r.fail_on = args.fail_on
    for e in dict.fromkeys(e for r in results for e in r.errors):   # a bad configuration once, not per file
        print(one_line(e), file=sys.stderr)
    report = {"text": text_report, "json": json_report, "sarif": sarif_report, "github": github_report}[args.format]
    # rule metadata from every configuration that applied, as the workers described it
    sys.stdout.write(report(results, outcome.rules))
    return exit_status(results)


def cmd_rules(args) -> int:
    from .pool import Job, run_jobs
    from .reporters import rules_json, rules_text

    outcome = run_jobs([Job(None, args.config, start=str(Path.cwd()))], 1, args.rule_timeout)
    for e in outcome.errors:
        print(one_line(e), file=sys.stderr)
    sys.stdout.write(rules_json(outcome.rules) if args.format == "json" else rules_text(outcome.rules))
    return EXIT_BAD_INPUT if outcome.errors else EXIT_OK


def cmd_report(args) -> int:
    from .config import find_config
    from .outfile import refusal, write_replacing
    from .pool import Job, run_jobs

    try:
        import matplotlib  # noqa: F401
    except ImportError:
        print("error: the report draws its plots with matplotlib, which is not installed; install it with "
              "the report extra: pip install \"benchcheck[report]\", or in a source checkout of benchcheck: "
              "pip install \".[report]\"", file=sys.stderr)
        return EXIT_BAD_INPUT
    from .report_html import MARKER, Report

    layout_path = Path(args.layout)
    out = Path(args.output) if args.output else Path(f"{layout_path.stem}-review.html")
    try:
        cfg_path = Path(args.config) if args.config else find_config(layout_path)
    except LayoutError as exc:
        print(str(exc), file=sys.stderr)
        return EXIT_BAD_INPUT
    problem = refusal(out, MARKER, (layout_path, cfg_path), args.force)
    if problem:
        print(problem, file=sys.stderr)
        return EXIT_BAD_INPUT
    outcome = run_jobs([Job(str(layout_path), args.config, keep_bench=True)], 1, args.rule_timeout)
    result = outcome.results[0]
    for e in result.errors:
        print(one_line(e), file=sys.stderr)
    if result.bench is None:
        return EXIT_BAD_INPUT
    status = EXIT_BAD_INPUT if result.errors else EXIT_OK
    html = Report(result.bench, result.findings, str(cfg_path) if cfg_path else None, outcome.rules).html()
    problem = refusal(out, MARKER, (layout_path, cfg_path), args.force)   # again: it may have changed meanwhile
    if problem:
        print(problem, file=sys.stderr)
        return EXIT_BAD_INPUT
    try:
        write_replacing(out, html)
    except OSError as exc:
        print(f"{out}: error: cannot write the report ({exc.strerror or exc})", file=sys.stderr)
        return EXIT_BAD_INPUT
    print(one_line(f"wrote {out} ({len(result.findings)} findings)"))
    return status


def cmd_hazards(args) -> int:
    from .api import solve_file
    from .config import find_config, load_config
    from .hazards import assess
    from .hazardtable import assessment_csv, assessment_json, assessment_text, dumps

    files = _layout_files(args.layouts)
    if not files:
        return _no_layouts(args.layouts)
    status = EXIT_OK
    docs, texts = [], []
    def one(f):
        config = load_config(Path(args.config) if args.config else find_config(f))
        sol = solve_file(f)
        return sol, assess(sol, config.exposure)

    for f in files:
        done = _solved(f, one, "assessing hazards")
        if done is None:
            status = EXIT_BAD_INPUT
            continue
        sol, found = done
        docs.append(assessment_json(str(f), sol.layout.bench.name, found))
        texts.append(assessment_text(str(f), sol.layout.bench.name, found))
    if args.format == "json":
        if docs or len(files) > 1:
            sys.stdout.write(dumps(docs, many=len(files) > 1))
    elif args.format == "csv":
        sys.stdout.write(assessment_csv(docs))
    else:
        sys.stdout.write("\n".join(texts))
    return status


def cmd_schema(args) -> int:
    from .schema import schema_text

    sys.stdout.write(schema_text())
    return EXIT_OK


def _seconds(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        value = float("nan")
    if not 0 < value < float("inf"):
        raise argparse.ArgumentTypeError(f"expected a number of seconds greater than 0, found {text!r}")
    return value


def _timeout_option(parser) -> None:
    parser.add_argument("--rule-timeout", type=_seconds, default=None, metavar="SECONDS",
                        help="stop a plugin's import, hook or rule that runs longer on one layout "
                             "(default: rule_timeout_s of the configuration, else 60)")


def cmd_tolerance(args) -> int:
    """Monte Carlo of every cavity under the lab's build tolerances (README, "Tolerances and
    alignment")."""
    from .tolrun import tolerance_files

    if args.samples < 1:
        print(f"error: --samples must be at least 1, not {args.samples}", file=sys.stderr)
        return EXIT_BAD_INPUT
    files = _layout_files(args.layouts)
    if not files:
        return _no_layouts(args.layouts)
    return tolerance_files(files, args)


def cmd_diff(args) -> int:
    from .difftable import json_report, markdown_report, text_report
    from .revdiff import Options, diff_revision, diff_specs, exit_status

    try:
        opts = Options.from_command_line(args.config, args.relative, args.absolute or (), args.fail_on)
    except ValueError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    if args.rev is not None:
        diffs = diff_revision(args.rev, args.specs, opts)
    elif len(args.specs) == 2:
        diffs = [diff_specs(args.specs[0], args.specs[1], opts)]
    else:
        print("error: benchcheck diff takes OLD NEW (files or REV:path), or --rev REV [PATHS...]", file=sys.stderr)
        return EXIT_BAD_INPUT
    for e in dict.fromkeys(e for d in diffs for e in d.errors):
        print(e, file=sys.stderr)
    report = {"text": text_report, "json": json_report, "markdown": markdown_report}[args.format]
    sys.stdout.write(report(diffs))
    return exit_status(diffs)


class _Formatter(argparse.HelpFormatter):
    """argparse's help layout, the terminal's width found as ``shutil.get_terminal_size``
    finds it without importing shutil (argparse makes a formatter for every option it is
    given, and the import is a few ms of every start, a pre-commit hook's included)."""

    def __init__(self, prog, indent_increment=2, max_help_position=24, width=None):
        super().__init__(prog, indent_increment, max_help_position, _columns() - 2 if width is None else width)


def _columns() -> int:
    try:
        columns = int(os.environ["COLUMNS"])
    except (KeyError, ValueError):
        columns = 0
    if columns <= 0:
        try:
            columns = os.get_terminal_size(sys.__stdout__.fileno()).columns
        except (AttributeError, ValueError, OSError):    # no standard output, or not a terminal
            columns = 0
    return columns or 80


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="benchcheck",
        description="Review an optical bench plan before you build it.",
        formatter_class=_Formatter,
    )
    parser.add_argument("--version", action="version", version=f"benchcheck {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND",
                                parser_class=functools.partial(argparse.ArgumentParser, formatter_class=_Formatter))
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
    _timeout_option(check)
    check.set_defaults(func=cmd_check)

    report = sub.add_parser(
        "report",
        help="write a self-contained HTML design-review report (plan view, beam plots, findings, safety)",
        description="Solve and check one layout and write a single HTML file: the plan view with beams and "
                    "findings, beam sizes along every path, stability, per-optic tables and a safety summary. "
                    "Needs matplotlib: pip install \"benchcheck[report]\" (in a source checkout: pip install \".[report]\").",
    )
    report.add_argument("layout", metavar="LAYOUT", help="layout file")
    report.add_argument("-o", "--output", metavar="FILE", help="where to write the report "
                        "(default: LAYOUT-NAME-review.html in the current folder)")
    report.add_argument("--config", metavar="FILE", help="configuration file (default: found walking up)")
    report.add_argument("--force", action="store_true",
                        help="replace FILE even if it is not an earlier benchcheck report")
    _timeout_option(report)
    report.set_defaults(func=cmd_report)

    hazards = sub.add_parser(
        "hazards",
        help="laser hazards for the safety officer: MPE, eyewear OD, class estimates, open beams, hazard distances",
        description="Assess every stretch of beam on each layout against the ocular exposure limits (IEC 60825-1 / "
                    "ANSI Z136.1): per wavelength the worst power, the MPE and exposure duration used, the eyewear "
                    "OD needed and a class estimate; then every segment on open bench with its exposure against the "
                    "MPE and hazard distance. Advisory: the laser safety officer, IEC 60825-1 / ANSI Z136.1 and "
                    "local regulations decide.",
    )
    hazards.add_argument("layouts", nargs="+", metavar="LAYOUT", help="layout file(s) or folder(s)")
    hazards.add_argument("--format", choices=("text", "json", "csv"), default="text",
                         help="text (default), JSON (format 1) or CSV (one row per segment)")
    hazards.add_argument("--config", metavar="FILE",
                         help="configuration with [exposure] settings (default: found walking up from each layout)")
    hazards.set_defaults(func=cmd_hazards)


    tol = sub.add_parser(
        "tolerance",
        help="Monte Carlo of each cavity under build tolerances: yield, mode-size spread, what drives it, "
             "and how far the axis walks per mirror tilt",
        description="Perturb every cavity of each layout by the tolerances of the configuration's [tolerances] "
                    "(and each optic's own 'tolerance'), many builds at once, and report the build yield with its "
                    "95 %% interval, percentiles of the mode radius, a sensitivity ranking and the mirror-tilt "
                    "sensitivity of the cavity axis. Exit status 0, or 2 for unusable input.",
    )
    tol.add_argument("layouts", nargs="+", metavar="LAYOUT", help="layout file(s) or folder(s)")
    tol.add_argument("--samples", type=int, default=10_000, metavar="N",
                     help="builds per cavity (default 10000)")
    tol.add_argument("--seed", type=int, default=1, metavar="S",
                     help="seed of the random generator (default 1); the same seed gives the same result")
    tol.add_argument("--format", choices=("text", "json"), default="text")
    tol.add_argument("--config", metavar="FILE", help="configuration file (default: found walking up)")
    tol.set_defaults(func=cmd_tolerance)


    diff = sub.add_parser(
        "diff",
        help="what an edit does: modes, margins, beam sizes, loads and findings of two revisions compared",
        description="Compare two revisions of a layout, matched by id: placement, each cavity's half-trace, "
                    "margin, status, Gouy phase, FSR, power, mode and waists, each beam's radii and end, the load "
                    "on each optic, and the findings added, resolved or changed. Each side is a file or git's "
                    "REV:path; --rev REV compares every layout changed since REV with the working tree. "
                    "Exit status: 0, 1 when the new revision introduces a finding at or above the fail level, "
                    "2 for unusable input.",
    )
    diff.add_argument("specs", nargs="*", metavar="OLD NEW | PATH",
                      help="two layouts (file or REV:path); with --rev, the files or folders to limit it to")
    diff.add_argument("--rev", metavar="REV", help="compare every layout changed between REV and the working tree")
    diff.add_argument("--format", choices=("text", "json", "markdown"), default="text",
                      help="text (default), json (format 1) or markdown (for a pull-request comment)")
    diff.add_argument("--fail-on", choices=("error", "warning", "note"), default=None,
                      help="lowest severity that fails (default: fail_on of the configuration, else error)")
    diff.add_argument("--config", metavar="FILE", help="configuration for both sides (default: found walking up "
                      "from the new side's path in the working tree)")
    diff.add_argument("--relative", type=float, metavar="FRACTION",
                      help="relative threshold (default: [diff] relative, else 0.01)")
    diff.add_argument("--absolute", action="append", metavar="UNIT=VALUE",
                      help="absolute threshold for one unit (fraction, um, mm, deg, hz, w, w_cm2, w_cm, j_cm2); "
                           "repeatable")
    diff.set_defaults(func=cmd_diff)

    rules = sub.add_parser("rules", help="list every rule with its plugin, severity, options and explanation")
    rules.add_argument("--format", choices=("text", "json"), default="text")
    rules.add_argument("--config", metavar="FILE", help="configuration whose plugins to load")
    _timeout_option(rules)
    rules.set_defaults(func=cmd_rules)

    schema = sub.add_parser("schema", help="print the JSON Schema of the layout format (for editors)",
                            description="Print the JSON Schema (draft-07) of layout format 1, for TOML "
                                        "language servers that validate and complete against a schema.")
    schema.set_defaults(func=cmd_schema)
    return parser


#: numpy's BLAS (OpenBLAS, MKL, or an OpenMP build) starts one spinning thread per core at
#: import; benchcheck multiplies 2x2 matrices and stacks of them, which those threads do not
#: speed up, and runs its own worker processes for parallel checks.  One thread saves about
#: 0.1 s of CPU per process at start and keeps workers from contending for cores.  A value
#: the user set is kept.
BLAS_THREAD_VARIABLES = ("OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "OMP_NUM_THREADS")


def _one_blas_thread() -> None:
    if "numpy" not in sys.modules:   # too late once numpy is imported (as in a test process)
        for name in BLAS_THREAD_VARIABLES:
            os.environ.setdefault(name, "1")


def main(argv: list[str] | None = None) -> int:
    _one_blas_thread()
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
        print("benchcheck: interrupted", file=sys.stderr)
        return 130


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
