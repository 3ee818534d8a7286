"""How often a series is sampled, judged from the spacing of its times, and where its grid has holes."""

from __future__ import annotations

import math

import numpy as np

from app.ingest.series import SAMPLING_STEP

# A time may sit this far (in steps) off its grid point and still count as on it: dates written on the
# 1st or the 15th of each month wander by up to 1.5 days against an even twelfth of a year, and
# decimal years rounded to two places wander by up to 0.06 of a month. Common practice, no source.
GRID_TOLERANCE = 0.2
PERIODS_PER_YEAR = {"monthly": 12, "quarterly": 4, "annual": 1}
# A time written exactly at a period's start (1998.0833 for February) must not fall into the period before.
_EDGE = 1e-6


def detect_sampling(times: np.ndarray) -> str:
    """The finest regular grid (monthly, quarterly, annual) the times sit on with most steps of one; else irregular."""
    times = np.asarray(times, dtype=float)
    if times.size < 2:
        return "irregular"
    for name in ("monthly", "quarterly", "annual"):
        steps = (times - times[0]) / SAMPLING_STEP[name]
        grid = np.rint(steps)
        jumps = np.diff(grid)
        if np.max(np.abs(steps - grid)) <= GRID_TOLERANCE and jumps.min() >= 1 and np.median(jumps) == 1:
            return name
    return "irregular"


def grid_positions(times: np.ndarray, sampling: str) -> np.ndarray:
    """Each time's whole number of steps from the first time (regular sampling only)."""
    return np.rint((np.asarray(times, dtype=float) - times[0]) / SAMPLING_STEP[sampling]).astype(np.int64)


def gap_count(times: np.ndarray, sampling: str) -> int:
    """How many grid times between the first and last time have no row at all."""
    if sampling not in SAMPLING_STEP or len(times) < 2:
        return 0
    return int(grid_positions(times, sampling)[-1]) + 1 - len(times)


def gap_times(times: np.ndarray, sampling: str) -> np.ndarray:
    """The grid times with no row at all; call only after ``gap_count`` showed the list is of sane size."""
    if gap_count(times, sampling) == 0:
        return np.empty(0)
    positions = grid_positions(times, sampling)
    present = np.zeros(int(positions[-1]) + 1, dtype=bool)
    present[positions] = True
    return times[0] + np.flatnonzero(~present) * SAMPLING_STEP[sampling]


def period_index(times: np.ndarray, periods_per_year: int) -> np.ndarray:
    """The whole number of periods (months, quarters, years) since year 0 in which each time falls."""
    return np.floor(np.asarray(times, dtype=float) * periods_per_year + _EDGE).astype(np.int64)


def period_label(time: float, sampling: str) -> str:
    """A grid time written the way a person would name its period: 1999-03, 1999-Q2, 1999."""
    if sampling == "monthly":
        year, month = divmod(int(period_index(np.array([time]), 12)[0]), 12)
        return f"{year:04d}-{month + 1:02d}"
    if sampling == "quarterly":
        year, quarter = divmod(int(period_index(np.array([time]), 4)[0]), 4)
        return f"{year:04d}-Q{quarter + 1}"
    if sampling == "annual":
        return str(math.floor(time + _EDGE))
    return f"{time:.3f}"
