"""The desk's driver-and-response audit: two columns of the previewed table, checked for a steady link.

It starts from the same preview as a claim audit (the person switches the form to "driver and
response"), reads the table again exactly as previewed, and runs through the service's own path for
correlation audits (``app.service.correlations``) and compute pool.
"""

from __future__ import annotations

import dataclasses

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse, RedirectResponse

from app.ingest import Series
from app.service.claims import claim_record
from app.service.correlations import CorrelationJob, correlation_job_from_csv, correlation_options
from app.service.limits import check_string_lengths
from app.service.payloads import series_payload
from app.service.records import CORRELATIONS
from app.settings import Settings
from app.web.forms import LINK, DeskForm
from app.web.pages import run_desk_form
from app.web.reading import columns_of_this_sheet, ingest_options, read_table, required, sample_filled, table_text

router = APIRouter(include_in_schema=False)

DRIVER_FIX = "Choose the column that is thought to drive the series"


def _named(series: Series, label: str, units: str) -> Series:
    """The column's series under the name and units the person gave, when they gave them."""
    return dataclasses.replace(series, label=label.strip() or series.label, units=units.strip() or series.units)


def correlation_job(form: DeskForm, filename: str | None, settings: Settings) -> CorrelationJob:
    form = columns_of_this_sheet(sample_filled(form, settings))
    table, sample = read_table(form, settings)  # the same reading as the preview, so errors point at the form
    check_string_lengths({"label": form.label, "units": form.units, "driver_label": form.driver_label,
                          "driver_units": form.driver_units, "source_name": form.source_name,
                          "source_url": form.source_url, "source_notes": form.source_notes},
                         settings.max_string_length)
    window_years, transform, values = form.correlation_values()
    options = correlation_options(window_years, transform, values, settings)
    text, _ = table_text(form, settings)
    ingest = ingest_options(form, settings, sample)
    job = correlation_job_from_csv(
        text, driver_column=required(form.driver_column, "driver_column", DRIVER_FIX),
        response_column=table.value_column, options=options, settings=settings, title=form.title.strip(),
        time_column=table.time_column, decimal_comma=ingest.decimal_comma, missing_sentinels=ingest.missing_sentinels,
        source=form.source(), filename=filename or (sample or {}).get("file"), sheet=ingest.sheet,
        header_row=ingest.header_row,
        record=claim_record(form.claim_record_values(), settings.max_string_length, prefix="claim_"))
    driver = _named(job.driver, form.driver_label, form.driver_units)
    response = _named(job.response, table.series.label, table.series.units)
    return dataclasses.replace(job, driver=driver, response=response, input_document={
        **job.input_document, "driver": series_payload(driver), "response": series_payload(response)})


@router.post("/correlate", response_class=HTMLResponse, response_model=None)
async def correlate(request: Request) -> HTMLResponse | RedirectResponse:
    return await run_desk_form(request, check=LINK, make_job=correlation_job, collection=CORRELATIONS)
