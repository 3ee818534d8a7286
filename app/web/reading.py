"""Reading the table the person gave: an upload, a pasted table or a sample, with the sample's own defaults.

Shared by the claim audit and the driver-and-response audit: both start from the same preview, and both
read the table again, exactly as previewed, when the form is sent.
"""

from __future__ import annotations

import asyncio
import base64
import binascii
import dataclasses
from typing import Any

from fastapi import Request

from app.service.samples import find_sample, load_catalog
from app.errors import InputError, Location
from app.ingest import IngestOptions, ParsedTable
from app.ingest.decode import decode_text
from app.ingest.spreadsheet import OLE_SIGNATURE, ZIP_SIGNATURE
from app.service.sources import read_file, read_source_url
from app.report.context import CLAIM_WORDS
from app.settings import Settings
from app.web.forms import LINK, TREND, DeskForm, read_form, with_defaults

SAMPLE_SOURCE = "Trend Audit sample series (invented data)"


def samples(settings: Settings) -> list[dict[str, Any]]:
    try:
        return load_catalog(settings.samples_dir)
    except (OSError, ValueError):
        return []  # a deployment without the demo files still serves the desk


def sample_defaults(entry: dict[str, Any], check: str = TREND) -> dict[str, str]:
    """What a sample fills in for the kind of check chosen: its claim, or its driver column."""
    common = {"label": entry.get("title", ""), "units": entry.get("units", ""), "source_name": SAMPLE_SOURCE,
              "source_notes": entry.get("description", "")}
    if check == LINK:
        extra = entry.get("extra_columns") or []
        driver = extra[0] if extra else ""
        return {**common, "title": f"Link check: {entry.get('title', 'the sample')} and {driver or 'its driver'}",
                "driver_column": driver, "driver_label": driver}
    claim = entry.get("suggested_claim") or {}
    kind = CLAIM_WORDS.get(claim.get("kind", "pause"), "a change")
    title = f"Claim check: {kind} in {entry.get('title', 'the sample')}, {claim.get('start')} to {claim.get('end')}"
    return {**common, "title": title, "claim_start": str(claim.get("start", "")),
            "claim_end": str(claim.get("end", "")), "claim_kind": str(claim.get("kind", "")),
            "rate_unit": entry.get("rate_unit", "")}


def sample_filled(form: DeskForm, settings: Settings) -> DeskForm:
    """A sample's own title, units, claim (or driver) and source fill whatever the person left empty.

    A title the sample filled in for the other kind of check is replaced, so switching between the two
    never leaves a claim's title on a driver-and-response audit.
    """
    if not form.sample or form.table.strip():
        return form
    entry = find_sample(settings.samples_dir, form.sample)
    other = sample_defaults(entry, TREND if form.checks_link else LINK)
    if form.title == other["title"]:
        form = dataclasses.replace(form, title="")
    return with_defaults(form, **sample_defaults(entry, form.check))


def ingest_options(form: DeskForm, settings: Settings, sample: dict[str, Any] | None) -> IngestOptions:
    sentinels = form.sentinels()
    if sample is not None:
        sentinels = sentinels or tuple(sample.get("missing_sentinels") or ())
    return IngestOptions(time_column=form.time_column.strip() or None, value_column=form.value_column.strip() or None,
                         decimal_comma=form.decimal_comma, missing_sentinels=sentinels, label=form.label.strip(),
                         units=form.units.strip(), max_points=settings.max_points, sheet=form.sheet.strip() or None,
                         header_row=form.header_row_number())


def table_text(form: DeskForm, settings: Settings) -> tuple[str | bytes, dict[str, Any] | None]:
    """The file to read: a carried-over spreadsheet, the pasted or carried-over table, else the chosen sample's
    file. (A link is read by ``read_table``.)"""
    if form.file_data:
        try:
            return base64.b64decode(form.file_data, validate=True), None
        except (binascii.Error, ValueError):
            raise InputError("the uploaded file did not come back intact", location=Location(field="file"),
                             fix="Upload the file again") from None
    if form.table.strip():
        return form.table, None
    if form.sample:
        entry = find_sample(settings.samples_dir, form.sample)
        path = (settings.samples_dir / entry["file"]).resolve()
        if settings.samples_dir.resolve() not in path.parents:
            raise InputError("that sample is not available", location=Location(field="sample"),
                             fix="Pick one of the samples listed on the home page")
        return path.read_bytes(), entry
    raise InputError("no series was given", location=Location(field="file"),
                     fix="Upload a file (CSV, text, .xlsx or .ods), give a link to one, paste a table, or pick one "
                         "of the samples")


def columns_of_this_sheet(form: DeskForm) -> DeskForm:
    """Columns chosen on one sheet mean nothing on another: when the person picks another sheet, its columns (and
    its header row) are found afresh."""
    if form.sheet_read and form.sheet != form.sheet_read:
        return dataclasses.replace(form, time_column="", value_column="", driver_column="", covariate_columns=(),
                                   header_row="", sheet_read=form.sheet)
    return form


def links_to_data(form: DeskForm) -> bool:
    return bool(form.data_url.strip()) and not (form.file_data or form.table.strip() or form.sample)


def read_table(form: DeskForm, settings: Settings) -> tuple[ParsedTable, dict[str, Any] | None]:
    """The table the form names, read as the service reads any file. Blocking (a link is fetched): run it in a
    worker thread."""
    table, sample, _provenance = read_table_and_provenance(form, settings)
    return table, sample


def read_table_and_provenance(form: DeskForm, settings: Settings
                              ) -> tuple[ParsedTable, dict[str, Any] | None, dict[str, Any] | None]:
    """``read_table``, and where a linked file came from (None for an upload, a pasted table or a sample)."""
    form = columns_of_this_sheet(form)
    if links_to_data(form):
        table, provenance = read_source_url(form.data_url, ingest_options(form, settings, None), settings,
                                            field="data_url")
        return table, None, provenance
    text, sample = table_text(form, settings)
    return read_file(text, ingest_options(form, settings, sample), settings), sample, None


def with_upload(form: DeskForm, data: bytes | None) -> DeskForm:
    """An uploaded file replaces whatever was pasted, picked or linked; a text file's text travels on in the form
    (to be edited there), a spreadsheet's bytes as base64. A new file's sheet and header row are found afresh."""
    if data is None:
        return form
    fresh = dict(sample="", data_url="", sheet="", header_row="")
    if data[:8].startswith((ZIP_SIGNATURE, OLE_SIGNATURE)):
        return dataclasses.replace(form, file_data=base64.b64encode(data).decode("ascii"), table="", **fresh)
    return dataclasses.replace(form, table=decode_text(data), file_data="", **fresh)


def chosen_columns(form: DeskForm, table: ParsedTable) -> DeskForm:
    """The columns and sheet as read; a driver or a covariate that is no longer another numeric column is dropped.
    The header row stays as the person typed it (empty: found again by the reader)."""
    extra = tuple(table.extra_columns)
    driver = form.driver_column if form.driver_column in extra else (extra[0] if extra else "")
    form = columns_of_this_sheet(form)
    if table.layout != "long":  # a year-by-month table is found again when no column is named
        return dataclasses.replace(form, time_column="", value_column="", driver_column="", covariate_columns=(),
                                   sheet=table.sheet or "", sheet_read=table.sheet or "")
    return dataclasses.replace(form, time_column=table.time_column, value_column=table.value_column,
                               driver_column=driver, sheet=table.sheet or "", sheet_read=table.sheet or "",
                               covariate_columns=tuple(c for c in form.covariate_columns if c in extra))


async def posted_form(request: Request) -> tuple[DeskForm, str | None]:
    """The posted form, with an uploaded file's text in place of any pasted table; and the file's name.

    The body (already bounded by the body-size limit) is received on the event loop, but parsed on a worker
    thread: splitting and decoding a form of several megabytes takes long enough to hold up every other
    request, /healthz included, were it done on the loop."""
    settings: Settings = request.app.state.settings
    body = await request.body()
    form, data, filename = await asyncio.to_thread(asyncio.run, _parse_form(request.scope, body, settings))
    return with_upload(form, data), filename


async def _parse_form(scope, body: bytes, settings: Settings) -> tuple[DeskForm, bytes | None, str | None]:
    async def receive() -> dict[str, Any]:
        return {"type": "http.request", "body": body, "more_body": False}

    async with Request(scope, receive).form(max_files=1, max_fields=80,
                                            max_part_size=settings.max_upload_bytes) as raw:
        return await read_form(raw, settings.max_upload_bytes)


def required(text: str, field: str, fix: str) -> str:
    if not text.strip():
        raise InputError("this field is empty", location=Location(field=field), fix=fix)
    return text.strip()
