"""Exact segmentation into separate lines against ruptures' Dynp: the same 500 points, cost and optimum."""

from __future__ import annotations

import time

import numpy as np
import ruptures as rpt

from app.stats.segment.costs import LinearCost
from app.stats.segment.discontinuous import DiscontinuousSearch
from bench.figures import Figure, at_least, context
from bench.series import segmentation_series
from bench.timing import measure

BREAKS, MIN_SIZE = 4, 10


def run(quick: bool) -> list[Figure]:
    t, y = segmentation_series(500)
    signal = np.column_stack([y, np.ones_like(t), t])  # ruptures' "linear" cost: y on (1, t), per segment
    ours = measure(lambda: DiscontinuousSearch(t, y, LinearCost(t, y), BREAKS, MIN_SIZE), 5 if quick else 15)
    theirs_runs = []
    for _ in range(1 if quick else 3):
        started = time.perf_counter()
        theirs = rpt.Dynp(model="linear", min_size=MIN_SIZE, jump=1).fit(signal).predict(n_bkps=BREAKS)
        theirs_runs.append(time.perf_counter() - started)
    theirs_time = float(np.median(theirs_runs))
    found = DiscontinuousSearch(t, y, LinearCost(t, y), BREAKS, MIN_SIZE).best[BREAKS][0]
    same = list(found) + [t.size] == theirs
    return [at_least("segmentation vs ruptures Dynp (500 points, linear cost, 4 breaks)",
                     theirs_time / ours.median if same else 0.0, 20, "x",
                     ours_s=round(ours.median, 5), ruptures_s=round(theirs_time, 3), same_breakpoints=same,
                     breakpoints=list(map(int, found)), ruptures_runs=len(theirs_runs)),
            context("segmentation, ours, 500 points", ours.median * 1000, "ms")]
