"""What is checked before the service serves anyone: its keys, how far it is exposed, and its store.

Each refusal says which setting, path or address is wrong and what to do, and the command that starts the
server exits non-zero with it, instead of a traceback.
"""

from __future__ import annotations

import ipaddress
from pathlib import Path

from sqlalchemy import Engine
from sqlalchemy.engine import make_url

from app.errors import TrendAuditError
from app.settings import Settings
from app.store import make_engine, migrate

MIN_KEY_LENGTH = 16  # our requirement: 16 random characters are beyond guessing at any rate a server allows


class StartupRefused(RuntimeError):
    """The service cannot start as configured; the message says what to change."""


def is_loopback(host: str) -> bool:
    if host == "localhost":
        return True
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return False


def check_keys(settings: Settings) -> None:
    short = [key for key in settings.api_key_list if len(key) < MIN_KEY_LENGTH]
    if short:
        raise StartupRefused(f"TRENDAUDIT_API_KEYS holds {len(short)} key(s) shorter than {MIN_KEY_LENGTH} "
                             f"characters (the shortest has {min(map(len, short))}); use long random keys, e.g. "
                             "the output of: python -c 'import secrets; print(secrets.token_urlsafe(24))'")


def check_exposure(settings: Settings, host: str) -> None:
    """Without keys, anyone who can reach the server lists every record's id, title and verdict."""
    if settings.api_key_list or is_loopback(host) or settings.public_deployment:
        return
    raise StartupRefused(f"refusing to serve on {host} without TRENDAUDIT_API_KEYS: anyone who can reach that "
                         "address could list, read and delete every audit. Set TRENDAUDIT_API_KEYS, bind to "
                         "127.0.0.1, or set TRENDAUDIT_PUBLIC_DEPLOYMENT=true if an open service is intended")


def store_name(database_url: str) -> str:
    """The store as an operator would recognise it, without a password."""
    try:
        url = make_url(database_url)
    except Exception:  # an unreadable URL is named as given, cut short
        return database_url[:200]
    if url.get_backend_name() == "sqlite":
        return f"the SQLite file {Path(url.database or '').resolve()}"
    return f"the database at {url.render_as_string(hide_password=True)}"


def open_store(settings: Settings) -> Engine:
    """The engine, connected and migrated; a store that cannot be opened is named in the refusal."""
    try:
        engine = make_engine(settings.database_url, settings.store_timeout_seconds)
        migrate(engine)
    except TrendAuditError as error:
        raise StartupRefused(f"cannot open {store_name(settings.database_url)}: {error.message}") from None
    except Exception as error:  # the driver's words, which name what failed: a missing folder, a refused port
        cause = str(getattr(error, "orig", None) or error).strip().splitlines()[0][:300]
        raise StartupRefused(f"cannot open {store_name(settings.database_url)} (TRENDAUDIT_DATABASE_URL): "
                             f"{type(error).__name__}: {cause}") from None
    return engine
