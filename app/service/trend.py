"""One series' trend with its uncertainty under every noise model, side by side; with covariates, also the
trend once known factors are taken out (the fit alone, no audit). Written by the shared serialiser."""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

from app.audit.claim import Claim
from app.audit.serialize import trend_document
from app.errors import ClaimError, Location
from app.ingest import IngestOptions, series_from_json
from app.ingest.series import Series
from app.ingest.validate import check_enough_values, check_window_in_series
from app.ingest.window_edges import in_window
from app.service.claims import ClaimInput, Edge, edge_instant, window_echo, window_series
from app.service.covariates import CovariateSeries, check_lag_cells, covariates_from_json
from app.settings import Settings
from app.stats.adjust import fit_covariates
from app.stats.noise import NOISE_KINDS, NoiseModel
from app.stats.noise_fit import select_noise_model
from app.stats.ols import fit_trend
from app.stats.trend import summarise_trend

_OPEN_EDGE = 1e-6  # an open end lies just past the last point even when the series has no step
ADJUSTMENT_FALLBACK_NOISE = "ar1"  # the covariate fit's ranges need a noise kind, not a trend method


def trend_window(series: Series, start: Edge | None, end: Edge | None) -> tuple[Series, dict[str, Any] | None]:
    """The points the window holds, its edges meaning what they mean in an audit's claim; and the window as
    given and as resolved (None for the whole record). An edge left out is the record's own first or last period."""
    if start is None and end is None:
        return series, None
    open_end = float(series.end) + max(series.step / 2.0, _OPEN_EDGE)
    resolved = Claim(start=edge_instant(start, "start", "start") if start is not None else float(series.start),
                     end=edge_instant(end, "end", "end") if end is not None else open_end)
    try:
        check_window_in_series(series, resolved.start, resolved.end, field_prefix="window")
    except ClaimError as error:
        # The trend body names the window's edges at the top level: "start", "end".
        error.location = replace(error.location, field=(error.location.field or "").removeprefix("window."))
        raise
    window = window_series(series, in_window(series.time, resolved.start, resolved.end))
    check_enough_values(window.n, 0, Location(field="start"),
                        after=f" between {resolved.start:g} and {resolved.end:g}")
    return window, window_echo(ClaimInput(kind=resolved.kind, start=start, end=end), resolved, series)


def _fitted_noise(window: Series, method: str) -> NoiseModel:
    """The noise the audit would use on a record with no change of trend: every kind fitted by restricted
    likelihood to the line's residuals; the method's own kind, or AR(1) behind the GLS and HAC methods."""
    residuals = fit_trend(window.time, window.value).residuals
    return select_noise_model(residuals).model_of(method if method in NOISE_KINDS else "ar1")


@dataclass(frozen=True)
class TrendJob:
    """A trend request read and checked: the window (and its echo), its covariates and what to fit."""

    window: Series
    echo: dict[str, Any] | None
    covariates: tuple[CovariateSeries, ...]
    noise: str
    confidence: float
    lag_rule: str


def prepare_trend(body: Any, settings: Settings) -> TrendJob:
    """Reads and checks the request (``body``: validated against the API's ``TrendRequest`` schema), the lag
    search's work budget included, before the job takes a compute slot: a refused request never holds one."""
    reading = IngestOptions(max_points=settings.max_points)
    series = series_from_json(body.series.model_dump(exclude_none=True), reading, field="series")
    covariates = covariates_from_json([c.model_dump() for c in body.covariates], reading)
    window, echo = trend_window(series, body.start, body.end)
    if covariates:
        check_lag_cells(window, covariates, [f"covariates[{i}].max_lag" for i in range(len(covariates))],
                        work_limit=settings.lag_search_budget, lag_rule=body.lag_rule)
    return TrendJob(window=window, echo=echo, covariates=covariates, noise=body.noise, confidence=body.confidence,
                    lag_rule=body.lag_rule)


def compute_trend(job: TrendJob) -> dict[str, Any]:
    """CPU-bound: runs in the pool."""
    window, fit, noise = job.window, None, None
    if job.covariates:
        noise = job.noise if job.noise in NOISE_KINDS else ADJUSTMENT_FALLBACK_NOISE
        fit = fit_covariates(window.time, window.value, [c.covariate for c in job.covariates],
                             window.points_per_year, noise_kind=noise, confidence=job.confidence,
                             lag_rule=job.lag_rule)
    summary = summarise_trend(window.time, window.value, method=job.noise, confidence=job.confidence,
                              noise=_fitted_noise(window, job.noise), points_per_year=window.points_per_year)
    return {**trend_document(summary, start=window.start, end=window.end, confidence=job.confidence,
                             adjustment=fit, adjustment_noise=noise), "window": job.echo}
