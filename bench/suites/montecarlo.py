"""The spell-probability Monte Carlo engine against a naive loop and against its floor.

The engine simulates whole records of AR(1) noise and measures every window's OLS trend at once
(``app.stats.spells``). The naive loop does the same work the obvious way: one statsmodels OLS fit per
window of each simulated record. The floor is numpy drawing the same number of normal variates, the
least any simulation of that many values could cost. The naive loop is slow, so it runs on a few
records and its cost per record is compared with the engine's per record at the audit's 2,000.
"""

from __future__ import annotations

import time

import numpy as np
import statsmodels.api as sm

from app.stats.noise import NoiseModel, simulate_noise
from app.stats.spells import spell_probability
from bench.figures import Figure, at_least, at_most, context
from bench.timing import interleaved, measure

SIMULATIONS = 2000
NOISE = NoiseModel("ar1", phi=0.5, sigma=0.1)
CASES = {"annual": (np.arange(1885, 2025) + 0.5, 15), "monthly": (1875 + (np.arange(1800) + 0.5) / 12, 180)}


def naive_flattest(t: np.ndarray, window: int, records: int, rng: np.random.Generator) -> np.ndarray:
    """Per simulated record, its flattest window trend: one statsmodels OLS fit per window."""
    out = np.empty(records)
    for r, row in enumerate(simulate_noise(NOISE, t.size, records, rng)):
        slopes = [sm.OLS(row[i:i + window], sm.add_constant(t[i:i + window])).fit().params[1]
                  for i in range(t.size - window + 1)]
        out[r] = min(slopes)
    return out


def run(quick: bool) -> list[Figure]:
    figures = []
    for name, (t, window) in CASES.items():
        engine = lambda: spell_probability(t, 0.01, NOISE, window, 0.0, n_simulations=SIMULATIONS, rng=1)  # noqa: E731
        floor = lambda: np.random.default_rng(1).standard_normal((SIMULATIONS, t.size))  # noqa: E731
        engine_time, floor_time = interleaved(engine, floor, 5 if quick else 15)
        records = (2 if quick else 6) if name == "annual" else (1 if quick else 3)
        started = time.perf_counter()
        naive = naive_flattest(t, window, records, np.random.default_rng(2))
        naive_per_record = (time.perf_counter() - started) / records
        # The same records through the engine's own path agree with the naive loop's answers.
        check = spell_probability(t, 0.0, NOISE, window, 0.0, n_simulations=records, rng=2)
        agree = bool(np.allclose(check.simulated_extremes, naive, rtol=1e-7, atol=1e-12))
        engine_per_record = engine_time.median / SIMULATIONS
        small = measure(lambda: spell_probability(t, 0.0, NOISE, window, 0.0, n_simulations=records, rng=2),
                        5 if quick else 11)
        windows = t.size - window + 1
        figures.append(at_least(f"Monte Carlo vs naive loop, {name} ({t.size} points, {windows} windows)",
                                naive_per_record / engine_per_record, 100, "x",
                                naive_s_per_record=round(naive_per_record, 5),
                                engine_s_per_record=engine_per_record, naive_records=records,
                                same_answers=agree,
                                same_records_ratio=round(naive_per_record * records / small.median, 1)))
        figures.append(at_most(f"Monte Carlo vs floor (numpy normals), {name}",
                               engine_time.median / floor_time.median, 4, "x",
                               engine_s=round(engine_time.median, 4), floor_s=round(floor_time.median, 4),
                               simulations=SIMULATIONS))
        figures.append(context(f"Monte Carlo engine, {name}, {SIMULATIONS} records", engine_time.median * 1000, "ms"))
    return figures
