"""Request and response models, with a worked example per endpoint for /docs and /openapi.json.

Slopes are in value units per year; times are decimal years (an integer year 1998 sits at mid-year,
1998.5; "1998-03" at mid-March).
"""

from __future__ import annotations

import math
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field, StrictFloat, StrictInt, StrictStr

from app.audit.claim import NOISE_MODELS, RATE_UNITS
from app.stats.adjust import LAG_RULES, MAX_COVARIATES
from app.stats.correlate import TRANSFORMS
from app.stats.trend import METHODS as TREND_METHODS
from app.vocabulary import CLAIM_KINDS
Cell = int | float | str | None  # exact types are kept, so the reader sees 1998 and "1998-03" as written

ClaimKind = Literal[CLAIM_KINDS]  # type: ignore[valid-type]
AuditNoise = Literal[NOISE_MODELS]  # type: ignore[valid-type]
RateUnit = Literal[tuple(RATE_UNITS)]  # type: ignore[valid-type]
TrendMethod = Literal[TREND_METHODS]  # type: ignore[valid-type]
LagRule = Literal[LAG_RULES]  # type: ignore[valid-type]
Transform = Literal[TRANSFORMS]  # type: ignore[valid-type]

# Invented demo data: a steady 0.18 per decade with a deterministic wiggle, annual 1970-2024.
EXAMPLE_YEARS = list(range(1970, 2025))
EXAMPLE_VALUES = [round(-0.3 + 0.018 * (y - 1970) + 0.09 * math.sin(1.7 * y) + 0.05 * math.cos(0.6 * y), 3)
                  for y in EXAMPLE_YEARS]

# Invented demo data for the covariate example: an index that swings like an ENSO index (1968 on, so lags of
# up to two years reach back before the series), and a series that follows it a year late on top of the trend.
EXAMPLE_INDEX_YEARS = list(range(1968, 2025))
EXAMPLE_INDEX = [round(math.sin(0.9 * y) + 0.5 * math.cos(2.3 * y), 3) for y in EXAMPLE_INDEX_YEARS]
EXAMPLE_ADJUSTABLE_VALUES = [round(v + 0.08 * math.sin(0.9 * (y - 1)) + 0.04 * math.cos(2.3 * (y - 1)), 3)
                             for y, v in zip(EXAMPLE_YEARS, EXAMPLE_VALUES)]

# Invented demo data for the correlation example: a driver rising like CO2 in ppm, and a response that warms
# 0.8 per doubling of it, with a deterministic year-to-year scatter and a slow swing (annual 1960-2024).
EXAMPLE_DRIVER_YEARS = list(range(1960, 2025))
EXAMPLE_DRIVER = [round(315.0 * math.exp(0.004 * (y - 1960) + 0.00001 * (y - 1960) ** 2), 2)
                  for y in EXAMPLE_DRIVER_YEARS]
EXAMPLE_RESPONSE = [round(0.8 * math.log2(c / 315.0) + 0.08 * ((y * 7919) % 13 - 6) / 6 + 0.05 * math.sin(0.9 * y), 3)
                    for y, c in zip(EXAMPLE_DRIVER_YEARS, EXAMPLE_DRIVER)]


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid")


class SeriesIn(_Strict):
    time: list[Cell] = Field(description="Years, decimal years, 'YYYY-MM', 'YYYY-Qn' or ISO dates; one per value")
    value: list[Cell] = Field(description="Numbers; null, '', 'NA' or 'NaN' when missing")
    label: str | None = Field(default=None, description="What the series measures")
    units: str | None = Field(default=None, description="Units of the values, e.g. '°C'")


CLAIM_TIME_HELP = ("any time form the series accepts: a whole year, quarter, month or date as the start begins at "
                   "its first instant and as the end includes all of it (1998 to 2012 holds 1998..2012); an integer "
                   "is a whole year, a number with a fraction (1998.25) an instant")
# An integer stays an integer, so a whole year keeps its meaning; true and false are not times.
Edge = StrictInt | StrictFloat | StrictStr


class ClaimRecordIn(_Strict):
    text: str | None = Field(default=None, description="The claim's words, as said or written")
    claimant: str | None = Field(default=None, description="Who made the claim")
    outlet: str | None = Field(default=None, description="Where it appeared")
    made_on: str | None = Field(default=None, description="When it was made, YYYY-MM-DD")
    source_url: str | None = Field(default=None, description="Where it can be read")


class ClaimIn(ClaimRecordIn):
    start: Edge = Field(description="Start of the claimed window: " + CLAIM_TIME_HELP)
    end: Edge = Field(description="End of the claimed window: " + CLAIM_TIME_HELP)
    kind: ClaimKind = Field(default="pause", description="What the claim says happened in the window")
    made_on: str | None = Field(default=None, description="The day the claim was made, YYYY-MM-DD: the report "
                                "then says what the audit would have said with the data as they stood that day")


class OptionsIn(_Strict):
    confidence: float | None = Field(default=None, description="Confidence level of every range, e.g. 0.95")
    noise: AuditNoise | None = Field(default=None, description="Noise model for ranges and simulations")
    simulations: int | None = Field(default=None, description="Monte Carlo simulations per test")
    seed: int | None = Field(default=None, description="Seed; the audit draws and records one when absent")
    reference_start: Edge | None = Field(default=None, description="Start of the long-term reference period, "
                                                                     "written like a window edge")
    reference_end: Edge | None = Field(default=None, description="End of the long-term reference period")
    rate_unit: RateUnit | None = Field(default=None, description="How slopes are worded for readers")
    seasonal: Literal["auto", "remove", "keep"] | None = Field(
        default="auto", description="A monthly or quarterly series' seasonal cycle: 'auto' takes it out (anomalies "
                                    "from each calendar month's mean over the reference period) when a test finds "
                                    "one, 'remove' always, 'keep' never; the answer's inputs.seasonal says what "
                                    "was done")


class IngestIn(_Strict):
    missing_sentinels: list[float] = Field(default_factory=list, description="Numbers that mean 'missing'")
    decimal_comma: bool = Field(default=False, description="Read '0,42' as 0.42")
    anomaly_base: tuple[float, float] | None = Field(
        default=None, description="Subtract a per-month climatology over [start, end), decimal years")
    annual_means: bool = Field(default=False, description="Average monthly data into calendar years first")
    min_months_per_year: int | None = Field(default=None, description="Months a year needs for an annual mean")
    time_column: str | None = Field(default=None, description="With source_url: the time column; detected when "
                                                               "absent")
    value_column: str | None = Field(default=None, description="With source_url: the column to audit, by name; "
                                                                "detected when absent")
    sheet: str | None = Field(default=None, description="With source_url to a spreadsheet: the sheet to read; by "
                                                         "default the first that holds a table")
    header_row: int | None = Field(default=None, ge=1, description="With source_url: the row naming the columns "
                                                                     "(from 1); found by default")


class SourceIn(_Strict):
    name: str | None = None
    url: str | None = None
    notes: str | None = None


class CovariateIn(_Strict):
    name: str = Field(min_length=1, description="What the factor is, e.g. 'ENSO index'; one name per covariate")
    time: list[Cell] = Field(description="Times written like the series' own; start max_lag steps earlier to "
                                         "use every point")
    value: list[Cell] = Field(description="Numbers; null, '', 'NA' or 'NaN' when missing")
    max_lag: int | None = Field(default=None, ge=0, description="Largest lag tried, in steps of the series (months "
                                "for monthly data); default two years, at most a quarter of the record")


COVARIATES_HELP = (f"Known factors to take out (up to {MAX_COVARIATES}): series = trend + each factor at its best "
                   "lag + noise (Foster & Rahmstorf 2011). Read like the series, with the same ingest options "
                   "except the anomaly base; on the series' time step.")


class AuditRequest(_Strict):
    title: str = Field(default="", description="A name for the audit, shown on its report")
    series: SeriesIn | None = Field(default=None, description="The data; leave out to fetch them from source_url")
    source_url: str | None = Field(
        default=None, description="When no series is given: a link to a CSV, text or spreadsheet file (https), "
                                  "fetched by the service; where it came from (final address, time, HTTP status, "
                                  "size, SHA-256) is kept in the answer's inputs.provenance")
    covariate_columns: list[str] = Field(default_factory=list, description="With source_url: other numeric columns "
                                         "of the linked file to adjust for, by name")
    claim: ClaimIn
    options: OptionsIn = Field(default_factory=OptionsIn)
    covariates: list[CovariateIn] = Field(default_factory=list, description=COVARIATES_HELP + " The answer then "
                                          "holds 'adjustment', with a full audit of the adjusted series.")
    source: SourceIn = Field(default_factory=SourceIn)
    ingest: IngestIn = Field(default_factory=IngestIn)

    model_config = ConfigDict(extra="forbid", json_schema_extra={"examples": [{
        "title": "Has the (invented) province stopped warming since 1998?",
        "series": {"time": EXAMPLE_YEARS, "value": EXAMPLE_VALUES, "label": "Annual temperature anomaly",
                   "units": "°C"},
        "claim": {"start": 1998, "end": 2012, "kind": "pause",
                  "text": "The province has not warmed since 1998", "claimant": "An invented columnist",
                  "outlet": "An invented weekly", "made_on": "2013-03-01"},
        "options": {"confidence": 0.95, "noise": "ar1", "simulations": 2000, "seed": 12345},
        "source": {"name": "Invented demo data", "notes": "Worked example for the API documentation"},
    }, {
        "title": "The same claim once an (invented) ENSO-like index is taken out",
        "series": {"time": EXAMPLE_YEARS, "value": EXAMPLE_ADJUSTABLE_VALUES, "label": "Annual temperature anomaly",
                   "units": "°C"},
        "claim": {"start": 1998, "end": 2013, "kind": "pause"},
        "options": {"simulations": 2000, "seed": 12345},
        "covariates": [{"name": "ENSO-like index", "time": EXAMPLE_INDEX_YEARS, "value": EXAMPLE_INDEX,
                        "max_lag": 2}],
    }]})


class MultipartAuditForm(BaseModel):
    """The multipart/form-data form of POST /api/v1/audits (documentation only; the JSON names are reused)."""

    file: bytes = Field(description="The data file: CSV, plain text (columns separated by spaces, comment lines "
                                    "on top), .xlsx or .ods, long or year-by-month",
                        json_schema_extra={"format": "binary"})
    title: str | None = None
    claim_start: str = Field(description="Start of the claimed window: " + CLAIM_TIME_HELP)
    claim_end: str = Field(description="End of the claimed window: " + CLAIM_TIME_HELP)
    claim_kind: ClaimKind = "pause"
    claim_text: str | None = Field(default=None, description="The claim's words, as said or written")
    claim_claimant: str | None = Field(default=None, description="Who made the claim")
    claim_outlet: str | None = Field(default=None, description="Where it appeared")
    claim_made_on: str | None = Field(default=None, description="When it was made, YYYY-MM-DD")
    claim_source_url: str | None = Field(default=None, description="Where the claim can be read")
    label: str | None = Field(default=None, description="What the series measures (the column name when absent)")
    units: str | None = Field(default=None, description="Units of the values")
    time_column: str | None = Field(default=None, description="Detected when absent")
    value_column: str | None = Field(default=None, description="The column to audit, by name; detected when absent")
    sheet: str | None = Field(default=None, description="A spreadsheet's sheet; the first holding a table by default")
    header_row: int | None = Field(default=None, description="The row naming the columns (from 1); found by default")
    seasonal: Literal["auto", "remove", "keep"] = Field(default="auto", description="As in the JSON options")
    data_url: str | None = Field(default=None, description="Instead of a file: a link to the data, fetched by the "
                                                           "service")
    confidence: float | None = None
    noise: AuditNoise | None = None
    simulations: int | None = None
    seed: int | None = None
    reference_start: str | None = Field(default=None, description="Written like a window edge")
    reference_end: str | None = None
    rate_unit: RateUnit | None = None
    decimal_comma: bool | None = None
    missing_sentinels: str | None = Field(default=None, description="Comma-separated, e.g. '-999,-99.99'")
    covariate_columns: str | None = Field(
        default=None, description="Other numeric columns of the file to adjust for, comma-separated (or the field "
                                  "repeated); the answer then holds 'adjustment'")
    covariate_max_lag: int | None = Field(default=None, description="Largest lag tried for every covariate, in "
                                                                    "steps of the series; default two years")
    source_name: str | None = None
    source_url: str | None = None
    source_notes: str | None = None


class VerdictOut(BaseModel):
    model_config = ConfigDict(extra="allow")
    code: str
    headline: str
    summary: str


class LinksOut(BaseModel):
    self: str = Field(description="The API resource")
    report: str = Field(description="The report page")
    data_csv: str = Field(description="The data as audited, as CSV")
    charts: dict[str, str] = Field(description="Each chart of the report, as SVG, by name")


class AuditOut(BaseModel):
    """The stored audit: the result document plus where it lives. Only a create answer holds owner_token."""

    model_config = ConfigDict(extra="allow")
    id: str
    title: str
    created_at: str = Field(description="UTC, ISO 8601")
    report_url: str
    data_url: str
    links: LinksOut = Field(description="Absolute when TRENDAUDIT_PUBLIC_BASE_URL is set, else paths")
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
    adjustment: dict[str, Any] | None = Field(
        default=None, description="With covariates: each factor's coefficient, range, lag and share of the "
                                  "variance, the residual spread before and after, and 'audit', the adjusted "
                                  "series' own audit in this same shape; null without covariates")
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


class CorrelationPage(AuditPage):
    """The same shape as the audits' list; each summary holds the verdict, the series' labels and the window."""


class TrendRequest(_Strict):
    series: SeriesIn
    start: Edge | None = Field(default=None, description="Start of the window: " + CLAIM_TIME_HELP)
    end: Edge | None = Field(default=None, description="End of the window, written like the start")
    noise: TrendMethod = Field(default="ar1", description="Noise model behind 'ci' and 'p_value'")
    confidence: float = Field(default=0.95, gt=0.5, lt=1.0)
    covariates: list[CovariateIn] = Field(default_factory=list, description=COVARIATES_HELP + " Fitted over the "
                                          "window; the answer then holds 'adjustment'.")
    lag_rule: LagRule = Field(default="ls", description="How each covariate's lag is chosen: 'ls' the best "
                              "least-squares fit, 'aic' the best AR(1)-error likelihood")

    model_config = ConfigDict(extra="forbid", json_schema_extra={"examples": [{
        "series": {"time": EXAMPLE_YEARS, "value": EXAMPLE_VALUES},
        "start": 1980, "end": 2024, "noise": "ar1", "confidence": 0.95,
    }, {
        "series": {"time": EXAMPLE_YEARS, "value": EXAMPLE_ADJUSTABLE_VALUES},
        "covariates": [{"name": "ENSO-like index", "time": EXAMPLE_INDEX_YEARS, "value": EXAMPLE_INDEX}],
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


class FactorOut(BaseModel):
    name: str
    coefficient: float | None = Field(description="Series units per covariate unit")
    ci: list[float | None] = Field(description="[lo, hi], allowing for the residuals' autocorrelation")
    stderr: float | None
    p_value: float | None
    lag: int = Field(description="Chosen lag, in steps of the series")
    lag_years: float
    variance_share: float | None = Field(description="Variance of the factor's contribution over the series'")


class TrendAdjustmentOut(BaseModel):
    factors: list[FactorOut]
    residual_sd_raw: float | None = Field(description="Spread about a straight line, on the points used")
    residual_sd_adjusted: float | None = Field(description="Spread about trend plus factors")
    trend_slope: float | None = Field(description="Per year, with the factors in the model")
    trend_ci: list[float | None]
    trend_p_value: float | None
    n_used: int
    dropped_times: list[float] = Field(description="Window times without every covariate at every lag tried")
    lag_rule: str
    noise: str = Field(description="Noise model of the ranges ('ar1' stands in for 'gls_ar1' and 'hac')")


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
    window: dict[str, Any] | None = Field(default=None, description="The edges as given and as resolved, the "
                                          "first and last period inside and the number of points")
    units: str = "per year"
    methods: list[MethodOut]
    mann_kendall: MannKendallOut
    adjustment: TrendAdjustmentOut | None = Field(default=None, description="With covariates; else null")


class CorrelationOptionsIn(_Strict):
    simulations: int | None = Field(default=None, description="Simulated series in the null")
    seed: int | None = Field(default=None, description="Seed; the audit draws and records one when absent")
    confidence: float | None = Field(default=None, description="Confidence level of the ranges and the tests")
    noise: AuditNoise | None = Field(default=None, description="Noise model of the null and the slope's range")


class CorrelationRequest(_Strict):
    title: str = Field(default="", description="A name for the audit, shown on its report")
    driver: SeriesIn = Field(description="What is thought to move the response, e.g. CO2 in ppm")
    response: SeriesIn = Field(description="What moves; its times are the grid the driver is matched to")
    window_years: float = Field(default=15.0, description="Length of the rolling windows, in years")
    transform: Transform = Field(default="none", description="How the response follows the driver: 'log' "
                                 "(slope per doubling), 'cumulative' (a running total, e.g. of emissions)")
    options: CorrelationOptionsIn = Field(default_factory=CorrelationOptionsIn)
    source: SourceIn = Field(default_factory=SourceIn)
    claim: ClaimRecordIn | None = Field(default=None, description="The claim the audit answers")

    model_config = ConfigDict(extra="forbid", json_schema_extra={"examples": [{
        "title": "The (invented) province warmed while its CO2 rose: do weak 15-year windows break the link?",
        "driver": {"time": EXAMPLE_DRIVER_YEARS, "value": EXAMPLE_DRIVER, "label": "CO2", "units": "ppm"},
        "response": {"time": EXAMPLE_DRIVER_YEARS, "value": EXAMPLE_RESPONSE, "label": "Temperature anomaly",
                     "units": "°C"},
        "window_years": 15, "transform": "log",
        "options": {"simulations": 2000, "seed": 12345, "confidence": 0.95},
        "source": {"name": "Invented demo data", "notes": "Worked example for the API documentation"},
    }]})


class RecordHead(BaseModel):
    """Who and where a stored record is, before its document. Only a create answer holds owner_token."""

    model_config = ConfigDict(extra="allow")
    id: str
    kind: str
    title: str
    created_at: str = Field(description="UTC, ISO 8601")
    url: str
    report_url: str
    data_url: str
    links: LinksOut
    owner_token: str | None = Field(default=None, description="Shown once, on creation: keep it to delete the audit")


class CorrelationOut(RecordHead):
    """The stored correlation audit: its document plus where it lives. Only a create answer holds owner_token."""

    verdict: VerdictOut
    r_levels: float | None = Field(description="Correlation of the levels over the shared times")
    r_detrended: float | None = Field(description="... of the series with their own straight lines taken out")
    r_differences: float | None = Field(description="... of step-to-step changes")
    slope: float | None = Field(description="Response per unit of the (transformed) driver, full record")
    slope_ci: list[float | None]
    per_doubling: dict[str, Any] | None = Field(description="With 'log': slope times ln 2, and its range")
    rolling: dict[str, Any] = Field(description="window_years, starts, r, share_below_half, ...")
    null: dict[str, Any] = Field(description="share_below_half, probability_min_r, ... under the simulated null")
    warnings: list[str]
    inputs: dict[str, Any]
    software_version: str
    seed: int


class ClaimSeriesIn(_Strict):
    start: Edge = Field(description="First time of the series the claim is about")
    end: Edge = Field(description="Last time of the series")
    sampling: Literal["monthly", "quarterly", "annual", "irregular"] | None = None


class ClaimParseRequest(_Strict):
    text: str = Field(description="The claim's sentence, as said or written")
    made_on: str | None = Field(default=None, description="When it was said, YYYY-MM-DD: 'for 15 years' counts "
                                                          "back from it")
    series: ClaimSeriesIn | None = Field(default=None, description="The series' span and sampling, for claims "
                                                                   "that run to the end of the record")

    model_config = ConfigDict(extra="forbid", json_schema_extra={"examples": [{
        "text": "Temperatures have not risen for the past eighteen years", "made_on": "2015-06-01"}]})


class ReadingOut(BaseModel):
    kind: str
    start: str
    end: str
    why: str


class ClaimParseOut(BaseModel):
    kind: str
    start: str = Field(description="The window's start, written as a series writes times")
    end: str
    start_instant: float = Field(description="What the start resolves to (decimal year)")
    end_instant: float
    spans: dict[str, list[int]] = Field(description="Character spans [from, to) of the words each part was read "
                                                    "from: kind, start, end, window")
    confidence: float
    alternatives: list[ReadingOut]
    negated: bool = Field(description="The sentence denies the claim rather than making it")
    negation_span: list[int] | None
    notes: list[str]
