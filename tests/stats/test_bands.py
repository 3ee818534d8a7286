"""The fitted line's pointwise confidence band (app.stats.bands): against statsmodels' OLS prediction
intervals for the mean on a published series, and by seeded simulation of its coverage."""

from __future__ import annotations

import numpy as np
import pytest
import statsmodels.api as sm
from scipy.signal import lfilter
from statsmodels.datasets import nile

from app.stats.bands import band_half_width, line_band
from app.stats.ols import fit_trend, fit_trend_rows


def test_the_white_noise_band_is_the_ols_confidence_interval_of_the_mean():
    # Annual flow of the Nile at Aswan, 1871-1970, as shipped in statsmodels.datasets.nile (Cobb 1978).
    data = nile.load_pandas().data
    t, y = data["year"].to_numpy(float), data["volume"].to_numpy(float)
    fit = fit_trend(t, y)
    for confidence in (0.9, 0.95, 0.99):
        band = line_band(t, fit, fit.slope_stderr_white, confidence, dof=t.size - 2)
        reference = sm.OLS(y, sm.add_constant(t)).fit().get_prediction(sm.add_constant(t)).summary_frame(
            alpha=1 - confidence)
        np.testing.assert_allclose(band.value, reference["mean"], rtol=1e-10)
        np.testing.assert_allclose(band.lower, reference["mean_ci_lower"], rtol=1e-10)
        np.testing.assert_allclose(band.upper, reference["mean_ci_upper"], rtol=1e-10)


def test_the_band_is_narrowest_at_the_mean_time_and_widens_with_the_slope_error():
    t = np.arange(1970.5, 2000.5)
    y = 0.02 * t + np.sin(t)
    fit = fit_trend(t, y)
    white = line_band(t, fit, fit.slope_stderr_white, 0.95, dof=t.size - 2)
    width = white.upper - white.lower
    assert np.argmin(width) in (t.size // 2 - 1, t.size // 2)
    inflated = line_band(t, fit, 2 * fit.slope_stderr_white, 0.95, dof=t.size - 2)
    # Doubling the slope's error doubles the level's too (the same inflation), so the whole band doubles.
    np.testing.assert_allclose(inflated.upper - inflated.lower, 2 * width, rtol=1e-12)


def test_no_band_without_a_slope_error():
    t = np.arange(10.0)
    fit = fit_trend(t, 2 * t + 1)  # a perfect line: no residual, no error to band
    band = line_band(t, fit, float("nan"), 0.95, dof=8)
    assert band.lower is None and band.upper is None
    np.testing.assert_allclose(band.value, 2 * t + 1)


def _coverage(rows: np.ndarray, t: np.ndarray, truth: np.ndarray, inflation: float, confidence: float) -> np.ndarray:
    """How often each time's band holds the true line, over the simulated rows (all fits at once)."""
    fits = fit_trend_rows(t, rows)
    white = fits.slope_stderr_white[:, None]
    residual_sd = white * np.sqrt(fits.sxx)
    half = band_half_width(t[None, :], t_mean=t.mean(), n=t.size, residual_sd=residual_sd,
                           slope_stderr_white=white, slope_stderr=white * inflation, confidence=confidence,
                           dof=t.size - 2)
    line = fits.level_at_mean[:, None] + fits.slope[:, None] * fits.t_centred[None, :]
    return (np.abs(line - truth[None, :]) <= half).mean(axis=0)


def test_the_band_covers_the_true_line_as_often_as_it_says_under_white_noise():
    rng = np.random.default_rng(20240611)
    t = np.arange(1980.5, 2010.5)
    truth = 0.3 + 0.018 * (t - 1980)
    rows = truth + rng.normal(0.0, 0.12, size=(20_000, t.size))
    coverage = _coverage(rows, t, truth, inflation=1.0, confidence=0.95)
    # Binomial standard error of a share near 0.95 over 20,000 series is 0.0015: 4 of them allowed.
    assert np.all(np.abs(coverage - 0.95) < 0.006), coverage


@pytest.mark.parametrize("phi", [0.3, 0.6])
def test_with_the_ar1_inflation_the_band_covers_the_true_line_under_ar1_noise(phi):
    rng = np.random.default_rng(int(phi * 1000))
    t = np.arange(300.0)
    truth = 0.01 * t
    shocks = rng.normal(0.0, 1.0, size=(6_000, t.size + 200))
    noise = lfilter([1.0], [1.0, -phi], shocks, axis=1)[:, 200:]  # burn-in dropped: stationary AR(1)
    # For AR(1) noise the variance of a mean, and of a slope, grows by (1 + phi) / (1 - phi) for long series
    # (common practice, no source; e.g. the effective sample size n (1 - phi) / (1 + phi)).
    inflation = np.sqrt((1 + phi) / (1 - phi))
    coverage = _coverage(truth + noise, t, truth, inflation=inflation, confidence=0.95)
    # The inflation is the long-series limit, a little generous at the ends of 300 points; binomial error 0.003.
    assert np.all(np.abs(coverage - 0.95) < 0.03), coverage
    naive = _coverage(truth + noise, t, truth, inflation=1.0, confidence=0.95)
    assert naive.mean() < 0.9  # without it the band is far too narrow
