"""The one timing helper the benchmark scripts share: CPU time, not wall time, because a
busy or shared machine disturbs the CPU time of a process far less than its wall time."""

from __future__ import annotations

import time
from typing import Callable


def cpu_ms(fn: Callable[[], object], calls: int = 1, rounds: int = 5) -> float:
    """CPU milliseconds per call of ``fn``: the least over ``rounds`` rounds of ``calls``
    calls each."""
    best = float("inf")
    for _ in range(rounds):
        t0 = time.process_time()
        for _ in range(calls):
            fn()
        best = min(best, (time.process_time() - t0) / calls)
    return best * 1e3
