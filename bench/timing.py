"""Shared timing helper for the benchmarks: the median of repeated wall-clock runs."""

from __future__ import annotations

import statistics
import time
from typing import Callable


def median_seconds(fn: Callable[[], object], reps: int, warm: int = 1) -> float:
    """Median wall-clock time of ``fn()`` in seconds over ``reps`` runs, after ``warm`` warm-up calls."""
    for _ in range(warm):
        fn()
    times = []
    for _ in range(reps):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return statistics.median(times)
