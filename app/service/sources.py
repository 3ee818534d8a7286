"""Where a series comes from before it is audited: a file of any format this service reads, or a link to one;
and whether its seasonal cycle is taken out first.

Every door (the JSON body, the multipart upload, the desk, the command line) reads through here, so a
spreadsheet, a year-by-month table or a commented text file is read the same way everywhere, and a link is
fetched under one policy built from the settings.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

from app.errors import ClaimError, InputError, Location
from app.ingest import (FetchPolicy, IngestOptions, ParsedTable, ReadLimits, Series, deseasonalise, read_link,
                        read_upload, seasonal_cycle)
from app.ingest.sampling import PERIODS_PER_YEAR
from app.settings import Settings

SOURCE_URL_FIELD = "source_url"
AUTO, REMOVE, KEEP = "auto", "remove", "keep"
SEASONAL_CHOICES = (AUTO, REMOVE, KEEP)  # auto: take the cycle out when the test finds one


def read_limits(settings: Settings) -> ReadLimits:
    return ReadLimits(max_rows=max(settings.max_points, ReadLimits().max_rows))


def fetch_policy(settings: Settings) -> FetchPolicy:
    return FetchPolicy(allow_http=settings.fetch_allow_http, allow_loopback=settings.fetch_allow_loopback,
                       allowed_ports=None if settings.fetch_allow_loopback else FetchPolicy().allowed_ports,
                       max_bytes=settings.fetch_max_bytes, timeout_seconds=settings.fetch_timeout_seconds)


def read_file(data: bytes | str, options: IngestOptions, settings: Settings, field: str = "file") -> ParsedTable:
    """Any file this service reads (spreadsheet, CSV, plain text), told apart by its bytes; a fault in the file
    as a whole (a damaged or encrypted spreadsheet, one too large) names ``field``."""
    try:
        return read_upload(data, options, read_limits(settings))
    except InputError as error:
        raise _pointed_at(error, field) from None


def _pointed_at(error: InputError, field: str) -> InputError:
    if not error.location.as_dict():
        error.location = dataclasses.replace(error.location, field=field)
    return error


def read_source_url(url: str, options: IngestOptions, settings: Settings,
                    field: str = SOURCE_URL_FIELD) -> tuple[ParsedTable, dict[str, Any]]:
    """The table at a link and the fetch's provenance; a refusal names ``field``. Blocking: run it in a worker
    thread or the compute pool, never on the event loop."""
    try:
        table, fetched = read_link(url.strip(), options, fetch_policy(settings), read_limits(settings))
    except InputError as error:
        if error.location.field == "url":
            error.location = dataclasses.replace(error.location, field=field)
        raise _pointed_at(error, field) from None
    provenance = {"url": fetched.url, "final_url": fetched.final_url, "redirects": list(fetched.redirects),
                  "retrieved_at": fetched.retrieved_at, "status": fetched.status, "size": fetched.size,
                  "sha256": fetched.sha256, "content_type": fetched.content_type}
    return table, provenance


def table_inputs(table: ParsedTable) -> dict[str, Any]:
    """What the audit records about how the table was read: the column used and the rest on offer."""
    return {"value_column": table.value_column, "time_column": table.time_column, "layout": table.layout,
            "sheet": table.sheet, "header_row": table.header_row, "numeric_columns": list(table.numeric_columns)}


def check_seasonal_choice(choice: str | None, field: str = "seasonal") -> str:
    chosen = (choice or AUTO).strip().lower()
    if chosen not in SEASONAL_CHOICES:
        raise ClaimError(f"'{chosen[:40]}' is not a way to treat a seasonal cycle", location=Location(field=field),
                         fix="Use auto (take a cycle out when one is found), remove or keep")
    return chosen


def climatology_period(series: Series, reference_start: float | None,
                       reference_end: float | None) -> tuple[float, float]:
    """The calendar-month means are taken over the reference period given, else over every whole calendar year
    of the record; half-open, so the end year is included by going one step past it."""
    start = math.floor(series.start) if reference_start is None else math.floor(reference_start)
    end = math.floor(series.end) + 1 if reference_end is None else math.floor(reference_end) + 1
    return float(start), float(end)


def with_seasonal_choice(series: Series, choice: str, reference: tuple[float, float],
                         field: str = "seasonal") -> tuple[Series, dict[str, Any]]:
    """The series to audit and what was decided about its seasonal cycle, with the sentence the report shows."""
    choice = check_seasonal_choice(choice, field)
    record: dict[str, Any] = {"choice": choice, "tested": False, "present": None, "removed": False,
                              "reference": None, "sentence": ""}
    periods = PERIODS_PER_YEAR.get(series.sampling)
    if series.sampling not in ("monthly", "quarterly") or series.n < 2 * periods + 2:
        if choice == REMOVE:
            raise ClaimError(f"a seasonal cycle can be taken out of monthly or quarterly data with two full years "
                             f"or more; this series is {series.sampling} with {series.n} values",
                             location=Location(field=field), fix="Choose auto or keep")
        return series, record
    cycle = seasonal_cycle(series)
    record.update(tested=True, present=cycle.present, p_value=cycle.p_value, size=cycle.size,
                  amplitude=cycle.amplitude, periods=cycle.periods, description=cycle.describe())
    period = "calendar month" if cycle.periods == 12 else "calendar quarter"
    if choice == KEEP or (choice == AUTO and not cycle.present):
        found = "A seasonal cycle was found" if cycle.present else "No seasonal cycle that matters was found"
        kept = "kept, as asked, so the ranges include it" if choice == KEEP else "so the series was audited as given"
        record["sentence"] = f"{found} ({cycle.size:.2g} times the noise); {kept}."
        return series, record
    try:
        result = deseasonalise(series, reference)
    except ClaimError as error:  # the reference period misses a calendar month: say so where the choice was made
        raise ClaimError(f"the seasonal cycle cannot be taken out: {error.message}", location=Location(field=field),
                         fix="Widen the reference period so that every calendar month has values, or keep the "
                             "cycle") from None
    record.update(removed=True, reference=list(reference),
                  sentence=(f"{'A' if cycle.present else 'As asked, any'} seasonal cycle (range {cycle.amplitude:.3g}"
                            f"{' ' + series.units if series.units else ''}, {cycle.size:.2g} times the noise) was "
                            f"taken out: the audit used anomalies from each {period}'s mean over "
                            f"{reference[0]:g} to {reference[1] - 1:g}."))
    return result, record
