"""A seasonal cycle in a monthly or quarterly series: a test for it, and its removal.

The test is the F test of calendar-period means on the residuals of a straight line: the line alone against the
line plus one mean per calendar month (or quarter), by least squares on the points present. Its size is the
standard deviation of the fitted period means against the standard deviation of what neither explains, since with
decades of data a cycle too small to matter is still "significant". Positive autocorrelation (AR(1) with phi > 0)
makes neighbouring months alike, so it shrinks the spread of the month means and the test errs on the side of
finding no cycle.

Removal is ``app.ingest.transform.anomalies``: each value minus the mean of its calendar month over a reference
period, the climatology a seasonal series' anomalies are usually taken against.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
from scipy import stats

from app.errors import ClaimError, Location
from app.ingest.sampling import PERIODS_PER_YEAR, period_index
from app.ingest.series import Series
from app.ingest.transform import anomalies

SIGNIFICANCE = 0.01
# A cycle whose spread is under a quarter of the noise's barely moves a trend fitted over whole years. Our
# requirement, no source.
MIN_SIZE = 0.25


@dataclass(frozen=True)
class SeasonalCycle:
    periods: int  # 12 (monthly) or 4 (quarterly)
    f_statistic: float
    df_periods: int  # periods - 1
    df_residual: int
    p_value: float
    period_means: tuple[float, ...]  # the fitted calendar-period effects, centred on zero, January (Q1) first
    amplitude: float  # largest minus smallest period effect
    size: float  # standard deviation of the period effects over the residual standard deviation
    present: bool  # p_value < SIGNIFICANCE and size >= MIN_SIZE

    def describe(self) -> str:
        unit = "calendar-month" if self.periods == 12 else "calendar-quarter"
        verdict = "a seasonal cycle" if self.present else "no seasonal cycle that matters"
        return (f"{verdict}: F test of {unit} means on the residuals of a straight line, F({self.df_periods}, "
                f"{self.df_residual}) = {self.f_statistic:.1f}, p = {self.p_value:.2g}; cycle range "
                f"{self.amplitude:.3g}, {self.size:.2f} times the noise's standard deviation")


def seasonal_f_statistics(times: np.ndarray, values: np.ndarray,
                          periods: int) -> tuple[np.ndarray, np.ndarray, np.ndarray, int]:
    """For each column of ``values`` (n x k, on the shared ``times``): the F statistic of the period means, the
    fitted period effects (periods x k, centred on zero), the residual sum of squares, and the residual degrees
    of freedom. One least-squares solve serves every column, so simulations pass thousands at once."""
    values = values.reshape(len(times), -1)
    full = _design(times, periods)
    rss_line = _fit(full[:, :2], values)[1]
    coef, rss_full = _fit(full, values)
    df_residual = len(times) - full.shape[1]
    f = ((rss_line - rss_full) / (periods - 1)) / (rss_full / df_residual)
    effects = np.vstack([np.zeros((1, values.shape[1])), coef[2:]])
    return f, effects - effects.mean(axis=0), rss_full, df_residual


def seasonal_cycle(series: Series) -> SeasonalCycle:
    periods = _periods(series, "the seasonal test")
    if series.n < 2 * periods + 2:
        raise ClaimError(f"the seasonal test needs at least two full years; the series has {series.n} values",
                         location=Location(field="series"), fix="Supply a longer series")
    f, effects, rss, df_residual = seasonal_f_statistics(series.time, series.value, periods)
    f_statistic = float(f[0])
    p_value = float(stats.f.sf(f_statistic, periods - 1, df_residual))
    residual_sd = float(np.sqrt(rss[0] / df_residual))
    effect = effects[:, 0]
    size = float(effect.std() / residual_sd) if residual_sd > 0 else float("inf")
    return SeasonalCycle(periods=periods, f_statistic=f_statistic, df_periods=periods - 1, df_residual=df_residual,
                         p_value=p_value, period_means=tuple(float(e) for e in effect),
                         amplitude=float(effect.max() - effect.min()), size=size,
                         present=p_value < SIGNIFICANCE and size >= MIN_SIZE)


def deseasonalise(series: Series, reference: tuple[float, float]) -> Series:
    """Anomalies against the mean of each calendar month (quarter) over ``reference``, half-open [start, end)."""
    _periods(series, "deseasonalising")
    cycle = seasonal_cycle(series)
    result = anomalies(series, reference)
    note = (f"deseasonalised against the {reference[0]:g} to {reference[1]:g} climatology (end excluded); before: "
            f"{cycle.describe()}")
    return replace(result, notes=result.notes + (note,))


def _periods(series: Series, what: str) -> int:
    if series.sampling not in ("monthly", "quarterly"):
        raise ClaimError(f"{what} needs monthly or quarterly data, but this series is {series.sampling}",
                         location=Location(field="series"), fix="Use a monthly or quarterly series")
    return PERIODS_PER_YEAR[series.sampling]


def _design(times: np.ndarray, periods: int) -> np.ndarray:
    season = period_index(times, periods) % periods
    dummies = (season[:, None] == np.arange(1, periods)[None, :]).astype(float)
    return np.column_stack([np.ones_like(times), times - times.mean(), dummies])


def _fit(design: np.ndarray, values: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    coef, *_ = np.linalg.lstsq(design, values, rcond=None)
    residual = values - design @ coef
    return coef, (residual ** 2).sum(axis=0)
