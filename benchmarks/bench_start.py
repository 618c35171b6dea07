"""Benchmark: how long a one-file `benchcheck check` takes to start, as pre-commit runs it;
not a test.

Prints the median wall and CPU times (of 9 runs, fresh processes, taken in turns so that
the load of a shared machine falls on both alike) of
  1. the floor: `python -c "import numpy, shapely, pluggy, tomllib"`, the libraries every
     check needs;
  2. `python -m benchcheck check --jobs 1 two-mirror.toml` on a demo layout, installed
     plugins off (BENCHCHECK_NO_ENTRY_POINTS=1): checked in the command's own process, as
     no plugin code is involved (benchcheck/pool.py);
their ratios in wall and CPU time (target <= 1.3), against the floor as it is and against
the floor with numpy's BLAS on one thread (OPENBLAS_NUM_THREADS=1 and the like, which the
command line sets for itself: with the default one spinning thread per core, numpy's import
alone costs about 0.1 s more CPU); the same layout copied outside the repository (the
built-in defaults: no [tolerances], so no Monte Carlo); then the same check with installed
plugins looked for (as a pre-commit hook runs it: with no plugin installed it also stays
in its process; with one, such as the example plugin, it starts a worker process); then
the `python -X importtime` figures of the check for the benchcheck modules and the slowest
other imports (cumulative microseconds); then where the check's time goes beyond the
floor, measured inside one process (medians of CPU time): importing benchcheck's modules,
the share of that spent by ``dataclasses`` writing and compiling the methods of the
record classes, and the check itself (its first run, with the imports it makes on the way:
numpy.random for the tolerance Monte Carlo of the repository's configuration).

Run: python benchmarks/bench_start.py [runs]
"""

from __future__ import annotations

import os
import resource
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
LAYOUT = ROOT / "layouts" / "two-mirror.toml"
FLOOR = "import numpy, shapely, pluggy, tomllib" if sys.version_info >= (3, 11) else \
    "import numpy, shapely, pluggy, tomli"


def _env(entry_points: bool = False) -> dict:
    """As a user's pre-commit hook runs: bytecode cached (a PYTHONDONTWRITEBYTECODE in the
    environment would make every run compile every module again), installed plugins off
    unless ``entry_points``."""
    env = dict(os.environ, BENCHCHECK_NO_ENTRY_POINTS="1")
    if entry_points:
        env.pop("BENCHCHECK_NO_ENTRY_POINTS")
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    return env


def _once(args: list[str], env: dict) -> tuple[float, float]:
    """Wall time and CPU time (user + system, the worker processes' included) of one run."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    subprocess.run(args, cwd=ROOT, env=env, capture_output=True, check=False)
    wall = time.perf_counter() - t0
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return wall, after.ru_utime - before.ru_utime + after.ru_stime - before.ru_stime


def timed(commands: list[tuple[list[str], dict]], runs: int) -> list[tuple[float, float]]:
    """Median wall time and median CPU time of ``runs`` fresh processes of each command,
    run in turns.  On a shared machine the CPU time is the steadier figure."""
    times: list[list[tuple[float, float]]] = [[] for _ in commands]
    for _ in range(runs):
        for (args, env), out in zip(commands, times):
            out.append(_once(args, env))
    return [(statistics.median(t[0] for t in out), statistics.median(t[1] for t in out)) for out in times]


def _plugins_installed() -> str:
    proc = subprocess.run([sys.executable, "-c", "from benchcheck.plugins import entry_points_installed as e; "
                           "print(e())"], cwd=ROOT, env=_env(), capture_output=True, text=True)
    return {"True": "an entry-point plugin is installed: a worker process",
            "False": "no entry-point plugin installed: in process"}.get(proc.stdout.strip(), proc.stderr.strip())


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


#: Run in a fresh process by ``breakdown``: the floor's imports, then benchcheck's modules
#: with ``dataclasses.dataclass`` timed, then the check in the same process.
_INSIDE = r"""
import contextlib, dataclasses, io, sys, time
import numpy, shapely, pluggy
try:
    import tomllib
except ImportError:
    import tomli
spent = [0.0, 0]
plain = dataclasses.dataclass

def timed(cls=None, /, **kw):
    def wrap(c):
        t = time.process_time()
        out = plain(**kw)(c)
        spent[0] += time.process_time() - t
        spent[1] += 1
        return out
    return wrap if cls is None else wrap(cls)

dataclasses.dataclass = timed
t0 = time.process_time()
from benchcheck import cli, engine, pool, plugins
plugins.load_rules((), entry_points=False)
t1 = time.process_time()
records, classes = spent
with contextlib.redirect_stdout(io.StringIO()):
    try:
        cli.main(["check", "--jobs", "1", sys.argv[1]])
    except SystemExit:
        pass
t2 = time.process_time()
print(t1 - t0, records, classes, t2 - t1, spent[0] - records)
"""


def breakdown(runs: int) -> None:
    """Medians over ``runs`` fresh processes of what the check adds to the floor."""
    rows = []
    for _ in range(runs):
        proc = subprocess.run([sys.executable, "-c", _INSIDE, str(LAYOUT)], cwd=ROOT, capture_output=True, text=True,
                              env=dict(_env(), OPENBLAS_NUM_THREADS="1", MKL_NUM_THREADS="1", OMP_NUM_THREADS="1"))
        if proc.returncode != 0:
            print(f"breakdown failed: {proc.stderr.strip()[-300:]}")
            return
        rows.append([float(x) for x in proc.stdout.split()])
    imports, records, classes, check, later = (statistics.median(r[i] for r in rows) for i in range(5))
    print(f"inside one process, CPU (medians of {runs}): importing benchcheck's modules {imports * 1e3:.0f} ms, "
          f"of which {records * 1e3:.0f} ms is dataclasses writing the methods of {classes:.0f} record classes; "
          f"the check itself (first run, with the imports it makes: {later * 1e3:.0f} ms more of record classes) "
          f"{check * 1e3:.0f} ms")


def main(runs: int = 9) -> None:
    check = [sys.executable, "-m", "benchcheck", "check", "--jobs", "1", str(LAYOUT)]
    floor_cmd = [sys.executable, "-c", FLOOR]
    # the same layout outside any repository: the built-in defaults (no [tolerances], so
    # no Monte Carlo), as for a lab that has not written a benchcheck.toml yet
    bare = Path(tempfile.mkdtemp(prefix="bench_start_")) / LAYOUT.name
    shutil.copyfile(LAYOUT, bare)
    check_bare = [sys.executable, "-m", "benchcheck", "check", "--jobs", "1", str(bare)]
    timed([(check, _env()), (check, _env(True)), (check_bare, _env())], 1)   # warm the bytecode caches
    one = dict(_env(), OPENBLAS_NUM_THREADS="1", MKL_NUM_THREADS="1", OMP_NUM_THREADS="1")
    (floor, floor_cpu), (floor1, floor1_cpu), (total, total_cpu), (eps, eps_cpu), (bare_t, bare_cpu) = timed(
        [(floor_cmd, _env()), (floor_cmd, one), (check, _env()), (check, _env(True)), (check_bare, _env())], runs)
    shutil.rmtree(bare.parent)
    print(f"floor  ({FLOOR}): {floor * 1e3:5.0f} ms wall, {floor_cpu * 1e3:5.0f} ms CPU  (medians of {runs})")
    print(f"floor, BLAS on one thread:                {floor1 * 1e3:5.0f} ms wall, {floor1_cpu * 1e3:5.0f} ms CPU")
    print(f"check  (one layout, one job):            {total * 1e3:5.0f} ms wall, {total_cpu * 1e3:5.0f} ms CPU")
    for label, ratio, ratio1 in (("wall", total / floor, total / floor1), ("CPU", total_cpu / floor_cpu,
                                                                           total_cpu / floor1_cpu)):
        print(f"ratio ({label}) {ratio:.2f}  (target <= 1.3: {'ok' if ratio <= 1.3 else 'OVER TARGET'}); "
              f"against the one-thread floor {ratio1:.2f} ({'ok' if ratio1 <= 1.3 else 'OVER TARGET'})")
    print(f"check, built-in defaults (no [tolerances]): {bare_t * 1e3:5.0f} ms wall, {bare_cpu * 1e3:5.0f} ms CPU  "
          f"(ratios {bare_t / floor:.2f} wall, {bare_cpu / floor_cpu:.2f} CPU; {bare_cpu / floor1_cpu:.2f} against the "
          "one-thread floor)")
    print(f"check, installed plugins looked for:     {eps * 1e3:5.0f} ms wall, {eps_cpu * 1e3:5.0f} ms CPU  "
          f"(ratios {eps / floor:.2f} wall, {eps_cpu / floor_cpu:.2f} CPU; {_plugins_installed()})")
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
    print()
    breakdown(runs)


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 9)
