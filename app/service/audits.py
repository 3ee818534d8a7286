"""From a request to a stored audit: the one path the JSON body, the multipart upload, the desk and the CLI share.

    request ─> AuditJob (Series + Claim + AuditOptions + what to store) ─> run_audit ─> audit_document ─> store

Cheap checks (sizes, string lengths, the claim and options, the window against the data) run before
the job takes a compute slot, so a bad request never waits in the queue.
"""

from __future__ import annotations

import dataclasses
import hashlib
import re
from dataclasses import dataclass
from typing import Any, Sequence

from app import __version__
from app.audit import AuditOptions, Claim, audit_document, run_audit
from app.audit.claim import check_claim, check_options
from app.errors import ClaimError, InputError, Location
from app.ingest import IngestOptions, Series, check_window_in_series, read_csv_text, series_from_json
from app.ingest.cells import CellError
from app.ingest.numbers import normalise
from app.ingest.times import parse_time
from app.service.covariates import (FORM_COVARIATE_FIELDS, CovariateSeries, check_lag_cells, covariate_payload,
                                    covariates_from_json, covariates_from_table)
from app.service.limits import check_string_lengths, check_work
from app.service.payloads import series_payload
from app.settings import Settings
from app.store import AUDIT, AuditRecord, AuditRepository, NewAudit


@dataclass(frozen=True)
class AuditJob:
    title: str
    series: Series
    claim: Claim
    options: AuditOptions
    input_document: dict[str, Any]  # everything needed to run the same audit again
    covariates: tuple[CovariateSeries, ...] = ()
    # (pattern, field): errors the computation raises about a field matching the pattern name this field instead
    field_names: tuple[tuple[str, str], ...] = ()


def with_defaults(values: dict[str, Any], settings: Settings) -> dict[str, Any]:
    """The request's options with the service's defaults for what was left out."""
    given = {k: v for k, v in values.items() if v is not None}
    return {"confidence": settings.default_confidence, "noise": settings.default_noise,
            "simulations": settings.default_simulations, **given}


def audit_options(values: dict[str, Any], settings: Settings) -> AuditOptions:
    """Options from the request, with the service's defaults for what was left out; checked."""
    options = AuditOptions(**with_defaults(values, settings))
    check_options(options, settings.max_simulations)
    return options


def claim_time(value: float | int | str, field: str) -> float:
    """A claimed window edge: numbers are decimal years as written; a year-month, quarter or date string
    is placed mid-period exactly as the same text in the data would be."""
    if isinstance(value, str):
        text = normalise(value)
        try:
            return float(text)
        except ValueError:
            pass
        try:
            return parse_time(text).decimal_year
        except CellError as error:
            raise ClaimError(error.message, location=Location(field=field), fix=error.fix) from None
    return float(value)


def make_claim(start: float | int | str, end: float | int | str, kind: str, prefix: str = "claim.") -> Claim:
    return Claim(start=claim_time(start, f"{prefix}start"), end=claim_time(end, f"{prefix}end"), kind=kind)


def default_title(series: Series, claim: Claim) -> str:
    return f"{series.label or 'Series'}: {claim.kind} claimed {claim.start:g} to {claim.end:g}"


def prepare_job(*, title: str, series: Series, claim: Claim, options: AuditOptions, source: dict[str, Any],
                ingest: dict[str, Any], settings: Settings, covariates: Sequence[CovariateSeries] = (),
                covariate_fields: Sequence[str] = (), field_names: tuple[tuple[str, str], ...] = ()) -> AuditJob:
    check_claim(claim)
    check_window_in_series(series, claim.start, claim.end)
    check_work(series.n, options.simulations, settings.max_simulated_points)
    check_lag_cells(series, covariates, covariate_fields or [f"covariates[{i}].max_lag" for i in range(len(covariates))],
                    work_limit=settings.lag_search_budget)
    title = title.strip() or default_title(series, claim)
    check_string_lengths({"title": title}, settings.max_string_length)
    document = {
        "format": ingest.get("format"),
        "series": series_payload(series),
        "claim": dataclasses.asdict(claim),
        "options": dataclasses.asdict(options),
        "covariates": [covariate_payload(c) for c in covariates],
        "source": source,
        "ingest": ingest,
    }
    return AuditJob(title=title, series=series, claim=claim, options=options, input_document=document,
                    covariates=tuple(covariates), field_names=field_names)


def string_times(times: Sequence[Any], field: str) -> dict[str, str]:
    """The times written as text, keyed by where they sit, for the length check."""
    return {f"{field}[{i}]": t for i, t in enumerate(times) if isinstance(t, str)}


def job_from_json(request: Any, settings: Settings) -> AuditJob:
    """``request``: the JSON body, validated against the API's ``AuditRequest`` schema."""
    covariate_texts = {}
    for i, cov in enumerate(request.covariates):
        covariate_texts.update({f"covariates[{i}].name": cov.name, **string_times(cov.time, f"covariates[{i}].time")})
    check_string_lengths({"title": request.title, "series.label": request.series.label,
                          "series.units": request.series.units, "source.name": request.source.name,
                          "source.url": request.source.url, "source.notes": request.source.notes,
                          **string_times(request.series.time, "series.time"), **covariate_texts},
                         settings.max_string_length)
    ingest_values = request.ingest.model_dump()
    ingest_options = IngestOptions(
        decimal_comma=ingest_values["decimal_comma"],
        missing_sentinels=tuple(ingest_values["missing_sentinels"]),
        anomaly_base=ingest_values["anomaly_base"], annual_means=ingest_values["annual_means"],
        max_points=settings.max_points,
        **({"min_months_per_year": ingest_values["min_months_per_year"]}
           if ingest_values["min_months_per_year"] is not None else {}))
    series = series_from_json(request.series.model_dump(exclude_none=True), ingest_options, field="series")
    options = audit_options(request.options.model_dump(), settings)
    claim = make_claim(request.claim.start, request.claim.end, request.claim.kind)
    covariates = covariates_from_json([c.model_dump() for c in request.covariates], ingest_options)
    return prepare_job(title=request.title, series=series, claim=claim, options=options,
                       source=request.source.model_dump(), settings=settings,
                       ingest={"format": "json", "options": dataclasses.asdict(ingest_options)}, covariates=covariates)


def job_from_csv(data: str | bytes, *, claim: Claim, options: AuditOptions, settings: Settings, title: str = "",
                 time_column: str | None = None, value_column: str | None = None, decimal_comma: bool = False,
                 missing_sentinels: tuple[float, ...] = (), source: dict[str, Any] | None = None,
                 filename: str | None = None, covariate_columns: Sequence[str] = (),
                 covariate_max_lag: int | None = None) -> AuditJob:
    """A CSV upload; ``covariate_columns`` names other numeric columns to adjust for (errors about them
    point at the fields ``covariate_columns`` and ``covariate_max_lag``)."""
    source = source or {}
    check_string_lengths({"title": title, "time_column": time_column, "value_column": value_column,
                          "filename": filename, **{f"source_{k}": v for k, v in source.items()},
                          **({"covariate_columns": max(covariate_columns, key=len)} if covariate_columns else {})},
                         settings.max_string_length)
    ingest_options = IngestOptions(time_column=time_column, value_column=value_column, decimal_comma=decimal_comma,
                                   missing_sentinels=missing_sentinels, max_points=settings.max_points)
    table = read_csv_text(data, ingest_options)
    covariates = covariates_from_table(table, covariate_columns, covariate_max_lag)
    raw = data.encode("utf-8") if isinstance(data, str) else data
    return prepare_job(
        title=title, series=table.series, claim=claim, options=options, source=source, settings=settings,
        ingest={"format": "csv", "options": dataclasses.asdict(ingest_options), "filename": filename,
                "file_sha256": hashlib.sha256(raw).hexdigest(), "delimiter": table.delimiter,
                "columns": list(table.columns), "time_column": table.time_column,
                "value_column": table.value_column, "month_column": table.month_column,
                "covariate_columns": list(covariate_columns)},
        covariates=covariates, covariate_fields=["covariate_max_lag"] * len(covariates),
        field_names=FORM_COVARIATE_FIELDS)


def compute_document(job: AuditJob) -> dict[str, Any]:
    """The CPU-bound part: runs in the compute pool (or directly, from the CLI)."""
    try:
        result = run_audit(job.series, job.claim, job.options, covariates=[c.covariate for c in job.covariates])
    except InputError as error:
        raise rename_fields(error, {}, job.field_names) from None
    return audit_document(result)


def store_audit(audits: AuditRepository, job: AuditJob, document: dict[str, Any]) -> tuple[AuditRecord, str]:
    seed = document.get("seed")
    input_document = {**job.input_document, "options": {**job.input_document["options"], "seed": seed}}
    verdict = document.get("verdict") or {}
    summary = {"verdict": {"code": verdict.get("code"), "headline": verdict.get("headline")},
               "claim": input_document["claim"], "n": job.series.n, "label": job.series.label,
               "covariates": [c.name for c in job.covariates]}
    return audits.create(NewAudit(
        title=job.title, input_document=input_document, result_document=document,
        input_sha256=(document.get("inputs") or {}).get("sha256") or job.series.sha256(), seed=seed,
        software_version=document.get("software_version") or __version__, summary=summary, kind=AUDIT))


def rename_fields(error: InputError, names: dict[str, str],
                  patterns: Sequence[tuple[str, str]] = ()) -> InputError:
    """Points an error at the form field the user filled in, when its JSON name differs: an exact name in
    ``names``, else the first (regular expression, field) pair in ``patterns`` that matches the whole name."""
    field = error.location.field
    if field is None:
        return error
    new = names.get(field) or next((name for pattern, name in patterns if re.fullmatch(pattern, field)), None)
    if new is not None:
        error.location = dataclasses.replace(error.location, field=new)
    return error
