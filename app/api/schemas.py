"""Request and response models, with a worked example per endpoint for /docs and /openapi.json.

Slopes are in value units per year; times are decimal years (an integer year 1998 sits at mid-year,
1998.5; "1998-03" at mid-March).
"""

from __future__ import annotations

import math
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field

from app.audit.claim import CLAIM_KINDS, NOISE_MODELS, RATE_UNITS

TREND_METHODS = ("white", "ar1", "arma11", "gls_ar1", "hac")
Cell = int | float | str | None  # exact types are kept, so the reader sees 1998 and "1998-03" as written

ClaimKind = Literal[CLAIM_KINDS]  # type: ignore[valid-type]
AuditNoise = Literal[NOISE_MODELS]  # type: ignore[valid-type]
RateUnit = Literal[tuple(RATE_UNITS)]  # type: ignore[valid-type]
TrendMethod = Literal[TREND_METHODS]  # type: ignore[valid-type]

# Invented demo data: a steady 0.18 per decade with a deterministic wiggle, annual 1970-2024.
EXAMPLE_YEARS = list(range(1970, 2025))
EXAMPLE_VALUES = [round(-0.3 + 0.018 * (y - 1970) + 0.09 * math.sin(1.7 * y) + 0.05 * math.cos(0.6 * y), 3)
                  for y in EXAMPLE_YEARS]


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid")


class SeriesIn(_Strict):
    time: list[Cell] = Field(description="Years, decimal years, 'YYYY-MM', 'YYYY-Qn' or ISO dates; one per value")
    value: list[Cell] = Field(description="Numbers; null, '', 'NA' or 'NaN' when missing")
    label: str | None = Field(default=None, description="What the series measures")
    units: str | None = Field(default=None, description="Units of the values, e.g. '°C'")


CLAIM_TIME_HELP = ("a number is a decimal year as written (1998 is 1998.0); a year-month, quarter or date string "
                   "sits mid-period like the data ('2016-01' is mid-January 2016)")


class ClaimIn(_Strict):
    start: float | str = Field(description="Start of the claimed window: " + CLAIM_TIME_HELP)
    end: float | str = Field(description="End of the claimed window: " + CLAIM_TIME_HELP)
    kind: ClaimKind = Field(default="pause", description="What the claim says happened in the window")


class OptionsIn(_Strict):
    confidence: float | None = Field(default=None, description="Confidence level of every range, e.g. 0.95")
    noise: AuditNoise | None = Field(default=None, description="Noise model for ranges and simulations")
    simulations: int | None = Field(default=None, description="Monte Carlo simulations per test")
    seed: int | None = Field(default=None, description="Seed; the audit draws and records one when absent")
    reference_start: float | None = Field(default=None, description="Start of the long-term reference period")
    reference_end: float | None = Field(default=None, description="End of the long-term reference period")
    rate_unit: RateUnit | None = Field(default=None, description="How slopes are worded for readers")


class IngestIn(_Strict):
    missing_sentinels: list[float] = Field(default_factory=list, description="Numbers that mean 'missing'")
    decimal_comma: bool = Field(default=False, description="Read '0,42' as 0.42")
    anomaly_base: tuple[float, float] | None = Field(
        default=None, description="Subtract a per-month climatology over [start, end), decimal years")
    annual_means: bool = Field(default=False, description="Average monthly data into calendar years first")
    min_months_per_year: int | None = Field(default=None, description="Months a year needs for an annual mean")


class SourceIn(_Strict):
    name: str | None = None
    url: str | None = None
    notes: str | None = None


class AuditRequest(_Strict):
    title: str = Field(default="", description="A name for the audit, shown on its report")
    series: SeriesIn
    claim: ClaimIn
    options: OptionsIn = Field(default_factory=OptionsIn)
    source: SourceIn = Field(default_factory=SourceIn)
    ingest: IngestIn = Field(default_factory=IngestIn)

    model_config = ConfigDict(extra="forbid", json_schema_extra={"examples": [{
        "title": "Has the (invented) province stopped warming since 1998?",
        "series": {"time": EXAMPLE_YEARS, "value": EXAMPLE_VALUES, "label": "Annual temperature anomaly",
                   "units": "°C"},
        "claim": {"start": 1998, "end": 2013, "kind": "pause"},
        "options": {"confidence": 0.95, "noise": "ar1", "simulations": 2000, "seed": 12345},
        "source": {"name": "Invented demo data", "notes": "Worked example for the API documentation"},
    }]})


class MultipartAuditForm(BaseModel):
    """The multipart/form-data form of POST /api/v1/audits (documentation only; the JSON names are reused)."""

    file: bytes = Field(description="The CSV file", json_schema_extra={"format": "binary"})
    title: str | None = None
    claim_start: str = Field(description="Start of the claimed window: " + CLAIM_TIME_HELP)
    claim_end: str = Field(description="End of the claimed window: " + CLAIM_TIME_HELP)
    claim_kind: ClaimKind = "pause"
    time_column: str | None = Field(default=None, description="Detected when absent")
    value_column: str | None = Field(default=None, description="Detected when absent")
    confidence: float | None = None
    noise: AuditNoise | None = None
    simulations: int | None = None
    seed: int | None = None
    reference_start: float | None = None
    reference_end: float | None = None
    rate_unit: RateUnit | None = None
    decimal_comma: bool | None = None
    missing_sentinels: str | None = Field(default=None, description="Comma-separated, e.g. '-999,-99.99'")
    source_name: str | None = None
    source_url: str | None = None
    source_notes: str | None = None


class VerdictOut(BaseModel):
    model_config = ConfigDict(extra="allow")
    code: str
    headline: str
    summary: str


class AuditOut(BaseModel):
    """The stored audit: the result document plus where it lives. Only a create answer holds owner_token."""

    model_config = ConfigDict(extra="allow")
    id: str
    title: str
    created_at: str = Field(description="UTC, ISO 8601")
    report_url: str
    data_url: str
    owner_token: str | None = Field(default=None, description="Shown once, on creation: keep it to delete the audit")
    verdict: VerdictOut
    reference: dict[str, Any]
    long_term: dict[str, Any]
    window: dict[str, Any]
    trend_change: dict[str, Any]
    spell: dict[str, Any]
    segments: dict[str, Any]
    detectability: dict[str, Any]
    inputs: dict[str, Any]
    software_version: str
    seed: int


class AuditListItem(BaseModel):
    id: str
    kind: str
    title: str
    created_at: str
    url: str
    report_url: str
    summary: dict[str, Any]


class AuditPage(BaseModel):
    items: list[AuditListItem]
    next_cursor: str | None = Field(description="Pass as ?cursor= for the next page; null on the last page")


class TrendRequest(_Strict):
    series: SeriesIn
    start: float | None = Field(default=None, description="First time of the window (decimal year)")
    end: float | None = Field(default=None, description="Last time of the window (decimal year)")
    noise: TrendMethod = Field(default="ar1", description="Noise model behind 'ci' and 'p_value'")
    confidence: float = Field(default=0.95, gt=0.5, lt=1.0)

    model_config = ConfigDict(extra="forbid", json_schema_extra={"examples": [{
        "series": {"time": EXAMPLE_YEARS, "value": EXAMPLE_VALUES},
        "start": 1980, "end": 2024, "noise": "ar1", "confidence": 0.95,
    }]})


class MethodOut(BaseModel):
    name: str
    slope: float | None
    stderr: float | None
    ci: list[float | None]
    p_value: float | None
    n_effective: float | None


class MannKendallOut(BaseModel):
    p_value: float | None
    z: float | None
    tau: float | None
    trend: str
    sen_slope: float | None
    sen_ci: list[float | None]


class TrendOut(BaseModel):
    slope: float | None = Field(description="OLS slope, value units per year")
    ci: list[float | None] = Field(description="[lo, hi] under the chosen noise model")
    ci_white: list[float | None] = Field(description="[lo, hi] assuming white noise")
    stderr: float | None
    n: int
    n_effective: float | None
    p_value: float | None = Field(description="Two-sided, slope = 0, under the chosen noise model")
    confidence: float
    noise: str
    years_to_detect: float | None = Field(description="Record length needed to detect this slope in this noise")
    start: float
    end: float
    units: str = "per year"
    methods: list[MethodOut]
    mann_kendall: MannKendallOut
