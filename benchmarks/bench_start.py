"""Benchmark: how long a one-file `benchcheck check` takes to start, as pre-commit runs it;
not a test.

Prints the median wall time (of 9 runs, fresh processes) of
  1. the floor: `python -c "import numpy, shapely, pluggy, tomllib"`, the libraries every
     check needs;
  2. `python -m benchcheck check --jobs 1 two-mirror.toml` on a demo layout;
their ratios in wall and CPU time (target <= 1.3), and the `python -X importtime` figures of the check for the
benchcheck modules and the slowest other imports (cumulative microseconds).

Run: python benchmarks/bench_start.py [runs]
"""

from __future__ import annotations

import os
import resource
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
LAYOUT = ROOT / "layouts" / "two-mirror.toml"
FLOOR = "import numpy, shapely, pluggy, tomllib" if sys.version_info >= (3, 11) else \
    "import numpy, shapely, pluggy, tomli"


def _env() -> dict:
    """As a user's pre-commit hook runs: bytecode cached (a PYTHONDONTWRITEBYTECODE in the
    environment would make every run compile every module again), installed plugins off."""
    env = dict(os.environ, BENCHCHECK_NO_ENTRY_POINTS="1")
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    return env


def timed(args: list[str], runs: int) -> tuple[float, float]:
    """Median wall time and median CPU time (user + system) of ``runs`` fresh processes.
    On a shared machine the CPU time is the steadier figure."""
    env = _env()
    walls, cpus = [], []
    for _ in range(runs):
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        t0 = time.perf_counter()
        subprocess.run(args, cwd=ROOT, env=env, capture_output=True, check=False)
        walls.append(time.perf_counter() - t0)
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        cpus.append(after.ru_utime - before.ru_utime + after.ru_stime - before.ru_stime)
    return statistics.median(walls), statistics.median(cpus)


def import_times() -> list[tuple[int, int, str]]:
    env = _env()
    proc = subprocess.run([sys.executable, "-X", "importtime", "-m", "benchcheck", "check", "--jobs", "1", str(LAYOUT)],
                          cwd=ROOT, env=env, capture_output=True, text=True)
    rows = []
    for line in proc.stderr.splitlines():
        if not line.startswith("import time:") or "cumulative" in line:
            continue
        self_us, cumulative, name = line[len("import time:"):].split("|")
        rows.append((int(cumulative), int(self_us), name.rstrip()))
    return rows


def main(runs: int = 9) -> None:
    check = [sys.executable, "-m", "benchcheck", "check", "--jobs", "1", str(LAYOUT)]
    timed(check, 1)   # warm the bytecode caches
    floor, floor_cpu = timed([sys.executable, "-c", FLOOR], runs)
    total, total_cpu = timed(check, runs)
    print(f"floor  ({FLOOR}): {floor * 1e3:5.0f} ms wall, {floor_cpu * 1e3:5.0f} ms CPU  (medians of {runs})")
    print(f"check  (one layout, one job):            {total * 1e3:5.0f} ms wall, {total_cpu * 1e3:5.0f} ms CPU")
    for label, ratio in (("wall", total / floor), ("CPU", total_cpu / floor_cpu)):
        print(f"ratio ({label}) {ratio:.2f}  (target <= 1.3: {'ok' if ratio <= 1.3 else 'OVER TARGET'})")
    print()
    rows = import_times()
    ours = sorted((r for r in rows if r[2].strip().startswith(("benchcheck", "rules"))), reverse=True)
    print("python -X importtime, benchcheck modules (cumulative / self, microseconds):")
    for cumulative, self_us, name in ours[:15]:
        print(f"  {cumulative:8d} {self_us:8d}  {name.strip()}")
    others = sorted((r for r in rows if not r[2].strip().startswith(("benchcheck", "rules", "__editable"))
                     and r[2].startswith(" ") and not r[2].startswith("  ")), reverse=True)
    print("top-level imports of other packages:")
    for cumulative, self_us, name in others[:10]:
        print(f"  {cumulative:8d} {self_us:8d}  {name.strip()}")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 9)
