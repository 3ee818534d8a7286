"""The window-bounded change test: its fit against statsmodels, its calibration and power by simulation."""

from __future__ import annotations

import numpy as np
import pytest
import statsmodels.api as sm

from app.stats.noise import NoiseModel, simulate_noise
from app.stats.window_change import window_change_test
from app.stats.windows import window_slopes

ANNUAL = 1880.0 + np.arange(141) + 0.5


def _wilson_upper(successes: int, n: int, z: float = 1.96) -> float:
    """Upper end of the Wilson (1927) score interval for a binomial proportion."""
    p = successes / n
    centre = (p + z * z / (2 * n)) / (1 + z * z / n)
    half = z * np.sqrt(p * (1 - p) / n + z * z / (4 * n * n)) / (1 + z * z / n)
    return centre + half


def _wilson_lower(successes: int, n: int, z: float = 1.96) -> float:
    p = successes / n
    centre = (p + z * z / (2 * n)) / (1 + z * z / n)
    half = z * np.sqrt(p * (1 - p) / n + z * z / (4 * n * n)) / (1 + z * z / n)
    return centre - half


def _pause_that_ended(t):
    """0.01 a year to 1945, flat 1945-1975, then 0.018 a year."""
    level = np.where(t < 1945, 0.01 * (t - 1880), 0.65)
    return np.where(t > 1975, 0.65 + 0.018 * (t - 1975), level)


def test_slopes_and_step_match_statsmodels_ols():
    """The claimed model's slopes and the step's size are the OLS fits statsmodels gives for the same designs."""
    rng = np.random.default_rng(3)
    t = ANNUAL
    y = _pause_that_ended(t) + rng.normal(0, 0.1, t.size)
    first, after = int(np.searchsorted(t, 1945)), int(np.searchsorted(t, 1975, side="right"))
    result = window_change_test(t, y, first, after, "decrease", NoiseModel("white", sigma=0.1), 50,
                                np.random.default_rng(1))
    knot_a, knot_b = (t[first - 1] + t[first]) / 2, (t[after - 1] + t[after]) / 2
    design = sm.add_constant(np.column_stack([t, np.maximum(t - knot_a, 0), np.maximum(t - knot_b, 0)]))
    ols = sm.OLS(y, design).fit()
    assert result.slope_before == pytest.approx(ols.params[1], rel=1e-9)
    assert result.slope_window == pytest.approx(ols.params[1] + ols.params[2], rel=1e-9)
    assert result.slope_after == pytest.approx(ols.params[1] + ols.params[2] + ols.params[3], rel=1e-9)
    # The variance explained beyond the line is the difference of the two fits' residual sums of squares.
    line = sm.OLS(y, sm.add_constant(t)).fit()
    assert result.rss_reduction == pytest.approx(line.ssr - ols.ssr, rel=1e-8)
    step_at = int(np.searchsorted(t, result.step.time))
    step = sm.OLS(y, sm.add_constant(np.column_stack([t, (np.arange(t.size) >= step_at).astype(float)]))).fit()
    assert result.step.size == pytest.approx(step.params[2], rel=1e-8)
    assert result.step.rss_reduction == pytest.approx(line.ssr - step.ssr, rel=1e-8)
    jump = sm.OLS(y, np.column_stack([design, (np.arange(t.size) >= first).astype(float)])).fit()
    assert result.jump_slope_change == pytest.approx(jump.params[2], rel=1e-8)


def test_statistic_is_the_t_of_the_slope_change_under_white_noise():
    """With white noise the statistic is c1 over its OLS standard error, as statsmodels computes it, when the
    claimed window is the best-fitting one (its residuals then give the scale, as for every series)."""
    rng = np.random.default_rng(8)
    t = ANNUAL
    first, after = int(np.searchsorted(t, 1945)), int(np.searchsorted(t, 1975, side="right"))
    y = _pause_that_ended(t) + rng.normal(0, 0.02, t.size)
    result = window_change_test(t, y, first, after, "decrease", NoiseModel("white", sigma=0.02), 20,
                                np.random.default_rng(2))
    knot_a, knot_b = (t[first - 1] + t[first]) / 2, (t[after - 1] + t[after]) / 2
    design = sm.add_constant(np.column_stack([t, np.maximum(t - knot_a, 0), np.maximum(t - knot_b, 0)]))
    ols = sm.OLS(y, design).fit()
    assert result.statistic == pytest.approx(-ols.tvalues[2], rel=1e-9)  # white: no inflation


def _cherry_picked_rate(noise: NoiseModel, n: int, ppy: int, years: int, series: int, seed: int,
                        pick: str = "flattest") -> tuple[int, int]:
    rng = np.random.default_rng(seed)
    t = 1900.0 + (np.arange(n) + 0.5) / ppy
    length = years * ppy
    earliest = int(0.15 * n)
    rejections = 0
    for _ in range(series):
        y = 0.015 * (t - t[0]) + simulate_noise(noise, n, 1, rng)[0]
        slopes = window_slopes(t, y, length)[earliest:]
        k = earliest + int(np.argmin(slopes) if pick == "flattest" else np.argmax(slopes))
        direction = "decrease" if pick == "flattest" else "increase"
        result = window_change_test(t, y, k, k + length, direction, noise, 300, rng)
        rejections += result.p_value_adjusted < 0.05
    return rejections, series


NULL_CELLS = [
    ("ar1 0.5 annual", NoiseModel("ar1", phi=0.5, sigma=0.087), 140, 1, 10, "flattest"),
    ("ar1 0.5 annual, steepest", NoiseModel("ar1", phi=0.5, sigma=0.087), 140, 1, 15, "steepest"),
    ("arma11 0.9 -0.5 monthly", NoiseModel("arma11", phi=0.9, theta=-0.5, sigma=0.1), 480, 12, 10, "flattest"),
    ("ar2 0.5 0.3 annual", NoiseModel("ar2", phi=0.5, phi2=0.3, sigma=0.07), 140, 1, 10, "flattest"),
]


@pytest.mark.parametrize("name, noise, n, ppy, years, pick", NULL_CELLS, ids=[c[0] for c in NULL_CELLS])
def test_cherry_picked_windows_are_rejected_at_the_nominal_rate_when_the_noise_is_known(name, noise, n, ppy, years,
                                                                                        pick):
    """The adjusted p-value is a valid test of the largest statistic over windows: a claimant who picks the
    flattest (or steepest) window gets p < 0.05 in at most about 5% of records (our requirement; the
    test fails only when the Wilson (1927) interval over 300 records lies wholly above 5%)."""
    rejected, total = _cherry_picked_rate(noise, n, ppy, years, 300, seed=len(name))
    assert _wilson_lower(rejected, total) < 0.05, f"{name}: {rejected}/{total}"


def test_a_pause_that_ended_is_found():
    """Flat for 30 years, then faster than before: the bounded window sees it (a hinge to the record's end
    found it in none of 200 records)."""
    rng = np.random.default_rng(5)
    noise = NoiseModel("ar1", phi=0.5, sigma=0.087)
    first, after = int(np.searchsorted(ANNUAL, 1945)), int(np.searchsorted(ANNUAL, 1975, side="right"))
    found = 0
    for _ in range(60):
        y = _pause_that_ended(ANNUAL) + simulate_noise(noise, ANNUAL.size, 1, rng)[0]
        found += window_change_test(ANNUAL, y, first, after, "decrease", noise, 300, rng).p_value_adjusted < 0.05
    assert _wilson_lower(found, 60) > 0.6, found


def test_a_step_without_trend_change_is_told_apart():
    """A Nile-like step with no trend on either side: the step explains the data at least as well as a change
    of slope, and stands out against the search over dates."""
    rng = np.random.default_rng(6)
    t = 1871.0 + np.arange(100) + 0.5
    noise = NoiseModel("ar1", phi=0.2, sigma=0.1)
    first, after = int(np.searchsorted(t, 1899)), int(np.searchsorted(t, 1930, side="right"))
    told = 0
    for _ in range(40):
        y = np.where(t > 1898, -0.3, 0.0) + simulate_noise(noise, t.size, 1, rng)[0]
        step = window_change_test(t, y, first, after, "increase", noise, 300, rng).step
        told += step.explains_as_well and step.p_value_adjusted < 0.05
    assert told >= 36


def test_a_window_at_the_end_of_the_record_is_a_hinge():
    t = ANNUAL
    y = 0.01 * t + np.random.default_rng(1).normal(0, 0.1, t.size)
    result = window_change_test(t, y, t.size - 3, t.size, "decrease", NoiseModel("white", sigma=0.1), 20,
                                np.random.default_rng(1))
    assert result.model == "hinge_to_end" and np.isnan(result.slope_after)
    assert 0 < result.p_value_adjusted <= 1
