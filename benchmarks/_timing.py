"""Timing shared by the benchmark scripts (run them from the repository root)."""

from __future__ import annotations

import time
from collections.abc import Callable
from typing import Any


def best_of(fn: Callable[[], Any], repeat: int = 3) -> tuple[float, Any]:
    """Shortest wall time [s] of ``repeat`` calls of ``fn`` and the last call's result."""
    best, out = float("inf"), None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out
