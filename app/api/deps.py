"""The API-key check, as a FastAPI dependency of the routes that create, list and delete."""

from __future__ import annotations

from fastapi import Depends, Request, Security
from fastapi.security import HTTPAuthorizationCredentials, HTTPBearer

from app.dependencies import client_address, get_runtime, get_settings
from app.errors import AccessDenied, Location
from app.service.runtime import Runtime
from app.settings import Settings

bearer = HTTPBearer(auto_error=False, description="One of the keys in TRENDAUDIT_API_KEYS, when that is set.")


def require_api_key(request: Request, settings: Settings = Depends(get_settings),
                    credentials: HTTPAuthorizationCredentials | None = Security(bearer)) -> None:
    """Creating, listing, deleting and computing need a key when keys are configured; reading by id never does.
    Wrong keys are counted per client, and a client past the limit waits (429)."""
    keys = settings.api_key_list
    where = Location(field="Authorization")
    if not keys:  # every request is anonymous: each client has its own small allowance
        get_runtime(request).anonymous.spend(client_address(request), where)
        return
    if credentials is None or not credentials.credentials:
        raise AccessDenied("this action needs an API key", location=where,
                           fix="Send the header 'Authorization: Bearer <key>' with a key from the service's operator")
    runtime: Runtime = get_runtime(request)
    if not runtime.guessing.check(credentials.credentials, keys, client_address(request), where):
        raise AccessDenied("the API key is not one this service accepts", missing_credentials=False,
                           location=where, fix="Check the key for typos or ask the operator for a valid one")
