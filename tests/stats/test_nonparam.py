"""Mann-Kendall (Hamed-Rao) and Sen's slope against pymannkendall and scipy, and their error rates by simulation."""

import numpy as np
import pymannkendall
import pytest
from scipy import stats

import app.stats.nonparam as nonparam
import app.stats.pairslopes as pairslopes
from app.errors import SeriesContentError
from app.stats.noise import NoiseModel, simulate_noise
from app.stats.nonparam import mann_kendall, mann_kendall_rows, sen_slope


def shared_series():
    """Series to run through both implementations: trends, autocorrelation, ties, a short one."""
    rng = np.random.default_rng(30)
    ar = simulate_noise(NoiseModel(kind="ar1", phi=0.7, sigma=0.3), 300, 1, rng)[0]
    return {
        "ar1 with trend": ar + 0.004 * np.arange(300),
        "ar1 without trend": ar,
        "rounded (many ties)": np.round(ar * 3 + 0.01 * np.arange(300)),
        "random walk, 1800 points": np.cumsum(rng.standard_normal(1800)),
        "short": np.array([3.1, 2.0, 4.2, 4.2, 5.0, 4.8, 6.1]),
        "decreasing white": -0.02 * np.arange(120) + rng.standard_normal(120),
    }


@pytest.mark.parametrize("max_lag", [3, None])
@pytest.mark.parametrize("name", list(shared_series()))
def test_hamed_rao_test_matches_pymannkendall(name, max_lag):
    # Reference library: pymannkendall.hamed_rao_modification_test (Hamed & Rao 1998); lag=None means every lag.
    y = shared_series()[name]
    ours = mann_kendall(y, alpha=0.05, max_lag=max_lag)
    ref = pymannkendall.hamed_rao_modification_test(y, alpha=0.05, lag=max_lag)
    assert ours.s == ref.s
    assert ours.tau == pytest.approx(ref.Tau, rel=1e-12)
    assert ours.var_s == pytest.approx(ref.var_s, rel=1e-9)
    assert ours.z == pytest.approx(ref.z, rel=1e-9, abs=1e-12)
    assert ours.p_value == pytest.approx(ref.p, rel=1e-7, abs=1e-14)
    assert ours.trend == ref.trend


@pytest.mark.parametrize("name", list(shared_series()))
def test_plain_test_matches_pymannkendall_original(name):
    # Reference library: pymannkendall.original_test (Mann 1945; Kendall 1975; tie-corrected variance).
    y = shared_series()[name]
    ours = mann_kendall(y, hamed_rao=False)
    ref = pymannkendall.original_test(y)
    assert (ours.s, ours.var_s, ours.variance_correction) == (ref.s, pytest.approx(ref.var_s, rel=1e-12), 1.0)
    assert ours.p_value == pytest.approx(ref.p, rel=1e-9, abs=1e-14)
    assert ours.trend == ref.trend


def test_rows_agree_with_single_series():
    rows = simulate_noise(NoiseModel(kind="ar1", phi=0.5), 50, 4, np.random.default_rng(31))
    batch = mann_kendall_rows(rows)
    for k in range(4):
        single = mann_kendall(rows[k])
        assert (batch.s[k], batch.z[k], batch.variance_correction[k]) == pytest.approx(
            (single.s, single.z, single.variance_correction), rel=1e-12)


@pytest.mark.parametrize("confidence", [0.95, 0.8])
def test_sen_slope_matches_scipy_theilslopes(confidence):
    # Reference library: scipy.stats.theilslopes (Sen 1968, eq. 2.6 interval; intercept median(y) - b median(t)).
    rng = np.random.default_rng(32)
    cases = [
        (1990 + (np.arange(240) + 0.5) / 12, 0.02 * np.arange(240) / 12 + rng.standard_normal(240)),
        (np.repeat(np.arange(30.0), 2), np.round(rng.standard_normal(60) * 2 + 0.1 * np.repeat(np.arange(30.0), 2))),
        (np.arange(8.0), np.array([1.0, 1.0, 2.0, 1.0, 3.0, 3.0, 2.0, 4.0])),
    ]
    for t, y in cases:
        ours = sen_slope(t, y, confidence)
        ref = stats.theilslopes(y, t, alpha=confidence)
        assert ours.slope == pytest.approx(ref.slope, rel=1e-12)
        assert ours.intercept == pytest.approx(ref.intercept, rel=1e-12)
        assert ours.ci == pytest.approx((ref.low_slope, ref.high_slope), rel=1e-12)


def test_descent_counts_match_brute_force():
    # Against the definition: pairs i < j with x_j < x_i, ties not counted.
    rng = np.random.default_rng(33)
    for n in (1, 2, 7, 64, 300):
        rows = np.round(rng.standard_normal((3, n)) * 2)
        brute = [int(np.sum(np.triu(row[None, :] < row[:, None], 1))) for row in rows]
        assert list(pairslopes.count_descents(rows)) == brute


def test_counting_path_selects_the_same_slopes_as_holding_them_all(monkeypatch):
    # The path long series take (no quadratic arrays) against a full sort, with ties in time and in values.
    rng = np.random.default_rng(36)
    t = np.sort(rng.integers(0, 500, 900)).astype(float)
    for y in (0.01 * t + rng.standard_normal(900), np.round(0.01 * t + rng.standard_normal(900))):
        every = np.sort(pairslopes._all_slopes(t, y[None, :])[0])
        ranks = [0, 17, every.size // 3, every.size // 2, every.size - 1]
        monkeypatch.setattr(pairslopes, "MAX_PAIRS_IN_MEMORY", 1000)
        monkeypatch.setattr(pairslopes, "SAMPLE_PAIRS", 2000)
        assert list(pairslopes.slope_order_statistics(t, y, ranks)[0]) == [every[r] for r in ranks]
        monkeypatch.undo()
    t = np.arange(900.0)
    y = rng.standard_normal(900) + 0.01 * t
    in_memory, mk_in_memory = sen_slope(t, y), mann_kendall(y)
    monkeypatch.setattr(pairslopes, "MAX_PAIRS_IN_MEMORY", 1000)
    assert sen_slope(t, y) == in_memory
    assert mann_kendall(y) == mk_in_memory


def test_false_alarm_rates_under_white_and_autocorrelated_noise():
    # Seeded simulation, no trend, n = 100: plain MK keeps 5% on white noise but not under AR(1) (phi = 0.6);
    # the Hamed-Rao correction with lags 1-3 brings it most of the way back and leaves white noise near 5%,
    # while the every-lag variant over-rejects even on white noise (why max_lag = 3 is the default).
    rng = np.random.default_rng(34)
    white = rng.standard_normal((1000, 100))
    red = simulate_noise(NoiseModel(kind="ar1", phi=0.6), 100, 1000, rng)

    def rate(rows, **options):
        return float(np.mean(mann_kendall_rows(rows, **options).p_value < 0.05))

    rates = {
        "plain, white": rate(white, hamed_rao=False), "Hamed-Rao, white": rate(white),
        "all-lags Hamed-Rao, white": rate(white, max_lag=None),
        "plain, AR(1) 0.6": rate(red, hamed_rao=False), "Hamed-Rao, AR(1) 0.6": rate(red),
        "all-lags Hamed-Rao, AR(1) 0.6": rate(red, max_lag=None),
    }
    print("\nMann-Kendall false-alarm rates at 5%, n = 100: " + ", ".join(f"{k} {v:.3f}" for k, v in rates.items()))
    assert 0.03 <= rates["plain, white"] <= 0.07
    assert 0.03 <= rates["Hamed-Rao, white"] <= 0.07
    assert rates["all-lags Hamed-Rao, white"] > rates["Hamed-Rao, white"]
    assert rates["plain, AR(1) 0.6"] > 0.2
    assert rates["Hamed-Rao, AR(1) 0.6"] < rates["plain, AR(1) 0.6"] / 2


def test_sen_interval_coverage_under_white_noise():
    # Seeded simulation: Sen's (1968) rank interval covers the true slope ~95% for independent errors.
    # Uses the vectorised internals: continuous data have no ties, so every row shares the interval's ranks.
    rng = np.random.default_rng(35)
    t = np.arange(60.0)
    rows = 0.05 * t + rng.standard_normal((2000, 60))
    pairs = pairslopes.pair_count(t)
    ranks = nonparam._sen_interval_ranks(t, rows[0], pairs, 0.95)
    ends = pairslopes.slope_order_statistics(t, rows, ranks)
    coverage = np.mean((ends[:, 0] <= 0.05) & (0.05 <= ends[:, 1]))
    assert sen_slope(t, rows[0]).ci == pytest.approx(tuple(ends[0]))
    print(f"\nSen 95% interval coverage, white noise, n = 60: {coverage:.3f}")
    assert 0.93 <= coverage <= 0.97


def test_bad_series_are_content_errors():
    with pytest.raises(SeriesContentError, match="at least 3 points"):
        mann_kendall(np.array([1.0, 2.0]))
    with pytest.raises(SeriesContentError, match="missing or infinite"):
        mann_kendall(np.array([1.0, np.nan, 2.0, 3.0]))
    with pytest.raises(SeriesContentError, match="same time"):
        sen_slope(np.ones(5), np.arange(5.0))
