"""FastAPI dependencies: the process runtime, the settings, and the API-key check."""

from __future__ import annotations

import hashlib
import hmac

from fastapi import Depends, Request, Security
from fastapi.security import HTTPAuthorizationCredentials, HTTPBearer

from app.api.runtime import Runtime
from app.errors import AccessDenied, Location
from app.settings import Settings

bearer = HTTPBearer(auto_error=False, description="One of the keys in TRENDAUDIT_API_KEYS, when that is set.")


def get_runtime(request: Request) -> Runtime:
    return request.app.state.runtime.get()


def get_settings(request: Request) -> Settings:
    return request.app.state.settings


def key_matches(given: str, keys: list[str]) -> bool:
    """Constant-time over the keys: every key is compared, and digests make the lengths equal."""
    given_digest = hashlib.sha256(given.encode("utf-8")).digest()
    found = False
    for key in keys:
        found |= hmac.compare_digest(given_digest, hashlib.sha256(key.encode("utf-8")).digest())
    return found


def require_api_key(settings: Settings = Depends(get_settings),
                    credentials: HTTPAuthorizationCredentials | None = Security(bearer)) -> None:
    """Creating, listing and deleting need a key when keys are configured; reading by id never does."""
    keys = settings.api_key_list
    if not keys:
        return
    where = Location(field="Authorization")
    if credentials is None or not credentials.credentials:
        raise AccessDenied("this action needs an API key", location=where,
                           fix="Send the header 'Authorization: Bearer <key>' with a key from the service's operator")
    if not key_matches(credentials.credentials, keys):
        raise AccessDenied("the API key is not one this service accepts", missing_credentials=False,
                           location=where, fix="Check the key for typos or ask the operator for a valid one")
