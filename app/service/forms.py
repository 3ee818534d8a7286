"""An audit from a multipart form: the named text fields beside an uploaded CSV.

The form is anything with ``get(name)`` and ``getlist(name)`` returning text (a parsed multipart body);
a value that is not text (a file sent where text belongs) is refused, naming the field.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any, Protocol

from app.errors import InputError, Location
from app.service.audits import AuditJob, audit_options, job_from_file, rename_fields
from app.service.claims import CLAIM_RECORD_FIELDS, ClaimInput, claim_record
from app.service.covariates import column_names
from app.settings import Settings

# The audit names fields by their JSON path; the form by its multipart names.
CLAIM_FORM_FIELDS = {name: f"claim_{name}" for name in CLAIM_RECORD_FIELDS}
FORM_FIELD_NAMES = {"claim.start": "claim_start", "claim.end": "claim_end", "claim.kind": "claim_kind",
                    **{f"claim.{name}": field for name, field in CLAIM_FORM_FIELDS.items()},
                    **{f"options.{name}": name for name in ("confidence", "noise", "simulations", "seed",
                                                            "reference_start", "reference_end", "rate_unit")}}
# Reference edges stay text: they are written like window edges ("1961", "1961-01").
OPTION_FIELDS = {"confidence": float, "noise": str, "simulations": int, "seed": int, "reference_start": str,
                 "reference_end": str, "rate_unit": str}
# Every field the multipart audit takes; anything else is refused by name, never silently dropped.
KNOWN_FORM_FIELDS = frozenset({
    "file", "title", "label", "units", "claim_start", "claim_end", "claim_kind", *CLAIM_FORM_FIELDS.values(),
    "time_column", "value_column", *OPTION_FIELDS, "decimal_comma", "missing_sentinels", "covariate_columns",
    "covariate_max_lag", "source_name", "source_url", "source_notes", "sheet", "header_row", "seasonal", "data_url"})


class Form(Protocol):
    def get(self, name: str) -> Any: ...

    def keys(self) -> Iterable[str]: ...

    def getlist(self, name: str) -> list[Any]: ...


def _text_only(value: Any, name: str) -> None:
    if value is not None and not isinstance(value, str):
        raise InputError(f"'{name}' should be a text field, not a file", location=Location(field=name),
                         fix=f"Send '{name}' as a plain form field")


def form_text(form: Form, name: str) -> str | None:
    value = form.get(name)
    _text_only(value, name)
    value = (value or "").strip()
    return value or None


def form_texts(form: Form, name: str) -> tuple[str, ...]:
    """A field that may be repeated, each copy holding one name or several separated by commas."""
    values = form.getlist(name)
    for value in values:
        _text_only(value, name)
    return column_names(values)


def form_required(form: Form, name: str) -> str:
    text = form_text(form, name)
    if text is None:
        raise InputError(f"'{name}' is missing", location=Location(field=name),
                         fix=f"Fill in '{name}' (a decimal year such as 1998, or a month such as 1998-03)")
    return text


def form_number(form: Form, name: str, kind: type) -> Any:
    text = form_text(form, name)
    if text is None:
        return None
    try:
        return kind(text)
    except ValueError:
        wanted = "a whole number" if kind is int else "a number"
        raise InputError(f"'{text[:40]}' is not {wanted}", location=Location(field=name),
                         fix=f"Write '{name}' as {wanted}, e.g. {'12345' if kind is int else '1998.5'}") from None


def form_flag(form: Form, name: str) -> bool:
    text = (form_text(form, name) or "false").lower()
    if text not in ("true", "false", "1", "0", "yes", "no", "on", "off"):
        raise InputError(f"'{text[:40]}' is not true or false", location=Location(field=name),
                         fix=f"Send '{name}' as true or false")
    return text in ("true", "1", "yes", "on")


def form_sentinels(form: Form) -> tuple[float, ...]:
    text = form_text(form, "missing_sentinels")
    if text is None:
        return ()
    try:
        return tuple(float(part) for part in text.split(",") if part.strip())
    except ValueError:
        raise InputError("missing_sentinels must be numbers separated by commas",
                         location=Location(field="missing_sentinels"), fix="Write them as e.g. -999,-99.99") from None


def check_known_fields(names: Iterable[str]) -> None:
    """422 naming every field the multipart audit does not take."""
    unknown = sorted({name for name in names if name not in KNOWN_FORM_FIELDS})
    if unknown:
        shown = ", ".join(f"'{name[:40]}'" for name in unknown[:10])
        raise InputError(f"unknown form field{'s' if len(unknown) > 1 else ''} {shown}",
                         location=Location(field=unknown[0][:100]),
                         fix="Send only the fields the form takes: " + ", ".join(sorted(KNOWN_FORM_FIELDS)))


def job_from_form(form: Form, data: bytes | None, filename: str | None, settings: Settings) -> AuditJob:
    """The multipart audit: the file in ``data`` (or, with none, the one at ``data_url``), everything else in the
    form's text fields. Blocking when it fetches a link: run it in a worker thread."""
    check_known_fields(form.keys())
    try:
        record = claim_record({name: form_text(form, field) for name, field in CLAIM_FORM_FIELDS.items()},
                              settings.max_string_length)
        claim = ClaimInput(kind=form_text(form, "claim_kind") or "pause", start=form_required(form, "claim_start"),
                           end=form_required(form, "claim_end"), record=record)
        options = audit_options({name: form_number(form, name, kind) if kind is not str else form_text(form, name)
                                 for name, kind in OPTION_FIELDS.items()}, settings)
        return job_from_file(
            data, claim=claim, options=options, settings=settings, title=form_text(form, "title") or "",
            label=form_text(form, "label"), units=form_text(form, "units"),
            time_column=form_text(form, "time_column"), value_column=form_text(form, "value_column"),
            decimal_comma=form_flag(form, "decimal_comma"), missing_sentinels=form_sentinels(form),
            source={"name": form_text(form, "source_name"), "url": form_text(form, "source_url"),
                    "notes": form_text(form, "source_notes")},
            filename=filename, covariate_columns=form_texts(form, "covariate_columns"),
            covariate_max_lag=form_number(form, "covariate_max_lag", int), sheet=form_text(form, "sheet"),
            header_row=form_number(form, "header_row", int), seasonal=form_text(form, "seasonal"),
            data_url=form_text(form, "data_url"))
    except InputError as error:
        raise rename_fields(error, FORM_FIELD_NAMES) from None
