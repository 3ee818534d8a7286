"""The spell engine's shortcut: window trends straight from running sums of the simulated noise."""

from __future__ import annotations

import numpy as np
import pytest

from app.stats import spells
from app.stats.noise import NoiseModel, simulate_noise
from app.stats.spells import spell_probability

NOISES = [NoiseModel(kind="ar1", phi=0.6, sigma=0.1), NoiseModel(kind="white", sigma=0.2),
          NoiseModel(kind="arma11", phi=0.7, theta=-0.3, sigma=0.1)]
TIMES = {"annual": np.arange(140.0) + 0.5,
         "irregular": np.sort(np.random.default_rng(1).uniform(0.0, 100.0, 300)),
         "monthly": 1875 + (np.arange(600) + 0.5) / 12}


@pytest.mark.parametrize("noise", NOISES, ids=lambda n: n.kind)
@pytest.mark.parametrize("times", TIMES, ids=str)
def test_window_trends_equal_numpy_polyfit_on_the_same_draws(noise, times):
    # Reference: numpy.polyfit (degree 1) of each window of the series simulate_noise draws from the same seed.
    t = TIMES[times]
    rows = simulate_noise(noise, t.size, 3, np.random.default_rng(5))
    for length in (3, 15, 100):
        ours = spells._WindowSums(t, length).slopes(spells._running_sums(noise, t.size, 3, np.random.default_rng(5)))
        for r in range(3):
            for start in (0, 7, t.size - length):
                window = slice(start, start + length)
                expected = np.polyfit(t[window], rows[r, window], 1)[0]
                spread = noise.sigma / np.sqrt(np.sum((t[window] - t[window].mean()) ** 2))
                assert abs(ours[r, start] - expected) <= 1e-9 * spread


def test_running_sums_draw_what_simulate_noise_draws():
    for noise in NOISES:
        sums = spells._running_sums(noise, 200, 4, np.random.default_rng(6))
        np.testing.assert_allclose(sums, np.cumsum(simulate_noise(noise, 200, 4, np.random.default_rng(6)), axis=1),
                                   rtol=1e-10, atol=1e-12)


def test_the_histogram_sample_stays_small_on_long_records():
    t = np.arange(5000.0) / 365.25
    result = spell_probability(t, 0.0, NOISES[0], 30, 0.0, n_simulations=300, rng=7)
    assert result.simulated_slopes_sample.size <= spells.SAMPLE_VALUES
    assert result.simulated_slopes_sample.size % result.n_windows == 0
