"""The one timing helper the benchmark scripts share (run them as scripts: this folder is then on sys.path)."""

from __future__ import annotations

import statistics
import time


def median_ms(fn, repeat: int) -> float:
    """Median wall time of ``fn()`` over ``repeat`` calls, in ms, after one warm-up call."""
    fn()
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times) * 1e3
