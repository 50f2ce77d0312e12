"""The one timing helper the benchmark scripts share."""

from __future__ import annotations

import time
from typing import Callable


def best(fn: Callable[[], object], repeat: int = 5, *, warm_up: bool = True) -> float:
    """Best wall time of `repeat` calls of `fn` [s], after one untimed call."""
    if warm_up:
        fn()
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)
