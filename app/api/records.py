"""The routes every kind of stored record has, built once: list, read, delete and the data as CSV.

Pause audits (/api/v1/audits) and driver-response audits (/api/v1/correlations) differ only in what is
said about them; the service (``app.service.records``) reads, lists and deletes both the same way.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from fastapi import APIRouter, Depends, Header, Path, Query, Request
from fastapi.responses import JSONResponse, Response
from pydantic import BaseModel

from app.api.deps import require_api_key
from app.dependencies import get_runtime
from app.errors import InputError, Location
from app.service.claims import SEARCH_MAX_CHARS
from app.service.records import RecordKind, delete_record, with_article, list_records, read_body, record_data_csv
from app.service.runtime import Runtime
from app.store.audits import MAX_PAGE_SIZE


@dataclass(frozen=True)
class Resource:
    kind: RecordKind
    noun: str  # as the API's documentation names one record: "audit", "correlation audit"
    out_model: type[BaseModel]
    page_model: type[BaseModel]
    csv_summary: str
    csv_example: str


def add_record_routes(router: APIRouter, resource: Resource) -> None:
    """GET "" (list), GET /{id}, DELETE /{id} and GET /{id}/data.csv on ``router`` for one kind of record."""
    kind, noun = resource.kind, resource.noun
    record_id_param = Path(alias=kind.id_name, description=f"The {noun}'s id, as returned on creation",
                           examples=[kind.id_example])
    not_found = {404: {"description": f"No {noun} with that id"}}

    @router.get("", response_model=resource.page_model, summary=f"List {noun}s, newest first",
                dependencies=[Depends(require_api_key)], operation_id=f"list_{kind.kind}s")
    def list_(request: Request, limit: int = Query(20, ge=1, le=MAX_PAGE_SIZE, description="Audits per page"),
              cursor: str | None = Query(None, description="next_cursor from the previous page", max_length=64),
              q: str | None = Query(None, max_length=SEARCH_MAX_CHARS, description="Only records whose title or "
                                    "claim (its words, claimant, outlet) holds these words, any case"),
              runtime: Runtime = Depends(get_runtime)) -> dict[str, Any]:
        _one_search(request)
        return list_records(runtime.audits, kind, runtime.settings, limit=limit, cursor=cursor, q=q)

    @router.get(f"/{{{kind.id_name}}}", response_model=resource.out_model, response_model_exclude_none=False,
                summary=f"Read one {noun} (no key needed: the id is the capability)", responses=not_found,
                operation_id=f"get_{kind.kind}")
    def get(record_id: str = record_id_param, runtime: Runtime = Depends(get_runtime)) -> JSONResponse:
        return JSONResponse(read_body(runtime.audits, kind, record_id, runtime.settings))

    @router.delete(f"/{{{kind.id_name}}}", status_code=204,
                   summary=f"Delete {with_article(noun)} (needs its owner token)",
                   dependencies=[Depends(require_api_key)], operation_id=f"delete_{kind.kind}",
                   responses={401: {"description": "No owner token"}, 403: {"description": "Wrong owner token"},
                              **not_found})
    def delete(record_id: str = record_id_param,
               x_owner_token: str | None = Header(None, description="The owner_token returned on creation"),
               runtime: Runtime = Depends(get_runtime)) -> Response:
        delete_record(runtime.audits, kind, record_id, x_owner_token)
        return Response(status_code=204)

    @router.get(f"/{{{kind.id_name}}}/data.csv", summary=resource.csv_summary, response_class=Response,
                operation_id=f"{kind.kind}_data",
                responses={200: {"content": {"text/csv": {"example": resource.csv_example}}}})
    def data(record_id: str = record_id_param, runtime: Runtime = Depends(get_runtime)) -> Response:
        text, filename = record_data_csv(runtime.audits, kind, record_id)
        return csv_download(text, filename)


def _one_search(request: Request) -> None:
    """A search is one text: a repeated ``q`` would silently keep only its last copy."""
    if len(request.query_params.getlist("q")) > 1:
        raise InputError("the search 'q' is given more than once", location=Location(field="q"),
                         fix="Send one 'q' holding every word to search for")


def csv_download(text: str, filename: str) -> Response:
    return Response(text, media_type="text/csv; charset=utf-8",
                    headers={"Content-Disposition": f'attachment; filename="{filename}"'})
