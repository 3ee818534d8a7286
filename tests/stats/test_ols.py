"""OLS core: NIST certified values for the ill-conditioned Longley design, and a seeded simulation of the slope."""

import json
from pathlib import Path

import numpy as np
import pytest
import statsmodels.api as sm

from app.errors import SeriesContentError
from app.stats.ols import fit_linear, fit_trend, fit_trend_rows

REFERENCE = Path(__file__).resolve().parent.parent / "reference" / "nist_longley.json"


def significant_digits(value: float, reference: float) -> float:
    return float(-np.log10(abs(value - reference) / abs(reference))) if value != reference else np.inf


@pytest.fixture(scope="module")
def longley():
    data = sm.datasets.longley.load_pandas()
    design = np.column_stack([np.ones(len(data.endog)), data.exog.to_numpy()])
    return design, data.endog.to_numpy(), json.loads(REFERENCE.read_text())


def test_longley_coefficients_and_errors_match_nist_certified_values(longley):
    # NIST StRD Longley certified values (tests/reference/nist_longley.json names the source).
    design, y, certified = longley
    fit = fit_linear(design, y)
    stderr = fit.sigma * np.sqrt(np.diag(fit.cov_unscaled))
    for k, name in enumerate(sorted(certified["parameters"])):
        expected = certified["parameters"][name]
        assert significant_digits(fit.coef[k], expected["estimate"]) >= 7, name
        assert significant_digits(stderr[k], expected["stderr"]) >= 7, name
    assert significant_digits(fit.sigma, certified["residual_sd"]) >= 7
    assert significant_digits(fit.rss, certified["residual_ss"]) >= 7
    assert fit.dof == certified["residual_dof"]


def test_naive_normal_equations_lose_the_digits_the_qr_keeps(longley):
    # Longley (1967) built the data to break normal-equation solvers; the check shows our test can fail.
    design, y, certified = longley
    naive = np.linalg.inv(design.T @ design) @ design.T @ y
    qr_digits = significant_digits(fit_linear(design, y).coef[6], certified["parameters"]["B6"]["estimate"])
    naive_digits = significant_digits(naive[6], certified["parameters"]["B6"]["estimate"])
    assert qr_digits > naive_digits


def test_fit_trend_matches_statsmodels_ols():
    # Reference library: statsmodels OLS.
    rng = np.random.default_rng(7)
    t = 1950.0 + (np.arange(240) + 0.5) / 12.0
    y = 0.015 * t + rng.standard_normal(t.size) * 0.2
    fit = fit_trend(t, y)
    reference = sm.OLS(y, sm.add_constant(t)).fit()
    assert fit.slope == pytest.approx(reference.params[1], rel=1e-10)
    assert fit.intercept == pytest.approx(reference.params[0], rel=1e-9)
    assert fit.slope_stderr_white == pytest.approx(reference.bse[1], rel=1e-10)
    assert fit.r_squared == pytest.approx(reference.rsquared, rel=1e-10)
    assert fit.line(t) == pytest.approx(reference.fittedvalues, rel=1e-12)


def test_fit_trend_rows_agrees_with_one_series_at_a_time():
    rng = np.random.default_rng(8)
    t = np.arange(50.0)
    rows = rng.standard_normal((4, 50)) + 0.1 * t
    batch = fit_trend_rows(t, rows)
    for k in range(4):
        single = fit_trend(t, rows[k])
        assert batch.slope[k] == pytest.approx(single.slope, rel=1e-12)
        assert batch.slope_stderr_white[k] == pytest.approx(single.slope_stderr_white, rel=1e-12)
        assert batch.residuals[k] == pytest.approx(single.residuals, abs=1e-12)


def test_simulated_slopes_scatter_as_the_white_noise_formula_says():
    # Gauss-Markov: unbiased slope with variance sigma^2 / Sxx (common practice, no source).
    rng = np.random.default_rng(9)
    t = np.arange(100.0)
    sigma, slope = 0.5, 0.03
    rows = slope * t + sigma * rng.standard_normal((4000, t.size))
    fit = fit_trend_rows(t, rows)
    expected_sd = sigma / np.sqrt(fit.sxx)
    assert abs(fit.slope.mean() - slope) < 4 * expected_sd / np.sqrt(4000)
    assert fit.slope.std() == pytest.approx(expected_sd, rel=0.05)
    assert np.median(fit.slope_stderr_white) == pytest.approx(expected_sd, rel=0.02)


@pytest.mark.parametrize("t, y, message", [
    (np.arange(3.0), np.arange(4.0), "time has 3 values but the series has 4"),
    (np.arange(1.0), np.arange(1.0), "at least 2 points"),
    (np.array([1.0, 2.0, np.nan]), np.arange(3.0), "missing or infinite"),
    (np.ones(4), np.arange(4.0), "same time"),
])
def test_fit_trend_says_what_is_wrong_with_its_input(t, y, message):
    with pytest.raises(SeriesContentError, match=message):
        fit_trend(t, y)
