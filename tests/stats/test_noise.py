"""Noise models: moments against statsmodels' ARMA theory, and the lag-1 bias correction measured by simulation."""

import numpy as np
import pytest
from statsmodels.tsa.arima_process import arma_acf, arma_acovf
from statsmodels.tsa.stattools import acf

from app.stats.noise import (NoiseModel, autocorrelation, bias_corrected_phi, bias_corrected_phis, estimate_ar1,
                             estimate_arma11, estimate_noise, lag_autocorrelations, simulate_noise,
                             variance_inflation)


def residuals_of(rows: np.ndarray, design: np.ndarray) -> np.ndarray:
    q, _ = np.linalg.qr(design)
    return rows - (rows @ q) @ q.T


@pytest.mark.parametrize("phi, theta", [(0.6, 0.0), (0.8, -0.3), (0.5, 0.4), (0.0, 0.5)])
def test_model_moments_match_statsmodels_arma_theory(phi, theta):
    # Reference library: statsmodels.tsa.arima_process (lag polynomials with statsmodels' sign convention).
    model = NoiseModel(kind="arma11", phi=phi, theta=theta, sigma=0.7)
    ar, ma = [1.0, -phi], [1.0, theta]
    assert model.rho1 == pytest.approx(arma_acf(ar, ma, lags=2)[1], rel=1e-10)
    assert model.marginal_sd ** 2 == pytest.approx(arma_acovf(ar, ma, nobs=1, sigma2=0.49)[0], rel=1e-10)
    # Foster & Rahmstorf (2011, appendix): nu = sum of all autocorrelations = 1 + 2 rho1 / (1 - phi).
    all_lags = arma_acf(ar, ma, lags=4000)
    assert model.variance_inflation == pytest.approx(1.0 + 2.0 * all_lags[1:].sum(), rel=1e-8)


@pytest.mark.parametrize("phi", [-0.3, 0.0, 0.3, 0.6, 0.9])
def test_arma11_inflation_reduces_to_the_ar1_factor(phi):
    # Foster & Rahmstorf (2011): with rho1 = phi, nu = (1 + phi) / (1 - phi) (Santer et al. 2008's AR(1) factor).
    expected = max((1 + phi) / (1 - phi), 1.0)  # floored at 1: negative correlation never narrows a range
    assert float(variance_inflation(phi, phi)) == pytest.approx(expected, rel=1e-12)
    # The model's property is the unfloored sum of autocorrelations; ranges use range_inflation, floored at 1.
    model = NoiseModel(kind="arma11", phi=phi, theta=0.0)
    assert model.variance_inflation == pytest.approx((1 + phi) / (1 - phi), rel=1e-12)
    assert model.range_inflation == pytest.approx(expected, rel=1e-12)


def test_autocorrelation_matches_statsmodels_acf():
    # Reference library: statsmodels.tsa.stattools.acf (the same biased-denominator estimator).
    rng = np.random.default_rng(1)
    x = np.cumsum(rng.standard_normal(300)) * 0.1 + rng.standard_normal(300)
    reference = acf(x, nlags=3, fft=False)
    for lag in (1, 2, 3):
        assert autocorrelation(x, lag) == pytest.approx(reference[lag], rel=1e-12)
    assert lag_autocorrelations(np.vstack([x, x[::-1]]), 1) == pytest.approx([reference[1]] * 2, rel=1e-12)
    assert autocorrelation(np.ones(5), 1) == 0.0


def test_bias_correction_inverts_its_own_formula():
    # phi = (n r1 + k) / (n - 3 - k) undoes E[r1] = phi - (k + (3 + k) phi) / n (module docstring).
    for n, k, phi in [(60, 2, 0.6), (120, 1, 0.3), (360, 4, 0.8)]:
        r1 = phi - (k + (3 + k) * phi) / n
        assert bias_corrected_phi(r1, n, n_regressors=k) == pytest.approx(phi, abs=1e-12)
    assert bias_corrected_phi(0.999, 100) == 0.98  # clipped to a stationary range


@pytest.mark.parametrize("regressors", [1, 2, 3, 4])
def test_measured_lag1_bias_of_regression_residuals(regressors):
    # Kendall (1954, Biometrika 41, 403; citation from memory): E[r1] ~ phi - (1 + 4 phi) / n for a fitted mean.
    # Each further smooth regressor adds about (1 + phi) / n: measured here, no published source.
    rng = np.random.default_rng(100 + regressors)
    n, size = 240, 4000
    t = np.linspace(-1.0, 1.0, n)
    design = np.column_stack([t ** p for p in range(regressors)])
    for phi in (0.0, 0.3, 0.6):
        rows = simulate_noise(NoiseModel(kind="ar1", phi=phi, sigma=1.0), n, size, rng)
        r1 = lag_autocorrelations(residuals_of(rows, design), 1)
        predicted_bias = -(regressors + (3 + regressors) * phi) / n
        # 0.5/n tolerance: the formula is first order; the Monte Carlo error of the mean is ~0.2/n here.
        assert (r1.mean() - phi) == pytest.approx(predicted_bias, abs=0.5 / n), phi
        corrected = bias_corrected_phis(r1, n, regressors)
        assert abs(corrected.mean() - phi) < 0.5 / n


def test_bias_correction_matters_on_a_short_monthly_window():
    # n = 60 (five years monthly), phi = 0.6: the raw r1 is ~0.09 low, the corrected one within 0.03.
    rng = np.random.default_rng(4)
    n = 60
    t = np.arange(n, dtype=float)
    rows = simulate_noise(NoiseModel(kind="ar1", phi=0.6, sigma=1.0), n, 4000, rng)
    r1 = lag_autocorrelations(residuals_of(rows, np.column_stack([np.ones(n), t])), 1)
    assert 0.6 - r1.mean() > 0.07
    assert abs(bias_corrected_phis(r1, n).mean() - 0.6) < 0.03


def test_simulated_noise_has_the_model_moments():
    # Sample moments of seeded simulations against the model's theory (statsmodels arma_acf above).
    rng = np.random.default_rng(5)
    for model in (NoiseModel(kind="ar1", phi=0.7, sigma=0.3), NoiseModel(kind="arma11", phi=0.8, theta=-0.4,
                                                                          sigma=0.3)):
        rows = simulate_noise(model, 400, 500, rng)
        assert rows.shape == (500, 400)
        assert rows.std() == pytest.approx(model.marginal_sd, rel=0.03)
        # The first column is already stationary (no start-up transient).
        assert rows[:, 0].std() == pytest.approx(model.marginal_sd, rel=0.1)
        pooled_r1 = (rows[:, 1:] * rows[:, :-1]).mean() / (rows * rows).mean()
        assert pooled_r1 == pytest.approx(model.rho1, abs=0.02)


def test_estimators_recover_known_parameters_from_a_long_series():
    rng = np.random.default_rng(6)
    truth = NoiseModel(kind="arma11", phi=0.85, theta=-0.35, sigma=0.2)
    x = simulate_noise(truth, 40000, 1, rng)[0]
    arma = estimate_arma11(x)
    assert arma.phi == pytest.approx(0.85, abs=0.03)
    assert arma.theta == pytest.approx(-0.35, abs=0.05)
    assert arma.marginal_sd == pytest.approx(truth.marginal_sd, rel=0.05)
    ar = estimate_ar1(simulate_noise(NoiseModel(kind="ar1", phi=0.5, sigma=0.2), 40000, 1, rng)[0])
    assert ar.phi == pytest.approx(0.5, abs=0.02)
    assert ar.sigma == pytest.approx(0.2, rel=0.02)
    assert estimate_noise(x, "white").kind == "white"
    assert estimate_noise(x, "gls_ar1").kind == "ar1"


def test_arma11_falls_back_to_ar1_when_the_moments_allow_no_arma():
    # r2 / r1 <= 0 admits no ARMA(1,1) with positive decay: the model becomes the bias-corrected AR(1).
    x = np.array([1.0, 1.0, -1.0, -1.0, 1.0, 1.0, -1.0, -1.0] * 8)
    model = estimate_arma11(x)
    assert model.theta == 0.0
    assert model.phi == pytest.approx(estimate_ar1(x).phi)
