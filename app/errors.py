"""The domain's errors, in one short hierarchy.

    TrendAuditError                 anything this project raises on purpose
    ├── InputError                  the caller sent something we cannot use (HTTP 400/422)
    │   ├── SeriesFormatError       a file or field that cannot be read (a bad number, date, column)
    │   ├── SeriesContentError      readable, but unusable as a series (too short, constant, unsorted)
    │   ├── ClaimError              the claimed window or options do not fit the series
    │   ├── LimitExceeded           bigger than the service allows (413 for bodies, else 422)
    │   └── UnsupportedMediaType    a body in a format the endpoint does not read (415)
    ├── AccessDenied                a missing or wrong API key or owner token (401/403)
    ├── NotFound                    no audit or sample with that name (404)
    └── RetryLater                  try the same request again after Retry-After seconds
        ├── TooManyAttempts         too many wrong keys from one client (429)
        │   └── TooMuchInFlight     a key's queued batch items are at their limit (429)
        └── ServiceBusy             the compute pool is full (503)
            └── StoreUnavailable    the database cannot be reached, is read-only or full (503)

Every input error says *where* (a row, a column, a field) and *what to fix*, so a newsroom
script can point at the cell and a person can correct it. Each error's HTTP status is given in one
place, ``status_for`` below; the JSON API words it as RFC 9457 problem details (``app.api.problems``)
and the desk as a page (``app.web.problems``).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any


@dataclass(frozen=True)
class Location:
    """Where in the input a fault sits. Any field may be absent."""

    row: int | None = None  # 1-based line of the file, header being row 1
    column: str | None = None  # column name as written in the header
    field: str | None = None  # JSON pointer-ish path: "series.time[3]", "claim.start"

    def describe(self) -> str:
        parts = []
        if self.row is not None:
            parts.append(f"row {self.row}")
        if self.column is not None:
            parts.append(f"column '{self.column}'")
        if self.field is not None:
            parts.append(f"field '{self.field}'")
        return ", ".join(parts)

    def as_dict(self) -> dict[str, Any]:
        return {k: v for k, v in (("row", self.row), ("column", self.column), ("field", self.field)) if v is not None}


class TrendAuditError(Exception):
    """Base of every error raised on purpose by Trend Audit."""

    title = "Trend Audit error"
    slug = "error"

    def __init__(self, message: str, *, location: Location | None = None, fix: str | None = None,
                 extra: dict[str, Any] | None = None) -> None:
        self.message = message
        self.location = location or Location()
        self.fix = fix
        self.extra = dict(extra or {})
        super().__init__(self.detail)

    @property
    def detail(self) -> str:
        where = self.location.describe()
        text = f"{where}: {self.message}" if where else self.message
        if self.fix:
            text = f"{text}. {self.fix}"
        return text


class InputError(TrendAuditError):
    title = "The input cannot be used"
    slug = "invalid-input"


class SeriesFormatError(InputError):
    title = "The series could not be read"
    slug = "unreadable-series"


class SeriesContentError(InputError):
    title = "The series cannot be audited"
    slug = "unusable-series"


class ClaimError(InputError):
    title = "The claim does not fit the series"
    slug = "invalid-claim"


class LimitExceeded(InputError):
    title = "The request is larger than this service allows"
    slug = "limit-exceeded"

    def __init__(self, message: str, *, body_too_large: bool = False, **kwargs: Any) -> None:
        self.body_too_large = body_too_large
        super().__init__(message, **kwargs)


class UnsupportedMediaType(InputError):
    title = "The body's format is not one this endpoint reads"
    slug = "unsupported-media-type"


class AccessDenied(TrendAuditError):
    title = "Not allowed"
    slug = "access-denied"

    def __init__(self, message: str, *, missing_credentials: bool = True, **kwargs: Any) -> None:
        self.missing_credentials = missing_credentials
        super().__init__(message, **kwargs)


class NotFound(TrendAuditError):
    title = "Not found"
    slug = "not-found"


class RetryLater(TrendAuditError):
    """An error that says how many seconds to wait before the same request may succeed."""

    def __init__(self, message: str, *, retry_after: int = 5, **kwargs: Any) -> None:
        self.retry_after = retry_after
        super().__init__(message, **kwargs)


class ServiceBusy(RetryLater):
    title = "The service is busy"
    slug = "busy"


class StoreUnavailable(ServiceBusy):
    title = "The store is unavailable"
    slug = "store-unavailable"


class TooManyAttempts(RetryLater):
    title = "Too many attempts"
    slug = "too-many-attempts"


PROBLEM_TYPE_BASE = "/problems/"


def problem_body(*, status: int, title: str, detail: str, slug: str, instance: str | None = None,
                 **extra: Any) -> dict[str, Any]:
    body: dict[str, Any] = {
        "type": PROBLEM_TYPE_BASE + slug,
        "title": title,
        "status": status,
        "detail": detail,
    }
    if instance:
        body["instance"] = instance
    body.update({k: v for k, v in extra.items() if v is not None})
    return body


def problem_for_error(error: TrendAuditError, instance: str | None = None) -> tuple[int, dict[str, Any]]:
    """The RFC 9457 problem document for ``error`` and its status: the one mapping, used by every answer and
    by a batch item that failed (its document is stored)."""
    status = status_for(error)
    extra: dict[str, Any] = dict(error.extra)
    where = error.location.as_dict()
    if where:
        extra["where"] = where
    if error.fix:
        extra["fix"] = error.fix
    return status, problem_body(status=status, title=error.title, detail=error.detail, slug=error.slug,
                                instance=instance, **extra)


class TooMuchInFlight(TooManyAttempts):
    title = "Too many items in flight"
    slug = "too-much-in-flight"


def retry_after(error: TrendAuditError) -> int | None:
    """Seconds to wait before trying again, for the errors that say so."""
    return error.retry_after if isinstance(error, RetryLater) else None


def status_for(error: TrendAuditError) -> int:
    """The HTTP status that answers ``error``, the same for the JSON API and the desk."""
    if isinstance(error, LimitExceeded):
        return 413 if error.body_too_large else 422
    if isinstance(error, UnsupportedMediaType):
        return 415
    if isinstance(error, InputError):
        return 422
    if isinstance(error, AccessDenied):
        return 401 if error.missing_credentials else 403
    if isinstance(error, NotFound):
        return 404
    if isinstance(error, ServiceBusy):
        return 503
    if isinstance(error, TooManyAttempts):
        return 429
    return 400
