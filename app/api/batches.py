"""/api/v1/batches: many audits as durable jobs (202, then progress, results as NDJSON, cancel, delete), and
/api/v1/jobs/{id}: one job, a batch's item or an audit asked for with ``Prefer: respond-async``."""

from __future__ import annotations

from fastapi import APIRouter, Depends, Header, Path, Query, Request, Security
from fastapi.concurrency import run_in_threadpool
from fastapi.responses import JSONResponse, Response, StreamingResponse

from app.api.batch_schemas import BatchRequest, item_requests
from app.api.bodies import require_json, validated
from app.api.deps import bearer, require_api_key
from app.dependencies import client_address, get_runtime
from app.service import batches
from app.service.jobs import job_path
from app.service.runtime import Runtime

router = APIRouter(tags=["batches"])
NDJSON = "application/x-ndjson"
BATCH_ID = Path(description="The batch's id, as returned on creation", examples=["Hk2VY8h8o0fJcLq3mZ0kYtq1"])
JOB_ID = Path(description="The job's id: a results line's 'job', or the Location of a 202",
              examples=["b2mYtq1bq2VY8h8oVx0d3kq7"])
OWNER_TOKEN = Header(None, description="The owner_token returned when the batch was created")
NOT_FOUND = {404: {"description": "No batch (or job) with that id"}}
OWNER = {401: {"description": "No owner token"}, 403: {"description": "Wrong owner token"}, **NOT_FOUND}


def who_sent(request: Request, credentials=Security(bearer)) -> str:
    """Whom a batch counts against for the in-flight limit: the key, else the client."""
    return batches.requester(credentials.credentials if credentials else None, client_address(request))


def accepted_answer(runtime: Runtime, accepted: batches.Accepted, location: str, headers: dict | None = None,
                    **extra) -> JSONResponse:
    base = runtime.settings.public_base_url.rstrip("/")
    body = {"id": accepted.batch_id, "owner_token": accepted.owner_token, "items": len(accepted.item_ids),
            "status": "queued", "links": batches.batch_links(accepted.batch_id, base), **extra}
    return JSONResponse(body, status_code=202, headers={"Location": base + location, **(headers or {})})


@router.post("/api/v1/batches", status_code=202, dependencies=[Depends(require_api_key)],
             summary="Audit many claims or series as one batch of durable jobs",
             openapi_extra={"requestBody": {"required": True, "content": {"application/json": {
                 "schema": {"$ref": "#/components/schemas/BatchRequest"}}}}},
             responses={202: {"description": "Every item is queued as a durable job; Location is the batch"},
                        413: {"description": "Body over TRENDAUDIT_MAX_BATCH_BYTES"},
                        422: {"description": "More items than allowed, or an item not shaped like an audit request"},
                        429: {"description": "Your items in flight would pass TRENDAUDIT_MAX_ITEMS_IN_FLIGHT_PER_KEY"}})
async def create_batch(request: Request, who: str = Depends(who_sent),
                       runtime: Runtime = Depends(get_runtime)) -> JSONResponse:
    """Up to 5,000 items: `items` (each an audit request), `series` with `claims`, or `series_list` with `claim`.
    The answer (202) holds the batch's `owner_token` once: keep it to cancel or delete the batch and its audits."""
    require_json(request)
    raw = await request.body()
    requests = await run_in_threadpool(lambda: item_requests(validated(BatchRequest, raw)))
    accepted = await run_in_threadpool(batches.accept, runtime, requests, who)
    return accepted_answer(runtime, accepted, f"{batches.BATCHES_PATH}/{accepted.batch_id}")


@router.get("/api/v1/batches/{batch_id}", summary="A batch's progress: counts per status, time left",
            responses=NOT_FOUND)
async def get_batch(batch_id: str = BATCH_ID, runtime: Runtime = Depends(get_runtime)) -> dict:
    return await run_in_threadpool(batches.batch_status, runtime, batch_id)


@router.get("/api/v1/batches/{batch_id}/results", summary="Results as NDJSON, in the order items finished",
            response_class=StreamingResponse,
            responses={**NOT_FOUND, 200: {"content": {NDJSON: {"example": '{"item": 0, "status": "done", "id": "...", '
                                                             '"verdict": {"code": "consistent_with_trend"}}'}}}})
async def batch_results(batch_id: str = BATCH_ID, follow: bool = Query(True, description="Wait for unfinished items"),
                        runtime: Runtime = Depends(get_runtime)) -> StreamingResponse:
    """One line per finished item: its audit's id, links, verdict and key numbers, or an RFC 9457 problem."""
    await run_in_threadpool(runtime.batches.counts, batch_id)  # 404 before the stream starts
    lines = (batches.dumps_line(line) for line in batches.results(runtime, batch_id, follow=follow))
    return StreamingResponse(lines, media_type=NDJSON)  # a plain iterator: read in a worker thread


@router.post("/api/v1/batches/{batch_id}/cancel", summary="Cancel the items not yet started (owner token)",
             dependencies=[Depends(require_api_key)], responses=OWNER)
async def cancel_batch(batch_id: str = BATCH_ID, x_owner_token: str | None = OWNER_TOKEN,
                       runtime: Runtime = Depends(get_runtime)) -> dict:
    return await run_in_threadpool(batches.cancel, runtime, batch_id, x_owner_token)


@router.delete("/api/v1/batches/{batch_id}", status_code=204, dependencies=[Depends(require_api_key)],
               summary="Delete a batch and the audits it stored (owner token)", responses=OWNER)
async def delete_batch(batch_id: str = BATCH_ID, x_owner_token: str | None = OWNER_TOKEN,
                       runtime: Runtime = Depends(get_runtime)) -> Response:
    await run_in_threadpool(batches.delete, runtime, batch_id, x_owner_token)
    return Response(status_code=204)


@router.get("/api/v1/jobs/{job_id}", summary="One job: its status, and its audit or problem when finished",
            responses=NOT_FOUND)
async def get_job(job_id: str = JOB_ID, runtime: Runtime = Depends(get_runtime)) -> dict:
    return await run_in_threadpool(batches.job_status, runtime, job_id)


def wants_async(request: Request) -> bool:
    """RFC 7240: ``Prefer: respond-async``."""
    return any(part.strip().lower() == "respond-async"
               for value in request.headers.getlist("prefer") for part in value.split(","))


async def accept_one(request: Request, runtime: Runtime, item: dict) -> JSONResponse:
    """An audit asked for asynchronously: a job of its own, ahead of any batch item; 202 with the job's link."""
    who = who_sent(request, await bearer(request))
    accepted = await run_in_threadpool(batches.accept, runtime, [item], who, interactive=True)
    job = job_path(accepted.item_ids[0])
    return accepted_answer(runtime, accepted, job, job=job, headers={"Preference-Applied": "respond-async"})
