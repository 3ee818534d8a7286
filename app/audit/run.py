"""``run_audit``: the one orchestration from a Series and a claim to an ``AuditResult``.

Order matters only where one step feeds another: the segmentation proposes the reference period,
the reference period's residuals give the noise model, and that noise model drives every range,
test and simulation for the window.
"""

from __future__ import annotations

import dataclasses
from typing import Sequence
import time as _time

import numpy as np

from app import __version__
from app.audit.claim import RATE_UNITS, AuditOptions, Claim, check_claim, window_mask
from app.audit.reference import choose_reference
from app.audit.result import Adjustment, AuditResult, RobustnessRow, WholeRecordCheck
from app.audit.verdict import VerdictInputs, decide, decide_code, format_rate
from app.errors import ClaimError, Location
from app.ingest.sampling import period_label
from app.ingest.validate import check_window_in_series
from app.ingest.series import Series
from app.stats.adjust import Covariate, fit_covariates
from app.stats.breaks import break_test, sup_f_tests
from app.stats.detect import detection_power, years_to_detect
from app.stats.noise import NoiseModel, estimate_noise
from app.stats.nonparam import mann_kendall, sen_slope
from app.stats.ols import fit_trend
from app.stats.segment import segment_continuous, segment_discontinuous
from app.stats.sensitivity import endpoint_outliers, window_sensitivity
from app.stats.spells import spell_probability
from app.stats.trend import compare_slopes, slope_uncertainty, summarise_trend

MIN_WINDOW_POINTS = 3
MIN_POINTS_BEFORE_WINDOW = 3
SUP_F_TRIM = 0.15  # Andrews (1993)
ROBUSTNESS_METHODS = ("white", "ar1", "arma11", "gls_ar1", "hac")
SIMULATED_NOISE = ("white", "ar1", "arma11")


def draw_seed() -> int:
    return int(np.random.SeedSequence().entropy % (2**63))


def _streams(seed: int, names: tuple[str, ...]) -> dict[str, np.random.Generator]:
    """One independent generator per analysis, so adding an analysis never shifts another's numbers."""
    children = np.random.SeedSequence(seed).spawn(len(names))
    return {name: np.random.default_rng(child) for name, child in zip(names, children)}


# "sup_f_broken" is no longer drawn from (the hinge and broken tests share the "sup_f" simulations) but keeps
# its place, so every later stream keeps its seed.
STREAMS = ("spell", "sup_f", "sup_f_broken", "segments", "segments_jump", "robust_white", "robust_arma11",
           "whole_record")


def _window_mask(series: Series, claim: Claim) -> np.ndarray:
    check_window_in_series(series, claim.start, claim.end)  # the same check the API and desk make on entry
    mask = window_mask(series, claim.start, claim.end)
    if int(mask.sum()) < MIN_WINDOW_POINTS:
        raise ClaimError(f"the window {claim.start:g} to {claim.end:g} holds {int(mask.sum())} data points; "
                         f"at least {MIN_WINDOW_POINTS} are needed for a trend", location=Location(field="claim.end"),
                         fix="Widen the window")
    return mask


def _trim_for(claim_index: int, n: int, min_points: int) -> float:
    """Andrews' 15% trimming, relaxed just enough that the claimed date itself is admissible."""
    before, after = claim_index, n - claim_index
    return float(min(SUP_F_TRIM, max(min(before, after), min_points) / n))


@dataclasses.dataclass(frozen=True)
class _ChangeTests:
    hinge: object
    broken: object
    sup_f: object
    sup_f_broken: object | None


def _change_tests(t, y, claim_start, direction, noise, noise_kind, sims, rng, min_points,
                  with_broken=True) -> _ChangeTests:
    """Hinge (and broken) tests at the claimed date; both sup-F tests calibrate on the same simulated series."""
    idx = int(np.searchsorted(t, claim_start))
    trim = _trim_for(idx, t.size, min_points)
    hinge = break_test(t, y, claim_start, model="hinge", direction=direction, noise=noise)
    broken = break_test(t, y, claim_start, model="broken", direction=direction, noise=noise) if with_broken else None
    models = ("hinge", "broken") if with_broken else ("hinge",)
    sup = sup_f_tests(t, y, claim_start, models, direction=direction, noise_kind=noise_kind, n_simulations=sims,
                      trim=trim, rng=rng, noise=noise)
    return _ChangeTests(hinge, broken, sup["hinge"], sup.get("broken"))


def _verdict_inputs(claim, tw, yw, lt_estimate, lt_mk_p, noise, method, options, alpha, change, spell_p, ytd,
                    series: Series):
    window = slope_uncertainty(tw, yw, method=method, confidence=options.confidence, noise=noise)
    trend_sign = 1 if lt_estimate.slope >= 0 else -1
    weaker = compare_slopes(window, lt_estimate, alternative="less" if trend_sign > 0 else "greater")
    stronger = compare_slopes(window, lt_estimate, alternative="greater" if trend_sign > 0 else "less")
    inputs = VerdictInputs(
        kind=claim.kind, window_start=claim.start, window_end=claim.end, window_points=int(tw.size), alpha=alpha,
        long_term_slope=lt_estimate.slope, long_term_ci=lt_estimate.ci, long_term_p=lt_estimate.p_value,
        long_term_mk_p=lt_mk_p,
        window_slope=window.slope, window_ci=window.ci, window_p_vs_zero=window.p_value,
        window_p_weaker=weaker.p_value, window_p_stronger=stronger.p_value,
        change_p_nominal=change.hinge.p_value_nominal, change_p_adjusted=change.sup_f.p_value_adjusted,
        spell_probability=spell_p, years_to_detect=ytd, rate_factor=RATE_UNITS[options.rate_unit],
        rate_unit=options.rate_unit, units=series.units, first_label=period_label(float(tw[0]), series.sampling),
        last_label=period_label(float(tw[-1]), series.sampling), span_years=float(tw[-1] - tw[0]) + series.step,
    )
    return inputs, window, weaker, stronger


def run_audit(series: Series, claim: Claim, options: AuditOptions = AuditOptions(),
              covariates: Sequence[Covariate] = ()) -> AuditResult:
    """Audit ``claim`` against ``series``; with covariates, audit the adjusted series too (same seed)."""
    check_claim(claim)
    started = _time.perf_counter()
    seed = options.seed if options.seed is not None else draw_seed()
    options = dataclasses.replace(options, seed=seed)
    rng = _streams(seed, STREAMS)
    alpha = 1.0 - options.confidence
    ppy = series.points_per_year
    t, y = series.time, series.value
    in_window = _window_mask(series, claim)
    min_points = max(MIN_POINTS_BEFORE_WINDOW, int(round(options.min_segment_years * ppy)))
    # The covariate fit is cheap and the likeliest to refuse bad input: do it before the expensive work.
    covariate_fit = _fit_covariates(series, options, covariates)

    segmentation = segment_continuous(t, y, max_breaks=options.max_breaks, min_size_years=options.min_segment_years,
                                      points_per_year=ppy, confidence=options.confidence, rng=rng["segments"])
    segmentation_jump = segment_discontinuous(t, y, max_breaks=options.max_breaks,
                                              min_size_points=max(3, min_points),
                                              confidence=options.confidence, rng=rng["segments_jump"])
    reference = choose_reference(series.start, series.end, claim.start, segmentation.breakpoints,
                                 options.min_segment_years, options.reference_start, options.reference_end)
    in_ref = (t >= reference.start) & (t <= reference.end)
    tr, yr = t[in_ref], y[in_ref]
    if int((tr < claim.start).sum()) < MIN_POINTS_BEFORE_WINDOW:
        raise ClaimError(f"the window starts {claim.start:g}, leaving fewer than {MIN_POINTS_BEFORE_WINDOW} points "
                         "before it in the reference period, so there is no earlier trend to compare with",
                         location=Location(field="claim.start"),
                         fix="Start the window later, or give a reference period that begins earlier")
    tw, yw = t[in_window], y[in_window]

    # Noise comes from the residuals of the segmented fit, not of one straight line: over a record whose
    # rate changed, straight-line residuals carry the change itself and would pass for strongly red noise.
    # On a record with no detected change the two are the same.
    segment_residuals = y - segmentation.fitted
    noise: NoiseModel = estimate_noise(segment_residuals[in_ref], options.noise)
    long_term = summarise_trend(tr, yr, method=options.noise, confidence=options.confidence, noise=noise,
                                points_per_year=ppy)
    lt_estimate = long_term.chosen
    direction = claim.direction(lt_estimate.slope)
    tail = claim.tail(lt_estimate.slope)

    change = _change_tests(tr, yr, claim.start, direction, noise, options.noise, options.simulations,
                           rng["sup_f"], min(min_points, int((tr >= claim.start).sum())))
    spell = spell_probability(tr, lt_estimate.slope, noise, int(tw.size), float(fit_trend(tw, yw).slope),
                              direction=tail, n_simulations=options.simulations, rng=rng["spell"])
    ytd = years_to_detect(lt_estimate.slope, noise, ppy, alpha=alpha)
    window_power = detection_power(lt_estimate.slope, noise, int(tw.size), ppy, alpha=alpha)
    detect_curve = _detect_curve(lt_estimate.slope, noise, ppy, alpha, tr.size)

    inputs, window, weaker, stronger = _verdict_inputs(claim, tw, yw, lt_estimate, long_term.mann_kendall.p_value, noise, options.noise, options,
                                                       alpha, change, spell.probability, ytd, series)
    verdict = decide(inputs)

    sensitivity = window_sensitivity(t, y, float(tw[0]), float(tw[-1]), k_years=options.sensitivity_years,
                                     long_term_slope=lt_estimate.slope)
    endpoints = endpoint_outliers(t, y, float(tw[0]), float(tw[-1]), long_term.fit.line(t), noise.marginal_sd)
    robustness = _robustness(claim, tw, yw, tr, yr, segment_residuals[in_ref], options, alpha, change,
                             spell.probability, ppy, series, rng, verdict.code, long_term.mann_kendall.p_value)
    whole = _whole_record(series, claim, tw, yw, segment_residuals, options, alpha, spell.probability, ppy,
                          rng["whole_record"], reference, min_points, (long_term, noise, change))
    verdict = dataclasses.replace(verdict, what_would_change=_what_would_change(
        inputs, verdict.code, sensitivity, robustness, whole, options, series.units))

    return AuditResult(
        series=series, claim=claim, options=options, seed=seed, software_version=__version__,
        reference=reference, long_term=long_term, noise=noise, window=window,
        window_fit=fit_trend(tw, yw), window_weaker=weaker, window_stronger=stronger,
        hinge=change.hinge, broken=change.broken, sup_f=change.sup_f, sup_f_broken=change.sup_f_broken,
        segmentation=segmentation, segmentation_discontinuous=segmentation_jump, spell=spell,
        sensitivity=sensitivity, endpoints=endpoints, years_to_detect=ytd, window_power=window_power,
        detect_curve=detect_curve, window_mann_kendall=mann_kendall(yw, alpha=alpha),
        window_sen=sen_slope(tw, yw, confidence=options.confidence), robustness=robustness, whole_record=whole,
        verdict=verdict, verdict_inputs=inputs, adjustment=_adjust(series, claim, options, covariates, covariate_fit),
        elapsed_seconds=_time.perf_counter() - started,
    )


def _fit_covariates(series: Series, options: AuditOptions, covariates: Sequence[Covariate]):
    if not covariates:
        return None
    return fit_covariates(series.time, series.value, covariates, series.points_per_year, noise_kind=options.noise,
                          confidence=options.confidence)


def _adjust(series: Series, claim: Claim, options: AuditOptions, covariates: Sequence[Covariate],
            fit) -> Adjustment | None:
    """Take the known short-term factors out (Foster & Rahmstorf 2011) and audit what is left."""
    if fit is None:
        return None
    adjusted = Series(time=fit.time, value=fit.adjusted, sampling=series.sampling,
                      label=f"{series.label} (adjusted)".strip(), units=series.units,
                      notes=series.notes + ("adjusted for " + ", ".join(c.name for c in covariates),))
    return Adjustment(fit=fit, audit=run_audit(adjusted, claim, options))


def _detect_curve(slope, noise, ppy, alpha, n_reference) -> tuple[tuple[float, float], ...]:
    """Power of a window of each length to detect the long-term slope: the report's detectability chart."""
    lengths = np.unique(np.linspace(max(3, int(ppy * 3)), max(n_reference, int(ppy * 3) + 1), 40).astype(int))
    return tuple((float(n / ppy), float(detection_power(slope, noise, int(n), ppy, alpha=alpha))) for n in lengths)


def _robustness(claim, tw, yw, tr, yr, residuals, options, alpha, change, spell_p, ppy, series, rng, main_code,
                lt_mk_p):
    """Would the verdict hold under each noise model? White, AR(1) and ARMA(1,1) rerun the change test."""
    rows = []
    sims = max(200, options.simulations // 4)
    for method in ROBUSTNESS_METHODS:
        noise_kind = method if method in SIMULATED_NOISE else "ar1"
        noise = estimate_noise(residuals, noise_kind)
        lt = slope_uncertainty(tr, yr, method=method, confidence=options.confidence,
                               noise=noise if method in SIMULATED_NOISE else None)
        method_change = change
        if method in ("white", "arma11") and method != options.noise:
            stream = rng["robust_" + method]
            method_change = _change_tests(tr, yr, claim.start, claim.direction(lt.slope), noise, noise_kind, sims,
                                          stream, max(3, min(int(round(options.min_segment_years * ppy)),
                                                                      int((tr >= claim.start).sum()))),
                                          with_broken=False)
        ytd = years_to_detect(lt.slope, noise, ppy, alpha=alpha)
        inputs, window, weaker, stronger = _verdict_inputs(
            claim, tw, yw, lt, lt_mk_p, noise if method in SIMULATED_NOISE else None, method, options, alpha, method_change,
            spell_p, ytd, series)
        code = decide_code(inputs)
        rows.append(RobustnessRow(method=method, window_slope=window.slope, window_ci=window.ci,
                                  long_term_slope=lt.slope, long_term_ci=lt.ci,
                                  p_window_vs_long_term=(stronger if claim.says_faster else weaker).p_value,
                                  change_p_adjusted=method_change.sup_f.p_value_adjusted, code=code,
                                  holds=code == main_code))
    return tuple(rows)


def _whole_record(series, claim, tw, yw, residuals, options, alpha, spell_p, ppy, rng, reference,
                  min_points, main) -> WholeRecordCheck:
    """The one-line sensitivity: what if the whole record were the reference period?

    When the reference period already is the whole record, every input is the main analysis's own
    (the same points, residuals, noise model and claim direction), so its long-term trend and change
    test are reused rather than recomputed with fewer simulations.
    """
    t, y = series.time, series.value
    same = reference.start <= series.start and reference.end >= series.end
    if same:
        long_term, noise, change = main
        lt, lt_mk_p = long_term.chosen, long_term.mann_kendall.p_value
    else:
        noise = estimate_noise(residuals, options.noise)
        lt = slope_uncertainty(t, y, method=options.noise, confidence=options.confidence, noise=noise)
        lt_mk_p = mann_kendall(y, alpha=alpha).p_value
        sims = max(200, options.simulations // 4)
        change = _change_tests(t, y, claim.start, claim.direction(lt.slope), noise, options.noise, sims, rng,
                               min(min_points, int((t >= claim.start).sum())), with_broken=False)
    ytd = years_to_detect(lt.slope, noise, ppy, alpha=alpha)
    inputs, window, weaker, stronger = _verdict_inputs(claim, tw, yw, lt, lt_mk_p, noise, options.noise, options,
                                                       alpha, change, spell_p, ytd, series)
    return WholeRecordCheck(same_as_reference=same, long_term_slope=lt.slope, long_term_ci=lt.ci,
                            p_window_vs_long_term=(stronger if claim.says_faster else weaker).p_value,
                            change_p_adjusted=change.sup_f.p_value_adjusted, code=decide_code(inputs))


def _what_would_change(v: VerdictInputs, code, sensitivity, robustness, whole, options, units) -> tuple[str, ...]:
    rate = lambda s: format_rate(s, v.rate_factor, v.rate_unit, units)  # noqa: E731
    rows = robustness
    notes = []
    lo, hi = float(np.nanmin(sensitivity.slopes)), float(np.nanmax(sensitivity.slopes))
    notes.append(f"Moving the window's start and end by up to {options.sensitivity_years:g} years changes its trend "
                 f"from {rate(lo)} to {rate(hi)}; the claimed window ranks at the "
                 f"{sensitivity.claimed_rank_percentile:.0f}th percentile of those windows (0 = the flattest).")
    flips = [r for r in rows if not r.holds]
    if flips:
        notes.append("Under " + ", ".join(f"the {r.method} noise model ({r.code.replace('_', ' ')})" for r in flips)
                     + " the verdict would differ.")
    else:
        notes.append("Every noise model we tried gives the same verdict.")
    if not whole.same_as_reference:
        notes.append(f"With the whole record as the reference period the long-term trend is {rate(whole.long_term_slope)} "
                     f"and the verdict would be {whole.code.replace('_', ' ')}.")
    if code in ("too_short_to_tell", "consistent_with_trend") and np.isfinite(v.years_to_detect):
        notes.append(f"A window of about {v.years_to_detect:.0f} years or more would be needed before a change of the "
                     f"long-term trend's size could reliably show itself.")
    return tuple(notes)
