"""``run_correlation``: from a driver and a response Series to a ``CorrelationResult``.

The response's times are the grid: the driver is matched to them within a quarter of a step, so both
must share a sampling. The transform is applied to the driver's whole record before matching (a running
total starts at the driver's first value, not at the first shared time).
"""

from __future__ import annotations

import dataclasses
import math
import time as _time

import numpy as np

from app import __version__
from app.audit.run import draw_seed
from app.correlation.options import DEFAULT_MAX_SIMULATIONS, CorrelationOptions, check_correlation_options
from app.correlation.result import CorrelationResult
from app.correlation.wording import decide, slope_phrase, warnings_for
from app.errors import Location, SeriesContentError
from app.ingest.series import SAMPLING_STEP, Series
from app.stats.adjust import MATCH_TOLERANCE_STEPS, match_times
from app.stats.correlate import (check_window, correlation_null, correlation_set, regress_on_driver,
                                 rolling_correlations, transform_driver)

MIN_SHARED_POINTS = 10


def _check_sampling(driver: Series, response: Series) -> None:
    if driver.sampling in SAMPLING_STEP and response.sampling in SAMPLING_STEP and driver.sampling != response.sampling:
        raise SeriesContentError(f"the driver is {driver.sampling} but the response is {response.sampling}",
                                 location=Location(field="driver.time"),
                                 fix="Give both series on the same time step (for example both as annual means)")


def _shared(driver: Series, response: Series, transformed: np.ndarray):
    idx = match_times(response.time, driver.time, MATCH_TOLERANCE_STEPS * response.step)
    shared = idx >= 0
    if int(shared.sum()) < MIN_SHARED_POINTS:
        raise SeriesContentError(
            f"the driver ({driver.start:.4g} to {driver.end:.4g}) and the response ({response.start:.4g} to "
            f"{response.end:.4g}) share {int(shared.sum())} times; at least {MIN_SHARED_POINTS} are needed",
            location=Location(field="driver.time"), fix="Give series that overlap in time, on the same time step")
    rows = idx[shared]
    return response.time[shared], driver.value[rows], transformed[rows], response.value[shared]


def run_correlation(driver: Series, response: Series, options: CorrelationOptions = CorrelationOptions(),
                    max_simulations: int = DEFAULT_MAX_SIMULATIONS) -> CorrelationResult:
    check_correlation_options(options, max_simulations)
    started = _time.perf_counter()
    seed = options.seed if options.seed is not None else draw_seed()
    options = dataclasses.replace(options, seed=seed)
    _check_sampling(driver, response)
    transformed_all = transform_driver(driver.time, driver.value, options.transform, driver.step)
    t, x_raw, x, y = _shared(driver, response, transformed_all)
    window = int(round(options.window_years * response.points_per_year))
    check_window(window, t.size)

    regression = regress_on_driver(x, y, options.confidence, options.noise)
    sign = 1 if regression.slope >= 0 else -1
    correlations = correlation_set(t, x, y, response.step, options.confidence)
    rolling = rolling_correlations(t, x, y, window, sign)
    null = correlation_null(x, regression.fitted, regression.noise, rolling, options.simulations,
                            np.random.default_rng(np.random.SeedSequence(seed)))
    per_doubling = None
    if options.transform == "log":
        ln2 = math.log(2.0)
        per_doubling = (regression.slope * ln2, (regression.ci[0] * ln2, regression.ci[1] * ln2))

    driver_name = driver.label or "the driver"
    response_name = response.label or "the response"
    relationship = slope_phrase(regression, per_doubling, options.transform, driver_name, response.units, driver.units)
    verdict = decide(regression, rolling, null, alpha=1.0 - options.confidence, window_years=options.window_years,
                     start=int(math.floor(t[0])), end=int(math.floor(t[-1])), driver=driver_name, response=response_name,
                     relationship=relationship)
    warnings = warnings_for(correlations, regression, n_shared=int(t.size), n_response=response.n, driver=driver_name,
                            response=response_name)
    return CorrelationResult(
        driver=driver, response=response, options=options, seed=seed, software_version=__version__, time=t,
        driver_values=x_raw, driver_transformed=x, response_values=y, window_points=window, regression=regression,
        per_doubling=per_doubling, correlations=correlations, rolling=rolling, null=null, warnings=warnings,
        verdict=verdict, elapsed_seconds=_time.perf_counter() - started)
