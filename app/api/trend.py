"""POST /api/v1/trend: one series' trend with its uncertainty under every noise model, side by side;
with covariates, also the trend once known factors are taken out (the fit alone, no audit)."""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Depends, Request
from fastapi.concurrency import run_in_threadpool

from app.api.deps import require_api_key
from app.api.schemas import TrendOut, TrendRequest
from app.dependencies import get_runtime
from app.service.runtime import Runtime
from app.service.trend import compute_trend, prepare_trend

router = APIRouter(prefix="/api/v1", tags=["trend"])


@router.post("/trend", response_model=TrendOut, summary="The trend of a series, under several noise models",
             dependencies=[Depends(require_api_key)],
             responses={401: {"description": "Keys are set and none was sent"},
                        403: {"description": "The key is not one this service accepts"},
                        422: {"description": "The series or window cannot be used; 'where' says which"},
                        503: {"description": "Compute pool full: retry after the Retry-After seconds"}})
async def trend(body: TrendRequest, request: Request, runtime: Runtime = Depends(get_runtime)) -> dict[str, Any]:
    """Slopes are per year. `ci` and `p_value` follow the chosen `noise` model (AR(1) by default);
    `ci_white` is the naive white-noise range, for comparison. With `covariates`, `adjustment` holds the
    fit of trend plus lagged factors over the same window (each factor's coefficient, range, lag and share
    of the variance; the trend with the factors in the model)."""
    job = await run_in_threadpool(prepare_trend, body, runtime.settings)
    return await runtime.pool.run(compute_trend, job)
