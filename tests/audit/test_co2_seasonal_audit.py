"""A real monthly record with a strong seasonal cycle, audited with the service's default settings.

Data: the Mauna Loa CO2 record as shipped in statsmodels (``statsmodels.datasets.co2``: weekly means, March 1958
to December 2001, from the Scripps CO2 program, C. D. Keeling et al.), averaged here into monthly means.
"""

from __future__ import annotations

import re

import pytest

from app.service.audits import audit_options, compute_document, job_from_file
from app.service.claims import ClaimInput
from app.settings import Settings

sm = pytest.importorskip("statsmodels.api")

# NOAA's decadal mean growth rate of CO2 at Mauna Loa for the 1990s, about 1.5 ppm per year (from memory).
NINETIES_GROWTH = 1.5
RATE = re.compile(r"([+\-−]?\d+(?:\.\d+)?) per decade")


def co2_monthly_csv() -> str:
    weekly = sm.datasets.co2.load_pandas().data["co2"]
    monthly = weekly.resample("MS").mean()
    return "month,co2\n" + "".join(f"{t:%Y-%m},{'' if v != v else round(float(v), 3)}\n" for t, v in monthly.items())


def audit(seasonal: str | None = None) -> dict:
    settings = Settings(database_url="sqlite://")
    job = job_from_file(co2_monthly_csv(), claim=ClaimInput(kind="slowdown", start="1990-01", end="1999-12"),
                        options=audit_options({"seed": 1990}, settings), settings=settings, filename="co2.csv",
                        seasonal=seasonal)
    return compute_document(job)


def test_the_seasonal_cycle_is_found_and_taken_out_by_default_and_the_nineties_rate_is_right():
    document = audit()
    seasonal = document["inputs"]["seasonal"]
    assert seasonal["choice"] == "auto" and seasonal["present"] and seasonal["removed"]
    # Mauna Loa's seasonal swing is about 6 ppm peak to peak (from memory).
    assert 4.0 < seasonal["amplitude"] < 8.0
    assert document["window"]["slope"] == pytest.approx(NINETIES_GROWTH, abs=0.15)


def test_what_would_change_the_verdict_stays_within_a_factor_of_three_of_the_windows_range():
    document = audit()
    low, high = (10 * value for value in document["window"]["ci"])  # per decade, as the sentences say
    figures = [float(number.replace("−", "-")) for line in document["verdict"]["what_would_change"]
               for number in RATE.findall(line)]
    assert figures, document["verdict"]["what_would_change"]
    for figure in figures:
        assert low / 3 <= figure <= 3 * high, (figure, low, high)  # our requirement


def test_kept_the_cycle_counts_as_noise():
    kept, removed = audit("keep"), audit()
    assert kept["inputs"]["seasonal"]["present"] and not kept["inputs"]["seasonal"]["removed"]
    assert kept["noise"]["marginal_sd"] > 2 * removed["noise"]["marginal_sd"]
