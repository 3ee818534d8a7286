"""POST /api/v1/trend: one series' trend with its uncertainty under every noise model, side by side."""

from __future__ import annotations

from dataclasses import replace
from typing import Any

from fastapi import APIRouter, Depends, Request

from app.api.deps import get_runtime
from app.api.runtime import Runtime
from app.api.schemas import TrendOut, TrendRequest
from app.audit.serialize import jsonable
from app.errors import ClaimError, Location
from app.ingest import IngestOptions, series_from_json
from app.ingest.series import Series
from app.ingest.validate import check_enough_values, check_window_in_series
from app.settings import Settings
from app.stats.trend import summarise_trend

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


def compute_trend(body: TrendRequest, settings: Settings) -> dict[str, Any]:
    series = series_from_json(body.series.model_dump(exclude_none=True), IngestOptions(max_points=settings.max_points),
                              field="series")
    window = _window(series, body.start, body.end)
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
    })


@router.post("/trend", response_model=TrendOut, summary="The trend of a series, under several noise models",
             responses={422: {"description": "The series or window cannot be used; 'where' says which"},
                        503: {"description": "Compute pool full: retry after the Retry-After seconds"}})
async def trend(body: TrendRequest, request: Request, runtime: Runtime = Depends(get_runtime)) -> dict[str, Any]:
    """Slopes are per year. `ci` and `p_value` follow the chosen `noise` model (AR(1) by default);
    `ci_white` is the naive white-noise range, for comparison."""
    return await runtime.pool.run(compute_trend, body, runtime.settings)
