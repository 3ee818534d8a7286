"""Reading the table the person gave: an upload, a pasted table or a sample, with the sample's own defaults.

Shared by the claim audit and the driver-and-response audit: both start from the same preview, and both
read the table again, exactly as previewed, when the form is sent.
"""

from __future__ import annotations

import asyncio
import dataclasses
from typing import Any

from fastapi import Request

from app.service.samples import find_sample, load_catalog
from app.errors import InputError, Location
from app.ingest import IngestOptions, ParsedTable, read_csv_text
from app.ingest.decode import decode_text
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
                         units=form.units.strip(), max_points=settings.max_points)


def table_text(form: DeskForm, settings: Settings) -> tuple[str | bytes, dict[str, Any] | None]:
    """The CSV to read: the pasted or carried-over table, else the chosen sample's file."""
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
                     fix="Upload a CSV file, paste a table, or pick one of the samples")


def read_table(form: DeskForm, settings: Settings) -> tuple[ParsedTable, dict[str, Any] | None]:
    text, sample = table_text(form, settings)
    return read_csv_text(text, ingest_options(form, settings, sample)), sample


def with_upload(form: DeskForm, data: bytes | None) -> DeskForm:
    """An uploaded file replaces whatever was pasted or picked; its text travels on in the form."""
    if data is None:
        return form
    return dataclasses.replace(form, table=decode_text(data), sample="")


def chosen_columns(form: DeskForm, table: ParsedTable) -> DeskForm:
    """The columns as read; a driver or a covariate that is no longer another numeric column is dropped."""
    extra = tuple(table.extra_columns)
    driver = form.driver_column if form.driver_column in extra else (extra[0] if extra else "")
    return dataclasses.replace(form, time_column=table.time_column, value_column=table.value_column,
                               driver_column=driver,
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
