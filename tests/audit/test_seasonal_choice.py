"""The seasonal choice every door shares: auto takes a cycle out only when the test finds one, remove always,
keep never; what was done is recorded with the sentence the report shows. Invented series, fixed seeds."""

from __future__ import annotations

import numpy as np
import pytest

from app.errors import ClaimError
from app.ingest import IngestOptions, series_from_arrays
from app.service.sources import climatology_period, with_seasonal_choice


def quarterly(seed: int, cycle: float, years: int = 30):
    rng = np.random.default_rng(seed)
    quarters = np.arange(4 * years)
    values = 0.01 * quarters + 0.2 * rng.standard_normal(quarters.size) + cycle * np.cos(np.pi * quarters / 2)
    times = [f"{1990 + q // 4}-Q{q % 4 + 1}" for q in quarters]
    return series_from_arrays(times, [round(float(v), 5) for v in values], IngestOptions(), field="series")


@pytest.mark.parametrize("choice, cycle, removed", [("auto", 1.0, True), ("auto", 0.0, False),
                                                    ("remove", 0.0, True), ("keep", 1.0, False)])
def test_each_choice_on_a_quarterly_series(choice, cycle, removed):
    series = quarterly(11, cycle)
    result, record = with_seasonal_choice(series, choice, climatology_period(series, None, None))
    assert record["tested"] and record["removed"] is removed and record["present"] is (cycle > 0)
    assert record["sentence"]
    quarter_means = [result.value[q::4].mean() for q in range(4)]
    spread = max(quarter_means) - min(quarter_means)
    assert (spread < 0.3) if removed else (spread > 1.0 or cycle == 0)


def test_an_annual_series_is_left_alone_and_remove_is_refused():
    series = series_from_arrays(list(range(1950, 2000)), [0.01 * i for i in range(50)], IngestOptions(),
                                field="series")
    same, record = with_seasonal_choice(series, "auto", (1950.0, 2000.0))
    assert same is series and not record["tested"] and record["sentence"] == ""
    with pytest.raises(ClaimError, match="monthly or quarterly"):
        with_seasonal_choice(series, "remove", (1950.0, 2000.0))
    with pytest.raises(ClaimError, match="not a way to treat"):
        with_seasonal_choice(series, "sometimes", (1950.0, 2000.0))



def test_an_invented_ridership_series_gives_sane_what_would_change_figures_by_default():
    # Invented monthly ridership (thousands): a slow rise, a summer peak ten times the noise, AR(1) noise.
    from app.service.audits import audit_options, compute_document, job_from_file
    from app.service.claims import ClaimInput
    from app.settings import Settings

    rng = np.random.default_rng(2026)
    months = np.arange(12 * 25)
    noise = np.zeros(months.size)
    shocks = 20 * rng.standard_normal(months.size)
    for i in range(1, months.size):
        noise[i] = 0.5 * noise[i - 1] + shocks[i]
    riders = 5000 + 2.0 * months + 600 * np.cos(2 * np.pi * (months % 12 - 6) / 12) + noise
    text = "month,riders\n" + "".join(f"{2000 + m // 12}-{m % 12 + 1:02d},{r:.1f}\n" for m, r in zip(months, riders))
    settings = Settings(database_url="sqlite://")
    job = job_from_file(text, claim=ClaimInput(kind="slowdown", start="2016-01", end="2019-12"),
                        options=audit_options({"seed": 4}, settings), settings=settings)
    document = compute_document(job)
    assert document["inputs"]["seasonal"]["removed"]
    low, high = document["window"]["ci"]
    slopes = [v for row in document["cherry_pick"]["slopes"] for v in row if v is not None]
    reach = 3 * max(abs(low), abs(high))  # our requirement: within a factor of 3 of the window's own range
    assert -reach <= min(slopes) and max(slopes) <= reach


def test_a_reference_period_missing_a_season_is_refused_naming_the_choice():
    series = quarterly(11, 1.0)
    with pytest.raises(ClaimError, match="cannot be taken out") as caught:
        with_seasonal_choice(series, "remove", (2030.0, 2031.0), field="options.seasonal")
    assert caught.value.location.field == "options.seasonal"
