"""One serialiser: the CorrelationResult as a JSON-ready document (the API's answer, the store's record,
the report's source), as ``app.audit.serialize`` does for the pause audit."""

from __future__ import annotations

import dataclasses
from typing import Any

import numpy as np

from app.audit.serialize import jsonable
from app.correlation.result import CorrelationResult
from app.ingest.series import Series
from app.stats.correlate import NULL_BAND, WEAK_R

DOCUMENT_SCHEMA = "trendaudit.correlation/1"
SHARE_BINS = 20  # the share of weak windows lies in [0, 1]: fixed bins keep histograms comparable


def _series_inputs(series: Series) -> dict[str, Any]:
    return {"sha256": series.sha256(), "n": series.n, "start": series.start, "end": series.end,
            "sampling": series.sampling, "label": series.label, "units": series.units,
            "missing": len(series.missing_times), "notes": list(series.notes)}


def correlation_document(result: CorrelationResult) -> dict[str, Any]:
    r = result
    reg, cs, roll, null = r.regression, r.correlations, r.rolling, r.null
    counts, edges = np.histogram(null.share_samples[np.isfinite(null.share_samples)], bins=SHARE_BINS, range=(0.0, 1.0))
    doc = {
        "schema": DOCUMENT_SCHEMA,
        "software_version": r.software_version,
        "seed": r.seed,
        "inputs": {"driver": _series_inputs(r.driver), "response": _series_inputs(r.response), "n": int(r.time.size),
                   "start": float(r.time[0]), "end": float(r.time[-1])},
        "options": dataclasses.asdict(r.options),
        "window_years": r.options.window_years,
        "transform": r.options.transform,
        "verdict": {"code": r.verdict.code, "headline": r.verdict.headline, "summary": r.verdict.summary,
                    "reasons": list(r.verdict.reasons)},
        "warnings": list(r.warnings),
        "r_levels": cs.levels,
        "r_detrended": cs.detrended,
        "r_differences": cs.differences,
        "n_differences": cs.n_differences,
        "trends": {"driver_p_value": cs.driver_trend_p, "response_p_value": cs.response_trend_p,
                   "both_trending": cs.both_trending},
        "slope": reg.slope,
        "slope_ci": list(reg.ci),
        "slope_stderr": reg.stderr,
        "slope_p_value": reg.p_value,
        "intercept": reg.intercept,
        "r_squared": reg.r_squared,
        "n_effective": reg.n_effective,
        "confidence": reg.confidence,
        "per_doubling": None if r.per_doubling is None else {"value": r.per_doubling[0],
                                                             "ci": list(r.per_doubling[1])},
        "noise": {"kind": reg.noise.kind, "phi": reg.noise.phi, "theta": reg.noise.theta, "sigma": reg.noise.sigma,
                  "marginal_sd": reg.noise.marginal_sd},
        "rolling": {"window_years": r.options.window_years, "window_points": roll.window_points,
                    "starts": roll.starts, "ends": roll.ends, "r": roll.r, "threshold": WEAK_R, "sign": roll.sign,
                    "share_below_half": roll.share_below_half, "min_r": roll.sign * roll.min_r},
        "null": {"n_simulations": null.n_simulations, "share_below_half": null.share_below_half_mean,
                 "share_below_half_band": list(null.share_below_half_band), "band_quantiles": list(NULL_BAND),
                 "probability_share": null.probability_share, "probability_min_r": null.probability_min_r,
                 "min_r_observed": roll.sign * roll.min_r,
                 "min_r_band": sorted(roll.sign * v for v in null.min_r_band),
                 "share_histogram": {"edges": edges, "counts": counts}},
        "curves": {"time": r.time, "driver": r.driver_values, "driver_transformed": r.driver_transformed,
                   "response": r.response_values, "fitted": reg.fitted,
                   "rolling": {"start": roll.starts, "r": roll.r, "lower": null.band_lower,
                               "median": null.band_median, "upper": null.band_upper}},
    }
    return jsonable(doc)
