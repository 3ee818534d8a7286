"""The batch request: full audit requests, or one of two compact forms (one series with many claims, many series
with one claim), at most ``MAX_ITEMS`` items however written."""

from __future__ import annotations

from typing import Any

from pydantic import Field

from app.api.schemas import AuditRequest, ClaimIn, EXAMPLE_VALUES, EXAMPLE_YEARS, IngestIn, OptionsIn, SeriesIn, SourceIn, _Strict
from app.errors import InputError, Location

MAX_ITEMS = 5_000  # our requirement; TRENDAUDIT_MAX_BATCH_ITEMS may lower it


class BatchRequest(_Strict):
    items: list[AuditRequest] | None = Field(default=None, max_length=MAX_ITEMS, description="Audit requests, each "
                                             "as POST /api/v1/audits takes it")
    series: SeriesIn | None = Field(default=None, description="Compact form: one series, audited for each of 'claims'")
    claims: list[ClaimIn] | None = Field(default=None, max_length=MAX_ITEMS)
    series_list: list[SeriesIn] | None = Field(default=None, max_length=MAX_ITEMS,
                                               description="Compact form: many series, each audited for 'claim'")
    claim: ClaimIn | None = None
    title: str = Field(default="", description="Compact forms: the title every item shares (derived when empty)")
    options: OptionsIn = Field(default_factory=OptionsIn, description="Compact forms: every item's options")
    source: SourceIn = Field(default_factory=SourceIn)
    ingest: IngestIn = Field(default_factory=IngestIn)

    model_config = {"extra": "forbid", "json_schema_extra": {"examples": [{
        "series_list": [{"time": EXAMPLE_YEARS, "value": EXAMPLE_VALUES, "label": "Province A"},
                        {"time": EXAMPLE_YEARS, "value": [round(v * 0.8, 3) for v in EXAMPLE_VALUES],
                         "label": "Province B"}],
        "claim": {"start": 1998, "end": 2012, "kind": "pause"}, "options": {"simulations": 500}}]}}


def _shared(request: BatchRequest) -> dict[str, Any]:
    return {name: getattr(request, name).model_dump(mode="json", exclude_unset=True)
            for name in ("options", "source", "ingest")} | ({"title": request.title} if request.title else {})


def item_requests(request: BatchRequest) -> list[dict[str, Any]]:
    """Each item as the audit request it stands for (only what was given: defaults apply when it runs)."""
    forms = [request.items is not None, request.series is not None or request.claims is not None,
             request.series_list is not None or request.claim is not None]
    if sum(forms) != 1 or (forms[1] and (request.series is None or request.claims is None)) or \
            (forms[2] and (request.series_list is None or request.claim is None)):
        raise InputError("a batch is one of: 'items'; 'series' with 'claims'; 'series_list' with 'claim'",
                         location=Location(field="items"), fix="Send exactly one of the three forms")
    if request.items is not None:
        return [item.model_dump(mode="json", exclude_unset=True) for item in request.items]
    if request.series is not None:
        series = request.series.model_dump(mode="json", exclude_none=True)
        return [{**_shared(request), "series": series, "claim": claim.model_dump(mode="json", exclude_unset=True)}
                for claim in request.claims]
    claim = request.claim.model_dump(mode="json", exclude_unset=True)
    return [{**_shared(request), "series": series.model_dump(mode="json", exclude_none=True), "claim": claim}
            for series in request.series_list]
