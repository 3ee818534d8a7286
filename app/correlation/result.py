"""The correlation audit's result: every analysis once, as frozen dataclasses; JSON and HTML render it."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from app.correlation.options import CorrelationOptions
from app.ingest.series import Series
from app.stats.correlate import CorrelationNull, CorrelationSet, DriverRegression, RollingCorrelation


@dataclass(frozen=True)
class CorrelationVerdict:
    code: str
    headline: str
    summary: str
    reasons: tuple[str, ...]


@dataclass(frozen=True, eq=False)
class CorrelationResult:
    driver: Series
    response: Series
    options: CorrelationOptions
    seed: int
    software_version: str
    time: np.ndarray  # the shared times
    driver_values: np.ndarray  # the driver at those times, as given
    driver_transformed: np.ndarray  # ... after the transform (what the response is regressed on)
    response_values: np.ndarray
    window_points: int
    regression: DriverRegression
    per_doubling: tuple[float, tuple[float, float]] | None  # with the log transform: slope * ln 2 and its range
    correlations: CorrelationSet
    rolling: RollingCorrelation
    null: CorrelationNull
    warnings: tuple[str, ...]
    verdict: CorrelationVerdict
    elapsed_seconds: float
