"""Invented data with known structure for the API and CLI tests: a planted covariate, a driver-response pair."""

from __future__ import annotations

import numpy as np

PLANTED_BETA = 0.12  # response units per index unit
PLANTED_LAG = 1  # years
FIRST, LAST = 1950, 2024
PER_DOUBLING = 0.8  # the invented response's sensitivity, units per doubling of the driver


def ar1(rng: np.random.Generator, n: int, phi: float, sd: float) -> np.ndarray:
    shocks = rng.normal(0.0, sd, n)
    out = np.empty(n)
    out[0] = shocks[0] / np.sqrt(1 - phi**2)
    for i in range(1, n):
        out[i] = phi * out[i - 1] + shocks[i]
    return out


def planted(seed: int = 11, index_from: int = FIRST - 4) -> tuple[dict, dict]:
    """Invented annual data: a trend of 0.02 per year, an ENSO-like index entering a year late with weight
    PLANTED_BETA, and AR(1) noise; the index starts ``index_from`` so early lags are covered."""
    rng = np.random.default_rng(seed)
    index_years = np.arange(index_from, LAST + 1)
    index = ar1(rng, index_years.size, 0.5, 1.0)
    years = np.arange(FIRST, LAST + 1)
    lagged = index[np.searchsorted(index_years, years - PLANTED_LAG)]
    values = 0.02 * (years - FIRST) + PLANTED_BETA * lagged + ar1(rng, years.size, 0.3, 0.06)
    series = {"time": [int(y) for y in years], "value": [round(float(v), 5) for v in values]}
    covariate = {"name": "ENSO-like index", "time": [int(y) for y in index_years],
                 "value": [round(float(v), 5) for v in index]}
    return series, covariate


def planted_csv(index_column: str = "enso") -> str:
    series, covariate = planted()
    index = dict(zip(covariate["time"], covariate["value"]))
    rng = np.random.default_rng(5)
    rows = "".join(f"{t},{v},{index[t]},{rng.normal():.4f}\n" for t, v in zip(series["time"], series["value"]))
    return f"year,anomaly,{index_column},volcanic\n" + rows


def invented_pair(seed: int = 3, start: int = 1960, end: int = 2024) -> tuple[dict, dict]:
    """A driver rising like CO2 in ppm and a response following its logarithm plus AR(1) noise (invented)."""
    rng = np.random.default_rng(seed)
    years = np.arange(start, end + 1)
    driver = 315.0 * np.exp(0.004 * (years - start) + 0.00001 * (years - start) ** 2)
    noise = ar1(rng, years.size, 0.4, 0.08)
    response = PER_DOUBLING * np.log2(driver / 315.0) + noise
    as_list = lambda values: [round(float(v), 4) for v in values]  # noqa: E731
    return ({"time": [int(y) for y in years], "value": as_list(driver), "label": "CO2", "units": "ppm"},
            {"time": [int(y) for y in years], "value": as_list(response), "label": "Temperature anomaly",
             "units": "°C"})
