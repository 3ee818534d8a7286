"""The service's access rule: a key, when keys are configured, compared in constant time."""

from __future__ import annotations

import hashlib
import hmac


def key_matches(given: str, keys: list[str]) -> bool:
    """Constant-time over the keys: every key is compared, and digests make the lengths equal."""
    given_digest = hashlib.sha256(given.encode("utf-8")).digest()
    found = False
    for key in keys:
        found |= hmac.compare_digest(given_digest, hashlib.sha256(key.encode("utf-8")).digest())
    return found


def desk_token(key: str) -> str:
    """What the desk's cookie holds for a key: a digest, so the key itself is never stored in a browser (a
    cookie copied off a disk opens the desk of this service, but is not the API key a script would send)."""
    return hashlib.sha256(f"trendaudit-desk:{key}".encode("utf-8")).hexdigest()


def desk_tokens(keys: list[str]) -> list[str]:
    return [desk_token(key) for key in keys]
