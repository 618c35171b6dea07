"""Benchmark: prints how long solving takes; not a test.

1. Load + solve each demo layout (median of repeated runs).
2. The array-friendly core: the round trip of the folded demo cavity evaluated for many
   perturbed copies at once (every free spacing jittered), as a tolerancing run would.

Run: python benchmarks/bench_solve.py [samples]
"""

from __future__ import annotations

import statistics
import sys
import time
from pathlib import Path

import numpy as np

from benchcheck import abcd, solve_file
from benchcheck.unfold import Marker, Space

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


if __name__ == "__main__":
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000
    time_layouts()
    time_perturbed(n)
