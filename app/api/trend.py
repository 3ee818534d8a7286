"""POST /api/v1/trend: one series' trend with its uncertainty under every noise model, side by side;
with covariates, also the trend once known factors are taken out (the fit alone, no audit)."""

from __future__ import annotations

from dataclasses import replace
from typing import Any

from fastapi import APIRouter, Depends, Request

from app.api.covariates import check_lag_cells, covariates_from_json
from app.api.deps import get_runtime
from app.api.runtime import Runtime
from app.api.schemas import TrendOut, TrendRequest
from app.audit.serialize import jsonable
from app.errors import ClaimError, Location
from app.ingest import IngestOptions, series_from_json
from app.ingest.series import Series
from app.ingest.validate import check_enough_values, check_window_in_series
from app.settings import Settings
from app.stats.adjust import AdjustmentResult, fit_covariates
from app.stats.noise import NOISE_KINDS
from app.stats.trend import summarise_trend

ADJUSTMENT_FALLBACK_NOISE = "ar1"  # the covariate fit's ranges need a noise kind, not a trend method

router = APIRouter(prefix="/api/v1", tags=["trend"])


def _window(series: Series, start: float | None, end: float | None) -> Series:
    if start is None and end is None:
        return series
    start = series.start if start is None else start
    end = series.end if end is None else end
    try:
        check_window_in_series(series, start, end, field_prefix="window")
    except ClaimError as error:
        # The trend body names the window's edges at the top level: "start", "end".
        error.location = replace(error.location, field=(error.location.field or "").removeprefix("window."))
        raise
    window = series.window(start, end)
    check_enough_values(window.n, 0, Location(field="start"), after=f" between {start:g} and {end:g}")
    return window


def _adjustment(fit: AdjustmentResult, noise: str) -> dict[str, Any]:
    return {"factors": [{"name": f.name, "coefficient": f.coefficient, "ci": list(f.ci), "stderr": f.stderr,
                         "p_value": f.p_value, "lag": f.lag, "lag_years": f.lag_years,
                         "variance_share": f.variance_share} for f in fit.factors],
            "residual_sd_raw": fit.residual_sd_raw, "residual_sd_adjusted": fit.residual_sd_adjusted,
            "trend_slope": fit.trend_slope, "trend_ci": list(fit.trend_ci), "trend_p_value": fit.trend_p_value,
            "n_used": fit.n_used, "dropped_times": list(fit.dropped_times), "lag_rule": fit.lag_rule, "noise": noise}


def compute_trend(body: TrendRequest, settings: Settings) -> dict[str, Any]:
    reading = IngestOptions(max_points=settings.max_points)
    series = series_from_json(body.series.model_dump(exclude_none=True), reading, field="series")
    covariates = covariates_from_json([c.model_dump() for c in body.covariates], reading)
    window = _window(series, body.start, body.end)
    adjustment = None
    if covariates:
        check_lag_cells(window, covariates, [f"covariates[{i}].max_lag" for i in range(len(covariates))])
        noise = body.noise if body.noise in NOISE_KINDS else ADJUSTMENT_FALLBACK_NOISE
        fit = fit_covariates(window.time, window.value, [c.covariate for c in covariates], window.points_per_year,
                             noise_kind=noise, confidence=body.confidence, lag_rule=body.lag_rule)
        adjustment = _adjustment(fit, noise)
    summary = summarise_trend(window.time, window.value, method=body.noise, confidence=body.confidence,
                              points_per_year=window.points_per_year)
    chosen = summary.chosen
    white = next(m for m in summary.methods if m.method == "white")
    return jsonable({
        "slope": chosen.slope, "ci": list(chosen.ci), "ci_white": list(white.ci), "stderr": chosen.stderr,
        "n": chosen.n, "n_effective": chosen.n_effective, "p_value": chosen.p_value,
        "confidence": body.confidence, "noise": chosen.method, "years_to_detect": summary.years_to_detect,
        "start": window.start, "end": window.end, "units": "per year",
        "methods": [{"name": m.method, "slope": m.slope, "stderr": m.stderr, "ci": list(m.ci),
                     "p_value": m.p_value, "n_effective": m.n_effective} for m in summary.methods],
        "mann_kendall": {"p_value": summary.mann_kendall.p_value, "z": summary.mann_kendall.z,
                         "tau": summary.mann_kendall.tau, "trend": summary.mann_kendall.trend,
                         "sen_slope": summary.sen.slope, "sen_ci": list(summary.sen.ci)},
        "adjustment": adjustment,
    })


@router.post("/trend", response_model=TrendOut, summary="The trend of a series, under several noise models",
             responses={422: {"description": "The series or window cannot be used; 'where' says which"},
                        503: {"description": "Compute pool full: retry after the Retry-After seconds"}})
async def trend(body: TrendRequest, request: Request, runtime: Runtime = Depends(get_runtime)) -> dict[str, Any]:
    """Slopes are per year. `ci` and `p_value` follow the chosen `noise` model (AR(1) by default);
    `ci_white` is the naive white-noise range, for comparison. With `covariates`, `adjustment` holds the
    fit of trend plus lagged factors over the same window (each factor's coefficient, range, lag and share
    of the variance; the trend with the factors in the model)."""
    return await runtime.pool.run(compute_trend, body, runtime.settings)
