"""Repeated timing in one process: medians, with the minimum and the CPU time beside them.

The machine may be shared. Wall time is what a user waits; process CPU time is what the work itself
took, and stays near the unloaded wall time when other processes hold the cores.
"""

from __future__ import annotations

import statistics
import time
from dataclasses import dataclass
from typing import Callable


@dataclass(frozen=True)
class Timing:
    median: float  # wall seconds
    minimum: float
    cpu_median: float  # process CPU seconds
    runs: int


def _timed(work: Callable[[], object]) -> tuple[float, float]:
    wall, cpu = time.perf_counter(), time.process_time()
    work()
    return time.perf_counter() - wall, time.process_time() - cpu


def _timing(samples: list[tuple[float, float]]) -> Timing:
    walls = [wall for wall, _ in samples]
    return Timing(median=statistics.median(walls), minimum=min(walls),
                  cpu_median=statistics.median(cpu for _, cpu in samples), runs=len(samples))


def measure(work: Callable[[], object], repeats: int, warmup: int = 1) -> Timing:
    """Seconds per call of ``work``: ``warmup`` untimed calls (imports, caches), then ``repeats`` timed ones."""
    for _ in range(warmup):
        work()
    return _timing([_timed(work) for _ in range(repeats)])


def interleaved(first: Callable[[], object], second: Callable[[], object], repeats: int) -> tuple[Timing, Timing]:
    """Time two pieces of work turn about, so load from other processes falls on both alike."""
    first(), second()
    a, b = [], []
    for _ in range(repeats):
        a.append(_timed(first))
        b.append(_timed(second))
    return _timing(a), _timing(b)
