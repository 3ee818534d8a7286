"""Slowing down key guessing: each client may send only so many wrong keys in a moving window.

The counting is the ``limits`` library's moving window, kept in this process's memory: a server of several
processes allows each its own window, which still turns thousands of guesses a second into a handful a
minute. A client is its address as the server sees it (behind a trusted proxy, the forwarded one). A right
key never counts; once a client is over the limit, even a right key waits, so the limit cannot be used to
tell right keys from wrong ones.
"""

from __future__ import annotations

import math
import time

from limits import parse
from limits.storage import MemoryStorage
from limits.strategies import MovingWindowRateLimiter

from app.errors import Location, TooManyAttempts
from app.service.access import key_matches


class KeyGuessing:
    def __init__(self, rate: str) -> None:
        self._rate = parse(rate)
        self._limiter = MovingWindowRateLimiter(MemoryStorage())

    def check(self, given: str, keys: list[str], client: str, where: Location) -> bool:
        """Whether ``given`` is one of ``keys``; refuses (429) a client past its allowance of wrong keys."""
        if not self._limiter.test(self._rate, client):
            reset = self._limiter.get_window_stats(self._rate, client).reset_time
            wait = max(1, math.ceil(reset - time.time()))
            raise TooManyAttempts(f"too many wrong keys from this client; wait {wait} seconds", retry_after=wait,
                                  location=where, fix=f"Check the key, then try again in {wait} seconds")
        if key_matches(given, keys):
            return True
        self._limiter.hit(self._rate, client)
        return False
