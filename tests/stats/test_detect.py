"""Years to detect a trend: Weatherhead et al. (1998) for monthly data, the general form, and simulated power."""

import math

import numpy as np
import pytest
from scipy import stats

from app.errors import InputError
from app.stats.detect import detection_power, slope_sd_for_length, years_to_detect
from app.stats.noise import NoiseModel, simulate_noise
from app.stats.trend import slope_uncertainty_rows

Z_SUM = stats.norm.ppf(0.975) + stats.norm.ppf(0.90)  # 1.96 + 1.28 = 3.24, which Weatherhead et al. round to 3.3


def ar1_with_marginal_sd(phi: float, marginal_sd: float) -> NoiseModel:
    return NoiseModel(kind="ar1", phi=phi, sigma=marginal_sd * math.sqrt(1 - phi * phi))


def weatherhead_monthly(slope: float, sigma_n: float, phi: float, constant: float) -> float:
    # Weatherhead et al. (1998, J. Geophys. Res. 103, 17149, eq. 3): n* in years for monthly data.
    return ((constant * sigma_n / abs(slope)) * math.sqrt((1 + phi) / (1 - phi))) ** (2.0 / 3.0)


@pytest.mark.parametrize("slope, sigma_n, phi", [(0.02, 0.1, 0.6), (-0.005, 0.3, 0.2), (1.5, 0.8, 0.85)])
def test_general_form_for_monthly_data_is_weatherheads_formula(slope, sigma_n, phi):
    noise = ar1_with_marginal_sd(phi, sigma_n)
    ours = years_to_detect(slope, noise, points_per_year=12.0)
    assert ours == pytest.approx(weatherhead_monthly(slope, sigma_n, phi, Z_SUM), rel=1e-12)
    # With the paper's rounded constant 3.3 the answer moves by (3.3 / 3.24)^(2/3) - 1 = 1.2%.
    assert ours == pytest.approx(weatherhead_monthly(slope, sigma_n, phi, 3.3), rel=0.013)


def test_reusing_the_monthly_formula_on_annual_data_understates_the_years_by_twelve_to_the_third():
    # Derivation in app.stats.detect: T* scales as (12 / m)^(1/3); for annual data (m = 1) that is 12^(1/3) = 2.29.
    noise = ar1_with_marginal_sd(0.3, 0.1)
    annual = years_to_detect(0.02, noise, points_per_year=1.0)
    naive = weatherhead_monthly(0.02, 0.1, 0.3, Z_SUM)
    assert annual / naive == pytest.approx(12 ** (1 / 3), rel=1e-12)
    assert annual / naive == pytest.approx(2.29, abs=0.005)


def test_zero_slope_is_never_detected_and_bad_arguments_are_input_errors():
    noise = ar1_with_marginal_sd(0.5, 0.1)
    assert years_to_detect(0.0, noise, 12.0) == math.inf
    assert detection_power(0.0, noise, 120, 12.0) == pytest.approx(0.05)
    with pytest.raises(InputError, match="points per year must be positive"):
        years_to_detect(0.1, noise, 0.0)
    with pytest.raises(InputError, match="power must lie strictly between 0 and 1"):
        years_to_detect(0.1, noise, 12.0, power=90)
    with pytest.raises(InputError, match="unknown alternative"):
        detection_power(0.1, noise, 120, 12.0, alternative="up")


def test_power_at_the_years_to_detect_is_the_requested_power():
    # The same normal approximation both ways; the exact Sxx (n^3 - n instead of n^3) moves it by < 0.01.
    noise = ar1_with_marginal_sd(0.6, 0.1)
    years = years_to_detect(0.02, noise, 12.0)
    assert detection_power(0.02, noise, round(years * 12), 12.0) == pytest.approx(0.90, abs=0.01)
    one_sided = detection_power(0.02, noise, round(years * 12), 12.0, alternative="greater")
    assert one_sided > 0.90
    assert detection_power(0.02, noise, round(years * 12), 12.0, alternative="less") < 0.001


def simulated_power(slope: float, noise: NoiseModel, n: int, points_per_year: float, seed: int, size: int = 4000):
    """Share of simulated records whose OLS slope passes the two-sided 5% test with the noise known, and estimated."""
    t = (np.arange(n) + 0.5) / points_per_year
    rows = slope * (t - t.mean()) + simulate_noise(noise, n, size, np.random.default_rng(seed))
    slopes = rows @ (t - t.mean()) / np.sum((t - t.mean()) ** 2)
    known = float(np.mean(np.abs(slopes) > stats.norm.ppf(0.975) * slope_sd_for_length(noise, n, points_per_year)))
    estimated = float(np.mean(slope_uncertainty_rows(t, rows, "ar1").p_value < 0.05))
    return known, estimated


@pytest.mark.parametrize("slope, phi, points_per_year", [(0.02, 0.6, 12.0), (0.02, 0.3, 1.0)])
def test_simulated_detection_rate_at_years_to_detect(slope, phi, points_per_year):
    # Seeded simulation, 4000 records of the predicted length with the noise parameters known (as in
    # Weatherhead et al. 1998): detected 90% of the time within 0.03 (finite-length effects make it a bit higher).
    noise = ar1_with_marginal_sd(phi, 0.1)
    years = years_to_detect(slope, noise, points_per_year)
    n = round(years * points_per_year)
    known, estimated = simulated_power(slope, noise, n, points_per_year, seed=int(phi * 100 + points_per_year))
    print(f"\n{points_per_year:g}/yr, phi {phi}: {years:.1f} years ({n} points); simulated power with the noise "
          f"known {known:.3f}, with the default AR(1) test estimating it {estimated:.3f}")
    assert known == pytest.approx(0.90, abs=0.03)
    assert estimated < known  # estimating the noise costs power; the audit's wording must allow for it


def test_detection_power_matches_simulation_at_a_shorter_record():
    noise = ar1_with_marginal_sd(0.6, 0.1)
    n = 72
    known, _ = simulated_power(0.02, noise, n, 12.0, seed=21)
    assert known == pytest.approx(detection_power(0.02, noise, n, 12.0), abs=0.03)


def test_naive_monthly_years_on_annual_data_would_give_little_power():
    # Simulation of the mistake the general form avoids: annual records only 1 / 2.29 as long as needed.
    noise = ar1_with_marginal_sd(0.3, 0.1)
    naive_years = weatherhead_monthly(0.02, 0.1, 0.3, Z_SUM)
    known, _ = simulated_power(0.02, noise, round(naive_years), 1.0, seed=22)
    print(f"\nannual records of the naive {naive_years:.1f} years: simulated power {known:.3f}")
    assert known < 0.5
