"""The desk's one form: what the person typed, kept as typed, and turned into audit inputs on demand.

Every field keeps its raw text so a page with a problem can show the form again exactly as it was
sent. Field names follow the API's multipart form (``claim_start``, ``noise``, ``source_url``...), so
an error's location means the same in both places.
"""

from __future__ import annotations

from dataclasses import dataclass, fields, replace
from typing import Any

from starlette.datastructures import FormData, UploadFile

from app.audit.claim import NOISE_MODELS, RATE_UNITS, AuditOptions
from app.errors import InputError, Location
from app.service.covariates import column_names
from app.service.forms import CLAIM_FORM_FIELDS, form_number
from app.settings import Settings
from app.stats.correlate import TRANSFORMS
from app.vocabulary import ACCELERATION, CLAIM_KINDS, PAUSE, REVERSAL, SLOWDOWN

TEXT_FIELDS = ("table", "sample", "title", "label", "units", "time_column", "value_column", "claim_start",
               "claim_end", "claim_kind", "reference_start", "reference_end", "confidence", "noise", "simulations",
               "seed", "rate_unit", "missing_sentinels", "source_name", "source_url", "source_notes",
               "covariate_max_lag", "check", "driver_column", "driver_label", "driver_units", "window_years",
               "transform", "claim_text", "claim_claimant", "claim_outlet", "claim_made_on", "claim_source_url",
               "read_claim", "sheet", "header_row", "seasonal", "data_url", "file_data",
               "sheet_read")
CONFIDENCE_CHOICES = ("0.9", "0.95", "0.99")
TREND, LINK = "trend", "link"  # what the desk checks: a claim about one series' trend, or a driver and a response
DEFAULT_WINDOW_YEARS = "15"


@dataclass(frozen=True)
class DeskForm:
    table: str = ""
    sample: str = ""
    title: str = ""
    label: str = ""
    units: str = ""
    time_column: str = ""
    value_column: str = ""
    claim_start: str = ""
    claim_end: str = ""
    claim_kind: str = ""  # empty until chosen, so a sample's own kind of claim can fill it
    reference_start: str = ""
    reference_end: str = ""
    confidence: str = ""
    noise: str = ""
    simulations: str = ""
    seed: str = ""
    rate_unit: str = ""
    missing_sentinels: str = ""
    decimal_comma: bool = False
    source_name: str = ""
    source_url: str = ""
    source_notes: str = ""
    covariate_columns: tuple[str, ...] = ()  # other columns to adjust the series for
    covariate_max_lag: str = ""
    check: str = TREND
    driver_column: str = ""
    driver_label: str = ""
    driver_units: str = ""
    window_years: str = ""
    transform: str = ""
    claim_text: str = ""  # the claim as said: its words, who said it, where, when, and where it can be read
    claim_claimant: str = ""
    claim_outlet: str = ""
    claim_made_on: str = ""
    claim_source_url: str = ""
    read_claim: str = ""  # set by the button that reads the sentence into kind and window
    sheet: str = ""  # a spreadsheet's sheet; empty: the first that holds a table
    header_row: str = ""  # the row naming the columns; empty: found by the reader
    seasonal: str = ""  # auto (empty), remove or keep
    data_url: str = ""  # "Link to the data": fetched by the service instead of an upload
    file_data: str = ""  # an uploaded spreadsheet, base64, carried from the preview to the audit
    sheet_read: str = ""  # the sheet the chosen columns belong to: another sheet chosen starts them afresh

    @property
    def checks_link(self) -> bool:
        return self.check == LINK

    def claim_record_values(self) -> dict[str, str]:
        """The claim record's fields under their JSON names (text, claimant...)."""
        return {name: getattr(self, field) for name, field in CLAIM_FORM_FIELDS.items()}

    def source(self) -> dict[str, str | None]:
        return {"name": self.source_name.strip() or None, "url": self.source_url.strip() or None,
                "notes": self.source_notes.strip() or None}

    def sentinels(self) -> tuple[float, ...]:
        try:
            return tuple(float(part) for part in self.missing_sentinels.replace(";", ",").split(",") if part.strip())
        except ValueError:
            raise InputError("the missing-value markers must be numbers separated by commas",
                             location=Location(field="missing_sentinels"), fix="Write them as e.g. -999, -99.99") from None

    def option_values(self) -> dict[str, Any]:
        """The audit options the person set; empty fields are left to the service's defaults."""
        values: dict[str, Any] = {
            "confidence": _number(self.confidence, "confidence", float),
            "simulations": _number(self.simulations, "simulations", int),
            "seed": _number(self.seed, "seed", int),
            "noise": self.noise.strip() or None,
            "rate_unit": self.rate_unit.strip() or None,
        }
        return values

    def covariate_lag(self) -> int | None:
        return _number(self.covariate_max_lag, "covariate_max_lag", int)

    def correlation_values(self) -> tuple[float, str, dict[str, Any]]:
        """The window, the transform and the options of a driver-response check; empty fields take the defaults."""
        window = _number(self.window_years or DEFAULT_WINDOW_YEARS, "window_years", float)
        options = {"confidence": _number(self.confidence, "confidence", float),
                   "simulations": _number(self.simulations, "simulations", int),
                   "seed": _number(self.seed, "seed", int), "noise": self.noise.strip() or None}
        return window, self.transform.strip() or "none", options

    def header_row_number(self) -> int | None:
        return _number(self.header_row, "header_row", int)

    def reference_texts(self) -> tuple[str, str]:
        return self.reference_start.strip(), self.reference_end.strip()


def _number(text: str, name: str, kind: type) -> Any:
    # The API's multipart form reads numbers the same way, with the same messages.
    return form_number({name: text}, name, kind)


async def read_form(form: FormData, max_upload_bytes: int) -> tuple[DeskForm, bytes | None, str | None]:
    """The form fields as text, plus an uploaded file's bytes and name when one was attached."""
    values: dict[str, Any] = {}
    for name in TEXT_FIELDS:
        value = form.get(name)
        if isinstance(value, UploadFile):
            raise InputError(f"'{name}' should be a text field, not a file", location=Location(field=name),
                             fix="Send the field as text")
        values[name] = value or ""
    values["decimal_comma"] = (form.get("decimal_comma") or "") in ("on", "true", "1", "yes")
    # A button that switches between the two kinds of check sends its own field, so it wins over the hidden one.
    switch = form.get("switch_to")
    values["check"] = LINK if (switch if isinstance(switch, str) and switch else values["check"]) == LINK else TREND
    chosen = [value for value in form.getlist("covariate_columns") if isinstance(value, str)]
    values["covariate_columns"] = column_names(chosen)
    upload = form.get("file")
    data, filename = None, None
    if isinstance(upload, UploadFile) and upload.filename:
        data = await upload.read(max_upload_bytes + 1)
        filename = upload.filename
        if not data:
            data = None
    return DeskForm(**values), data, filename


def with_defaults(form: DeskForm, **defaults: str) -> DeskForm:
    """Fills only the fields the person left empty (a sample's suggested claim, its units)."""
    updates = {name: value for name, value in defaults.items() if value and not getattr(form, name)}
    return replace(form, **updates)


CLAIM_KIND_WORDS = {
    PAUSE: "A pause: the trend stopped",
    SLOWDOWN: "A slowdown: the trend weakened",
    REVERSAL: "A reversal: the trend turned the other way",
    ACCELERATION: "An acceleration: the trend grew stronger",
}
NOISE_MODEL_WORDS = {
    "ar1": "AR(1): each year leans on the last (recommended)",
    "arma11": "ARMA(1,1): a longer memory",
    "white": "White noise: every point independent (optimistic)",
}


TRANSFORM_WORDS = {
    "none": "In step with the driver itself",
    "log": "The same change for each doubling of the driver (as temperature follows CO2)",
    "cumulative": "In step with the driver's running total (as warming follows cumulative emissions)",
}


SEASONAL_WORDS = {
    "auto": "Take it out when one is found (recommended)",
    "remove": "Always take the calendar-month cycle out",
    "keep": "Keep it: audit the series as given",
}


def form_choices(settings: Settings) -> dict[str, Any]:
    return {"seasonal_choices": SEASONAL_WORDS,"claim_kinds": {k: CLAIM_KIND_WORDS.get(k, k) for k in CLAIM_KINDS},
            "transforms": {k: TRANSFORM_WORDS.get(k, k) for k in TRANSFORMS},
            "noise_models": {k: NOISE_MODEL_WORDS.get(k, k) for k in NOISE_MODELS},
            "rate_units": tuple(RATE_UNITS), "confidence_choices": CONFIDENCE_CHOICES,
            "defaults": {"confidence": f"{settings.default_confidence:g}", "noise": settings.default_noise,
                         "simulations": settings.default_simulations, "rate_unit": AuditOptions().rate_unit,
                         "window_years": DEFAULT_WINDOW_YEARS}}


FORM_FIELD_NAMES = tuple(f.name for f in fields(DeskForm))
