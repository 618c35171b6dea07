"""Benchmark: prints how long the exact thermal-lens range check takes; not a test.

A linear cavity between flat mirrors with n thin crystals, each with a thermal-lens range:
(1) crystals spread along the cavity (isolated extremes of m), (2) crystals 1 um apart (a
nearly flat ridge of extremes, where the refinement budget caps the search).

Run: python benchmarks/bench_thermal.py
"""

from __future__ import annotations

import statistics
import time

from benchcheck import solve_text


def layout(spacings, f_range) -> str:
    lines = ['format = 1', '[bench]', 'name = "thermal benchmark"', 'size = [20000.0, 2000.0]',
             '[[optic]]', 'id = "M1"', 'kind = "mirror"', 'at = [100.0, 500.0]']
    path = ['"M1"']
    for j, d in enumerate(spacings[:-1]):
        lines += ['[[optic]]', f'id = "X{j}"', 'kind = "crystal"', 'length = 0.001', 'index = 1.0',
                  f'thermal_lens = [{f_range[0]!r}, {f_range[1]!r}]']
        path.append(f'{{ id = "X{j}", distance = {d!r} }}')
    lines += ['[[optic]]', 'id = "M2"', 'kind = "mirror"']
    path.append(f'{{ id = "M2", distance = {spacings[-1]!r} }}')
    lines += ['[[cavity]]', 'id = "c"', 'kind = "linear"', 'heading = 0.0', 'wavelength_nm = 1064.0',
              f'path = [{", ".join(path)}]']
    return "\n".join(lines) + "\n"


def main() -> None:
    for n in (1, 2, 4, 6, 8):
        for label, gap in (("spread", 60.0), ("1 um apart", 0.001)):
            spacings = (100.0,) + (gap,) * (n - 1) + (300.0,)
            text = layout(spacings, (900.0 * n, 4000.0 * n))
            runs = []
            for _ in range(3):
                t0 = time.perf_counter()
                sol = solve_text(text)
                runs.append(time.perf_counter() - t0)
            scan = sol.cavities["c"].thermal
            lo, hi = scan.m_range["t"]
            print(f"{n} lenses, {label:<10}  median {statistics.median(runs) * 1e3:8.1f} ms  "
                  f"m from {lo:+.6f} to {hi:+.6f}, stable {scan.stable['t']}")


if __name__ == "__main__":
    main()
