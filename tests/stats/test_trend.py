"""Trend uncertainty: published formulas, statsmodels, Mauna Loa CO2, and coverage / false alarms by simulation."""

import math

import numpy as np
import pytest
import statsmodels.api as sm
from scipy import stats
from scipy.linalg import toeplitz

from app.errors import InputError
from app.stats.noise import NoiseModel, simulate_noise
from app.stats.trend import (METHODS, compare_slopes, newey_west_lag, slope_all_methods, slope_uncertainty,
                             slope_uncertainty_rows, summarise_trend)

MONTHLY_SLOPE = 0.02  # units per year; the value is arbitrary, coverage does not depend on it


def monthly_time(n: int, start: float = 1980.0) -> np.ndarray:
    return start + (np.arange(n) + 0.5) / 12.0


def simulated_rows(n: int, phi: float, size: int, seed: int, slope: float = MONTHLY_SLOPE):
    t = monthly_time(n)
    noise = simulate_noise(NoiseModel(kind="ar1", phi=phi, sigma=0.1), n, size, np.random.default_rng(seed))
    return t, slope * (t - t.mean()) + noise


def coverage_table(t, rows, slope):
    table = {}
    for method in METHODS:
        est = slope_uncertainty_rows(t, rows, method)
        table[method] = float(np.mean((est.lower <= slope) & (slope <= est.upper)))
    return table


def test_santer_effective_sample_size_on_a_hand_computable_case():
    # Santer et al. (2008, Int. J. Climatol. 28, eqs. 4-6) with r1 = 0.5 given and n = 32:
    # n_eff = 32 (1 - 0.5) / (1 + 0.5) = 10.6667; stderr x sqrt((32 - 2) / (10.6667 - 2)) = x 1.860521;
    # t distribution with 8.6667 degrees of freedom.
    t = np.arange(32.0)
    y = 0.1 * t + np.sin(t)  # any data: the white-noise stderr comes from it, the autocorrelation is given
    white = slope_uncertainty(t, y, "white")
    ar1 = slope_uncertainty(t, y, "ar1", noise=NoiseModel(kind="ar1", phi=0.5))
    assert ar1.n_effective == pytest.approx(32.0 / 3.0, rel=1e-12)
    assert ar1.stderr / white.stderr == pytest.approx(1.860521, rel=1e-6)
    assert ar1.dof == pytest.approx(26.0 / 3.0, rel=1e-12)
    half_width = stats.t.ppf(0.975, 26.0 / 3.0) * ar1.stderr
    assert ar1.ci == pytest.approx((ar1.slope - half_width, ar1.slope + half_width), rel=1e-12)
    assert ar1.p_value == pytest.approx(2 * stats.t.sf(ar1.slope / ar1.stderr, 26.0 / 3.0), rel=1e-10)
    assert white.dof == 30 and white.n_effective == 32


def test_ar1_uses_the_bias_corrected_lag1_of_the_residuals():
    # Santer et al. (2008) with r1 replaced by (n r1 + 2) / (n - 5) (app.stats.noise docstring).
    rng = np.random.default_rng(12)
    t = np.arange(80.0)
    y = 0.05 * t + simulate_noise(NoiseModel(kind="ar1", phi=0.5), 80, 1, rng)[0]
    residuals = y - np.polyval(np.polyfit(t, y, 1), t)
    r1 = np.sum(residuals[1:] * residuals[:-1]) / np.sum(residuals ** 2)
    phi = (80 * r1 + 2) / (80 - 5)
    assert slope_uncertainty(t, y, "ar1").n_effective == pytest.approx(80 * (1 - phi) / (1 + phi), rel=1e-10)


def test_arma11_with_no_moving_average_part_is_the_ar1_answer():
    # Foster & Rahmstorf (2011): nu = 1 + 2 rho1 / (1 - phi) -> (1 + phi) / (1 - phi) when rho1 = phi.
    t = np.arange(120.0)
    y = 0.01 * t + np.cos(0.3 * t)
    arma = slope_uncertainty(t, y, "arma11", noise=NoiseModel(kind="arma11", phi=0.6, theta=0.0))
    ar1 = slope_uncertainty(t, y, "ar1", noise=NoiseModel(kind="ar1", phi=0.6))
    assert arma.stderr == pytest.approx(ar1.stderr, rel=1e-12)
    assert arma.n_effective == pytest.approx(120 * 0.4 / 1.6, rel=1e-12)


def test_arma11_inflation_exceeds_ar1_when_correlation_decays_slowly():
    # Foster & Rahmstorf (2011): an ARMA(1,1) with phi > rho1 has a longer memory than the AR(1) with the same r1.
    t = np.arange(240.0)
    y = 0.01 * t + np.cos(0.3 * t)
    model = NoiseModel(kind="arma11", phi=0.9, theta=-0.5)
    arma = slope_uncertainty(t, y, "arma11", noise=model)
    ar1 = slope_uncertainty(t, y, "ar1", noise=model)  # uses the model's rho1 only
    nu = 1 + 2 * model.rho1 / (1 - 0.9)
    assert arma.n_effective == pytest.approx(240 / nu, rel=1e-12)
    assert arma.stderr > ar1.stderr


def test_gls_ar1_matches_statsmodels_gls_with_ar1_covariance():
    # Reference library: statsmodels GLS with covariance phi^|i-j| (what Prais-Winsten whitening stands for).
    rng = np.random.default_rng(13)
    n, phi = 150, 0.55
    t = monthly_time(n)
    y = 0.03 * t + simulate_noise(NoiseModel(kind="ar1", phi=phi, sigma=0.2), n, 1, rng)[0]
    ours = slope_uncertainty(t, y, "gls_ar1", noise=NoiseModel(kind="ar1", phi=phi))
    reference = sm.GLS(y, sm.add_constant(t), sigma=toeplitz(phi ** np.arange(n))).fit()
    assert ours.slope == pytest.approx(reference.params[1], rel=1e-10)
    assert ours.stderr == pytest.approx(reference.bse[1], rel=1e-10)
    assert ours.ci == pytest.approx(tuple(reference.conf_int()[1]), rel=1e-10)
    assert ours.p_value == pytest.approx(reference.pvalues[1], rel=1e-6)


def test_hac_matches_statsmodels_newey_west():
    # Reference library: statsmodels OLS cov_type="HAC" (Bartlett kernel, Newey & West 1987).
    rng = np.random.default_rng(14)
    n = 200
    t = monthly_time(n)
    y = 0.03 * t + simulate_noise(NoiseModel(kind="ar1", phi=0.5, sigma=0.2), n, 1, rng)[0]
    ours = slope_uncertainty(t, y, "hac")
    reference = sm.OLS(y, sm.add_constant(t)).fit(cov_type="HAC", use_t=True,
                                                   cov_kwds={"maxlags": newey_west_lag(n), "use_correction": True})
    assert ours.stderr == pytest.approx(reference.bse[1], rel=1e-8)
    assert ours.ci == pytest.approx(tuple(reference.conf_int()[1]), rel=1e-8)
    assert ours.p_value == pytest.approx(reference.pvalues[1], rel=1e-6)


def test_newey_west_lag_rule():
    # Newey & West (1994, Rev. Econ. Stud. 61, 631): floor(4 (n / 100)^(2/9)).
    assert [newey_west_lag(n) for n in (50, 100, 360, 1800)] == [3, 4, 5, 7]


def test_white_matches_statsmodels_ols():
    rng = np.random.default_rng(15)
    t = np.arange(40.0)
    y = 0.2 * t + rng.standard_normal(40)
    ours = slope_uncertainty(t, y, "white", confidence=0.9)
    reference = sm.OLS(y, sm.add_constant(t)).fit()
    assert ours.stderr == pytest.approx(reference.bse[1], rel=1e-10)
    assert ours.ci == pytest.approx(tuple(reference.conf_int(alpha=0.1)[1]), rel=1e-10)


def test_too_few_effective_points_give_an_unbounded_range_not_a_crash():
    # Module docstring: n_eff <= 2 -> stderr +inf, interval (-inf, inf), p = 1, dof 0.
    t = np.arange(10.0)
    est = slope_uncertainty(t, 0.3 * t, "ar1", noise=NoiseModel(kind="ar1", phi=0.95))
    assert est.n_effective == pytest.approx(10 * 0.05 / 1.95)
    assert est.stderr == math.inf and est.ci == (-math.inf, math.inf)
    assert est.p_value == 1.0 and est.dof == 0.0


def test_rows_and_single_series_agree():
    t, rows = simulated_rows(48, 0.6, 3, seed=16)
    for method in METHODS:
        batch = slope_uncertainty_rows(t, rows, method)
        for k in range(3):
            single = slope_uncertainty(t, rows[k], method)
            row = batch.estimate(k)
            assert (row.method, row.n, row.confidence) == (single.method, single.n, single.confidence)
            for field in ("slope", "stderr", "p_value", "dof", "n_effective"):
                assert getattr(row, field) == pytest.approx(getattr(single, field), rel=1e-10), field
            assert row.ci == pytest.approx(single.ci, rel=1e-10)


@pytest.mark.parametrize("n, low, high", [(360, 0.93, 0.97), (60, 0.91, 0.98)])
def test_default_interval_covers_the_true_slope_under_ar1_noise(n, low, high):
    # Seeded simulation: 2000 series, known slope, AR(1) noise with phi = 0.6 (our requirement: n = 360 in 93-97%, n = 60 >= 91%).
    t, rows = simulated_rows(n, 0.6, 2000, seed=1000 + n)
    table = coverage_table(t, rows, MONTHLY_SLOPE)
    print(f"\ncoverage of 95% intervals, AR(1) phi = 0.6, n = {n}: "
          + ", ".join(f"{m} {v:.3f}" for m, v in table.items()))
    assert low <= table["ar1"] <= high
    assert table["white"] < 0.80  # white noise ranges are far too narrow (Santer et al. 2008)
    assert table["white"] < table["hac"] < table["ar1"]


@pytest.mark.parametrize("n", [60, 360])
def test_default_test_rejects_a_zero_slope_about_five_percent_of_the_time(n):
    # Seeded simulation of the false-alarm rate: zero slope, AR(1) noise phi = 0.6.
    t, rows = simulated_rows(n, 0.6, 2000, seed=2000 + n, slope=0.0)
    rates = {m: float(np.mean(slope_uncertainty_rows(t, rows, m).p_value < 0.05)) for m in METHODS}
    print(f"\nfalse-alarm rate at 5%, AR(1) phi = 0.6, n = {n}: " + ", ".join(f"{m} {v:.3f}" for m, v in rates.items()))
    assert 0.03 <= rates["ar1"] <= 0.07
    assert rates["white"] > 0.2


def test_compare_slopes_by_hand():
    # Two independent normal estimates: z = (a - b) / sqrt(se_a^2 + se_b^2) (common practice, no source).
    a = slope_uncertainty(np.arange(5.0), np.array([0.0, 1.1, 1.9, 3.2, 3.9]), "white")
    b = slope_uncertainty(np.arange(5.0), np.array([0.0, 2.1, 3.9, 6.2, 7.9]), "white")
    result = compare_slopes(a, b, "less")
    se = math.sqrt(a.stderr ** 2 + b.stderr ** 2)
    assert result.difference == pytest.approx(a.slope - b.slope)
    assert result.stderr == pytest.approx(se)
    assert result.p_value == pytest.approx(stats.norm.cdf((a.slope - b.slope) / se))
    assert compare_slopes(a, b, "greater").p_value == pytest.approx(1 - result.p_value)
    assert compare_slopes(a, b).p_value == pytest.approx(2 * result.p_value)
    with pytest.raises(InputError, match="unknown alternative"):
        compare_slopes(a, b, "sideways")


def test_compare_slopes_false_alarms_for_a_window_of_the_same_trend():
    # Seeded simulation: a 10-year window of a 40-year AR(1) series with one slope throughout.
    # The window shares data with the long-term fit, so the independence approximation is conservative.
    t, rows = simulated_rows(480, 0.6, 1000, seed=17)
    long_term = slope_uncertainty_rows(t, rows, "ar1")
    window = slope_uncertainty_rows(t[-120:], rows[:, -120:], "ar1")
    z = (window.slope - long_term.slope) / np.hypot(window.stderr, long_term.stderr)
    rate = float(np.mean(stats.norm.cdf(z) < 0.05))
    single = compare_slopes(window.estimate(0), long_term.estimate(0), "less")
    assert single.p_value == pytest.approx(stats.norm.cdf(z[0]))
    print(f"\none-sided 'window weaker' false-alarm rate at 5% (nominal): {rate:.3f}")
    assert 0.01 <= rate <= 0.07


def test_unknown_method_and_bad_confidence_are_input_errors():
    t = np.arange(10.0)
    with pytest.raises(InputError, match="unknown trend method 'loess'"):
        slope_uncertainty(t, t, "loess")
    with pytest.raises(InputError, match="confidence must lie strictly between 0 and 1"):
        slope_uncertainty(t, t, "ar1", confidence=95)


@pytest.fixture(scope="module")
def mauna_loa():
    data = sm.datasets.co2.load_pandas().data["co2"]
    monthly = data.resample("MS").mean().dropna()
    t = monthly.index.year + (monthly.index.month - 0.5) / 12.0
    return np.asarray(t, dtype=float), monthly.to_numpy()


@pytest.mark.parametrize("start, end, low, high", [(1960, 1970, 0.7, 1.1), (1990, 2000, 1.3, 1.7)])
def test_mauna_loa_growth_rates(mauna_loa, start, end, low, high):
    # NOAA's published annual CO2 growth rates at Mauna Loa average roughly 0.7-1.1 ppm/yr over the 1960s
    # and 1.3-1.7 ppm/yr over the 1990s (ranges from memory). Whole calendar years, so the seasonal cycle cancels.
    t, co2 = mauna_loa
    inside = (t >= start) & (t < end)
    summary = summarise_trend(t[inside], co2[inside], method="ar1", points_per_year=12.0)
    assert low <= summary.chosen.slope <= high
    assert low <= summary.sen.slope <= high
    assert summary.chosen.ci[0] > 0 and summary.mann_kendall.trend == "increasing"
    # The seasonal cycle left in the residuals is strongly autocorrelated: AR(1) ranges are much wider.
    white = summary.methods[METHODS.index("white")]
    assert summary.chosen.stderr > 2 * white.stderr


def test_summarise_trend_holds_every_method_and_the_chosen_one():
    t, rows = simulated_rows(240, 0.5, 1, seed=18)
    summary = summarise_trend(t, rows[0], method="arma11", points_per_year=12.0)
    assert tuple(m.method for m in summary.methods) == METHODS
    assert summary.chosen == summary.methods[METHODS.index("arma11")]
    assert summary.noise.kind == "arma11"
    assert summary.fit.slope == pytest.approx(summary.methods[0].slope)
    assert math.isfinite(summary.years_to_detect) and summary.years_to_detect > 0
    given = NoiseModel(kind="ar1", phi=0.3, sigma=0.1)
    assert summarise_trend(t, rows[0], noise=given, points_per_year=12.0).noise is given
    assert slope_all_methods(t, rows[0], noise=given)[1].n_effective == pytest.approx(240 * 0.7 / 1.3)
