"""The ``tolerance`` command: configuration, solving, the Monte Carlo, progress, output.

Kept out of ``cli.py`` so the command's work has one home; errors follow the CLI's rules
(file:line:col: error: ..., exit status 2, never a traceback).
"""

from __future__ import annotations

import json
import sys
import time
from pathlib import Path

from . import tolspec
from .model import LayoutError
from .tolreport import tolerance_json, tolerance_text

#: Show progress on a terminal only once a run has taken this long (s).
PROGRESS_AFTER_S = 1.0


class Progress:
    """A one-line progress display on stderr, for terminals only and long runs only."""

    def __init__(self, label: str, stream=None):
        self.stream = stream if stream is not None else sys.stderr
        self.label = label
        self.start = time.monotonic()
        self.shown = False
        self.enabled = bool(getattr(self.stream, "isatty", lambda: False)())

    def __call__(self, cavity: str, done: int, total: int) -> None:
        if not self.enabled or time.monotonic() - self.start < PROGRESS_AFTER_S:
            return
        width = 30
        filled = int(width * done / max(total, 1))
        self.stream.write(f"\r{self.label} cavity {cavity}: [{'#' * filled}{'.' * (width - filled)}] "
                          f"{done}/{total}")
        self.stream.flush()
        self.shown = True

    def close(self) -> None:
        if self.shown:
            self.stream.write("\r\033[K")
            self.stream.flush()


def tolerances_for(layout, config) -> tuple[tolspec.Tolerances, list[str]]:
    """The tolerances a run uses and what to say about them: the configuration's and the
    layout's own; benchcheck's defaults where neither gives any."""
    tol = config.tolerances
    if tolspec.applies(tol, layout):
        return tol, []
    return tol.with_defaults(), ["neither the configuration ([tolerances]) nor the layout gives a tolerance: "
                                 "benchcheck's defaults are used (README, \"Tolerances and alignment\")"]


def run_file(path: Path, config, samples: int, seed: int, progress=None):
    """Solve one layout and run its Monte Carlo; returns (json document, text)."""
    from .api import solve_file
    from .tolerance import run

    solution = solve_file(path)
    tol, notes = tolerances_for(solution.layout, config)
    if not solution.cavities:
        notes.append("the layout has no cavity: nothing to tolerance")
    results = run(solution, tol, samples, seed, progress)
    return (tolerance_json(str(path), results, samples, seed, tol, notes),
            tolerance_text(str(path), results, samples, seed, tol, notes))


def tolerance_files(files: list[Path], args) -> int:
    from .config import find_config, load_config

    status = 0
    docs, texts = [], []
    for f in files:
        progress = Progress(str(f))
        try:
            cfg = load_config(Path(args.config) if args.config else find_config(f))
            doc, text = run_file(f, cfg, args.samples, args.seed, progress)
        except LayoutError as exc:
            progress.close()
            print(str(exc), file=sys.stderr)
            status = 2
            continue
        except RecursionError:
            progress.close()
            print(f"{f}: error: the layout is nested too deeply to read", file=sys.stderr)
            status = 2
            continue
        except Exception as exc:  # noqa: BLE001 - the user gets a sentence, not a traceback
            progress.close()
            print(f"{f}: internal error in the tolerance run ({type(exc).__name__}: {exc}); please report it "
                  "with this layout", file=sys.stderr)
            status = 2
            continue
        progress.close()
        docs.append(doc)
        texts.append(text)
    if args.format == "json":
        if docs or len(files) > 1:
            payload = docs[0] if len(docs) == 1 and len(files) == 1 else {"format": 1, "layouts": docs}
            json.dump(payload, sys.stdout, indent=2, allow_nan=False)
            sys.stdout.write("\n")
    else:
        sys.stdout.write("\n".join(texts))
    return status
