"""POST /api/v1/claims/parse: the structured claim a sentence states, before any data are sent."""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Depends
from fastapi.concurrency import run_in_threadpool

from app.api.deps import require_api_key
from app.api.schemas import ClaimParseOut, ClaimParseRequest
from app.dependencies import get_settings
from app.service.claim_reading import described_span, parsed_answer, read_claim_text
from app.settings import Settings

router = APIRouter(prefix="/api/v1/claims", tags=["claims"])


@router.post("/parse", response_model=ClaimParseOut, summary="Read a claim's kind and window from its sentence",
             dependencies=[Depends(require_api_key)],
             responses={422: {"description": "No window could be read; 'detail' says what was missing"}})
async def parse(body: ClaimParseRequest, settings: Settings = Depends(get_settings)) -> dict[str, Any]:
    """Reads "since 1998", "for the past 18 years and 9 months", "between 2001 and 2012"... and the kind of
    claim ("has not warmed", "slowed", "cooling", "accelerating"). Relative phrases count back from
    `made_on`, else from the series' end. `spans` gives the character spans each part was read from;
    `negated` flags a sentence that denies the claim. Use the answer's `kind`, `start` and `end` as the
    audit's claim."""
    span, sampling = described_span(body.series.model_dump() if body.series else None)
    parsed = await run_in_threadpool(read_claim_text, body.text, made_on=body.made_on, span=span,
                                     sampling=sampling, max_length=settings.max_string_length)
    return parsed_answer(parsed)
