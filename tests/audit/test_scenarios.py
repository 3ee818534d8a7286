"""The calibration study's own instruments: the Wilson interval, the noise generators and the claimant's choice."""

from __future__ import annotations

import numpy as np
import pytest
from statsmodels.stats.proportion import proportion_confint
from statsmodels.tsa.arima_process import arma_acf

from app.stats.windows import window_slopes
from bench.calibration import wilson
from bench.scenarios import (EARLIEST_START, NULL_NOISES, ExtremeWindow, NoiseSpec, SpikeStart, all_cells,
                             null_cells)


@pytest.mark.parametrize("successes, trials, low, high", [
    # Newcombe (1998), Statistics in Medicine 17, 857-872, Table II, method 3 (the Wilson score interval;
    # from memory, to 4 decimals)
    (81, 263, 0.2553, 0.3662),
    (15, 148, 0.0624, 0.1605),
    (0, 20, 0.0, 0.1611),
    (1, 29, 0.0061, 0.1718),
])
def test_wilson_interval_matches_published_values(successes, trials, low, high):
    assert wilson(successes, trials) == pytest.approx((low, high), abs=6e-5)


@pytest.mark.parametrize("successes, trials", [(0, 40), (3, 40), (17, 80), (80, 80), (281, 300)])
def test_wilson_interval_agrees_with_statsmodels(successes, trials):
    assert wilson(successes, trials) == pytest.approx(
        proportion_confint(successes, trials, alpha=0.05, method="wilson"), abs=1e-9)


def test_wilson_interval_covers_about_95_percent_by_simulation():
    rng = np.random.default_rng(11)
    trials, p = 80, 0.07
    draws = rng.binomial(trials, p, size=4000)
    covered = np.mean([lo <= p <= hi for lo, hi in (wilson(int(k), trials) for k in draws)])
    # Wilson's interval is close to nominal at this size, a little off in places (Brown, Cai & DasGupta 2001)
    assert 0.92 <= covered <= 0.98


@pytest.mark.parametrize("spec", sorted({noise for noise, _, _ in NULL_NOISES}, key=lambda s: s.label),
                         ids=lambda s: s.label)
def test_noise_has_the_asked_sd_and_the_model_autocorrelation(spec):
    x = spec.simulate(400, 2000, 0.1, np.random.default_rng(3))
    assert x.std() == pytest.approx(0.1, rel=0.03)
    # the model's lag-1 and lag-2 autocorrelation (statsmodels' arma_acf: Box & Jenkins' recursion)
    expected = arma_acf(np.r_[1.0, -np.asarray(spec.ar)], np.r_[1.0, np.asarray(spec.ma)], lags=3)
    centred = x - x.mean(axis=1, keepdims=True)
    for lag in (1, 2):
        measured = np.sum(centred[:, lag:] * centred[:, :-lag]) / np.sum(centred * centred)
        assert measured == pytest.approx(expected[lag], abs=0.02)


def test_heavy_tailed_noise_has_heavy_tails():
    heavy = NoiseSpec("t", innovations="t3").simulate(500, 400, 1.0, np.random.default_rng(4))
    normal = NoiseSpec("n").simulate(500, 400, 1.0, np.random.default_rng(4))
    kurtosis = lambda x: float(np.mean(x ** 4) / np.mean(x ** 2) ** 2)  # noqa: E731
    assert normal.std() == pytest.approx(1.0, rel=0.02) and heavy.std() == pytest.approx(1.0, rel=0.1)
    assert kurtosis(normal) == pytest.approx(3.0, abs=0.1) and kurtosis(heavy) > 5.0


def test_the_claimant_picks_the_flattest_window_after_the_first_15_percent():
    cell = null_cells()[0]
    t, records, claims = cell.draw(20, seed=8)
    strategy = ExtremeWindow(10, "min", "pause")
    claims = strategy.claims(t, records, 1)
    slopes = window_slopes(t, records, 10)
    first = int(np.ceil(EARLIEST_START * t.size))
    for row, claim in zip(slopes, claims):
        start = int(np.searchsorted(t, claim.start))
        assert start >= first and row[start] == row[first:].min() and claim.end == t[start + 9]


def test_a_spike_start_is_the_largest_residual_with_room_for_the_window():
    t, records, _ = null_cells()[0].draw(20, seed=9)
    for record, claim in zip(records, SpikeStart(10).claims(t, records, 1)):
        residual = record - np.polyval(np.polyfit(t, record, 1), t)
        start = int(np.searchsorted(t, claim.start))
        first = int(np.ceil(EARLIEST_START * t.size))
        assert residual[start] == pytest.approx(residual[first:t.size - 10].max())
        assert claim.end == t[start + 10]


def test_cells_are_named_once_and_draws_are_seeded():
    names = [cell.name for cell in all_cells()]
    assert len(names) == len(set(names))
    a, b = all_cells()[-3].draw(3, seed=1), all_cells()[-3].draw(3, seed=1)
    assert np.array_equal(a[1], b[1]) and a[2] == b[2]
