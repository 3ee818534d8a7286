"""Request and response models of revisions, timelines and comparisons (see ``schemas`` for the audit's own)."""

from __future__ import annotations

from typing import Any

from pydantic import BaseModel, ConfigDict, Field

from app.api.schemas import (EXAMPLE_VALUES, EXAMPLE_YEARS, AuditPage, ClaimIn, IngestIn, OptionsIn, RecordHead,
                             SeriesIn, SourceIn, _Strict)
from app.service.comparisons import MAX_DATASETS, MIN_DATASETS


class RevisionRequest(_Strict):
    """A new version of the audited series; the claim and options are the revised audit's own."""

    title: str = Field(default="", description="A name for the revision; the revised audit's title when empty")
    series: SeriesIn
    source: SourceIn = Field(default_factory=SourceIn)
    ingest: IngestIn = Field(default_factory=IngestIn)

    model_config = ConfigDict(extra="forbid", json_schema_extra={"examples": [{
        "series": {"time": EXAMPLE_YEARS + [2025], "value": EXAMPLE_VALUES + [0.74], "label": "Annual anomaly",
                   "units": "°C"},
        "source": {"name": "Invented demo data, with one more year"},
    }]})


class ComparisonRequest(_Strict):
    title: str = Field(default="", description="A name for the comparison, shown on its page")
    claim: ClaimIn
    series: list[SeriesIn] = Field(min_length=MIN_DATASETS, max_length=MAX_DATASETS,
                                   description="The datasets, each with a label naming it")
    options: OptionsIn = Field(default_factory=OptionsIn)
    sources: list[SourceIn] = Field(default_factory=list, description="Where each dataset came from, in order")
    ingest: IngestIn = Field(default_factory=IngestIn)

    model_config = ConfigDict(extra="forbid", json_schema_extra={"examples": [{
        "title": "No warming since 1998, in two (invented) datasets",
        "claim": {"start": 1998, "end": 2013, "kind": "pause"},
        "series": [{"time": EXAMPLE_YEARS, "value": EXAMPLE_VALUES, "label": "Dataset A"},
                   {"time": EXAMPLE_YEARS, "value": [round(v + 0.02, 3) for v in EXAMPLE_VALUES],
                    "label": "Dataset B"}],
        "options": {"simulations": 2000, "seed": 12345},
    }]})


class ComparisonOut(RecordHead):
    """The stored comparison: its document plus where it lives."""

    claim: dict[str, Any]
    datasets: list[dict[str, Any]] = Field(description="Per dataset: verdict, window and long-term trends with "
                                                       "their ranges (per year)")
    agreement: dict[str, Any] = Field(description="all_agree, majority_code, counts and the sentence")


class ComparisonPage(AuditPage):
    """The same shape as the audits' list; each summary holds the agreement sentence and the datasets' labels."""


class TimelineOut(BaseModel):
    model_config = ConfigDict(extra="allow")
    rows: list[dict[str, Any]] = Field(description="One per year end from the claim's end to the record's end "
                                                   "(at most 60): the verdict and trends with the data as they stood")
    at_the_time: dict[str, Any] | None = Field(description="With claim.made_on: the audit with the data as they "
                                                           "stood that day")
    skipped: list[dict[str, Any]]
    made_on: str | None
    cuts_available: int
