"""The verdict as each year was added: the same claim audited with the data cut at successive year ends.

Each cut is the verdict ``run_audit`` would give on the series as it stood at that year end (``audit_verdict``:
the same numbers, without the report's other analyses), with the claimed window running from the claim's start
to the cut ("the window to date"); no statistic is computed here. Every cut has its own seed, derived from
the audit's seed and the cut's year, so a row is reproducible alone and adding a year never shifts the numbers
of the others.

Speed: a cut is first audited with at most ``SCREEN_SIMULATIONS`` simulations. ``run_audit`` already grows
a change test whose p-value sits within simulation noise of the threshold; a cut whose screened p-value
still lies within ``SCREEN_MARGIN`` standard errors of the threshold is audited again with the audit's own
simulations, so only cuts whose verdict is far from the line use fewer. Cuts are independent, so a caller
with worker processes runs several at once (``executor``); the service does (``app.service.timeline``).
"""

from __future__ import annotations

import dataclasses
import math
from collections import deque
from collections.abc import Callable
from concurrent.futures import Executor, Future
from dataclasses import dataclass
from datetime import date

import numpy as np

from app.ingest.window_edges import in_window

from app.audit.claim import AuditOptions, Claim
from app.audit.run import audit_verdict
from app.errors import InputError
from app.ingest.sampling import period_label
from app.ingest.series import Series
from app.stats.window_change import monte_carlo_se

MAX_CUTS = 60  # our requirement: a timeline has at most this many rows
SCREEN_SIMULATIONS = 200  # measured: most of a cut is fixed cost (segmentation, noise fits), not simulation
SCREEN_MARGIN = 4.0  # standard errors of the screened p-value within which the audit's own simulations are used
EDGE = 1e-9


@dataclass(frozen=True)
class TimelineRow:
    """One cut: the data as they stood at ``cut_label``'s end, and what the audit said then."""

    cut_label: str
    cut_end: float  # decimal year up to which the data reach (the end of the last period kept)
    n: int
    window_first: str
    window_last: str
    seed: int
    simulations: int
    code: str
    headline: str
    window_slope: float
    window_ci: tuple[float, float]
    long_term_slope: float
    long_term_ci: tuple[float, float]
    change_p_adjusted: float


@dataclass(frozen=True)
class SkippedCut:
    cut_label: str
    reason: str


@dataclass(frozen=True)
class Timeline:
    rows: tuple[TimelineRow, ...]
    skipped: tuple[SkippedCut, ...]
    at_the_time: TimelineRow | None  # the data cut at the day the claim was made, when that is known
    made_on: str | None
    cuts_available: int  # year ends from the claim's end to the record's end, before thinning to MAX_CUTS


def cut_seed(seed: int, key: int) -> int:
    """The seed of one cut: derived from the audit's seed and the cut's year, never from its position."""
    state = np.random.SeedSequence(seed, spawn_key=(int(key),)).generate_state(2, dtype=np.uint64)
    return int(state[0] % np.uint64(2**63))


def decimal_date(iso: str) -> float:
    """A date as a decimal year at the start of that day (only data whose period had ended then count)."""
    day = date.fromisoformat(iso)
    first = date(day.year, 1, 1)
    length = (date(day.year + 1, 1, 1) - first).days
    return day.year + (day - first).days / length


def series_until(series: Series, moment: float) -> Series:
    """The points whose whole period had ended by ``moment``: the record as it stood then."""
    keep = series.time + series.step / 2.0 <= moment + EDGE
    labels = tuple(np.asarray(series.time_labels, dtype=object)[keep]) if series.time_labels else ()
    return dataclasses.replace(series, time=series.time[keep], value=series.value[keep],
                               missing_times=tuple(t for t in series.missing_times if t + series.step / 2 <= moment),
                               time_labels=labels)


def cut_years(series: Series, claim: Claim) -> list[int]:
    """Year ends from the one holding the claim's last window point to the record's last complete year."""
    half = series.step / 2.0
    in_claim = series.time[in_window(series.time, claim.start, claim.end)]
    if in_claim.size == 0:
        return []
    first = math.floor(float(in_claim[-1]) + EDGE)
    last = math.floor(series.end + half + EDGE) - 1  # the last year whose end the data reach
    if series.end + half + EDGE < last + 1:
        last -= 1
    return list(range(first, last + 1))


def thin(years: list[int], most: int = MAX_CUTS) -> list[int]:
    """At most ``most`` of the years, evenly spread, always keeping the first and the last."""
    if len(years) <= most:
        return years
    picks = np.unique(np.round(np.linspace(0, len(years) - 1, most)).astype(int))
    return [years[i] for i in picks]


def audit_cut(series: Series, claim: Claim, options: AuditOptions, moment: float, label: str,
              key: int) -> TimelineRow:
    """The verdict on the record as it stood at ``moment``, the window running to the last point then."""
    cut = series_until(series, moment)
    if cut.n == 0:
        raise InputError(f"no data had been recorded by {label}")
    window = Claim(start=claim.start, end=cut.end + cut.step / 2.0, kind=claim.kind)  # the window to date
    seed = cut_seed(options.seed if options.seed is not None else 0, key)
    screen = min(options.simulations, SCREEN_SIMULATIONS)
    result = audit_verdict(cut, window, dataclasses.replace(options, seed=seed, simulations=screen))
    p = result.change.p_value_adjusted
    alpha = 1.0 - options.confidence
    if screen < options.simulations and abs(p - alpha) < SCREEN_MARGIN * monte_carlo_se(p, result.change.n_simulations):
        result = audit_verdict(cut, window, dataclasses.replace(options, seed=seed))
    in_window = result.verdict_inputs
    return TimelineRow(
        cut_label=label, cut_end=float(moment), n=cut.n, window_first=in_window.first_label,
        window_last=in_window.last_label, seed=seed, simulations=result.options.simulations,
        code=result.verdict.code, headline=result.verdict.headline, window_slope=float(result.window.slope),
        window_ci=tuple(float(v) for v in result.window.ci), long_term_slope=float(result.long_term.slope),
        long_term_ci=tuple(float(v) for v in result.long_term.ci),
        change_p_adjusted=float(result.change.p_value_adjusted))


Cut = tuple[float, str, int]  # (the moment the data are cut at, its label, the key its seed derives from)


def cut_outcome(series: Series, claim: Claim, options: AuditOptions, cut: Cut) -> TimelineRow | SkippedCut:
    """One cut's row, or why it has none (too few points in the window or before it, as the data stood then)."""
    moment, label, key = cut
    try:
        return audit_cut(series, claim, options, moment, label, key)
    except InputError as error:
        return SkippedCut(label, error.message)


def _outcomes(series: Series, claim: Claim, options: AuditOptions, cuts: list[Cut], wait: Callable[[], None],
              executor: Executor | None, in_flight: int) -> list[TimelineRow | SkippedCut]:
    """Every cut's outcome, in order: one after another, or up to ``in_flight`` at once on ``executor``.
    ``wait`` runs before each cut starts, so a caller that gives way to other work never has more than
    ``in_flight`` cuts running."""
    if executor is None or in_flight < 2:
        outcomes = []
        for cut in cuts:
            wait()
            outcomes.append(cut_outcome(series, claim, options, cut))
        return outcomes
    running: deque[Future] = deque()
    outcomes = []
    try:
        for cut in cuts:
            if len(running) >= in_flight:
                outcomes.append(running.popleft().result())
            wait()
            running.append(executor.submit(cut_outcome, series, claim, options, cut))
        outcomes.extend(future.result() for future in list(running))
    finally:
        for future in running:
            future.cancel()
    return outcomes


def audit_timeline(series: Series, claim: Claim, options: AuditOptions, made_on: str | None = None,
                   before_each: Callable[[], None] | None = None, executor: Executor | None = None,
                   in_flight: int = 1) -> Timeline:
    """The claim audited at each year end from its window's end to the record's end, and on the day it was made.

    ``before_each`` is called before every cut (a background caller waits there to give way to other work). With
    an ``executor`` (worker processes), up to ``in_flight`` cuts run at once; the rows are the same either way."""
    years = cut_years(series, claim)
    cuts: list[Cut] = [(year + 1.0, period_label(year + 0.5, "annual"), year) for year in thin(years)]
    if made_on:
        moment = decimal_date(made_on)
        cuts.append((moment, made_on, int(round(moment * 1000))))
    outcomes = _outcomes(series, claim, options, cuts, before_each or (lambda: None), executor, in_flight)
    at_the_time = outcomes.pop() if made_on else None
    if isinstance(at_the_time, SkippedCut):
        outcomes.append(at_the_time)
        at_the_time = None
    return Timeline(rows=tuple(o for o in outcomes if isinstance(o, TimelineRow)),
                    skipped=tuple(o for o in outcomes if isinstance(o, SkippedCut)), at_the_time=at_the_time,
                    made_on=made_on, cuts_available=len(years))
