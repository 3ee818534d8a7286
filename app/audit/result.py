"""The audit's result: every analysis once, as frozen dataclasses; JSON, HTML and CSV are renderings of it."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from app.audit.claim import AuditOptions, Claim
from app.audit.reference import ReferencePeriod
from app.audit.verdict import Verdict, VerdictInputs
from app.ingest.series import Series


@dataclass(frozen=True)
class RobustnessRow:
    method: str
    window_slope: float
    window_ci: tuple[float, float]
    long_term_slope: float
    long_term_ci: tuple[float, float]
    p_window_vs_long_term: float
    change_p_adjusted: float
    code: str
    holds: bool
    criterion_delta: float = float("nan")  # AICc above the best-fitting noise model (NaN: not a noise model)


@dataclass(frozen=True)
class WholeRecordCheck:
    same_as_reference: bool
    long_term_slope: float
    long_term_ci: tuple[float, float]
    p_window_vs_long_term: float
    change_p_adjusted: float
    code: str


@dataclass(frozen=True)
class Adjustment:
    """The covariate fit and the full audit of the adjusted series."""

    fit: Any  # stats.adjust.AdjustmentResult
    audit: "AuditResult"


@dataclass(frozen=True)
class ClaimVerdict:
    """The verdict and the numbers it rests on, as ``run_audit`` would give them (see ``audit_verdict``)."""

    options: AuditOptions
    verdict: Verdict
    verdict_inputs: VerdictInputs
    window: Any  # stats.trend.SlopeEstimate
    long_term: Any  # stats.trend.SlopeEstimate: the long-term trend with the range the audit states
    change: Any  # stats.window_change.WindowChangeTest


@dataclass(frozen=True)
class AuditResult:
    series: Series
    claim: Claim
    options: AuditOptions
    seed: int
    software_version: str
    reference: ReferencePeriod
    long_term: Any  # stats.trend.TrendSummary
    noise: Any  # stats.noise.NoiseModel
    noise_selection: Any  # stats.noise.NoiseSelection: every candidate's fit, the chosen one and the runner-up
    window: Any  # stats.trend.SlopeEstimate
    window_fit: Any  # stats.ols.TrendFit
    window_weaker: Any  # stats.trend.SlopeComparison
    window_stronger: Any
    change: Any  # stats.window_change.WindowChangeTest
    segmentation: Any  # stats.segment.Segmentation (continuous)
    segmentation_discontinuous: Any
    spell: Any  # stats.spells.SpellResult
    sensitivity: Any  # stats.sensitivity.SensitivityMatrix
    endpoints: Any  # stats.sensitivity.EndpointCheck
    years_to_detect: float
    window_power: float
    detect_curve: tuple[tuple[float, float], ...]
    window_mann_kendall: Any
    window_sen: Any
    robustness: tuple[RobustnessRow, ...]
    whole_record: WholeRecordCheck
    verdict: Verdict
    verdict_inputs: VerdictInputs
    adjustment: Adjustment | None
    elapsed_seconds: float
