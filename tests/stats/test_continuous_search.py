"""The joined-line search prunes with envelopes and ceilings; it must still find what enumeration finds."""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from app.stats.noise import NoiseModel, simulate_noise
from app.stats.segment import segment_continuous
from app.stats.segment.chain import KnotChain, extend
from app.stats.segment.continuous import ContinuousSearch
from app.stats.segment.envelope import envelope_members


def _series(seed, n, phi=0.5, kinks=()):
    rng = np.random.default_rng(seed)
    t = np.arange(n, dtype=float) + 0.5
    y = simulate_noise(NoiseModel(kind="ar1", phi=phi, sigma=0.1), n, 1, rng)[0] + 0.01 * t
    for knot, change in kinks:
        y = y + change * np.maximum(t - knot, 0.0)
    return t, y


def _rss(t, y, combo):
    design = np.column_stack([np.ones_like(t), t] + [np.maximum(t - c, 0.0) for c in combo])
    residual = y - design @ np.linalg.lstsq(design, y, rcond=None)[0]
    return float(residual @ residual)


def _every_set(t, knots, k, min_size):
    """All knot sets whose pieces hold at least ``min_size`` points: the brute-force reference."""
    for combo in itertools.combinations(knots, k):
        pieces = np.diff(np.concatenate([[0], np.searchsorted(t, combo, side="right"), [t.size]]))
        if np.all(pieces >= min_size):
            yield combo


@pytest.mark.parametrize(("seed", "phi", "kinks"), [(1, 0.5, ()), (2, 0.9, ()), (3, 0.3, ((20.0, 0.03),)),
                                                    (4, 0.0, ((12.0, -0.02), (27.0, 0.04)))])
def test_four_knots_equal_brute_force(seed, phi, kinks):
    # Reference: least squares (numpy.linalg.lstsq) on every admissible set of four knots.
    t, y = _series(seed, 40, phi, kinks)
    knots = np.arange(1.0, 40.0)
    search = ContinuousSearch(t, y, knots, 4, 5)
    for k in range(1, 5):
        rss, combo = min((_rss(t, y, c), tuple(float(x) for x in c)) for c in _every_set(t, knots, k, 5))
        assert search.best[k][1] == pytest.approx(rss, rel=1e-9)
        assert search.best[k][0] == combo


@pytest.mark.parametrize("seed", [5, 6])
def test_profile_below_a_ceiling_is_exact_and_leaves_out_only_what_lies_above(seed):
    t, y = _series(seed, 36, 0.6, ((18.0, 0.03),))
    knots = np.arange(1.0, 36.0)
    search = ContinuousSearch(t, y, knots, 3, 5)
    sets = {c: _rss(t, y, c) for c in _every_set(t, knots, 3, 5)}
    ceiling = search.best[3][1] * 1.15
    for which in range(3):
        times, rss = search.profile(search.best[3][0], which, ceiling)
        reference = {}
        for combo, value in sets.items():
            reference[combo[which]] = min(value, reference.get(combo[which], np.inf))
        assert times.size > 0
        for time, value in zip(times, rss):
            assert value == pytest.approx(reference[time], rel=1e-9)
        left_out = set(reference) - set(times.tolist())
        assert all(reference[time] > ceiling for time in left_out)


def test_chain_quadratics_give_the_least_squares_rss_of_a_knot_set():
    # Reference: numpy.linalg.lstsq on the hinge design; the chain reaches the same RSS piece by piece.
    t, y = _series(7, 60, 0.4, ((30.0, 0.02),))
    knots = np.array([14.0, 31.0, 45.0])
    bounds = np.searchsorted(t, knots, side="right")
    chain = KnotChain(t, y, knots, bounds)
    a, b, c = (x[0] for x in chain.opening())
    for first, second in ((0, 1), (1, 2)):
        a, b, c = extend(a, b, c, *chain.between(np.array(first), np.array(second)))
    closing_a, closing_b, closing_c = (x[2] for x in chain.closing())
    total = c + closing_c - (b + closing_b) ** 2 / (a + closing_a)
    assert total == pytest.approx(_rss(t, y, knots), rel=1e-10)


def test_envelope_pruning_keeps_every_quadratic_that_is_ever_lowest():
    # A seeded random check against a dense grid: whatever is the lowest of its group somewhere below
    # the ceiling must be kept (keeping more is allowed; dropping one of those is not).
    rng = np.random.default_rng(8)
    groups = np.repeat(np.arange(30), 40)
    a = rng.uniform(0.5, 5.0, groups.size)
    centre = rng.normal(0.0, 0.3, groups.size)
    c = a * centre ** 2 + rng.exponential(0.2, groups.size)
    b = a * centre
    ceiling = np.full(groups.size, 0.6)
    keep = envelope_members(groups, a, b, c, ceiling, 1e-12)
    v = np.linspace(-3.0, 3.0, 20001)
    for g in range(30):
        rows = np.flatnonzero(groups == g)
        values = a[rows, None] * v * v - 2.0 * b[rows, None] * v + c[rows, None]
        lowest = values.min(axis=0)
        winners = np.unique(rows[values.argmin(axis=0)[lowest <= 0.6]])
        assert keep[winners].all()
    assert keep.mean() < 0.5  # and it does prune


def test_segmentation_on_a_long_monthly_record_is_fast_enough_to_run_in_every_audit():
    # 150 years of monthly values, knots on whole years, 10-year pieces, up to 4 breaks: millions of
    # knot sets; the pruned search finds the same answer as the profile's own minimum.
    t = 1875 + (np.arange(1800) + 0.5) / 12
    rng = np.random.default_rng(9)
    y = simulate_noise(NoiseModel(kind="ar1", phi=0.6, sigma=0.1), t.size, 1, rng)[0]
    y = y + 0.005 * (t - t[0]) + 0.015 * np.maximum(t - 1975, 0.0)
    result = segment_continuous(t, y, max_breaks=4, points_per_year=12)
    assert 1965 <= result.breakpoints[0] <= 1985
    assert set(result.rss) == {0, 1, 2, 3, 4}
    assert all(result.rss[k + 1] <= result.rss[k] for k in range(4))


def test_very_long_records_are_searched_on_a_coarser_grid_of_knots():
    from app.stats.segment.continuous import MAX_KNOTS, candidate_step
    assert candidate_step(np.array([1850.5, 2024.5]), 1.0) == 1.0
    assert candidate_step(np.array([1477.0, 2024.9]), 1.0) == 2.0  # 548 years of daily values
    t = np.arange(0.5, 1000.0)
    y = 0.002 * t + 0.01 * np.maximum(t - 600.0, 0.0) + np.random.default_rng(10).normal(0.0, 0.1, t.size)
    result = segment_continuous(t, y, max_breaks=2)
    assert all(b % candidate_step(t, 1.0) == 0 for b in result.breakpoints)
    assert (t[-1] - t[0]) / candidate_step(t, 1.0) <= MAX_KNOTS
    assert any(abs(b - 600) <= 20 for b in result.breakpoints)
