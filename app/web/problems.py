"""Problems said the way the desk shows them: what went wrong, where (by the label on the form), what to do."""

from __future__ import annotations

from dataclasses import dataclass

from app.errors import TrendAuditError, status_for

FIELD_LABELS = {
    "file": "the uploaded file",
    "table": "the pasted table",
    "sample": "the sample choice",
    "series": "the series",
    "title": "the title",
    "label": "“What the series measures”",
    "units": "“Units”",
    "time_column": "“Time column”",
    "value_column": "“Value column”",
    "claim_start": "“Window from”",
    "claim_end": "“Window to”",
    "claim_kind": "“Kind of claim”",
    "claim_text": "“The claim, as said”",
    "claim_claimant": "“Who said it”",
    "claim_outlet": "“Where it appeared”",
    "claim_made_on": "“When it was said”",
    "claim_source_url": "“Where it can be read”",
    "reference_start": "“Reference period from”",
    "reference_end": "“Reference period to”",
    "confidence": "“Confidence level”",
    "noise": "“Noise model”",
    "simulations": "“Simulations”",
    "seed": "“Seed”",
    "rate_unit": "“Show rates”",
    "missing_sentinels": "“Numbers that mean missing”",
    "source_name": "“Source”",
    "source_url": "“Source address”",
    "source_notes": "“Notes on the source”",
    "key": "“Access key”",
    "body": "the upload",
    "covariate_columns": "“Other factors”",
    "covariate_max_lag": "“Longest delay to try”",
    "driver_column": "“Driver column”",
    "driver_label": "“What the driver measures”",
    "driver_units": "“Driver’s units”",
    "window_years": "“Window length”",
    "transform": "“How the response follows the driver”",
    "owner_token": "“Owner token”",
}

# The audit and the API name fields by their JSON path; the desk's form uses the multipart names.
JSON_TO_FORM = {"claim.start": "claim_start", "claim.end": "claim_end", "claim.kind": "claim_kind", "claim": "claim_start",
                **{f"options.{name}": name for name in ("confidence", "noise", "simulations", "seed",
                                                        "reference_start", "reference_end", "rate_unit")},
                "series.label": "label", "series.units": "units", "source.name": "source_name",
                "source.url": "source_url", "source.notes": "source_notes",
                # a driver-and-response audit's fields, as its service and the correlation audit name them
                "response_column": "value_column", "driver.time": "driver_column", "driver": "driver_column",
                "response": "value_column", "response.time": "value_column", "X-Owner-Token": "owner_token"}


@dataclass(frozen=True)
class ProblemView:
    status: int
    title: str
    message: str
    where: str
    fix: str
    field: str  # the form field at fault, when there is one
    others: tuple[str, ...] = ()


def form_field(field: str | None) -> str:
    if not field:
        return ""
    return JSON_TO_FORM.get(field, field)


def problem_view(error: TrendAuditError) -> ProblemView:
    location = error.location
    field = form_field(location.field)
    parts = []
    if location.row is not None:
        parts.append(f"row {location.row} of the table")
    if location.column is not None:
        parts.append(f"column “{location.column}”")
    if field:
        parts.append(FIELD_LABELS.get(field, f"the field “{field}”"))
    others = tuple(str(item.get("detail", "")) for item in error.extra.get("errors", [])[1:])
    return ProblemView(status=status_for(error), title=error.title, message=error.message[:1:].upper() + error.message[1:],
                       where=", ".join(parts), fix=error.fix or "", field=field, others=others)
