"""Calibration and power of the audit's verdict, by simulation.

Under a constant trend with AR(1) noise, a claimant who picks the flattest 12-year window of
the record (the cherry-picked "pause") should get ``trend_change_supported`` no more often than
the test's level allows. The naive check a spreadsheet user would make (the window's OLS slope
against the long-term slope, white-noise errors) is reported beside it to show why the audit exists.
"""

from __future__ import annotations

from concurrent.futures import ProcessPoolExecutor

import numpy as np
import pytest

from app.audit import AuditOptions, Claim, run_audit
from app.ingest.series import Series
from app.stats.noise import NoiseModel, simulate_noise
from app.stats.trend import compare_slopes, slope_uncertainty
from app.stats.windows import window_slopes

pytestmark = pytest.mark.slow

N_SERIES = 300
SIMULATIONS = 300  # per audit; the verdict's adjusted p-value needs only its 5% quantile
WINDOW_YEARS = 12


def _one(args):
    """Audit one simulated record's flattest window; returns (verdict code, nominal reject, naive reject)."""
    t, y, ppy, index = args
    length = WINDOW_YEARS * ppy
    slopes = window_slopes(t, y, length)
    earliest = int(0.15 * t.size)  # a claimant's window leaves some record before it
    k = earliest + int(np.argmin(slopes[earliest:]))
    tw, yw = t[k:k + length], y[k:k + length]
    sampling = "annual" if ppy == 1 else "monthly"
    result = run_audit(Series(t, y, sampling), Claim(tw[0] - 0.01, tw[-1] + 0.01, "pause"),
                       AuditOptions(simulations=SIMULATIONS, seed=index))
    naive = compare_slopes(slope_uncertainty(tw, yw, "white"), slope_uncertainty(t, y, "white"))
    return result.verdict.code, result.change.p_value_nominal < 0.05, naive.p_value < 0.05


def _rates(n: int, ppy: int, seed: int, trend, change_at=None):
    t = 1900.0 + (np.arange(n) + 0.5) / ppy
    phi = 0.5
    noise = NoiseModel("ar1", phi=phi, sigma=0.1 * np.sqrt(1 - phi * phi))
    y = trend(t) + simulate_noise(noise, n, N_SERIES, np.random.default_rng(seed))
    with ProcessPoolExecutor(max_workers=2) as pool:
        rows = list(pool.map(_one, [(t, y[i], ppy, i) for i in range(N_SERIES)], chunksize=10))
    codes = np.array([r[0] for r in rows])
    return {"supported": float(np.mean(codes == "trend_change_supported")),
            "nominal": float(np.mean([r[1] for r in rows])), "naive": float(np.mean([r[2] for r in rows])),
            "codes": {c: int((codes == c).sum()) for c in set(codes)}}


@pytest.mark.parametrize("n, ppy", [(140, 1), (480, 12)])
def test_cherry_picked_pauses_rarely_pass_as_trend_changes(n, ppy):
    rates = _rates(n, ppy, seed=n, trend=lambda t: 0.015 * (t - t[0]))
    print(f"\nn={n}: verdict trend_change_supported {rates['supported']:.3f}, nominal test at the claimed date "
          f"{rates['nominal']:.3f}, naive white-noise test {rates['naive']:.3f}; codes {rates['codes']}")
    assert rates["supported"] <= 0.07  # our requirement at alpha = 0.05
    assert rates["naive"] >= 3 * max(rates["supported"], 0.02)  # the spreadsheet check is fooled far more often


def _power_one(args):
    t, y, index, change_time = args
    result = run_audit(Series(t, y, "annual"), Claim(change_time, float(t[-1]), "pause"),
                       AuditOptions(simulations=SIMULATIONS, seed=index))
    return result.verdict.code


def test_a_trend_that_really_flattened_is_found():
    # 140 annual points rising 0.15 per decade, flat for the last 30% (42 years); AR(1) noise, phi 0.5,
    # marginal sd 0.1: the slope change (0.015 per year) is the effect, stated as our requirement says.
    n, phi, reps = 140, 0.5, 150
    t = 1885.0 + np.arange(n) + 0.5
    change_time = float(t[int(0.7 * n)]) - 0.5
    trend = np.where(t < change_time, 0.015 * (t - t[0]), 0.015 * (change_time - t[0]))
    noise = NoiseModel("ar1", phi=phi, sigma=0.1 * np.sqrt(1 - phi * phi))
    y = trend + simulate_noise(noise, n, reps, np.random.default_rng(2024))
    with ProcessPoolExecutor(max_workers=2) as pool:
        codes = np.array(list(pool.map(_power_one, [(t, y[i], i, change_time) for i in range(reps)], chunksize=10)))
    power = float(np.mean(codes == "trend_change_supported"))
    print(f"\npower against a flattening of 0.15 per decade over the last 30%: {power:.3f}")
    assert power >= 0.80
