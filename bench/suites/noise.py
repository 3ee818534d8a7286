"""Choosing the noise model: exact restricted-likelihood fits of every kind to 1,200 trend residuals.

Beside it, statsmodels' exact ARIMA MLE of the same three non-white kinds on the same residuals, the
outside reference the fits are tested against (``tests/stats/test_noise_models.py``), for scale.
"""

from __future__ import annotations

import warnings

import numpy as np
from statsmodels.tsa.arima.model import ARIMA

from app.stats.noise import NOISE_KINDS, NoiseModel, simulate_noise
from app.stats.noise_fit import fit_noise_ml, select_noise_model
from app.stats.ols import fit_trend_rows
from bench.figures import Figure, at_most, context
from bench.timing import measure

POINTS = 1_200  # a century of monthly values
TARGET = 0.100  # seconds, median, for the whole choice (four fits)
ORDERS = {"ar1": (1, 0, 0), "ar2": (2, 0, 0), "arma11": (1, 0, 1)}


def _residuals() -> np.ndarray:
    # Monthly temperature-like noise: ARMA(1,1) with phi 0.9, theta -0.5, around a straight line.
    noise = NoiseModel(kind="arma11", phi=0.9, theta=-0.5, sigma=0.1)
    rows = simulate_noise(noise, POINTS, 1, np.random.default_rng(20_261_204))
    return fit_trend_rows(np.arange(float(POINTS)), rows).residuals[0]


def _statsmodels_fits(x: np.ndarray) -> None:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for order in ORDERS.values():
            ARIMA(x, order=order, trend="n").fit()


def run(quick: bool) -> list[Figure]:
    repeats = 5 if quick else 21
    x = _residuals()
    choice = measure(lambda: select_noise_model(x), repeats)
    figures = [at_most(f"noise model choice, {POINTS} residuals (4 exact fits), median", choice.median * 1e3,
                       TARGET * 1e3, "ms", cpu_ms=round(choice.cpu_median * 1e3, 2), runs=choice.runs)]
    for kind in NOISE_KINDS:
        fit = measure(lambda: fit_noise_ml(x, kind), repeats)
        figures.append(context(f"noise fit {kind}, {POINTS} residuals, median", fit.median * 1e3, "ms"))
    reference = measure(lambda: _statsmodels_fits(x), 3 if quick else 5)
    figures.append(context(f"statsmodels ARIMA exact MLE of ar1, ar2, arma11, {POINTS} points, median",
                           reference.median * 1e3, "ms"))
    return figures
