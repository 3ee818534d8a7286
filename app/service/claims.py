"""The claim as a record: who said what, where and when, the window it names, read one way by every door.

    edges as given ("1998", 2012, "2016-01", 1998.25) ─> resolve_edge (app.ingest.window_edges) ─> Claim
    the claim's words, claimant, outlet, date and address ─> ClaimRecord, stored beside kind and window

Every door (JSON, multipart, desk, CLI) hands the edges over as written; the series' sampling decides
nothing about their meaning, only how the periods inside are named back. With no seed given, the seed is
derived from the question itself, so the same question always gets the same answer.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import hashlib
import json
from dataclasses import dataclass
from typing import Any

import numpy as np

from app.audit.claim import Claim
from app.errors import ClaimError, InputError, Location
from app.ingest import Series
from app.ingest.window_edges import resolve_edge, window_points_summary
from app.service.limits import check_string_lengths

CLAIM_RECORD_FIELDS = ("text", "claimant", "outlet", "made_on", "source_url")
# Our requirement: a history line shows at most this much of a claim's words; the record keeps them all.
LISTED_TEXT_CHARS = 200
SEARCH_MAX_CHARS = 200  # our requirement: a history search is a few words, not a document
Edge = str | int | float


@dataclass(frozen=True)
class ClaimRecord:
    """What was claimed, by whom, where and when; every part optional."""

    text: str | None = None
    claimant: str | None = None
    outlet: str | None = None
    made_on: str | None = None  # ISO date, "YYYY-MM-DD"
    source_url: str | None = None

    def as_dict(self) -> dict[str, str | None]:
        return dataclasses.asdict(self)

    def made_on_date(self) -> dt.date | None:
        return dt.date.fromisoformat(self.made_on) if self.made_on else None


@dataclass(frozen=True)
class ClaimInput:
    """A claim as a request gives it: the kind, the edges as written, and the record around it."""

    kind: str
    start: Edge
    end: Edge
    record: ClaimRecord = ClaimRecord()


def claim_record(values: dict[str, Any] | None, max_length: int, prefix: str = "claim.") -> ClaimRecord:
    """The record from plain values (JSON or form fields), blanks dropped; checked."""
    values = values or {}
    cleaned = {name: (str(values[name]).strip() or None) if values.get(name) is not None else None
               for name in CLAIM_RECORD_FIELDS}
    check_string_lengths({f"{prefix}{name}": value for name, value in cleaned.items()}, max_length)
    if cleaned["made_on"] is not None:
        cleaned["made_on"] = _iso_date(cleaned["made_on"], f"{prefix}made_on")
    return ClaimRecord(**cleaned)


def _iso_date(text: str, field: str) -> str:
    try:
        return dt.date.fromisoformat(text).isoformat()
    except ValueError:
        raise ClaimError(f"'{text[:40]}' is not a date written YYYY-MM-DD", location=Location(field=field),
                         fix="Write the date the claim was made as e.g. 2014-06-30") from None


def resolved_claim(claim: ClaimInput, series: Series, prefix: str = "claim.") -> Claim:
    """The claim with its edges resolved to instants, the one meaning every door shares."""
    sampling = series.sampling if series.sampling in ("monthly", "quarterly", "annual") else "irregular"
    start = resolve_edge(claim.start, "start", sampling, field=f"{prefix}start")
    end = resolve_edge(claim.end, "end", sampling, field=f"{prefix}end")
    return Claim(start=start.instant, end=end.instant, kind=claim.kind)


def edge_instant(value: Edge, role: str, field: str) -> float:
    """One edge resolved without a series: what an option's reference edge or the trend's window edge means."""
    return resolve_edge(value, role, None, field=field).instant


def window_echo(claim: ClaimInput, resolved: Claim, series: Series) -> dict[str, Any]:
    """The window as given and as resolved, with the first and last period it holds and how many points."""
    sampling = series.sampling if series.sampling in ("monthly", "quarterly", "annual") else "irregular"
    points = window_points_summary(series.time, sampling, resolved.start, resolved.end)
    return {"start_given": claim.start, "end_given": claim.end, "start": resolved.start, "end": resolved.end,
            "first": points.first, "last": points.last, "points": points.count}


def window_series(series: Series, mask: np.ndarray) -> Series:
    """The points a window holds, same metadata."""
    labels = tuple(np.asarray(series.time_labels, dtype=object)[mask]) if series.time_labels else ()
    return dataclasses.replace(series, time=series.time[mask], value=series.value[mask], time_labels=labels,
                               missing_times=())


def derived_seed(*parts: Any) -> int:
    """A seed from the question itself (input hash, window, kind, options): the same question, the same answer."""
    text = json.dumps(parts, sort_keys=True, separators=(",", ":"), default=str)
    return int.from_bytes(hashlib.sha256(text.encode()).digest()[:8], "big") % (2**63)


def listed_claim(claim: dict[str, Any]) -> dict[str, Any]:
    """The claim as a history line shows it: the words cut to our requirement's length."""
    text = claim.get("text")
    if isinstance(text, str) and len(text) > LISTED_TEXT_CHARS:
        claim = {**claim, "text": text[:LISTED_TEXT_CHARS - 1].rstrip() + "…"}
    return claim


def search_text(title: str, record: ClaimRecord) -> str:
    """What a history search matches: the title and the claim's words, claimant and outlet, lower-cased."""
    return "\n".join(part for part in (title, record.text, record.claimant, record.outlet) if part).lower()


def search_words(q: str | None) -> str | None:
    """The search as the store matches it; None for an empty search."""
    if q is None or not q.strip():
        return None
    if len(q) > SEARCH_MAX_CHARS:
        raise InputError(f"the search is {len(q):,} characters long; the limit is {SEARCH_MAX_CHARS}",
                         location=Location(field="q"), fix=f"Search for at most {SEARCH_MAX_CHARS} characters")
    return q.strip().lower()
