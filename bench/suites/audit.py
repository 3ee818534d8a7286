"""A full audit (every analysis, the default 2,000 simulations) on an annual and a monthly record."""

from __future__ import annotations

from app.audit import AuditOptions, run_audit
from bench import series
from bench.figures import Figure, at_most, context
from bench.timing import measure

TARGETS = {"annual": 0.25, "monthly": 1.0}  # seconds, median


def run(quick: bool) -> list[Figure]:
    repeats = 5 if quick else 15
    options = AuditOptions(seed=20_260_101)  # default simulations (2,000), noise and breaks
    figures = []
    for name, make in (("annual", series.annual), ("monthly", series.monthly)):
        data = make()
        timing = measure(lambda: run_audit(data, series.CLAIM, options), repeats)
        figures.append(at_most(f"full audit, {name} ({data.n} points), median", timing.median, TARGETS[name], "s",
                               min_s=round(timing.minimum, 4), cpu_s=round(timing.cpu_median, 4), runs=timing.runs,
                               simulations=options.simulations))
        figures.append(context(f"full audit, {name}, process CPU time, median", timing.cpu_median, "s"))
    return figures
