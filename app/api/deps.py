"""The API-key check, as a FastAPI dependency of the routes that create, list and delete."""

from __future__ import annotations

from fastapi import Depends, Security
from fastapi.security import HTTPAuthorizationCredentials, HTTPBearer

from app.dependencies import get_settings
from app.errors import AccessDenied, Location
from app.service.access import key_matches
from app.settings import Settings

bearer = HTTPBearer(auto_error=False, description="One of the keys in TRENDAUDIT_API_KEYS, when that is set.")


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
