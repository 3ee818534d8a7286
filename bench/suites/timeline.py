"""The verdict timeline: a claim re-audited at 60 year ends, on an annual and a monthly record.

Timed as the service works a timeline out: its cuts on ``Settings().timeline_processes`` worker processes
(``app.service.timeline``), started before the clock runs. The same timeline one cut after another is shown
beside it for context. Each cut is the verdict the full audit would give; cuts whose change test sits far from
the threshold use fewer simulations (``app.audit.timeline``), so the figure says how many needed the audit's
full simulations. The full run (not ``--quick``) adds the timeline one cut after another for context.
"""

from __future__ import annotations

from app.audit import AuditOptions, Claim
from app.audit.timeline import MAX_CUTS, SCREEN_SIMULATIONS, audit_timeline
from app.service.timeline import cut_processes
from app.settings import Settings
from bench import series
from bench.figures import Figure, at_most, context
from bench.timing import measure

TARGETS = {"annual": 3.0, "monthly": 10.0}  # seconds for a 60-cut timeline, our requirement
CLAIM = Claim(1950.0, 1964.0, "pause")  # ends 60 year ends before the records' last complete year


def run(quick: bool) -> list[Figure]:
    repeats = 1 if quick else 3
    options = AuditOptions(seed=20_260_101)  # the audit's default 2,000 simulations
    processes = Settings().timeline_processes
    workers = cut_processes(processes)
    if workers is not None:
        list(workers.map(abs, range(processes)))  # the workers are started once per server process, not per timeline
    figures = []
    for name, make in (("annual", series.annual), ("monthly", series.monthly)):
        data = make()
        found = []
        timing = measure(lambda: found.append(audit_timeline(data, CLAIM, options, executor=workers,
                                                             in_flight=processes)), repeats, warmup=0)
        timeline = found[-1]
        full = sum(row.simulations > SCREEN_SIMULATIONS for row in timeline.rows)
        figures.append(at_most(f"timeline of {len(timeline.rows)} cuts, {name} ({data.n} points), median",
                               timing.median, TARGETS[name], "s", cuts=len(timeline.rows), max_cuts=MAX_CUTS,
                               worker_processes=processes, cuts_at_full_simulations=full, runs=timing.runs,
                               simulations=options.simulations))
        if quick:
            continue
        alone = measure(lambda: audit_timeline(data, CLAIM, options), 1, warmup=0)
        figures.append(context(f"the same timeline, {name}, one cut after another in one process",
                               alone.median, "s", cpu_s=round(alone.cpu_median, 3)))
    return figures
