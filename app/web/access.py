"""The desk's side of the service's access rules.

When ``TRENDAUDIT_API_KEYS`` is set, creating and listing audits need a key; reading one report by
its link never does. A browser cannot send an Authorization header from a plain form, so the desk
asks for the key once, keeps a digest of it (never the key itself) in an HttpOnly, SameSite=Strict
cookie (scripts cannot read it and other sites cannot make the browser send it), marked Secure when the
service is reached over https (its public address, or a trusted proxy's forwarded scheme), and checks it on
every request with the service's constant-time comparison. Wrong keys and wrong cookies count against the
client's allowance of guesses (``app.service.guessing``).
"""

from __future__ import annotations

from fastapi import Request
from starlette.responses import Response

from app.dependencies import client_address, get_runtime
from app.errors import AccessDenied, Location, TooManyAttempts
from app.service.access import desk_token, desk_tokens
from app.settings import Settings

KEY_COOKIE = "trendaudit_key"
KEY_COOKIE_DAYS = 30


def keys_required(settings: Settings) -> bool:
    return bool(settings.api_key_list)


def _cookie_accepted(request: Request, settings: Settings) -> bool:
    """Whether the browser's cookie opens the desk; a client past its allowance of guesses gets a 429."""
    keys = settings.api_key_list
    if not keys:
        return True
    given = request.cookies.get(KEY_COOKIE)
    if not given:
        return False
    return get_runtime(request).guessing.check(given, desk_tokens(keys), client_address(request),
                                               Location(field="key"))


def has_access(request: Request, settings: Settings) -> bool:
    try:
        return _cookie_accepted(request, settings)
    except TooManyAttempts:
        return False


def spend_anonymous(request: Request) -> None:
    """Counts a request that needs no key against the client's allowance (429 past it)."""
    get_runtime(request).anonymous.spend(client_address(request), Location(field="request"))


def require_access(request: Request, settings: Settings, action: str) -> None:
    if not keys_required(settings):
        spend_anonymous(request)
        return
    if _cookie_accepted(request, settings):
        return
    sent = bool(request.cookies.get(KEY_COOKIE))
    raise AccessDenied(f"{action} needs an access key on this service" if not sent else
                       "the access key kept in this browser is no longer accepted",
                       missing_credentials=not sent, location=Location(field="key"),
                       fix="Type the key your service's operator gave you below")


def check_key(request: Request, given: str, settings: Settings) -> None:
    if not given.strip():
        raise AccessDenied("no key was typed", location=Location(field="key"), fix="Type the access key")
    if not get_runtime(request).guessing.check(given.strip(), settings.api_key_list, client_address(request),
                                               Location(field="key")):
        raise AccessDenied("that key is not one this service accepts", missing_credentials=False,
                           location=Location(field="key"), fix="Check it for typos, or ask the operator for a key")


def remember_key(response: Response, key: str, secure: bool) -> None:
    response.set_cookie(KEY_COOKIE, desk_token(key.strip()), max_age=KEY_COOKIE_DAYS * 86400, path="/",
                        httponly=True, samesite="strict", secure=secure)


def forget_key(response: Response, secure: bool) -> None:
    response.delete_cookie(KEY_COOKIE, path="/", httponly=True, samesite="strict", secure=secure)


def safe_next(target: str | None) -> str:
    """Only a path on this site: never another host ('//evil', 'https://...'), never a script URL."""
    if not target or not target.startswith("/") or target.startswith("//") or "\\" in target:
        return "/"
    return target
