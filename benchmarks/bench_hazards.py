"""Benchmark: prints how long the laser-hazard assessment, placement and tracing take; not a test.

1. Each demo layout (layouts/*.toml), in one process: CPU time of ``place``, ``trace`` and
   ``hazards.assess`` on the solved bench (the least of several rounds, since a shared
   machine only ever adds time), and the count of hazard segments.
2. The long relay line of ``bench_scale.py`` (N optics, a secondary beam at every row
   end): CPU time of ``hazards.assess`` and its time per segment, which must stay flat as
   N grows (the assessment is linear in the length of the path).

The exposure limits are remembered per (wavelength, duration) within a process, so every
round after the first is what a ``check`` of many layouts sees after its first layout.

Run: python benchmarks/bench_hazards.py [--quick]   (--quick: N = 250..1000, fewer rounds)
"""

from __future__ import annotations

import sys
from pathlib import Path

from benchcheck import hazards, solve_file, solve_text
from benchcheck.placement import place
from benchcheck.trace import trace

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_scale import long_bench  # noqa: E402  (the same generated line as the scale benchmark)
from cputime import cpu_ms  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent


def demos(repeat: int) -> None:
    print("demo layout                  place ms  trace ms  hazards ms  segments")
    for path in sorted((ROOT / "layouts").glob("*.toml")):
        solution = solve_file(path)
        layout = solution.layout
        placed = place(layout)
        segs = len(hazards.assess(solution).segments)
        print(f"{path.name:28s} {cpu_ms(lambda: place(layout), repeat):8.2f}  "
              f"{cpu_ms(lambda: trace(placed), repeat):8.2f}  "
              f"{cpu_ms(lambda: hazards.assess(solution), repeat):10.2f}  {segs:8d}")


def long_paths(sizes) -> None:
    print("long path N   hazards ms  segments  us per segment")
    for n in sizes:
        solution = solve_text(long_bench(n))
        ms = cpu_ms(lambda: hazards.assess(solution), 1, rounds=3)
        segs = len(hazards.assess(solution).segments)
        print(f"{n:11d}  {ms:10.0f}  {segs:8d}  {ms * 1e3 / segs:14.0f}")


def main(quick: bool = False) -> None:
    demos(20 if quick else 100)
    long_paths((250, 500, 1000) if quick else (1000, 2000, 4000))


if __name__ == "__main__":
    main(quick="--quick" in sys.argv[1:])
