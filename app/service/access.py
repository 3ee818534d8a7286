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
