"""Cherry-pick diagnostics: the start/end sensitivity matrix and the endpoint spike check."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from app.errors import ClaimError, InputError
from app.stats.ols import fit_trend
from app.stats.sensitivity import endpoint_outliers, window_sensitivity

ANNUAL = np.arange(1970.0, 2021.0)


def _polyfit_between(t, y, start, end):
    # Reference: numpy.polyfit on the points with start <= t <= end.
    inside = (t >= start - 1e-6) & (t <= end + 1e-6)
    return np.polyfit(t[inside], y[inside], 1)[0] if inside.sum() >= 3 else np.nan


def _spiky_record(spike=0.5, dip=0.0):
    """A steady 0.02 per year with a warm spike in 1998 and, optionally, a cold dip in 2012."""
    y = 0.02 * (ANNUAL - 1970.0)
    y[ANNUAL == 1998.0] += spike
    y[ANNUAL == 2012.0] -= dip
    return y


def test_annual_cells_equal_polyfit_and_the_claim_is_the_centre(rng):
    y = 0.02 * (ANNUAL - 1970.0) + 0.1 * rng.standard_normal(ANNUAL.size)
    matrix = window_sensitivity(ANNUAL, y, 1998.0, 2012.0, k_years=3.0)
    np.testing.assert_allclose(matrix.start_times, np.arange(1995.0, 2002.0))
    np.testing.assert_allclose(matrix.end_times, np.arange(2009.0, 2016.0))
    want = np.array([[_polyfit_between(ANNUAL, y, s, e) for e in matrix.end_times] for s in matrix.start_times])
    np.testing.assert_allclose(matrix.slopes, want, rtol=1e-9)
    assert matrix.claimed_slope == pytest.approx(matrix.slopes[3, 3], rel=1e-12)
    assert matrix.claimed_slope == pytest.approx(_polyfit_between(ANNUAL, y, 1998.0, 2012.0), rel=1e-9)
    assert matrix.min_slope == pytest.approx(np.nanmin(want)) and matrix.max_slope == pytest.approx(np.nanmax(want))
    assert matrix.long_term_slope == pytest.approx(np.polyfit(ANNUAL, y, 1)[0], rel=1e-9)
    assert matrix.share_flatter_than_long_term == pytest.approx(np.mean(want < matrix.long_term_slope))


def test_monthly_data_default_to_a_quarter_year_grid_and_match_polyfit(rng):
    t = 1979.0 + (np.arange(540) + 0.5) / 12.0
    y = 0.018 * (t - 1979.0) + 0.12 * rng.standard_normal(t.size)
    matrix = window_sensitivity(t, y, 1998.0, 2013.0)
    assert matrix.step == 0.25 and matrix.slopes.shape == (25, 25)
    for i, j in [(0, 0), (5, 17), (12, 12), (24, 24), (20, 3)]:
        assert matrix.slopes[i, j] == pytest.approx(
            _polyfit_between(t, y, matrix.start_times[i], matrix.end_times[j]), rel=1e-9)


def test_cells_that_are_too_short_inverted_or_beyond_the_data_are_nan():
    y = _spiky_record()
    short = window_sensitivity(ANNUAL, y, 2000.0, 2004.0, k_years=3.0)
    starts, ends = short.start_times[:, None], short.end_times[None, :]
    counts = np.floor(ends) - np.ceil(starts) + 1
    np.testing.assert_array_equal(np.isnan(short.slopes), counts < 3)
    edge = window_sensitivity(ANNUAL, y, 2005.0, 2019.0, k_years=3.0)
    assert np.all(np.isnan(edge.slopes[:, edge.end_times > 2021.0]))  # more than a year past the last point
    assert np.all(np.isfinite(edge.slopes[:, edge.end_times <= 2021.0]))


def test_a_claim_starting_on_a_spike_and_ending_on_a_dip_is_the_flattest_cell():
    matrix = window_sensitivity(ANNUAL, _spiky_record(spike=0.5, dip=0.3), 1998.0, 2012.0, k_years=3.0)
    assert matrix.claimed_rank_percentile == 0.0
    assert matrix.share_lower == 0.0
    assert matrix.claimed_slope == matrix.min_slope
    # Moving the start one year off the spike changes the picture: the claim is no longer the extreme.
    moved = window_sensitivity(ANNUAL, _spiky_record(spike=0.5, dip=0.3), 1999.0, 2012.0, k_years=3.0)
    assert moved.claimed_rank_percentile > 40.0


def test_starting_on_the_spike_is_the_flattest_start_for_every_end():
    y = _spiky_record(spike=0.5)
    matrix = window_sensitivity(ANNUAL, y, 1998.0, 2012.0, k_years=3.0)
    assert np.all(np.nanargmin(matrix.slopes, axis=0) == 3)
    # The rank among the 48 other cells, counted from numpy.polyfit fits: only the three shorter
    # windows from the spike and the shortest one from a year before are flatter (a spike tilts a
    # short window more than a long one).
    reference = np.array([[_polyfit_between(ANNUAL, y, s, e) for e in matrix.end_times] for s in matrix.start_times])
    others = np.delete(reference.ravel(), 3 * 7 + 3)
    lower = np.count_nonzero(others < _polyfit_between(ANNUAL, y, 1998.0, 2012.0))
    assert lower == 4
    assert matrix.share_lower == pytest.approx(lower / 48)
    assert matrix.claimed_rank_percentile == pytest.approx(100 * lower / 48)


def test_rank_and_shares_are_centred_under_a_trendless_null():
    # With no trend and Gaussian noise, flipping the sign of the series mirrors every rank, so
    # the claimed window's percentile averages 50 and half the cells fall below the true slope 0.
    generator = np.random.default_rng(99)
    records = 0.2 * generator.standard_normal((300, ANNUAL.size))
    results = [window_sensitivity(ANNUAL, y, 1995.0, 2010.0, long_term_slope=0.0) for y in records]
    percentiles = np.array([r.claimed_rank_percentile for r in results])
    shares = np.array([r.share_flatter_than_long_term for r in results])
    # Percentiles spread like a uniform (sd about 29): the mean of 300 has sd about 1.7; 3.5 of those.
    assert abs(percentiles.mean() - 50.0) < 6.0
    assert abs(shares.mean() - 0.5) < 0.06


def test_endpoint_check_flags_a_planted_spike_with_its_z_score():
    y = _spiky_record(spike=0.5)
    line = 0.02 * (ANNUAL - 1970.0)
    check = endpoint_outliers(ANNUAL, y, 1998.0, 2012.0, line, noise_sd=0.1)
    assert check.first_time == 1998.0 and check.last_time == 2012.0
    assert check.first_z == pytest.approx(5.0)
    assert check.first_is_outlier and not check.last_is_outlier
    assert check.last_z == pytest.approx(0.0, abs=1e-9)
    fitted = fit_trend(ANNUAL, y).fitted
    assert endpoint_outliers(ANNUAL, y, 1998.0, 2012.0, fitted, noise_sd=0.1).first_is_outlier
    assert not endpoint_outliers(ANNUAL, y, 1999.0, 2012.0, fitted, noise_sd=0.1).first_is_outlier


def test_endpoint_false_alarm_rate_matches_the_normal_two_sided_tail():
    # With the true line and sd, z is standard normal: P(|z| > 2) = 2 (1 - Phi(2)) = 4.55% (scipy.stats.norm).
    generator = np.random.default_rng(123)
    line = 0.02 * (ANNUAL - 1970.0)
    records = line + 0.15 * generator.standard_normal((3000, ANNUAL.size))
    flags = np.array([endpoint_outliers(ANNUAL, y, 1990.0, 2010.0, line, noise_sd=0.15).first_is_outlier
                      for y in records])
    rate = 2 * stats.norm.sf(2.0)
    low, high = stats.binom.interval(0.999, flags.size, rate)
    assert low <= flags.sum() <= high


def test_bad_claims_and_options_raise_domain_errors():
    y = _spiky_record()
    with pytest.raises(ClaimError, match="fewer than 3 points"):
        window_sensitivity(ANNUAL, y, 2000.0, 2001.0)
    with pytest.raises(InputError, match="k_years"):
        window_sensitivity(ANNUAL, y, 1990.0, 2005.0, k_years=0.0)
    with pytest.raises(InputError, match="no neighbours"):
        window_sensitivity(ANNUAL, y, 1990.0, 2005.0, k_years=1.0, step=2.0)
    with pytest.raises(InputError, match="positive"):
        endpoint_outliers(ANNUAL, y, 1990.0, 2005.0, y, noise_sd=0.0)
    with pytest.raises(ClaimError, match="no point"):
        endpoint_outliers(ANNUAL, y, 1990.2, 1990.8, y, noise_sd=1.0)
    with pytest.raises(InputError, match="one series"):
        window_sensitivity(ANNUAL, np.vstack([y, y]), 1990.0, 2005.0)


def test_windows_shorter_than_half_the_claimed_one_or_a_year_are_left_out(rng):
    # A two-year monthly claim with k = 3 years reaches windows of a few months and windows ending before they
    # start; only those covering at least max(half the claim, a year) of data are compared (our requirement).
    t = 2000 + (np.arange(240) + 0.5) / 12
    y = 0.02 * (t - 2000) + 0.1 * rng.standard_normal(t.size)
    start, end = t[60], t[83]  # 24 months: 2005-01 to 2006-12
    matrix = window_sensitivity(t, y, start, end, k_years=3.0)
    covered = matrix.end_times[None, :] - matrix.start_times[:, None] + 1 / 12
    assert matrix.shortest_years == pytest.approx(1.0)
    assert np.all(np.isnan(matrix.slopes[covered < 1.0 - 1e-9]))
    kept = (covered >= 1.0 - 1e-9) & (matrix.end_times[None, :] <= t[-1])
    assert np.all(np.isfinite(matrix.slopes[kept]))
    assert np.isfinite(matrix.slopes[matrix.slopes.shape[0] // 2, matrix.slopes.shape[1] // 2])


def test_a_long_claim_compares_windows_at_least_half_its_length(rng):
    y = 0.02 * (ANNUAL - 1970.0) + 0.1 * rng.standard_normal(ANNUAL.size)
    matrix = window_sensitivity(ANNUAL, y, 2000.0, 2005.0, k_years=3.0)  # six years of data
    covered = matrix.end_times[None, :] - matrix.start_times[:, None] + 1.0
    assert matrix.shortest_years == pytest.approx(3.0)
    assert np.all(np.isnan(matrix.slopes[covered < 3.0]))
    assert np.all(np.isfinite(matrix.slopes[(covered >= 3.0) & (matrix.end_times[None, :] <= 2020.0)]))
