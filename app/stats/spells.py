"""How surprising is the flattest (or steepest) short window of a long record? The look-elsewhere effect.

A claim such as "no warming for 15 years" is rarely about a window fixed in advance: whoever
makes it has looked along the record and picked the flattest stretch. The fair question is
therefore not "how unlikely is this slope in one window?" but "how often does a record of this
length, with a steady trend and realistic noise, contain at least one window this flat
somewhere?". We answer both by simulation: the null is the constant trend ``null_slope`` plus
AR(1) or ARMA(1,1) noise over the record's own times, and every window of every simulated record
is measured with the prefix-sum slopes of ``app.stats.windows``.

Because the OLS slope is linear in the values, adding the line ``null_slope * t`` shifts every
window slope by exactly ``null_slope``; only the noise is simulated and the shift is added after.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.signal import lfilter

from app.errors import InputError, Location
from app.stats.noise import NoiseModel, Shocks, resampled_shocks, simulate_noise
from app.stats.windows import check_one_series, check_times, check_window_points, window_slopes

DIRECTIONS = ("low", "high")
# Simulated values per chunk, and rows per chunk at most: small blocks stay in cache, and the engine's
# working arrays are mapped once and reused. Measured (2,000 records, median of 11, interleaved with the
# floor, on the shared 2-core machine): 2.4-2.7 times numpy's bare normal draws at 25,000 to 200,000
# values per chunk, against 3.5-4.5 with fresh 450,000-value arrays each chunk.
CHUNK_VALUES = 100_000
MAX_CHUNK_ROWS = 250
SAMPLE_SERIES = 200  # simulated series whose every window slope is kept for a histogram...
SAMPLE_VALUES = 400_000  # ...or fewer on long records, so the sample stays a few MB


@dataclass(frozen=True)
class SpellResult:
    """The chance of a spell at least as extreme as the claimed one, under a steady-trend null.

    ``direction`` "low" asks about windows whose slope is <= the observed one (a pause,
    slowdown or reversal); "high" about slopes >= it (an acceleration).
    """

    direction: str
    window_points: int
    observed_slope: float
    probability: float  # P(at least one window of the record is as extreme): the look-elsewhere answer
    expected_count: float  # mean number of such windows per record (overlapping windows counted each)
    observed_count: int | None  # windows of the actual series as extreme; None when no values were given
    simulated_slopes_sample: np.ndarray  # every window slope of the first 200 simulated records (fewer when
    #                                      the record has over 2,000 windows: at most 400,000 slopes)
    simulated_extremes: np.ndarray  # per simulated record, its lowest ("low") or highest ("high") window slope
    probability_single_window: float  # P(one given window is as extreme): the nominal, unadjusted chance
    n_simulations: int
    null_slope: float
    noise: NoiseModel
    n_windows: int  # windows of window_points consecutive points in the record


def spell_probability(t: np.ndarray, null_slope: float, noise: NoiseModel, window_points: int,
                      observed_slope: float, direction: str = "low", n_simulations: int = 2000,
                      rng: np.random.Generator | int | None = None,
                      observed_values: np.ndarray | None = None,
                      innovations: np.ndarray | None = None) -> SpellResult:
    """Look-elsewhere probability of a window trend at least as extreme as ``observed_slope``.

    ``t`` are the full record's times; ``window_points`` the claimed window's length in points
    (every window of that many consecutive points is a candidate). ``rng`` is a Generator or a
    seed; None draws fresh entropy and is not reproducible. ``observed_values``, when given,
    are the record's values, used only to count its own windows that are as extreme. ``innovations``,
    when given (the whitened residuals of the noise fit), are resampled instead of drawing Gaussian shocks:
    a record's flattest window is an extreme, and heavy-tailed noise makes extremes commoner than Gaussian
    shocks of the same variance do (measured under AR(1) noise with t(3) innovations, 300 records: with
    Gaussian shocks the spell probability fell below 5% in 10-18% of null records against our bound of 10%).

    ``probability`` is the Monte Carlo p-value (k + 1) / (N + 1), k of N simulated records
    having a window as extreme: it is never reported as zero and is exactly valid as a test
    (Davison & Hinkley 1997, section 4.2.1, from memory). ``probability_single_window`` and
    ``expected_count`` are plain averages over all simulated windows.
    """
    t = check_times(t)
    _check_spell_options(t.size, window_points, direction, n_simulations, observed_values,
                         (null_slope, observed_slope))
    generator = np.random.default_rng(rng)
    shocks = resampled_shocks(innovations, generator) if innovations is not None else generator.standard_normal
    sign = 1.0 if direction == "low" else -1.0
    # Threshold and extremes are kept sign-flipped for "high", so one test ("<=") serves both directions.
    threshold = sign * (float(observed_slope) - float(null_slope))

    n_windows = t.size - window_points + 1
    windows = _WindowSums(t, window_points)
    chunk_rows = _chunk_rows(t.size)
    sample_rows = max(1, min(SAMPLE_SERIES, SAMPLE_VALUES // n_windows))
    extremes, samples = [], []
    total_as_extreme = 0
    done = 0
    while done < n_simulations:
        rows = min(chunk_rows, n_simulations - done)
        slopes = windows.slopes(_running_sums(noise, t.size, rows, generator, shocks))
        if sign > 0:
            extremes.append(slopes.min(axis=1))
            total_as_extreme += int(np.count_nonzero(slopes <= threshold))
        else:
            extremes.append(-slopes.max(axis=1))
            total_as_extreme += int(np.count_nonzero(slopes >= -threshold))
        if done < sample_rows:
            samples.append(slopes[: sample_rows - done].ravel().copy())  # the buffer is reused
        done += rows

    signed_extremes = np.concatenate(extremes)
    records_as_extreme = int(np.count_nonzero(signed_extremes <= threshold))
    return SpellResult(
        direction=direction,
        window_points=int(window_points),
        observed_slope=float(observed_slope),
        probability=(records_as_extreme + 1) / (n_simulations + 1),
        expected_count=total_as_extreme / n_simulations,
        observed_count=_observed_count(t, observed_values, window_points, observed_slope, sign),
        simulated_slopes_sample=null_slope + np.concatenate(samples),
        simulated_extremes=null_slope + sign * signed_extremes,
        probability_single_window=total_as_extreme / (n_simulations * n_windows),
        n_simulations=int(n_simulations),
        null_slope=float(null_slope),
        noise=noise,
        n_windows=int(n_windows),
    )


def _observed_count(t: np.ndarray, values: np.ndarray | None, window_points: int, observed_slope: float,
                    sign: float) -> int | None:
    """Windows of the actual series as extreme as the observed slope.

    The observed slope is usually one of these windows, computed another way; a tolerance of
    1e-9 of the slopes' scale keeps it from missing itself by a rounding error.
    """
    if values is None:
        return None
    slopes = window_slopes(t, values, window_points)
    tolerance = 1e-9 * (float(np.max(np.abs(slopes))) + abs(observed_slope))
    return int(np.count_nonzero(sign * (slopes - observed_slope) <= tolerance))


def _chunk_rows(n: int) -> int:
    """Simulated records per chunk, keeping the working arrays near ``CHUNK_VALUES`` values."""
    return int(max(1, min(MAX_CHUNK_ROWS, CHUNK_VALUES // n)))


class _WindowSums:
    """OLS slopes of every window of ``length`` points of simulated noise, straight from its running sums.

    The same prefix-sum slopes as ``app.stats.windows`` (centred times, float64), arranged so the noise
    itself is never formed: the filter that makes AR(1) noise from white innovations also sums it
    (``_running_sums``). By summation by parts a window's sum of t x is a difference of one running
    array, ``sum_{a..b} t_k x_k = H_b - H_{a-1}`` with ``H_k = t_{k+1} C_k - sum_{i <= k} (t_{i+1} - t_i) C_i``
    (``C`` the running sums, ``t_n = t_{n-1}``), just as the window's sum of x is ``C_b - C_{a-1}``. Noise
    carries no trend, so no row needs detrending first. Times may be irregular. Working arrays are
    kept between chunks, so memory is mapped once.
    """

    def __init__(self, t: np.ndarray, length: int):
        self.length = length
        tc = t - t.mean()
        self.next_t = np.append(tc[1:], tc[-1])
        self.steps = self.next_t - tc
        cum_t = np.concatenate([[0.0], np.cumsum(tc)])
        cum_tt = np.concatenate([[0.0], np.cumsum(tc * tc)])
        sum_t = cum_t[length:] - cum_t[:-length]
        t_bar = sum_t / length
        self.inverse_sxx = 1.0 / ((cum_tt[length:] - cum_tt[:-length]) - sum_t * t_bar)
        self.t_bar_over_sxx = t_bar * self.inverse_sxx
        self._buffers: dict[int, tuple[np.ndarray, ...]] = {}

    def slopes(self, running: np.ndarray) -> np.ndarray:
        """(S, windows) slopes from the running sums C (S, n) of the rows; the result is reused by the next call."""
        rows, n = running.shape
        if rows not in self._buffers:
            windows = n - self.length + 1
            self._buffers = {rows: (np.empty((rows, n)), np.empty((rows, n)), np.empty((rows, windows)),
                                    np.empty((rows, windows)))}
        weighted, h, sum_ty, sum_y = self._buffers[rows]
        np.multiply(running, self.steps, out=weighted)
        np.cumsum(weighted, axis=1, out=weighted)
        np.multiply(running, self.next_t, out=h)
        np.subtract(h, weighted, out=h)
        _window_differences(h, self.length, sum_ty)
        _window_differences(running, self.length, sum_y)
        # slope = (S_ty - t_bar S_y) / S_xx
        np.multiply(sum_ty, self.inverse_sxx, out=sum_ty)
        np.multiply(sum_y, self.t_bar_over_sxx, out=sum_y)
        return np.subtract(sum_ty, sum_y, out=sum_ty)


def _window_differences(running: np.ndarray, length: int, out: np.ndarray) -> None:
    """out[:, a] = running[:, a + length - 1] - running[:, a - 1] (running[:, -1] taken as 0)."""
    out[:, 0] = running[:, length - 1]
    np.subtract(running[:, length:], running[:, :out.shape[1] - 1], out=out[:, 1:])


def _running_sums(noise: NoiseModel, n: int, rows: int, rng: np.random.Generator,
                  shocks: Shocks | None = None) -> np.ndarray:
    """cumsum(simulate_noise(noise, n, rows, rng, shocks), axis=1), drawing the same variates.

    For white and AR(1) noise one filter both makes the noise and sums it: sigma / ((1 - z^-1)(1 - phi z^-1)).
    """
    shocks = shocks or rng.standard_normal
    if noise.is_white:
        return lfilter([noise.sigma], [1.0, -1.0], shocks((rows, n)), axis=1)
    if noise.theta == 0.0 and noise.phi2 == 0.0:
        e = shocks((rows, n))
        e[:, 0] /= np.sqrt(1.0 - noise.phi * noise.phi)
        return lfilter([noise.sigma], [1.0, -(1.0 + noise.phi), noise.phi], e, axis=1)
    return np.cumsum(simulate_noise(noise, n, rows, rng, shocks), axis=1)


def _check_spell_options(n: int, window_points: int, direction: str, n_simulations: int,
                         observed_values: np.ndarray | None, slopes: tuple[float, float]) -> None:
    check_window_points(window_points, n)
    if not np.all(np.isfinite(slopes)):
        raise InputError(f"the null and observed slopes must be finite numbers, got {slopes}",
                         location=Location(field="observed_slope"))
    if direction not in DIRECTIONS:
        raise InputError(f"direction must be one of {', '.join(DIRECTIONS)}, got {direction!r}",
                         location=Location(field="direction"),
                         fix='Use "low" for a pause or slowdown, "high" for an acceleration')
    if int(n_simulations) < 1:
        raise InputError(f"the number of simulations must be at least 1, got {n_simulations}",
                         location=Location(field="n_simulations"))
    if observed_values is not None:
        check_one_series(observed_values, n)
