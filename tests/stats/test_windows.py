"""Window slopes by prefix sums, checked against numpy/scipy line fits and by simulation."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from app.errors import ClaimError, SeriesContentError
from app.stats.windows import indices_for_times, slopes_for_bounds, window_slopes

MONTHLY = 1850.0 + (np.arange(1800) + 0.5) / 12.0  # 150 years at mid-month: decimal years near 2000


def _polyfit_windows(t, y, length):
    # Reference: numpy.polyfit, one least-squares fit per window.
    return np.array([np.polyfit(t[i:i + length], y[i:i + length], 1)[0] for i in range(t.size - length + 1)])


def _white_noise_slope_se(t, sigma):
    tc = t - t.mean()
    return sigma / np.sqrt(tc @ tc)


@pytest.mark.parametrize("length", [3, 12, 180, 1800])
def test_window_slopes_equal_polyfit_on_a_long_monthly_record(rng, length):
    y = 14.0 + 0.008 * (MONTHLY - 1850.0) + 0.2 * rng.standard_normal(MONTHLY.size)
    got = window_slopes(MONTHLY, y, length)
    want = _polyfit_windows(MONTHLY, y, length)
    assert got.shape == (MONTHLY.size - length + 1,)
    # Measured against the slope's own sampling spread: three-point windows at the far end of a
    # 150-year record are the hardest case and still agree to ~1e-7 of it.
    se = _white_noise_slope_se(MONTHLY[:length], 0.2)
    assert np.max(np.abs(got - want)) < 1e-6 * se


def test_window_slopes_equal_linregress_on_irregular_times(rng):
    t = np.sort(rng.uniform(1900.0, 2020.0, 300))
    y = 400.0 + 1.5 * (t - 1900.0) + rng.standard_normal(t.size)  # a large offset, like CO2 in ppm
    length = 25
    got = window_slopes(t, y, length)
    # Reference: scipy.stats.linregress on each window.
    want = np.array([stats.linregress(t[i:i + length], y[i:i + length]).slope for i in range(t.size - length + 1)])
    np.testing.assert_allclose(got, want, rtol=1e-9, atol=1e-9)


def test_window_slopes_of_many_rows_equal_each_row_alone(rng):
    t = 1979.0 + (np.arange(240) + 0.5) / 12.0
    y = rng.standard_normal((5, t.size)).cumsum(axis=1)
    got = window_slopes(t, y, 60)
    assert got.shape == (5, t.size - 59)
    for row in range(5):
        np.testing.assert_allclose(got[row], _polyfit_windows(t, y[row], 60), rtol=1e-9, atol=1e-12)
        np.testing.assert_allclose(got[row], window_slopes(t, y[row], 60), rtol=1e-12, atol=1e-15)


def test_slopes_for_bounds_equal_polyfit_and_mark_impossible_windows_nan(rng):
    t = np.sort(rng.uniform(1950.0, 2020.0, 200))
    y = rng.standard_normal(t.size) + 0.02 * (t - 1950.0)
    starts = rng.integers(0, 150, 40)
    ends = starts + rng.integers(2, 50, 40)
    got = slopes_for_bounds(t, y, starts, ends)
    want = [np.polyfit(t[s:e + 1], y[s:e + 1], 1)[0] for s, e in zip(starts, ends)]  # numpy.polyfit
    np.testing.assert_allclose(got, want, rtol=1e-9, atol=1e-12)

    too_short_or_outside = slopes_for_bounds(t, y, np.array([10, 10, 10, -1]), np.array([11, 9, 250, 20]))
    assert np.all(np.isnan(too_short_or_outside))


def test_slopes_for_bounds_broadcast_to_a_matrix_for_many_rows(rng):
    t = np.arange(60, dtype=float) + 1960.0
    y = rng.standard_normal((3, t.size))
    starts, ends = np.array([0, 5, 10]), np.array([30, 40, 59, 8])
    got = slopes_for_bounds(t, y, starts[:, None], ends[None, :])
    assert got.shape == (3, 3, 4)
    assert np.isnan(got[0, 2, 3])  # start 10 after end 8
    np.testing.assert_allclose(got[1, 1, 2], np.polyfit(t[5:60], y[1, 5:60], 1)[0], rtol=1e-10)


def test_white_noise_window_slopes_have_the_textbook_variance():
    # var(b) = sigma^2 / Sxx for OLS with independent errors (Draper & Smith 1998, Applied
    # Regression Analysis, 3rd ed., section 1.4; from memory).
    generator = np.random.default_rng(7)
    t = 1990.0 + (np.arange(120) + 0.5) / 12.0
    sigma, length = 0.3, 30
    slopes = window_slopes(t, sigma * generator.standard_normal((4000, t.size)), length)
    ratio = slopes.var(axis=0, ddof=1) / _white_noise_slope_se(t[:length], sigma) ** 2
    # Each window's variance from 4,000 draws has a relative standard error of sqrt(2 / 4000) = 2.2%.
    assert abs(ratio.mean() - 1.0) < 0.05
    assert np.all(np.abs(ratio - 1.0) < 0.12)
    # Unbiased: the mean over 4,000 draws sits within a tenth of one slope standard error of zero.
    assert abs(slopes.mean()) < 0.1 * _white_noise_slope_se(t[:length], sigma)


def test_indices_for_times_are_inclusive_and_forgive_rounding():
    t = np.array([1998.0, 1999.0, 2000.0, 2001.0])
    first, last = indices_for_times(t, np.array([1998.0 + 1e-9, 1998.5]), np.array([2000.0 - 1e-9, 2000.5]))
    np.testing.assert_array_equal(first, [0, 1])
    np.testing.assert_array_equal(last, [2, 2])


def test_bad_inputs_raise_domain_errors():
    t = np.arange(10, dtype=float)
    with pytest.raises(ClaimError, match="does not fit"):
        window_slopes(t, np.zeros(10), 11)
    with pytest.raises(ClaimError, match="does not fit"):
        window_slopes(t, np.zeros(10), 2)
    with pytest.raises(SeriesContentError, match="strictly increasing"):
        window_slopes(t[::-1], np.zeros(10), 5)
    with pytest.raises(SeriesContentError, match="do not match"):
        window_slopes(t, np.zeros(9), 5)
    with pytest.raises(SeriesContentError, match="finite"):
        window_slopes(t, np.full(10, np.nan), 5)
