"""Creating a revision or a comparison from a stored audit: the one path the API and the desk share."""

from __future__ import annotations

import asyncio
import dataclasses
from typing import Any

from app.audit import AuditOptions
from app.ingest import IngestOptions, read_csv_text
from app.service.audits import AuditJob, given_claim, job_from_file, make_claim
from app.service.comparisons import ComparisonJob, prepare_comparison_job
from app.service.creating import create_record
from app.service.limits import check_string_lengths
from app.service.payloads import series_from_payload
from app.service.records import AUDITS
from app.service.revisions import link_revision, revised_inputs, revision_amendment
from app.service.runtime import Runtime
from app.service.timeline import with_made_on
from app.settings import Settings
from app.store import AuditRecord


def revision_job_from_csv(parent: AuditRecord, data: str | bytes, *, settings: Settings, filename: str | None = None,
                          title: str = "", time_column: str | None = None, value_column: str | None = None,
                          source: dict[str, Any] | None = None) -> AuditJob:
    """A new version of the series as a file, audited with the revised audit's claim, options and seed."""
    claim, options = revised_inputs(parent)
    job = job_from_file(data, claim=given_claim(claim, settings.max_string_length),
                        options=AuditOptions(**options), settings=settings, title=title or parent.title,
                        time_column=time_column, value_column=value_column, filename=filename,
                        source=source or {})
    return with_made_on(job, claim.get("made_on"))


async def create_revision(runtime: Runtime, parent: AuditRecord, job: AuditJob, *, draw_now: bool = False):
    """Computes and stores the revision (with what changed), then links it from the audit it revises."""
    record, owner_token, document = await create_record(
        runtime, AUDITS, job, draw_now=draw_now, amend=revision_amendment(parent, job.input_document["series"]))
    await asyncio.to_thread(link_revision, runtime.audits, parent.id, record.id)
    return record, owner_token, document


def comparison_with_file(parent: AuditRecord, data: str | bytes, *, settings: Settings, label: str = "",
                         filename: str | None = None) -> ComparisonJob:
    """The audit's own series beside another dataset from a file, audited with the audit's claim and options."""
    claim, options = revised_inputs(parent)
    check_string_lengths({"label": label, "filename": filename}, settings.max_string_length)
    table = read_csv_text(data, IngestOptions(max_points=settings.max_points))
    other = dataclasses.replace(table.series, label=label.strip() or filename or table.series.label or "Other dataset")
    own = series_from_payload(parent.input_document["series"])
    own = dataclasses.replace(own, label=own.label or parent.title)
    return prepare_comparison_job(
        title=f"{parent.title}: compared with {other.label}",
        claim=make_claim(claim.get("start_given", claim["start"]), claim.get("end_given", claim["end"]),
                         claim["kind"]), options=AuditOptions(**options),
        series=[own, other], sources=[parent.input_document.get("source") or {}, {"name": filename}],
        settings=settings, made_on=claim.get("made_on"))
