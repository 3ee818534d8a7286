"""From a request to a stored driver-response correlation audit, as ``service`` does for the pause audit:

    request ─> CorrelationJob (driver + response Series + CorrelationOptions) ─> run_correlation
            ─> correlation_document ─> store (kind "correlation")

The JSON body, the CLI and the desk share this path. Reading the series and checking the options run
before the job takes a compute slot; the shared-times and window checks run first thing inside it.
"""

from __future__ import annotations

import dataclasses
import hashlib
from dataclasses import dataclass
from typing import Any

from app import __version__
from app.correlation import CorrelationOptions, check_correlation_options, correlation_document, run_correlation
from app.errors import Location, SeriesFormatError
from app.ingest import IngestOptions, Series, series_from_json
from app.service.audits import string_times, with_defaults
from app.service.claims import ClaimRecord, claim_record, derived_seed, listed_claim, search_text
from app.service.columns import extra_column, unusable_column
from app.service.limits import check_string_lengths, check_work
from app.service.payloads import series_payload
from app.service.sources import read_file
from app.settings import Settings
from app.store import CORRELATION, AuditRecord, AuditRepository, NewAudit


@dataclass(frozen=True)
class CorrelationJob:
    title: str
    driver: Series
    response: Series
    options: CorrelationOptions
    max_simulations: int
    input_document: dict[str, Any]  # everything needed to run the same audit again
    record: ClaimRecord = ClaimRecord()  # the claim the audit answers: who said it, where and when


def correlation_options(window_years: float, transform: str, values: dict[str, Any],
                        settings: Settings) -> CorrelationOptions:
    """Options from the request, with the service's defaults for what was left out; checked."""
    options = CorrelationOptions(window_years=window_years, transform=transform, **with_defaults(values, settings))
    check_correlation_options(options, settings.max_simulations)
    return options


def default_correlation_title(driver: Series, response: Series, options: CorrelationOptions) -> str:
    return (f"{response.label or 'Response'} and {driver.label or 'driver'}: "
            f"{options.window_years:g}-year windows")


def prepare_correlation_job(*, title: str, driver: Series, response: Series, options: CorrelationOptions,
                            source: dict[str, Any], ingest: dict[str, Any], settings: Settings,
                            record: ClaimRecord = ClaimRecord()) -> CorrelationJob:
    title = title.strip() or default_correlation_title(driver, response, options)
    check_work(response.n, options.simulations, settings.max_simulated_points)
    check_string_lengths({"title": title}, settings.max_string_length)
    seed_from = "given" if options.seed is not None else "inputs"
    if options.seed is None:
        options = dataclasses.replace(options, seed=derived_seed(
            pair_sha256(driver, response), {k: v for k, v in dataclasses.asdict(options).items() if k != "seed"}))
    document = {"format": ingest.get("format"), "driver": series_payload(driver),
                "response": series_payload(response), "options": dataclasses.asdict(options),
                "seed_from": seed_from, "claim": record.as_dict(), "source": source, "ingest": ingest}
    return CorrelationJob(title=title, driver=driver, response=response, options=options,
                          max_simulations=settings.max_simulations, input_document=document, record=record)


def correlation_job_from_json(request: Any, settings: Settings) -> CorrelationJob:
    """``request``: the JSON body, validated against the API's ``CorrelationRequest`` schema."""
    texts = {"title": request.title, "source.name": request.source.name, "source.url": request.source.url,
             "source.notes": request.source.notes}
    for role in ("driver", "response"):
        given = getattr(request, role)
        texts.update({f"{role}.label": given.label, f"{role}.units": given.units,
                      **string_times(given.time, f"{role}.time")})
    check_string_lengths(texts, settings.max_string_length)
    options = correlation_options(request.window_years, request.transform, request.options.model_dump(), settings)
    reading = IngestOptions(max_points=settings.max_points)
    driver = series_from_json(request.driver.model_dump(exclude_none=True), reading, field="driver")
    response = series_from_json(request.response.model_dump(exclude_none=True), reading, field="response")
    record = claim_record(request.claim.model_dump() if request.claim else None, settings.max_string_length)
    return prepare_correlation_job(title=request.title, driver=driver, response=response, options=options,
                                   source=request.source.model_dump(), settings=settings,
                                   ingest={"format": "json", "options": dataclasses.asdict(reading)}, record=record)


def correlation_job_from_csv(data: str | bytes, *, driver_column: str, response_column: str,
                             options: CorrelationOptions, settings: Settings, title: str = "",
                             time_column: str | None = None, decimal_comma: bool = False,
                             missing_sentinels: tuple[float, ...] = (), source: dict[str, Any] | None = None,
                             filename: str | None = None, record: ClaimRecord = ClaimRecord(),
                             sheet: str | None = None, header_row: int | None = None) -> CorrelationJob:
    """Two numeric columns of one file (CSV, plain text or a spreadsheet's sheet) on its time column: errors name
    ``driver_column`` / ``response_column``."""
    source = source or {}
    check_string_lengths({"title": title, "time_column": time_column, "driver_column": driver_column,
                          "response_column": response_column, "filename": filename,
                          **{f"source_{k}": v for k, v in source.items()}}, settings.max_string_length)
    if driver_column == response_column:
        raise SeriesFormatError(f"the driver and the response are both the column '{driver_column}'",
                                location=Location(field="driver_column"), fix="Name two different columns")
    reading = IngestOptions(time_column=time_column, value_column=response_column, decimal_comma=decimal_comma,
                            missing_sentinels=missing_sentinels, max_points=settings.max_points, sheet=sheet,
                            header_row=header_row)
    table = read_file(data, reading, settings)
    found = extra_column(table, driver_column)
    if found is None:
        raise unusable_column(table, driver_column, "driver", "driver_column")
    driver = found[1]
    raw = data.encode("utf-8") if isinstance(data, str) else data
    return prepare_correlation_job(
        title=title, driver=driver, response=table.series, options=options, source=source, settings=settings,
        ingest={"format": "csv", "options": dataclasses.asdict(reading), "filename": filename,
                "file_sha256": hashlib.sha256(raw).hexdigest(), "delimiter": table.delimiter,
                "columns": list(table.columns), "time_column": table.time_column, "driver_column": found[0],
                "response_column": table.value_column, "month_column": table.month_column}, record=record)


def compute_correlation_document(job: CorrelationJob) -> dict[str, Any]:
    """The CPU-bound part: runs in the compute pool (or directly, from the CLI)."""
    document = correlation_document(run_correlation(job.driver, job.response, job.options,
                                                    max_simulations=job.max_simulations))
    return {**document, "claim": job.record.as_dict()}


def pair_sha256(driver: Series, response: Series) -> str:
    """One hash for the pair: the two series' own hashes, driver first."""
    return hashlib.sha256(f"{driver.sha256()}:{response.sha256()}".encode()).hexdigest()


def store_correlation(audits: AuditRepository, job: CorrelationJob,
                      document: dict[str, Any]) -> tuple[AuditRecord, str]:
    seed = document.get("seed")
    input_document = {**job.input_document, "options": {**job.input_document["options"], "seed": seed}}
    verdict = document.get("verdict") or {}
    summary = {"verdict": {"code": verdict.get("code"), "headline": verdict.get("headline")},
               "driver": job.driver.label, "response": job.response.label,
               "window_years": job.options.window_years, "transform": job.options.transform,
               "n": (document.get("inputs") or {}).get("n"), "claim": listed_claim(job.record.as_dict())}
    return audits.create(NewAudit(search_text=search_text(job.title, job.record),
        title=job.title, input_document=input_document, result_document=document,
        input_sha256=pair_sha256(job.driver, job.response), seed=seed,
        software_version=document.get("software_version") or __version__, summary=summary, kind=CORRELATION))
