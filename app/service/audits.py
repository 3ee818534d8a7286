"""From a request to a stored audit: the one path the JSON body, the multipart upload, the desk and the CLI share.

    request ─> AuditJob (Series + Claim + AuditOptions + what to store) ─> run_audit ─> audit_document ─> store

Cheap checks (sizes, string lengths, the claim and options, the window against the data) run before
the job takes a compute slot, so a bad request never waits in the queue.
"""

from __future__ import annotations

import dataclasses
import hashlib
import re
from dataclasses import dataclass, field
from typing import Any, Sequence

from app import __version__
from app.audit import AuditOptions, Claim, audit_document, run_audit
from app.audit.claim import check_claim, check_options
from app.errors import ClaimError, InputError, Location
from app.ingest import IngestOptions, ParsedTable, Series, check_window_in_series, series_from_json
from app.service.claims import (ClaimInput, ClaimRecord, Edge, claim_record, derived_seed, edge_instant, listed_claim,
                                 resolved_claim, search_text, window_echo)
from app.service.covariates import (FORM_COVARIATE_FIELDS, CovariateSeries, check_lag_cells, covariate_payload,
                                    covariates_from_json, covariates_from_table)
from app.service.limits import check_string_lengths, check_work
from app.service.payloads import series_payload
from app.service.sources import (AUTO, climatology_period, read_file, read_source_url, table_inputs,
                                 with_seasonal_choice)
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
    record: ClaimRecord = ClaimRecord()  # who claimed it, where and when
    window: dict[str, Any] = dataclasses.field(default_factory=dict)  # the edges as given and as resolved
    # (pattern, field): errors the computation raises about a field matching the pattern name this field instead
    field_names: tuple[tuple[str, str], ...] = ()
    # How the series was read and prepared (value column, link provenance, seasonal cycle): added to the
    # result document's ``inputs`` so the report and the JSON answer say it.
    recorded_inputs: dict[str, Any] = field(default_factory=dict)


def with_defaults(values: dict[str, Any], settings: Settings) -> dict[str, Any]:
    """The request's options with the service's defaults for what was left out."""
    given = {k: v for k, v in values.items() if v is not None}
    return {"confidence": settings.default_confidence, "noise": settings.default_noise,
            "simulations": settings.default_simulations, **given}


def audit_options(values: dict[str, Any], settings: Settings, prefix: str = "options.") -> AuditOptions:
    """Options from the request, with the service's defaults for what was left out; checked. The reference
    period's edges mean what a window's edges mean; the seasonal choice travels beside the options
    (``prepare_job``), not in them."""
    values = {k: v for k, v in values.items() if k != "seasonal"}
    values = {**values, **{f"reference_{role}": claim_time(values[f"reference_{role}"],
                                                           f"{prefix}reference_{role}", role)
                           for role in ("start", "end") if values.get(f"reference_{role}") is not None}}
    options = AuditOptions(**with_defaults(values, settings))
    check_options(options, settings.max_simulations)
    return options


def claim_time(value: float | int | str, field: str, role: str = "start") -> float:
    """A window edge as the instant it stands for (``app.ingest.window_edges``): a whole year, quarter, month or
    day begins at its first instant as a start and includes all of it as an end; a decimal year is an instant."""
    return edge_instant(value, role, field)


def make_claim(start: Edge, end: Edge, kind: str, prefix: str = "claim.") -> Claim:
    """A claim whose edges are resolved without a series (every series it is audited against shares them)."""
    return Claim(start=edge_instant(start, "start", f"{prefix}start"), end=edge_instant(end, "end", f"{prefix}end"),
                 kind=kind)


def given_claim(stored: dict[str, Any], max_length: int) -> ClaimInput:
    """A stored audit's claim as it was given (its edges as written, its record), to audit again."""
    return ClaimInput(kind=stored["kind"], start=stored.get("start_given", stored["start"]),
                      end=stored.get("end_given", stored["end"]), record=claim_record(stored, max_length))


def default_title(series: Series, claim: Claim, window: dict[str, Any]) -> str:
    """The series and the claim, its window named by the periods it holds (1998 to 2012)."""
    first, last = window.get("first"), window.get("last")
    span = f"{first} to {last}" if first else f"{claim.start:g} to {claim.end:g}"
    return f"{series.label or 'Series'}: {claim.kind} claimed {span}"


def prepare_job(*, title: str, series: Series, claim: ClaimInput, options: AuditOptions, source: dict[str, Any],
                ingest: dict[str, Any], settings: Settings, covariates: Sequence[CovariateSeries] = (),
                covariate_fields: Sequence[str] = (), field_names: tuple[tuple[str, str], ...] = (),
                seasonal: str | None = AUTO, seasonal_field: str = "seasonal",
                recorded_inputs: dict[str, Any] | None = None) -> AuditJob:
    """``series`` as read; a seasonal cycle is taken out (or kept) here, so every door treats it alike."""
    resolved = resolved_claim(claim, series)
    check_claim(resolved)
    as_read = series
    series, seasonal_record = with_seasonal_choice(
        series, seasonal or AUTO, climatology_period(series, options.reference_start, options.reference_end),
        seasonal_field)
    check_window_in_series(series, resolved.start, resolved.end)
    check_work(series.n, options.simulations, settings.max_simulated_points)
    check_lag_cells(series, covariates, covariate_fields or [f"covariates[{i}].max_lag" for i in range(len(covariates))],
                    work_limit=settings.lag_search_budget)
    window = window_echo(claim, resolved, series)
    title = title.strip() or default_title(series, resolved, window)
    check_string_lengths({"title": title}, settings.max_string_length)
    covariate_payloads = [covariate_payload(c) for c in covariates]
    seed_from = "given" if options.seed is not None else "inputs"
    if options.seed is None:
        options = dataclasses.replace(options, seed=derived_seed(
            series.sha256(), resolved.kind, resolved.start, resolved.end,
            {k: v for k, v in dataclasses.asdict(options).items() if k != "seed"}, covariate_payloads))
    document = {
        "format": ingest.get("format"),
        "series": series_payload(as_read),
        "seasonal": seasonal_record["choice"],
        # start and end as audited (instants), beside the edges as given and who claimed it, where and when
        "claim": {**dataclasses.asdict(resolved), "start_given": claim.start, "end_given": claim.end,
                  **claim.record.as_dict()},
        "options": dataclasses.asdict(options),
        "seed_from": seed_from,
        "covariates": covariate_payloads,
        "source": source,
        "ingest": ingest,
    }
    return AuditJob(title=title, series=series, claim=resolved, options=options, input_document=document,
                    covariates=tuple(covariates), field_names=field_names, record=claim.record,
                    window=window,
                    recorded_inputs={**(recorded_inputs or {}),
                                     # a series with no seasons to test keeps the plain document
                                     **({"seasonal": seasonal_record} if seasonal_record["tested"] else {})})


def string_times(times: Sequence[Any], field: str) -> dict[str, str]:
    """The times written as text, keyed by where they sit, for the length check."""
    return {f"{field}[{i}]": t for i, t in enumerate(times) if isinstance(t, str)}


def job_from_json(request: Any, settings: Settings) -> AuditJob:
    """``request``: the JSON body, validated against the API's ``AuditRequest`` schema."""
    covariate_texts = {}
    for i, cov in enumerate(request.covariates):
        covariate_texts.update({f"covariates[{i}].name": cov.name, **string_times(cov.time, f"covariates[{i}].time")})
    series_in = request.series
    check_string_lengths({"title": request.title, "series.label": series_in and series_in.label,
                          "series.units": series_in and series_in.units, "source.name": request.source.name,
                          "source.url": request.source.url, "source.notes": request.source.notes,
                          "source_url": request.source_url, "ingest.sheet": request.ingest.sheet,
                          "ingest.value_column": request.ingest.value_column,
                          "ingest.time_column": request.ingest.time_column,
                          **{f"covariate_columns[{i}]": name for i, name in enumerate(request.covariate_columns)},
                          **(string_times(series_in.time, "series.time") if series_in else {}), **covariate_texts},
                         settings.max_string_length)
    ingest_values = request.ingest.model_dump()
    ingest_options = IngestOptions(
        time_column=ingest_values["time_column"], value_column=ingest_values["value_column"],
        sheet=ingest_values["sheet"], header_row=ingest_values["header_row"],
        decimal_comma=ingest_values["decimal_comma"],
        missing_sentinels=tuple(ingest_values["missing_sentinels"]),
        anomaly_base=ingest_values["anomaly_base"], annual_means=ingest_values["annual_means"],
        max_points=settings.max_points,
        **({"min_months_per_year": ingest_values["min_months_per_year"]}
           if ingest_values["min_months_per_year"] is not None else {}))
    options = audit_options(request.options.model_dump(), settings)
    claim = ClaimInput(kind=request.claim.kind, start=request.claim.start, end=request.claim.end,
                       record=claim_record(request.claim.model_dump(), settings.max_string_length))
    if request.series is None:
        return _job_from_link(request, ingest_options, options, claim, settings)
    series = series_from_json(request.series.model_dump(exclude_none=True), ingest_options, field="series")
    covariates = covariates_from_json([c.model_dump() for c in request.covariates], ingest_options)
    return prepare_job(title=request.title, series=series, claim=claim, options=options,
                       source=request.source.model_dump(), settings=settings,
                       ingest={"format": "json", "options": dataclasses.asdict(ingest_options)}, covariates=covariates,
                       seasonal=request.options.seasonal, seasonal_field="options.seasonal")


def _job_from_link(request: Any, ingest_options: IngestOptions, options: AuditOptions, claim: ClaimInput,
                   settings: Settings) -> AuditJob:
    """No series in the body: the data are fetched from ``source_url``; covariates are then its other columns."""
    if not request.source_url:
        raise InputError("the request has neither a series nor a link to one", location=Location(field="series"),
                         fix="Send the series' times and values, or the data file's address as source_url")
    table, provenance = read_source_url(request.source_url, ingest_options, settings)
    covariates = covariates_from_table(table, request.covariate_columns, None)
    source = {**request.source.model_dump(), "url": request.source.url or request.source_url}
    return prepare_job(title=request.title, series=table.series, claim=claim, options=options, source=source,
                       settings=settings, ingest={"format": "link", "options": dataclasses.asdict(ingest_options),
                                                  "source_url": request.source_url, **table_inputs(table)},
                       covariates=covariates, seasonal=request.options.seasonal, seasonal_field="options.seasonal",
                       recorded_inputs={**table_inputs(table), "provenance": provenance})


def job_from_file(data: str | bytes | None, *, claim: ClaimInput, options: AuditOptions, settings: Settings,
                  title: str = "", time_column: str | None = None, value_column: str | None = None,
                  decimal_comma: bool = False, missing_sentinels: tuple[float, ...] = (),
                  source: dict[str, Any] | None = None, filename: str | None = None,
                  covariate_columns: Sequence[str] = (), covariate_max_lag: int | None = None,
                  sheet: str | None = None, header_row: int | None = None, seasonal: str | None = AUTO,
                  data_url: str | None = None, label: str | None = "", units: str | None = "",
                  fetched: tuple[ParsedTable, dict[str, Any]] | None = None) -> AuditJob:
    """An uploaded file of any format this service reads (spreadsheet, CSV, plain text), or, with no file, the
    one at ``data_url`` (the form field naming the link; ``fetched``, the table and provenance already read from
    it, saves fetching it twice); ``covariate_columns`` names other numeric columns to adjust for (errors about them
    point at the fields ``covariate_columns`` and ``covariate_max_lag``)."""
    source = source or {}
    check_string_lengths({"title": title, "time_column": time_column, "value_column": value_column,
                          "filename": filename, "sheet": sheet, "data_url": data_url, "label": label,
                          "units": units, **{f"source_{k}": v for k, v in source.items()},
                          **({"covariate_columns": max(covariate_columns, key=len)} if covariate_columns else {})},
                         settings.max_string_length)
    ingest_options = IngestOptions(time_column=time_column, value_column=value_column, decimal_comma=decimal_comma,
                                   missing_sentinels=missing_sentinels, max_points=settings.max_points, sheet=sheet,
                                   header_row=header_row, label=label or "", units=units or "")
    recorded: dict[str, Any] = {}
    if data is None and data_url:
        table, recorded["provenance"] = fetched or read_source_url(data_url, ingest_options, settings,
                                                                   field="data_url")
        raw = b""
        ingest = {"format": "link", "source_url": data_url, "content_sha256": recorded["provenance"]["sha256"]}
    else:
        table = read_file(data if data is not None else b"", ingest_options, settings)
        raw = data.encode("utf-8") if isinstance(data, str) else (data or b"")
        ingest = {"format": _format_of(table), "filename": filename, "file_sha256": hashlib.sha256(raw).hexdigest()}
    covariates = covariates_from_table(table, covariate_columns, covariate_max_lag)
    return prepare_job(
        title=title, series=table.series, claim=claim, options=options, source=source, settings=settings,
        ingest={**ingest, "options": dataclasses.asdict(ingest_options), "delimiter": table.delimiter,
                "columns": list(table.columns), "month_column": table.month_column,
                "covariate_columns": list(covariate_columns), **table_inputs(table)},
        covariates=covariates, covariate_fields=["covariate_max_lag"] * len(covariates),
        field_names=FORM_COVARIATE_FIELDS, seasonal=seasonal, recorded_inputs={**table_inputs(table), **recorded})


def _format_of(table: ParsedTable) -> str:
    if table.delimiter == "spreadsheet":
        return "spreadsheet"
    return "text" if table.delimiter in ("whitespace", "fixed-width") else "csv"


def compute_document(job: AuditJob) -> dict[str, Any]:
    """The CPU-bound part: runs in the compute pool (or directly, from the CLI)."""
    try:
        result = run_audit(job.series, job.claim, job.options, covariates=[c.covariate for c in job.covariates])
    except InputError as error:
        raise rename_fields(error, {}, job.field_names) from None
    document = audit_document(result)
    document["inputs"] = {**document["inputs"], **job.recorded_inputs}
    return {**document, "claim": {**document["claim"], **job.record.as_dict(), "window": job.window}}


def store_audit(audits: AuditRepository, job: AuditJob, document: dict[str, Any], *, job_key: str | None = None,
                owner_token_sha256: str | None = None) -> tuple[AuditRecord, str]:
    """Stores the audit; a batch item's (``job_key``, unique) is stored once however often its job runs, and is
    owned by its batch's owner token."""
    seed = document.get("seed")
    input_document = {**job.input_document, "options": {**job.input_document["options"], "seed": seed}}
    verdict = document.get("verdict") or {}
    summary = {"verdict": {"code": verdict.get("code"), "headline": verdict.get("headline")},
               "claim": listed_claim(input_document["claim"]), "n": job.series.n, "label": job.series.label,
               "covariates": [c.name for c in job.covariates]}
    return audits.create(NewAudit(search_text=search_text(job.title, job.record),
        title=job.title, input_document=input_document, result_document=document,
        input_sha256=(document.get("inputs") or {}).get("sha256") or job.series.sha256(), seed=seed,
        software_version=document.get("software_version") or __version__, summary=summary, kind=AUDIT,
        job_key=job_key, owner_token_sha256=owner_token_sha256))


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
