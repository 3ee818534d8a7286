"""End-to-end audits of constructed series: each verdict code, reproducibility, and refusals."""

import numpy as np
import pytest

from app.audit import AuditOptions, Claim, audit_document, run_audit
from app.errors import ClaimError
from app.ingest.series import Series
from app.stats.noise import NoiseModel, simulate_noise

YEARS = np.arange(1885, 2025) + 0.5  # 140 annual points, mid-year


def annual(values, label="constructed") -> Series:
    return Series(time=YEARS[: len(values)].copy(), value=np.asarray(values, dtype=float), sampling="annual",
                  label=label, units="°C")


def red_noise(seed, phi=0.3, sigma=0.1, n=140):
    model = NoiseModel("ar1", phi=phi, sigma=sigma * np.sqrt(1 - phi * phi))
    return simulate_noise(model, n, 1, np.random.default_rng(seed))[0]


def audit(series, start, end, kind="pause", **options):
    options.setdefault("simulations", 400)
    options.setdefault("seed", 7)
    return run_audit(series, Claim(start, end, kind), AuditOptions(**options))


def test_a_steady_trend_with_a_long_window_is_consistent():
    # A "slowdown" over 40 years whose trend is a little below the long-term one, by noise alone.
    y = 0.015 * (YEARS - YEARS[0]) + red_noise(1)
    result = audit(annual(y), 1985.0, 2024.9, kind="slowdown")
    assert result.window.slope < result.long_term.chosen.slope
    assert result.verdict.code == "consistent_with_trend", result.verdict.summary


def test_a_few_years_is_too_short_to_tell():
    y = 0.015 * (YEARS - YEARS[0]) + red_noise(2)
    result = audit(annual(y), 2019.0, 2024.9)
    assert result.verdict.code == "too_short_to_tell"


def test_three_points_are_answered_and_two_are_refused():
    y = 0.015 * (YEARS - YEARS[0]) + red_noise(3)
    assert audit(annual(y), 2022.0, 2024.9).verdict.code == "too_short_to_tell"
    with pytest.raises(ClaimError, match="at least 3"):
        audit(annual(y), 2023.0, 2024.9)


def test_a_trend_that_stopped_is_supported():
    trend = np.where(YEARS < 1985, 0.02 * (YEARS - YEARS[0]), 0.02 * (1985 - YEARS[0]))
    result = audit(annual(trend + red_noise(4)), 1985.0, 2024.9)
    assert result.verdict.code == "trend_change_supported", result.verdict.summary
    assert result.change.p_value_adjusted < 0.05


def test_a_pause_claim_during_clear_warming_is_contradicted():
    y = 0.03 * (YEARS - YEARS[0]) + red_noise(5, sigma=0.05)
    result = audit(annual(y), 1995.0, 2024.9)
    assert result.verdict.code == "claim_contradicted"


def test_pure_noise_has_no_long_term_trend():
    result = audit(annual(red_noise(6, phi=0.2)), 2000.0, 2014.9)
    assert result.verdict.code == "no_long_term_trend"


def test_a_real_acceleration_is_supported():
    trend = 0.01 * (YEARS - YEARS[0]) + np.where(YEARS > 1975, 0.025 * (YEARS - 1975), 0.0)
    result = audit(annual(trend + red_noise(7)), 1975.0, 2024.9, kind="acceleration")
    assert result.verdict.code == "trend_change_supported", result.verdict.summary


def test_a_recovery_in_a_falling_record_is_tested_as_a_rise_in_slope():
    # A shrinking ice record whose decline turned into a recovery: the claim direction follows the trend's sign.
    trend = np.where(YEARS < 1990, -0.03 * (YEARS - YEARS[0]), -0.03 * (1990 - YEARS[0]) + 0.02 * (YEARS - 1990))
    result = audit(annual(trend + red_noise(8)), 1990.0, 2024.9, kind="reversal")
    assert result.change.direction == "increase"
    assert result.verdict.code == "trend_change_supported", result.verdict.summary


def test_same_input_and_seed_give_the_same_numbers():
    y = 0.015 * (YEARS - YEARS[0]) + red_noise(9)
    first = audit_document(audit(annual(y), 1998.0, 2012.9, seed=123))
    second = audit_document(audit(annual(y), 1998.0, 2012.9, seed=123))
    assert first == second
    other = audit_document(audit(annual(y), 1998.0, 2012.9, seed=124))
    assert other["spell"]["probability"] != first["spell"]["probability"] or \
        other["trend_change"]["p_value_adjusted"] != first["trend_change"]["p_value_adjusted"]


def test_an_audit_without_a_seed_draws_and_records_one():
    y = 0.015 * (YEARS - YEARS[0]) + red_noise(10)
    result = audit(annual(y), 1998.0, 2012.9, seed=None)
    assert isinstance(result.seed, int) and result.options.seed == result.seed
    again = audit(annual(y), 1998.0, 2012.9, seed=result.seed)
    assert audit_document(again) == audit_document(result)


def test_a_window_outside_the_data_is_refused():
    y = 0.015 * (YEARS - YEARS[0]) + red_noise(11)
    with pytest.raises(ClaimError, match="outside the data"):
        audit(annual(y), 2030.0, 2040.0)


def test_the_document_has_every_field_the_api_promises():
    y = 0.015 * (YEARS - YEARS[0]) + red_noise(12)
    doc = audit_document(audit(annual(y), 1998.0, 2012.9))
    for path in ("verdict.code", "verdict.headline", "verdict.summary", "reference.start", "reference.end",
                 "long_term.slope", "long_term.ci", "long_term.p_value", "window.start", "window.end", "window.slope",
                 "window.ci", "window.p_value_vs_zero", "window.p_value_vs_long_term", "trend_change.p_value_nominal",
                 "trend_change.p_value_adjusted", "spell.probability", "segments.breakpoints",
                 "detectability.years_to_detect", "inputs.sha256", "inputs.n", "software_version", "seed"):
        node = doc
        for key in path.split("."):
            assert key in node, path
            node = node[key]


def test_covariates_are_taken_out_and_the_adjusted_series_audited():
    from app.stats.adjust import Covariate

    rng = np.random.default_rng(13)
    index = rng.standard_normal(YEARS.size)  # an invented oscillation index, lag 0
    y = 0.015 * (YEARS - YEARS[0]) + 0.2 * index + red_noise(14, sigma=0.05)
    result = run_audit(annual(y), Claim(1998.0, 2012.9, "pause"), AuditOptions(simulations=300, seed=3),
                       covariates=[Covariate("index", YEARS.copy(), index, max_lag=2)])
    doc = audit_document(result)
    factor = doc["adjustment"]["factors"][0]
    assert factor["lag"] == 0 and factor["ci"][0] < 0.2 < factor["ci"][1]
    assert doc["adjustment"]["residual_sd_adjusted"] < doc["adjustment"]["residual_sd_raw"]
    assert doc["adjustment"]["audit"]["verdict"]["code"] in {"consistent_with_trend", "too_short_to_tell",
                                                              "claim_contradicted"}
    assert doc["adjustment"]["audit"]["adjustment"] is None


def test_a_pause_that_ended_is_compared_with_the_trend_before_it():
    """Flat for 30 years, then faster: the window's end enters the test, so what came after cannot hide it."""
    years = np.arange(1880, 2021) + 0.5
    trend = np.where(years < 1945, 0.01 * (years - 1880), 0.65)
    trend = np.where(years > 1975, 0.65 + 0.018 * (years - 1975), trend)
    noise = simulate_noise(NoiseModel("ar1", phi=0.3, sigma=0.05), years.size, 1, np.random.default_rng(21))[0]
    series = Series(time=years, value=trend + noise, sampling="annual", units="°C")
    result = run_audit(series, Claim(1945.0, 1975.9, "pause"), AuditOptions(simulations=400, seed=2))
    assert result.change.model == "three_segment"
    assert result.verdict.code == "trend_change_supported", result.verdict.summary


def test_a_step_with_no_change_of_slope_is_a_level_shift():
    y = 0.015 * (YEARS - YEARS[0]) + np.where(YEARS > 1990, 0.6, 0.0) + red_noise(22, phi=0.2, sigma=0.08)
    result = audit(annual(y), 1991.0, 2010.9, kind="acceleration")
    assert result.verdict.code == "level_shift", result.verdict.summary
    assert 1988 <= result.change.step.time <= 1993


def test_a_stop_claimed_as_a_reversal_is_a_different_change():
    """It stopped, it did not reverse: the change is shown, the claimed kind is not."""
    trend = np.where(YEARS < 1995, 0.03 * (YEARS - YEARS[0]), 0.03 * (1995 - YEARS[0]))
    result = audit(annual(trend + red_noise(23, sigma=0.1)), 1995.0, 2024.9, kind="reversal")
    assert result.verdict.code == "change_differs_from_claim", result.verdict.summary
    assert "stopped" in result.verdict.headline


def test_a_three_point_window_at_the_end_of_a_monthly_record_is_answered():
    months = 1990 + (np.arange(360) + 0.5) / 12
    y = 0.002 * (months - 1990) * 12 / 12 + red_noise(24, n=360)
    series = Series(time=months, value=y, sampling="monthly", units="°C")
    result = run_audit(series, Claim(2019.75, 2020.0, "pause"), AuditOptions(simulations=200, seed=1))
    assert result.window.n == 3 and result.verdict.code in {"too_short_to_tell", "consistent_with_trend",
                                                            "no_long_term_trend"}
    assert np.isfinite(result.window.ci[0]) and np.isfinite(result.window.ci[1])
