"""Timing shared by the benchmark scripts (run as ``python benchmarks/bench_*.py``, so this
folder is on the import path)."""

from __future__ import annotations

import time


def best_of(fn, repeat: int) -> float:
    """The fastest of ``repeat`` calls of ``fn()``, in seconds (the machine may be shared)."""
    best = float("inf")
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t)
    return best
