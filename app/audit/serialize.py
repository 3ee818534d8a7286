"""One serialiser: the AuditResult as a JSON-ready document, and every other trend answer in the same words.

The API answers with this document, the store keeps it, and the HTML report and CSV export render
from it, so a report can be rebuilt years later from what was stored. ``trend_document`` (the trend
of one series, POST /api/v1/trend) writes its slopes with the same rows as the audit's long-term trend.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import numpy as np

from app.audit.claim import RATE_UNITS, window_mask
from app.audit.result import AuditResult
from app.stats.adjust import AdjustmentResult
from app.stats.bands import line_band
from app.stats.nonparam import MannKendallResult, SenSlope
from app.stats.trend import SlopeEstimate, TrendSummary

DOCUMENT_SCHEMA = "trendaudit.audit/1"
HISTOGRAM_BINS = 40


def jsonable(value: Any) -> Any:
    """Numbers, tuples, arrays and dataclasses to plain JSON; NaN and infinities become null."""
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {f.name: jsonable(getattr(value, f.name)) for f in dataclasses.fields(value)}
    if isinstance(value, dict):
        return {str(k): jsonable(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [jsonable(v) for v in value]
    if isinstance(value, np.ndarray):
        return jsonable(value.tolist())
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        value = float(value)
        return value if math.isfinite(value) else None
    return value


def estimate_row(e: SlopeEstimate) -> dict[str, Any]:
    """One slope under one noise model, as every trend answer writes it."""
    return {"method": e.method, "slope": e.slope, "stderr": e.stderr, "ci": list(e.ci), "p_value": e.p_value,
            "n": e.n, "n_effective": e.n_effective, "dof": e.dof}


def _histogram(values: np.ndarray) -> dict[str, Any]:
    values = np.asarray(values, dtype=float)
    values = values[np.isfinite(values)]
    if values.size == 0:
        return {"edges": [], "counts": []}
    low, high = float(values.min()), float(values.max())
    if high - low <= HISTOGRAM_BINS * np.spacing(max(abs(low), abs(high))):
        # All equal to within rounding (a noiseless series simulates one slope): one bar, not 40 of zero width.
        return {"edges": [low, high], "counts": [int(values.size)]}
    counts, edges = np.histogram(values, bins=HISTOGRAM_BINS)
    return {"edges": edges, "counts": counts}


def _change(c) -> dict[str, Any]:
    step = c.step
    return {"p_value_nominal": c.p_value_nominal, "p_value_adjusted": c.p_value_adjusted, "direction": c.direction,
            "model": c.model, "first_time": c.first_time, "last_time": c.last_time,
            "slope_before": c.slope_before, "slope_window": c.slope_window, "slope_after": c.slope_after,
            "slope_change": c.slope_change, "statistic": c.statistic,
            "with_jump": {"slope_change": c.jump_slope_change, "jump": c.jump_size,
                          "p_value_nominal": c.p_value_jump_nominal},
            "variance_explained": c.rss_reduction,
            "step": {"time": step.time, "size": step.size, "variance_explained": step.rss_reduction,
                     "p_value_adjusted": step.p_value_adjusted, "explains_as_well": step.explains_as_well},
            "windows_searched": c.n_windows, "length_range_points": list(c.length_range),
            "n_simulations": c.n_simulations,
            "p_value_adjusted_se": c.p_value_adjusted_se, "null_max_histogram": _histogram(c.null_max)}


def _noise(model) -> dict[str, Any]:
    return {"kind": model.kind, "phi": model.phi, "phi2": model.phi2, "theta": model.theta, "sigma": model.sigma,
            "r1": model.r1, "marginal_sd": model.marginal_sd, "variance_inflation": model.variance_inflation,
            "loglik": model.loglik}


def _noise_selection(selection) -> dict[str, Any]:
    return {"criterion": selection.criterion, "chosen": selection.chosen.kind,
            "runner_up": selection.runner_up.kind if selection.runner_up is not None else None,
            "candidates": [{**_noise(c.model), "kind": c.kind, "loglik": c.loglik, "n_params": c.n_params,
                            "criterion": c.criterion, "delta": c.delta} for c in selection.table]}


def _segmentation(seg) -> dict[str, Any]:
    return {"form": seg.form, "breakpoints": list(seg.breakpoints),
            "breakpoint_ranges": [list(r) for r in seg.breakpoint_ranges], "n_breaks": seg.n_breaks,
            "segments": [{"start": s.start, "end": s.end, "slope": s.slope, "slope_ci": list(s.slope_ci)}
                         for s in seg.segments],
            "criterion": {str(k): v for k, v in seg.criterion.items()}, "fitted": seg.fitted}


def adjustment_fit_row(fit: AdjustmentResult) -> dict[str, Any]:
    """The fit of trend plus lagged factors, as every answer with covariates writes it."""
    return {
        "factors": [{"name": f.name, "coefficient": f.coefficient, "ci": list(f.ci), "stderr": f.stderr,
                     "p_value": f.p_value, "lag": f.lag, "lag_years": f.lag_years, "variance_share": f.variance_share}
                    for f in fit.factors],
        "residual_sd_raw": fit.residual_sd_raw, "residual_sd_adjusted": fit.residual_sd_adjusted,
        "trend_slope": fit.trend_slope, "trend_ci": list(fit.trend_ci), "n_used": fit.n_used,
        "dropped_times": list(fit.dropped_times), "lag_rule": fit.lag_rule,
    }


def _adjustment(adjustment) -> dict[str, Any] | None:
    if adjustment is None:
        return None
    return {**adjustment_fit_row(adjustment.fit), "audit": audit_document(adjustment.audit)}


def mann_kendall_row(mann_kendall: MannKendallResult, sen: SenSlope) -> dict[str, Any]:
    return {"p_value": mann_kendall.p_value, "z": mann_kendall.z, "trend": mann_kendall.trend,
            "sen_slope": sen.slope, "sen_ci": list(sen.ci)}


def trend_document(summary: TrendSummary, *, start: float, end: float, confidence: float,
                   adjustment: AdjustmentResult | None = None, adjustment_noise: str | None = None) -> dict[str, Any]:
    """One series' trend under every noise model (the chosen one first), as POST /api/v1/trend answers it;
    the method rows are written as the audit's long-term trend writes them."""
    chosen = summary.chosen
    white = next(m for m in summary.methods if m.method == "white")
    return jsonable({
        "slope": chosen.slope, "ci": list(chosen.ci), "ci_white": list(white.ci), "stderr": chosen.stderr,
        "n": chosen.n, "n_effective": chosen.n_effective, "p_value": chosen.p_value,
        "confidence": confidence, "noise": chosen.method, "years_to_detect": summary.years_to_detect,
        "start": start, "end": end, "units": "per year",
        "methods": [{"name": m.method, **estimate_row(m)} for m in summary.methods],
        "mann_kendall": {**mann_kendall_row(summary.mann_kendall, summary.sen), "tau": summary.mann_kendall.tau},
        "adjustment": None if adjustment is None else {
            **adjustment_fit_row(adjustment), "trend_p_value": adjustment.trend_p_value, "noise": adjustment_noise},
    })


def audit_document(result: AuditResult) -> dict[str, Any]:
    r = result
    series, claim, options = r.series, r.claim, r.options
    lt = r.long_term
    in_ref = (series.time >= r.reference.start) & (series.time <= r.reference.end)
    in_win = window_mask(series, claim.start, claim.end)
    says_faster = claim.says_faster
    doc = {
        "schema": DOCUMENT_SCHEMA,
        "software_version": r.software_version,
        "seed": r.seed,
        "inputs": {"sha256": series.sha256(), "n": series.n, "start": series.start, "end": series.end,
                   "sampling": series.sampling, "label": series.label, "units": series.units,
                   "missing": len(series.missing_times), "notes": list(series.notes)},
        "claim": {"start": claim.start, "end": claim.end, "kind": claim.kind},
        "options": dataclasses.asdict(options),
        "rate": {"unit": options.rate_unit, "factor": RATE_UNITS[options.rate_unit]},
        "verdict": {"code": r.verdict.code, "headline": r.verdict.headline, "summary": r.verdict.summary,
                    "reasons": list(r.verdict.reasons), "what_would_change": list(r.verdict.what_would_change)},
        "reference": {"start": r.reference.start, "end": r.reference.end, "how": r.reference.how,
                      "note": r.reference.note, "n": int(in_ref.sum())},
        "long_term": {**estimate_row(lt.chosen), "r_squared": lt.fit.r_squared, "confidence": lt.chosen.confidence,
                      "methods": [estimate_row(m) for m in lt.methods],
                      "mann_kendall": mann_kendall_row(lt.mann_kendall, lt.sen)},
        "noise": {**_noise(r.noise), "selection": _noise_selection(r.noise_selection)},
        "window": {**estimate_row(r.window), "start": claim.start, "end": claim.end,
                   "first_time": float(series.time[in_win][0]), "last_time": float(series.time[in_win][-1]),
                   "p_value_vs_zero": r.window.p_value,
                   "p_value_vs_long_term": (r.window_stronger if says_faster else r.window_weaker).p_value,
                   "p_value_weaker": r.window_weaker.p_value, "p_value_stronger": r.window_stronger.p_value,
                   "mann_kendall": {"p_value": r.window_mann_kendall.p_value, "z": r.window_mann_kendall.z,
                                    "trend": r.window_mann_kendall.trend, "tau": r.window_mann_kendall.tau},
                   "sen": {"slope": r.window_sen.slope, "ci": list(r.window_sen.ci)}},
        "trend_change": _change(r.change),
        "spell": {"probability": r.spell.probability, "probability_single_window": r.spell.probability_single_window,
                  "expected_count": r.spell.expected_count, "observed_count": r.spell.observed_count,
                  "observed_slope": r.spell.observed_slope, "window_points": r.spell.window_points,
                  "direction": r.spell.direction, "null_slope": r.spell.null_slope,
                  "n_simulations": r.spell.n_simulations,
                  "histogram": _histogram(r.spell.simulated_slopes_sample),
                  "extremes_histogram": _histogram(r.spell.simulated_extremes)},
        "segments": {**_segmentation(r.segmentation), "discontinuous": _segmentation(r.segmentation_discontinuous)},
        "cherry_pick": {"start_times": r.sensitivity.start_times, "end_times": r.sensitivity.end_times,
                        "slopes": r.sensitivity.slopes, "claimed_slope": r.sensitivity.claimed_slope,
                        "claimed_rank_percentile": r.sensitivity.claimed_rank_percentile,
                        "endpoints": jsonable(r.endpoints)},
        "detectability": {"years_to_detect": r.years_to_detect, "window_years": r.verdict_inputs.window_years,
                          "power": r.window_power, "curve": [{"years": a, "power": b} for a, b in r.detect_curve]},
        "robustness": [jsonable(row) for row in r.robustness],
        "whole_record": jsonable(r.whole_record),
        "adjustment": _adjustment(r.adjustment),
        "curves": {"time": series.time, "value": series.value,
                   "reference_line": line_band(series.time[in_ref], lt.fit, lt.chosen.stderr, options.confidence,
                                               lt.chosen.dof),
                   "window_line": line_band(series.time[in_win], r.window_fit, r.window.stderr, options.confidence,
                                            r.window.dof)},
    }
    return jsonable(doc)
