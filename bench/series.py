"""Invented series for the benchmarks: the shapes an audit meets, made from a fixed seed."""

from __future__ import annotations

import numpy as np

from app.audit import Claim
from app.ingest.series import Series
from app.stats.noise import NoiseModel, simulate_noise

CLAIM = Claim(1998.0, 2012.0, "pause")  # a fifteen-year "pause" near the end of a warming record


def _warming(t: np.ndarray, phi: float, sd: float, seed: int) -> np.ndarray:
    """A slow rise that steepens in 1970, plus AR(1) noise of marginal standard deviation ``sd``."""
    noise = simulate_noise(NoiseModel("ar1", phi=phi, sigma=sd * np.sqrt(1 - phi * phi)), t.size, 1,
                           np.random.default_rng(seed))[0]
    return 0.004 * (t - t[0]) + 0.014 * np.maximum(t - 1970.0, 0.0) + noise


def annual(seed: int = 1) -> Series:
    """140 annual means, 1885-2024, mid-year."""
    t = np.arange(1885, 2025) + 0.5
    return Series(time=t, value=_warming(t, 0.5, 0.1, seed), sampling="annual", label="annual", units="°C")


def monthly(seed: int = 2) -> Series:
    """1,800 monthly values, 1875-2024, mid-month."""
    t = 1875 + (np.arange(1800) + 0.5) / 12
    return Series(time=t, value=_warming(t, 0.6, 0.15, seed), sampling="monthly", label="monthly", units="°C")


def daily(points: int, seed: int = 3) -> Series:
    """``points`` daily values ending in 2024 (irregular sampling to the ingest: a date axis).

    A steady trend: with no change of rate the reference period is the whole record, so every
    simulation runs over every point (the audit's worst case for a given length).
    """
    t = 2025.0 - points / 365.25 + (np.arange(points) + 0.5) / 365.25
    noise = simulate_noise(NoiseModel("ar1", phi=0.7, sigma=0.3 * np.sqrt(1 - 0.49)), t.size, 1,
                           np.random.default_rng(seed))[0]
    return Series(time=t, value=0.01 * (t - t[0]) + noise, sampling="irregular", label="daily", units="°C")


def segmentation_series(points: int = 500, seed: int = 0) -> tuple[np.ndarray, np.ndarray]:
    """A random walk plus noise: several real changes of level and slope for an exact segmentation."""
    rng = np.random.default_rng(seed)
    t = np.arange(points, dtype=float)
    return t, np.cumsum(rng.standard_normal(points)) * 0.3 + rng.standard_normal(points)
