"""Multiple-breakpoint segmentation: exact searches, the number of breaks, intervals."""

from __future__ import annotations

import itertools

import numpy as np
import pytest
import ruptures as rpt
import statsmodels.api as sm

from app.errors import InputError
from app.stats.noise import NoiseModel, simulate_noise
from app.stats.segment import (ContinuousSegmenter, DiscontinuousSegmenter, Segmenter, segment_continuous,
                               segment_discontinuous)
from app.stats.segment.continuous import ContinuousSearch
from app.stats.segment.costs import LevelCost, LinearCost
from app.stats.segment.discontinuous import DiscontinuousSearch
from app.stats.trend import slope_uncertainty

ANNUAL = 1880.5 + np.arange(140.0)


def _noise(rng, size, phi=0.5, sigma=0.1, n=ANNUAL.size):
    return simulate_noise(NoiseModel(kind="ar1", phi=phi, sigma=sigma), n, size, rng)


def _kinked(t, knots, slopes):
    """Continuous piecewise-linear mean through 0 at t[0] with the given slopes between knots."""
    mean = slopes[0] * (t - t[0])
    for knot, before, after in zip(knots, slopes[:-1], slopes[1:]):
        mean = mean + (after - before) * np.maximum(t - knot, 0.0)
    return mean


# ------------------------------------------------------------------ outside references


def test_nile_has_one_level_shift_in_1898():
    # Nile flows at Aswan, 1871-1970 (statsmodels.datasets.nile): one downward shift after 1898,
    # the dam at Aswan (Cobb 1978, Biometrika 65, 243); the standard example of Zeileis et al.
    # (2002, J. Stat. Softw. 7(2)), whose BIC also picks one break at 1898 with 15% minimum segments.
    nile = sm.datasets.nile.load_pandas().data
    t, y = nile["year"].to_numpy(float), nile["volume"].to_numpy(float)
    level = segment_discontinuous(t, y, min_size_points=15, cost="level")
    assert level.n_breaks == 1 and abs(level.breakpoints[0] - 1898) <= 1
    low, high = level.breakpoint_ranges[0]
    assert low <= 1898 <= high and high - low <= 10
    assert level.segments[0].level_end > level.segments[1].level_start + 200  # about 1100 down to 850
    linear = segment_discontinuous(t, y, min_size_points=15, cost="linear")
    assert linear.n_breaks == 1 and abs(linear.breakpoints[0] - 1898) <= 1


@pytest.mark.parametrize("seed", [0, 1, 2])
@pytest.mark.parametrize(("cost", "model"), [(LinearCost, "linear"), (LevelCost, "l2")])
def test_discontinuous_optimum_equals_ruptures_dynp(seed, cost, model):
    # Reference: ruptures' Dynp (exact dynamic programming) with the same cost, min_size and jump 1.
    rng = np.random.default_rng(seed)
    n = 120
    t = np.arange(n, dtype=float)
    y = np.cumsum(rng.standard_normal(n)) * 0.3 + rng.standard_normal(n)
    ours = DiscontinuousSearch(t, y, cost(t, y), 4, 10).best
    signal = np.column_stack([y, np.ones(n), t]) if model == "linear" else y[:, None]
    dynp = rpt.Dynp(model=model, min_size=10, jump=1).fit(signal)
    for k in range(1, 5):
        theirs = dynp.predict(n_bkps=k)
        assert ours[k][1] == pytest.approx(dynp.cost.sum_of_costs(theirs), rel=1e-9)
        assert list(ours[k][0]) + [n] == theirs


def test_break_date_critical_values():
    # Hansen (2000, Econometrica 68, 575, Table 1): 5.94, 7.35, 10.59 at 90, 95, 99% (as transcribed
    # in public code; not checked against the paper itself).
    np.testing.assert_allclose([DiscontinuousSearch.critical_value(c, 50.0) for c in (0.90, 0.95, 0.99)],
                               [5.94, 7.35, 10.59], atol=0.005)
    # Joined pieces: F(1, dof), tending to the chi-square(1) 95% quantile 3.84 for many degrees of freedom
    # (common practice, no source).
    assert ContinuousSearch.critical_value(0.95, 1e6) == pytest.approx(3.8415, abs=1e-3)


def _continuous_rss(t, y, combo, min_size):
    pieces = np.diff(np.concatenate([[0], np.searchsorted(t, combo, side="right"), [t.size]]))
    if np.any(pieces < min_size):
        return np.inf
    design = np.column_stack([np.ones_like(t), t] + [np.maximum(t - c, 0.0) for c in combo])
    residual = y - design @ np.linalg.lstsq(design, y, rcond=None)[0]
    return float(residual @ residual)


def _brute_force_continuous(t, y, knots, k, min_size):
    return min((_continuous_rss(t, y, combo, min_size), tuple(float(c) for c in combo))
               for combo in itertools.combinations(knots, k))


@pytest.mark.parametrize(("points_per_year", "seed"), [(1, 3), (1, 4), (4, 5)])
def test_continuous_optimum_equals_brute_force(points_per_year, seed):
    rng = np.random.default_rng(seed)
    n = 60 if points_per_year == 1 else 100
    t = 2000 + (np.arange(n) + 0.5) / points_per_year
    y = _kinked(t, [t[n // 2]], [0.02, -0.03]) + _noise(rng, 1, n=n)[0]
    knots = np.arange(np.ceil(t[0]), np.floor(t[-1]) + 1)
    min_size = 6 if points_per_year == 1 else 12
    search = ContinuousSearch(t, y, knots, 3, min_size)
    for k in range(1, 4):
        rss, combo = _brute_force_continuous(t, y, knots, k, min_size)
        assert search.best[k][1] == pytest.approx(rss, rel=1e-9)
        assert search.best[k][0] == combo


def test_profiles_re_optimise_the_other_breaks():
    # The interval of one break comes from the least RSS with that break at each date and every other
    # break free; checked by brute force over all pairs of breaks, for both forms.
    rng = np.random.default_rng(6)
    n, min_size = 50, 8
    t = np.arange(n, dtype=float)
    y = _kinked(t, [15.5, 33.5], [0.1, -0.1, 0.2]) + _noise(rng, 1, n=n)[0]
    continuous = ContinuousSearch(t, y, np.arange(1.0, n - 1), 2, min_size)
    pairs = {pair: _continuous_rss(t, y, pair, min_size) for pair in itertools.combinations(continuous.knots, 2)}
    cost = LinearCost(t, y)
    discontinuous = DiscontinuousSearch(t, y, cost, 2, min_size)
    splits = {(a, b): float(cost.costs(np.array([0, a, b]), np.array([a, b, n])).sum())
              for a, b in itertools.combinations(range(min_size, n - min_size + 1), 2) if b - a >= min_size}
    for which in range(2):
        times, rss = continuous.profile(continuous.best[2][0], which)
        assert times.size > 0
        for time, value in zip(times, rss):
            assert value == pytest.approx(min(v for pair, v in pairs.items() if pair[which] == time), rel=1e-9)
        times, rss = discontinuous.profile(discontinuous.best[2][0], which)
        assert times.size > 0
        for time, value in zip(times, rss):
            boundary = int(time) + 1  # a break at time t_k puts the next segment's start at k + 1
            assert value == pytest.approx(min(v for split, v in splits.items() if split[which] == boundary), rel=1e-9)


def test_no_break_reproduces_the_ar1_trend_interval():
    # With no break the segment slope interval is the project's AR(1) trend interval, i.e.
    # Santer et al. (2008, Int. J. Climatol. 28, 1703) n_eff adjustment, computed independently
    # in app.stats.trend.
    rng = np.random.default_rng(7)
    y = 0.008 * (ANNUAL - ANNUAL[0]) + _noise(rng, 1)[0]
    result = segment_continuous(ANNUAL, y, max_breaks=0)
    trend = slope_uncertainty(ANNUAL, y, method="ar1")
    assert result.n_breaks == 0 and len(result.segments) == 1
    assert result.segments[0].slope == pytest.approx(trend.slope)
    np.testing.assert_allclose(result.segments[0].slope_ci, trend.ci, rtol=1e-9)


# ------------------------------------------------------------------ seeded simulations


@pytest.mark.parametrize("phi", [0.5, 0.8])
def test_ar1_bic_does_not_invent_breaks_where_plain_bic_does(phi):
    # A straight line plus AR(1) noise has no break. Measured over 100 series (max 2 breaks):
    # AR(1) BIC picks a break in 4% (phi 0.5) and 3% (phi 0.8) of them (continuous form); the
    # RSS-only BIC of Bai & Perron (2003) in 42% and 93%. Discontinuous form: 8% and 8% (50 series).
    rng = np.random.default_rng(30 + int(10 * phi))
    rows = 0.008 * (ANNUAL - ANNUAL[0]) + _noise(rng, 100, phi=phi)
    n = ANNUAL.size
    ours, plain = [], []
    for y in rows:
        result = segment_continuous(ANNUAL, y, max_breaks=2)
        ours.append(result.n_breaks > 0)
        rss_bic = {k: n * np.log(rss / n) + (2 + 2 * k) * np.log(n) for k, rss in result.rss.items()}
        plain.append(min(rss_bic, key=rss_bic.get) > 0)
    assert np.mean(ours) <= 0.10
    assert np.mean(plain) >= 0.25
    disc = [segment_discontinuous(ANNUAL, y, max_breaks=2).n_breaks > 0 for y in rows[:50]]
    assert np.mean(disc) <= 0.14


@pytest.mark.slow
def test_a_change_of_warming_rate_is_found_and_its_intervals_cover():
    # Slope 0.005 -> 0.017 per year at 1975 (joined), AR(1) 0.5, innovation sd 0.1, 300 series, at
    # most one break. Measured: break found in 99.3%; the 95% date interval covers 1975 in 93.6%; the
    # slope intervals cover in 89.6% and 90.6%. Under nominal because the intervals are asymptotic
    # (Gauss-Newton for the slopes, with 44 points after the break): recorded, not hidden.
    rng = np.random.default_rng(40)
    mean = _kinked(ANNUAL, [1975.0], [0.005, 0.017])
    found = date_hits = before_hits = after_hits = 0
    for e in _noise(rng, 300):
        result = segment_continuous(ANNUAL, mean + e, max_breaks=1)
        if result.n_breaks != 1:
            continue
        found += 1
        low, high = result.breakpoint_ranges[0]
        date_hits += low <= 1975 <= high
        before, after = result.segments
        before_hits += before.slope_ci[0] <= 0.005 <= before.slope_ci[1]
        after_hits += after.slope_ci[0] <= 0.017 <= after.slope_ci[1]
    assert found >= 0.95 * 300
    assert date_hits / found >= 0.89
    assert min(before_hits, after_hits) / found >= 0.85


def test_a_jump_is_found_and_its_hansen_interval_covers():
    # A level jump of 0.3 after 1975.5 on a 0.005 per year trend, AR(1) 0.5, 150 series. Measured:
    # found in 90%, the Hansen (2000) interval covers 1975.5 in 97.8% of those.
    rng = np.random.default_rng(41)
    mean = 0.005 * (ANNUAL - ANNUAL[0]) + 0.3 * (ANNUAL > 1975.5)
    found = hits = 0
    for e in _noise(rng, 150):
        result = segment_discontinuous(ANNUAL, mean + e, max_breaks=1)
        if result.n_breaks == 1:
            found += 1
            low, high = result.breakpoint_ranges[0]
            hits += low <= 1975.5 <= high
    assert found >= 0.8 * 150
    assert hits / found >= 0.9


@pytest.mark.slow
def test_two_changes_of_rate_are_both_recovered():
    # Warming to 1910, a slight cooling to 1975, fast warming after: the shape often claimed for
    # the instrumental record. AR(1) 0.5, innovation sd 0.05, 60 series, up to 3 breaks.
    # Measured: 2 breaks chosen in 55 of 60; intervals cover 1910 in 94.5% and 1975 in 96.4% of those.
    rng = np.random.default_rng(42)
    mean = _kinked(ANNUAL, [1910.0, 1975.0], [0.01, -0.002, 0.018])
    chosen = covered = 0
    for e in _noise(rng, 60, sigma=0.05):
        result = segment_continuous(ANNUAL, mean + e, max_breaks=3)
        if result.n_breaks == 2:
            chosen += 1
            covered += sum(low <= true <= high for (low, high), true in zip(result.breakpoint_ranges, (1910, 1975)))
    assert chosen >= 50
    assert covered / (2 * chosen) >= 0.88


# ------------------------------------------------------------------ structure and input checks


def test_segments_describe_the_fitted_curve():
    rng = np.random.default_rng(8)
    y = _kinked(ANNUAL, [1950.0], [0.002, 0.02]) + _noise(rng, 1, sigma=0.03)[0]
    result = segment_continuous(ANNUAL, y, max_breaks=2)
    assert isinstance(result.noise, NoiseModel) and result.form == "continuous"
    assert result.n_breaks == 1 and result.breakpoints == (1950.0,)
    first, second = result.segments
    assert first.end == second.start == 1950.0 and first.level_end == pytest.approx(second.level_start)
    assert first.n_points + second.n_points == ANNUAL.size
    assert result.fitted[0] == pytest.approx(first.level_start)
    assert set(result.criterion) == {0, 1, 2} and min(result.criterion, key=result.criterion.get) == 1


def test_bad_options_are_refused():
    y = _noise(np.random.default_rng(9), 1)[0]
    with pytest.raises(InputError, match="unknown segment cost"):
        segment_discontinuous(ANNUAL, y, cost="median")
    with pytest.raises(InputError, match="min_size_points"):
        segment_discontinuous(ANNUAL, y, min_size_points=2)
    with pytest.raises(InputError, match="max_breaks"):
        segment_continuous(ANNUAL, y, max_breaks=-1)
    with pytest.raises(InputError, match="min_size_years"):
        segment_continuous(ANNUAL, y, min_size_years=0)


def test_segmenters_share_the_base_class():
    y = _kinked(ANNUAL, [1950.0], [0.002, 0.02]) + _noise(np.random.default_rng(10), 1, sigma=0.03)[0]
    segmenter = ContinuousSegmenter(max_breaks=2)
    assert isinstance(segmenter, Segmenter) and isinstance(DiscontinuousSegmenter(), Segmenter)
    assert segmenter.fit(ANNUAL, y).breakpoints == segment_continuous(ANNUAL, y, max_breaks=2).breakpoints
