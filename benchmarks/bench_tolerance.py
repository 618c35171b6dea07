"""Benchmark of the tolerance Monte Carlo: prints times; not a test.

For the folded demo cavity (5 elements) and generated rectangular rings of 10 and 20
elements (four flat corner mirrors, a lens on every side, crystals, plates and apertures
between), with the default tolerances of README "Tolerances and alignment":

1. 100,000 builds with ``tolerance.run_cavity`` (the whole run: sampling, round trips,
   eigenmodes, radii at every optic, percentiles, regression), best of a few runs;
2. the same builds one at a time in a Python loop over ``tolerance.evaluate`` (what a
   per-build implementation costs), timed on a subset and scaled to 100,000;
3. the ratio.  Targets (issue 11): 100,000 builds of a 10-element cavity in under 1 s on
   2 cores, and at least 50 times faster than the loop.

Run: python benchmarks/bench_tolerance.py [samples]

On a machine shared with other busy processes, OpenBLAS threads that spin while waiting
slow the regression's one matrix product many times over; ``OPENBLAS_NUM_THREADS=1``
gives figures that do not depend on the neighbours.  The load average is printed.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

from benchcheck import solve_file, solve_text, tolerance, tolspec

ROOT = Path(__file__).resolve().parent.parent
LOOP_SAMPLES = 300
SIDE_MM = 400.0


def ring_layout(elements: int) -> str:
    """A rectangular ring: four flat 45-degree corner mirrors and ``elements - 4`` others
    spread over the sides, a lens (f = 250 mm, so the 400 mm period is stable) first on
    every side, then crystals, plates and apertures in turn."""
    extra = elements - 4
    per_side = [1 + (extra - 4) // 4 + (1 if i < (extra - 4) % 4 else 0) for i in range(4)]
    kinds = ["crystal", "plate", "aperture"]
    optics, path = [], ['"C0"']
    optics.append('[[optic]]\nid = "C0"\nkind = "mirror"\nat = [200.0, 200.0]\n')
    k = 0
    for side in range(4):
        n = per_side[side]
        step = SIDE_MM / (n + 1)
        for j in range(n):
            ident = f"E{side}{j}"
            kind = "lens" if j == 0 else kinds[k % 3]
            k += j > 0
            body = {"lens": 'focal_length = 250.0\n', "crystal": 'length = 10.0\nindex = 1.5\n',
                    "plate": 'thickness = 3.0\nindex = 1.45\naoi = 10.0\n', "aperture": 'diameter = 10.0\n'}[kind]
            optics.append(f'[[optic]]\nid = "{ident}"\nkind = "{kind}"\n{body}')
            path.append(f'{{ id = "{ident}", distance = {step} }}')
        if side < 3:
            optics.append(f'[[optic]]\nid = "C{side + 1}"\nkind = "mirror"\n')
            path.append(f'{{ id = "C{side + 1}", distance = {step}, fold = 90.0 }}')
    head = 'format = 1\n[bench]\nname = "benchmark ring"\nsize = [1000, 1000]\n'
    cav = (f'[[cavity]]\nid = "ring"\nkind = "ring"\nheading = 0.0\nwavelength_nm = 1064\n'
           f'path = [{", ".join(path)}]\n')
    return head + "\n".join(optics) + "\n" + cav


def bench(label: str, sol, cid: str, samples: int, repeat: int = 3) -> None:
    tol = tolspec.Tolerances(source=tolspec.FROM_DEFAULTS)
    path = sol.trace.cavities[cid]
    params = tolerance.parameters(sol.layout, path, tol)
    best = float("inf")
    for r in range(repeat):
        t0 = time.perf_counter()
        res = tolerance.run_cavity(sol, cid, tol, samples, np.random.default_rng(r))
        best = min(best, time.perf_counter() - t0)
    oriented = {oid for oid, p in sol.placement.optics.items() if p.oriented_by == cid}
    x = tolerance.draw(params, LOOP_SAMPLES, np.random.default_rng(9), tol.distribution)
    t0 = time.perf_counter()
    for i in range(LOOP_SAMPLES):
        tolerance.evaluate(sol.layout, path, params, x[i:i + 1], oriented)
    per = (time.perf_counter() - t0) / LOOP_SAMPLES
    loop = per * samples
    print(f"{label:<34} {len(path.hits):>2} elements, {len(params):>2} parameters: {samples:,} builds in "
          f"{best:6.3f} s ({best / samples * 1e6:5.2f} us/build, yield {res.yield_stable:.3f}); "
          f"loop {per * 1e3:6.2f} ms/build -> {loop:7.1f} s; {loop / best:6.0f}x faster")


if __name__ == "__main__":
    import os

    n = int(sys.argv[1]) if len(sys.argv) > 1 else 100_000
    print(f"load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores; "
          f"OPENBLAS_NUM_THREADS={os.environ.get('OPENBLAS_NUM_THREADS', 'unset')}")
    demo = solve_file(ROOT / "layouts" / "folded-brewster.toml")
    bench("folded demo cavity (osc)", demo, "osc", n)
    for elements in (10, 20):
        bench(f"rectangular ring, {elements} elements", solve_text(ring_layout(elements)), "ring", n)
