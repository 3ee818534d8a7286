"""The seasonal-cycle test and its removal: against statsmodels' F test, a real record, and by simulation."""

from __future__ import annotations

import numpy as np
import pytest
import statsmodels.api as sm
from scipy import signal, stats

from app.errors import ClaimError
from app.ingest import series_from_arrays
from app.ingest.seasonal import SIGNIFICANCE, deseasonalise, seasonal_cycle, seasonal_f_statistics
from app.ingest.series import Series

YEARS = 20
TIMES = 2000 + (np.arange(12 * YEARS) + 0.5) / 12  # mid-month, our convention
CYCLE = np.sin(2 * np.pi * (np.arange(12 * YEARS) % 12) / 12)


def monthly(values: np.ndarray, keep: np.ndarray | None = None) -> Series:
    keep = np.ones(values.size, bool) if keep is None else keep
    return Series(time=TIMES[keep], value=values[keep], sampling="monthly")


def test_the_f_statistic_equals_statsmodels_nested_model_test():
    rng = np.random.default_rng(11)
    values = 0.02 * np.arange(TIMES.size) + 0.3 * CYCLE + rng.normal(size=TIMES.size)
    keep = rng.random(TIMES.size) > 0.1  # missing months must not matter to the algebra
    cycle = seasonal_cycle(monthly(values, keep))
    t, y = TIMES[keep], values[keep]
    months = (np.floor(t * 12 + 1e-6).astype(int) % 12)
    line = sm.add_constant(t - t.mean())
    full = np.column_stack([line, (months[:, None] == np.arange(1, 12)).astype(float)])
    # Outside reference: statsmodels' OLSResults.compare_f_test (the nested-model F test).
    f, p, df = sm.OLS(y, full).fit().compare_f_test(sm.OLS(y, line).fit())
    assert cycle.f_statistic == pytest.approx(f, rel=1e-9)
    assert cycle.p_value == pytest.approx(p, rel=1e-6) and cycle.df_periods == df == 11


def simulated_f(noise: np.ndarray, cycle_amplitude: float = 0.0) -> np.ndarray:
    values = (0.01 * np.arange(TIMES.size) + cycle_amplitude * CYCLE)[:, None] + noise
    f, _, _, df = seasonal_f_statistics(TIMES, values, 12)
    return stats.f.sf(f, 11, df)


def ar1(rng: np.random.Generator, phi: float, sims: int, innovations=None) -> np.ndarray:
    shocks = rng.normal(size=(TIMES.size + 100, sims)) if innovations is None else innovations
    return signal.lfilter([1.0], [1.0, -phi], shocks, axis=0)[100:]


def test_false_alarm_rate_under_white_noise_is_the_nominal_size():
    rng = np.random.default_rng(1)
    p = simulated_f(rng.normal(size=(TIMES.size, 4000)))
    # With Gaussian white noise the statistic is exactly F(11, n - 13); 4,000 runs put the 5% rate within about
    # +-0.011 (three binomial standard errors).
    assert abs((p < 0.05).mean() - 0.05) < 0.011


@pytest.mark.parametrize("phi", [0.5, 0.8])
def test_positive_ar1_noise_does_not_raise_false_alarms(phi):
    rng = np.random.default_rng(2)
    p = simulated_f(ar1(rng, phi, 4000))
    assert (p < 0.05).mean() < 0.061


def test_heavy_tailed_noise_and_level_shift_keep_false_alarms_near_size():
    rng = np.random.default_rng(3)
    noise = rng.standard_t(3, size=(TIMES.size, 4000))
    noise[TIMES.size // 2:] += 2.0  # a level shift halfway
    p = simulated_f(noise)
    assert (p < 0.05).mean() < 0.065


def test_power_against_a_cycle_whose_spread_is_half_the_noise():
    rng = np.random.default_rng(4)
    # Unit-variance AR(1) noise; a sine of amplitude 0.7 has standard deviation 0.7 / sqrt(2), about 0.5.
    p = simulated_f(ar1(rng, 0.5, 2000) * np.sqrt(1 - 0.25), cycle_amplitude=0.7)
    assert (p < SIGNIFICANCE).mean() > 0.95


def test_a_quarterly_cycle_is_found_and_removed_per_quarter():
    rng = np.random.default_rng(5)
    n = 4 * 25
    times = 1990 + (np.arange(n) + 0.5) / 4
    values = 0.05 * np.arange(n) + np.tile([1.0, -0.5, 0.8, -1.3], 25) + 0.2 * rng.normal(size=n)
    series = Series(time=times, value=values, sampling="quarterly")
    assert seasonal_cycle(series).present and seasonal_cycle(series).periods == 4
    flat = deseasonalise(series, (1990, 2000))
    assert not seasonal_cycle(flat).present


def test_no_cycle_is_not_present_and_annual_data_are_refused():
    rng = np.random.default_rng(6)
    assert not seasonal_cycle(monthly(rng.normal(size=TIMES.size))).present
    annual = Series(time=np.arange(1990, 2020) + 0.5, value=rng.normal(size=30), sampling="annual")
    with pytest.raises(ClaimError, match="needs monthly or quarterly data"):
        seasonal_cycle(annual)


def mauna_loa_monthly() -> Series:
    """Mauna Loa weekly CO2 (Keeling et al., Scripps; statsmodels.datasets.co2, 1958-2001), as monthly means."""
    from statsmodels.datasets import co2

    weekly = co2.load_pandas().data["co2"]
    monthly_means = weekly.resample("MS").mean()
    labels = [f"{t.year:04d}-{t.month:02d}" for t in monthly_means.index]
    values = [None if np.isnan(v) else float(v) for v in monthly_means.to_numpy()]
    return series_from_arrays(labels, values)


def test_mauna_loa_co2_cycle_is_detected_removed_and_the_1990s_growth_is_about_1_5_ppm_a_year():
    series = mauna_loa_monthly()
    cycle = seasonal_cycle(series)
    assert cycle.present and cycle.p_value < 1e-20
    # The cycle peaks in May and bottoms out in September-October at Mauna Loa (Keeling et al. 1976, Tellus 28).
    assert int(np.argmax(cycle.period_means)) + 1 == 5 and int(np.argmin(cycle.period_means)) + 1 in (9, 10)
    # Peak to trough about 6 ppm: from memory.
    assert 5.0 < cycle.amplitude < 7.5
    flat = deseasonalise(series, (1961, 1991))
    assert not seasonal_cycle(flat).present
    assert flat.notes[-1].startswith("deseasonalised against the 1961 to 1991 climatology")
    nineties = flat.window(1990, 2000)
    slope = np.polyfit(nineties.time, nineties.value, 1)[0]
    # NOAA's decadal mean growth rate at Mauna Loa for the 1990s, about 1.5 ppm/yr: from memory.
    assert slope == pytest.approx(1.5, abs=0.15)
