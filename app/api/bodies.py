"""Request bodies read by hand (so one path can take JSON or a form): media type and JSON validation."""

from __future__ import annotations

from typing import TypeVar

from fastapi import Request
from fastapi.exceptions import RequestValidationError
from pydantic import BaseModel, ValidationError
from starlette.datastructures import FormData, UploadFile

from app.errors import Location, SeriesFormatError, UnsupportedMediaType

Model = TypeVar("Model", bound=BaseModel)


def media_type(request: Request) -> str:
    return request.headers.get("content-type", "").split(";")[0].strip().lower()


def is_json(kind: str) -> bool:
    return kind == "application/json" or kind.endswith("+json")


def require_json(request: Request) -> None:
    kind = media_type(request)
    if not is_json(kind):
        raise UnsupportedMediaType(f"the body is '{kind or 'untyped'}'", location=Location(field="Content-Type"),
                                   fix="Send application/json")


def validated(model: type[Model], raw: bytes) -> Model:
    """The body as ``model``; faults become the same 422 problems FastAPI gives for declared bodies."""
    try:
        return model.model_validate_json(raw)
    except ValidationError as error:
        raise RequestValidationError(error.errors(include_url=False)) from None


def form_upload(form: FormData, what: str) -> UploadFile:
    """The file posted in the form's field 'file'; ``what`` says what it should hold ("CSV file")."""
    upload = form.get("file")
    if not isinstance(upload, UploadFile):
        raise SeriesFormatError(f"no {what} in the field 'file'", location=Location(field="file"),
                                fix=f"Attach the {what} as the form field 'file'")
    return upload
