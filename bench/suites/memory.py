"""Peak resident memory of one audit on the largest input the service accepts, in a fresh process.

``python -m bench.suites.memory POINTS SIMULATIONS`` is the worker: it builds a daily series of that many
points (the likeliest way to reach the limit), runs the full audit, and prints its peak and time.

The peak is the kernel's high-water mark of the worker's own memory (``VmHWM``). ``ru_maxrss`` is printed
beside it but can be the larger: Linux carries the launching process's peak into a child's
``ru_maxrss`` across exec, so a worker started by a benchmark that already holds 360 MB reports 360 MB.
"""

from __future__ import annotations

import json
import resource
import subprocess
import sys
import time

from app.settings import PROJECT_ROOT, Settings
from bench.figures import Figure, at_most, context

TARGET_MB = 600.0


def _peak_mb() -> float:
    """This process's resident high-water mark (VmHWM), or ru_maxrss where /proc is missing."""
    try:
        with open("/proc/self/status", encoding="ascii") as status:
            for line in status:
                if line.startswith("VmHWM:"):
                    return float(line.split()[1]) / 1024.0  # kB
    except OSError:
        pass
    return _maxrss_mb()


def _maxrss_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0  # kilobytes on Linux


def worker(points: int, simulations: int) -> dict:
    from app.audit import AuditOptions, run_audit
    from bench import series

    data = series.daily(points)
    before = _peak_mb()
    started = time.perf_counter()
    result = run_audit(data, series.CLAIM, AuditOptions(seed=5, simulations=simulations))
    return {"points": points, "simulations": simulations, "seconds": time.perf_counter() - started,
            "peak_mb": _peak_mb(), "ru_maxrss_mb": _maxrss_mb(), "after_imports_mb": before,
            "verdict": result.verdict.code}


FORMER_LIMIT = 200_000  # the limit before the benchmarks: measured too in the full run, for comparison


def _measure(points: int, simulations: int) -> dict:
    answer = subprocess.run([sys.executable, "-m", "bench.suites.memory", str(points), str(simulations)],
                            cwd=PROJECT_ROOT, capture_output=True, text=True, check=True)
    return json.loads(answer.stdout.strip().splitlines()[-1])


def run(quick: bool) -> list[Figure]:
    settings = Settings()
    points, simulations = settings.max_points, settings.default_simulations
    measured = _measure(points, simulations)
    figures = [at_most(f"peak memory, audit of the largest input ({points:,} daily points, {simulations:,} "
                       "simulations)", measured["peak_mb"], TARGET_MB, "MB",
                       after_imports_mb=round(measured["after_imports_mb"], 1),
                       ru_maxrss_mb=round(measured["ru_maxrss_mb"], 1)),
               context("time of that audit", measured["seconds"], "s")]
    if not quick and points < FORMER_LIMIT:
        former = _measure(FORMER_LIMIT, simulations)
        figures += [context(f"peak memory at {FORMER_LIMIT:,} points (the former limit)", former["peak_mb"], "MB"),
                    context(f"time of that audit ({FORMER_LIMIT:,} points)", former["seconds"], "s")]
    return figures


if __name__ == "__main__":
    print(json.dumps(worker(int(sys.argv[1]), int(sys.argv[2]))))
