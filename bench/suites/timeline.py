"""The verdict timeline: a claim re-audited at 60 year ends, on an annual and a monthly record.

Each cut is a full audit of the record as it stood then; cuts whose change test sits far from the threshold
use fewer simulations (``app.audit.timeline``), so the figure beside each target says how many cuts needed
the audit's full simulations.
"""

from __future__ import annotations

from app.audit import AuditOptions, Claim
from app.audit.timeline import MAX_CUTS, SCREEN_SIMULATIONS, audit_timeline
from bench import series
from bench.figures import Figure, at_most
from bench.timing import measure

TARGETS = {"annual": 3.0, "monthly": 10.0}  # seconds for a 60-cut timeline, our requirement
CLAIM = Claim(1950.0, 1964.0, "pause")  # ends 60 year ends before the records' last complete year


def run(quick: bool) -> list[Figure]:
    repeats = 1 if quick else 3
    options = AuditOptions(seed=20_260_101)  # the audit's default 2,000 simulations
    figures = []
    for name, make in (("annual", series.annual), ("monthly", series.monthly)):
        data = make()
        found = []
        timing = measure(lambda: found.append(audit_timeline(data, CLAIM, options)), repeats, warmup=0)
        timeline = found[-1]
        full = sum(row.simulations > SCREEN_SIMULATIONS for row in timeline.rows)
        figures.append(at_most(f"timeline of {len(timeline.rows)} cuts, {name} ({data.n} points), median",
                               timing.median, TARGETS[name], "s", cuts=len(timeline.rows), max_cuts=MAX_CUTS,
                               cuts_at_full_simulations=full, cpu_s=round(timing.cpu_median, 3), runs=timing.runs,
                               simulations=options.simulations))
    return figures
