"""How long a record must be before a trend of a given size stands out of its noise.

Weatherhead et al. (1998, J. Geophys. Res. 103, 17149, eq. 3) give, for monthly data,

    n* = [(3.3 sigma_N / |omega0|) sqrt((1 + phi) / (1 - phi))]^(2/3)   years,

with sigma_N the monthly noise standard deviation, phi its lag-1 autocorrelation and 3.3
about z(0.975) + z(0.90) = 1.96 + 1.28 (a two-sided 5% test detecting the trend nine times in
ten). The 2/3 power hides the sampling rate, so the formula is only right for monthly points.
We derive the general form from the slope's standard error instead. With m equally spaced
points a year over T years (N = m T points) the centred times have sum of squares
N (N^2 - 1) / (12 m^2), about m T^3 / 12, so

    var(slope) = sigma^2 nu / Sxx  ~  12 sigma^2 nu / (m T^3),

where sigma is the marginal noise sd and nu the variance inflation of the noise, the sum of its
autocorrelations ((1 + phi) / (1 - phi) for AR(1); 1 + 2 rho1 / (1 - phi) for ARMA(1,1);
for any of our kinds sigma_e^2 (1 + theta)^2 / (1 - phi - phi2)^2 over the marginal variance). Asking for
|omega0| = (z_alpha + z_power) sd(slope) and solving for T:

    T* = [((z_alpha + z_power) sigma sqrt(nu) / |omega0|) sqrt(12 / m)]^(2/3).

For m = 12 the factor sqrt(12 / m) is 1 and this is the paper's formula. Reusing the monthly
formula on annual data (m = 1) would understate T* by 12^(1/3), about 2.3.

``detection_power`` is the same normal approximation at a given record length, with the
exact Sxx of N equally spaced points instead of its large-N form. Both treat the noise
parameters as known (as the paper does); the simulation in ``tests/stats/test_detect.py``
shows how much power an analysis that estimates them loses.
"""

from __future__ import annotations

import math

from scipy import stats

from app.errors import InputError, Location
from app.stats.noise import NoiseModel
from app.stats.ols import check_fraction

ALTERNATIVES = ("two-sided", "less", "greater")


def check_alternative(alternative: str) -> None:
    if alternative not in ALTERNATIVES:
        raise InputError(f"unknown alternative '{alternative}'", location=Location(field="alternative"),
                         fix="Use one of: " + ", ".join(ALTERNATIVES))


def _check_rate(points_per_year: float) -> None:
    if not (math.isfinite(points_per_year) and points_per_year > 0):
        raise InputError(f"points per year must be positive, got {points_per_year}",
                         location=Location(field="points_per_year"), fix="Use 12 for monthly data, 1 for annual")


def _check_slope(slope: float) -> None:
    if not math.isfinite(slope):
        raise InputError(f"the trend to detect must be a finite number, got {slope}", location=Location(field="slope"),
                         fix="Fit the long-term trend first")


def _long_run_sd(noise: NoiseModel) -> float:
    """sigma sqrt(nu): the noise sd a trend estimate effectively sees (nu floored at 1, as our ranges are)."""
    return float(noise.marginal_sd * math.sqrt(noise.range_inflation))


def years_to_detect(slope: float, noise: NoiseModel, points_per_year: float, alpha: float = 0.05,
                    power: float = 0.90) -> float:
    """Record length in years at which a trend ``slope`` (units per year) is detected with ``power``.

    Two-sided test at level ``alpha``; +inf for a zero slope. See the module docstring for the
    derivation and how it reduces to Weatherhead et al. (1998) for monthly data.
    """
    check_fraction(alpha, "alpha")
    check_fraction(power, "power")
    _check_rate(points_per_year)
    _check_slope(slope)
    if slope == 0.0:
        return math.inf
    z_sum = stats.norm.ppf(1.0 - alpha / 2.0) + stats.norm.ppf(power)
    scaled = z_sum * _long_run_sd(noise) / abs(slope) * math.sqrt(12.0 / points_per_year)
    return float(scaled ** (2.0 / 3.0))


def slope_sd_for_length(noise: NoiseModel, n_points: int, points_per_year: float) -> float:
    """Standard deviation of an OLS slope (units per year) over ``n_points`` equally spaced points."""
    _check_rate(points_per_year)
    if n_points < 2:
        return math.inf
    sxx = n_points * (n_points * n_points - 1.0) / (12.0 * points_per_year * points_per_year)
    return float(_long_run_sd(noise) / math.sqrt(sxx))


def detection_power(slope: float, noise: NoiseModel, n_points: int, points_per_year: float, alpha: float = 0.05,
                    alternative: str = "two-sided") -> float:
    """Probability that a level-``alpha`` test on ``n_points`` points finds a trend of size ``slope``.

    "greater" and "less" are one-sided tests for a positive or negative trend.
    """
    check_fraction(alpha, "alpha")
    check_alternative(alternative)
    _check_slope(slope)
    sd = slope_sd_for_length(noise, n_points, points_per_year)
    if not math.isfinite(sd):
        return alpha  # no information: the test rejects only by chance
    shift = slope / sd if sd > 0 else math.copysign(math.inf, slope) if slope else 0.0
    if alternative == "two-sided":
        z = stats.norm.ppf(1.0 - alpha / 2.0)
        return float(stats.norm.sf(z - shift) + stats.norm.cdf(-z - shift))
    z = stats.norm.ppf(1.0 - alpha)
    signed = shift if alternative == "greater" else -shift
    return float(stats.norm.sf(z - signed))

