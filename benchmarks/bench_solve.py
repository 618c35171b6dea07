"""Benchmark: prints how long solving takes; not a test.

1. Load + solve each demo layout (median of repeated runs).
2. The array-friendly core: the round trip of the folded demo cavity evaluated for many
   perturbed copies at once (every free spacing jittered), as a tolerancing run would.
3. CPU time of one in-process ``check`` of each demo, and of its parts that are numerics:
   ``solve_layout`` and each rule that solves or samples (best of several repeats of
   ``process_time``, which a busy machine disturbs less than wall time).  The rest of a
   check is loading the file and the laser-hazard rules.

Run: python benchmarks/bench_solve.py [samples]
"""

from __future__ import annotations

import statistics
import sys
import time
from pathlib import Path

import numpy as np

from benchcheck import abcd, solve_file
from benchcheck.config import find_config, load_config
from benchcheck.engine import check_file, config_folder
from benchcheck.findings import Bench
from benchcheck.loader import load_path
from benchcheck.plugins import load_rules
from benchcheck.solve import solve_layout
from benchcheck.unfold import Marker, Space

sys.path.insert(0, str(Path(__file__).resolve().parent))
from cputime import cpu_ms  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent


def time_layouts(repeat: int = 20) -> None:
    for path in sorted((ROOT / "layouts").glob("*.toml")):
        runs = []
        for _ in range(repeat):
            t0 = time.perf_counter()
            solve_file(path)
            runs.append(time.perf_counter() - t0)
        print(f"solve {path.name:<28} median {statistics.median(runs) * 1e3:7.2f} ms  (n={repeat})")


def time_perturbed(samples: int) -> None:
    sol = solve_file(ROOT / "layouts" / "folded-brewster.toml")
    cav = sol.cavities["osc"]
    rng = np.random.default_rng(1)
    for plane, train in cav.trains.items():
        t0 = time.perf_counter()
        total = abcd.identity((samples,))
        for st in train.steps:
            if isinstance(st, Marker):
                continue
            if isinstance(st, Space) and st.length > 0:
                jitter = rng.normal(0.0, 0.2, samples)       # 0.2 mm rms on every gap
                m = abcd.free_space((st.length + jitter) * st.k)
            else:
                m = st.matrix()
            total = np.matmul(m, total)
        m_half = abcd.half_trace(total)
        stable = np.mean(np.abs(m_half) < 1.0)
        dt = time.perf_counter() - t0
        print(f"perturbed round trip, plane {plane}: {samples:,} samples in {dt:.3f} s "
              f"({dt / samples * 1e9:.0f} ns/sample); stable fraction {stable:.4f}")


#: the rules whose cost is numerics (solving, sampling, Monte Carlo, geometry of beams)
NUMERIC_RULES = ("build-yield", "alignment-sensitivity", "beam-obstructed", "stability-margin",
                 "aperture-clipping", "coating-damage", "mode-astigmatism", "mode-match", "seed-power",
                 "cavity-unstable", "layout-geometry")


def time_checks() -> None:
    for path in sorted((ROOT / "layouts").glob("*.toml")):
        config = load_config(find_config(path))
        ruleset = load_rules(config.plugins, search_path=config_folder(config), entry_points=False)
        layout = load_path(path)
        solution = solve_layout(layout)
        parts = {"check": cpu_ms(lambda: check_file(path, config, ruleset), 10),
                 "solve_layout": cpu_ms(lambda: solve_layout(layout), 10)}
        for rule_id in NUMERIC_RULES:
            if rule_id not in ruleset.rules:
                continue
            rule = ruleset.rules[rule_id][0]
            options = {**rule.defaults(), **config.options(rule_id)}

            def run(rule=rule, options=options):
                bench = Bench(layout, solution, dict(config.limits), config.exposure, tolerances=config.tolerances)
                list(rule.check(bench, options) or ())
            parts[rule_id] = cpu_ms(run, 10)
        shown = "  ".join(f"{k} {v:.2f}" for k, v in parts.items() if k == "check" or v >= 0.05)
        print(f"check {path.name:<28} CPU ms: {shown}")


if __name__ == "__main__":
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000
    time_layouts()
    time_perturbed(n)
    time_checks()
