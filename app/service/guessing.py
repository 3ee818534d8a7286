"""Per-client allowances: wrong keys (slowing key guessing), and requests that need no key (anonymous work).

Each client may send only so many wrong keys, or anonymous requests, in a moving window.

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


class ClientAllowance:
    """So many requests per client in a moving window (``rate``, e.g. "10/minute"); past it, 429."""

    def __init__(self, rate: str, what: str) -> None:
        self._rate = parse(rate)
        self._limiter = MovingWindowRateLimiter(MemoryStorage())
        self._what = what

    def over(self, client: str) -> bool:
        return not self._limiter.test(self._rate, client)

    def refuse(self, client: str, where: Location) -> TooManyAttempts:
        reset = self._limiter.get_window_stats(self._rate, client).reset_time
        wait = max(1, math.ceil(reset - time.time()))
        return TooManyAttempts(f"too many {self._what} from this client; wait {wait} seconds", retry_after=wait,
                               location=where, fix=f"Try again in {wait} seconds")

    def count(self, client: str) -> bool:
        """Counts one against the client; False when it had none left."""
        return self._limiter.hit(self._rate, client)

    def spend(self, client: str, where: Location) -> None:
        """Counts one request; refuses it when the client has none left."""
        if not self.count(client):
            raise self.refuse(client, where)


class KeyGuessing:
    def __init__(self, rate: str) -> None:
        self._wrong = ClientAllowance(rate, "wrong keys")

    def check(self, given: str, keys: list[str], client: str, where: Location) -> bool:
        """Whether ``given`` is one of ``keys``; refuses (429) a client past its allowance of wrong keys."""
        if self._wrong.over(client):
            raise self._wrong.refuse(client, where)
        if key_matches(given, keys):
            return True
        self._wrong.count(client)
        return False
